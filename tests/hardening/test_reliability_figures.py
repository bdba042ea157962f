"""The figures in the README's Reliability section are counted from the hardening tests, so they cannot drift.

Each number the section states must be at most what the tests actually do: the examples the property tests
run per CI run (the sum of ``max_examples`` over every hardening property test and each of its parametrized
cases, under the deterministic "ci" profile), the hostile strings of the corpus, the fuzzed strings, the
methods the interrupt tests cover, and the kinds of hang the worker tests stop.
"""

from __future__ import annotations

import importlib.util
import math
import pathlib
import re

import pytest
from corpus import HOSTILE_TEXT

from convdiag import METHODS

HERE = pathlib.Path(__file__).resolve().parent
README = HERE.parents[1] / "README.md"


def _load(path: pathlib.Path):
    spec = importlib.util.spec_from_file_location(f"_figures_{path.stem}", path)
    module = importlib.util.module_from_spec(spec)
    try:
        spec.loader.exec_module(module)
    except pytest.skip.Exception:  # an optional dependency is missing: its tests do not run either
        return None
    return module


def _cases(fn) -> int:
    return math.prod(len(m.args[1]) for m in getattr(fn, "pytestmark", []) if m.name == "parametrize")


def property_examples() -> dict[str, int]:
    """Examples per CI run of every hardening property test, by test name."""
    out = {}
    for path in sorted(HERE.glob("test_*.py")):
        module = _load(path)
        if module is None:
            continue
        for name, fn in vars(module).items():
            if name.startswith("test_") and getattr(fn, "hypothesis", None) is not None:
                out[f"{path.stem}::{name}"] = fn._hypothesis_internal_use_settings.max_examples * _cases(fn)
    return out


def _section() -> str:
    text = README.read_text(encoding="utf-8")
    match = re.search(r"^## Reliability\n(.*?)(?=^## |\Z)", text, re.DOTALL | re.MULTILINE)
    assert match, "README.md has no '## Reliability' section"
    return match.group(1)


def _number(pattern: str) -> int:
    found = re.search(pattern, _section())
    assert found, f"the Reliability section no longer says {pattern!r}"
    return int(found.group(1).replace(",", ""))


def test_the_property_tests_run_at_least_ten_thousand_examples_per_ci_run():
    counts = property_examples()
    assert len(counts) >= 10 and sum(counts.values()) >= 10_000, counts


def test_the_readme_figures_are_at_most_what_the_tests_do():
    counts = property_examples()
    assert _number(r"\*\*Inputs tried:\*\* ([\d,]+) generated examples") <= sum(counts.values())
    assert _number(r"\*\*Hostile text refused:\*\* (\d+) strings") <= len(HOSTILE_TEXT)
    fuzz = sum(v for k, v in counts.items() if k.startswith("test_hostile_text::"))
    assert _number(r"([\d,]+) fuzzed strings") <= fuzz
    interrupts = _load(HERE / "test_budgets_interrupts.py")
    covered = _cases(interrupts.test_an_interrupt_inside_the_function_ends_the_run_with_every_step_before_it)
    assert _number(r"each of the (\d+) methods") <= min(covered, len(METHODS))
    hung = interrupts.test_a_hanging_function_in_a_worker_is_stopped_at_the_budget_and_every_other_point_is_kept
    hangs = _cases(hung)
    assert _number(r"the tests try (\d+) ways") <= hangs


def test_the_hostile_corpus_is_large_and_has_no_duplicates():
    assert len(HOSTILE_TEXT) >= 30 and len(set(HOSTILE_TEXT)) == len(HOSTILE_TEXT)
