"""The README opens with the job paragraph and two set-up commands; CI runs the second verbatim."""

import pathlib
import re

ROOT = pathlib.Path(__file__).resolve().parents[1]


def readme_commands():
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    block = re.search(r"```sh\n(.*?)```", text, re.S)
    assert block, "README has no ```sh block"
    return [ln for ln in block.group(1).splitlines() if ln.strip()]


def test_readme_opens_with_one_paragraph_then_exactly_two_commands():
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    parts = text.split("\n\n")
    assert parts[0].startswith("# convdiag")
    assert len(parts[1]) > 200 and "convdiag" in parts[1]  # the job paragraph
    assert parts[2].startswith("```sh")
    cmds = readme_commands()
    assert len(cmds) == 2
    assert "convdiag demo" in cmds[0] and "pytest" in cmds[1]


def test_ci_runs_the_readme_test_command_verbatim():
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert readme_commands()[1] in ci.splitlines()
