"""Trend in flat memory (per-group running summaries) and the p chart of the anomaly rate.

Checks against sources outside the project:
- p chart: centre p̄ = ΣD/Σn and limits p̄ ± 3·√(p̄(1 − p̄)/n_i) for samples of different
  size, lower limit clipped at 0 (Montgomery, Introduction to Statistical Quality
  Control, 7th ed., sec. 7.2.2); the binomial standard deviation of a sample fraction,
  √(p(1 − p)/n), computed independently with scipy.stats.binom.
- Rule of three: a rate seen zero times in n trials has an upper 95 % bound of about 3/n
  (Hanley & Lippman-Hand, JAMA 249(13), 1983).
- Medians, quantiles (linear interpolation) and means of the merged summaries against
  numpy on the concatenated rows; merged sketches against a sketch of all the values
  (DDSketch is fully mergeable: Masson, Rim & Lee, PVLDB 12(12), 2019, sec. 2.3).
"""

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from torqlog.demo.simulate import Fault, simulate, write_log
from torqlog.fleet.batch import FileJob, process_file
from torqlog.fleet.control import p_chart_centre, p_chart_limits
from torqlog.fleet.groupstats import GroupStats, fold, merge_keeper, ordered
from torqlog.fleet.shifts import ShiftCalendar
from torqlog.fleet.trend import (
    DEFAULT_FIGURES,
    DriftOptions,
    combine,
    group_cycles,
    run_trend,
    trend_table,
)
from torqlog.signal.streamstats import QuantileKeeper, RelativeErrorSketch

UTC = ShiftCalendar()  # 06:00, 14:00, 22:00 on the UTC clock


# ----------------------------------------------------------------------------- p chart
def test_p_chart_limits_against_the_binomial_formula():
    # typed-in baseline: abnormal cycles and cycles scored of five shifts
    d = np.array([3, 5, 2, 4, 6])
    n = np.array([200, 400, 150, 300, 500])
    p_bar, note = p_chart_centre(d, n)
    assert p_bar == pytest.approx(20 / 1550, rel=1e-15) and note == ""
    sizes = np.array([100, 250, 800, 0])
    sigma, lcl, ucl = p_chart_limits(p_bar, sizes)
    # independent: the standard deviation of a binomial count over n (scipy.stats.binom)
    ref = stats.binom.std(sizes[:3], p_bar) / sizes[:3]
    np.testing.assert_allclose(sigma[:3], ref, rtol=1e-12)
    np.testing.assert_allclose(ucl[:3], p_bar + 3 * ref, rtol=1e-12)
    np.testing.assert_allclose(lcl[:3], np.maximum(p_bar - 3 * ref, 0.0), rtol=1e-12)
    assert lcl[0] == 0.0 and lcl[2] > 0.0  # clipped for the small group only
    assert np.isnan(ucl[3]) and np.isnan(lcl[3])  # no cycle scored: no limit
    # by hand: p̄ = 0.1, n = 100 → 0.1 ± 3·0.03 (Montgomery eq. 7.8)
    _, lo, hi = p_chart_limits(0.1, np.array([100]))
    assert (lo[0], hi[0]) == (pytest.approx(0.01), pytest.approx(0.19))


def test_p_chart_centre_without_defects_uses_the_rule_of_three():
    p_bar, note = p_chart_centre(np.zeros(3), np.array([1000, 1000, 1000]))
    assert p_bar == pytest.approx(1e-3)
    assert note == ("no abnormal cycle among the baseline's 3000 scored cycles: centre taken "
                    "as 3/3000 (rule of three)")


def _rate_week(rates, per_shift=2000, seed=0):
    """Per-cycle table of one machine: ``per_shift`` cycles per 8-h shift, each cycle
    abnormal (anomaly score 1.5) with the shift's probability, else score 0.5."""
    rng = np.random.default_rng(seed)
    k = np.repeat(np.arange(len(rates)), per_shift)
    t0 = pd.Timestamp("2026-03-02T06:30:00") + pd.to_timedelta(8 * k, unit="h")
    start = t0 + pd.to_timedelta(np.tile(np.arange(per_shift), len(rates)) * 0.1, unit="s")
    bad = rng.random(k.size) < np.asarray(rates)[k]
    return pd.DataFrame({"machine": "Compressor K2", "file": [f"s{i}.csv" for i in k],
                         "start_time": start, "cycle": 1, "duration_s": 0.1,
                         "energy_swing_J": 700 + rng.normal(0, 5, k.size), "cs": 0.04,
                         "torque_peak_Nm": 560.0, "work_J": 1040.0, "flag": "",
                         "anomaly_score": np.where(bad, 1.5, 0.5)})


def test_anomaly_rate_is_a_default_figure_charted_as_a_p_chart():
    assert "anomaly_rate" in DEFAULT_FIGURES
    rates = [0.005] * 9 + [0.005, 0.03, 0.03]
    res = trend_table(_rate_week(rates), UTC)
    g = res.groups
    lim = next(x for x in res.limits if x["figure"] == "anomaly_rate")
    base = g.iloc[:9]
    p_bar = base["cycles_abnormal"].sum() / base["cycles_scored"].sum()
    assert lim["chart"] == "p" and lim["centre"] == pytest.approx(p_bar, rel=1e-12)
    ref = p_bar + 3 * stats.binom.std(g["cycles_scored"], p_bar) / g["cycles_scored"]
    np.testing.assert_allclose(g["anomaly_rate_ucl"], ref, rtol=1e-12)
    assert (g["anomaly_rate_lcl"] >= 0).all()
    hits = [i for i, f in enumerate(g["flags"]) if "anomaly_rate:p_chart_high" in f]
    assert hits == [10, 11]  # the two shifts at 3 % and no other
    assert res.drift_onset["flags"][0] == "anomaly_rate:p_chart_high"
    assert res.to_dict()["options"]["drift"]["figures"][-1] == "anomaly_rate"


def test_a_small_sustained_rise_in_the_rate_trips_the_same_run_rule():
    # 8 shifts a little above the centre line: inside the p-chart limits, but eight in a
    # row on one side (Western Electric rule 4, as for every figure)
    rates = [0.01] * 9 + [0.014] * 8
    res = trend_table(_rate_week(rates, per_shift=3000, seed=3), UTC,
                      drift=DriftOptions(figures=("anomaly_rate",)))
    flags = res.groups["flags"]
    assert "anomaly_rate:run_high" in flags.iloc[16]
    assert not any("run" in f for fs in flags.iloc[:16] for f in fs)


# ----------------------------------------------------------------------------- merging
def _rows(n, seed):
    rng = np.random.default_rng(seed)
    t = pd.Timestamp("2026-03-02T12:00:00Z") + pd.to_timedelta(np.sort(rng.uniform(0, 7.2e4, n)),
                                                               unit="s")
    flag = np.where(rng.random(n) < 0.05, "gap", "")
    score = np.where(rng.random(n) < 0.7, rng.gamma(2.0, 0.3, n), np.nan)
    return pd.DatetimeIndex(t), {
        "flag": flag, "energy_swing_J": rng.normal(700, 30, n), "cs": rng.normal(0.04, 3e-3, n),
        "torque_peak_Nm": rng.normal(560, 20, n), "duration_s": rng.normal(0.1, 1e-3, n),
        "speed_mean_rpm": rng.normal(600, 2, n), "work_J": rng.normal(1040, 10, n),
        "torque_mean_Nm": rng.normal(166, 2, n), "anomaly_score": score}


@pytest.mark.parametrize("by", ["shift", "hour"])
def test_merged_summaries_equal_the_summary_of_the_concatenated_rows(by):
    times, cols = _rows(6000, 1)
    files = np.full(times.size, "a.csv", dtype=object)
    whole: dict = {}
    fold(whole, "K2", times, cols, files, UTC, by)
    merged: dict = {}
    for part in np.array_split(np.arange(times.size), 5):  # five files / workers
        own: dict = {}
        fold(own, "K2", times[part], {k: v[part] for k, v in cols.items()}, files[part],
             UTC, by)
        for key, g in own.items():
            merged[key].merge(g) if key in merged else merged.__setitem__(key, g)
    a, b = ordered(whole), ordered(merged)
    assert [g.key for g in a] == [g.key for g in b] and len(a) > 2
    for ga, gb in zip(a, b, strict=True):
        ra, rb = ga.row(), gb.row()
        assert ra.keys() == rb.keys()
        for k in ra:
            assert rb[k] == pytest.approx(ra[k], rel=1e-9, nan_ok=True), k
    # and against numpy on the rows of the first group directly
    g = a[0]
    m = (times >= pd.Timestamp(g.start, tz="UTC")) & (times < pd.Timestamp(a[1].start, tz="UTC"))
    clean = m & (cols["flag"] == "")
    r = g.row()
    assert r["energy_swing_J_median"] == pytest.approx(np.median(cols["energy_swing_J"][clean]),
                                                       rel=1e-12)
    assert r["cs_p95"] == pytest.approx(np.quantile(cols["cs"][clean], 0.95), rel=1e-12)
    assert r["work_J_mean"] == pytest.approx(np.mean(cols["work_J"][clean]), rel=1e-12)
    sc = cols["anomaly_score"][m]
    assert (r["cycles_scored"], r["cycles_abnormal"]) == (np.isfinite(sc).sum(), (sc > 1).sum())


def test_groups_past_a_low_budget_answer_within_the_sketch_bound():
    times, cols = _rows(6000, 3)
    files = np.full(times.size, "a.csv", dtype=object)
    exact, low = {}, {}
    fold(exact, "K2", times, cols, files, UTC, "shift")
    for part in np.array_split(np.arange(times.size), 4):
        fold(low, "K2", times[part], {k: v[part] for k, v in cols.items()}, files[part], UTC,
             "shift", quantile_budget=200, sketch_error=1e-4)
    for ge, gl in zip(ordered(exact), ordered(low), strict=True):
        assert gl.stream.keepers["cs"].method == "sketch"
        re, rl = ge.row(), gl.row()
        for k in ("energy_swing_J_median", "energy_swing_J_p95", "cs_median", "cs_p95",
                  "torque_peak_Nm_p99"):
            assert abs(rl[k] - re[k]) <= 1e-4 * abs(re[k]), k
        assert rl["cycles"] == re["cycles"] and rl["work_J_mean"] == pytest.approx(
            re["work_J_mean"], rel=1e-12)


def test_merged_sketches_equal_a_sketch_of_all_values_past_the_budget():
    rng = np.random.default_rng(5)
    parts = [rng.lognormal(6.5, 0.05, 700), rng.lognormal(6.6, 0.05, 900),
             np.concatenate([rng.lognormal(6.4, 0.05, 300), -rng.lognormal(1, 1, 5), [0.0]])]
    keep = QuantileKeeper(budget=1000, relative_error=1e-3)
    for p in parts:
        k = QuantileKeeper(budget=1000, relative_error=1e-3)
        k.add(p)
        merge_keeper(keep, k)
    allv = np.concatenate(parts)
    assert keep.method == "sketch" and keep.n == allv.size
    ref = RelativeErrorSketch(1e-3)
    ref.add(allv)
    for side in ("pos", "neg"):
        a, b = getattr(keep.sketch, side), getattr(ref, side)
        assert a.offset == b.offset and np.array_equal(a.counts, b.counts)
    for q in (0.05, 0.5, 0.95, 0.99):
        exact = np.quantile(allv, q)
        assert abs(keep.quantile(q) - exact) <= 1e-3 * abs(exact) + 1e-12
    assert keep.max() == allv.max()


def test_box_statistics_from_the_summary_match_matplotlib_on_the_rows():
    from matplotlib import cbook

    times, cols = _rows(3000, 2)
    g = GroupStats("K2", 0)
    g.add(cols, times.asi8, times.asi8, np.full(times.size, "early"),
          np.full(times.size, None), np.full(times.size, "a.csv"))
    ref = cbook.boxplot_stats(cols["energy_swing_J"][cols["flag"] == ""], whis=1.5)[0]
    box = g.box()
    for k in ("med", "q1", "q3", "whislo", "whishi"):
        assert box[k] == pytest.approx(ref[k], rel=1e-12), k


# ----------------------------------------------------------------------------- files
@pytest.fixture(scope="module")
def compressor_logs(tmp_path_factory):
    """Three short compressor logs of the demo plant: one with a leaking valve, one
    across the 14:00 shift change."""
    root = tmp_path_factory.mktemp("flat")
    out = []
    for i, (start, fault) in enumerate([
            ("2026-03-02T06:20:00", None), ("2026-03-02T13:59:56", None),
            ("2026-03-02T22:20:00", Fault("valve-leak", rate=0.1, seed=4))]):
        log = simulate("compressor", duration=9.0, rate=1000.0, seed=10 + i, start=start,
                       fault=fault)
        out.append(write_log(log, root / f"k2_{i}.csv", "iso"))
    return out


def test_streamed_trend_equals_the_in_memory_table(compressor_logs, tmp_path):
    jobs = [FileJob(str(p), machine="Compressor K2") for p in compressor_logs]
    path = tmp_path / "out" / "cycles.parquet"
    res = run_trend(jobs, UTC, workers=1, cycles_path=path)
    # the second log is split by the 14:00 change: its first part joins the first log's
    # early shift (a group merged from two files), its rest is the late shift
    assert list(res.groups["shift"]) == ["early", "late", "night"]
    assert res.groups["cycles_total"].iloc[0] > res.groups["cycles_total"].iloc[2]
    assert res.groups["cycles_abnormal"].iloc[-1] > 0
    # the in-memory path: every file's table, concatenated, reduced at once
    cycles, files, _ = combine([process_file(j) for j in jobs], UTC)
    mem = trend_table(cycles, UTC, files=files)
    pd.testing.assert_frame_equal(res.groups.drop(columns="flags"),
                                  mem.groups.drop(columns="flags"), rtol=1e-12)
    assert res.to_dict()["options"]["quantiles"] == {
        "method": "exact", "exact_budget_cycles_per_group": 20_000,
        "relative_error_bound": None}
    # cycles.parquet, streamed by row groups, holds every cycle with its group row
    got = pd.read_parquet(path)
    ref, _ = group_cycles(cycles, UTC)
    assert len(got) == len(ref) == res.groups["cycles_total"].sum()
    np.testing.assert_array_equal(got["group"], ref["group"])
    np.testing.assert_array_equal(got["anomaly_score"], ref["anomaly_score"])
    assert list(got["shift"]) == list(ref["shift"])
    assert sorted(p.name for p in path.parent.iterdir()) == ["cycles.parquet"]  # parts gone
