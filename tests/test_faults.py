"""Fault campaign: hostile signals through the cycle stage and the commands that take a log.

Each case takes a simulated log of a demo machine (press, compressor, engine), breaks it
the way real loggers break (speed dropouts, frozen and dead sensors, clipping, spike runs,
±inf, NaN runs, stops, run-downs, reversals, long gaps, aperiodic data) and checks what
the issue asks of every class: each cycle overlapping the fault is flagged, no cycle more
than one period away from it is, the clean statistics (median and p95 of Cs and ΔE) stay
within 0.5 % of the same log without the fault, and the summary and ``size`` agree on
the number of clean cycles. A class that cannot give trustworthy cycles is refused, and
the test reads the reason in the message.

The reference for the statistics is the fault-free log itself (the property under test
is that a fault changes nothing but the cycles it touches); the physics of the clean
figures is checked against published formulas in ``test_cycles.py``.
"""

from __future__ import annotations

import json
import math
import re
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import pytest
from click.testing import CliRunner
from hypothesis import given, settings
from hypothesis import strategies as st

from torqlog.cli import cli
from torqlog.demo.simulate import simulate
from torqlog.errors import DataError
from torqlog.signal.cycles import analyse_cycles, options_from_profile
from torqlog.sizing.inertia import size_log, size_log_dict

RATE = 1000.0
SECONDS = {"press": 24.0, "compressor": 8.0, "engine": 8.0}
RPM = 60.0 / (2.0 * math.pi)


@dataclass
class Log:
    """Columns in SI and what was done to them."""

    t: np.ndarray
    torque: np.ndarray
    speed: np.ndarray
    revs: int
    period: float  # cycle period [s]
    spans: list[tuple[float, float]]  # faulty or non-running stretches [s]: flag these
    zones: list[tuple[float, float]] | None = None  # the whole disturbance, if wider

    def write(self, path, *, torque: bool = True, speed: bool = True) -> str:
        cols = {"time_s": self.t}
        if torque:
            cols["torque_Nm"] = self.torque
        if speed:
            cols["speed_rpm"] = self.speed * RPM
        np.savetxt(path, np.column_stack(list(cols.values())), delimiter=",",
                   header=",".join(cols), comments="", fmt="%.9g")
        return str(path)


_BASE: dict[tuple[str, int], Log] = {}


def base(machine: str, seed: int = 3) -> Log:
    key = (machine, seed)
    if key not in _BASE:
        sim = simulate(machine, duration=SECONDS[machine], rate=RATE, seed=seed)
        d = sim.data
        revs = sim.machine.revs_per_cycle
        w = float(np.mean(d["speed"]))
        _BASE[key] = Log(d["time"].to_numpy(), d["torque"].to_numpy(),
                         d["speed"].to_numpy(), revs, 2 * math.pi * revs / w, [])
    b = _BASE[key]
    return Log(b.t.copy(), b.torque.copy(), b.speed.copy(), b.revs, b.period, [])


def _rev(log: Log) -> int:
    """Samples in one revolution."""
    return int(round(log.period / log.revs * RATE))


def _at(log: Log, share: float) -> int:
    return int(share * log.t.size)


# ------------------------------------------------------------------ fault makers
def speed_dropout(log: Log, at: float = 0.5, revs: float = 1.0) -> Log:
    i = _at(log, at)
    j = i + max(2, int(revs * _rev(log)))
    log.speed[i:j] = 0.0
    log.spans.append((log.t[i], log.t[j - 1]))
    return log


def speed_frozen(log: Log, at: float = 0.5, revs: float = 1.0) -> Log:
    i = _at(log, at)
    j = i + int(revs * _rev(log))
    log.speed[i:j] = log.speed[i]
    log.spans.append((log.t[i], log.t[j - 1]))
    return log


def torque_dropout(log: Log, at: float = 0.5, revs: float = 1.0) -> Log:
    i = _at(log, at)
    j = i + int(revs * _rev(log))
    log.torque[i:j] = 0.0
    log.spans.append((log.t[i], log.t[j - 1]))
    return log


def _clip(x: np.ndarray, share: float, t: np.ndarray, spans: list) -> np.ndarray:
    rail = np.quantile(x, 1.0 - share)
    hit = x >= rail
    spans.extend((a, b) for a, b in zip(t[_starts(hit)], t[_ends(hit)], strict=True))
    return np.minimum(x, rail)


def _starts(m: np.ndarray) -> np.ndarray:
    return np.flatnonzero(np.diff(np.concatenate(([0], m.astype(np.int8)))) == 1)


def _ends(m: np.ndarray) -> np.ndarray:
    return np.flatnonzero(np.diff(np.concatenate((m.astype(np.int8), [0]))) == -1)


def speed_clipped(log: Log, share: float = 0.2) -> Log:
    log.speed = _clip(log.speed, share, log.t, log.spans)
    return log


def torque_clipped(log: Log, share: float = 0.05) -> Log:
    log.torque = _clip(log.torque, share, log.t, log.spans)
    return log


def spike_run(log: Log, at: float = 0.5, n: int = 4, channel: str = "torque",
              height: float = 50.0) -> Log:
    x = getattr(log, channel)
    i = _at(log, at)
    x[i:i + n] = x.mean() + height * (x.max() - x.min())
    log.spans.append((log.t[i], log.t[i + n - 1]))
    return log


def infinite(log: Log, at: float = 0.5, n: int = 3, channel: str = "torque") -> Log:
    x = getattr(log, channel)
    i = _at(log, at)
    x[i:i + n] = np.inf
    x[i + 7] = -np.inf
    log.spans.append((log.t[i], log.t[i + 7]))
    return log


def nan_run(log: Log, at: float = 0.5, n: int = 30, channel: str = "torque") -> Log:
    x = getattr(log, channel)
    i = _at(log, at)
    x[i:i + n] = np.nan
    log.spans.append((log.t[i], log.t[i + n - 1]))
    return log


def _insert(log: Log, at: float, speed_shape: np.ndarray) -> Log:
    """Insert a non-running stretch: the shaft slows along ``speed_shape`` (× the speed at
    the cut), the torque falls to its noise; the log resumes where it left off."""
    i = _at(log, at)
    m = speed_shape.size
    dt = 1.0 / RATE
    w0 = log.speed[i]
    rng = np.random.default_rng(7)
    t_new = log.t[i] + dt * np.arange(m)
    sp = w0 * speed_shape + rng.normal(0.0, 1e-4 * w0, m)
    tq = rng.normal(0.0, 0.01 * np.ptp(log.torque), m)
    log.t = np.concatenate((log.t[:i], t_new, log.t[i:] + m * dt))
    log.speed = np.concatenate((log.speed[:i], sp, log.speed[i:]))
    log.torque = np.concatenate((log.torque[:i], tq, log.torque[i:]))
    # the stretch is where the speed is 10 % or more below running: the first and last
    # few percent of a gradual run-down cannot be told from a cycle's own fluctuation
    slow = np.flatnonzero(speed_shape < 0.9)
    log.spans.append((t_new[slow[0]], t_new[slow[-1]]))
    log.zones = (log.zones or []) + [(t_new[0], t_new[-1])]
    return log


def _whole(log: Log, secs: float, share: float) -> float:
    """``secs`` rounded so the shaft turns whole cycles in a stretch whose mean speed is
    ``share`` of running: the torque after it resumes at the crank angle the speed
    integral says (a real shaft cannot do otherwise)."""
    return max(1, round(secs * share / log.period)) * log.period / share


def stop_restart(log: Log, at: float = 0.5, down: float = 1.0, still: float = 2.0) -> Log:
    down = _whole(log, 2 * down, 0.5) / 2
    nd, ns = int(round(down * RATE)), int(still * RATE)
    shape = np.concatenate((np.linspace(1, 0, nd), np.zeros(ns), np.linspace(0, 1, nd)))
    return _insert(log, at, shape)


def slow_down(log: Log, at: float = 0.5, low: float = 0.3, secs: float = 1.5) -> Log:
    n = int(round(_whole(log, 2 * secs, (1 + low) / 2) / 2 * RATE))
    shape = np.concatenate((np.linspace(1, low, n), np.linspace(low, 1, n)))
    return _insert(log, at, shape)


def reversal(log: Log, at: float = 0.5, back: float = 0.3, secs: float = 1.0) -> Log:
    n = int(round(_whole(log, 2 * secs, (1 - back) / 2) / 2 * RATE))
    shape = np.concatenate((np.linspace(1, -back, n), np.linspace(-back, 1, n)))
    return _insert(log, at, shape)


def gap(log: Log, at: float = 0.5, secs: float = 0.02) -> Log:
    """The logger misses ``secs`` while the machine runs on."""
    i = _at(log, at)
    j = i + int(secs * RATE)
    log.spans.append((log.t[i - 1], log.t[j]))
    keep = np.ones(log.t.size, dtype=bool)
    keep[i:j] = False
    log.t, log.torque, log.speed = log.t[keep], log.torque[keep], log.speed[keep]
    return log


# ------------------------------------------------------------------ the checks
def _opts(log: Log):
    return options_from_profile(revs_per_cycle=log.revs)


def _stats(res) -> dict[str, float]:
    s = res.summary
    return {"cs_median": s["cs"]["median"], "cs_p95": s["cs"]["p95"],
            "de_median": s["energy_swing_J"]["median"], "de_p95": s["energy_swing_J"]["p95"]}


_CLEAN: dict[tuple[str, int], dict[str, float]] = {}


def clean_stats(machine: str, tmp_path, seed: int = 3) -> dict[str, float]:
    if (machine, seed) not in _CLEAN:
        log = base(machine, seed)
        res = analyse_cycles(log.write(tmp_path / f"clean_{machine}.csv"), _opts(log))
        assert res.summary["flags"] == {}, res.summary["flags"]
        _CLEAN[(machine, seed)] = _stats(res)
    return _CLEAN[(machine, seed)]


def check_flagged(res, log: Log, *, stats_of: dict[str, float] | None, tol: float = 0.005,
                  allow_cs_nan: bool = False) -> None:
    """The campaign's properties for a fault that is flagged, not refused."""
    tab = res.columns
    a = tab["t_start_s"]
    b = a + tab["duration_s"]
    flag = tab["flag"]
    p = log.period
    for lo, hi in log.spans:
        touch = (a <= hi) & (b >= lo)
        assert touch.any(), f"no cycle overlaps the fault at {lo:.3f}–{hi:.3f} s"
        assert np.all(flag[touch] != ""), (
            f"a cycle overlapping the fault at {lo:.3f}–{hi:.3f} s is clean: "
            f"{list(zip(a[touch], flag[touch], strict=True))}")
    far = np.ones(a.size, dtype=bool)
    for lo, hi in log.spans + (log.zones or []):
        far &= (b < lo - p) | (a > hi + p)
    bad = far & (flag != "")
    assert not bad.any(), (
        f"cycles far from any fault flagged: {list(zip(a[bad], flag[bad], strict=True))[:5]}")
    if stats_of is not None:
        got = _stats(res)
        for k, ref in stats_of.items():
            if allow_cs_nan and k.startswith("cs"):
                continue
            assert got[k] == pytest.approx(ref, rel=tol), (k, got[k], ref)
    sized = size_log_dict(size_log(res, None, target_cs=0.05), res)
    assert sized["cycles_used"] == res.summary["cycles"]


FLAGGED: list[tuple[str, str, Callable[[Log], Log], str]] = []
for _m in ("press", "compressor", "engine"):
    FLAGGED += [
        (_m, "speed dropout, one rev", lambda g: speed_dropout(g), "dropout"),
        (_m, "speed dropout, three revs", lambda g: speed_dropout(g, at=0.3, revs=3), "dropout"),
        (_m, "speed frozen, one rev", lambda g: speed_frozen(g), "frozen"),
        (_m, "torque dropout to 0, one rev", lambda g: torque_dropout(g), "frozen|clipped"),
        (_m, "speed clipped, 20 %", lambda g: speed_clipped(g, 0.2), "clipped"),
        (_m, "torque clipped, 5 %", lambda g: torque_clipped(g, 0.05), "clipped"),
        (_m, "torque spike run, 4 samples", lambda g: spike_run(g, n=4), "spikes"),
        (_m, "torque spike run, 2 samples", lambda g: spike_run(g, at=0.7, n=2), "spikes"),
        (_m, "speed spike run, 3 samples",
         lambda g: spike_run(g, n=3, channel="speed", height=3.0), "spikes"),
        (_m, "torque ±inf", lambda g: infinite(g), "nonfinite"),
        (_m, "speed ±inf", lambda g: infinite(g, channel="speed"), "nonfinite"),
        (_m, "torque NaN run", lambda g: nan_run(g), "nan"),
        (_m, "stop and restart", lambda g: stop_restart(g), "stop"),
        (_m, "run-down to 30 % and back", lambda g: slow_down(g), "stop"),
        (_m, "reversal", lambda g: reversal(g), "reversal"),
        (_m, "3 s gap", lambda g: gap(g, secs=3.0), "gap"),
        (_m, "20 ms gap", lambda g: gap(g), "gap"),
        (_m, "two faults: dropout and spike run",
         lambda g: spike_run(speed_dropout(g, at=0.25), at=0.75), "dropout"),
    ]
# clipping at a rail shared by every cycle flags them all: checked apart (below)
_ALL_CYCLES = ("speed clipped, 20 %", "torque clipped, 5 %")


@pytest.mark.parametrize(("machine", "name", "make", "expect"),
                         [c for c in FLAGGED if c[1] not in _ALL_CYCLES],
                         ids=[f"{c[0]}-{c[1]}" for c in FLAGGED if c[1] not in _ALL_CYCLES])
def test_fault_is_flagged_where_it_is_and_nowhere_else(machine, name, make, expect,
                                                       tmp_path):
    log = make(base(machine))
    res = analyse_cycles(log.write(tmp_path / "f.csv"), _opts(log))
    flags = set("+".join(res.columns["flag"]).split("+")) - {""}
    assert flags & set(expect.split("|")), (name, res.summary["flags"])
    check_flagged(res, log, stats_of=clean_stats(machine, tmp_path))
    if expect in ("stop", "reversal", "gap") and name != "20 ms gap":
        what = " ".join(d["what"] for d in res.summary["not_running"])
        word = {"stop": "stop" if "restart" in name else "run-down", "reversal": "reversal",
                "gap": "gap"}[expect]
        assert word in what, res.summary["not_running"]
        assert len(res.summary["segments"]) == 2, res.summary["segments"]


def _rail_cycles(res, log: Log, hit: np.ndarray) -> np.ndarray:
    """Cycles holding 10 or more samples at the rail (a rail touched by a sample or two
    under noise cannot be told from the signal's own peak)."""
    a = res.columns["t_start_s"]
    b = a + res.columns["duration_s"]
    th = log.t[hit]
    return np.array([np.sum((th >= x) & (th <= y)) >= 10 for x, y in zip(a, b, strict=True)])


@pytest.mark.parametrize("machine", ["press", "compressor", "engine"])
@pytest.mark.parametrize(("channel", "share"), [("torque", 0.15), ("speed", 0.2)])
@pytest.mark.parametrize("part", ["whole", "second half"])
def test_clipping_at_a_rail_flags_the_cycles_that_touch_it(machine, channel, share, part,
                                                           tmp_path):
    log = base(machine)
    x = getattr(log, channel)
    where = log.t >= (log.t[-1] / 2 if part == "second half" else 0.0)
    rail = np.quantile(x[where], 1.0 - share)
    hit = where & (x >= rail)
    setattr(log, channel, np.where(where, np.minimum(x, rail), x))
    path = log.write(tmp_path / "c.csv")
    try:
        res = analyse_cycles(path, _opts(log))
    except DataError as exc:  # every cycle clipped: refused, and the reason says so
        assert part == "whole"
        assert re.search(r"no running stretch holds 2 clean cycles .*flagged: clipped \d+",
                         str(exc)), str(exc)
        return
    flag = res.columns["flag"]
    a = res.columns["t_start_s"]
    # cycles wholly on the rail's side (a rail appearing mid-cycle is this test's artefact)
    railed = _rail_cycles(res, log, hit) & (a >= log.t[where][0])
    assert railed.sum() >= 3
    assert all("clipped" in f for f in flag[railed]), list(zip(railed, flag, strict=True))
    if part == "second half":
        assert np.all(flag[a + res.columns["duration_s"] < log.t[where][0] - log.period]
                      == "")
    sized = size_log_dict(size_log(res, None, target_cs=0.05), res)
    assert sized["cycles_used"] == res.summary["cycles"]


def test_lone_spike_is_repaired_and_counted_not_flagged(tmp_path):
    log = spike_run(base("press"), n=1)
    res = analyse_cycles(log.write(tmp_path / "s.csv"), _opts(log))
    assert res.summary["flags"] == {}
    assert res.summary["spikes"] == 1
    assert "1 one-sample spike(s) replaced by their neighbours' mean" in res.notes
    clean = clean_stats("press", tmp_path)
    assert res.summary["energy_swing_J"]["p95"] == pytest.approx(clean["de_p95"], rel=0.005)


def test_dead_speed_sensor_gives_no_cs_and_says_so(tmp_path):
    log = base("press")
    log.speed[:] = log.speed.mean()
    res = analyse_cycles(log.write(tmp_path / "d.csv"), _opts(log))
    assert res.summary["cs"]["median"] is None
    assert any("speed channel holds one value from the start" in n for n in res.notes)
    # with the speed taken as constant the angle ignores the press's speed swing (Cs about
    # 0.12), so E(θ) is weighted wrongly within the cycle: ΔE is off by up to about Cs,
    # as the note says
    clean = clean_stats("press", tmp_path)
    assert res.summary["energy_swing_J"]["median"] == pytest.approx(clean["de_median"],
                                                                    rel=clean["cs_median"])


def test_aperiodic_log_with_speed_channel_is_refused_with_the_figure(tmp_path):
    rng = np.random.default_rng(11)
    t = np.arange(0, 30, 1e-3)
    log = Log(t, 5000 + 2000 * rng.standard_normal(t.size),
              5.0 + 0.05 * rng.standard_normal(t.size), 1, 1.0, [])
    with pytest.raises(DataError, match=r"a\.csv: the log is not cyclic: over \d+ clean "
                                        r"cycles the mean cycle explains \d+% of the torque "
                                        r"variation within cycles"):
        analyse_cycles(log.write(tmp_path / "a.csv"), _opts(log))


def test_aperiodic_torque_only_log_is_refused_with_the_figure(tmp_path):
    rng = np.random.default_rng(12)
    t = np.arange(0, 30, 1e-3)
    log = Log(t, 5000 + 2000 * rng.standard_normal(t.size), t * 0, 1, 1.0, [])
    with pytest.raises(DataError, match=r"no periodicity found \(best autocorrelation peak "
                                        r"0\.\d\d"):
        analyse_cycles(log.write(tmp_path / "a.csv", speed=False), _opts(log))


def test_stopped_log_is_refused_with_the_real_reason(tmp_path):
    log = base("press")
    log = stop_restart(log, at=0.02, still=40.0)
    log.t, log.speed, log.torque = log.t[:45_000], log.speed[:45_000], log.torque[:45_000]
    with pytest.raises(DataError, match=r"no running stretch holds 2 clean cycles .*"
                                        r"not running: 1 stretch\(es\), stop"):
        analyse_cycles(log.write(tmp_path / "s.csv"), _opts(log))


def test_reversal_keeps_the_good_cycles_before_it(tmp_path):
    # the case: 7 good cycles, then the shaft turns back
    log = base("press")
    log = reversal(log, at=0.45)
    res = analyse_cycles(log.write(tmp_path / "r.csv"), _opts(log))
    segs = res.summary["segments"]
    assert segs[0]["clean"] >= 6 and segs[-1]["clean"] >= 6
    assert res.summary["not_running"][0]["what"].startswith("reversal")


def test_torque_only_log_with_spike_run_and_inf(tmp_path):
    # no speed channel: cycles from the torque's own period; faults still flagged
    log = infinite(spike_run(base("compressor"), at=0.3), at=0.6)
    res = analyse_cycles(log.write(tmp_path / "t.csv", speed=False), _opts(log))
    assert res.options["cycle_source"] == "period"
    clean = clean_stats("compressor", tmp_path)
    check_flagged(res, log, stats_of={"de_median": clean["de_median"],
                                      "de_p95": clean["de_p95"]})


# ------------------------------------------------------------------ hypothesis
@settings(derandomize=True, deadline=None, max_examples=12)
@given(kind=st.sampled_from(["dropout", "frozen", "spikes", "stop", "gap", "nan"]),
       at=st.floats(0.1, 0.85), size=st.integers(1, 8))
def test_random_faults_on_the_compressor(kind, at, size, tmp_path_factory):
    tmp = tmp_path_factory.mktemp("hyp")
    log = base("compressor")
    if kind == "dropout":
        log = speed_dropout(log, at=at, revs=size / 2)
    elif kind == "frozen":
        log = speed_frozen(log, at=at, revs=0.5 + size / 2)
    elif kind == "spikes":
        log = spike_run(log, at=at, n=min(size + 1, 8))
    elif kind == "stop":
        log = stop_restart(log, at=at, down=0.1 * size, still=0.2 * size)
    elif kind == "gap":
        log = gap(log, at=at, secs=0.05 * size)
    else:
        log = nan_run(log, at=at, n=3 + 10 * size)
    res = analyse_cycles(log.write(tmp / "h.csv"), _opts(log))
    check_flagged(res, log, stats_of=clean_stats("compressor", tmp))


# ------------------------------------------------------------------ the commands
CLI_CASES = {
    "spike run": lambda g: spike_run(g, n=4),
    "speed dropout": lambda g: speed_dropout(g),
    "±inf": lambda g: infinite(g),
    "stop": lambda g: stop_restart(g),
}


@pytest.mark.parametrize("name", list(CLI_CASES))
def test_commands_agree_on_a_faulty_log(name, tmp_path):
    log = CLI_CASES[name](base("press"))
    path = log.write(tmp_path / "p.csv")
    run = CliRunner().invoke
    cyc = run(cli, ["cycles", path, "--format", "json"])
    assert cyc.exit_code == 0, cyc.output
    summary = json.loads(cyc.stdout)["summary"]
    assert summary["flagged"] >= 1
    size = run(cli, ["size", path, "--target-cs", "0.05", "--format", "json"])
    assert size.exit_code == 0, size.output
    assert json.loads(size.stdout)["cycles_used"] == summary["cycles"]
    clean = clean_stats("press", tmp_path)
    assert json.loads(size.stdout)["design_energy_swing_J"] == pytest.approx(
        clean["de_p95"], rel=0.005)
    trend = run(cli, ["trend", path, "--start", "2026-03-02T06:00:00", "--format", "json"])
    assert trend.exit_code == 0, trend.output
    g = json.loads(trend.stdout)["shifts"][0]
    assert g["flagged_share"] > 0
    assert g["torque_peak_Nm_p99"] < 2 * float(np.max(base("press").torque))
    insp = run(cli, ["inspect", path, "--format", "json"])
    assert insp.exit_code == 0, insp.output
    assert "Warning" not in insp.stderr and "RuntimeWarning" not in cyc.stderr


# ------------------------------------------------------------------ other cycle sources
def test_torque_only_stop_is_flagged_and_reported(tmp_path):
    # no speed channel: cycles from the torque's period; a stretch where the torque hardly
    # moves is a stop (torqlog.signal.health.QUIET_SHARE, common practice)
    log = stop_restart(base("compressor"), at=0.5)
    res = analyse_cycles(log.write(tmp_path / "q.csv", speed=False), _opts(log))
    assert res.options["cycle_source"] == "period"
    assert res.summary["flags"].get("stop", 0) >= 15
    assert "torque quiet" in res.summary["not_running"][0]["what"]
    clean = clean_stats("compressor", tmp_path)
    assert res.summary["energy_swing_J"]["median"] == pytest.approx(clean["de_median"],
                                                                    rel=0.005)


def test_angle_channel_reversal_is_flagged(tmp_path):
    sim = simulate("compressor", duration=8.0, rate=RATE, seed=3, channels="torque,angle")
    d = sim.data
    th = d["angle"].to_numpy().copy()
    i = 4000
    back = 1.5 * np.sin(np.linspace(0, np.pi, 300))  # turns back 1.5 rad and forward again
    th[i:i + 300] = th[i] - back
    th[i + 300:] = th[i + 300:] - (th[i + 300] - th[i])
    wrapped = np.mod(th, 2 * np.pi)
    path = tmp_path / "a.csv"
    np.savetxt(path, np.column_stack((d["time"], d["torque"], np.degrees(wrapped))),
               delimiter=",", header="time_s,torque_Nm,angle_deg", comments="", fmt="%.9g")
    res = analyse_cycles(str(path))
    assert res.options["cycle_source"] == "angle"
    flag = res.columns["flag"]
    a = res.columns["t_start_s"]
    b = a + res.columns["duration_s"]
    t0, t1 = d["time"][i], d["time"][i + 299]
    touch = (a <= t1) & (b >= t0)
    assert touch.any() and all("reversal" in f for f in flag[touch]), list(flag[touch])
    assert res.summary["not_running"][0]["what"] == "reversal"
    far = (b < t0 - 0.2) | (a > t1 + 0.2)
    assert np.all(flag[far] == "")


def test_index_source_missed_pulse_flags_the_merged_cycle(tmp_path):
    sim = simulate("press", duration=16.0, rate=RATE, seed=3, channels="torque,index")
    d = sim.data
    idx = d["index"].to_numpy().copy()
    hi = idx > 0.5 * (idx.max() + idx.min())
    starts = _starts(hi)
    k = starts[len(starts) // 2]  # blank one pulse: two revolutions read as one
    e = _ends(hi)[len(starts) // 2]
    idx[k:e + 1] = np.median(idx)
    path = tmp_path / "i.csv"
    np.savetxt(path, np.column_stack((d["time"], d["torque"], idx)), delimiter=",",
               header="time_s,torque_Nm,index_V", comments="", fmt="%.9g")
    res = analyse_cycles(str(path))
    assert res.options["cycle_source"] == "index"
    flag = res.columns["flag"]
    merged = np.flatnonzero(res.columns["duration_s"] > 1.5 * np.median(
        res.columns["duration_s"]))
    assert merged.size == 1 and "length" in flag[merged[0]]
    assert np.sum(flag != "") <= 2


@pytest.mark.parametrize(("name", "make"), [
    ("torque spike run", lambda g, at: spike_run(g, at=at, n=6)),
    ("speed spike run", lambda g, at: spike_run(g, at=at, n=3, channel="speed", height=3.0)),
    ("speed dropout", lambda g, at: speed_dropout(g, at=at)),
    ("stop", lambda g, at: stop_restart(g, at=at)),
])
@pytest.mark.parametrize("offset", [-3, 0, 2])
def test_faults_across_a_chunk_boundary(name, make, offset, tmp_path):
    # the log is read in chunks of 2 000 rows; the fault starts a few samples before, on
    # or after a boundary, and must be found whole
    import dataclasses

    log = base("compressor")
    log = make(log, (4000 + offset) / log.t.size)
    opts = dataclasses.replace(_opts(log), block_rows=2000)
    res = analyse_cycles(log.write(tmp_path / "b.csv"), opts)
    check_flagged(res, log, stats_of=clean_stats("compressor", tmp_path))


@pytest.mark.parametrize("machine", ["press", "compressor", "engine"])
def test_dropout_bridge_keeps_the_phase_of_later_cycles(machine, tmp_path):
    # the speed is bridged by the cycle before before the angle is integrated, so the
    # cycles after the dropout line up with those before: the mean cycle's ΔE (which a
    # phase slip would smear) stays within 0.1 % of the fault-free log's
    clean = base(machine)
    ref = analyse_cycles(clean.write(tmp_path / "c.csv"), _opts(clean))
    log = speed_dropout(base(machine), at=0.3, revs=3)
    res = analyse_cycles(log.write(tmp_path / "d.csv"), _opts(log))
    assert np.ptp(res.energy_curve()) == pytest.approx(np.ptp(ref.energy_curve()), rel=1e-3)
