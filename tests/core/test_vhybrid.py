"""The vectorised hybrid: lane by lane it must do exactly what the scalar stepper (``solve``) does.

The reference is convdiag's own scalar stepper run through ``solve`` with the same settings,
itself checked against scipy and mpmath in tests/core/test_hybrid.py; the functions are the
Alefeld-Potra-Shi and Chandrupatla test sets (bench/_aps.py) and a random family.
"""

import importlib.util
import math
import sys
from pathlib import Path

import numpy as np
import pytest

import convdiag.core._hybrid  # noqa: F401  (registers "hybrid")
from convdiag import ParameterError, solve
from convdiag.core._vhybrid import hybrid_many


def _load_test_sets():
    path = Path(__file__).resolve().parents[2] / "bench" / "_aps.py"
    spec = importlib.util.spec_from_file_location("_aps_testsets_v", path)
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module
    spec.loader.exec_module(module)
    return module


SETS = _load_test_sets()
INSTANCES = SETS.APS + SETS.CHANDRUPATLA


def per_lane(x, lane):
    """Each lane's own test-set function, element by element (the same scalar code solve calls)."""
    return np.array([INSTANCES[int(k)](float(v)) for v, k in zip(x, lane)])


def assert_lanes_match(res, runs):
    for i, run in enumerate(runs):
        assert (int(res.evaluations.flat[i]), str(res.status.flat[i])) == (run.evaluations, run.stop_reason), i
        assert res.root.flat[i] == run.root or (math.isnan(res.root.flat[i]) and math.isnan(run.root)), i
        assert bool(res.converged.flat[i]) == run.converged


@pytest.mark.parametrize("xtol, max_evals", [(1e-15, 300), (1e-8, 300), (1e-15, 9)])
def test_lanes_equal_the_scalar_stepper_on_the_aps_and_chandrupatla_sets(xtol, max_evals):
    lo = np.array([i.bracket[0] for i in INSTANCES])
    hi = np.array([i.bracket[1] for i in INSTANCES])
    res = hybrid_many(per_lane, lo, hi, xtol=xtol, max_evals=max_evals, params={"lane": np.arange(len(INSTANCES))})
    runs = [solve(i, "hybrid", bracket=i.bracket, xtol=xtol, max_evals=max_evals) for i in INSTANCES]
    assert_lanes_match(res, runs)
    if max_evals == 9:
        assert "max-evals" in set(res.status.tolist())  # the budget path is exercised too


def family(x, r, p, c, kind):
    d = x - r
    power = c * np.sign(d) * np.abs(d) ** p
    step = np.where(d < 0, -c, c / 100)
    wavy = power * (1 + 0.3 * np.sin(3 * x))
    return np.where(kind == 0, power, np.where(kind == 1, wavy, np.where(kind == 2, c * np.tanh(10 * d), step)))


def test_lanes_equal_the_scalar_stepper_on_a_random_vectorised_family():
    rng = np.random.default_rng(7)
    n = 120
    prm = dict(
        r=rng.uniform(-1, 1, n),
        p=rng.choice([0.5, 1.0, 1.0, 2.5, 3.0, 5.0, 7.0], n),
        c=10 ** rng.uniform(-5, 5, n),
        kind=rng.integers(0, 4, n),
    )
    lo = prm["r"] - 10 ** rng.uniform(-3, 4, n)
    hi = prm["r"] + 10 ** rng.uniform(-3, 4, n)
    res = hybrid_many(family, lo, hi, xtol=1e-12, max_evals=200, params=prm)
    runs = []
    for i in range(n):
        one = {k: v[i : i + 1] for k, v in prm.items()}
        # the scalar run calls the same numpy code on one-element arrays, so f's values agree bit for bit
        runs.append(solve(lambda x, one=one: float(family(np.array([x]), **one)[0]), "hybrid",
                          bracket=(lo[i], hi[i]), xtol=1e-12, max_evals=200))
    assert_lanes_match(res, runs)
    assert res.converged.all()


def test_f_is_called_only_with_the_lanes_still_running():
    sizes = []

    def f(x, c):
        sizes.append(x.size)
        assert x.shape == c.shape
        return x**3 - c

    c = np.array([1.0, 8.0, 27.0, 2.0, 1e-6])
    res = hybrid_many(f, 0.0, 4.0, params={"c": c})
    # a lane that hit an exact zero in a still-wide bracket gets two probes for a flat stretch (two calls at the end)
    loop = sizes[:-2] if res.probes else sizes
    assert sizes[0] == sizes[1] == 5 and loop == sorted(loop, reverse=True)
    assert sum(sizes) == res.evaluations.sum() + res.probes
    assert res.suspect.tolist() == [""] * 5  # x**3 - c has isolated roots
    assert np.allclose(res.root, np.cbrt(c), rtol=1e-14)  # reference: numpy.cbrt


def test_lanes_that_cannot_converge_say_why_and_keep_their_best_point():
    def f(x, kind):
        hole = (x > 0.4) & (x < 0.6)  # f undefined there: the first bisection lands in it
        with np.errstate(invalid="ignore"):
            return np.where(kind == 0, x * x + 1, np.where(kind == 1, np.where(hole, np.nan, x - 0.45), np.cos(x) - x))

    res = hybrid_many(f, 0.0, 1.0, max_evals=6, params={"kind": np.array([0, 1, 2])})
    assert res.status.tolist() == ["no-sign-change", "nonfinite-value", "max-evals"]
    assert not res.converged.any() and res.evaluations.tolist() == [2, 3, 6]
    assert res.root[1] == 0.0  # |f(0)| = 0.45 is the smallest finite |f| that lane saw
    run = solve(lambda x: math.cos(x) - x, "hybrid", bracket=(0.0, 1.0), max_evals=6)
    assert res.root[2] == run.root and run.stop_reason == "max-evals"


def test_a_function_that_raises_stops_its_lanes_like_the_scalar_run():
    def raising_on_third_call():
        calls = []

        def f(x):
            calls.append(1)
            if len(calls) == 3:
                raise RuntimeError("boom")
            return np.asarray(x) - 0.3

        return f

    res = hybrid_many(raising_on_third_call(), [0.0, 0.0], [1.0, 2.0])
    g = raising_on_third_call()
    run = solve(lambda x: float(g(x)), "hybrid", bracket=(0.0, 1.0))
    assert run.stop_reason == "function-raised" and run.evaluations == 3
    assert res.status.tolist() == ["function-raised"] * 2 and res.evaluations.tolist() == [3, 3]
    assert res.root[0] == run.root == 0.0  # the better end (|f(0)| = 0.3 < 0.7), nothing lost


def test_shapes_broadcast_and_results_keep_them():
    res = hybrid_many(lambda x, c: x - c, 0.0, np.ones((2, 3)), params={"c": np.linspace(0.1, 0.9, 6).reshape(2, 3)})
    assert res.root.shape == res.evaluations.shape == res.status.shape == (2, 3)
    assert np.allclose(res.root, np.linspace(0.1, 0.9, 6).reshape(2, 3), atol=1e-15)
    assert repr(res).startswith("<HybridMany: 6 lanes, 6 converged")


@pytest.mark.parametrize(
    "kwargs, message",
    [
        (dict(rtol=-1.0), "The 'rtol' parameter of hybrid_many must be a finite float >= 0. Got -1.0 instead."),
        (dict(max_evals=1), "The 'max_evals' parameter of hybrid_many must be an int >= 2. Got 1 instead."),
        (dict(b=0.0), "must have a != b in every lane"),
    ],
)
def test_bad_parameters_are_refused_with_the_parameter_named(kwargs, message):
    args = dict(a=0.0, b=1.0)
    args.update(kwargs)
    a, b = args.pop("a"), args.pop("b")
    with pytest.raises(ParameterError, match=message.replace("(", r"\(").replace(")", r"\)").replace(".", r"\.")):
        hybrid_many(lambda x: x - 0.5, a, b, **args)


def test_a_pole_and_a_flat_zero_set_are_flagged_not_passed_off_as_roots():
    # APS problem 13, x*exp(-1/x**2) (Alefeld, Potra and Shi 1995): f underflows to exactly 0 for |x| < ~0.037,
    # so a bracketing solver can stop on an exact zero up to 0.037 from the root 0; 1/(x - c) changes sign at a
    # pole, where |f| grows without bound as the bracket closes in (any calculus text).
    flat = hybrid_many(lambda x: x * np.exp(-1 / x**2), [-1.0, -1.0], [4.0, 4.0])
    assert flat.status.tolist() == ["exact-zero"] * 2 and flat.suspect.tolist() == ["flat"] * 2
    assert flat.probes == 4 and np.all(np.abs(flat.root) < 0.04)
    pole = hybrid_many(lambda x, c: 1 / (x - c), 0.0, 1.0, params={"c": np.array([0.3, 0.6])})
    assert pole.suspect.tolist() == ["pole", "pole"] and np.all(np.abs(pole.fun) > 1e12)
    np.testing.assert_allclose(pole.root, [0.3, 0.6], rtol=1e-14)
    # a bracket end that is an isolated root (x**3 - 27 at 3) is an exact zero in a wide bracket, but f is not 0
    # beside it: a root, not a flat stretch
    end = hybrid_many(lambda x: x**3 - 27, 0.0, 3.0)
    assert end.status.item() == "exact-zero" and end.suspect.item() == "" and end.probes == 2
