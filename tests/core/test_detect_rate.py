"""Rate-based findings: no false alarms on smooth problems, budget estimates that hold, slow, converged elsewhere.

Test problems: the Alefeld–Potra–Shi set (ACM TOMS Algorithm 748, 1995) as scipy ships it
(``scipy.optimize._tstutils._APS_TESTS_DICTS``), the same representative instances
tests/core/test_order.py uses, and Kepler's equation (shared/REFERENCES.md §5).
"""

import math

import pytest
from aps_problems import aps_text

from convdiag import METHODS, solve
from convdiag.core._diagnose import diagnose
from convdiag.core._order import estimate_order

T = pytest.importorskip("scipy.optimize._tstutils")
APS = {d["ID"]: d for d in T._APS_TESTS_DICTS}


IDS = ["aps.01.00", "aps.03.00", "aps.04.00", "aps.04.05", "aps.04.13", "aps.05.00", "aps.06.00", "aps.06.03",
       "aps.07.00", "aps.07.02", "aps.08.01", "aps.08.03", "aps.09.00", "aps.09.02", "aps.10.00", "aps.10.02",
       "aps.11.01", "aps.12.01", "aps.12.04", "aps.06.04"]
# Kepler's equation E − e sin E = M: (M, e, E) from shared/REFERENCES.md §5
KEPLER = [(1.0, 0.5, 1.49870113351785), (0.5, 0.2, 0.615468169489965)]


def problems():
    out = []
    for pid in IDS:
        d = APS[pid]
        r = float(d["root"])
        out.append((pid, aps_text(d), r + (float(d["x0"]) - r) / 4, r, tuple(d["bracket"])))
    for m, e, root in KEPLER:
        out.append((f"kepler {m} {e}", f"x - {e}*sin(x) - {m}", root + (m - root) / 4, root, (0.0, math.pi)))
    return out


CLASSIC = ["newton", "secant", "iqi", "bisection", "regula-falsi", "illinois", "steffensen", "halley"]


@pytest.mark.parametrize("method", CLASSIC)
def test_a_correct_run_is_converged_with_no_false_alarm(method):
    checked = 0
    for name, text, x0, root, bracket in problems():
        if METHODS[method].needs_bracket:
            run = solve(text, method, bracket=bracket)
        else:  # Steffensen's x + f(x) needs a small |f|: it starts 1/16 of the way (as in test_order.py)
            run = solve(text, method, start=root + (x0 - root) / 4 if method == "steffensen" else x0)
        if not (run.converged and abs(float(run.root) - root) <= 1e-8 * max(1.0, abs(root))):
            continue  # the method does not reach this root from here; not a statement about the diagnosis
        d = diagnose(run)
        assert d.verdict == "converged" and d.kinds == ("converged",) and d.primary.tag == "", (name, d, d.kinds)
        checked += 1
    assert checked >= 13, checked


def test_the_hybrid_remedy_runs_are_converged_without_alarm():
    for name, text, _, root, bracket in problems()[::4]:
        d = diagnose(solve(text, "hybrid", bracket=bracket))
        assert d.kinds == ("converged",), (name, d)


BUDGET_CASES = [
    ("newton", {"start": 3.0}), ("secant", {"start": 3.0}), ("iqi", {"start": 3.0}),
    ("halley", {"start": 3.0}), ("steffensen", {"start": 1.6}), ("bisection", {"bracket": (0.0, 3.0)}),
    ("illinois", {"bracket": (0.0, 3.0)}), ("hybrid", {"bracket": (0.0, 3.0)}),
]


@pytest.mark.parametrize("method, where", BUDGET_CASES, ids=[c[0] for c in BUDGET_CASES])
def test_the_budget_estimate_is_enough_and_not_wasteful(method, where):
    full = solve("x**2 - 2", method, **where)  # how many evaluations the method really needs
    assert full.converged
    for budget in range(6, full.evaluations, max(1, full.evaluations // 8)):  # about 8 budgets per method
        run = solve("x**2 - 2", method, max_evals=budget, **where)
        d = diagnose(run)
        assert d.verdict == "budget", (budget, d, d.kinds)
        need = d.primary.value("evaluations still needed")
        rerun = d.remedy.solve("x**2 - 2")
        assert d.remedy.max_evals == run.evaluations + need
        assert rerun.converged, (budget, need, rerun)  # re-running with that many converges
        assert run.evaluations + need <= 2 * full.evaluations + 6, (budget, need)  # and is not a wild guess


def test_regula_falsi_that_converges_slower_than_bisection_is_called_slow():
    # x^10 − 1 on [0, 1.3] converges with rate 0.765 per evaluation (test_diagnose.py); with room
    # to finish it converges, but in more evaluations than bisection's 2 + ⌈log2(1.3/(4 eps))⌉ = 53.
    run = solve("x**10 - 1", "regula-falsi", bracket=(0.0, 1.3), max_evals=400)
    d = diagnose(run)
    assert run.converged and d.verdict == "slow"
    assert d.primary.value("bisection would need") == 2 + math.ceil(math.log2(1.3 / (4 * 2.220446049250313e-16)))
    assert run.evaluations > d.primary.value("bisection would need")
    assert d.remedy.solve("x**10 - 1").evaluations < 20


def test_a_plain_sequence_at_rate_one_half_from_newton_is_a_double_root():
    # Newton on (x − 1)² e^x written to a log by the user's own loop: rate (m − 1)/m = 1/2 (REFERENCES §1).
    xs = [2.0]
    for _ in range(30):
        x = xs[-1]
        xs.append(x - (x - 1) ** 2 * math.exp(x) / ((2 * (x - 1) + (x - 1) ** 2) * math.exp(x)))
    d = diagnose(xs, method="newton")
    assert d.verdict == "multiple-root" and d.primary.value("multiplicity") == 2
    assert d.source_kind == "sequence" and d.probes == 0
    # with residuals but no method, |f| ∝ e^m gives the same m
    d2 = diagnose({"x": xs, "f": [(x - 1) ** 2 * math.exp(x) for x in xs]})
    assert d2.verdict == "multiple-root" and d2.primary.value("multiplicity") == 2


def test_a_logged_superlinear_run_stopped_early_is_a_budget_stop():
    f = lambda x: math.cos(x) - x
    xs = [0.0, 0.1]
    for _ in range(3):  # three secant steps: still far from the root 0.7390851332151607 (mpmath)
        a, b = xs[-2:]
        xs.append(b - f(b) * (b - a) / (f(b) - f(a)))
    d = diagnose({"x": xs, "f": [f(x) for x in xs]}, method="secant")
    assert d.verdict == "budget" and d.primary.value("evaluations still needed") >= 2
    assert "stopped after 5 evaluations" in d.primary.summary
    # the same solver given room converges within the estimate
    need = d.primary.value("evaluations still needed")
    for _ in range(need):
        a, b = xs[-2:]
        if f(b) == f(a):
            break
        xs.append(b - f(b) * (b - a) / (f(b) - f(a)))
    assert abs(xs[-1] - 0.7390851332151607) < 1e-15


def test_residuals_only_sequences_are_read():
    from convdiag.core._sequence import as_sequence

    quad = diagnose(as_sequence([1e-1, 1e-2, 1e-4, 1e-8, 1e-16], kind="residuals"))
    assert quad.verdict == "converged" and "fell" in quad.primary.summary
    slow = diagnose(as_sequence([0.1 * 0.5**k for k in range(8)], kind="residuals"))
    assert slow.verdict == "budget" and slow.primary.value("evaluations still needed") > 20


def test_the_order_on_the_diagnosis_is_the_run_estimate():
    run = solve("(x - 1)**3*exp(x)", "newton", start=2.0, max_evals=300)
    d = diagnose(run)
    est = estimate_order(run, replay=False)
    assert d.order.label == est.label and d.order.rate == pytest.approx(est.rate)

