"""Trends across shifts: shift calendar, control charts, drift, batch and CLI.

Checks against sources outside the project:
- Daylight-saving changes of Europe/Berlin in 2026 follow EU Directive 2000/84/EC
  (summer time from the last Sunday of March to the last Sunday of October, changing at
  01:00 UTC): 2026-03-29 02:00 CET → 03:00 CEST and 2026-10-25 03:00 CEST → 02:00 CET.
- Individuals chart limits x̄ ± 3·MR̄/1.128 (Montgomery, Introduction to Statistical
  Quality Control, 7th ed., sec. 6.4).
- EWMA limits: NIST/SEMATECH e-Handbook, sec. 6.3.2.4, worked example with EWMA0 = 50,
  s = 2.0539, λ = 0.3, L = 3: UCL = 52.5884 (asymptotic limits).
- Run rule: Western Electric Statistical Quality Control Handbook (1956), eight successive
  points on one side of the centre line.
- ±3σ limits hold a point's false-alarm probability at 2·(1 − Φ(3)) = 0.0027
  (Montgomery sec. 5.3); checked for the baseline-size-adjusted limits by simulation.
- Drift floor on shift logs made by torqlog.demo.simulate (demo press, die work stepped up):
  the energy swing of a cycle, ΔE = max − min of ∫(T − T_mean) dθ (Budynas & Nisbett,
  Shigley's Mechanical Engineering Design, 10th ed., sec. 16-12), follows the die work;
  the work per stroke is 2π·T_friction + W_die by virtual work (Uicker, Pennock &
  Shigley, Theory of Machines and Mechanisms, 5th ed.).
"""

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from scipy import stats

from torqlog.cli import cli
from torqlog.demo.machines import get_machine
from torqlog.demo.simulate import simulate
from torqlog.demo.simulate import write_log as write_sim_log
from torqlog.errors import UsageError
from torqlog.fleet import control
from torqlog.fleet.batch import FileJob, discover, process_file, run_files, start_from_name
from torqlog.fleet.trend import (
    DriftOptions,
    ShiftCalendar,
    combine,
    group_cycles,
    read_baseline,
    run_trend,
    trend_table,
)

BERLIN = ShiftCalendar(("06:00", "14:00", "22:00"), ("early", "late", "night"),
                       "Europe/Berlin")
PRESS = get_machine("press")
DRIFT_FROM = 14  # shift index where the simulated die work steps up
DRIFT_STEP = 1.2


# ----------------------------------------------------------------------------- helpers
def write_log(path, *, scale=1.0, seed=0, secs=4.0, rate=500.0, start=None):
    """A small press-like log at 120 rpm: torque with two harmonics scaled by the load,
    speed from the small-fluctuation relation (inertia 400 kg·m²), a little noise."""
    rng = np.random.default_rng(seed)
    t = np.arange(int(secs * rate)) / rate
    w0 = 2 * np.pi * 2.0
    th = w0 * t
    torque = scale * (2000 + 900 * np.sin(th) + 400 * np.sin(2 * th + 0.4))
    torque += rng.normal(0, 10, t.size)
    e = -scale * (900 * np.cos(th) - 900 + 200 * np.cos(2 * th + 0.4))
    speed = (w0 - e / (400.0 * w0)) * 60 / (2 * np.pi) + rng.normal(0, 0.01, t.size)
    df = pd.DataFrame({"time_s": t, "torque_Nm": torque, "speed_rpm": speed})
    if start is not None:
        ts = pd.Timestamp(start) + pd.to_timedelta(t, unit="s")
        df.insert(0, "timestamp", ts.strftime("%Y-%m-%dT%H:%M:%S.%f"))
        df = df.drop(columns="time_s")
    df.to_csv(path, index=False)
    return Path(path)


def week_logs(folder, *, drift_from=14, step=1.25, seed=0, n=21):
    """A week of shift logs named press4_YYYYmmdd_HHMM.csv, 20 min into each shift; the
    load varies 2 % from shift to shift and steps up by ``step`` from shift ``drift_from``."""
    rng = np.random.default_rng(seed)
    load = 1 + rng.normal(0, 0.02, n)
    load[drift_from:] *= step
    folder.mkdir(parents=True, exist_ok=True)
    t0 = pd.Timestamp("2026-03-02T06:20:00")
    return [write_log(folder / f"press4_{t0 + pd.Timedelta(hours=8 * i):%Y%m%d_%H%M}.csv",
                      scale=load[i], seed=seed * 100 + i) for i in range(n)]


def week_cycles(seed, *, drift_from=14, step=1.2, n=21, per_shift=60):
    """Per-cycle table of a simulated week (no files): shift-to-shift load variation of
    2 %, cycle-to-cycle scatter of 5 % (ΔE), 3 % (peak torque); a load step from shift
    ``drift_from``. Press 4 of Brindlemoor Works at 45 strokes/min, 2500 kg·m²."""
    rng = np.random.default_rng(seed)
    load = 1 + rng.normal(0, 0.02, n)
    load[drift_from:] *= step
    k = np.repeat(np.arange(n), per_shift)
    t0 = pd.Timestamp("2026-03-02T06:30:00") + pd.to_timedelta(8 * k, unit="h")
    start = t0 + pd.to_timedelta(np.tile(np.arange(per_shift), n) * 4.0 / 3.0, unit="s")
    de = 9000 * load[k] * (1 + rng.normal(0, 0.05, k.size))
    w = 45 * 2 * np.pi / 60
    return pd.DataFrame({
        "machine": "Press 4", "file": [f"shift{i:02d}.csv" for i in k], "start_time": start,
        "cycle": np.tile(np.arange(1, per_shift + 1), n), "t_start_s": 0.0,
        "duration_s": 4.0 / 3.0 * (1 + rng.normal(0, 0.01, k.size)),
        "energy_swing_J": de, "cs": de / (2500 * w**2),
        "torque_peak_Nm": 52000 * load[k] * (1 + rng.normal(0, 0.03, k.size)),
        "work_J": 48000 * load[k] * (1 + rng.normal(0, 0.02, k.size)), "flag": ""})


def simulated_week(folder, *, seed, drift_from=14, step=1.2, n=21, dialect="iso",
                   duration=4.0, rate=200.0):
    """A week of shift logs of the demo press (Press 4, line B, 45.57 strokes/min) made by
    :func:`torqlog.demo.simulate.simulate` and written by :func:`torqlog.demo.simulate.write_log`:
    one log of ``duration`` s at ``rate`` Hz per 8-h shift, 20 min into the shift, named
    press4_YYYYmmdd_HHMM.csv. The die work (``load_scale``) varies 2 % from shift to shift
    (an assumed spread, no source) and steps up by ``step`` from shift ``drift_from``.

    Returns the files and the load scale of each shift."""
    rng = np.random.default_rng(seed)
    load = 1 + rng.normal(0, 0.02, n)
    load[drift_from:] *= step
    folder.mkdir(parents=True, exist_ok=True)
    t0 = pd.Timestamp("2026-03-02T06:20:00")
    files = []
    for i in range(n):
        start = t0 + pd.Timedelta(hours=8 * i)
        log = simulate("press", duration=duration, rate=rate, seed=seed * 100 + i,
                       start=start, load_scale=float(load[i]))
        files.append(write_sim_log(log, folder / f"press4_{start:%Y%m%d_%H%M}.csv", dialect))
    return files, load


@pytest.fixture(scope="module")
def press_weeks(tmp_path_factory):
    """Ten simulated weeks (seeds 0-9) with the die work ×1.2 from shift 14; even seeds
    in the iso dialect (timestamps in the file), odd seeds in the comma dialect (start
    from the file name). Made once for the tests that read them."""
    root = tmp_path_factory.mktemp("press_weeks")
    return {seed: simulated_week(root / f"seed{seed}", seed=seed, drift_from=DRIFT_FROM,
                                 step=DRIFT_STEP, dialect="iso" if seed % 2 == 0 else "comma")
            for seed in range(10)}


# ----------------------------------------------------------------------------- shifts
def test_shift_across_midnight_belongs_to_the_day_it_began():
    # UTC calendar 06/14/22: 23:30 on 2 March and 05:59:59 on 3 March are both in the
    # night shift that began 2 March 22:00; 06:00 on 3 March starts the early shift.
    cal = ShiftCalendar(("06:00", "14:00", "22:00"), ("early", "late", "night"))
    t = pd.to_datetime(["2026-03-02T23:30:00", "2026-03-03T05:59:59", "2026-03-03T06:00:00",
                        "2026-03-02T21:59:59"])
    a = cal.assign(t)
    assert list(a["shift"]) == ["night", "night", "early", "late"]
    assert [str(d) for d in a["date"]] == ["2026-03-02", "2026-03-02", "2026-03-03",
                                           "2026-03-02"]
    assert list(a["shift_hours"]) == [8.0, 8.0, 8.0, 8.0]


def test_shift_across_spring_dst_change_berlin():
    # 2026-03-29: 02:00 CET (UTC+1) → 03:00 CEST (UTC+2) (EU Directive 2000/84/EC).
    # Night shift of 28 March: 22:00 CET = 21:00 UTC to 06:00 CEST = 04:00 UTC: 7 h.
    # 01:30 UTC = 03:30 CEST → that night shift; 03:59:59 UTC = 05:59:59 CEST → still it;
    # 04:00 UTC = 06:00 CEST → early shift of 29 March (06:00-14:00 CEST, 8 h).
    t = pd.to_datetime(["2026-03-29T01:30:00Z", "2026-03-29T03:59:59Z",
                        "2026-03-29T04:00:00Z"])
    a = BERLIN.assign(t)
    assert list(a["shift"]) == ["night", "night", "early"]
    assert [str(d) for d in a["date"]] == ["2026-03-28", "2026-03-28", "2026-03-29"]
    assert list(a["shift_hours"]) == [7.0, 7.0, 8.0]
    assert a["shift_start"][0] == pd.Timestamp("2026-03-28T21:00:00Z")
    assert a["shift_end"][0] == pd.Timestamp("2026-03-29T04:00:00Z")


def test_shift_across_autumn_dst_change_berlin():
    # 2026-10-25: 03:00 CEST (UTC+2) → 02:00 CET (UTC+1).
    # Night shift of 24 October: 22:00 CEST = 20:00 UTC to 06:00 CET = 05:00 UTC: 9 h.
    # 04:30 UTC = 05:30 CET → that night shift; 05:00 UTC = 06:00 CET → early of 25 Oct;
    # 19:59:59 UTC on 24 Oct = 21:59:59 CEST → late shift of 24 October.
    t = pd.to_datetime(["2026-10-25T04:30:00Z", "2026-10-25T05:00:00Z",
                        "2026-10-24T19:59:59Z"])
    a = BERLIN.assign(t)
    assert list(a["shift"]) == ["night", "early", "late"]
    assert [str(d) for d in a["date"]] == ["2026-10-24", "2026-10-25", "2026-10-24"]
    assert list(a["shift_hours"]) == [9.0, 8.0, 8.0]


def test_wall_clock_times_in_the_repeated_and_skipped_hours():
    # Times without a zone are local wall-clock times: 02:30 on 25 Oct happens twice and
    # 02:30 on 29 March never; both lie inside the night shift that began the day before.
    a = BERLIN.assign(pd.to_datetime(["2026-10-25T02:30:00", "2026-03-29T02:30:00"]))
    assert list(a["shift"]) == ["night", "night"]
    assert [str(d) for d in a["date"]] == ["2026-10-24", "2026-03-28"]


def test_shift_start_in_the_skipped_hour_moves_to_the_end_of_the_gap():
    # A shift starting 02:30 local does not exist on 29 March 2026 in Berlin; it starts
    # when the clock reads 03:00 CEST = 01:00 UTC. The 14:00 shift before it ran from
    # 14:00 CET (13:00 UTC) to 01:00 UTC: 12 h.
    cal = ShiftCalendar(("02:30", "14:00"), ("A", "B"), "Europe/Berlin")
    a = cal.assign(pd.to_datetime(["2026-03-29T00:59:59Z", "2026-03-29T01:00:00Z"]))
    assert list(a["shift"]) == ["B", "A"]
    assert list(a["shift_hours"]) == [12.0, 11.0]


def test_calendar_errors_name_the_fix():
    with pytest.raises(UsageError) as e:
        ShiftCalendar(("14:00", "06:00"), ("a", "b"))
    assert str(e.value) == ("shift starts must increase within the day, e.g. "
                            "06:00,14:00,22:00; got 14:00,06:00")
    with pytest.raises(UsageError) as e:
        ShiftCalendar(("6h",), ("a",))
    assert str(e.value) == "shift start '6h' is not a clock time; write HH:MM, e.g. " \
                           "06:00,14:00,22:00"
    with pytest.raises(UsageError) as e:
        ShiftCalendar.build("06:00,18:00", "day", None)
    assert str(e.value) == "1 shift name(s) for 2 shift start(s); give one name per start"
    with pytest.raises(UsageError) as e:
        ShiftCalendar.build(timezone="Europe/Brindlemoor")
    assert str(e.value) == ("unknown time zone 'Europe/Brindlemoor'; give an IANA name such "
                            "as Europe/Berlin or UTC")


def test_calendar_defaults_and_names():
    assert ShiftCalendar.build().names == ("early", "late", "night")
    assert ShiftCalendar.build("07:00,19:00").names == ("07:00", "19:00")


# ----------------------------------------------------------------------------- charts
def test_individuals_limits_hand_worked():
    # x = 10, 12, 11, 15, 13: moving ranges 2, 1, 4, 2 → MR̄ = 2.25; σ̂ = 2.25 / 1.128
    # = 1.99468; x̄ = 12.2; limits 12.2 ± 3·1.99468 = 6.216 … 18.184 (Montgomery 6.4).
    c, s, lcl, ucl = control.individuals_limits(np.array([10, 12, 11, 15, 13.0]))
    assert c == pytest.approx(12.2)
    assert s == pytest.approx(2.25 / 1.128)
    assert (lcl, ucl) == pytest.approx((6.2160, 18.1840), abs=1e-4)


def test_ewma_limits_nist_example():
    # NIST/SEMATECH 6.3.2.4: EWMA0 = 50, s = 2.0539, λ = 0.3, L = 3 →
    # UCL = 50 + 3·0.4201·2.0539 = 52.5884, LCL = 47.4116 (asymptotic). The first EWMA of
    # the data 52.0 is 0.3·52 + 0.7·50 = 50.60.
    x = np.full(60, 50.0)
    x[0] = 52.0
    z, lcl, ucl = control.ewma_chart(x, 50.0, 2.0539, lam=0.3, L=3.0)
    assert ucl[-1] == pytest.approx(52.5884, abs=2e-4)
    assert lcl[-1] == pytest.approx(47.4116, abs=2e-4)
    assert z[0] == pytest.approx(50.60)
    # first point: exact limits 50 ± 3·2.0539·√(0.3/1.7·(1 − 0.7²)) = 50 ± 1.8
    assert ucl[0] - 50 == pytest.approx(3 * 2.0539 * np.sqrt(0.3 / 1.7 * 0.51))


def test_ewma_skips_missing_points():
    z, _, _ = control.ewma_chart(np.array([1.0, np.nan, 1.0]), 0.0, 1.0, lam=0.5)
    assert np.isnan(z[1])
    assert z[[0, 2]] == pytest.approx([0.5, 0.75])


def test_run_rule_eight_in_a_row():
    # Western Electric: the 8th successive point above the centre line signals.
    x = np.array([1, 1, 1, 1, 1, 1, 1, 1, 1, -1, 1, 1], dtype=float)
    hi, lo = control.run_rule(x, 0.0, 8)
    assert list(np.flatnonzero(hi)) == [7, 8]
    assert not lo.any()
    hi9, _ = control.run_rule(x, 0.0, 9)  # Nelson test 2: nine points
    assert list(np.flatnonzero(hi9)) == [8]


def test_prediction_limits_hold_the_nominal_false_alarm_rate():
    # With σ and the mean estimated from m = 9 points, a new point falls beyond the
    # classic x̄ ± 3σ̂ ten times more often than 0.27 %; the prediction limits bring it to
    # or below the nominal rate (the t approximation is conservative: ~0.11 % at m = 9).
    rng = np.random.default_rng(7)
    m, n = 9, 200_000
    base = rng.normal(size=(n, m))
    new = rng.normal(size=n)
    centre = base.mean(axis=1)
    sigma = np.abs(np.diff(base, axis=1)).mean(axis=1) / 1.128
    k_pred, _, _ = control.baseline_factors(3.0, 3.0, m, "prediction")
    # scipy as the independent solver for the t quantile: ν = 0.62·(m − 1)
    assert k_pred == pytest.approx(stats.t.ppf(stats.norm.cdf(3.0), 0.62 * 8)
                                   * np.sqrt(1 + 1 / 9))
    rate_pred = np.mean(np.abs(new - centre) > k_pred * sigma)
    rate_classic = np.mean(np.abs(new - centre) > 3.0 * sigma)
    assert 0.0005 < rate_pred < 0.0027
    assert rate_classic > 0.02
    assert control.baseline_factors(3.0, 3.0, 10**6, "prediction")[0] == pytest.approx(
        3.0, abs=0.01)
    assert control.baseline_factors(3.0, 3.0, 9, "classic") == (3.0, 3.0, 0.0)


# ----------------------------------------------------------------------------- drift
def test_drift_flagged_at_the_injected_shift_in_nine_of_ten_seeds(press_weeks):
    # Ten simulated weeks of the demo press; die work ×1.2 (DRIFT_STEP) from shift 14 of
    # 21 (2026-03-06 night); baseline: the first 9 shifts. The tool must flag shift 14
    # (±1) and no shift before it (baseline shifts included) in ≥ 9 of 10 seeds.
    good, onsets = 0, []
    for seed, (files, load) in press_weeks.items():
        jobs = [FileJob(str(f), machine="Press 4", name_time="%Y%m%d_%H%M") for f in files]
        res = run_trend(jobs, BERLIN, workers=1)
        assert res.failed == []
        assert len(res.groups) == 21
        assert (res.groups["cycles"] >= 2).all()
        # iso logs carry their timestamps; comma logs are placed by their file names
        assert {f["start_source"] for f in res.files} == {
            "time column" if seed % 2 == 0 else "file name"}
        g = res.groups
        # Energy swing ΔE = max − min of ∫(T − T_mean) dθ (Budynas & Nisbett, Shigley's,
        # 10th ed., sec. 16-12): the constant friction torque cancels, so ΔE follows the
        # die work, i.e. the load scale (to within 1 %: the motor torque follows the
        # speed). The drift is in the data the tool reads, not only in the test's plan.
        per_load = g["energy_swing_J_median"].to_numpy() / load
        assert per_load == pytest.approx(np.full(21, np.median(per_load)), rel=0.01)
        # Work per stroke by virtual work, ∫T dθ = 2π·T_friction + W_die·scale (Uicker,
        # Pennock & Shigley, Theory of Machines and Mechanisms, 5th ed.): the model's
        # friction torque and die work per stroke.
        work = 2 * np.pi * PRESS.load.friction + PRESS.load.work * load
        assert g["work_J_mean"].to_numpy() == pytest.approx(work, rel=0.01)
        flagged = [i for i in range(len(g)) if g["flags"].iloc[i]]
        first = flagged[0] if flagged else None
        onsets.append(first)
        if first is not None and DRIFT_FROM - 1 <= first <= DRIFT_FROM + 1:
            good += 1
            row = g.iloc[first]
            assert res.drift_onset["date"] == row["date"].isoformat()
            assert res.drift_onset["shift"] == row["shift"]
    assert good >= 9, onsets


def test_no_drift_no_onset_in_most_weeks():
    # Without a step the onset stays empty in at least 8 of 10 weeks (false alarms of
    # three correlated figures × three rules over 12 judged shifts).
    quiet = sum(trend_table(week_cycles(s, drift_from=100), BERLIN).drift_onset is None
                for s in range(10))
    assert quiet >= 8


def test_group_rows_and_contract():
    res = trend_table(week_cycles(0), BERLIN)
    d = res.to_dict()
    assert list(d)[:4] == ["shifts", "files", "failed", "drift_onset"]
    row = d["shifts"][0]
    assert list(row)[:14] == ["machine", "date", "shift", "start_time", "cycles",
                              "cycles_per_min", "energy_swing_J_median", "energy_swing_J_p95",
                              "cs_median", "cs_p95", "torque_peak_Nm_p99", "work_J_mean",
                              "flagged_share", "flags"]
    assert (row["date"], row["shift"], row["start_time"]) == (
        "2026-03-02", "early", "2026-03-02T06:00:00+01:00")
    assert row["cycles"] == 60
    # 60 / median duration of 4/3 s → 45 cycles/min
    assert row["cycles_per_min"] == pytest.approx(45.0, rel=0.01)
    assert len(d["shifts"]) == 21
    assert [r["shift"] for r in d["shifts"][:4]] == ["early", "late", "night", "early"]


def test_by_day_hour_and_file():
    cyc = week_cycles(0, n=6)
    day = trend_table(cyc, BERLIN, by="day", drift=DriftOptions(baseline_groups=2))
    assert list(day.groups["cycles"]) == [180, 180]
    assert [str(d) for d in day.groups["date"]] == ["2026-03-02", "2026-03-03"]
    hour = trend_table(cyc, BERLIN, by="hour", drift=DriftOptions(baseline_groups=2))
    # 60 cycles of 4/3 s from hh:30 fill 80 s: one hour row per shift
    assert len(hour.groups) == 6
    assert hour.to_dict()["shifts"][0]["start_time"] == "2026-03-02T06:00:00+01:00"
    byfile = trend_table(cyc, BERLIN, by="file", drift=DriftOptions(baseline_groups=2))
    assert list(byfile.groups["file"]) == [f"shift{i:02d}.csv" for i in range(6)]


def test_flagged_cycles_are_counted_not_averaged():
    cyc = week_cycles(1, n=3)
    cyc.loc[:9, "flag"] = "gap"
    cyc.loc[:9, "energy_swing_J"] = 1e9
    g = trend_table(cyc, BERLIN, drift=DriftOptions(baseline_groups=2)).groups
    assert g["cycles"].iloc[0] == 50
    assert g["flagged_share"].iloc[0] == pytest.approx(10 / 60)
    assert g["energy_swing_J_median"].iloc[0] < 2e4


def test_baseline_from_an_earlier_run(tmp_path):
    first = trend_table(week_cycles(2, drift_from=100), BERLIN)
    path = tmp_path / "shifts.csv"
    first.to_pandas().to_csv(path, index=False)
    base = read_baseline(path)
    later = week_cycles(3, drift_from=3, step=1.3, n=8)
    later["start_time"] += pd.Timedelta(days=7)
    res = trend_table(later, BERLIN, baseline=base)
    assert res.options["drift"]["baseline"] == "table"
    assert res.drift_onset["date"] == "2026-03-10"  # shift index 3: 10 March, early
    assert res.drift_onset["shift"] == "early"
    assert res.limits[0]["baseline_groups"] == 21


# ----------------------------------------------------------------------------- files
def test_start_from_file_name():
    assert start_from_name("press4_20260302_0600.csv", "%Y%m%d_%H%M") == pd.Timestamp(
        "2026-03-02T06:00")
    assert start_from_name("notes.csv", "%Y%m%d_%H%M") is None
    with pytest.raises(UsageError) as e:
        start_from_name("x.csv", "%Q")
    assert str(e.value).startswith("--name-time: '%Q' is not supported; use %Y %y %m")


def test_discover_files_folders_globs(tmp_path):
    a = write_log(tmp_path / "a_20260302_0600.csv")
    sub = tmp_path / "sub"
    sub.mkdir()
    b = write_log(sub / "b_20260302_1400.csv")
    (sub / "readme.md").write_text("x")
    files, missing = discover([str(tmp_path / "*.csv"), str(sub), str(a),
                               str(tmp_path / "nope.csv"), str(tmp_path / "z*.csv")])
    assert files == [a, b]
    assert missing == [{"file": str(tmp_path / "nope.csv"), "reason": "no such file or folder"},
                       {"file": str(tmp_path / "z*.csv"),
                        "reason": "pattern matched no log files"}]


def test_file_without_start_is_reported_not_guessed(tmp_path):
    p = write_log(tmp_path / "press.csv")
    out = process_file(FileJob(str(p), name_time="%Y%m%d_%H%M"))
    assert not out.ok
    assert out.error == (f"{p}: no start time in the file, and the file name does not match "
                         "--name-time '%Y%m%d_%H%M'; rename the file or give the start time")
    out = process_file(FileJob(str(p)))
    assert out.error == (f"{p}: no start time: the file has no timestamp column or 'Start:' "
                         "line; give --name-time PATTERN (e.g. %Y%m%d_%H%M) to read it from "
                         "the file name, or --start ISO for a single file")


def test_start_from_timestamp_column_and_name(tmp_path):
    p1 = write_log(tmp_path / "iso.csv", start="2026-03-02T22:30:00")
    p2 = write_log(tmp_path / "press_20260303_0620.csv")
    outs = run_files([FileJob(str(p1), machine="P4", name_time="%Y%m%d_%H%M"),
                      FileJob(str(p2), machine="P4", name_time="%Y%m%d_%H%M")], workers=1)
    assert [o.facts["start_source"] for o in outs] == ["time column", "file name"]
    cycles, files, failed = combine(outs, BERLIN)
    assert failed == []
    _, g = group_cycles(cycles, BERLIN)
    assert [(str(d), s) for d, s in zip(g["date"], g["shift"], strict=True)] == [
        ("2026-03-02", "night"), ("2026-03-03", "early")]
    # 22:30 Berlin wall clock (CET) = 21:30 UTC
    assert cycles["start_time"].iloc[0] == pd.Timestamp("2026-03-02T21:30:00Z")


def test_drift_end_to_end_through_files(press_weeks, tmp_path):
    # One simulated week (seed 4, iso logs with timestamps) from files to onset and plots.
    files, _ = press_weeks[4]
    jobs = [FileJob(str(f), machine="Press 4", name_time="%Y%m%d_%H%M") for f in files]
    res = run_trend(jobs, BERLIN, workers=1)
    assert len(res.groups) == 21
    assert res.failed == []
    assert [f["start_source"] for f in res.files] == ["time column"] * 21
    # shift 14 = 2026-03-06 night (22:00 CET); ±1 shift either side
    assert res.drift_onset is not None
    assert (res.drift_onset["date"], res.drift_onset["shift"]) in {
        ("2026-03-06", "late"), ("2026-03-06", "night"), ("2026-03-07", "early")}
    # the onset is the first flagged shift: none before it, baseline included
    first = next(i for i in range(21) if res.groups["flags"].iloc[i])
    row = res.groups.iloc[first]
    assert (res.drift_onset["date"], res.drift_onset["shift"]) == (row["date"].isoformat(),
                                                                   row["shift"])
    assert res.drift_onset["flags"] == list(row["flags"])
    paths = res.plot(tmp_path / "plots")
    assert [p.name for p in paths] == ["trend_energy_swing_J_median.png",
                                       "trend_cs_median.png", "trend_torque_peak_Nm_p99.png",
                                       "trend_anomaly_rate.png", "energy_swing_box.png"]
    assert all(p.stat().st_size > 10_000 for p in paths)


# ----------------------------------------------------------------------------- CLI
def test_cli_corrupt_file_among_good_ones(tmp_path):
    folder = tmp_path / "logs"
    good = week_logs(folder, n=4, drift_from=100)
    bad = folder / "press4_20260303_1420.csv"
    bad.write_text("time_s,torque_Nm,speed_rpm\n0,1,2\n0.002,abc,3\n", encoding="utf-8")
    out = tmp_path / "out"
    res = CliRunner().invoke(cli, ["trend", str(folder), "--name-time", "%Y%m%d_%H%M",
                                   "--timezone", "Europe/Berlin", "--baseline-shifts", "2",
                                   "--jobs", "2", "--format", "json", "--out-dir", str(out)])
    assert res.exit_code == 1, res.output
    d = json.loads(res.stdout)
    assert sorted(f["file"] for f in d["files"]) == sorted(str(p) for p in good)
    assert d["failed"] == [{"file": str(bad), "reason": "line 3, column 'torque_Nm': 'abc' is "
                            "not a number; fix the value or remove the row"}]
    assert res.stderr.splitlines()[-1] == (
        f"Error: 1 of 5 file(s) failed: {bad}: line 3, column 'torque_Nm': 'abc' is not a "
        "number; fix the value or remove the row")
    assert [r["shift"] for r in d["shifts"]] == ["early", "late", "night", "early"]
    assert sorted(p.name for p in out.iterdir()) == [
        "cycles.parquet", "energy_swing_box.png", "shifts.csv", "trend_anomaly_rate.png",
        "trend_cs_median.png", "trend_energy_swing_J_median.png",
        "trend_torque_peak_Nm_p99.png"]
    cyc = pd.read_parquet(out / "cycles.parquet")
    assert set(cyc["file"]) == {str(p) for p in good}
    assert str(cyc["start_time"].dt.tz) == "Europe/Berlin"


def test_cli_table_and_usage_errors(tmp_path):
    folder = tmp_path / "logs"
    week_logs(folder, n=3, drift_from=100)
    r = CliRunner().invoke(cli, ["trend", str(folder), "--name-time", "%Y%m%d_%H%M",
                                 "--baseline-shifts", "2", "--jobs", "1",
                                 "--machine", "Press 4"])
    assert r.exit_code == 0, r.output
    assert r.stdout.splitlines()[0] == ("3 of 3 file(s) used; 3 shift row(s); shifts 06:00, "
                                        "14:00, 22:00 (early, late, night), zone UTC")
    assert "Press 4 2026-03-02 early 2026-03-02 06:00" in r.stdout
    r = CliRunner().invoke(cli, ["trend", str(folder), "--start", "2026-03-02T06:00:00"])
    assert r.exit_code == 2
    assert r.stderr == ("Error: --start places a single file; for several files give "
                        "--name-time PATTERN or logs that carry their own timestamps\n")
    r = CliRunner().invoke(cli, ["trend", str(tmp_path / "none.csv")])
    assert r.exit_code == 1
    assert r.stderr == (f"Error: no file could be used: {tmp_path / 'none.csv'}: no such "
                        "file or folder\n")


# ----------------------------------------------------------------------------- Dask
def test_dask_local_cluster_gives_identical_results(tmp_path):
    distributed = pytest.importorskip("distributed")
    files = week_logs(tmp_path / "w", n=4, drift_from=2)
    jobs = [FileJob(str(f), machine="Press 4", name_time="%Y%m%d_%H%M") for f in files]
    drift = DriftOptions(baseline_groups=2)
    local = run_trend(jobs, BERLIN, drift=drift, workers=1)
    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=False,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client:
        remote = run_trend(jobs, BERLIN, drift=drift, client=client)
    pd.testing.assert_frame_equal(local.groups, remote.groups)
    assert local.to_dict() == remote.to_dict()


# ----------------------------------------------------------------------------- fleet
def test_two_machines_get_their_own_limits_and_onset():
    a = week_cycles(11, drift_from=12, step=1.3)
    b = week_cycles(12, drift_from=15, step=1.3)
    b["machine"] = "Compressor K2"
    for col in ("energy_swing_J", "cs", "torque_peak_Nm"):
        b[col] *= 0.1  # a smaller machine: its own centre line
    res = trend_table(pd.concat([a, b], ignore_index=True), BERLIN)
    assert len(res.groups) == 42
    assert list(res.groups["machine"].iloc[:2]) == ["Compressor K2", "Press 4"]
    centres = {(lim["machine"], lim["figure"]): lim["centre"] for lim in res.limits}
    assert centres[("Compressor K2", "energy_swing_J_median")] == pytest.approx(
        0.1 * centres[("Press 4", "energy_swing_J_median")], rel=0.05)
    on = {o["machine"]: (o["date"], o["shift"]) for o in res.onsets}
    # shift index 12 = 2026-03-06 early; 15 = 2026-03-07 early
    assert on == {"Press 4": ("2026-03-06", "early"),
                  "Compressor K2": ("2026-03-07", "early")}
    assert res.drift_onset["machine"] == "Press 4"


def test_cli_folder_profiles_name_the_machines(tmp_path):
    for name, folder in (("Press 4, line B", "p4"), ("Press 5, line B", "p5")):
        d = tmp_path / "fleet" / folder
        week_logs(d, n=3, drift_from=100)
        (d / "machine.toml").write_text(
            f'[machine]\nname = "{name}"\n\n[shifts]\nstarts = ["06:00", "14:00", '
            '"22:00"]\nnames = ["A", "B", "C"]\ntimezone = "Europe/Berlin"\n',
            encoding="utf-8")
    r = CliRunner().invoke(cli, ["trend", str(tmp_path / "fleet"), "--name-time",
                                 "%Y%m%d_%H%M", "--folder-profiles", "--baseline-shifts", "2",
                                 "--jobs", "1", "--format", "json",
                                 "--profile", str(tmp_path / "fleet" / "p4" / "machine.toml")])
    assert r.exit_code == 0, r.output
    d = json.loads(r.stdout)
    assert [(s["machine"], s["shift"]) for s in d["shifts"][:2]] == [
        ("Press 4, line B", "A"), ("Press 5, line B", "A")]
    assert d["options"]["shifts"]["timezone"] == "Europe/Berlin"
    assert d["shifts"][0]["start_time"] == "2026-03-02T06:00:00+01:00"


def test_cli_dask_flag_matches_one_process(tmp_path):
    pytest.importorskip("distributed")
    folder = tmp_path / "logs"
    week_logs(folder, n=3, drift_from=100)
    args = ["trend", str(folder), "--name-time", "%Y%m%d_%H%M", "--baseline-shifts", "2",
            "--format", "json"]
    one = CliRunner().invoke(cli, [*args, "--jobs", "1"])
    dask = CliRunner().invoke(cli, [*args, "--dask", "--jobs", "1"])
    assert one.exit_code == 0 and dask.exit_code == 0, dask.output
    assert json.loads(dask.stdout) == json.loads(one.stdout)
