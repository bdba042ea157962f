"""What the errors of an order estimate are measured against (convdiag/core/_refchoice.py).

Without a trusted root the estimate uses residuals (Grau-Sánchez, Noguera & Gutiérrez 2010) or successive
differences (Cordero & Torregrosa 2007); a complex run measures |x − r| in the complex plane.
"""

import math

from convdiag import record, solve
from convdiag.core._order import estimate_order


def test_a_complex_run_measures_distance_in_the_complex_plane():
    run = solve("x**2 + 1", "newton", start=complex(0.5, 0.5))  # converges to i
    assert abs(run.root - 1j) < 1e-15
    for est in (estimate_order(run, root=1j), estimate_order(run)):
        assert est.label == "quadratic" and abs(est.value - 2) <= 0.05


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
