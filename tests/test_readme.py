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


def _section(title: str) -> str:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    return text.split(f"## {title}", 1)[1].split("\n## ", 1)[0]


def test_readme_python_example_runs(tmp_path, monkeypatch):
    block = re.search(r"```python\n(.*?)```", _section("From Python (notebooks)"),
                      flags=re.S)
    assert block is not None
    (tmp_path / "sample_data").symlink_to(ROOT / "sample_data")
    monkeypatch.chdir(tmp_path)
    ns: dict = {}
    exec(compile(block.group(1), "README.md", "exec"), ns)  # noqa: S102 - our own README
    assert 0.05 < ns["cycles"].summary["cs"]["median"] < 0.3
    assert ns["size"].to_dict()["added_inertia_kgm2"] > 0
    assert (tmp_path / "press_cycles.png").stat().st_size > 10_000
    html = ns["cycles"]._repr_html_()
    assert html.count("<table>") >= 2 and "energy_swing_J" in html


def test_readme_tour_commands_on_sample_data_run(tmp_path, monkeypatch):
    import shlex

    from click.testing import CliRunner
    from openpyxl import load_workbook

    from torqlog.cli import cli

    cmds = [ln for ln in re.findall(r"```sh\n(.*?)```",
                                    _section("Your own files, units and materials"),
                                    flags=re.S)
            for ln in ln.splitlines() if "sample_data" in ln or "--material-name" in ln]
    assert len(cmds) == 4
    (tmp_path / "sample_data").symlink_to(ROOT / "sample_data")
    monkeypatch.chdir(tmp_path)
    outs = [CliRunner().invoke(cli, shlex.split(c)[1:]) for c in cmds]
    assert [r.exit_code for r in outs] == [0, 0, 0, 0], [r.output for r in outs]
    report = (tmp_path / "press_us.html").read_text(encoding="utf-8")
    assert "US customary units" in report and "lb·ft²" in report
    wb = load_workbook(tmp_path / "press_cycles.xlsx")
    assert wb.sheetnames == ["summary", "table", "options"]
    header, units = outs[1].stdout.splitlines()[:2]
    assert header.split(",")[:2] == ["added_inertia_lbft2", "cs"]
    assert units.split(",")[:5] == ["lb·ft²", "", "rpm", "rpm", "lbf·ft"]
    assert "  material                       frame iron\n" in outs[3].stdout
    assert "  material_designation           \n" in outs[3].stdout  # none claimed
