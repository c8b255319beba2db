"""Flat memory: the streamed summary and outputs give the numbers of the in-memory path.

References used below:
- numpy.quantile / numpy.median / numpy.mean / numpy.std (linear interpolation, the
  population standard deviation) as the independent reference for every statistic.
- Masson, Rim & Lee, "DDSketch", Proc. VLDB Endow. 12(12), 2019: a quantile read from
  logarithmic buckets with γ = (1+α)/(1−α) lies within relative error α of the exact one.
- Chan, Golub & LeVeque, The American Statistician 37(3), 1983: mean and variance of
  blocks combined pairwise equal those of the whole.
"""

from __future__ import annotations

import io
import json
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow.parquet as pq
import pytest
from click.testing import CliRunner
from hypothesis import given, settings
from hypothesis import strategies as st

from torqlog.cli import cli
from torqlog.cli.cycle_output import JsonWriter, make_writer
from torqlog.errors import UsageError
from torqlog.signal.cycle_table import ColumnStore
from torqlog.signal.cycles import COLUMNS, CycleOptions, analyse_cycles, summarise
from torqlog.signal.streamstats import QuantileKeeper, RelativeErrorSketch, RunningMoments

TWO_PI = 2 * math.pi
BOUND = 1e-4


@pytest.fixture(scope="module")
def flagged_log(tmp_path_factory):
    """120 rpm, 60 s at 1 kHz (119 cycles) with a NaN run, a gap and a clipped stretch,
    and cycle-to-cycle variation so the quantiles are not all one value."""
    rng = np.random.default_rng(7)
    t = np.arange(0, 60, 1e-3)
    th = TWO_PI * 2 * t
    amp = 40 * (1 + 0.3 * np.sin(TWO_PI * t / 17.0))
    torque = 100 + amp * np.sin(th) + 10 * np.sin(2 * th) + rng.normal(0, 0.5, t.size)
    speed = 120 - 0.5 * np.cos(th) * amp / 40 + rng.normal(0, 0.01, t.size)
    torque[2300:2310] = np.nan                      # NaN run in cycle 5
    late = (t >= 40.0) & (t < 45.0)                 # a sensor saturating for 5 s
    torque[late] = np.minimum(torque[late], 130.0)
    keep = (t < 3.2) | (t > 3.4)                    # a gap in cycle 7
    path = tmp_path_factory.mktemp("flat") / "flagged.csv"
    cols = {"time_s": t[keep], "torque_Nm": torque[keep], "speed_rpm": speed[keep]}
    np.savetxt(path, np.column_stack(list(cols.values())), delimiter=",",
               header=",".join(cols), comments="", fmt="%.9g")
    return str(path)


def _close(a, b, rel):
    if isinstance(a, dict):
        assert a.keys() == b.keys()
        for k in a:
            _close(a[k], b[k], rel)
    elif isinstance(a, float) and b is not None:
        assert a == pytest.approx(b, rel=rel), (a, b)
    else:
        assert a == b


FIGS = ("cycles", "cycles_total", "flagged", "cycle_rate_per_min", "energy_swing_J", "cs",
        "torque_peak_Nm_p99", "speed_mean_rpm", "work_J_mean", "torque_mean_Nm", "flags")


# --------------------------------------------------------------------------- library
def test_streamed_summary_equals_numpy_on_the_kept_table(flagged_log):
    # small chunks: the summary is folded over many blocks; numpy on the whole table
    # (the reference) must give the same figures
    res = analyse_cycles(flagged_log, CycleOptions(block_rows=3000))
    tab = res.table
    clean = tab[tab["flag"] == ""]
    assert res.summary["flags"] == {"clipped": 10, "nan": 1, "gap": 1}
    assert res.summary["cycles"] == len(clean) == 119 - 12
    es = clean["energy_swing_J"].to_numpy()
    assert res.summary["energy_swing_J"]["median"] == pytest.approx(np.median(es), rel=1e-12)
    assert res.summary["energy_swing_J"]["p95"] == pytest.approx(np.quantile(es, 0.95),
                                                                 rel=1e-12)
    assert res.summary["cs"]["max"] == clean["cs"].max()
    assert res.summary["torque_peak_Nm_p99"] == pytest.approx(
        np.quantile(clean["torque_peak_Nm"], 0.99), rel=1e-12)
    assert res.summary["work_J_mean"] == pytest.approx(clean["work_J"].mean(), rel=1e-12)
    assert res.summary["cycle_rate_per_min"] == pytest.approx(
        60 / np.median(clean["duration_s"]), rel=1e-12)
    assert res.summary["quantiles"]["method"] == "exact"
    _close({k: summarise(tab)[k] for k in FIGS}, {k: res.summary[k] for k in FIGS}, 1e-12)


def test_rows_not_kept_give_the_same_summary_and_mean_cycle(flagged_log):
    kept = analyse_cycles(flagged_log, CycleOptions(block_rows=3000))
    flat = analyse_cycles(flagged_log, CycleOptions(block_rows=3000), keep_rows=False)
    assert flat.columns == {} and not flat.rows_kept
    assert "cycles" not in flat.to_dict() and len(kept.to_dict()["cycles"]) == 119
    _close(flat.summary, kept.summary, 0)
    for k in ("torque_mean", "torque_sd", "speed_mean", "speed_sd"):
        np.testing.assert_array_equal(flat.mean[k], kept.mean[k])
    # the running (Welford) mean cycle equals numpy over the clean cycles' curves
    # (the first ≤ 300 clean cycles are kept as curves: here every one)
    curves = kept.curves["torque"]
    assert curves.shape[0] == kept.summary["cycles"]
    np.testing.assert_allclose(kept.mean["torque_mean"], curves.mean(axis=0), rtol=1e-12)
    np.testing.assert_allclose(kept.mean["torque_sd"], curves.std(axis=0), rtol=1e-9,
                               atol=1e-9)


def test_low_budget_sketch_within_its_stated_bound(flagged_log):
    exact = analyse_cycles(flagged_log)
    sk = analyse_cycles(flagged_log, keep_rows=False, quantile_budget=20)
    q = sk.summary["quantiles"]
    assert q == {"method": "sketch", "exact_budget_cycles": 20,
                 "relative_error_bound": BOUND, "bound_holds": True}
    assert sk.options["quantile_budget_cycles"] == 20
    for fig in ("energy_swing_J", "cs"):
        for stat in ("median", "p95"):
            e, s = exact.summary[fig][stat], sk.summary[fig][stat]
            assert abs(s - e) <= BOUND * abs(e), (fig, stat, s, e)
            assert s != e  # the sketch really answered
        assert sk.summary[fig]["max"] == exact.summary[fig]["max"]  # max stays exact
    e, s = exact.summary["torque_peak_Nm_p99"], sk.summary["torque_peak_Nm_p99"]
    assert abs(s - e) <= BOUND * abs(e)
    assert sk.summary["work_J_mean"] == pytest.approx(exact.summary["work_J_mean"], rel=1e-12)


# --------------------------------------------------------------------------- sketch
@settings(derandomize=True, deadline=None, max_examples=25)
@given(st.integers(min_value=2, max_value=3000), st.sampled_from([1e-2, 1e-3, 1e-4]),
       st.floats(min_value=-3, max_value=6), st.booleans(),
       st.sampled_from([0.0, 0.01, 0.5, 0.95, 0.99, 1.0]))
def test_sketch_quantile_within_relative_error_of_numpy(n, alpha, log_scale, mixed, q):
    rng = np.random.default_rng(n)
    x = rng.lognormal(log_scale, 1.5, n)
    if mixed:
        x = x * rng.choice([-1.0, 1.0], n)
        x[: n // 10] = 0.0
    s = RelativeErrorSketch(alpha)
    for part in np.array_split(x, 7):
        s.add(part)
    ref = np.sort(x)
    r = q * (n - 1)
    lo, hi = ref[math.floor(r)], ref[min(math.floor(r) + 1, n - 1)]
    got = s.quantile(q)
    if lo * hi >= 0:  # same sign: both order statistics within α → so is the blend
        assert abs(got - np.quantile(x, q)) <= alpha * max(abs(lo), abs(hi)) * (1 + 1e-9)
    else:
        assert min(lo, hi) - alpha * abs(lo) <= got <= max(lo, hi) + alpha * abs(hi)


def test_sketch_memory_does_not_grow_with_count():
    s = RelativeErrorSketch(1e-3)
    rng = np.random.default_rng(1)
    s.add(rng.uniform(1000, 2000, 10_000))
    size = s.pos.counts.size
    for _ in range(20):
        s.add(rng.uniform(1000, 2000, 10_000))
    assert s.pos.counts.size == size and s.n == 210_000
    # ln(2)/ln(γ) buckets cover a factor 2 at α = 1e-3
    assert size <= math.ceil(math.log(2) / math.log((1 + 1e-3) / (1 - 1e-3))) + 1


def test_sketch_merges_lowest_buckets_and_says_so():
    s = RelativeErrorSketch(1e-2, max_buckets=100)
    s.add(np.geomspace(1e-6, 1e6, 5000))
    assert s.collapsed and s.pos.counts.size == 100
    assert s.quantile(0.99) == pytest.approx(np.quantile(np.geomspace(1e-6, 1e6, 5000), 0.99),
                                             rel=1e-2)


def test_keeper_switches_from_exact_to_sketch_at_the_budget():
    k = QuantileKeeper(budget=100, relative_error=1e-3)
    k.add(np.arange(1.0, 101.0))
    assert k.method == "exact" and k.median() == 50.5 and k.values.size == 100
    k.add(np.array([np.nan, 101.0]))
    assert k.method == "sketch" and k.values is None and k.n == 101
    assert abs(k.median() - 51.0) <= 1e-3 * 51.0
    assert k.max() == 101.0
    counts, edges = k.histogram(10)
    assert counts.sum() == 101 and edges[0] == 1.0 and edges[-1] == 101.0


def test_running_moments_equal_numpy_over_blocks():
    rng = np.random.default_rng(3)
    x = rng.normal(1e6, 1.0, (500, 8))  # large mean: sum-of-squares would lose digits
    rm = RunningMoments()
    for part in np.array_split(x, 13):
        rm.add(part)
    np.testing.assert_allclose(rm.mean, x.mean(axis=0), rtol=1e-13)
    np.testing.assert_allclose(rm.std(), x.std(axis=0), rtol=1e-9)


def test_column_store_is_typed_and_compact():
    store = ColumnStore()
    for i in range(3):
        store.add({"cycle": np.arange(i * 50, (i + 1) * 50), "cs": np.full(50, 0.1),
                   "angle_speed_min_deg": np.full(50, 12.5),
                   "flag": np.array(["", "gap", "nan+gap", ""] * 12 + ["", ""], dtype=object)})
    cols = store.columns()
    assert cols["cycle"].tolist() == list(range(150))
    assert cols["angle_speed_min_deg"].dtype == np.float64
    assert cols["flag"][:4].tolist() == ["", "gap", "nan+gap", ""]
    assert store._bufs["flag"].dtype == np.uint16


# --------------------------------------------------------------------------- CLI outputs
def _cli(args):
    res = CliRunner().invoke(cli, args)
    assert res.exit_code == 0, res.output
    return res


def test_streamed_json_csv_jsonl_parquet_equal_the_in_memory_table(flagged_log, tmp_path):
    mem = analyse_cycles(flagged_log, anomaly=False)  # the shape check scores late
    ref = json.loads(json.dumps(mem.to_dict(), default=str).replace("NaN", "null"))
    out = {f: tmp_path / f"c.{f}" for f in ("json", "csv", "jsonl", "parquet")}
    _cli(["cycles", flagged_log, "--format", "json", "-o", str(out["json"]),
          "--quantile-budget", "50", "--no-shape-check"])
    for f in ("csv", "jsonl", "parquet"):  # the writers the library can stream into
        analyse_cycles(flagged_log, keep_rows=False, quantile_budget=50, anomaly=False,
                       sink=make_writer(f, str(out[f]), str))
    d = json.loads(out["json"].read_text())
    assert d["cycles"] == ref["cycles"] and len(d["cycles"]) == 119
    assert d["summary"]["quantiles"]["method"] == "sketch"
    assert list(d) == ["source", "options", "cycles", "summary", "notes", "anomaly"]
    assert out["csv"].read_text() == mem.table.to_csv(index=False)
    lines = [json.loads(x) for x in out["jsonl"].read_text().splitlines()]
    assert set(lines[0]) == {"source", "options"} and set(lines[-1]) == {"summary", "notes",
                                                                        "anomaly"}
    assert lines[1:-1] == ref["cycles"]
    pf = pq.read_table(out["parquet"])
    got = pf.to_pandas()
    assert list(got.columns) == list(COLUMNS)
    pd.testing.assert_frame_equal(got.drop(columns=["start_time"]),
                                  mem.table.drop(columns=["start_time"]), check_dtype=False)
    meta = json.loads(pq.read_metadata(out["parquet"]).metadata[b"torqlog"])
    assert meta["summary"]["cycles"] == 107


def test_table_output_lists_every_cycle_after_the_summary(flagged_log):
    text = _cli(["cycles", flagged_log, "--no-shape-check"]).stdout
    head, _, rows = text.partition("\n\n")
    assert head.startswith(f"{flagged_log}: 107 clean cycles of 119")
    body = pd.read_csv(io.StringIO(rows), sep=r"\s+", usecols=range(9))
    assert body["cycle"].tolist() == list(range(1, 120))
    assert "flagged cycles: clipped 10, nan 1, gap 1" in head


def test_summary_only_and_failed_run_leaves_no_file(flagged_log, tmp_path):
    d = json.loads(_cli(["cycles", flagged_log, "--summary-only", "--format", "json"]).stdout)
    assert "cycles" not in d and d["summary"]["cycles"] == 107
    short = tmp_path / "short.csv"
    t = np.arange(0, 1.5, 1e-3)  # 60 rpm: one and a half cycles
    pd.DataFrame({"time_s": t, "torque_Nm": 10 + np.sin(TWO_PI * t),
                  "speed_rpm": 60.0}).to_csv(short, index=False)
    target = tmp_path / "out.json"
    res = CliRunner().invoke(cli, ["cycles", str(short), "--format", "json", "-o", str(target)])
    assert res.exit_code == 1 and "complete cycle" in res.output
    assert not target.exists() and list(tmp_path.glob(".out.json.*")) == []
    with pytest.raises(UsageError, match="give -o FILE"):
        make_writer("parquet", None, str)
    # a writer stopped half-way removes its temporary file and never makes the target
    w = JsonWriter(str(target))
    w.start("x.csv", {})
    w.write({k: np.zeros(3) for k in COLUMNS} | {"flag": np.array(["", "", ""])})
    w._flush(w.batch.take())
    assert len(list(tmp_path.glob(".out.json.*.tmp"))) == 1
    w.abort()
    assert not target.exists() and list(tmp_path.glob(".out.json.*")) == []


# --------------------------------------------------------------------------- held blocks
def _blocks(rng, n_blocks):
    """Blocks of 1..40 cycles, about a third flagged (numbers run 1..n)."""
    out, c = [], 1
    for _ in range(n_blocks):
        m = int(rng.integers(1, 40))
        flag = np.where(rng.random(m) < 0.35, "gap", "").astype(object)
        out.append({"cycle": np.arange(c, c + m), "flag": flag,
                    "anomaly": np.zeros(m, dtype=bool), "anomaly_score": np.full(m, np.nan)})
        c += m
    return out


@pytest.mark.parametrize("memory_rows", [10**6, 25])
def test_held_blocks_get_their_scores_in_order_spilled_or_not(memory_rows):
    # the shape model learns after `learn` clean cycles: every block before that waits,
    # then each block waits only for its own scores; the released rows must carry the
    # scores of exactly their cycles, in cycle order (reference: the scores set by index)
    from torqlog.signal.cycle_table import ScoredBlocks

    rng = np.random.default_rng(3)
    blocks = _blocks(rng, 60)
    got = []
    join = ScoredBlocks(got.append, memory_rows=memory_rows)
    truth = {}
    learn, buffered, waiting_scores = 120, [], True
    for b in blocks:
        join.add(b)
        clean = b["cycle"][b["flag"] == ""]
        sc = rng.random(clean.size) * 1.4
        truth.update(zip(clean.tolist(), sc.tolist(), strict=True))
        if waiting_scores:
            buffered.append((clean, sc))
            if sum(c.size for c, _ in buffered) >= learn:
                join.add_scores(buffered)
                waiting_scores = False
        else:
            join.add_scores([(clean, sc)])
        if not waiting_scores:  # once learned, nothing is left waiting after a chunk
            assert join.held == []
    join.close()
    rows = {k: np.concatenate([g[k] for g in got]) for k in got[0]}
    n = sum(b["cycle"].size for b in blocks)
    assert rows["cycle"].tolist() == list(range(1, n + 1))
    want = np.array([truth.get(c, np.nan) for c in range(1, n + 1)])
    np.testing.assert_array_equal(rows["anomaly_score"], want)
    np.testing.assert_array_equal(rows["anomaly"], want > 1.0)
    assert join.scored == len(truth) and join.abnormal == int((want > 1.0).sum())
    assert (join.spilled_blocks > 0) == (memory_rows == 25)
    assert join.rows_in_memory == 0 and join.pending == []


def test_held_blocks_pass_at_once_when_no_score_will_come():
    from torqlog.signal.cycle_table import ScoredBlocks

    blocks = _blocks(np.random.default_rng(4), 5)
    got = []
    join = ScoredBlocks(got.append, memory_rows=10)
    for b in blocks[:3]:
        join.add(b)
    assert got == [] and join.spilled_blocks >= 1  # waiting for a model, spilled
    join.stop_waiting()  # the model could not be learned
    join.add(blocks[3])
    assert [g["cycle"][0] for g in got] == [b["cycle"][0] for b in blocks[:4]]
    assert all(np.isnan(g["anomaly_score"]).all() for g in got)


def test_shape_monitor_keeps_only_flagged_cycles_and_gives_the_dense_runs():
    # the run analysis (isolated / recurring / sustained) from the flagged cycles alone
    # must equal flag_runs over every scored cycle (the dense reference), also after a
    # bounded watch forgets old cycles
    from torqlog.signal import anomaly as an

    rng = np.random.default_rng(5)
    x = np.linspace(0, TWO_PI, 36, endpoint=False)
    normal = 100 + 40 * np.sin(x)

    def cycles(n, bad):
        c = normal + rng.normal(0, 1.0, (n, 36)) + rng.normal(0, 2.0, (n, 1)) * np.cos(x)
        c[bad] += 25 * np.exp(-((x - 2.0) ** 2) / 0.05)  # a dent at 115°
        return c

    model = an.fit_model({"torque": cycles(400, np.zeros(400, bool))}, duration=0.5)
    mon = an.ShapeMonitor(an.AnomalyOptions(), 1, {"torque"}, model)
    n = 900
    bad = np.zeros(n, bool)
    bad[100:700:9] = True     # recurring first
    bad[820:] = True          # then sustained to the end
    curves = cycles(n, bad)
    cyc = np.arange(1, n + 1)
    ts = cyc * 0.5
    scores = []
    for lo in range(0, n, 64):  # in chunks, as the engine hands them over
        sl = slice(lo, lo + 64)
        scores += mon.push(cyc[sl], ts[sl], np.full(cyc[sl].size, 0.5),
                           {"torque": curves[sl]})
    flagged = np.concatenate([s for _, s in scores]) > 1.0
    assert flagged[bad].all()
    dense = an.flag_runs(flagged, cyc, ts)
    assert dense["pattern"] == "sustained" and dense["from_cycle"] <= 821
    assert mon.result().runs == dense
    mon.compact(0)
    pos, fc, _ = mon.flags_all[0]
    assert mon.window_n == n and pos.tolist() == np.flatnonzero(flagged).tolist()
    assert fc.tolist() == cyc[flagged].tolist() and pos.size < n / 5  # the flagged alone
    mon.forget(150)
    assert mon.result().runs == an.flag_runs(flagged[-150:], cyc[-150:], ts[-150:])


# --------------------------------------------------------------------------- shape check on
def _rows(d):
    return json.loads(json.dumps(d, default=str).replace("NaN", "null"))


@pytest.mark.parametrize("held_rows", [20_000, 7])
def test_streamed_rows_carry_the_shape_scores_of_the_whole_log_path(flagged_log, tmp_path,
                                                                   monkeypatch, held_rows):
    # the model learns from the first 40 clean cycles: the rows before wait for their
    # scores (in memory, or spilled to a file with 7 held rows), later rows only for their
    # own chunk. Reference: the same log read in one chunk, where every score is known
    # only at the end and filled into the kept rows.
    from torqlog.signal import anomaly as an
    from torqlog.signal import cycle_table

    monkeypatch.setattr(cycle_table, "HELD_ROWS_IN_MEMORY", held_rows)
    ao = an.AnomalyOptions(learn_cycles=40)
    whole = analyse_cycles(flagged_log, CycleOptions(block_rows=10**6), anomaly=ao)
    out = tmp_path / "c.json"
    streamed = analyse_cycles(flagged_log, CycleOptions(block_rows=3000), anomaly=ao,
                              keep_rows=False, sink=make_writer("json", str(out), str))
    kept = analyse_cycles(flagged_log, CycleOptions(block_rows=3000), anomaly=ao)
    rows = json.loads(out.read_text())["cycles"]
    assert rows == _rows(kept.to_dict()["cycles"])  # streamed = kept in memory, same chunks
    assert [r["cycle"] for r in rows] == list(range(1, 120))
    clean = [r["flag"] == "" for r in rows]
    assert [r["anomaly_score"] is not None for r in rows] == clean  # every clean one scored
    # the rows, scores included, do not depend on when the scores were known
    for k in COLUMNS:
        if whole.columns[k].dtype.kind == "f":
            got = np.array([np.nan if r[k] is None else r[k] for r in rows])
            np.testing.assert_allclose(got, whole.columns[k], rtol=1e-9, atol=1e-12,
                                       err_msg=k)
    assert [r["anomaly"] for r in rows] == whole.columns["anomaly"].tolist()
    assert streamed.summary["anomaly"] == whole.summary["anomaly"]
    assert streamed.summary["anomaly"]["scored"] == sum(clean) == 107
    assert streamed.anomaly.flagged == sum(r["anomaly"] for r in rows)


def test_cli_formats_with_the_shape_check_read_back_equal_the_json_rows(flagged_log,
                                                                      tmp_path):
    out = {f: tmp_path / f"c.{f}" for f in ("json", "jsonl", "parquet", "csv")}
    for f, path in out.items():
        _cli(["cycles", flagged_log, "--learn-cycles", "40", "--quantile-budget", "30",
              "--format", f, "-o", str(path), *(["--full-precision"] if f == "csv" else [])])
    d = json.loads(out["json"].read_text())
    rows = d["cycles"]
    assert len(rows) == 119 and sum(r["anomaly_score"] is not None for r in rows) == 107
    assert d["summary"]["quantiles"]["method"] == "sketch"
    lines = [json.loads(x) for x in out["jsonl"].read_text().splitlines()]
    assert lines[1:-1] == rows
    assert lines[0] == {"source": d["source"], "options": d["options"]}
    assert lines[-1] == {"summary": d["summary"], "notes": d["notes"], "anomaly": d["anomaly"]}
    got = pq.read_table(out["parquet"])
    assert got.schema.field("energy_swing_J").metadata[b"unit"] == b"J"
    assert b"torqlog.output" in got.schema.metadata
    back = _rows(got.drop_columns(["start_time"]).to_pylist())
    assert back == [{k: v for k, v in r.items() if k != "start_time"} for r in rows]
    csv = pd.read_csv(out["csv"], keep_default_na=False, na_values=[""])
    np.testing.assert_array_equal(csv["anomaly_score"].to_numpy(),
                                  [np.nan if r["anomaly_score"] is None else r["anomaly_score"]
                                   for r in rows])
    assert csv["flag"].fillna("").tolist() == [r["flag"] for r in rows]
    # the summary alone as JSON lines: the first and last line of the streamed file
    one = [json.loads(x) for x in _cli(["cycles", flagged_log, "--learn-cycles", "40",
                                        "--quantile-budget", "30", "--summary-only",
                                        "--format", "jsonl"]).stdout.splitlines()]
    assert one == [lines[0], lines[-1]]


@pytest.mark.parametrize("digits", [None, 6, 3])
def test_csv_cells_without_pandas_equal_pandas_to_csv(digits):
    # the streamed CSV writes its cells itself (pandas costs ~50 MB); reference: pandas'
    # own to_csv, through to_csv_text, on values from 1e-12 to 1e12, NaN, ±inf, ±0
    import csv as csvmod

    from torqlog.cli.cycle_output import _csv_cells
    from torqlog.present.exporting import to_csv_text

    rng = np.random.default_rng(0)
    v = np.concatenate([rng.normal(0, 1, 200) * 10.0 ** rng.integers(-12, 12, 200),
                        [np.nan, np.inf, -np.inf, 0.0, -0.0, 1e16, 123456789.0, 5.0, 1e-5]])
    df = pd.DataFrame({"x": v, "flag": np.array(["", "gap+nan"] * 104 + [""], dtype=object),
                       "anomaly": np.arange(v.size) % 3 == 0, "cycle": np.arange(v.size),
                       "start_time": np.full(v.size, np.datetime64("NaT"), "datetime64[ns]")})
    out = io.StringIO()
    csvmod.writer(out, lineterminator="\n").writerows(
        zip(*[_csv_cells(df[c].to_numpy(), digits) for c in df], strict=True))
    assert out.getvalue() == to_csv_text(df, digits=digits, header=False)


def test_streamed_csv_with_time_stamps_equals_the_in_memory_csv(tmp_path):
    # a log with a start time: the per-cycle start_time column is written (by pandas)
    from torqlog.present.exporting import to_csv_text

    log = str(Path(__file__).resolve().parents[1] / "sample_data" / "press_counts_iso.csv")
    res = analyse_cycles(log, anomaly=False)
    assert res.table["start_time"].notna().all()
    out = tmp_path / "c.csv"
    _cli(["cycles", log, "--no-shape-check", "--format", "csv", "-o", str(out), "--units-row"])
    assert out.read_text() == to_csv_text(res.table, units_row=True)
