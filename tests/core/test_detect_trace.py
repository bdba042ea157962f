"""Recordings of third-party solvers are diagnosed the way convdiag's own runs are.

The solvers are scipy's (reference library): ``optimize.newton`` with fprime (Newton's method),
without fprime (the secant method; its second point is x0·(1 + 1e-4) + 1e-4, scipy's source),
``brentq`` (Brent 1973) and MINPACK's ``fsolve`` on a scalar equation. The cases and their numbers
are those of tests/core/test_diagnose.py (shared/REFERENCES.md §4).
"""

import math
import warnings

import numpy as np
import pytest

from convdiag import record, solve
from convdiag.core._detect_trace import build_trace
from convdiag.core._diagnose import diagnose

so = pytest.importorskip("scipy.optimize")

CASES = {
    "cycle": (lambda x: x**3 - 2 * x + 2, lambda x: 3 * x**2 - 2, 0.0, "x**3 - 2*x + 2"),
    "arctan": (math.atan, lambda x: 1 / (1 + x * x), 1.5, "atan(x)"),
    "cube root": (lambda x: math.copysign(abs(x) ** (1 / 3), x), lambda x: abs(x) ** (-2 / 3) / 3, 1.0, "cbrt(x)"),
    "x e^-x": (lambda x: x * math.exp(-x), lambda x: (1 - x) * math.exp(-x), 2.0, "x*exp(-x)"),
    **{f"m={m}": (lambda x, m=m: (x - 1) ** m * math.exp(x),
                  lambda x, m=m: (m * (x - 1) ** (m - 1) + (x - 1) ** m) * math.exp(x), 2.0, f"(x - 1)**{m}*exp(x)")
       for m in (2, 3, 4, 5)},
}


def quietly(fn, *args, **kwargs):
    """Run a scipy solver; its RuntimeError/RuntimeWarning on failure is the behaviour under test."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            fn(*args, **kwargs)
        except (RuntimeError, ValueError):  # scipy's "failed to converge"; math's domain error, re-raised
            pass


@pytest.mark.parametrize("name", list(CASES))
def test_scipy_newton_with_fprime_gets_the_verdict_of_our_newton(name):
    f, fp, x0, text = CASES[name]
    rf = record(f, fprime=fp)
    quietly(so.newton, rf, x0, fprime=rf.fprime)
    ours = diagnose(solve(text, "newton", start=x0))
    theirs = diagnose(rf)
    assert theirs.source_kind == "recording" and theirs.method == "newton"  # inferred from the f' rows
    assert theirs.verdict == ours.verdict, (theirs, ours)


@pytest.mark.parametrize("name", list(CASES))
def test_scipy_newton_without_fprime_gets_the_verdict_of_our_secant(name):
    f, _, x0, text = CASES[name]
    rf = record(f)
    quietly(so.newton, rf, x0)
    ours = diagnose(solve(text, "secant", start=[x0, x0 * (1 + 1e-4) + 1e-4]))  # scipy's second point
    theirs = diagnose(rf)
    assert theirs.verdict == ours.verdict, (theirs, theirs.kinds, ours, ours.kinds)


@pytest.mark.parametrize("name", ["x e^-x", "m=2", "m=3", "m=4", "m=5"])
def test_fsolve_showing_the_same_pathology_gets_the_same_verdict(name):
    # MINPACK's hybrid method follows Newton-like steps here: it drifts off on x e^-x and creeps to
    # the multiple root (from x0 = 2 it evaluates the start four times and once at a forward difference)
    f, _, x0, text = CASES[name]
    rf = record(f)
    quietly(so.fsolve, lambda v: [rf(float(v[0]))], [x0])
    theirs = diagnose(rf)
    ours = diagnose(solve(text, "newton", start=x0))
    assert theirs.verdict == ours.verdict, (theirs, ours)
    if name.startswith("m="):
        assert theirs.primary.value("multiplicity") == int(name[2:])


def test_fsolve_stuck_at_a_stationary_point_is_called_flat():
    # From 0 on x³ − 2x + 2, fsolve settles near √(2/3) = 0.8165, where f' = 0 and f = 0.9113 (a local
    # minimum of f: 2/3·√(2/3)·... computed here: f(√(2/3)) = 2 − (4/3)√(2/3)).
    f = CASES["cycle"][0]
    rf = record(f)
    quietly(so.fsolve, lambda v: [rf(float(v[0]))], [0.0])
    d = diagnose(rf)
    assert d.verdict == "flat" and d.primary.tag == "stationary point"
    x = d.primary.value("settled at")
    assert x == pytest.approx(math.sqrt(2 / 3), abs=1e-3)
    assert min(d.primary.value("|f| there")) == pytest.approx(2 - 4 / 3 * math.sqrt(2 / 3), rel=1e-4)
    assert d.remedy.solve(f).converged


@pytest.mark.parametrize("bracket, text, verdict", [((1.0, 2.0), "tan(x)", "pole"), ((0.0, 1.3), "x**10 - 1",
                                                                                   "converged")])
def test_brentq_gets_the_verdict_of_our_hybrid(bracket, text, verdict):
    f = {"tan(x)": math.tan, "x**10 - 1": lambda x: x**10 - 1}[text]
    rf = record(f)
    so.brentq(rf, *bracket)
    theirs = diagnose(rf)
    assert theirs.verdict == diagnose(solve(text, "hybrid", bracket=bracket)).verdict == verdict


def test_brentq_bracket_history_is_rebuilt_from_the_signs():
    rf = record(math.tan)
    so.brentq(rf, 1.0, 2.0)
    t = build_trace(rf)
    assert t.method is None and t.brackets is not None and len(t.brackets) == t.n - 2
    lo, hi, flo, fhi = t.brackets[-1]
    assert lo < math.pi / 2 < hi and flo * fhi < 0


def test_the_recording_reader_drops_repeats_and_difference_probes():
    rf = record(CASES["m=3"][0])
    quietly(so.fsolve, lambda v: [rf(float(v[0]))], [2.0])
    log = rf.log
    t = build_trace(rf)
    assert len(log) > t.n
    assert np.all(np.diff(t.xs) != 0)  # no point twice in a row
    assert t.xs[0] == 2.0 and t.xs[1] == pytest.approx(1.75)  # the first step is Newton's: 2 − f/f' = 1.75
    assert any("difference-derivative probes" in n for n in t.notes)


def test_a_recorder_of_f_returning_f_and_fprime_is_read():
    rf = record(lambda x: (x**3 - 2 * x + 2, 3 * x * x - 2), returns_derivative=True)
    quietly(so.newton, lambda x: rf(x)[0], 0.0, fprime=lambda x: rf(x)[1])
    d = diagnose(rf)
    assert d.verdict == "cycle" and d.primary.value("period") == 2


def test_an_eval_log_without_the_function_is_diagnosed_from_its_numbers():
    rf = record(CASES["cycle"][0], fprime=CASES["cycle"][1])
    quietly(so.newton, rf, 0.0, fprime=rf.fprime)
    d = diagnose(rf.log)
    assert d.verdict == "cycle" and d.probes == 0 and d.remedy.near == 0.0


def test_a_recording_too_short_is_refused():
    from convdiag import ParameterError

    rf = record(math.cos)
    rf(1.0)
    with pytest.raises(ParameterError, match="at least 3"):
        diagnose(rf)


def test_a_recorded_domain_failure_is_located():
    rf = record(math.log)
    quietly(so.newton, rf, 3.0, fprime=lambda x: 1 / x)  # Newton: 3 − 3 ln 3 < 0, where log raises
    d = diagnose(rf)
    assert d.verdict == "domain-error"
    assert d.primary.value("first failure at x") == pytest.approx(3 - 3 * math.log(3))
    lo, hi = d.primary.value("domain edge")
    assert hi < 0 <= lo


def test_the_diagnosis_probes_a_recording_with_the_args_the_solver_passed():
    # scipy's newton(f, x0, args=(a,)) calls f(x, a); the diagnosis must call it the same way. The cubic
    # x³ − a·x + 2 with a = 2 is Newton's 2-cycle from 0 (REFERENCES §4); its real root is −1.7692923542386314.
    def f(x, a):  # no default for a: probing without the solver's args would fail at every point
        return x**3 - a * x + 2

    def fprime(x, a):
        return 3 * x * x - a

    rf = record(f, fprime=fprime)
    quietly(so.newton, rf, 0.0, fprime=rf.fprime, args=(2.0,), maxiter=10)
    assert rf.call_args == (2.0,)
    d = diagnose(rf)
    assert d.verdict == "cycle" and d.probes > 0
    lo, hi = d.remedy.bracket  # found by probing f(x, 2.0) near the start
    assert lo <= -1.7692923542386314 <= hi
    assert not any("could not finish" in n for n in d.notes)



def test_a_newton_recording_whose_first_points_straddle_the_root_is_read_as_newton():
    # Colebrook–White at Re = 1e5, ε/D = 1e-4 (REFERENCES §5), residual in 1/√f, with its exact derivative.
    # scipy's Newton from 0.02 overshoots to 0.01843 (f of the other sign), then every iterate falls between
    # the first two, just as a bracketing method's would; the f' rows say it is Newton.
    def col(f):
        return 1 / math.sqrt(f) + 2 * math.log10(1e-4 / 3.7 + 2.51 / (1e5 * math.sqrt(f)))

    def colp(f):
        inner = 1e-4 / 3.7 + 2.51 / (1e5 * math.sqrt(f))
        return -0.5 * f**-1.5 - (2.51 / 1e5) * f**-1.5 / (math.log(10) * inner)

    rf = record(col, fprime=colp)
    root = so.newton(rf, 0.02, fprime=rf.fprime)
    assert root == pytest.approx(so.brentq(col, 0.008, 0.1, xtol=1e-16), rel=1e-12)  # scipy: the same root
    t = build_trace(rf)
    assert (t.fs[0] < 0) != (t.fs[1] < 0) and t.xs[1] < t.xs[2:].min() <= t.xs[2:].max() < t.xs[0]
    assert t.method == "newton" and t.method_inferred and t.brackets is None
    d = diagnose(rf)
    assert d.method == "newton" and d.verdict == "converged"
