"""README and CI agree: .ci/run runs the very test command README gives."""
from __future__ import annotations

import re

from conftest import ROOT


def _commands() -> list[str]:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    setup = text.split("## Set-up", 1)[1].split("\n## ", 1)[0]
    return re.findall(r"```(?:sh|bash)?\n(.*?)\n```", setup, re.S)


def test_readme_has_exactly_two_setup_commands() -> None:
    cmds = _commands()
    assert len(cmds) == 2
    assert "arrange demo" in cmds[0]
    assert "pytest" in cmds[1] and ".[test]" in cmds[1]


def test_ci_runs_the_readme_test_command() -> None:
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    test_cmd = _commands()[1].strip()
    assert test_cmd in ci.splitlines()
