"""Recording any callable, also inside third-party solvers (checked against scipy's own counts)."""

import json
import math

import numpy as np
import pytest
from scipy import optimize

from convdiag import record
from convdiag.core import Recorder


def cubic(x):
    return x**3 - 2 * x - 5  # Wallis's cubic; root 2.0945514815423265 (reference: scipy brentq below)


def test_brentq_evaluation_count_matches_what_scipy_reports():
    # Reference: scipy.optimize.brentq(full_output=True) reports function_calls itself.
    rf = record(cubic)
    root, info = optimize.brentq(rf, 2.0, 3.0, full_output=True)
    assert len(rf.log) == info.function_calls
    assert rf.log.x[-1] == root or np.any(rf.log.x == root)
    assert rf.log.value.tolist() == [cubic(x) for x in rf.log.x]


def test_newton_with_derivative_records_both_functions_in_call_order():
    # Reference: scipy.optimize.newton's RootResults counts f and f' calls together
    # (function_calls) and one f' call per iteration.
    rf = record(cubic, fprime=lambda x: 3 * x**2 - 2)
    root, info = optimize.newton(rf, 2.0, fprime=rf.fprime, full_output=True)
    log = rf.log
    assert len(log) == info.function_calls
    assert log.count_kind("df") == info.iterations
    assert log.kind.tolist()[:4] == ["f", "df", "f", "df"]
    assert abs(root - 2.0945514815423265) < 1e-12  # reference: scipy brentq on [2, 3]
    # the derivative rows carry the derivative value
    d = log.derivative[log.kind == "df"]
    assert np.allclose(d, 3 * log.x[log.kind == "df"] ** 2 - 2)


def test_decorator_and_context_manager_forms_record_the_same_calls():
    @record
    def g(x):
        return math.cos(x) - x

    @record(name="named")
    def h(x):
        return math.cos(x) - x

    with record(lambda x: math.cos(x) - x) as k:
        optimize.brentq(k, 0, 1)
    optimize.brentq(g, 0, 1)
    optimize.brentq(h, 0, 1)
    assert isinstance(g, Recorder) and h.name == "named"
    assert g.log.x.tolist() == k.log.x.tolist() == h.log.x.tolist()


def test_exceptions_are_recorded_and_reraised_unchanged():
    def f(x):
        if x < 0:
            raise ValueError("negative")
        return x

    rf = record(f)
    rf(1.0)
    with pytest.raises(ValueError, match="negative"):
        rf(-1.0)
    log = rf.log
    assert log.status.tolist() == ["ok", "raised"]
    assert "ValueError" in dict(log.notes)[1]
    assert math.isnan(log.value[1])


@pytest.mark.parametrize(
    "value, status",
    [
        (float("nan"), "nan"),
        (float("inf"), "inf"),
        (1 + 2j, "complex"),
        (None, "not-a-number"),
        ("1.0", "not-a-number"),
        (np.array([1.0, 2.0]), "shape"),
        (np.float64(2.5), "ok"),
        (np.array(3.0), "ok"),
        (10**400, "inf"),
    ],
)
def test_odd_return_values_are_classified_and_passed_through(value, status):
    rf = record(lambda x: value)
    assert rf(1.0) is value  # the solver sees exactly what f returned
    assert rf.log.status[0] == status


def test_array_calls_give_one_row_per_element():
    # scipy.optimize.elementwise.find_root calls f with arrays.
    from scipy.optimize import elementwise

    rf = record(lambda x: x * x - 2)
    res = elementwise.find_root(rf, (np.array([0.0, 1.0]), np.array([2.0, 3.0])))
    log = rf.log
    assert log.calls == len(rf)
    assert len(log) >= log.calls
    assert np.allclose(log.value, log.x**2 - 2, equal_nan=True)
    assert abs(res.x[0] - math.sqrt(2)) < 1e-12  # reference: Python math.sqrt


def test_log_exports_to_plain_data():
    rf = record(lambda x: 1.0 / x)
    rf(2.0)
    with pytest.raises(ZeroDivisionError):
        rf(0.0)
    log = rf.log
    d = json.loads(log.to_json())
    assert d["x"] == [2.0, 0.0] and d["value"] == [0.5, None] and d["status"] == ["ok", "raised"]
    rec = log.to_records()
    assert rec.dtype.names[:3] == ("call", "kind", "x") and rec["value"][0] == 0.5
    csv_text = log.to_csv()
    assert csv_text.splitlines()[0].startswith("call,kind,x") and len(csv_text.splitlines()) == 3
    assert (log.seconds >= 0).all() and (np.diff(log.start) >= 0).all()


def test_recorder_rejects_a_non_callable_with_a_clear_message():
    from convdiag import ParameterError

    with pytest.raises(ParameterError, match="The 'f' parameter of record must be a callable"):
        record(3.0)


def test_scipy_newton_fprime_true_pairs_are_recorded():
    # scipy.optimize.root_scalar(fprime=True) expects f to return (f, f').
    rf = record(lambda x: (x * x - 2, 2 * x), returns_derivative=True)
    root = optimize.root_scalar(rf, x0=1.0, fprime=True, method="newton").root
    log = rf.log
    assert abs(root - math.sqrt(2)) < 1e-14  # reference: math.sqrt
    assert set(log.kind.tolist()) == {"f+df"}
    assert np.allclose(log.derivative, 2 * log.x)


def test_extra_solver_args_are_kept_for_later_probes():
    # scipy.optimize.newton passes args=(...) to f on every call (scipy documentation).
    def kepler(E, M, ecc):
        return E - ecc * math.sin(E) - M

    rf = record(kepler)
    assert rf.call_args == ()
    root = optimize.newton(rf, 1.0, args=(1.0, 0.5))
    assert rf.call_args == (1.0, 0.5)
    # reference: shared/REFERENCES.md §5, Kepler (M=1, e=0.5) E = 1.49870113351785
    assert abs(root - 1.49870113351785) < 1e-13
