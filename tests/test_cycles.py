"""Cycle engine against closed forms, scipy as an independent solver, and bad input.

References used below:
- Budynas & Nisbett, *Shigley's Mechanical Engineering Design*, 10th ed., sec. 16-12:
  energy swing ΔE = max − min of ∫(T − T̄)dθ, Cs = (ω_max − ω_min)/ω̄ and the
  small-fluctuation relation ΔE ≈ I·Cs·ω̄² (eq. 16-62).
- scipy.integrate.cumulative_trapezoid and scipy.integrate.solve_ivp as independent
  integrators.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner
from scipy.integrate import cumulative_trapezoid, solve_ivp

from torqlog.cli import cli
from torqlog.errors import DataError
from torqlog.signal.cycles import COLUMNS, CycleOptions, analyse_cycles

TWO_PI = 2 * math.pi
SAMPLE_DATA = Path(__file__).resolve().parents[1] / "sample_data"


def write_csv(path, columns: dict[str, np.ndarray], fmt: str = "%.9g") -> str:
    header = ",".join(columns)
    data = np.column_stack(list(columns.values()))
    np.savetxt(path, data, delimiter=",", header=header, comments="", fmt=fmt)
    return str(path)


def sine_log(tmp_path, *, amplitude=500.0, k=2, mean=1000.0, rpm=60.0, fs=1000.0,
             seconds=20.0, noise=0.02, seed=0):
    rng = np.random.default_rng(seed)
    t = np.arange(0, seconds, 1 / fs)
    w = rpm * TWO_PI / 60
    th = w * t
    torque = mean + amplitude * np.sin(k * th) + rng.normal(0, noise * amplitude, t.size)
    speed = np.full(t.size, rpm)
    return write_csv(tmp_path / "sine.csv", {"time_s": t, "torque_Nm": torque,
                                              "speed_rpm": speed})


# --------------------------------------------------------------------------- accuracy
def test_single_harmonic_energy_swing_closed_form(tmp_path):
    # T = T̄ + A·sin(kθ) at constant speed: E(θ) = ∫0^θ A·sin(kφ)dφ = (A/k)(1 − cos kθ),
    # which runs from 0 (cos kθ = 1) to 2A/k (cos kθ = −1), so ΔE = 2A/k exactly
    # (Shigley sec. 16-12 defines ΔE as the max − min of this integral).
    path = sine_log(tmp_path, amplitude=500.0, k=2)
    res = analyse_cycles(path)
    expected = 2 * 500.0 / 2
    assert res.summary["cycles"] == 19
    assert res.summary["energy_swing_J"]["median"] == pytest.approx(expected, rel=0.005)
    assert res.options["cycle_source"] == "speed"


def test_multi_harmonic_against_dense_scipy_integral(tmp_path):
    # Reference: E(θ) of the same torque by scipy's cumulative_trapezoid on a grid 100×
    # denser than the log (no noise, constant speed 90 rpm, 1 kHz).
    rpm, fs = 90.0, 1000.0
    w = rpm * TWO_PI / 60

    def torque_of(th):
        return 2000 + 800 * np.sin(th) + 300 * np.sin(3 * th + 0.7) + 120 * np.cos(5 * th)

    t = np.arange(0, 12, 1 / fs)
    path = write_csv(tmp_path / "multi.csv", {"time_s": t, "torque_Nm": torque_of(w * t),
                                              "speed_rpm": np.full(t.size, rpm)})
    res = analyse_cycles(path)
    dense = np.linspace(0, TWO_PI, 100 * int(fs * 60 / rpm) + 1)
    tq = torque_of(dense)
    e = cumulative_trapezoid(tq - np.trapezoid(tq, dense) / TWO_PI, dense, initial=0)
    expected = e.max() - e.min()
    got = res.clean["energy_swing_J"].to_numpy()
    assert np.all(np.abs(got / expected - 1) < 0.005)


def _ode_log(tmp_path, inertia=60.0, rpm=300.0, fs=2000.0, seconds=16.0, mean=1500.0):
    # I·dω/dt = T̄ − T(θ): the load torque T(θ) against a constant drive T̄, integrated
    # independently with scipy's solve_ivp (DOP853, tight tolerances).
    def load(th):
        return mean + 700 * np.sin(th) + 250 * np.sin(2 * th + 0.5)

    def rhs(_t, y):
        return [y[1], (mean - load(y[0])) / inertia]

    t = np.arange(0, seconds, 1 / fs)
    sol = solve_ivp(rhs, (0, seconds), [0.0, rpm * TWO_PI / 60], t_eval=t, method="DOP853",
                    rtol=1e-11, atol=1e-11)
    th, w = sol.y
    return t, th, w, load(th)


def test_speed_log_cs_against_solve_ivp(tmp_path):
    inertia = 60.0
    t, th, w, torque = _ode_log(tmp_path, inertia=inertia)
    path = write_csv(tmp_path / "ode.csv", {"time_s": t, "torque_Nm": torque,
                                            "speed_rad_s": w})
    res = analyse_cycles(path, CycleOptions(inertia=inertia))
    # integrator's own Cs over each whole revolution after the first
    rev = np.floor(th / TWO_PI).astype(int)
    own = []
    for r in range(1, rev.max()):
        m = rev == r
        own.append((w[m].max() - w[m].min()) / (TWO_PI / (t[m][-1] - t[m][0]) * 1.0))
    own_cs = float(np.median(own))
    assert own_cs < 0.05
    assert res.summary["cs"]["median"] == pytest.approx(own_cs, rel=0.03)
    # small-fluctuation relation ΔE ≈ I·Cs·ω̄² (Shigley eq. 16-62): cs_constant_drive
    assert float(res.clean["cs_constant_drive"].median()) == pytest.approx(own_cs, rel=0.05)


def test_every_cycle_source_gives_the_same_energy_swing(tmp_path):
    # The same simulated machine logged with all channels; each source alone must agree
    # within 1 % (energy swing is phase independent over a whole cycle).
    inertia = 60.0
    t, th, w, torque = _ode_log(tmp_path, inertia=inertia)
    wrapped = np.degrees(np.mod(th, TWO_PI))
    index = np.where(np.mod(th, TWO_PI) < 0.08, 5.0, 0.0)
    counts = np.floor(th / TWO_PI * 3600)
    path = write_csv(tmp_path / "all.csv", {
        "time_s": t, "torque_Nm": torque, "speed_rad_s": w, "angle_deg": wrapped,
        "index_V": index, "counts": counts})
    values = {}
    for source in ("angle", "index", "counts", "speed", "nominal", "period"):
        res = analyse_cycles(path, CycleOptions(cycle_source=source, nominal_speed=w.mean(),
                                                pulses_per_rev=3600))
        assert res.options["cycle_source"] == source
        values[source] = res.summary["energy_swing_J"]["median"]
    ref = values["angle"]
    for source, v in values.items():
        assert v == pytest.approx(ref, rel=0.01), source


def test_streaming_matches_whole_file(tmp_path):
    t, th, w, torque = _ode_log(tmp_path)
    path = write_csv(tmp_path / "s.csv", {"time_s": t, "torque_Nm": torque, "speed_rad_s": w})
    whole = analyse_cycles(path, CycleOptions(block_rows=10_000_000))
    small = analyse_cycles(path, CycleOptions(block_rows=700))  # cycles span many chunks
    assert len(small.table) == len(whole.table) == 78
    np.testing.assert_allclose(small.table["energy_swing_J"], whole.table["energy_swing_J"],
                               rtol=1e-9)
    # the speed filter reaches a fixed number of angle bins and each chunk keeps that
    # much context and look-ahead: Cs does not depend on the chunking
    for k in ("cs", "speed_max_rpm", "speed_min_rpm"):
        np.testing.assert_allclose(small.table[k], whole.table[k], rtol=1e-9, err_msg=k)


@pytest.mark.parametrize(("log", "cutoff"), [("compressor_semicolon.csv", 20.0),
                                             ("press_comma.csv", 2.0)])
def test_every_column_independent_of_block_size(log, cutoff):
    # The same file read in one chunk and in chunks of 997 rows (a cycle spans several):
    # every per-cycle column equal to 1e-9, Cs and the speed extremes included, and the
    # shape scores and flags identical. A 2-order cut-off makes the filter reach several
    # cycles, so the engine must hold back more than its usual two.
    path = SAMPLE_DATA / log
    whole = analyse_cycles(path, CycleOptions(block_rows=10_000_000,
                                              speed_cutoff_orders=cutoff))
    small = analyse_cycles(path, CycleOptions(block_rows=997, speed_cutoff_orders=cutoff))
    assert small.columns["cycle"].size == whole.columns["cycle"].size > 40
    for k in COLUMNS:
        a, b = whole.columns[k], small.columns[k]
        if a.dtype.kind == "f":
            np.testing.assert_allclose(b, a, rtol=1e-9, atol=1e-12, err_msg=k)
        elif k != "start_time":
            assert b.tolist() == a.tolist(), k
    assert np.isfinite(whole.columns["cs"]).all()
    for k in ("torque_mean", "speed_mean"):
        np.testing.assert_allclose(small.mean[k], whole.mean[k], rtol=1e-9, err_msg=k)


def test_four_stroke_cycle_of_two_revolutions(tmp_path):
    # A torque periodic in 720° (half orders): with revs_per_cycle=2 the cycle lasts two
    # revolutions and ΔE of T̄ + A·sin(θ/2) is 2A/(1/2) = 4A (closed form as above).
    t = np.arange(0, 10, 1e-3)
    th = TWO_PI * 10 * t  # 600 rpm
    path = write_csv(tmp_path / "e.csv", {"time_s": t, "torque_Nm": 100 + 30 * np.sin(th / 2),
                                          "speed_rpm": np.full(t.size, 600.0)})
    res = analyse_cycles(path, CycleOptions(revs_per_cycle=2))
    assert res.summary["cycle_rate_per_min"] == pytest.approx(300.0, rel=1e-6)
    assert res.summary["energy_swing_J"]["median"] == pytest.approx(120.0, rel=0.005)
    assert res.mean_cycle["angle"].iloc[-1] < 4 * math.pi


def test_flags_gap_nan_and_clipped(tmp_path):
    t = np.arange(0, 10, 1e-3)
    th = TWO_PI * 2 * t
    # 120 rpm: cycle k spans (k − 1)·0.5 s to k·0.5 s
    torque = 100 + 40 * np.sin(th)
    torque[2300:2310] = np.nan                       # NaNs in cycle 5
    late = t >= 4.0                                  # a sensor saturating at 139 N·m
    torque[late] = np.minimum(torque[late], 139.0)   # from cycle 9 on
    keep = (t < 3.2) | (t > 3.4)                     # a gap in cycle 7
    path = write_csv(tmp_path / "f.csv", {"time_s": t[keep], "torque_Nm": torque[keep],
                                          "speed_rpm": np.full(keep.sum(), 120.0)})
    res = analyse_cycles(path)
    flags = dict(zip(res.table["cycle"], res.table["flag"], strict=True))
    assert flags[5] == "nan"
    assert flags[7] == "gap"
    assert flags[1] == flags[8] == ""
    assert all(flags[k] == "clipped" for k in range(9, 20))
    assert res.summary["cycles"] == 19 - 2 - 11
    assert res.summary["flags"] == {"clipped": 11, "nan": 1, "gap": 1}


def test_json_contract(tmp_path):
    path = sine_log(tmp_path, seconds=5)
    res = CliRunner().invoke(cli, ["cycles", path, "--format", "json"])
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    assert set(d) >= {"source", "options", "cycles", "summary"}
    assert list(d["cycles"][0]) == list(COLUMNS)
    assert set(d["summary"]["energy_swing_J"]) == {"median", "p95", "max"}
    assert d["options"]["speed_cutoff_orders"] == 20.0
    assert d["summary"]["cycles"] == len(d["cycles"]) == 4


def test_speed_only_log_without_inertia_leaves_energy_swing_empty(tmp_path):
    t, th, w, _ = _ode_log(tmp_path)
    path = write_csv(tmp_path / "w.csv", {"time_s": t, "speed_rad_s": w})
    res = analyse_cycles(path)
    assert res.table["energy_swing_J"].isna().all()
    assert "needs the inertia" in res.notes[0]
    with_i = analyse_cycles(path, CycleOptions(inertia=60.0))
    # ½·I·(ω_max² − ω_min²) ≈ I·Cs·ω̄² (Shigley eq. 16-62) against the torque's own ΔE
    _, _, _, torque = _ode_log(tmp_path)
    ref = analyse_cycles(write_csv(tmp_path / "q.csv", {"time_s": t, "torque_Nm": torque,
                                                        "speed_rad_s": w}))
    assert with_i.summary["energy_swing_J"]["median"] == pytest.approx(
        ref.summary["energy_swing_J"]["median"], rel=0.01)


# --------------------------------------------------------------------------- bad input
def test_shorter_than_two_cycles(tmp_path):
    path = sine_log(tmp_path, seconds=1.5)
    res = CliRunner().invoke(cli, ["cycles", path])
    assert res.exit_code == 1
    assert res.stderr == (f"Error: {path}: the log holds 1 complete cycle(s); at least 2 are "
                          "needed — record a longer log (cycle source 'speed', 1 rev per "
                          "cycle)\n")


def test_aperiodic_torque_only_log_is_refused(tmp_path):
    rng = np.random.default_rng(3)
    t = np.arange(0, 5, 1e-3)
    path = write_csv(tmp_path / "noise.csv", {"time_s": t,
                                              "torque_Nm": rng.normal(0, 1, t.size)})
    res = CliRunner().invoke(cli, ["cycles", path])
    assert res.exit_code == 1
    assert res.stderr.startswith(f"Error: {path}: no periodicity found (best autocorrelation "
                                 "peak 0.")
    assert res.stderr.endswith("the signal is not cyclic — give --speed-rpm or a speed/angle "
                               "channel\n")


def test_period_estimate_of_a_torque_only_log(tmp_path):
    t = np.arange(0, 8, 1e-3)
    th = TWO_PI * 1.5 * t
    rng = np.random.default_rng(5)
    path = write_csv(tmp_path / "p.csv", {"time_s": t, "torque_Nm": 500 + 200 * np.sin(th)
                                          + 50 * np.sin(3 * th) + rng.normal(0, 4, t.size)})
    res = analyse_cycles(path)
    assert res.options["cycle_source"] == "period"
    # sub-sample accuracy: 1e-3 of a 667-sample period is 0.67 samples
    assert res.options["period_s"] == pytest.approx(1 / 1.5, rel=1e-3)
    assert res.options["period_confidence"] > 0.9
    # E(θ) = −200·cos θ − (50/3)·cos 3θ + c: max at θ = π, min at 0, ΔE = 2·(200 + 50/3)
    assert res.summary["energy_swing_J"]["median"] == pytest.approx(2 * (200 + 50 / 3),
                                                                     rel=0.01)


def test_cycle_source_the_file_lacks(tmp_path):
    path = sine_log(tmp_path, seconds=3)
    res = CliRunner().invoke(cli, ["cycles", path, "--cycle-source", "index"])
    assert res.exit_code == 1
    assert res.stderr == (f"Error: {path}: cycle source 'index' needs a index channel, which "
                          "the log lacks; available: speed, period\n")


def test_no_torque_no_speed_channel(tmp_path):
    t = np.arange(0, 3, 1e-3)
    path = write_csv(tmp_path / "i.csv", {"time_s": t, "index_V": (np.mod(t, 0.5) < 0.01) * 5})
    with pytest.raises(DataError, match="no torque or speed channel"):
        analyse_cycles(path)


def test_size_needs_torque_or_inertia(tmp_path):
    t, th, w, _ = _ode_log(tmp_path, seconds=6)
    path = write_csv(tmp_path / "w.csv", {"time_s": t, "speed_rad_s": w})
    res = CliRunner().invoke(cli, ["size", path, "--target-cs", "0.01"])
    assert res.exit_code in (1, 2)
    assert "a speed-only log needs the existing inertia" in res.stderr


def test_isolated_missing_samples_are_filled_not_flagged(tmp_path):
    # one- and two-sample dropouts are filled by interpolation and the cycle kept; a run
    # of three or more flags its cycle (common practice, torqlog.signal.condition.NAN_REPAIR_RUN)
    t = np.arange(0, 5, 1e-3)
    torque = 100 + 40 * np.sin(TWO_PI * 2 * t)
    torque[[100, 700, 701, 1300]] = np.nan          # cycle 1: single, double; cycle 3: single
    torque[2600:2603] = np.nan                      # cycle 6: a run of three
    path = write_csv(tmp_path / "n.csv", {"time_s": t, "torque_Nm": torque,
                                          "speed_rpm": np.full(t.size, 120.0)})
    res = analyse_cycles(path)
    flags = dict(zip(res.table["cycle"], res.table["flag"], strict=True))
    assert flags[1] == flags[3] == ""
    assert flags[6] == "nan"
    assert res.summary["flags"] == {"nan": 1}
    assert res.notes[0].startswith("4 isolated missing sample(s) (runs of at most 2) filled")
    assert res.summary["energy_swing_J"]["median"] == pytest.approx(2 * 40, rel=0.005)
