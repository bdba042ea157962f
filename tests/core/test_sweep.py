"""Parameter sweeps (convdiag.core._sweep): Kepler's equation across (M, e), starts, CSV round trip,
interruption, process pool and bracketing methods (chunks themselves: tests/core/test_sweep_run.py).

Sources: Kepler's equation E - e sin E = M; Meeus, Astronomical Algorithms (2nd ed. 1998) ch. 30
(from memory) and the radian values of REFERENCES §5 ([V]); scipy.optimize.brentq on [0, 2π] per
lane as the reference solver (f(0) = -M <= 0 <= f(2π) = 2π - M).
"""

import math

import numpy as np
import pytest

from convdiag import ParameterError
from convdiag.core._outcomes import OUTCOMES
from convdiag.core._sweep import param_grid, read_sweep_csv, sweep

TIGHT = {"xtol": 1e-12, "rtol": 0.0}


def kepler(E, M, e):
    return E - e * np.sin(E) - M


def kepler_prime(E, M, e):
    return 1 - e * np.cos(E)


def kepler_scalar(E, M, e):
    return E - e * math.sin(E) - M  # takes floats only


def _brentq_roots(M, e):
    from scipy.optimize import brentq

    return np.array([brentq(kepler, 0.0, 2 * math.pi, args=(m, ee), xtol=1e-14, rtol=4 * 2.220446049250313e-16)
                     for m, ee in zip(M, e)])


def _same_tables(a, b):
    assert a.dtype == b.dtype
    for name in a.dtype.names:
        if a.dtype[name].kind == "f":
            np.testing.assert_array_equal(a[name], b[name])  # NaN == NaN here
        else:
            assert np.array_equal(a[name], b[name]), name


def test_kepler_sweep_matches_the_published_values():
    M = np.radians([5.0, 2.0, 0.0, 0.0, 0.0, 0.0]) + np.array([0, 0, 1.0, 0.5, 3.0, 0.1])
    e = np.array([0.1, 0.99, 0.5, 0.2, 0.8, 0.99])
    res = sweep(kepler, {"M": M, "e": e}, start=math.pi, fprime=kepler_prime, **TIGHT)
    assert res.counts() == {"converged": 6}
    E = res.table["root"]
    assert math.degrees(E[0]) == pytest.approx(5.554589, abs=5e-7)  # Meeus ch. 30 (from memory)
    assert math.degrees(E[1]) == pytest.approx(32.361007, abs=5e-7)  # Meeus ch. 30 (from memory)
    assert E[2:].tolist() == pytest.approx(  # REFERENCES §5 [V]
        [1.49870113351785, 0.615468169489965, 3.06289397434037, 0.831660423791057], abs=1e-14)


@pytest.fixture(scope="module")
def high_eccentricity():
    rng = np.random.default_rng(2024)
    n = 60_000
    return {"M": rng.uniform(0, 2 * np.pi, n), "e": rng.uniform(0.95, 0.99, n)}


def test_the_naive_start_at_high_eccentricity_names_its_bad_lanes_and_better_starts_fix_them(high_eccentricity):
    pts = high_eccentricity
    naive = sweep(kepler, pts, start=lambda M, e: M, fprime=kepler_prime, **TIGHT)
    bad = naive.failures()
    assert len(bad) > 0 and set(bad["outcome"]) <= {"divergence", "cycle", "budget", "slow"}
    assert np.count_nonzero(np.isin(bad["outcome"], ["divergence", "cycle"])) >= 0.8 * len(bad)
    # the bad lanes sit where E0 = M is near a flat spot of f: sin E0 near 0 (M near 0 or 2π)
    assert np.all(np.minimum(bad["M"], 2 * np.pi - bad["M"]) < 1.0)
    for better in (math.pi, lambda M, e: M + e * np.sin(M)):  # E0 = π; E0 = M + e sin M
        fixed = sweep(kepler, pts, start=better, fprime=kepler_prime, **TIGHT)
        assert fixed.counts() == {"converged": len(fixed)}
        sample = np.random.default_rng(1).choice(len(fixed), 150, replace=False)
        sample = np.union1d(sample, bad["point"][:50])  # include the lanes the naive start lost
        ref = _brentq_roots(pts["M"][sample], pts["e"][sample])
        np.testing.assert_allclose(fixed.table["root"][sample], ref, rtol=0, atol=2e-12)


def test_start_functions_that_fail_mark_their_points_and_spare_the_others():
    def start(M, e):
        if np.ndim(M) and np.any(M > 3):
            raise ValueError("only scalars past 3")
        return math.nan if M > 5 else M

    res = sweep(kepler, param_grid(M=[1.0, 4.0, 6.0], e=[0.5]), start=start, fprime=kepler_prime)
    assert res.table["outcome"].tolist() == ["converged", "converged", "domain-error"]
    assert res.table["stop_reason"].tolist()[2] == "bad-value" and res.table["evals"][2] == 0


def test_the_table_saves_to_csv_and_reloads_exactly(tmp_path, high_eccentricity):
    pts = {k: v[:3000] for k, v in high_eccentricity.items()}
    res = sweep(kepler, pts, start=lambda M, e: M, fprime=kepler_prime, chunk_size=1000, **TIGHT)
    path = tmp_path / "kepler.csv"
    res.to_csv(path)
    back = read_sweep_csv(path)
    _same_tables(back, res.table)
    assert path.read_text(encoding="utf-8").splitlines()[0] == "point,chunk,M,e,start,root,f_root,evals,steps,outcome,stop_reason"


def test_an_interrupt_from_the_progress_callback_keeps_the_finished_chunks(high_eccentricity):
    pts = {k: v[:10_000] for k, v in high_eccentricity.items()}
    full = sweep(kepler, pts, start=lambda M, e: M, fprime=kepler_prime, chunk_size=2000, **TIGHT)
    seen = []

    def progress(done, total):
        seen.append((done, total))
        if len(seen) == 2:
            raise KeyboardInterrupt

    cut = sweep(kepler, pts, start=lambda M, e: M, fprime=kepler_prime, chunk_size=2000, progress=progress, **TIGHT)
    assert cut.interrupted and cut.chunks_done == 2 and cut.chunks == 5
    assert seen == [(2000, 10_000), (4000, 10_000)]
    _same_tables(cut.table[:4000], full.table[:4000])
    rest = cut.table[4000:]
    assert set(rest["outcome"]) == {"not-run"} and set(rest["stop_reason"]) == {"not-run"}
    assert np.all(np.isnan(rest["root"])) and not rest["evals"].any()
    np.testing.assert_array_equal(rest["M"], pts["M"][4000:])  # parameters kept for a rerun
    assert "interrupted" in cut.to_text()


def test_an_interrupt_raised_inside_the_function_keeps_the_chunks_before_it():
    M = np.linspace(0.1, 6.0, 5000)

    def stops_past_four(E, M, e):
        if np.any(M > 4.0):
            raise KeyboardInterrupt
        return kepler(E, M, e)

    res = sweep(stops_past_four, {"M": M, "e": np.full(5000, 0.3)}, start=math.pi, fprime=kepler_prime,
                chunk_size=1000)
    done = res.table["outcome"] != "not-run"
    assert res.interrupted and res.chunks_done == 3  # M > 4 first occurs in chunk 3 (points 3000..3999)
    assert done[:3000].all() and not done[3000:].any()


def test_a_function_that_takes_only_floats_runs_in_a_process_pool_with_the_same_results():
    pts = param_grid(M=np.linspace(0.0, 6.2, 40), e=np.linspace(0.0, 0.9, 25))
    pool = sweep(kepler_scalar, pts, start=lambda M, e: M, chunk_size=250, processes=2, **TIGHT)
    here = sweep(kepler_scalar, pts, start=lambda M, e: M, chunk_size=250, processes=1, **TIGHT)
    assert pool.runner == "process-pool" and here.runner == "lane-by-lane"
    _same_tables(pool.table, here.table)
    assert pool.counts() == {"converged": 1000}
    np.testing.assert_allclose(pool.on_grid("root")[10, ::6], _brentq_roots(pts.axes[0][10] + 0 * pts.axes[1][::6],
                                                                             pts.axes[1][::6]), atol=2e-12)


def test_bracketing_methods_sweep_with_a_bracket_function():
    pts = {"M": np.linspace(0.05, 6.2, 30), "e": np.linspace(0.0, 0.98, 30)}
    ref = _brentq_roots(pts["M"], pts["e"])
    hyb = sweep(kepler, pts, method="hybrid", bracket=lambda M, e: (0.0 * M, 0.0 * M + 2 * np.pi), xtol=1e-13)
    ill = sweep(kepler, pts, method="illinois", bracket=(0.0, 2 * math.pi), xtol=1e-13)
    for res in (hyb, ill):
        assert res.counts() == {"converged": 30}
        np.testing.assert_allclose(res.table["root"], ref, atol=1e-12)
    wrong = sweep(kepler, pts, method="illinois", bracket=(2 * math.pi, 3 * math.pi))  # f > 0 at both ends
    assert set(wrong.table["outcome"]) == {"no-bracket"}


def test_progress_reports_every_chunk_and_the_outcome_names_are_known(high_eccentricity):
    seen = []
    res = sweep(kepler, high_eccentricity, start=math.pi, fprime=kepler_prime, chunk_size=25_000,
                progress=lambda d, t: seen.append((d, t)))
    assert seen == [(25_000, 60_000), (50_000, 60_000), (60_000, 60_000)]
    assert set(res.table["outcome"]) <= set(OUTCOMES) and not res.interrupted


def test_bad_sweep_arguments_are_refused_with_what_to_do():
    pts = {"M": [1.0, 2.0], "e": [0.1, 0.2]}
    with pytest.raises(ParameterError, match="Open methods need a start"):
        sweep(kepler, pts)
    with pytest.raises(ParameterError, match="illinois needs a bracket"):
        sweep(kepler, pts, method="illinois")
    with pytest.raises(ParameterError, match="one value per point"):
        sweep(kepler, {"M": [1.0, 2.0], "e": [0.1]}, start=1.0)
    with pytest.raises(ParameterError, match="clash with the sweep table's columns"):
        sweep(lambda x, root: x - root, {"root": [1.0]}, start=0.0)
    with pytest.raises(ParameterError, match="has no parameter 'a'"):
        sweep(kepler, {"M": [1.0], "e": [0.1], "a": [2.0]}, start=1.0)
    with pytest.raises(ParameterError, match="'chunk_size' parameter of sweep must be an int >= 1"):
        sweep(kepler, pts, start=1.0, chunk_size=0)


def test_a_hybrid_sweep_names_poles_and_flat_zero_sets_instead_of_calling_them_converged():
    # 1/(x - c) changes sign at a pole (|f| -> inf as x -> c; any calculus text); x*exp(-1/x**2) - c with c = 0
    # underflows to exactly 0 for |x| < ~0.037 (Alefeld, Potra and Shi 1995, problem 13); with c = 0.1 its root is
    # the solution of x*exp(-1/x**2) = 0.1, checked with scipy.optimize.brentq.
    from scipy.optimize import brentq

    poles = sweep("1/(x - c)", {"c": [0.3, 0.6]}, method="hybrid", bracket=(0.0, 1.0)).table
    assert poles["outcome"].tolist() == ["pole", "pole"]
    flat = sweep("x*exp(-1/x**2) - c", {"c": [0.0, 0.1]}, method="hybrid", bracket=(-1.0, 4.0)).table
    assert flat["outcome"].tolist() == ["flat", "converged"]
    ref = brentq(lambda x: x * math.exp(-1 / x**2) - 0.1, 0.1, 4.0, xtol=1e-15)
    assert flat["root"][1] == pytest.approx(ref, rel=1e-13)
