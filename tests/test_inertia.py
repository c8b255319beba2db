"""Inertia sizing, bootstrap interval and identification, checked against outside references.

Scenario (invented): presses and a compressor at Brindlemoor Works.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from scipy.integrate import cumulative_trapezoid, solve_ivp

from torqlog.errors import DataError, UsageError
from torqlog.sizing.drive import MotorModel
from torqlog.sizing.identify import identify_inertia
from torqlog.sizing.inertia import (
    MACHINE_CLASSES,
    bootstrap_ci,
    design_energy_swing,
    required_inertia,
    size_from_cycles,
    swing_energy_from_speed,
    target_cs_for,
)

RPM = 2.0 * math.pi / 60.0
TO_RPM = 1.0 / RPM


def cycle_table(energy_swing, speed_mean, speed_min=None, speed_max=None, flags=None,
                torque=True):
    """A per-cycle table in the cycle engine's layout, built by hand."""
    n = len(energy_swing)
    w = np.broadcast_to(np.asarray(speed_mean, dtype=float), (n,))
    wmin = w * 0.98 if speed_min is None else np.broadcast_to(speed_min, (n,))
    wmax = w * 1.02 if speed_max is None else np.broadcast_to(speed_max, (n,))
    nan = np.full(n, np.nan)
    return pd.DataFrame({
        "cycle": np.arange(n),
        "t_start_s": np.arange(n) * 1.3,
        "duration_s": np.full(n, 1.3),
        "speed_mean_rpm": w * TO_RPM,
        "speed_min_rpm": np.asarray(wmin) * TO_RPM,
        "speed_max_rpm": np.asarray(wmax) * TO_RPM,
        "torque_mean_Nm": np.full(n, 1000.0) if torque else nan,
        "torque_peak_Nm": np.full(n, 1800.0) if torque else nan,
        "torque_min_Nm": np.full(n, 200.0) if torque else nan,
        "work_J": np.full(n, 6283.0) if torque else nan,
        "energy_swing_J": np.asarray(energy_swing, dtype=float) if torque else nan,
        "cs": nan,
        "cs_constant_drive": nan,
        "flag": [""] * n if flags is None else flags,
    })


# ------------------------------------------------------------------ formulas
def test_required_inertia_single_harmonic_closed_form():
    # Load torque T(θ) = T̄ + A·sin(kθ). The energy E(θ) = ∫₀^θ (T − T̄) dθ' =
    # (A/k)·(1 − cos kθ), which runs from 0 to 2A/k, so ΔE = 2A/k (Shigley, flywheel
    # section: the energy swing is max − min of the integrated torque fluctuation) and
    # I = ΔE/(Cs·ω̄²) = 2A/(k·Cs·ω̄²).
    amp, order, tbar = 600.0, 3, 1500.0
    theta = np.linspace(0.0, 2 * math.pi, 20001)
    torque = tbar + amp * np.sin(order * theta)
    energy = cumulative_trapezoid(torque - torque.mean(), theta, initial=0.0)
    swing = float(energy.max() - energy.min())           # measured from samples
    w, cs = 45 * RPM, 0.05
    table = cycle_table(np.full(40, swing), w)
    res = size_from_cycles(table, target_cs=cs, existing_inertia=None, n_boot=200)
    closed = 2 * amp / (order * cs * w ** 2)
    assert res.required_inertia == pytest.approx(closed, rel=5e-3)
    assert required_inertia(2 * amp / order, cs, w) == pytest.approx(closed, rel=1e-12)
    assert res.method == "torque"


def test_swing_energy_from_speed_and_proportional_rule():
    # ½·I·(ω_max² − ω_min²) = I·ω̄·(ω_max − ω_min) when ω̄ = (ω_max + ω_min)/2, so
    # the required inertia scales as I_req = I_existing·Cs_now/Cs_target (Shigley,
    # flywheel section, ΔE = I·Cs·ω̄²).
    w, cs_now, inertia = 45 * RPM, 0.12, 310.0
    wmin, wmax = w * (1 - cs_now / 2), w * (1 + cs_now / 2)
    assert swing_energy_from_speed(inertia, wmax, wmin) == pytest.approx(
        inertia * cs_now * w ** 2, rel=1e-12)
    table = cycle_table(np.zeros(30), w, speed_min=wmin, speed_max=wmax, torque=False)
    res = size_from_cycles(table, target_cs=0.04, existing_inertia=inertia, n_boot=200)
    assert res.method == "speed"
    assert res.required_inertia == pytest.approx(inertia * cs_now / 0.04, rel=1e-9)
    assert res.added_inertia == pytest.approx(inertia * (cs_now / 0.04 - 1), rel=1e-9)


def test_design_energy_swing_quantile_and_max():
    values = np.arange(1.0, 101.0)
    # numpy's default (linear) quantile of 1..100 at 0.95: 1 + 0.95·99 = 95.05
    assert design_energy_swing(values, 0.95) == pytest.approx(95.05)
    assert design_energy_swing(values, "max") == 100.0
    assert design_energy_swing(np.append(values, np.nan), 1.0) == 100.0


def test_flagged_cycles_left_out_and_flywheel_ratio():
    w = 45 * RPM
    swings = np.r_[np.full(30, 1000.0), np.full(5, 1e6)]
    flags = [""] * 30 + ["gap"] * 5
    res = size_from_cycles(cycle_table(swings, w, flags=flags), target_cs=0.05,
                           existing_inertia=100.0, flywheel_speed_ratio=3.0, n_boot=200)
    assert res.cycles_used == 30
    assert res.design_energy_swing == pytest.approx(1000.0)
    d = res.to_dict()
    assert d["added_inertia_at_flywheel_kgm2"] == pytest.approx(d["added_inertia_kgm2"] / 9)


def test_to_dict_contract_and_cautions():
    res = size_from_cycles(cycle_table(np.full(30, 1000.0), 45 * RPM), target_cs=0.05,
                           existing_inertia=100.0, n_boot=200)
    d = res.to_dict()
    # the headline first, then the check, the bound and the machine now/after
    assert list(d)[:5] == ["model", "model_reason", "required_inertia_kgm2",
                           "added_inertia_kgm2", "ci95_kgm2"]
    assert {"cs_measured", "cs_model_existing", "cs_model_error_rel",
            "drive_slope_Nms_per_rad", "drive_slope_se_Nms_per_rad", "ci95_parts_kgm2",
            "bound_constant_drive_required_inertia_kgm2", "machine_now", "machine_after",
            "method", "target_cs", "speed_mean_rpm", "design_energy_swing_J", "quantile",
            "existing_inertia_kgm2", "flywheel_speed_ratio", "added_inertia_at_flywheel_kgm2",
            "cycles_used", "identified", "drive", "messages", "cautions", "options"} <= set(d)
    # no torque over a mean cycle: the constant-drive bound leads, labelled
    assert d["model"] == "constant drive"
    assert "upper bound" in d["model_reason"]
    assert d["required_inertia_kgm2"] == d["bound_constant_drive_required_inertia_kgm2"]
    assert d["speed_mean_rpm"] == pytest.approx(45.0)
    assert d["identified"] is None and d["drive"] is None
    assert any("`torqlog shaft`" in c for c in d["cautions"])
    assert any("`torqlog flywheel`" in c for c in d["cautions"])
    assert any("qualified, licensed engineer" in c for c in d["cautions"])


def test_already_meets_target_floors_added_inertia():
    res = size_from_cycles(cycle_table(np.full(30, 100.0), 45 * RPM), target_cs=0.1,
                           existing_inertia=5000.0, n_boot=200)
    assert res.added_inertia == 0.0
    assert any(m.startswith("nothing to add: the machine already meets Cs ≤ 0.1")
               for m in res.messages)


def test_machine_class_table():
    # Norton, Design of Machinery, flywheel section, typical Cs (values from memory):
    # shearing machinery 0.03–0.05, crushing machinery 0.2.
    assert target_cs_for("shearing-machinery") == 0.03
    assert target_cs_for("Crushing machinery") == 0.2
    assert len(MACHINE_CLASSES) == 13
    with pytest.raises(TypeError):
        MACHINE_CLASSES["press"] = (0.1, 0.1)  # read-only


# ------------------------------------------------------------------ bad input
@pytest.mark.parametrize("cs, text", [
    (0.0, "target Cs must be between 0 and 1 (exclusive), got 0"),
    (-0.1, "target Cs must be between 0 and 1 (exclusive), got -0.1"),
    (1.0, "target Cs must be between 0 and 1 (exclusive), got 1"),
])
def test_bad_target_cs_message(cs, text):
    with pytest.raises(UsageError) as exc:
        size_from_cycles(cycle_table(np.full(5, 1.0), 5.0), target_cs=cs)
    assert str(exc.value) == text


@pytest.mark.parametrize("q, text", [
    (0.0, "quantile must be in (0, 1] or 'max', got 0.0"),
    (1.5, "quantile must be in (0, 1] or 'max', got 1.5"),
    ("median", "quantile must be in (0, 1] or 'max', got 'median'"),
])
def test_bad_quantile_message(q, text):
    with pytest.raises(UsageError) as exc:
        size_from_cycles(cycle_table(np.full(5, 1.0), 5.0), target_cs=0.05, quantile=q)
    assert str(exc.value) == text


def test_speed_only_without_inertia_message():
    table = cycle_table(np.zeros(10), 5.0, torque=False)
    with pytest.raises(UsageError) as exc:
        size_from_cycles(table, target_cs=0.05)
    assert str(exc.value) == ("a speed-only log needs the existing inertia (--inertia or "
                              "[machine] inertia_kgm2) to size a flywheel")


def test_unknown_machine_class_lists_valid_names():
    with pytest.raises(UsageError) as exc:
        target_cs_for("toaster")
    assert str(exc.value) == ("unknown machine class 'toaster'; valid names: "
                              + ", ".join(MACHINE_CLASSES))
    assert "shearing-machinery" in str(exc.value)


def test_no_clean_cycles_and_bad_method_messages():
    table = cycle_table(np.full(4, 1.0), 5.0, flags=["spike"] * 4)
    with pytest.raises(DataError) as exc:
        size_from_cycles(table, target_cs=0.05)
    assert str(exc.value) == ("no clean cycles to size from: every cycle is flagged (see the "
                              "flag column)")
    with pytest.raises(UsageError) as exc:
        size_from_cycles(cycle_table(np.full(4, 1.0), 5.0), target_cs=0.05, method="angle")
    assert str(exc.value) == "unknown method 'angle'; valid choices: torque, speed"


# ------------------------------------------------------------------ bootstrap
def test_bootstrap_interval_covers_true_value():
    # Percentile bootstrap (Efron & Tibshirani, An Introduction to the Bootstrap, 1993).
    # Per-cycle ΔE ~ lognormal(median 2000 J, σ_log 0.25); the true design swing is the
    # distribution's 95th percentile (scipy.stats), so the true I_req is known exactly.
    dist = stats.lognorm(s=0.25, scale=2000.0)
    w, cs = 45 * RPM, 0.05
    true_i = dist.ppf(0.95) / (cs * w ** 2)
    hits = 0
    for k in range(50):
        rng = np.random.default_rng(1000 + k)
        swings = dist.rvs(size=300, random_state=rng)
        lo, hi = bootstrap_ci(swings, w, target_cs=cs, quantile=0.95, n_boot=1000, seed=k)
        hits += lo <= true_i <= hi
    assert hits >= 45


def test_bootstrap_is_seeded_and_ordered():
    swings = np.random.default_rng(3).gamma(4.0, 250.0, size=120)
    a = bootstrap_ci(swings, 5.0, target_cs=0.05, seed=7, n_boot=500)
    b = bootstrap_ci(swings, 5.0, target_cs=0.05, seed=7, n_boot=500)
    assert a == b and a[0] < a[1]


# ------------------------------------------------------------------ identification
def simulate_log(inertia, slope, w0, fs, seconds, seed, speed_noise=1e-3, torque_noise=1e-2):
    """Time-domain log from scipy's solve_ivp: linear motor, three-harmonic load."""
    def load(theta):
        return (1000.0 + 700.0 * np.sin(theta) + 250.0 * np.sin(2 * theta + 0.7)
                + 120.0 * np.cos(5 * theta))

    def rhs(t, y):
        theta, w = y
        return [w, (slope * (w0 - w) - load(theta)) / inertia]

    t = np.arange(0.0, seconds, 1.0 / fs)
    sol = solve_ivp(rhs, (0.0, t[-1]), [0.0, w0 - 1000.0 / slope], t_eval=t,
                    rtol=1e-9, atol=1e-9, max_step=0.01)
    theta, w = sol.y
    tq = load(theta)
    rng = np.random.default_rng(seed)
    w_meas = w + rng.normal(0.0, speed_noise * w.mean(), w.size)
    t_meas = tq + rng.normal(0.0, torque_noise * tq.mean(), tq.size)
    return t, t_meas, w_meas


def test_identify_recovers_inertia_within_3_percent():
    # Least squares on I·dω/dt = T_drive(ω) − T_load (Ljung, System Identification, linear
    # regression), data simulated independently by scipy's solve_ivp, with 0.1 % speed
    # noise and 1 % torque noise.
    inertia, slope = 400.0, 3000.0
    t, tq, w = simulate_log(inertia, slope, w0=5.0, fs=1000.0, seconds=20.0, seed=11)
    res = identify_inertia(t, tq, w)
    assert res.inertia == pytest.approx(inertia, rel=0.03)
    assert res.slope == pytest.approx(slope, rel=0.05)
    assert res.r2 > 0.95
    d = res.to_dict()
    assert {"inertia_kgm2", "slope_Nm_s_per_rad", "r2"} <= set(d)


def test_identify_refuses_constant_speed_log():
    rng = np.random.default_rng(5)
    t = np.arange(0.0, 10.0, 1e-3)
    w = 5.0 + rng.normal(0.0, 5e-3, t.size)          # constant speed plus 0.1 % noise
    tq = 1000.0 + 700.0 * np.sin(5.0 * t) + rng.normal(0.0, 10.0, t.size)
    with pytest.raises(DataError, match=r"^the speed changes explain only R² = -?0\.\d\d of "
                       r"the torque variation \(need ≥ 0\.5\), so the log cannot show the "
                       r"inertia; the speed barely responds to the load or the signals are "
                       r"too noisy$"):
        identify_inertia(t, tq, w)
    with pytest.raises(DataError) as exc:
        identify_inertia(t, tq, np.full(t.size, 5.0))
    assert str(exc.value) == ("the speed is constant over the log, so it shows no inertia "
                              "(I·dω/dt is zero); use a log where the load varies and the "
                              "speed visibly fluctuates")


# ------------------------------------------------------------------ with a mean cycle
def mean_cycle_from_scipy(inertia, motor, n=360):
    """Steady periodic mean cycle, integrated in angle with scipy's solve_ivp for 30 cycles."""
    def load(theta):
        return 1000.0 + 700.0 * np.sin(theta) + 250.0 * np.sin(2 * theta + 0.7)

    k, w0 = motor.slope, motor.no_load_speed

    def rhs(theta, y):
        return [(k * (w0 - y[0]) - load(theta)) / (inertia * y[0])]

    angle = np.linspace(0.0, 2 * math.pi, n, endpoint=False)
    sol = solve_ivp(rhs, (0.0, 30 * 2 * math.pi), [w0 - 1000.0 / k], rtol=1e-10,
                    atol=1e-12, dense_output=True)
    speed = sol.sol(29 * 2 * math.pi + angle)[0]
    return pd.DataFrame({"angle": angle, "torque_mean": load(angle), "torque_sd": 0.0,
                         "speed_mean": speed, "speed_sd": 0.0})


def test_size_with_mean_cycle_identifies_and_simulates_drive():
    ratio = 30.0
    ws = 5.0 * ratio
    wr = ws - ratio * 1200.0 / 3000.0            # slope 3000 N m s/rad at the shaft
    motor = MotorModel(power=1200.0 / ratio * wr, sync_speed=ws, rated_speed=wr,
                       speed_ratio=ratio)
    mc = mean_cycle_from_scipy(400.0, motor)
    # per-cycle swing from the mean cycle's torque (same closed-form route as above)
    angle = np.append(mc["angle"], 2 * math.pi)
    tq = np.append(mc["torque_mean"], mc["torque_mean"].iloc[0])
    energy = cumulative_trapezoid(tq - 1000.0, angle, initial=0.0)
    swing = float(energy.max() - energy.min())
    w = float(np.mean(mc["speed_mean"]))
    table = cycle_table(np.full(30, swing), w)
    sp = mc["speed_mean"].to_numpy()
    table["cs"] = (sp.max() - sp.min()) / sp.mean()
    res = size_from_cycles(table, mc, target_cs=0.05, motor=motor, n_boot=200)
    # identified total inertia (angle-domain least squares) against the simulated 400 kg m²
    assert res.identified["inertia_kgm2"] == pytest.approx(400.0, rel=0.01)
    assert res.existing_inertia == pytest.approx(400.0, rel=0.01)
    d = res.to_dict()
    assert d["model"] == "calibrated drive"
    assert d["drive_slope_Nms_per_rad"] == pytest.approx(3000.0, rel=0.02)
    assert abs(d["cs_model_error_rel"]) < 0.03
    assert d["drive"]["recommended"]["added_inertia_kgm2"] == pytest.approx(res.added_inertia)
    curve = res.to_pandas()
    assert curve.shape[1] == 7 and curve.shape[0] >= 5
    assert curve["added_inertia_kgm2"].iloc[-1] == pytest.approx(2 * res.added_inertia)
    # the model meets the target at its recommendation, below the constant-drive bound
    assert d["drive"]["recommended"]["cs"] == pytest.approx(0.05, rel=1e-3)
    assert d["required_inertia_kgm2"] < d["bound_constant_drive_required_inertia_kgm2"]
    assert d["ci95_kgm2"][0] <= d["required_inertia_kgm2"] <= d["ci95_kgm2"][1]


def test_identify_engine_log_with_drive_torque():
    # Engine log (torque_role="drive"): I·dω/dt = T_drive(θ) − T_load(ω) with a load that
    # rises linearly with speed (a generator-like load), simulated by scipy's solve_ivp.
    inertia, slope, wbar = 12.0, 40.0, 150.0

    def drive(theta):  # four-stroke single cylinder: orders 0.5, 1, 1.5 over 4π
        return 300.0 + 900.0 * np.sin(0.5 * theta) + 500.0 * np.sin(theta + 0.3) \
            + 200.0 * np.cos(1.5 * theta)

    def rhs(t, y):
        return [y[1], (drive(y[0]) - (300.0 + slope * (y[1] - wbar))) / inertia]

    t = np.arange(0.0, 8.0, 1.0 / 5000.0)
    sol = solve_ivp(rhs, (0.0, t[-1]), [0.0, wbar], t_eval=t, rtol=1e-9, atol=1e-9,
                    max_step=1e-3)
    rng = np.random.default_rng(2)
    w = sol.y[1] + rng.normal(0.0, 1e-3 * wbar, t.size)
    tq = drive(sol.y[0]) + rng.normal(0.0, 3.0, t.size)  # 1 % of the mean torque
    res = identify_inertia(t, tq, w, torque_role="drive")
    assert res.inertia == pytest.approx(inertia, rel=0.03)
    assert res.to_dict()["torque_role"] == "drive"
    with pytest.raises(UsageError) as exc:
        identify_inertia(t, tq, w, torque_role="engine")
    assert str(exc.value) == "unknown torque_role 'engine'; valid choices: load, drive"


def test_engine_log_never_runs_the_nameplate_motor():
    # a load-side mean cycle declared as an engine log: the fit gives a negative inertia
    # (refused), and a motor nameplate is no model of an engine's load side
    ratio = 30.0
    motor = MotorModel(power=5000.0, sync_speed=150.0, rated_speed=138.0, speed_ratio=ratio)
    mc = mean_cycle_from_scipy(400.0, MotorModel(power=1200.0 / ratio * 138.0,
                                                 sync_speed=150.0, rated_speed=138.0,
                                                 speed_ratio=ratio))
    table = cycle_table(np.full(30, 1500.0), 4.6)
    table["cs"] = 0.01
    res = size_from_cycles(table, mc, target_cs=0.05, motor=motor, torque_role="drive",
                           existing_inertia=400.0, n_boot=200)
    assert res.model == "constant drive"
    assert res.drive is None and res.model_params is None
    assert any(m.startswith("the log cannot separate the inertia from the drive slope: the "
                            "fit gives a non-positive inertia") for m in res.messages)
