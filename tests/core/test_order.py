"""Observed order, rate, multiplicity and efficiency against published theory.

Theory values (shared/REFERENCES.md §1): Newton and Steffensen 2, secant (1+√5)/2, inverse quadratic
interpolation the real root of t³ = t² + t + 1 (1.8392867552), Halley 3; at a root of multiplicity m
Newton's rate is (m−1)/m, Halley's (m−1)/(m+1), the secant's the root of t^m + t^(m−1) = 1.
Test problems: the Alefeld–Potra–Shi set (ACM TOMS Algorithm 748, 1995), transcribed from scipy's copy
(``scipy.optimize._tstutils._APS_TESTS_DICTS``), plus Kepler's equation (REFERENCES §5).
"""

import math

import mpmath
import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st

from convdiag import ParameterError, record, solve
from convdiag.core._order import LABELS, OrderEstimate, compare_methods, estimate_order, order_json

T = pytest.importorskip("scipy.optimize._tstutils")

GOLDEN = (1 + 5**0.5) / 2
TRIBONACCI = 1.8392867552141612  # real root of t^3 = t^2 + t + 1 (REFERENCES §1; numpy.roots gives the same)
THEORY = {"newton": 2.0, "steffensen": 2.0, "secant": GOLDEN, "iqi": TRIBONACCI, "halley": 3.0}


def aps_text(d):
    """The APS function as expression text (Alefeld, Potra & Shi 1995, Table I, via scipy's copy)."""
    a = d["args"]
    text = {
        "aps.01": lambda: "sin(x) - x/2",
        "aps.03": lambda: f"{a[0]}*x*exp({a[1]}*x)",
        "aps.04": lambda: f"x**{a[0]} - {a[1]}",
        "aps.05": lambda: "sin(x) - 1/2",
        "aps.06": lambda: f"2*x*exp(-{a[0]}) - 2*exp(-{a[0]}*x) + 1",
        "aps.07": lambda: f"(1 + (1 - {a[0]})**2)*x - (1 - {a[0]}*x)**2",
        "aps.08": lambda: f"x**2 - (1 - x)**{a[0]}",
        "aps.09": lambda: f"(1 + (1 - {a[0]})**4)*x - (1 - {a[0]}*x)**4",
        "aps.10": lambda: f"exp(-{a[0]}*x)*(x - 1) + x**{a[0]}",
        "aps.11": lambda: f"({a[0]}*x - 1)/(({a[0]} - 1)*x)",
        "aps.12": lambda: f"x**(1/{a[0]}) - {a[0]}**(1/{a[0]})",
    }.get(d["ID"][:6])
    return None if text is None else text()


APS_IDS = [
    "aps.01.00", "aps.03.00", "aps.03.02", "aps.04.00", "aps.04.02", "aps.04.05", "aps.04.09", "aps.04.13",
    "aps.05.00", "aps.06.00", "aps.06.01", "aps.06.03", "aps.07.00", "aps.07.02", "aps.08.01", "aps.08.03",
    "aps.09.00", "aps.09.02", "aps.10.00", "aps.10.02", "aps.10.04", "aps.11.01", "aps.12.01", "aps.12.04",
    "aps.04.04", "aps.04.07", "aps.04.11", "aps.06.02", "aps.06.04", "aps.06.05", "aps.08.02", "aps.09.01",
]
# Method and problem family on which the method is exact, so no asymptotic regime exists (tested below).
EXACT = {("halley", "aps.11"), ("newton", "aps.08.00"), ("iqi", "aps.12.00")}
APS = {d["ID"]: d for d in T._APS_TESTS_DICTS}
# Kepler's equation E − e sin E = M in radians: (M, e, E) from shared/REFERENCES.md §5 (recomputed there).
KEPLER = [(1.0, 0.5, 1.49870113351785), (0.5, 0.2, 0.615468169489965), (3.0, 0.8, 3.06289397434037),
          (0.1, 0.99, 0.831660423791057)]


def problems(share=0.25):
    """(name, expression, start, root): starts ``share`` of the way from the root to the APS start x0
    (Kepler: from E0 = M, the usual first guess), so that the methods start in their basins."""
    out = []
    for pid in APS_IDS:
        d = APS[pid]
        r = float(d["root"])
        out.append((pid, aps_text(d), r + (float(d["x0"]) - r) * share, r))
    for m, e, root in KEPLER:
        out.append((f"kepler M={m} e={e}", f"x - {e}*sin(x) - {m}", root + (m - root) * share, root))
    return out


def test_the_aps_transcription_matches_scipys_functions():
    for pid in APS_IDS:
        d = APS[pid]
        from convdiag import as_problem

        f = as_problem(aps_text(d)).f
        a, b = d["bracket"]
        for x in np.linspace(a, b, 7)[1:-1]:
            assert float(f(x)) == pytest.approx(float(d["f"](x, *d["args"])), rel=1e-12, abs=1e-12), (pid, x)


@pytest.mark.parametrize("method", sorted(THEORY))
def test_observed_order_is_within_005_of_theory_on_at_least_20_smooth_problems(method):
    # Where double precision leaves too few points (Newton, Halley: two or three steps to the rounding
    # floor), the estimate rests on the high-precision replay; est.basis says which.
    measured = []
    # Steffensen's slope point x + f(x) is far off unless |f| is small, so it starts closer (1/16 of the way).
    for name, text, x0, root in problems(1 / 16 if method == "steffensen" else 1 / 4):
        if (method, name) in EXACT or (method, name[:6]) in EXACT:
            continue
        run = solve(text, method, start=x0)
        if not (run.converged and abs(float(run.root) - root) <= 1e-8 * max(1.0, abs(root))):
            continue  # this method does not converge from this start; not a statement about the estimator
        est = estimate_order(run)
        assert est.converged_estimate, (name, est, est.notes)
        assert abs(est.value - THEORY[method]) <= 0.05, (name, est, est.source)
        assert est.reference == "high-precision root" and est.basis in ("run", "replay")
        measured.append(name)
    assert len(measured) >= 20, measured


@pytest.mark.parametrize(
    "pid, method, why",
    [
        ("aps.08.00", "newton", "x² − (1 − x)² = 2x − 1 is linear: Newton is exact"),
        ("aps.11.00", "halley", "Halley is Newton on f/√f' (from memory), which is linear for a Möbius f"),
        ("aps.12.00", "iqi", "x = (y + √2)² is quadratic in y = f(x), so the sideways parabola is exact"),
    ],
)
def test_a_method_exact_for_the_function_leaves_not_enough_points(pid, method, why):
    d = APS[pid]
    r = float(d["root"])
    run = solve(aps_text(d), method, start=r + (float(d["x0"]) - r) / 4)
    est = estimate_order(run)
    assert run.converged
    assert est.label == "not enough points" and math.isnan(est.value), (why, est)


# -- linear convergence -----------------------------------------------------------------------------
@pytest.mark.parametrize("text, bracket", [("cos(x) - x", (0.0, 1.0)), ("sin(x) - x/2", (math.pi / 2, math.pi)),
                                           ("x**3 - 2*x - 5", (2.0, 3.0))])
def test_bisection_rate_is_one_half(text, bracket):
    # Bisection halves the bracket (Burden & Faires Thm 2.1, from memory); REFERENCES §1: rate 1/2.
    run = solve(text, "bisection", bracket=bracket)
    est = estimate_order(run)
    assert est.label == "linear" and abs(est.rate - 0.5) <= 0.02
    own = est.in_run
    assert own is not None and own.label == "linear" and abs(own.rate - 0.5) <= 0.02  # in double precision too


@pytest.mark.parametrize("m", [2, 3, 4, 5])
def test_newton_at_a_root_of_multiplicity_m_has_rate_m_minus_1_over_m_and_names_m(m):
    # REFERENCES §1 [V]: f = (x−1)^m e^x, Newton linear with rate (m−1)/m.
    run = solve(f"(x - 1)**{m}*exp(x)", "newton", start=2.0, max_evals=200)
    est = estimate_order(run)
    assert est.label == "linear" and abs(est.rate - (m - 1) / m) <= 0.02, est
    assert est.multiplicity == m, est.multiplicity_note
    assert f"m = {m}" in est.multiplicity_note and f"order {m}" in est.multiplicity_note  # derivative cross-check


@pytest.mark.parametrize("method, m, rate", [
    ("halley", 3, 0.5),  # (m−1)/(m+1), REFERENCES §1
    ("secant", 2, 0.6180340),  # root of t^2 + t = 1, REFERENCES §1
    ("secant", 3, 0.7548777),  # root of t^3 + t^2 = 1, REFERENCES §1
])
def test_halley_and_secant_rates_at_multiple_roots_imply_the_multiplicity(method, m, rate):
    run = solve(f"(x - 1)**{m}*exp(x)", method, start=2.0, max_evals=300)
    est = estimate_order(run)
    assert est.label == "linear" and abs(est.rate - rate) <= 0.02 and est.multiplicity == m, est


def test_a_callable_computing_in_mpmath_gets_the_same_multiplicity_as_its_expression():
    f = lambda x: (x - 1) ** 3 * mpmath.exp(x) if not isinstance(x, float) else (x - 1) ** 3 * math.exp(x)
    est = estimate_order(solve(f, "newton", start=2.0, max_evals=200))
    assert est.reference == "high-precision root" and est.multiplicity == 3 and abs(est.rate - 2 / 3) <= 0.02


def test_newton_with_a_wrong_derivative_is_linear_and_the_function_keeps_multiplicity_1():
    # REFERENCES §1 [V]: Newton with g ≠ f' converges linearly with rate |1 − f'(r)/g(r)|; here g = 2 f'.
    f = lambda x: mpmath.cos(x) - x  # computes in mpmath, so the replay uses the same g
    est = estimate_order(solve(f, "newton", start=1.0, fprime=lambda x: 2 * (-mpmath.sin(x) - 1)))
    assert est.label == "linear" and abs(est.rate - 0.5) <= 0.01 and est.basis == "replay"
    assert est.multiplicity == 1 and "the rate suggests m = 2 but the function has m = 1" in est.multiplicity_note
    assert any("check the derivative" in n for n in est.notes)


def test_regula_falsi_rate_matches_the_fixed_end_formula():
    # REFERENCES §1 [V]: rate 1 − f'(r)(b − r)/f(b) for the end b that stays fixed; on cos x − x over
    # [0, 1] the end b = 1 stays (f is concave): 1 − (−sin r − 1)(1 − r)/(cos 1 − 1).
    r = 0.7390851332151607  # mpmath.findroot
    expected = 1 - (-math.sin(r) - 1) * (1 - r) / (math.cos(1) - 1)
    est = estimate_order(solve("cos(x) - x", "regula-falsi", bracket=(0.0, 1.0)))
    assert est.label == "linear" and est.rate == pytest.approx(expected, rel=0.01)


def test_fixed_point_iteration_rate_is_the_derivative_at_the_fixed_point():
    # x = cos x: e+ ≈ g'(r) e with |g'(r)| = sin r (REFERENCES §1, fixed point row).
    xs = [1.0]
    for _ in range(80):
        xs.append(math.cos(xs[-1]))
    r = 0.7390851332151607  # mpmath.findroot(cos(x) - x)
    est = estimate_order(xs, root=r)
    assert est.label == "linear" and est.rate == pytest.approx(math.sin(r), abs=0.005)


def test_iterating_sine_is_sublinear():
    # x_{k+1} = sin x_k → 0 like sqrt(3/k) (de Bruijn, Asymptotic Methods in Analysis §8.4, from memory).
    xs = [1.0]
    for _ in range(3000):
        xs.append(math.sin(xs[-1]))
    assert xs[-1] * math.sqrt(3000 / 3) == pytest.approx(1.0, abs=0.02)  # the cited asymptotics hold here
    est = estimate_order(xs, root=0.0)
    assert est.label == "sublinear"


# -- honesty -------------------------------------------------------------------------------------------
def test_a_run_stopped_before_the_asymptotic_regime_says_not_enough_points():
    run = solve("x**2 - 2", "newton", start=1.0, max_steps=2)
    est = estimate_order(run)  # the replay keeps the run's two steps, so it cannot invent more
    assert est.label == "not enough points" and math.isnan(est.value) and est.window is None
    assert "an order needs at least 2" in est.notes[-1]
    assert order_json(est)["order"]["value"] is None


def test_a_run_stuck_at_the_rounding_floor_is_not_called_sublinear():
    # rtol=0 keeps Newton stepping between neighbouring doubles until the budget runs out.
    run = solve("x**2 - 2", "newton", start=1.0, rtol=0.0, max_evals=60)
    assert run.stop_reason == "max-evals"
    for est in (estimate_order(run), estimate_order(run, replay=False), estimate_order(list(run.iterates),
                                                                                        root=math.sqrt(2))):
        assert est.label == "quadratic", est
        assert any("rounding floor" in n for n in est.notes)


def test_a_sequence_that_only_wanders_at_the_floor_is_not_called_sublinear():
    r = math.sqrt(2)
    xs = [r, math.nextafter(r, 2), r, math.nextafter(r, 0), math.nextafter(r, 2)] * 4
    est = estimate_order(xs, root=r)
    assert est.label == "not enough points" and "every error is at the rounding floor" in est.notes[0]


def test_a_slow_drift_to_infinity_is_not_called_convergence():
    # Newton on x·e^(−x) from 2: x+ = x²/(x − 1) runs off to infinity while f → 0 (REFERENCES §4).
    run = solve("x*exp(-x)", "newton", start=2.0)
    est = estimate_order(run)
    assert est.label == "not converging" and est.window is None


def test_a_nan_in_a_log_only_cuts_off_what_comes_before_it():
    est = estimate_order([1.0, float("nan"), 0.5, 0.25, 0.125, 0.0625, 0.03125], root=0.0)
    assert est.label == "linear" and est.rate == pytest.approx(0.5) and "entry k = 1 is not a finite" in est.notes[0]


def test_a_complex_run_measures_distance_in_the_complex_plane():
    run = solve("x**2 + 1", "newton", start=complex(0.5, 0.5))  # converges to i
    assert abs(run.root - 1j) < 1e-15
    for est in (estimate_order(run, root=1j), estimate_order(run)):
        assert est.label == "quadratic" and abs(est.value - 2) <= 0.05


# -- root-free estimates -------------------------------------------------------------------------------
@pytest.mark.parametrize("method", ["newton", "secant", "iqi", "halley", "bisection"])
def test_successive_differences_agree_with_the_known_root_estimate(method):
    # ACOC (Cordero & Torregrosa 2007) against COC (Weerakoon & Fernando 2000) on the same runs.
    for name, text, x0, root in problems()[::3]:
        if (method, name[:6]) in EXACT:
            continue
        kw = {"bracket": APS[name]["bracket"]} if method == "bisection" and name in APS else {"start": x0}
        if method == "bisection" and name not in APS:
            continue
        run = solve(text, method, **kw)
        if not run.converged:
            continue
        known = estimate_order(run, root=root)
        acoc = estimate_order(run, reference="differences")
        assert acoc.reference == "successive differences"
        if known.rate is not None:
            assert abs(acoc.rate - known.rate) <= 0.1, (name, known, acoc)
        else:
            assert abs(acoc.value - known.value) <= 0.1, (name, known, acoc)


def test_residuals_alone_give_the_order_near_a_simple_root():
    # Grau-Sánchez et al. 2010: e_k ≈ |f(x_k)|/|f'(r)|. Residuals of a 60-digit Newton run.
    run = solve("cos(x) - x", "newton", start=1.0, digits=60)
    est = estimate_order([float(v) for v in run.values], kind="residuals")
    assert est.reference == "residuals" and abs(est.value - 2) <= 0.05


def test_a_callable_that_computes_in_floats_is_not_trusted_for_a_high_precision_root():
    run = solve(lambda x: math.cos(x) - x, "newton", start=1.0)
    est = estimate_order(run)
    assert est.reference in ("best iterate", "successive differences")
    assert any("computes in floats" in n for n in est.notes)


def test_a_recorder_around_scipy_bisect_gives_rate_one_half():
    from scipy.optimize import bisect

    rf = record(lambda x: x**3 - 2 * x - 5)
    bisect(rf, 2.0, 3.0, xtol=1e-14)
    est = estimate_order(rf)
    assert est.label == "linear" and abs(est.rate - 0.5) <= 0.02 and est.evals_per_step == 1


# -- constants and efficiency --------------------------------------------------------------------------
@pytest.mark.parametrize("method", ["newton", "secant", "iqi", "halley", "steffensen"])
def test_observed_error_constant_matches_its_theoretical_value(method):
    # REFERENCES §1 [V]: constants reproduced on f = exp(x) − 2 − x/3.
    est = estimate_order(solve("exp(x) - 2 - x/3", method, start=1.0))
    assert est.error_constant_theory is not None
    assert est.error_constant == pytest.approx(est.error_constant_theory, rel=0.05), (est.error_constant_note,)
    c2 = 0.0  # independent check of Newton's |f''/(2f')| at the root, with mpmath
    if method == "newton":
        with mpmath.workdps(30):
            r = mpmath.findroot(lambda x: mpmath.exp(x) - 2 - x / 3, 1.0)
            c2 = float(abs(mpmath.exp(r) / (2 * (mpmath.exp(r) - mpmath.mpf(1) / 3))))
        assert est.error_constant_theory == pytest.approx(c2, rel=1e-9)


@pytest.mark.parametrize("method, index", [("newton", 2**0.5), ("secant", GOLDEN), ("iqi", TRIBONACCI),
                                           ("halley", 3 ** (1 / 3)), ("steffensen", 2**0.5)])
def test_efficiency_index_is_order_to_the_one_over_evaluations_per_step(method, index):
    # Ostrowski (1960), from memory; values in REFERENCES §1.
    est = estimate_order(solve("cos(x) - x", method, start=1.0))
    assert est.efficiency == pytest.approx(index, abs=0.02)
    assert est.efficiency_theory == pytest.approx(index, abs=1e-9)


def test_compare_methods_counts_evaluations_not_iterations():
    c = compare_methods("cos(x) - x", ["newton", "secant", "halley", "bisection"], bracket=(0.0, 1.0), tol=1e-12)
    by = {r.method: r for r in c.results}
    assert c.reference == "high-precision root" and c.root == pytest.approx(0.7390851332151607, abs=1e-16)
    # per evaluation the secant (1.618) beats Newton (1.414) and Halley (1.442); bisection is last
    assert by["secant"].evals_to_tol < by["newton"].evals_to_tol
    assert by["bisection"].evals_to_tol == max(r.evals_to_tol for r in c.results)
    assert c.fastest().method == "secant"
    for r in c.results:  # evals_to_tol is the first count whose error is below tol
        k = r.evals.index(r.evals_to_tol)
        assert r.errors[k] <= 1e-12 and all(e > 1e-12 for e in r.errors[:k])


def test_compare_methods_refuses_bad_input_with_clear_messages():
    with pytest.raises(ParameterError, match="'methods' parameter of compare_methods"):
        compare_methods("cos(x) - x", ["nope"], start=1.0)
    with pytest.raises(ParameterError, match="bisection needs a bracket"):
        compare_methods("cos(x) - x", ["bisection"], start=1.0)
    with pytest.raises(ParameterError, match="needs start= .* or bracket="):
        compare_methods("cos(x) - x", ["newton"])


# -- API -----------------------------------------------------------------------------------------------
def test_order_json_has_the_keys_the_run_command_merges():
    est = estimate_order(solve("x**2 - 2", "newton", start=1.0))
    d = order_json(est)
    assert {"order", "rate", "multiplicity", "efficiency"} <= set(d)
    assert set(d["order"]) >= {"value", "spread", "window", "points", "label", "reference"}
    assert d["order"]["label"] == "quadratic" and d["order"]["reference"] == "high-precision root"
    assert d["multiplicity"] == 1 and d["efficiency"]["index"] == pytest.approx(2**0.5, abs=0.01)
    assert d["basis"] == "replay" and d["run"]["order"]["label"] in ("quadratic", "not enough points")
    import json

    json.dumps(d, allow_nan=False)


def test_repr_is_one_line_with_value_label_window_points_and_reference():
    est = estimate_order(solve("x**2 - 2", "newton", start=1.0))
    assert isinstance(est, OrderEstimate) and est.label in LABELS
    assert repr(est) == (f"<OrderEstimate {est.value:.3f} quadratic (window {est.window[0]}–{est.window[1]}, "
                         f"{est.points} points, reference: high-precision root)>")


@pytest.mark.parametrize("kw, match", [
    ({"reference": "exact"}, "'reference' parameter of estimate_order"),
    ({"digits": 5}, "'digits' parameter of estimate_order must be an int between 16 and 2000"),
    ({"min_points": 0}, "'min_points' parameter"),
    ({"floor": -1.0}, "'floor' parameter"),
    ({"method": "bogus"}, "'method' parameter of estimate_order"),
    ({"root": "abc"}, "'root' parameter of estimate_order"),
])
def test_bad_parameters_are_refused_with_the_house_template(kw, match):
    with pytest.raises(ParameterError, match=match):
        estimate_order([1.0, 0.5, 0.25, 0.125], **kw)


def test_a_too_short_sequence_is_refused():
    with pytest.raises(ParameterError, match="at least 3"):
        estimate_order([1.0, 0.5])


# -- invariance (Hypothesis) -----------------------------------------------------------------------------
BASE = {"cos(u) - u": 1.0, "exp(u) - 2 - u/3": 1.0, "(u - 1)**2*exp(u)": 2.0}


def _transformed(text, a, s, b):
    """a·f((x − b)/s): roots move to s·r + b, f is scaled by a."""
    return f"({a!r})*(" + text.replace("u", f"((x - ({b!r}))/({s!r}))") + ")"


@settings(max_examples=12, deadline=None)
@given(
    base=st.sampled_from(sorted(BASE)),
    method=st.sampled_from(["newton", "secant"]),
    a=st.floats(-3, 3).map(lambda t: round(10**t, 6)),
    s=st.floats(-2, 2).map(lambda t: round(10**t, 6)),
    b=st.floats(-10, 10).map(lambda t: round(t, 3)),
)
@example(base="(u - 1)**2*exp(u)", method="newton", a=1000.0, s=0.01, b=-7.0)  # double root, shifted and shrunk
@example(base="cos(u) - u", method="secant", a=0.001, s=100.0, b=0.0)
def test_the_estimate_is_invariant_to_shifting_and_scaling_x_and_scaling_f(base, method, a, s, b):
    plain = estimate_order(solve(base.replace("u", "x"), method, start=BASE[base]))
    moved = estimate_order(solve(_transformed(base, a, s, b), method, start=s * BASE[base] + b))
    assert moved.label == plain.label
    if plain.rate is not None:
        assert abs(moved.rate - plain.rate) <= 0.01
    else:
        assert abs(moved.value - plain.value) <= 0.02
