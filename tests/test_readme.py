"""The README's promises: a one-paragraph statement, exactly two set-up commands, and the
test command is the one CI runs."""

from __future__ import annotations

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _setup_commands() -> list[str]:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    section = text.split("## Set up", 1)[1].split("##", 1)[0]
    block = re.search(r"```sh\n(.*?)```", section, flags=re.S)
    assert block is not None
    return [ln for ln in block.group(1).splitlines() if ln.strip()]


def test_exactly_two_setup_commands_demo_then_tests():
    cmds = _setup_commands()
    assert len(cmds) == 2
    assert cmds[0].endswith("&& torqlog demo")
    assert cmds[1].endswith("&& python -m pytest")


def test_ci_runs_the_readme_test_command():
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    m = re.search(r"^TEST_COMMAND='(.*)'$", ci, flags=re.M)
    assert m is not None
    assert m.group(1) == _setup_commands()[1]
