"""Motor-drive simulation checked against closed forms and an independent scipy solve.

Scenario (invented): press 4 at Brindlemoor Works, line B, driven by a high-slip motor
through a belt.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from scipy.integrate import solve_ivp

from torqlog.errors import UsageError
from torqlog.io.profile import parse_profile
from torqlog.sizing.drive import (
    CURVE_COLUMNS,
    MotorModel,
    drive_curve,
    press_energy,
    recovery_time,
    simulate_drive,
)

RPM = 2.0 * math.pi / 60.0
N_GRID = 360
ANGLE = np.linspace(0.0, 2.0 * math.pi, N_GRID, endpoint=False)


def press_load(theta):
    """Invented press load: mean 1000 N m and three harmonics."""
    return (1000.0 + 800.0 * np.sin(theta) + 300.0 * np.sin(3 * theta + 0.4)
            + 200.0 * np.cos(7 * theta))


def motor_with_slope(slope, no_load_speed=5.0, ratio=30.0, rated_at_shaft=1200.0):
    """A MotorModel whose slope referred to the logged shaft is ``slope`` [N m s/rad].

    k = n²·T_r/(ω_s − ω_r) with T_r = T_shaft/n gives ω_r = ω_s − n·T_shaft/k.
    """
    ws = no_load_speed * ratio
    wr = ws - ratio * rated_at_shaft / slope
    return MotorModel(power=rated_at_shaft / ratio * wr, sync_speed=ws, rated_speed=wr,
                      speed_ratio=ratio)


# ------------------------------------------------------------------ motor model
def test_linear_slip_line_passes_rated_and_sync_points():
    # Chapman, Electric Machinery Fundamentals: linear torque-slip region; zero torque at
    # synchronous speed, rated torque P/ω_r at rated speed (here referred by n).
    m = MotorModel(power=22e3, sync_speed=1500 * RPM, rated_speed=1440 * RPM, speed_ratio=32.0)
    t_rated = 22e3 / (1440 * RPM)
    assert m.rated_torque == pytest.approx(t_rated, rel=1e-12)
    assert float(m.torque(1440 * RPM / 32)) == pytest.approx(32 * t_rated, rel=1e-12)
    assert float(m.torque(1500 * RPM / 32)) == pytest.approx(0.0, abs=1e-9)
    assert m.slope == pytest.approx(32 ** 2 * t_rated / (60 * RPM), rel=1e-12)


def test_motor_from_profile_reads_si_keys():
    prof = parse_profile({"motor": {"power_kW": 22.0, "sync_rpm": 1500.0, "rated_rpm": 1440.0,
                                    "speed_ratio": 32.0, "rotor_inertia_kgm2": 0.35}})
    m = MotorModel.from_profile(prof)
    assert m.power == pytest.approx(22e3)
    assert m.sync_speed == pytest.approx(1500 * RPM)
    assert m.referred_inertia == pytest.approx(0.35 * 32 ** 2)


def test_motor_errors_are_exact():
    with pytest.raises(UsageError) as exc:
        MotorModel(power=22e3, sync_speed=1500 * RPM, rated_speed=1500 * RPM, speed_ratio=32)
    assert str(exc.value) == ("motor rated speed (1500 rpm) must be below its synchronous "
                              "speed (1500 rpm): an induction motor runs with slip")
    with pytest.raises(UsageError) as exc:
        MotorModel.from_profile(parse_profile({"motor": {"power_kW": 22.0}}))
    assert str(exc.value) == ("the [motor] section lacks sync_rpm, rated_rpm, speed_ratio; a "
                              "motor needs power_kW, sync_rpm, rated_rpm and speed_ratio")


# ------------------------------------------------------------------ simulation
@pytest.mark.parametrize("inertia, slope", [(400.0, 3000.0),    # balanced
                                            (20.0, 2.0e5),      # stiff motor, slip -> 0
                                            (2.0e4, 3000.0)])   # large I
def test_single_harmonic_matches_first_order_response(inertia, slope):
    # Linearised about ω̄: I·ω̄·dδω/dθ = −k·δω − A·sin θ, the textbook first-order system
    # under sinusoidal forcing, so δω has amplitude A/√((I·ω̄)² + k²) and
    # Cs = 2A/(ω̄·√((I·ω̄)² + k²)). Limits: k → ∞ gives the constant-speed (quasi-static
    # slip) result Cs = 2A/(k·ω̄) with the motor torque following the load; I → ∞ gives the
    # constant-drive flywheel result Cs = ΔE/(I·ω̄²), ΔE = 2A (Shigley, flywheel section).
    amp = 40.0  # small, so the linearisation error (order Cs²) stays far below 0.1 %
    load = 1000.0 + amp * np.sin(ANGLE)
    motor = motor_with_slope(slope)
    dc = simulate_drive(ANGLE, load, inertia, motor)
    wbar = dc.speed_mean
    expected = 2 * amp / (wbar * math.hypot(inertia * wbar, slope))
    assert dc.cs == pytest.approx(expected, rel=1e-3)
    if slope > 1e5:   # stiff: motor torque peak -> load peak (constant-speed result)
        assert dc.motor_torque_peak == pytest.approx(1040.0, rel=1e-3)
        assert dc.cs == pytest.approx(2 * amp / (slope * wbar), rel=5e-3)
    if inertia > 1e4:  # constant drive: Cs -> ΔE/(I ω̄²) and the motor torque barely moves
        assert dc.cs == pytest.approx(2 * amp / (inertia * wbar ** 2), rel=2e-2)
        assert dc.peak_to_mean == pytest.approx(1.0, abs=5e-3)


def test_energy_balance_closes_over_a_cycle():
    # Periodic steady state: the kinetic energy returns to its start, so motor work equals
    # load work over the cycle (Norton, flywheel section: ∫(T_drive − T_load)dθ = 0).
    dc = simulate_drive(ANGLE, press_load(ANGLE), 400.0, motor_with_slope(3000.0))
    period = 2 * math.pi
    motor_work = float(np.mean(dc.motor_torque)) * period   # periodic rectangle rule
    load_work = float(np.mean(press_load(ANGLE))) * period
    assert motor_work == pytest.approx(load_work, rel=1e-3)
    assert dc.motor_work == pytest.approx(load_work, rel=1e-6)
    assert dc.angle.shape == dc.speed.shape == dc.time.shape == (4096,)
    assert dc.motor_torque_peak > dc.motor_torque_mean > 0
    # time mean (what heats the motor) from the returned arrays, periodic trapezoid in time
    dt = np.diff(np.append(dc.time, dc.cycle_time))
    t_next = np.roll(dc.motor_torque, -1)
    time_mean = float(np.sum(0.5 * (dc.motor_torque + t_next) * dt)) / dc.cycle_time
    assert dc.motor_torque_mean == pytest.approx(time_mean, rel=1e-5)


def test_simulation_agrees_with_independent_time_domain_solve():
    # Independent check: integrate I·dω/dt = T_m(ω) − T_L(θ), dθ/dt = ω in TIME with
    # scipy's solve_ivp (RK45) for three cycles from the simulated start speed; a periodic
    # solution must repeat and match the angle-domain result.
    inertia, motor = 400.0, motor_with_slope(3000.0)
    load_nodes = np.append(ANGLE, 2 * math.pi)
    load_vals = np.append(press_load(ANGLE), press_load(ANGLE)[0])
    dc = simulate_drive(ANGLE, press_load(ANGLE), inertia, motor)

    def rhs(t, y):
        theta, w = y
        tl = np.interp(theta % (2 * math.pi), load_nodes, load_vals)
        return [w, (motor.slope * (motor.no_load_speed - w) - tl) / inertia]

    cycles = 3
    end = lambda t, y: y[0] - cycles * 2 * math.pi  # noqa: E731
    end.terminal = True
    sol = solve_ivp(rhs, (0.0, 10 * cycles * dc.cycle_time), [0.0, float(dc.speed[0])],
                    rtol=1e-10, atol=1e-12, events=end, dense_output=True)
    assert sol.status == 1
    assert sol.t_events[0][0] == pytest.approx(cycles * dc.cycle_time, rel=1e-6)
    # speed against angle in the third cycle
    t_grid = np.linspace(2 * dc.cycle_time, 3 * dc.cycle_time, 2000)
    theta, w = sol.sol(t_grid)
    w_sim = np.interp(theta % (2 * math.pi), np.append(dc.angle, 2 * math.pi),
                      np.append(dc.speed, dc.speed[0]))
    assert np.max(np.abs(w - w_sim)) / dc.speed_mean < 1e-5


def test_drive_curve_columns_and_trend():
    motor = motor_with_slope(3000.0)
    df = drive_curve(ANGLE, press_load(ANGLE), 400.0, [0.0, 400.0, 800.0, 400.0], motor)
    assert tuple(df.columns) == CURVE_COLUMNS
    assert df.shape == (3, 7)
    assert df["added_inertia_kgm2"].tolist() == [0.0, 400.0, 800.0]
    assert np.all(np.diff(df["cs"]) < 0)                    # more inertia, smoother
    assert np.all(np.diff(df["motor_torque_peak_Nm"]) < 0)  # and a lower motor peak
    # the motor-shaft time-mean torque sits a little above mean load / n (more time is
    # spent at the slow, heavily loaded part of the cycle) and tends to it as Cs -> 0
    mean_motor = (df["motor_torque_peak_Nm"] / df["motor_torque_peak_to_mean"]).to_numpy()
    assert np.all(mean_motor > 1000.0 / 30.0)
    assert np.all(np.diff(mean_motor) < 0)


def test_plot_drive_curve_writes_png(tmp_path):
    from torqlog.present.plots import plot_drive_curve

    df = drive_curve(ANGLE, press_load(ANGLE), 400.0, np.linspace(0, 1600, 5),
                     motor_with_slope(3000.0))
    out = plot_drive_curve(df, tmp_path / "drive.png", target_cs=0.05, recommended=800.0)
    assert out.exists() and out.stat().st_size > 10_000
    assert isinstance(df, pd.DataFrame)


# ------------------------------------------------------------------ presses
def test_press_energy_hand_worked():
    # Shigley, flywheel section: E = ½·I·(ω₁² − ω₂²). By hand: I = 100 kg m², 60 rpm
    # (ω₁ = 2π rad/s), 10 % slowdown: ½·100·4π²·(1 − 0.81) = 375.045 J.
    assert press_energy(100.0, 2 * math.pi, 0.10) == pytest.approx(375.0450, rel=1e-6)
    with pytest.raises(UsageError) as exc:
        press_energy(100.0, 2 * math.pi, 1.0)
    assert str(exc.value) == "slowdown must be a fraction between 0 and 1 (exclusive), got 1.0"


def test_recovery_time_matches_integration():
    # Closed form τ·ln(...) of the first-order ODE against scipy's solve_ivp.
    motor = motor_with_slope(3000.0)
    inertia, idle = 400.0, 150.0
    w_from, w_to = 4.2, 4.6
    t_closed = recovery_time(inertia, motor, w_from, w_to, idle_torque=idle)

    def rhs(t, y):
        return [(motor.slope * (motor.no_load_speed - y[0]) - idle) / inertia]

    hit = lambda t, y: y[0] - w_to  # noqa: E731
    hit.terminal = True
    sol = solve_ivp(rhs, (0, 100), [w_from], rtol=1e-11, atol=1e-12, events=hit)
    assert t_closed == pytest.approx(sol.t_events[0][0], rel=1e-7)
    with pytest.raises(UsageError) as exc:
        recovery_time(inertia, motor, 4.2, 5.0, idle_torque=idle)
    assert str(exc.value) == ("speed_to (47.7465 rpm) must be below the speed the motor "
                              "settles at under the idle torque (47.269 rpm)")


def test_motor_that_cannot_carry_the_load_is_refused():
    from torqlog.errors import DataError

    motor = motor_with_slope(3000.0)   # standstill torque k·ω0 = 3000·5 = 15000 N m
    with pytest.raises(DataError) as exc:
        simulate_drive(ANGLE, np.full(N_GRID, 20000.0), 400.0, motor)
    assert str(exc.value) == ("the motor cannot carry this load: the mean load torque 2e+04 "
                              "N m is above the linear-slip motor torque at standstill "
                              "1.5e+04 N m")
    with pytest.raises(DataError) as exc:
        simulate_drive(ANGLE, 1000.0 + 14000.0 * np.sin(ANGLE), 5.0, motor)
    assert str(exc.value) == ("the motor cannot carry this load at 5 kg m^2: the shaft speed "
                              "falls to zero within the cycle; add inertia or check the "
                              "motor data")
