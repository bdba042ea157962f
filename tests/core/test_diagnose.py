"""The diagnosis on the published pathological cases: the verdict, the evidence, and an advice that works.

Check values are from shared/REFERENCES.md §4 (each recomputed there [V]) unless a comment names
another source: Newton's 2-cycle 0 → 1 → 0 on x³ − 2x + 2 (real root −1.7692923542386314);
Newton on arctan diverges from |x0| > 1.3917452002707349; Newton on the real cube root maps
x → −2x; Newton on x·e^(−x) from x0 > 1 runs off to infinity while f → 0; regula falsi keeps the
end 1.3 of [0, 1.3] on x^10 − 1 (Chapra & Canale Ex. 5.6, from memory); tan has a pole at π/2
inside [1, 2]; Newton at a root of multiplicity m has rate (m − 1)/m (§1).
"""

import json
import math

import numpy as np
import pytest

from convdiag import ParameterError, solve
from convdiag.core._diagnose import PRECEDENCE, Diagnosis, diagnose
from convdiag.core._findings import KINDS

CUBE_ROOT = lambda x: math.copysign(abs(x) ** (1 / 3), x)

# (name, f, method, where, verdict, the root the remedy must reach: None for "any root of f")
CASES = [
    ("newton 2-cycle", "x**3 - 2*x + 2", "newton", {"start": 0.0, "max_evals": 40}, "cycle", -1.7692923542386314),
    ("arctan from 1.5", "atan(x)", "newton", {"start": 1.5}, "divergence", 0.0),
    ("cube root, expression", "cbrt(x)", "newton", {"start": 1.0}, "divergence", 0.0),
    ("cube root, callable", CUBE_ROOT, "newton", {"start": 1.0}, "divergence", 0.0),
    ("x e^-x from 2", "x*exp(-x)", "newton", {"start": 2.0}, "divergence", 0.0),
    ("x e^-x to underflow", "x*exp(-x)", "newton", {"start": 2.0, "max_evals": 2000}, "divergence", 0.0),
    ("regula falsi x^10 - 1", "x**10 - 1", "regula-falsi", {"bracket": (0.0, 1.3)}, "slow", 1.0),
    ("tan pole, bisection", "tan(x)", "bisection", {"bracket": (1.0, 2.0)}, "pole", None),
    ("tan pole, hybrid", "tan(x)", "hybrid", {"bracket": (1.0, 2.0)}, "pole", None),
    *[(f"multiplicity {m}", f"(x - 1)**{m}*exp(x)", "newton", {"start": 2.0}, "multiple-root", 1.0)
      for m in (2, 3, 4, 5)],
    ("log from 3 (domain)", "log(x)", "newton", {"start": 3.0}, "domain-error", 1.0),
    ("zero slope", "x**3 - 2*x + 2", "newton", {"start": math.sqrt(2 / 3)}, "flat", -1.7692923542386314),
]


def diagnosed(case):
    _, f, method, where, _, _ = case
    run = solve(f, method, **where)
    return run, diagnose(run)


@pytest.mark.parametrize("case", CASES, ids=[c[0] for c in CASES])
def test_each_pathological_case_gets_its_verdict(case):
    _run, d = diagnosed(case)
    assert d.verdict == case[4], (d, d.kinds, d.notes)
    assert d.primary.kind == case[4] and d.primary.evidence and d.primary.advice
    assert not any("could not finish" in n for n in d.notes), d.notes
    assert d.probes <= 60


@pytest.mark.parametrize("case", CASES, ids=[c[0] for c in CASES])
def test_applying_the_advice_makes_the_run_converge(case):
    _, f, _, _, _, root = case
    _, d = diagnosed(case)
    assert d.remedy is not None, d
    cured = d.remedy.solve(f)
    assert cured.converged, (d.remedy, cured)
    if root is not None:
        assert abs(float(cured.root) - root) <= 1e-7, (d.remedy, cured.root)
    else:  # tan: a true root is a multiple of π where f vanishes (not the pole at π/2)
        k = round(float(cured.root) / math.pi)
        assert abs(float(cured.root) - k * math.pi) <= 1e-9 and abs(float(cured.values[-1])) < 1e-8
    assert diagnose(cured).verdict == "converged"


def test_the_two_cycle_names_its_period_and_points():
    _, d = diagnosed(CASES[0])
    c = d.primary
    assert c.value("period") == 2 and sorted(c.value("cycle points")) == [0.0, 1.0]  # REFERENCES §4
    assert c.value("largest mismatch") == 0.0 and c.value("smallest |f| on the cycle") == 1.0  # f(1) = 1, f(0) = 2
    assert repr(d) == "<Diagnosis newton: cycle (period 2), 40 evaluations>"


def test_arctan_converges_below_the_published_threshold_and_diverges_above_it():
    # |x0| < 1.3917452002707349 converges, above diverges (REFERENCES §4).
    assert diagnose(solve("atan(x)", "newton", start=1.3)).verdict == "converged"
    assert diagnose(solve("atan(x)", "newton", start=1.45)).verdict == "divergence"


def test_the_cube_root_evidence_shows_the_doubling():
    run, d = diagnosed(CASES[2])
    # x_k = (−2)^k from x0 = 1 (REFERENCES §4); the float cube root and its slope round in the last bits
    assert d.primary.value("last iterate") == pytest.approx((-2.0) ** len(run.steps), rel=1e-9)
    assert "grew" in d.primary.summary
    run, d = diagnosed(CASES[3])  # the callable's slope comes from differences: nearly −2x per step
    assert abs(d.primary.value("last iterate")) == pytest.approx(2.0 ** len(run.steps), rel=1e-6)


def test_x_exp_minus_x_is_false_convergence_never_converged():
    _, d = diagnosed(CASES[5])
    assert d.verdict == "divergence" and d.primary.tag == "false convergence"
    assert "converged" not in d.kinds
    f0, f_last = d.primary.value("|f| first → last")
    assert f_last < 1e-300 < f0  # f underflows while x runs to about 745 (e^-745 ≈ 5e-324)


def test_regula_falsi_evidence_is_the_fixed_end_and_the_published_rate():
    _, d = diagnosed(CASES[6])
    s = d.primary
    assert s.value("bracket end that never moved") == 1.3
    # rate 1 − f'(r)(b − r)/f(b) with the fixed end b = 1.3 (REFERENCES §1): f'(1) = 10, f(1.3) = 1.3^10 − 1
    expected = 1 - 10 * 0.3 / (1.3**10 - 1)
    assert s.value("rate per step") == pytest.approx(expected, rel=0.01)
    assert "budget" in d.kinds and d.finding("budget").value("evaluations still needed") > 0


@pytest.mark.parametrize("method", ["bisection", "hybrid"])
def test_the_tan_pole_is_located_at_pi_over_2_with_a_simple_pole_exponent(method):
    d = diagnose(solve("tan(x)", method, bracket=(1.0, 2.0)))
    p = d.primary
    assert p.value("sign change at") == pytest.approx(math.pi / 2, abs=1e-12)
    assert p.value("exponent q in |f| ~ width^q") == pytest.approx(-1.0, abs=0.17)  # |tan| ~ 1/|x − π/2|
    assert "pole" in p.summary and p.remedy.method == "hybrid"


@pytest.mark.parametrize("m", [2, 3, 4, 5])
def test_the_multiplicity_is_named_and_the_cure_is_quadratic(m):
    run = solve(f"(x - 1)**{m}*exp(x)", "newton", start=2.0, max_evals=300)
    d = diagnose(run)
    f = d.primary
    assert f.value("multiplicity") == m and f.value("linear rate") == pytest.approx((m - 1) / m, abs=0.02)
    assert f.remedy.method == "newton-m" and f.remedy.multiplicity == m
    cured = f.remedy.solve(f"(x - 1)**{m}*exp(x)")
    assert cured.converged and cured.evaluations < min(run.evaluations, 30)
    ratio = solve(f"(x - 1)**{m}*exp(x)", "newton-ratio", start=2.0)  # the other cure the advice names
    assert "newton-ratio" in f.advice and ratio.converged and abs(ratio.root - 1) < 1e-7


def test_the_domain_edge_of_log_is_found_near_zero():
    _run, d = diagnosed(CASES[-2])
    lo, hi = d.primary.value("domain edge")
    assert hi < 0 <= lo and lo - hi <= 1e-8  # log is defined for x > 0 only
    assert d.primary.value("first failure at x") == pytest.approx(3 - 3 * math.log(3))  # Newton: x − x·ln x


def test_a_flat_zero_set_is_not_called_a_root():
    # APS problem 13, x·exp(−1/x²) on [−1, 4] (scipy's copy of the test set): f underflows to 0 for |x| < 0.037.
    d = diagnose(solve("x*exp(-1/x**2)", "hybrid", bracket=(-1.0, 4.0)))
    assert d.verdict == "flat" and d.primary.tag == "flat zero set" and d.primary.remedy is None
    assert all(v != 0 and abs(v) < 0.04 for v in d.primary.value("also zero at"))
    assert "hybrid flagged" in d.primary.advice


def test_a_lucky_exact_root_is_not_a_flat_zero_set():
    # x = 2 is exactly representable and f(2) = 0 exactly; f(2 ± δ) = ±4δ ≠ 0.
    d = diagnose(solve("x**2 - 4", "bisection", bracket=(0.0, 3.0)))
    assert d.verdict == "converged" and "flat" not in d.kinds


def test_a_converged_run_is_converged_with_the_root_and_order():
    d = diagnose(solve("x**2 - 2", "newton", start=1.0))
    assert d.verdict == "converged" and d.kinds == ("converged",)
    assert d.primary.value("root") == pytest.approx(math.sqrt(2), rel=1e-15)
    assert d.order is not None and d.order.label == "quadratic"
    assert d.remedy is None and d.primary.advice == "Nothing to change."


def test_every_verdict_is_in_the_precedence_list_once():
    assert sorted(PRECEDENCE) == sorted(KINDS) and len(PRECEDENCE) == 12
    assert PRECEDENCE[-1] == "converged" and PRECEDENCE.index("budget") > PRECEDENCE.index("slow")


def test_precedence_puts_the_cause_before_its_symptom():
    # a multiple root stopped by the budget: the verdict is the cause (multiple root), the budget comes second
    d = diagnose(solve("(x - 1)**2*exp(x)", "newton", start=2.0))
    assert d.kinds[:2] == ("multiple-root", "budget")


def test_the_dict_is_json_and_has_kind_evidence_advice_per_finding():
    _, d = diagnosed(CASES[6])
    out = json.loads(json.dumps(d.to_dict(), allow_nan=False))
    assert out["verdict"] == "slow" and out["source"] == "run" and out["probes"] == d.probes
    for f in out["findings"]:
        assert {"kind", "evidence", "advice", "summary", "remedy"} <= set(f)
        assert all({"label", "value", "note"} == set(e) for e in f["evidence"])
    assert out["findings"][0]["remedy"]["method"] == "hybrid"
    assert out["order"]["order"]["label"] == "linear"


def test_probe_false_never_calls_f_again():
    calls = []

    def f(x):
        calls.append(x)
        return x**3 - 2 * x + 2

    run = solve(f, "newton", start=0.0, fprime=lambda x: 3 * x * x - 2, max_evals=20)
    n = len(calls)
    d = diagnose(run, probe=False)
    assert len(calls) == n and d.probes == 0 and d.verdict == "cycle"
    assert d.remedy.bracket is None and d.remedy.near == 0.0  # the bracket is searched when the remedy is applied
    assert d.remedy.solve(f).converged


def test_the_probe_budget_is_respected_and_counted():
    calls = []

    def f(x):
        calls.append(x)
        return math.atan(x)

    run = solve(f, "newton", start=1.5)
    for budget in (0, 5, 20):
        before = len(calls)
        d = diagnose(run, max_probe_evals=budget)
        assert len(calls) - before <= d.probes <= budget  # the bracket search counts a failed array call too
        assert d.verdict == "divergence"


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"xtol": -1.0}, r"The 'xtol' parameter of diagnose must be a finite float >= 0 or None. Got -1.0"),
        ({"method": "nope"}, r"The 'method' parameter of diagnose must be one of"),
        ({"max_probe_evals": -1}, r"The 'max_probe_evals' parameter of diagnose must be an int >= 0"),
        ({"bracket": (2.0, 1.0)}, r"The 'bracket' parameter of diagnose must be a pair"),
        ({"root": math.nan}, r"The 'root' parameter of diagnose must be a finite float"),
    ],
)
def test_bad_arguments_are_refused_with_the_template_message(kwargs, match):
    with pytest.raises(ParameterError, match=match):
        diagnose([1.0, 0.5, 0.25, 0.125], **kwargs)


def test_a_sequence_too_short_is_refused():
    with pytest.raises(ParameterError, match="at least 3"):
        diagnose([1.0, 0.5])


def test_the_diagnosis_is_a_frozen_showable_result():
    _, d = diagnosed(CASES[0])
    assert isinstance(d, Diagnosis)
    with pytest.raises(AttributeError):
        d.verdict = "converged"  # type: ignore[misc]
    assert d.finding("cycle") is d.primary and d.finding("pole") is None
    assert np.isfinite(d.root)


def test_a_complex_run_is_diagnosed_without_probes_or_false_failures():
    # Newton on x² + 1 from 1 + i converges to i (the roots of x² + 1 are ±i)
    run = solve("x**2 + 1", "newton", start=1 + 1j)
    d = diagnose(run)
    assert run.converged and d.kinds == ("converged",) and d.probes == 0
