"""Fleet table: machines with known Cs rank in the right order.

Each simulated machine runs at a speed n(θ) = n̄ (1 + a sin θ): over a cycle
(ω_max − ω_min) / ω̄ = 2a exactly (definition of Cs, e.g. Shigley's Mechanical
Engineering Design, 10th ed., eq. 16-61), so the machines' Cs are known in advance.
"""

import json
import math

import numpy as np
import pytest
from click.testing import CliRunner

from torqlog.cli import cli
from torqlog.errors import UsageError
from torqlog.fleet.compare import fleet_table, rank_rows, size_figures

AMPLITUDES = {"Press 1": 0.02, "Press 2": 0.08, "Press 3": 0.04}  # Cs = 0.04, 0.16, 0.08


def _log(path, a, rpm=60.0, fs=400.0, seconds=10.0):
    t = np.arange(0, seconds, 1 / fs)
    th = rpm * 2 * math.pi / 60 * t
    speed = rpm * (1 + a * np.sin(th))
    torque = 1000 + 400 * np.sin(2 * th)
    np.savetxt(path, np.column_stack([t, torque, speed]), delimiter=",", fmt="%.10g",
               header="time_s,torque_Nm,speed_rpm", comments="")


@pytest.fixture(scope="module")
def fleet_dir(tmp_path_factory):
    root = tmp_path_factory.mktemp("fleet")
    for i, (name, a) in enumerate(AMPLITUDES.items(), start=1):
        d = root / f"press{i}"
        d.mkdir()
        (d / "profile.toml").write_text(
            f'[machine]\nname = "{name}"\ntarget_cs = 0.1\ninertia_kgm2 = 50\n',
            encoding="utf-8")
        _log(d / f"p{i}_20260302_0600.csv", a)
        _log(d / f"p{i}_20260303_0600.csv", a)
    return root


def test_three_machines_rank_by_cs_against_target(fleet_dir):
    res = CliRunner().invoke(cli, ["trend", str(fleet_dir / "*" / "*.csv"), "--folder-profiles",
                                   "--name-time", "%Y%m%d_%H%M", "-j", "1", "--fleet",
                                   "--format", "json"])
    assert res.exit_code == 0, res.output
    rows = json.loads(res.stdout)["fleet"]["machines"]
    assert [r["machine"] for r in rows] == ["Press 2", "Press 3", "Press 1"]
    assert [r["rank"] for r in rows] == [1, 2, 3]
    for r in rows:
        cs = 2 * AMPLITUDES[r["machine"]]
        assert r["cs_median"] == pytest.approx(cs, rel=0.02)
        assert r["cs_p90_over_target"] == pytest.approx(r["cs_p90"] / 0.1, rel=1e-12)
        assert r["last_log"] == "2026-03-03" and r["logs"] == 2
        assert r["added_inertia_kgm2"] is not None
    assert [r["status"] for r in rows] == ["over target", "within target", "within target"]


def test_sort_by_any_column_and_unknown_column():
    rows = [{"machine": "B", "cs_p90": 0.2}, {"machine": "A", "cs_p90": None},
            {"machine": "C", "cs_p90": 0.1}]
    assert [r["machine"] for r in rank_rows(rows, "cs_p90")] == ["B", "C", "A"]
    assert [r["machine"] for r in rank_rows(rows, "machine")] == ["A", "B", "C"]
    with pytest.raises(UsageError, match="unknown fleet column 'speed'; sort by one of rank,"):
        rank_rows(rows, "speed")


def test_size_figures_taken_by_key_name():
    # the keys of the size JSON contract (README): the answer that leads, and the motor's
    # RMS torque now over its rated torque
    size = {"added_inertia_kgm2": 12.0, "drive": {
        "existing": {"motor_torque_rms_Nm": 80.0, "motor_torque_rated_Nm": 100.0}}}
    f = size_figures(size)
    assert f == {"added_inertia_kgm2": 12.0, "added_inertia_key": "added_inertia_kgm2",
                 "motor_rms_load": 0.8}
    assert size_figures({"drive": {}}) == {"added_inertia_kgm2": None,
                                           "added_inertia_key": None,
                                           "motor_rms_load": None}


def test_fleet_table_html_and_anomaly_column():
    import pandas as pd

    cycles = pd.DataFrame({"machine": ["M"] * 4, "file": ["f"] * 4,
                           "start_time": pd.to_datetime(["2026-03-02"] * 4),
                           "cs": [0.1, 0.2, 0.3, 0.4], "flag": ["", "", "", "gap"],
                           "anomaly": [False, True, False, False]})
    r = fleet_table(cycles, targets={"M": 0.5})
    row = r.rows[0]
    assert row["cs_median"] == pytest.approx(0.2)  # the flagged cycle is left out
    assert row["anomaly_rate"] == 0.25 and row["flagged_share"] == 0.25
    assert row["status"] == "within target"
    assert "<th>cs_p90_over_target</th>" in r._repr_html_()


def test_fleet_page_is_sortable_and_cautions(tmp_path):
    import pandas as pd

    cycles = pd.DataFrame({"machine": ["M", "N"], "file": ["f", "g"],
                           "start_time": pd.to_datetime(["2026-03-02", "2026-03-03"]),
                           "cs": [0.1, 0.3], "flag": ["", ""]})
    page = fleet_table(cycles, targets={"M": 0.2, "N": 0.2}).write_html(tmp_path / "f.html")
    text = page.read_text(encoding="utf-8")
    assert "<table id=fleet class=sortable><tr><th>rank</th>" in text
    assert "approved by a qualified, licensed engineer" in text
    assert text.index("<td>N</td>") < text.index("<td>M</td>")  # N is further over target


def test_report_of_three_machines_has_a_sortable_fleet_page_in_rank_order(fleet_dir, tmp_path):
    # the same three machines, given to the report: the fleet page ranks them by how far
    # their worst decile of Cs (2a, Shigley eq. 16-61) stands above the target 0.1
    import html5lib

    logs = sorted(fleet_dir.glob("*/*.csv"))
    html, pdf = tmp_path / "r.html", tmp_path / "r.pdf"
    res = CliRunner().invoke(cli, ["report", *map(str, logs), "--folder-profiles",
                                   "--name-time", "%Y%m%d_%H%M", "-o", str(html),
                                   "--pdf", str(pdf), "--units", "us"])
    assert res.exit_code == 0, res.output
    text = html.read_text(encoding="utf-8")
    tree = html5lib.HTMLParser(strict=True, namespaceHTMLElements=False).parse(text)
    assert tree.find(".//title").text == "torqlog report: Press 1"  # the first log's machine
    table = next(t for t in tree.iter("table") if t.get("id") == "fleet-table")
    assert table.get("class") == "sortable"
    heads = ["".join(th.itertext()) for th in table.find("thead").iter("th")]
    assert heads[:3] == ["Rank", "Machine", "Last log"]
    assert "Added inertia at the logged shaft, lb·ft²" in heads  # the report's units
    rows = [["".join(c.itertext()) for c in tr] for tr in table.find("tbody").iter("tr")]
    assert [r[1] for r in rows] == ["Press 2", "Press 3", "Press 1"]
    assert [r[0] for r in rows] == ["1", "2", "3"]
    assert [r[heads.index("Status")] for r in rows] == ["over target", "within target",
                                                        "within target"]
    assert [r[heads.index("Last log")] for r in rows] == ["2026-03-03"] * 3
    cs = [float(td.get("data-value")) for td in table.iter("td")
          if td.get("data-key") == "cs_median"]
    assert cs == pytest.approx([0.16, 0.08, 0.04], rel=0.02)  # 2a
    # sorting needs no network: the one inline script of the page, no src
    scripts = list(tree.iter("script"))
    assert len(scripts) == 1 and scripts[0].get("src") is None
    assert "table.sortable" in scripts[0].text
    # and the PDF carries the same page
    import subprocess

    out = subprocess.run(["pdftotext", "-layout", str(pdf), "-"], capture_output=True,
                         text=True, check=True).stdout
    fleet = out[out.index("The fleet: Cs against"):]
    assert fleet.index("Press 2") < fleet.index("Press 3") < fleet.index("Press 1")


def test_report_fleet_options_are_refused_with_the_reason(fleet_dir):
    log = str(next(fleet_dir.glob("press1/*.csv")))
    res = CliRunner().invoke(cli, ["report", log, "--name-time", "%Y%m%d_%H%M"])
    assert res.exit_code == 2
    assert "--name-time applies with --folder-profiles" in res.output
    res = CliRunner().invoke(cli, ["report", log, "--folder-profiles", "--fleet-sort", "speed"])
    assert res.exit_code == 2
    assert "unknown fleet column 'speed'; sort by one of rank," in res.output
