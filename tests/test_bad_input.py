"""The error contract on hostile input: nothing lost, no traceback, the real cause named.

Each case runs the command as a user would (click's CliRunner) and checks the exit code
(1 bad data, 2 bad usage, 3 failed check under --strict) and the exact sentence, and that
no input file changed. The logs are small simulated press logs of the invented
Brindlemoor Works demo machine.
"""

from __future__ import annotations

import gzip
import hashlib
import os
import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

from torqlog.cli import cli
from torqlog.errors import DataError, UsageError
from torqlog.io.outputs import atomic_path, check_outputs, is_torqlog_output

ROOT = Path(__file__).resolve().parents[1]
PROFILE = ROOT / "sample_data" / "press.toml"


def run(*args, debug=False):
    return CliRunner().invoke(cli, (["--debug"] if debug else []) + [str(a) for a in args])


def sha(path):
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


@pytest.fixture(scope="module")
def logs(tmp_path_factory):
    """A small clean press log (6 s, 200 Hz: 4 cycles), as CSV, CSV.gz and Parquet."""
    from torqlog.demo.simulate import simulate, write_log

    d = tmp_path_factory.mktemp("logs")
    log = simulate("press", duration=6, rate=200, channels="torque,speed", seed=0)
    out = {"csv": write_log(log, d / "v.csv"), "gz": write_log(log, d / "v.csv.gz"),
           "parquet": write_log(log, d / "v.parquet")}
    shutil.copy(PROFILE, d / "v.toml")
    out["profile"] = d / "v.toml"
    return out


@pytest.fixture()
def work(logs, tmp_path):
    """Fresh copies of the logs in a folder of their own (tests may try to destroy them)."""
    out = {}
    for k, p in logs.items():
        out[k] = tmp_path / p.name
        shutil.copy(p, out[k])
    return out


# --------------------------------------------------------------------------- nothing lost
@pytest.mark.parametrize("args", [
    ("cycles", "{csv}", "-o", "{csv}"),
    ("inspect", "{csv}", "-o", "{csv}"),
    ("size", "{csv}", "--profile", "{profile}", "--target-cs", "0.05", "-o", "{profile}"),
])
def test_output_naming_an_input_is_refused_before_reading(work, args):
    before = {k: sha(p) for k, p in work.items()}
    args = [a.format(**work) for a in args]
    res = run(*args)
    assert res.exit_code == 2
    out = args[-1]
    label = "log" if out == str(work["csv"]) else "--profile"
    assert res.stderr == (f"Error: -o {out} is the input {label} {out}; torqlog never writes "
                          "over its inputs: choose another output file\n")
    assert {k: sha(p) for k, p in work.items()} == before


def test_output_through_a_link_or_another_spelling_is_the_same_file(work):
    csv = work["csv"]
    link = csv.parent / "link.csv"
    os.symlink(csv, link)
    other = csv.parent / "sub" / ".." / csv.name
    for out in (link, other):
        res = run("cycles", csv, "-o", out)
        assert res.exit_code == 2
        assert res.stderr.startswith(f"Error: -o {out} is the input log {csv}; ")
    hard = csv.parent / "hard.csv"
    os.link(csv, hard)
    with pytest.raises(UsageError, match="is the input log"):
        check_outputs({"-o": hard}, {"log": csv})


def test_two_outputs_naming_one_file_are_refused(work, tmp_path):
    out = tmp_path / "a.png"
    res = run("cycles", work["csv"], "-o", out, "--plot", out)
    assert res.exit_code == 2
    assert res.stderr == (f"Error: --plot {out} and -o {out} name the same file; give each "
                          "output its own file\n")


def test_report_and_flywheel_outputs_never_overwrite_inputs(work, tmp_path):
    before = sha(work["csv"])
    res = run("report", work["csv"], "--profile", work["profile"], "-o", work["csv"])
    assert res.exit_code == 2
    assert "'-o' / '--output': " in res.stderr
    assert res.stderr.endswith(f"{str(work['csv'])!r}: the report must end in .html or "
                               ".htm\n")
    html = tmp_path / "r.html"
    shutil.copy(work["csv"], html)  # a log that happens to be named .html
    res = run("report", html, "--profile", work["profile"], "-o", html)
    assert res.exit_code == 2
    assert res.stderr.startswith(f"Error: -o {html} is the input log {html}; ")
    size = tmp_path / "size.json"
    size.write_text('{"added_inertia_kgm2": 100.0, "speed_mean_rpm": 300.0}')
    res = run("flywheel", "--from-size", size, "--material", "steel", "--outer-diameter",
              "1.0", "-o", size)
    assert res.exit_code == 2
    assert res.stderr.startswith(f"Error: -o {size} is the input --from-size {size}; ")
    assert sha(work["csv"]) == before and sha(html) == before


def test_atomic_write_keeps_the_old_file_when_the_writer_fails(tmp_path):
    target = tmp_path / "out.json"
    target.write_text("old and good")
    with pytest.raises(RuntimeError, match="interrupted"), atomic_path(target) as tmp:
        tmp.write_text("half of a new")
        raise RuntimeError("interrupted")
    assert target.read_text() == "old and good"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.json"]
    with atomic_path(target) as tmp:
        tmp.write_text("new")
    assert target.read_text() == "new"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.json"]


def test_trend_rerun_on_its_own_folder_skips_its_outputs(work):
    folder = work["csv"].parent
    for k in ("gz", "parquet"):
        work[k].unlink()  # one log only
    args = ["trend", folder, "--start", "2026-03-02T06:00:00", "--by", "file",
            "--jobs", "1", "--format", "json", "--out-dir", folder / "out"]
    first = run(*args)
    assert first.exit_code == 0, first.stderr
    assert is_torqlog_output(folder / "out" / "cycles.parquet")
    assert is_torqlog_output(folder / "out" / "shifts.csv")
    assert not is_torqlog_output(work["csv"])
    again = run(*args)
    assert again.exit_code == 0, again.stderr
    import json

    for res in (first, again):
        assert [f["file"] for f in json.loads(res.stdout)["files"]] == [str(work["csv"])]
    named = run("trend", folder / "out" / "shifts.csv", "--jobs", "1")
    assert named.exit_code == 1
    assert (f"{folder / 'out' / 'shifts.csv'}: a table torqlog wrote (an earlier trend "
            "--out-dir), not a log; leave it out") in named.stderr


# --------------------------------------------------------------------------- tracebacks
def _truncated_gz(work):
    data = gzip.compress(work["csv"].read_bytes() * 4)
    bad = work["csv"].parent / "cut.csv.gz"
    bad.write_bytes(data[: int(len(data) * 0.7)])
    return bad


@pytest.mark.parametrize("cmd", ["inspect", "cycles"])
def test_truncated_gzip_is_one_sentence(work, cmd):
    bad = _truncated_gz(work)
    res = run(cmd, bad)
    assert res.exit_code == 1
    assert res.exception is None or isinstance(res.exception, SystemExit)
    assert res.stderr.startswith(f"Error: {bad}: cannot be read as gzip")
    assert res.stderr.endswith("check that the file is complete\n") or res.stderr.endswith(
        "the file is damaged or was cut short: export or copy it again\n")
    assert res.stderr.count("\n") == 1


def test_report_keeps_the_good_log_and_names_the_bad_one(work, tmp_path):
    import re

    bad = _truncated_gz(work)
    html = tmp_path / "r.html"
    slim = tmp_path / "slim.toml"  # no shaft sections: the report runs in half the time
    slim.write_text("".join(p for p in re.split(r"(?m)^(?=\[)", PROFILE.read_text())
                            if not p.startswith(("[shaft]", "[torsional]"))))
    res = run("report", work["csv"], bad, "--profile", slim, "-o", html)
    assert res.exit_code == 1
    assert html.exists() and "v.csv" in html.read_text(encoding="utf-8")
    assert f"Error: 1 of 2 log(s) left out of the report: {bad}: cannot be read as gzip" \
        in res.stderr


@pytest.mark.parametrize(("args", "message"), [
    (("--start", "yesterday-ish"), "Error: Invalid value for '--start': 'yesterday-ish' is "
     "not an ISO 8601 time; write it like 2026-03-02T06:00:00 (a zone such as +01:00 may "
     "follow)\n"),
    (("--plot", "x.csv"), "Error: Invalid value for '--plot': 'x.csv': a figure file must end "
     "in .png, .svg or .pdf\n"),
    (("--rate", "-5"), "Error: Invalid value for '--rate': '-5' must be greater than zero\n"),
    (("--rate", "0"), "Error: Invalid value for '--rate': '0' must be greater than zero\n"),
    (("--speed-rpm", "0"), "Error: Invalid value for '--speed-rpm': '0' must be greater than "
     "zero\n"),
    (("--inertia", "0"), "Error: Invalid value for '--inertia': '0' must be greater than "
     "zero\n"),
])
def test_bad_option_values_are_usage_errors(work, args, message):
    res = run("cycles", work["csv"], *args)
    assert res.exit_code == 2
    assert res.stderr.endswith(message)


def test_zero_is_refused_not_replaced_by_the_profile(work):
    res = run("size", work["csv"], "--profile", work["profile"], "--flywheel-speed-ratio", "0")
    assert res.exit_code == 2
    assert res.stderr.endswith("Error: Invalid value for '--flywheel-speed-ratio': 0.0 is not "
                               "in the range x>0.0.\n")
    from torqlog.io.profile import load_profile
    from torqlog.signal.cycles import options_from_profile
    from torqlog.sizing.inertia import size_log

    prof = load_profile(work["profile"])
    with pytest.raises(UsageError, match="^inertia must be positive$"):
        options_from_profile(prof, inertia=0.0)

    class Cycles:  # a log whose every cycle is flagged
        source = "press_a.csv"
        options = {"inertia": 300.0, "revs_per_cycle": 1, "torque_role": "load"}
        summary = {"cycles": 0, "cycles_total": 7, "flags": {"gap": 7}}

    with pytest.raises(DataError) as err:
        size_log(Cycles(), prof, target_cs=0.1)
    assert str(err.value) == ("press_a.csv: no clean cycles to size from: all 7 cycles are "
                              "flagged (gap 7); see the flag column of 'torqlog cycles' and "
                              "fix the log or how it is read")


def test_flywheel_negative_width_is_a_usage_error():
    res = run("flywheel", "--inertia", "100", "--speed-rpm", "300", "--material", "steel",
              "--width", "-0.1")
    assert res.exit_code == 2
    assert res.stderr.endswith("Error: Invalid value for '--width': '-0.1' must be greater "
                               "than zero\n")
    from torqlog.rotor.flywheel import solve_geometry

    with pytest.raises(UsageError, match=r"^width must be positive, got -0.1 m$"):
        solve_geometry(100.0, "steel", "annular-disc", None, 0.1, width=-0.1)


def test_unexpected_error_is_one_sentence_and_debug_shows_it(work, monkeypatch):
    import torqlog.signal.survey

    def boom(*a, **k):
        raise RuntimeError("something nobody foresaw")

    monkeypatch.setattr(torqlog.signal.survey, "survey_log", boom)
    res = run("inspect", work["csv"])
    assert res.exit_code == 1
    assert res.stderr == ("Error: unexpected RuntimeError (something nobody foresaw); run with "
                          "--debug for details\n")
    res = run("inspect", work["csv"], debug=True)
    assert isinstance(res.exception, RuntimeError)


# --------------------------------------------------------------------------- units
@pytest.mark.parametrize(("header", "message"), [
    ("time_s,torque_kNx,speed_rpm", "column 'torque_kNx': unknown unit 'kNx' for torque; "
     "write it as e.g. 'kN*m'; fix the header or give --torque-unit"),
    ("time_s,torque_kg,speed_rpm", "column 'torque_kg': unit 'kg' is not a torque unit "
     "(expected something convertible to N*m); fix the header or give --torque-unit"),
    ("time_s,torque_Nm,speed_furlongs", "column 'speed_furlongs': unit 'furlongs' is not a "
     "speed unit (expected something convertible to rad/s); fix the header or give "
     "--speed-unit"),
])
def test_header_units_torqlog_cannot_read_are_refused(work, header, message):
    lines = work["csv"].read_text().splitlines()
    bad = work["csv"].parent / "u.csv"
    bad.write_text("\n".join([header, *lines[1:]]) + "\n")
    res = run("cycles", bad)
    assert res.exit_code == 1
    assert res.stderr == f"Error: {bad}: {message}\n"


def test_header_words_that_are_not_units_keep_the_note(work):
    lines = work["csv"].read_text().splitlines()
    ok = work["csv"].parent / "w.csv"
    ok.write_text("\n".join(["time_s,torque_Nm,speed_motor", *lines[1:]]) + "\n")
    res = run("inspect", ok, "--format", "json")
    assert res.exit_code == 0, res.stderr
    import json

    cols = {c["name"]: c for c in json.loads(res.stdout)["columns"]}
    assert cols["speed_motor"]["unit_source"] == "assumed"
    res = run("cycles", ok, "--torque-unit", "kNx")
    assert res.exit_code == 2
    assert res.stderr == ("Error: --torque-unit: unknown unit 'kNx' for torque; write it as "
                          "e.g. 'kN*m'\n")


# --------------------------------------------------------------------------- geometry
def test_flywheel_wider_than_its_diameter_fails():
    base = ["flywheel", "--inertia", "100", "--speed-rpm", "300", "--material", "steel",
            "--outer-diameter", "0.08", "--bore", "0.075", "--format", "json"]
    res = run(*base)
    assert res.exit_code == 0
    import json

    d = json.loads(res.stdout)
    assert d["verdict"] == "fail" and d["failed"] == ["width_to_outer_diameter"]
    # the width that holds 100 kg*m^2: I = pi rho w (ro^4 - ri^4) / 2 for an annular disc
    # (Shigley's Mechanical Engineering Design, 10th ed., table A-18)
    import math

    from torqlog.rotor.materials import get_material

    rho = get_material("steel").density
    w = 2 * 100 / (math.pi * rho * (0.04 ** 4 - 0.0375 ** 4))
    assert d["width_m"] == pytest.approx(w, rel=1e-9)
    assert d["width_m"] > 1000  # the 445 m-class disc a user once saw reported as PASS
    assert d["cautions"][0].startswith(f"The face width ({d['width_m']:.4g} m) is more than 1 "
                                       "x the outer diameter (0.08 m)")
    strict = run(*base, "--strict")
    assert strict.exit_code == 3
    assert strict.stderr.endswith("Error: flywheel check failed: width_to_outer_diameter\n")


# --------------------------------------------------------------------------- messages
def _with_lines(work, name, lines):
    p = work["csv"].parent / name
    p.write_text("\n".join(lines) + "\n")
    return p


def test_short_first_data_row_names_that_row(work):
    lines = work["csv"].read_text().splitlines()
    p = _with_lines(work, "short.csv", [lines[0], "0.0,1517.4", *lines[2:]])
    res = run("inspect", p)
    assert res.exit_code == 1
    assert res.stderr == (f"Error: {p}: line 2: a data row has 2 fields where the header "
                          "(line 1) and the other rows have 3; fix or remove that row\n")


def test_quoted_decimal_commas_in_a_comma_file_are_read(work):
    lines = work["csv"].read_text().splitlines()
    quoted = ['"' + '","'.join(f.replace(".", ",") for f in ln.split(",")) + '"'
              for ln in lines[1:]]
    p = _with_lines(work, "q.csv", [lines[0], *quoted])
    import json

    a = json.loads(run("cycles", work["csv"], "--format", "json").stdout)
    res = run("cycles", p, "--format", "json")
    assert res.exit_code == 0, res.stderr
    b = json.loads(res.stdout)
    assert b["summary"]["energy_swing_J"] == a["summary"]["energy_swing_J"]


def test_utf16_export_is_read_like_utf8(work):
    p = work["csv"].parent / "u16.csv"
    p.write_text(work["csv"].read_text(), encoding="utf-16")
    import json

    a = json.loads(run("cycles", work["csv"], "--format", "json").stdout)
    res = run("cycles", p, "--format", "json")
    assert res.exit_code == 0, res.stderr
    assert json.loads(res.stdout)["summary"]["cs"] == a["summary"]["cs"]


def test_nul_bytes_are_counted_not_repeated(work):
    raw = work["csv"].read_bytes()
    at = raw.index(b"\n", 9000) + 1
    at = raw.index(b",", at) + 1
    p = work["csv"].parent / "nul.csv"
    p.write_bytes(raw[:at] + b"\x00" * 100 + raw[at:])
    line = raw[:at].count(b"\n") + 1
    res = run("cycles", p)
    assert res.exit_code == 1
    assert res.stderr == (f"Error: {p}: line {line}, column 'torque_Nm': the value holds 100 "
                          "NUL byte(s), binary data inside the text; the file is damaged: "
                          "export or copy it again\n")


def test_one_row_inspect_says_why_there_is_no_rate(work):
    lines = work["csv"].read_text().splitlines()
    p = _with_lines(work, "one.csv", lines[:2])
    res = run("inspect", p)
    assert res.exit_code == 0
    assert ("sample rate not known: 1 row(s) give no time step; a rate needs at least two "
            "samples (or give --rate HZ)") in res.stdout
    assert "nan" not in res.stdout


def test_profile_value_below_zero_names_file_and_key(work):
    text = work["profile"].read_text()
    bad = work["profile"].parent / "neg.toml"
    import re

    bad.write_text(re.sub(r"(?m)^inertia_kgm2 = .*$", "inertia_kgm2 = -310", text))
    res = run("cycles", work["csv"], "--profile", bad)
    assert res.exit_code == 1
    assert res.stderr == (f"Error: {bad}: [machine] inertia_kgm2 must be greater than zero, "
                          "got -310; fix the profile\n")


def test_error_inside_the_cycle_stage_names_the_file(work):
    lines = work["csv"].read_text().splitlines()
    # a 3-second hole in a 6-second log: the cycle stage refuses it, naming the file
    kept = [ln for ln in lines[1:] if not 1.0 <= float(ln.split(",")[0]) < 4.0]
    p = _with_lines(work, "gap.csv", [lines[0], *kept])
    res = run("cycles", p)
    assert res.exit_code == 1
    assert res.stderr.startswith(f"Error: {p}: ")  # the reason itself: the cycle stage's
    assert res.stderr.count("\n") == 1


def test_readme_quotes_the_refusal_torqlog_prints():
    readme = " ".join((ROOT / "README.md").read_text(encoding="utf-8").split())
    section = readme.split("## Bad input", 1)[1].split("## ", 1)[0]
    with pytest.raises(UsageError) as err:
        check_outputs({"-o": "v.csv"}, {"log": "v.csv"})
    assert f"`Error: {err.value}`" in section


def test_discovery_skips_the_fleet_table_the_demo_writes(tmp_path):
    # `torqlog demo` writes fleet.csv (the fleet table, with a units row) beside the
    # machines' folders; `trend DIR` on that folder must not read it as a log
    import pandas as pd

    from torqlog.fleet.batch import discover
    from torqlog.fleet.compare import FLEET_COLUMNS
    from torqlog.present.exporting import to_csv_text

    log = tmp_path / "press" / "press.csv"
    log.parent.mkdir()
    log.write_text("time_s,torque_Nm,speed_rpm\n0,1,600\n0.001,2,600\n")
    row = {c: 1.0 for c in FLEET_COLUMNS} | {"machine": "press", "status": "ok"}
    (tmp_path / "fleet.csv").write_text(to_csv_text(pd.DataFrame([row]), units_row=True))
    assert is_torqlog_output(tmp_path / "fleet.csv")
    assert not is_torqlog_output(log)
    files, missing = discover([tmp_path])
    assert files == [log] and missing == []


@pytest.mark.parametrize("fmt, name, said", [
    ("parquet", "c2.csv", "--format parquet writes Parquet, but -o {out} ends in .csv (a csv "
                          "file); name it c2.parquet, or give --format csv"),
    ("csv", "c2.xlsx", "--format csv writes CSV, but -o {out} ends in .xlsx (a xlsx file); "
                       "name it c2.csv, or give --format xlsx"),
])
def test_a_format_written_under_another_formats_suffix_is_refused(work, tmp_path, fmt, name,
                                                                  said):
    out = tmp_path / name
    res = run("cycles", work["csv"], "--format", fmt, "-o", out)
    assert res.exit_code == 2
    assert said.format(out=out) in res.stderr
    assert not out.exists()
    ok = run("cycles", work["csv"], "--format", "csv", "-o", tmp_path / "c2.txt",
             "--no-shape-check")
    assert ok.exit_code == 0, ok.stderr  # a suffix that names no format is fine
