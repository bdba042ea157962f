"""A sweep's chunks (convdiag.core._sweep_run): assembled by id, pure, and the same when shipped pickled.

Sources: Kepler's equation E - e sin E = M with the radian values of REFERENCES §5 ([V]);
scipy.optimize.brentq on [0, 2π] as the reference root (f(0) = -M <= 0 <= f(2π) = 2π - M).
"""

import math
import pickle

import numpy as np

from convdiag.core._outcomes import OUTCOMES
from convdiag.core._sweep_run import RESERVED, Assembly, Spec, run_chunk, table_dtype


def kepler(E, M, e):
    return E - e * np.sin(E) - M

def kepler_prime(E, M, e):
    return 1 - e * np.cos(E)

def _spec(method="newton", start=math.pi, bracket=None):
    return Spec(f=kepler, method=method, start=start, bracket=bracket, fprime=kepler_prime,
                fprime2=None, xtol=1e-12, rtol=0.0, ftol=0.0, max_evals=100, max_steps=None, variable="x",
                vectorized=None)

def test_chunks_are_assembled_by_id_so_a_repeated_chunk_is_stored_once():
    cols = {"a": np.arange(10.0)}
    asm = Assembly(cols, [(0, 4), (4, 8), (8, 10)])
    rows = {"start": np.ones(4), "root": np.ones(4), "f_root": np.zeros(4), "evals": np.full(4, 3),
            "steps": np.ones(4), "outcome": np.zeros(4, np.uint8), "reason": np.zeros(4, np.uint8)}
    assert asm.add(1, rows) and not asm.add(1, {**rows, "root": np.full(4, 7.0)})
    t = asm.table
    assert t["root"][4:8].tolist() == [1.0] * 4 and t["point"].tolist() == list(range(10))
    assert set(t["outcome"][:4]) == {"not-run"} and asm.points_done == 4
    assert t.dtype == table_dtype(["a"]) and {"point", "chunk", "root", "outcome"} <= RESERVED

def test_a_chunk_is_a_pure_function_of_its_inputs_and_survives_pickling():
    from scipy.optimize import brentq

    cols = {"M": np.array([1.0, 0.5, 3.0, 0.1]), "e": np.array([0.5, 0.2, 0.8, 0.99])}
    spec = _spec()
    cid, rows = run_chunk(spec, 3, 40, cols)
    _, again = run_chunk(spec, 3, 40, cols)
    _, shipped = run_chunk(pickle.dumps(spec), 3, 40, cols)
    assert cid == 3
    for name in rows:
        np.testing.assert_array_equal(rows[name], again[name])
        np.testing.assert_array_equal(rows[name], shipped[name])
    np.testing.assert_allclose(rows["root"], [1.49870113351785, 0.615468169489965, 3.06289397434037,
                                              0.831660423791057], rtol=0, atol=1e-14)  # REFERENCES §5 [V]
    ref = [brentq(kepler, 0.0, 2 * math.pi, args=(m, e), xtol=1e-14) for m, e in zip(cols["M"], cols["e"])]
    np.testing.assert_allclose(rows["root"], ref, rtol=0, atol=1e-12)

def test_a_bracketing_chunk_marks_brackets_without_a_sign_change():
    cols = {"M": np.array([1.0, 2.0]), "e": np.array([0.3, 0.3])}
    _, rows = run_chunk(_spec("illinois", None, (2 * math.pi, 3 * math.pi)), 0, 0, cols)  # f > 0 at both ends
    assert [OUTCOMES[k] for k in rows["outcome"]] == ["no-bracket"] * 2 and rows["evals"].tolist() == [2, 2]
