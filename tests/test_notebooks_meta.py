"""House rules for the example notebooks, read from the .ipynb files (nbval runs them; this reads them).

- Scenario data are declared invented, and every notebook carries the caution that engineering
  decisions follow codes and licensed practice.
- No data without a source: a number with four or more significant digits in a code cell carries a
  comment naming where it comes from ("invented", a year, "from memory", or the library that computes it).
- Checks name their sources: a code cell that asserts a value sits under text naming a publication
  (a year), a reference library, or "from memory".
- Stored outputs are what nbval compares (strict mode): every code cell has been run, none failed,
  nothing was written to stderr (warnings), and no local path or address of the build machine leaked in.
- The README lists every notebook; binder's start URL opens one that exists.
"""

from __future__ import annotations

import io
import json
import pathlib
import re
import tokenize

import pytest

ROOT = pathlib.Path(__file__).resolve().parents[1]
NOTEBOOKS = sorted((ROOT / "example_notebooks").glob("*.ipynb"))
SCENARIOS = [p for p in NOTEBOOKS if p.stem != "explore"]

SOURCE_WORDS = re.compile(r"invented|from memory|common practice|\b(?:1[89]|20)\d\d\b|scipy|mpmath|numpy|SI\b",
                          re.IGNORECASE)
CITATION = re.compile(r"\b(?:1[89]|20)\d\d\b|from memory|scipy|mpmath|numpy", re.IGNORECASE)


def _load(path: pathlib.Path) -> dict:
    return json.loads(path.read_text(encoding="utf-8"))


def _text(cell: dict) -> str:
    src = cell["source"]
    return "".join(src) if isinstance(src, list) else src


def _significant_digits(literal: str) -> int:
    """Digits between the first and the last nonzero digit: 0.025852 has 5, 280.0 has 2, 1e-12 has 1."""
    mantissa = re.split(r"[eE]", literal.replace("_", ""))[0]
    return len(mantissa.replace(".", "").strip("0"))


def _long_numbers_without_a_source(code: str) -> list[str]:
    """Numbers of 4+ significant digits on a line whose comment does not say where they come from."""
    lines = code.splitlines()
    found = []
    try:
        tokens = list(tokenize.generate_tokens(io.StringIO(code).readline))
    except (tokenize.TokenError, IndentationError, SyntaxError):  # IPython magics: skip the cell
        return []
    for tok in tokens:
        if tok.type != tokenize.NUMBER or _significant_digits(tok.string) < 4:
            continue
        line = lines[tok.start[0] - 1]
        comment = line.split("#", 1)[1] if "#" in line else ""
        if not SOURCE_WORDS.search(comment):
            found.append(f"{tok.string} in {line.strip()!r}")
    return found


def test_there_are_example_notebooks_for_each_scenario_of_the_issue():
    names = {p.stem for p in NOTEBOOKS}
    assert {"quickstart", "pipe_friction", "kepler_orbit", "vdw_co2", "noise_inner_solver",
            "parameter_sweep", "explore"} <= names


@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.stem)
def test_a_notebook_declares_its_scenario_data_invented(path):
    cells = _load(path)["cells"]
    first = _text(cells[0])
    assert cells[0]["cell_type"] == "markdown" and re.search(r"\binvented\b", first), path.name


@pytest.mark.parametrize("path", SCENARIOS, ids=lambda p: p.stem)
def test_a_scenario_notebook_says_results_are_not_engineering_advice(path):
    text = " ".join(_text(c) for c in _load(path)["cells"] if c["cell_type"] == "markdown")
    assert re.search(r"illustrat", text) and re.search(r"codes|licensed|validated|not design advice", text), path.name


@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.stem)
def test_every_long_number_in_a_notebook_names_its_source(path):
    missing = []
    for cell in _load(path)["cells"]:
        if cell["cell_type"] == "code":
            missing += _long_numbers_without_a_source(_text(cell))
    assert missing == [], f"{path.name}: numbers without a source comment: {missing}"


@pytest.mark.parametrize("path", SCENARIOS, ids=lambda p: p.stem)
def test_every_check_in_a_notebook_sits_under_text_that_names_its_source(path):
    cells = _load(path)["cells"]
    checks = 0
    for i, cell in enumerate(cells):
        if cell["cell_type"] != "code" or not re.search(r"^\s*assert\b", _text(cell), re.MULTILINE):
            continue
        checks += 1
        above = next((_text(c) for c in reversed(cells[:i]) if c["cell_type"] == "markdown"), "")
        assert CITATION.search(above) or CITATION.search(_text(cell)), f"{path.name}, cell {i}: a check without a source"
    assert checks >= 1, f"{path.name} checks nothing against an independent value"


@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.stem)
def test_a_notebook_is_stored_with_the_outputs_nbval_compares(path):
    nb = _load(path)
    assert nb["metadata"]["kernelspec"]["name"] == "python3"
    for i, cell in enumerate(nb["cells"]):
        if cell["cell_type"] != "code":
            continue
        assert cell["execution_count"] is not None, f"{path.name}, cell {i} was not run: nbval would not compare it"
        for out in cell["outputs"]:
            assert out["output_type"] != "error", f"{path.name}, cell {i} stored an error"
            assert not (out["output_type"] == "stream" and out["name"] == "stderr"), (
                f"{path.name}, cell {i} wrote to stderr: {''.join(out['text'])[:200]}")


@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.stem)
def test_stored_outputs_hold_no_path_or_address_of_the_machine_that_ran_them(path):
    blob = json.dumps([c.get("outputs", []) for c in _load(path)["cells"]])
    for leak in ("/work/", "/home/", "/root/", "/tmp/", "127.0.0.1", "tcp://"):
        assert leak not in blob, f"{path.name} stores {leak!r} in an output"


def test_the_readme_lists_every_notebook_and_the_command_that_checks_them():
    readme = (ROOT / "example_notebooks" / "README.md").read_text(encoding="utf-8")
    for path in NOTEBOOKS:
        assert f"`{path.name}`" in readme, path.name
    assert "python -m pytest" in readme


def test_binder_installs_the_project_and_starts_on_an_existing_notebook():
    binder = ROOT / "binder"
    post = (binder / "postBuild").read_text(encoding="utf-8")
    assert post.startswith("#!") and "pip install" in post and " -e ." in post
    reqs = (binder / "requirements.txt").read_text(encoding="utf-8")
    for package in ("jupyterlab", "ipywidgets", "ipympl", "scipy", "dask"):
        assert re.search(rf"^{package}\b", reqs, re.MULTILINE), package
    start = re.search(r"urlpath=lab/tree/(\S+\.ipynb)", (binder / "README.md").read_text(encoding="utf-8"))
    assert start and (ROOT / start.group(1)).is_file()


def test_every_scenario_model_names_its_published_equation_and_every_constant_its_source():
    import inspect

    from convdiag import demos

    text = inspect.getsource(demos)
    for name in demos.__all__:
        obj = getattr(demos, name)
        if callable(obj):
            doc = inspect.getdoc(obj) or ""
            assert re.search(r"\b(?:1[89]|20)\d\d\b|Kepler|Colebrook|van der Waals|Robertson", doc), name
        else:  # a constant: the comment block just above its assignment names the source or says "invented"
            before = text[: text.index(f"\n{name} = ")].rsplit("\n\n", 1)[-1]
            assert SOURCE_WORDS.search(before) and before.lstrip().startswith("#:"), name


def test_the_source_check_catches_a_number_without_a_source():
    assert _long_numbers_without_a_source("x = 0.025852\ny = 2.0\n") == ["0.025852 in 'x = 0.025852'"]
    assert _long_numbers_without_a_source("x = 0.025852  # kT/q at 300 K, invented board\n") == []
    assert _long_numbers_without_a_source("E = 32.361007  # Meeus 1998\n") == []
    assert _long_numbers_without_a_source("T = 280.0\nV = 2000.0\nh = 1e-12\n") == []  # round numbers are not data
