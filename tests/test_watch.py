"""`torqlog watch` on a log written live by another process: bursts with partial lines,
pauses and a rotation; its per-cycle figures against `torqlog cycles` on the finished
files."""

from __future__ import annotations

import json
import subprocess
import sys
import textwrap
import time

import numpy as np
import pytest

from torqlog.demo.simulate import Fault, simulate, write_log
from torqlog.signal.cycles import analyse_cycles

WRITER = textwrap.dedent("""
    import os, sys, time
    dst, burst = sys.argv[1], int(sys.argv[2])
    for k, src in enumerate(sys.argv[3:]):
        data = open(src, "rb").read()
        tmp = dst + ".new"
        # the first file is appended in place; the next one replaces it (rotation)
        target = dst if k == 0 else tmp
        with open(target, "wb") as fh:
            for i in range(0, len(data), burst):   # bursts cut lines anywhere
                fh.write(data[i:i + burst]); fh.flush()
                time.sleep(0.5 if i == 10 * burst else 0.03)  # one longer pause
                if k and i == 0:
                    os.replace(tmp, dst); target = dst
        time.sleep(0.3)
""")

FIGS = ("t_start_s", "duration_s", "speed_mean_rpm", "speed_min_rpm", "speed_max_rpm",
        "torque_mean_Nm", "torque_peak_Nm", "torque_min_Nm", "work_J", "energy_swing_J",
        "angle_speed_min_deg", "angle_speed_max_deg", "cs", "cs_constant_drive")


@pytest.fixture(scope="module")
def live(tmp_path_factory):
    d = tmp_path_factory.mktemp("live")
    a = write_log(simulate("compressor", duration=25.0, rate=1000.0, seed=5,
                           fault=Fault("valve-leak", rate=0.05, seed=3)), d / "a.csv")
    b = write_log(simulate("compressor", duration=10.0, rate=1000.0, seed=6), d / "b.csv")
    (d / "writer.py").write_text(WRITER)
    dst = d / "live.csv"
    watch = subprocess.Popen([sys.executable, "-m", "torqlog", "watch", str(dst), "--format",
                              "jsonl", "--poll", "0.02", "--idle-exit", "4"],
                             stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    time.sleep(1.5)  # the watcher is up and waiting for the file
    w = subprocess.Popen([sys.executable, str(d / "writer.py"), str(dst), "30011", str(a),
                          str(b)])
    try:
        stdout, stderr = watch.communicate(timeout=120)
    finally:
        w.wait(timeout=60)
    assert watch.returncode == 0, stderr
    lines = [json.loads(x) for x in stdout.splitlines()]
    return a, b, lines


def test_watch_matches_cycles_on_finished_files(live) -> None:
    a, b, lines = live
    rows = [x for x in lines if x["type"] == "cycle"]
    # the rotation restarts the cycle numbers: split there
    cut = next(i for i in range(1, len(rows)) if rows[i]["cycle"] == 1)
    for part, path in ((rows[:cut], a), (rows[cut:], b)):
        ref = analyse_cycles(path).columns
        assert len(part) == len(ref["cycle"])
        for k in FIGS:
            # Cs too: the speed filter reaches a fixed number of angle bins, and the
            # cycle engine keeps that much context and look-ahead around every chunk
            got = np.array([np.nan if r[k] is None else r[k] for r in part], dtype=float)
            np.testing.assert_allclose(got, ref[k], rtol=1e-9, atol=1e-12, err_msg=k)
        assert [r["flag"] for r in part] == ref["flag"].tolist()
    # the first file: the model is learned from its own first cycles, as `cycles` does
    # (the second file is scored with that same model, kept across the rotation)
    ref = analyse_cycles(a).columns
    got = np.array([r["anomaly_score"] if r["anomaly_score"] is not None else np.nan
                    for r in rows[:cut]], dtype=float)
    assert np.isfinite(got).sum() > 100
    np.testing.assert_allclose(got, ref["anomaly_score"], rtol=1e-9, atol=1e-12)
    assert [r["anomaly"] for r in rows[:cut]] == ref["anomaly"].tolist()


def test_watch_alarms_and_summary(live) -> None:
    _, _, lines = live
    alarms = [x for x in lines if x["type"] == "alarm"]
    flagged = [x for x in lines if x["type"] == "cycle" and x["anomaly"]]
    assert len(alarms) == len(flagged) >= 5
    assert alarms[0]["text"].startswith("ALARM cycle")
    summary = lines[-1]
    assert summary["type"] == "summary" and len(summary["files"]) == 2
    assert summary["cycles"] == sum(1 for x in lines if x["type"] == "cycle")
    assert summary["abnormal"] == len(alarms)


def test_watch_refuses_compressed_and_names_a_bad_value(tmp_path) -> None:
    from click.testing import CliRunner

    from torqlog.cli import cli

    r = CliRunner()
    gz = tmp_path / "log.csv.gz"
    gz.write_bytes(b"")
    res = r.invoke(cli, ["watch", str(gz), "--idle-exit", "0.2"])
    assert res.exit_code == 1 and "watch follows plain CSV text only" in res.output
    bad = tmp_path / "bad.csv"
    bad.write_text("time_s,torque_Nm\n0,1\n0.001,abc\n")
    res = r.invoke(cli, ["watch", str(bad), "--idle-exit", "0.2"])
    assert res.exit_code == 1
    assert "line 3, column 'torque_Nm': 'abc' is not a number" in res.output


def test_watch_exit_on_alarm_stops_at_the_first_alarm(tmp_path) -> None:
    from click.testing import CliRunner

    from torqlog.cli import cli

    good = write_log(simulate("compressor", duration=8.0, rate=1000.0, seed=9), tmp_path / "g.csv")
    leak = write_log(simulate("compressor", duration=8.0, rate=1000.0, seed=4,
                              fault=Fault("valve-leak", severity=0.08, seed=3)),
                     tmp_path / "leak.csv")
    res = CliRunner().invoke(cli, ["watch", str(leak), "--reference", str(good), "--format",
                                   "jsonl", "--idle-exit", "0.3", "--poll", "0.02",
                                   "--exit-on-alarm"])
    assert res.exit_code == 3, res.output
    lines = [json.loads(x) for x in res.output.splitlines() if x.startswith("{")]
    alarms = [x for x in lines if x["type"] == "alarm"]
    cycles = [x for x in lines if x["type"] == "cycle"]
    # one alarm, it is the last cycle shown, and the summary follows it
    assert len(alarms) == 1 and cycles[-1]["cycle"] == alarms[0]["cycle"]
    assert cycles[-1]["anomaly"] and not any(c["anomaly"] for c in cycles[:-1])
    assert lines[-1]["type"] == "summary" and lines[-1]["cycles"] == len(cycles)
    assert lines[-1]["stopped_at_alarm"]["cycle"] == alarms[0]["cycle"]
    assert "abnormal cycle shape (see the ALARM line)" in res.output


@pytest.mark.parametrize("content, said", [
    (None, "nonexist.csv: the file never appeared in 0.3 s of watching"),
    (b"", "empty.csv: the file held no data in 0.3 s of watching"),
    (b"time_s,torque_Nm,speed_rpm\n", "empty.csv: the file held no data in 0.3 s of watching"),
])
def test_watch_names_a_file_that_never_held_data(tmp_path, content, said) -> None:
    from click.testing import CliRunner

    from torqlog.cli import cli

    name = "nonexist.csv" if content is None else "empty.csv"
    if content is not None:
        (tmp_path / name).write_bytes(content)
    res = CliRunner().invoke(cli, ["watch", str(tmp_path / name), "--idle-exit", "0.3",
                                   "--poll", "0.05"])
    assert res.exit_code == 1
    assert said in res.output
    assert "watched" not in res.output
