"""``torqlog inspect``: rate, duration, gaps and roles, and one clear error per bad input.

Logs are written here with a known sample rate, length and gap, so the expected figures
follow from how the file was made. Unit factors: NIST SP 811 (2008) App. B
(1 rpm = 2π/60 rad/s = 0.1047198 rad/s, 1° = π/180 rad). A gap is a time step longer than
1.5 median steps (torqlog.signal.condition.GAP_FACTOR; common practice, no published source).
"""

import json
import os
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from torqlog.cli import cli
from torqlog.errors import DataError
from torqlog.io.ingest import read_log
from torqlog.signal.survey import survey_log

RPM = 0.1047198  # NIST SP 811 App. B
DEG = 0.01745329  # NIST SP 811 App. B
SAMPLE_DATA = Path(__file__).resolve().parents[1] / "sample_data"
SAMPLE_LOGS = sorted(p for p in SAMPLE_DATA.glob("*")
                     if p.name.endswith((".csv", ".csv.gz", ".parquet"))) \
    if SAMPLE_DATA.is_dir() else []


def run(*args):
    return CliRunner().invoke(cli, [str(a) for a in args])


def inspect_json(path, *opts):
    res = run("inspect", path, "--format", "json", *opts)
    assert res.exit_code == 0, res.stderr
    return json.loads(res.stdout)


def gap_log(tmp_path, name="gap.csv"):
    """2 kHz for 3 s, torque, speed, crank angle and index pulse, with samples missing
    after t = 1.2 s up to t = 1.45 s (one gap of 0.25 s between samples)."""
    k = np.arange(6001)
    t = k / 2000.0
    keep = (t <= 1.2) | (t >= 1.45)
    t = t[keep]
    tq = 2.0 + np.sin(2 * np.pi * 5 * t)
    sp = 300 + 3 * np.cos(2 * np.pi * 5 * t)
    ang = (360 * 5 * t) % 360
    idx = (np.diff(np.concatenate(([0.0], ang))) < 0).astype(int)
    p = tmp_path / name
    with open(p, "w") as fh:
        fh.write("time_s,Torque [kN·m],speed_rpm,crank angle [deg],TDC pulse\n")
        np.savetxt(fh, np.c_[t, tq, sp, ang, idx], delimiter=",",
                   fmt=["%.4f", "%.6f", "%.5f", "%.3f", "%d"])
    return p, t


# ----------------------------------------------------------------------- sample_data/
@pytest.mark.skipif(not SAMPLE_LOGS, reason="sample_data/ is not on main yet (it is made "
                    "by `torqlog simulate`); inspect is tested on logs written here instead")
@pytest.mark.parametrize("path", SAMPLE_LOGS or [None], ids=lambda p: p.name if p else "none")
def test_inspect_each_sample_log(path):
    d = inspect_json(path)
    # figures from the whole-file reader, worked out here with numpy
    rec = read_log(path)
    step = np.diff(rec.time)
    med = np.median(step)
    assert d["rows"] == len(rec)
    assert d["duration_s"] == pytest.approx(rec.time[-1] - rec.time[0], rel=1e-9)
    stated = rec.layout.rate
    assert d["sample_rate_hz"] == pytest.approx(stated or 1.0 / med, rel=1e-9)
    if stated:
        assert 1.0 / med == pytest.approx(stated, rel=1e-3)
    big = np.flatnonzero(step > 1.5 * med)
    assert d["gaps"]["count"] == big.size
    assert [g["row"] for g in d["gaps"]["list"]] == [int(i) + 2 for i in big[:20]]
    roles = [c["role"] for c in d["columns"] if c["role"] not in (None, "time")]
    assert sorted(roles) == sorted(rec.channels)
    assert {"torque", "speed"} & set(roles)


# ----------------------------------------------------------------------- written logs
def test_inspect_rate_duration_gap_and_roles(tmp_path):
    p, t = gap_log(tmp_path)
    d = inspect_json(p)
    assert d["rows"] == len(t) == 5502
    assert d["duration_s"] == pytest.approx(3.0, rel=1e-12)
    assert d["sample_rate_hz"] == pytest.approx(2000.0, rel=1e-9)
    assert d["rate_jitter"] < 1e-6
    assert d["time_kind"] == "seconds"
    assert d["delimiter"] == "comma"
    # the gap: last sample before it at t = 1.2 s (data row 2401), first after at 1.45 s
    # (data row 2402); 0.25 s between samples, i.e. 0.25 - 0.0005 s of samples missing
    assert d["gaps"]["count"] == 1
    assert d["gaps"]["list"] == [
        {"row": 2402, "after_s": pytest.approx(1.2, abs=1e-12),
         "missing_s": pytest.approx(0.2495, abs=1e-9)}]
    assert d["gaps"]["longest_s"] == pytest.approx(0.2495, abs=1e-9)
    assert [(c["name"], c["role"], c["unit"]) for c in d["columns"]] == [
        ("time_s", "time", "s"), ("Torque [kN·m]", "torque", "kN·m"),
        ("speed_rpm", "speed", "rpm"), ("crank angle [deg]", "angle", "deg"),
        ("TDC pulse", "index", None)]
    factors = [c["si_factor"] for c in d["columns"]]
    assert factors[:4] == [1.0, 1000.0, pytest.approx(RPM, rel=5e-7),
                           pytest.approx(DEG, rel=5e-7)]
    assert d["nan_rows"] == {"torque": 0, "speed": 0, "angle": 0, "index": 0}
    assert d["cycle_source"] == "angle"
    assert d["cycle_source_note"] == "unwrapped angle channel"


def test_inspect_table_reports_the_gap(tmp_path):
    p, _ = gap_log(tmp_path)
    res = run("inspect", p)
    assert res.exit_code == 0
    lines = res.stdout.splitlines()
    assert lines[0] == f"file        {p}"
    assert "format      csv, comma-delimited, decimal '.'" in lines
    assert "rows        5502" in lines
    assert "duration    3 s" in lines
    assert "gaps        1 (longest 0.2495 s; first after t = 1.2 s, row 2402)" in lines
    assert "cycles from angle: unwrapped angle channel" in lines
    # column labels from torqlog.present.labels, the one map of keys to labels
    assert lines[-6].split() == ["Column", "Role", "Unit", "Unit", "from", "SI", "factor"]


@pytest.mark.parametrize("block_rows", [1, 100, 2401, 2402, 1_000_000])
def test_gap_found_wherever_the_chunks_split(tmp_path, block_rows):
    p, _ = gap_log(tmp_path)
    s = survey_log(p, block_rows=block_rows)
    assert s.gaps == [{"row": 2402, "after_s": pytest.approx(1.2, abs=1e-12),
                       "missing_s": pytest.approx(0.2495, abs=1e-9)}]
    assert s.rows == 5502
    assert s.duration == pytest.approx(3.0, rel=1e-12)


def test_inspect_preamble_log(tmp_path):
    text = ("Logger: Brindlemoor Works DAQ-7\nStart: 2026-03-02 06:00:00\nRate: 5000 Hz\n"
            "Sample;Torque;Speed\n-;kN*m;rpm\n"
            + "".join(f"{k};{1 + k % 4},5;{600 + k % 3}\n" for k in range(1000)))
    p = tmp_path / "pre.csv"
    p.write_text(text)
    d = inspect_json(p)
    assert d["rows"] == 1000
    assert d["sample_rate_hz"] == 5000.0
    assert d["duration_s"] == pytest.approx(999 / 5000, rel=1e-12)
    assert d["start_time"] == "2026-03-02T06:00:00"
    assert d["time_kind"] == "index"
    assert (d["delimiter"], d["decimal"]) == ("semicolon", ",")
    assert d["preamble"] == {"Logger": "Brindlemoor Works DAQ-7",
                             "Start": "2026-03-02 06:00:00", "Rate": "5000 Hz"}
    assert [(c["role"], c["unit"], c["unit_source"]) for c in d["columns"]] == [
        ("time", "sample", "header"), ("torque", "kN*m", "unit row"),
        ("speed", "rpm", "unit row")]
    assert d["gaps"] == {"count": 0, "longest_s": 0.0, "list": []}
    assert d["cycle_source"] == "speed"


def test_inspect_role_rate_and_unit_options(tmp_path):
    p = tmp_path / "de.csv"
    p.write_text("Drehmoment;Drehzahl\n" + "".join(f"{k % 5};{100 + k % 2}\n" for k in range(400)))
    d = inspect_json(p, "--torque", "Drehmoment", "--speed", "Drehzahl", "--rate", "2 kHz",
                     "--torque-unit", "kN*m", "--speed-unit", "rpm")
    assert d["rows"] == 400
    assert d["sample_rate_hz"] == 2000.0
    assert d["duration_s"] == pytest.approx(399 / 2000, rel=1e-12)
    assert d["time_kind"] == "none"
    assert [(c["role"], c["unit"], c["unit_source"]) for c in d["columns"]] == [
        ("torque", "kN*m", "option"), ("speed", "rpm", "option")]
    assert d["columns"][1]["si_factor"] == pytest.approx(RPM, rel=5e-7)


def test_inspect_counts_nan_rows(tmp_path):
    p = tmp_path / "nan.csv"
    p.write_text("time_s,torque_Nm\n" + "".join(
        f"{k / 100},{'NaN' if k in (3, 7, 8) else k % 6}\n" for k in range(50)))
    d = inspect_json(p)
    assert d["nan_rows"] == {"torque": 3}
    assert d["sample_rate_hz"] == pytest.approx(100.0, rel=1e-9)


def test_inspect_csv_and_output_file(tmp_path):
    p, _ = gap_log(tmp_path)
    out = tmp_path / "cols.csv"
    res = run("inspect", p, "--format", "csv", "-o", out)
    assert res.exit_code == 0
    assert res.stderr == f"wrote {out}\n"
    assert out.read_text().splitlines()[0] == "name,role,unit,unit_source,si_factor"
    assert out.read_text().splitlines()[2] == "Torque [kN·m],torque,kN·m,header,1000"  # rounded CSV


# ----------------------------------------------------------------------- bad input
def _bad(tmp_path, name, content):
    p = tmp_path / name
    p.write_bytes(content if isinstance(content, bytes) else content.encode())
    return p


BAD = {
    "empty": ("empty.csv", b"", "the file is empty; export the log again"),
    "blank": ("blank.csv", b"\n \n\n", "the file is empty; export the log again"),
    "binary": ("garbage.csv", bytes(range(256)) * 16,
               "binary content, not a text export; give a CSV, CSV.gz or Parquet file"),
    "binary-no-nul": ("garbage2.csv", bytes((37 * k) % 128 + 128 for k in range(4096)),
                      "binary content, not a text export; give a CSV, CSV.gz or Parquet file"),
    "header-only": ("hdr.csv", "time_s,torque_Nm\n",
                    "has a header but no data rows; export the log with data"),
    "no-time": ("notime.csv", "torque_Nm,speed_rpm\n1,60\n2,60\n",
                "no time column found among torque_Nm, speed_rpm; name it with --time COL, or "
                "give --rate HZ if rows are evenly sampled"),
    "duplicate": ("dup.csv", "time_s,torque_Nm\n0,1\n0.001,2\n0.001,3\n0.003,4\n",
                  "line 4: timestamp repeats the previous time; sort the rows by time and "
                  "remove duplicates"),
    "backwards": ("back.csv", "time_s,torque_Nm\n0,1\n0.002,2\n0.001,3\n0.003,4\n",
                  "line 4: timestamp goes backwards in time; sort the rows by time and remove "
                  "duplicates"),
    "text": ("text.csv", "time_s,torque_Nm,speed_rpm\n0,1,60\n0.001,2,60\n0.002,abc,60\n"
             "0.003,4,60\n",
             "line 4, column 'torque_Nm': 'abc' is not a number; fix the value or remove the "
             "row"),
    "unknown-unit": ("unit.csv", "time [s],torque [blorp]\n0,1\n1,2\n",
                     "column 'torque [blorp]': unknown unit 'blorp' for torque; write it as "
                     "e.g. 'kN*m'; fix the header or give --torque-unit"),
    "wrong-kind-unit": ("kind.csv", "time [s],speed [kN*m]\n0,1\n1,2\n",
                        "column 'speed [kN*m]': unit 'kN*m' is not a speed unit (expected "
                        "something convertible to rad/s); fix the header or give "
                        "--speed-unit"),
    "duplicate-name": ("dupname.csv", "time_s,torque_Nm,torque_Nm\n0,1,1\n1,2,2\n",
                       "column name 'torque_Nm' appears twice in the header; rename one"),
}


@pytest.mark.parametrize("case", sorted(BAD))
def test_bad_input(tmp_path, case):
    name, content, message = BAD[case]
    p = _bad(tmp_path, name, content)
    os.utime(p, ns=(1_700_000_000_000_000_000, 1_700_000_000_000_000_000))
    res = run("inspect", p)
    assert res.exit_code == 1
    assert res.stderr == f"Error: {p}: {message}\n"
    assert res.stdout == ""
    assert "Traceback" not in res.output
    # the input is never written to
    assert p.read_bytes() == (content if isinstance(content, bytes) else content.encode())
    assert p.stat().st_mtime_ns == 1_700_000_000_000_000_000


def test_missing_file(tmp_path):
    p = tmp_path / "nope.csv"
    res = run("inspect", p)
    assert res.exit_code == 1
    assert res.stderr == f"Error: {p}: file does not exist; check the path\n"
    assert not p.exists()


def test_directory_given_as_file(tmp_path):
    res = run("inspect", tmp_path)
    assert res.exit_code == 1
    assert res.stderr == (f"Error: {tmp_path}: is a directory, not a log file; give a CSV, "
                          "CSV.gz or Parquet file\n")


def test_missing_parquet_file(tmp_path):
    p = tmp_path / "nope.parquet"
    res = run("inspect", p)
    assert res.exit_code == 1
    assert res.stderr == f"Error: {p}: file does not exist; check the path\n"


def test_debug_shows_the_traceback(tmp_path):
    p = _bad(tmp_path, "empty.csv", b"")
    res = run("--debug", "inspect", p)
    assert res.exit_code == 1
    assert isinstance(res.exception, DataError)
    assert str(res.exception) == f"{p}: the file is empty; export the log again"
    assert res.exc_info[2] is not None  # a traceback to show
    res = run("inspect", p)
    assert isinstance(res.exception, SystemExit)


@pytest.mark.parametrize(("opts", "message"), [
    (["--torque", "Moment"], "Error: --torque 'Moment': no such column in {p}; columns are: "
                             "time_s, torque_Nm\n"),
    (["--torque-unit", "blorp"], "Error: --torque-unit: unknown unit 'blorp' for torque; "
                                 "write it as e.g. 'kN*m'\n"),
])
def test_usage_errors_exit_2(tmp_path, opts, message):
    p = _bad(tmp_path, "ok.csv", "time_s,torque_Nm\n0,1\n1,2\n")
    res = run("inspect", p, *opts)
    assert res.exit_code == 2
    assert res.stderr == message.format(p=p)


def test_click_usage_errors_exit_2(tmp_path):
    res = run("inspect")
    assert res.exit_code == 2
    assert res.stderr.endswith("Error: Missing argument 'LOG'.\n")
    p = _bad(tmp_path, "ok.csv", "time_s,torque_Nm\n0,1\n1,2\n")
    res = run("inspect", p, "--format", "xml")
    assert res.exit_code == 2
    assert res.stderr.endswith("Error: Invalid value for '--format': 'xml' is not one of "
                               "'table', 'csv', 'json', 'xlsx', 'parquet'.\n")


def test_reading_leaves_the_file_untouched(tmp_path):
    p, _ = gap_log(tmp_path)
    data = p.read_bytes()
    os.utime(p, ns=(1_600_000_000_000_000_000, 1_600_000_000_000_000_000))
    for fmt in ("table", "json", "csv"):
        assert run("inspect", p, "--format", fmt).exit_code == 0
    assert p.read_bytes() == data
    assert p.stat().st_mtime_ns == 1_600_000_000_000_000_000
    assert sorted(x.name for x in tmp_path.iterdir()) == ["gap.csv"]


def test_inspect_and_cycles_name_a_spike_run_alike(tmp_path):
    # six samples of 1e9 N·m on a running compressor: a spike run by the cycle stage's
    # test (signal.health.spike_runs), so `inspect` says spikes, as `cycles` flags them
    from torqlog.demo.simulate import simulate, write_log

    log = write_log(simulate("compressor", duration=8.0, rate=1000.0, seed=2),
                    tmp_path / "spike.csv")
    lines = log.read_text().splitlines()
    head = lines[0].split(",")
    k = head.index(next(h for h in head if h.startswith("torque")))
    for i in range(2001, 2007):
        row = lines[i].split(",")
        row[k] = "1e9"
        lines[i] = ",".join(row)
    log.write_text("\n".join(lines) + "\n")
    d = inspect_json(log)
    assert d["spike_samples"] == {"torque": 6} and d["clipped_samples"] == {}
    assert "spikes      torque 6 samples" in run("inspect", log).stdout
    cyc = json.loads(run("cycles", log, "--format", "json").stdout)
    assert set(cyc["summary"]["flags"]) == {"spikes"}  # one run, the cycles it touches
