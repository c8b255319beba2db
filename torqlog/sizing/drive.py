"""Induction-motor drive of a cyclic machine: speed fluctuation with a slipping motor.

The static sizing rule ΔE ≈ I·Cs·ω̄² (see :mod:`torqlog.sizing.inertia`) assumes the drive torque
stays constant through the cycle. A squirrel-cage induction motor does not: in the linear
part of its torque–slip curve its torque rises as the speed falls, so it helps the flywheel
through the heavy part of the cycle and the peak motor torque (and current) rise as the
flywheel gets lighter. This module simulates that periodic steady state.

All quantities are SI and referred to the *logged* shaft (the shaft whose torque and speed
were recorded) unless a name says ``motor``; the motor shaft turns ``speed_ratio`` times
faster than the logged shaft.

References
----------
.. [1] S. J. Chapman, *Electric Machinery Fundamentals*, chapter on induction motors: the
   torque–speed characteristic is close to linear in slip between no load and full load.
.. [2] R. L. Norton, *Design of Machinery*, flywheel section: equation of motion of a
   flywheel-equipped shaft, I·ω·dω/dθ = T_drive − T_load.
"""

from __future__ import annotations

import bisect
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd
from scipy.integrate import solve_ivp

from torqlog.errors import DataError, UsageError

_RPM = 60.0 / (2.0 * math.pi)  # rad/s -> rpm
_RTOL = 1e-9


# --------------------------------------------------------------------------- motor
@dataclass(frozen=True)
class MotorModel:
    """An induction motor in the linear part of its torque–slip curve.

    Parameters
    ----------
    power : float [W]
        Rated (nameplate) output power.
    sync_speed : float [rad/s]
        Synchronous speed of the motor shaft.
    rated_speed : float [rad/s]
        Full-load speed of the motor shaft (below ``sync_speed``).
    speed_ratio : float
        Motor shaft speed / logged shaft speed (belt or gear ratio, > 0).
    rotor_inertia : float [kg*m^2]
        Inertia of the motor rotor about its own shaft (referred to the logged shaft as
        ``rotor_inertia * speed_ratio**2``).

    Notes
    -----
    At the logged shaft the torque is

    ``T(ω) = n·T_rated·(ω_s − n·ω)/(ω_s − ω_r)``,  ``T_rated = P/ω_r``,

    with ``n`` the speed ratio: a straight line through zero torque at synchronous speed and
    ``n·T_rated`` at rated speed. It holds up to roughly the rated torque and
    overestimates the torque well beyond it (the real curve bends over to its breakdown
    torque).

    References
    ----------
    .. [1] S. J. Chapman, *Electric Machinery Fundamentals*, induction-motor torque–speed
       characteristic (linear region at small slip).
    """

    power: float
    sync_speed: float
    rated_speed: float
    speed_ratio: float
    rotor_inertia: float = 0.0

    def __post_init__(self) -> None:
        for name in ("power", "sync_speed", "rated_speed", "speed_ratio"):
            value = getattr(self, name)
            if not (isinstance(value, int | float) and math.isfinite(value) and value > 0):
                raise UsageError(f"motor {name} must be a positive number, got {value!r}")
        if not (math.isfinite(self.rotor_inertia) and self.rotor_inertia >= 0):
            raise UsageError(f"motor rotor_inertia must be zero or positive, "
                             f"got {self.rotor_inertia!r}")
        if self.rated_speed >= self.sync_speed:
            raise UsageError(
                f"motor rated speed ({self.rated_speed * _RPM:.6g} rpm) must be below its "
                f"synchronous speed ({self.sync_speed * _RPM:.6g} rpm): an induction motor "
                f"runs with slip")

    @classmethod
    def from_profile(cls, profile: Any) -> MotorModel:
        """Build the motor from a machine profile's ``[motor]`` section.

        Parameters
        ----------
        profile : MachineProfile or dict
            A :class:`torqlog.io.profile.MachineProfile` (its ``motor`` dict is used) or the
            SI dict itself, with keys ``power`` [W], ``sync`` [rad/s], ``rated`` [rad/s],
            ``speed_ratio`` and optionally ``rotor_inertia`` [kg*m^2].

        Raises
        ------
        UsageError
            If a required key is missing (the message names the profile keys).
        """
        motor = profile if isinstance(profile, dict) else getattr(profile, "motor", {})
        need = {"power": "power_kW", "sync": "sync_rpm", "rated": "rated_rpm",
                "speed_ratio": "speed_ratio"}
        missing = [need[k] for k in need if k not in motor]
        if missing:
            raise UsageError(f"the [motor] section lacks {', '.join(missing)}; a motor needs "
                             f"power_kW, sync_rpm, rated_rpm and speed_ratio")
        return cls(power=float(motor["power"]), sync_speed=float(motor["sync"]),
                   rated_speed=float(motor["rated"]), speed_ratio=float(motor["speed_ratio"]),
                   rotor_inertia=float(motor.get("rotor_inertia", 0.0)))

    @property
    def rated_torque(self) -> float:
        """Rated torque at the motor shaft, P/ω_r [N*m]."""
        return self.power / self.rated_speed

    @property
    def slope(self) -> float:
        """Torque drop per unit speed at the logged shaft, n²·T_rated/(ω_s − ω_r) [N*m*s/rad]."""
        n = self.speed_ratio
        return n * n * self.rated_torque / (self.sync_speed - self.rated_speed)

    @property
    def no_load_speed(self) -> float:
        """Logged-shaft speed at which the motor torque is zero, ω_s/n [rad/s]."""
        return self.sync_speed / self.speed_ratio

    @property
    def referred_inertia(self) -> float:
        """Rotor inertia referred to the logged shaft, J·n² [kg*m^2]."""
        return self.rotor_inertia * self.speed_ratio ** 2

    def torque(self, speed: np.ndarray | float) -> np.ndarray:
        """Motor torque referred to the logged shaft [N*m] at logged-shaft ``speed`` [rad/s]."""
        return self.slope * (self.no_load_speed - np.asarray(speed, dtype=float))

    def to_dict(self) -> dict[str, float]:
        """The motor data with unit-suffixed keys."""
        return {
            "power_W": self.power,
            "sync_rpm": self.sync_speed * _RPM,
            "rated_rpm": self.rated_speed * _RPM,
            "speed_ratio": self.speed_ratio,
            "rotor_inertia_kgm2": self.rotor_inertia,
            "rated_torque_Nm": self.rated_torque,
            "slope_at_shaft_Nm_s_per_rad": self.slope,
        }


@dataclass(frozen=True)
class LinearDrive:
    """A drive whose torque at the logged shaft falls linearly with speed.

    ``T(ω) = k·(ω₀ − ω)`` with slope ``k`` and zero-torque speed ``ω₀``: the linear-slip
    motor of :class:`MotorModel`, or a characteristic fitted on a log
    (:mod:`torqlog.sizing.calibrate`). For an engine log the "drive" is the load side with its
    sign turned (``ω₀`` may then be below the running speed, or negative).

    Parameters
    ----------
    slope : float [N*m*s/rad]
        Torque drop per unit speed at the logged shaft, > 0.
    no_load_speed : float [rad/s]
        Logged-shaft speed at which the torque would be zero.
    speed_ratio : float
        Drive (motor) shaft speed / logged shaft speed, for torques quoted at the motor.
    rated_torque : float, optional [N*m]
        Rated torque at the drive (motor) shaft, when a nameplate gives one.

    References
    ----------
    .. [1] S. J. Chapman, *Electric Machinery Fundamentals*, induction-motor torque–speed
       characteristic (linear region at small slip).
    """

    slope: float
    no_load_speed: float
    speed_ratio: float = 1.0
    rated_torque: float | None = None
    rotor_inertia: float = 0.0

    def __post_init__(self) -> None:
        if not (math.isfinite(self.slope) and self.slope > 0):
            raise UsageError(f"drive slope must be a positive number of N m s/rad, "
                             f"got {self.slope!r}")
        if not math.isfinite(self.no_load_speed):
            raise UsageError(f"drive no-load speed must be finite, got {self.no_load_speed!r}")

    @property
    def referred_inertia(self) -> float:
        """Rotor inertia referred to the logged shaft (counted in the fitted inertia: 0)."""
        return self.rotor_inertia * self.speed_ratio ** 2

    def torque(self, speed: np.ndarray | float) -> np.ndarray:
        """Drive torque at the logged shaft [N*m] at logged-shaft ``speed`` [rad/s]."""
        return self.slope * (self.no_load_speed - np.asarray(speed, dtype=float))


# --------------------------------------------------------------------------- simulation
@dataclass(frozen=True)
class DriveCycle:
    """Periodic steady state of a motor-driven flywheel shaft over one cycle.

    Speeds and torques without ``motor`` in their name are at the logged shaft.
    ``angle``, ``time``, ``speed``, ``motor_torque`` and ``load_torque`` are arrays on a
    fine uniform angle grid over the cycle [rad, s, rad/s, N*m, N*m].
    """

    inertia: float
    added_inertia: float
    cs: float
    speed_min: float
    speed_max: float
    speed_mean: float
    cycle_time: float
    motor_torque_peak: float
    motor_torque_min: float
    motor_torque_mean: float
    motor_torque_rms: float
    speed_ratio: float
    rated_torque_motor: float
    motor_work: float
    load_work: float
    angle: np.ndarray = field(repr=False)
    time: np.ndarray = field(repr=False)
    speed: np.ndarray = field(repr=False)
    motor_torque: np.ndarray = field(repr=False)
    load_torque: np.ndarray = field(repr=False)
    messages: tuple[str, ...] = ()

    @property
    def peak_to_mean(self) -> float:
        """Motor torque peak / time-mean (same at either shaft)."""
        return self.motor_torque_peak / self.motor_torque_mean

    def to_dict(self) -> dict[str, Any]:
        """JSON contract of one simulated cycle (scalars only)."""
        n = self.speed_ratio
        return {
            "inertia_kgm2": self.inertia,
            "added_inertia_kgm2": self.added_inertia,
            "cs": self.cs,
            "speed_min_rpm": self.speed_min * _RPM,
            "speed_max_rpm": self.speed_max * _RPM,
            "speed_mean_rpm": self.speed_mean * _RPM,
            "cycle_time_s": self.cycle_time,
            "shaft_torque_peak_Nm": self.motor_torque_peak,
            "shaft_torque_mean_Nm": self.motor_torque_mean,
            "shaft_torque_rms_Nm": self.motor_torque_rms,
            "motor_torque_peak_Nm": self.motor_torque_peak / n,
            "motor_torque_mean_Nm": self.motor_torque_mean / n,
            "motor_torque_rms_Nm": self.motor_torque_rms / n,
            "motor_torque_min_Nm": self.motor_torque_min / n,
            "motor_torque_peak_to_mean": self.peak_to_mean,
            "motor_torque_rated_Nm": (self.rated_torque_motor
                                      if math.isfinite(self.rated_torque_motor) else None),
            "motor_speed_min_rpm": self.speed_min * n * _RPM,
            "motor_work_J": self.motor_work,
            "load_work_J": self.load_work,
            "messages": list(self.messages),
        }

    def to_pandas(self) -> pd.DataFrame:
        """The cycle on its angle grid: angle, time, speed and torques at the logged shaft."""
        return pd.DataFrame({
            "angle_rad": self.angle,
            "time_s": self.time,
            "speed_rpm": self.speed * _RPM,
            "motor_torque_at_shaft_Nm": self.motor_torque,
            "load_torque_Nm": self.load_torque,
        })


def _check_grid(angle: np.ndarray, load_torque: np.ndarray,
                revs_per_cycle: int) -> tuple[np.ndarray, np.ndarray, float]:
    a = np.asarray(angle, dtype=float)
    t = np.asarray(load_torque, dtype=float)
    if a.ndim != 1 or a.shape != t.shape or a.size < 8:
        raise DataError("the mean cycle needs angle and load torque arrays of the same length "
                        "(at least 8 points)")
    if not (np.all(np.isfinite(a)) and np.all(np.isfinite(t))):
        raise DataError("the mean-cycle load torque has missing values (NaN); a motor "
                        "simulation needs the torque channel over the whole cycle")
    if int(revs_per_cycle) != revs_per_cycle or revs_per_cycle < 1:
        raise UsageError(f"revs_per_cycle must be a whole number ≥ 1, got {revs_per_cycle!r}")
    period = 2.0 * math.pi * revs_per_cycle
    step = np.diff(a)
    h = period / a.size
    # any uniform grid of one cycle: first point in [0, h) (bin starts or bin centres)
    if np.any(np.abs(step - h) > 1e-6 * h) or a[0] < -1e-9 or a[0] > h * (1 + 1e-9) \
            or a[-1] >= period:
        raise DataError(f"the mean-cycle angle must be a uniform grid over one cycle "
                        f"(0 ≤ angle < {period:.6g} rad for revs_per_cycle={revs_per_cycle}, "
                        f"end point excluded)")
    return a, t, period


class _PeriodicLoad:
    """Linear interpolation of a periodic load and the exact integral of its fluctuation."""

    def __init__(self, angle: np.ndarray, torque: np.ndarray, period: float) -> None:
        self.theta0 = float(angle[0])
        self.period = period
        self.nodes = np.append(angle, angle[0] + period)
        self.values = np.append(torque, torque[0])
        h = np.diff(self.nodes)
        # exact integral of the piecewise-linear interpolant (trapezoid per interval)
        cum = np.concatenate([[0.0], np.cumsum(0.5 * h * (self.values[:-1] + self.values[1:]))])
        self.mean = cum[-1] / period
        # L̃(θ) = ∫ (T_L − T̄_L) dθ' from θ0: periodic, piecewise quadratic
        self.cum = cum - self.mean * (self.nodes - self.theta0)
        self.slope = np.diff(self.values) / h
        self.work = cum[-1]
        self._nodes, self._cum = self.nodes.tolist(), self.cum.tolist()
        self._values, self._slope = self.values.tolist(), self.slope.tolist()
        self._last = self.nodes.size - 2

    def _locate(self, theta: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        r = np.mod(np.asarray(theta, dtype=float) - self.theta0, self.period) + self.theta0
        i = np.clip(np.searchsorted(self.nodes, r, side="right") - 1, 0, self.nodes.size - 2)
        return i, r - self.nodes[i]

    def torque(self, theta: np.ndarray) -> np.ndarray:
        i, x = self._locate(theta)
        return self.values[i] + self.slope[i] * x

    def swing_scalar(self, theta: float) -> float:
        """``swing_integral`` for one angle, in plain Python (the ODE right-hand side)."""
        r = (theta - self.theta0) % self.period + self.theta0
        i = min(max(bisect.bisect_right(self._nodes, r) - 1, 0), self._last)
        x = r - self._nodes[i]
        return self._cum[i] + (self._values[i] - self.mean) * x + 0.5 * self._slope[i] * x * x

    def swing_integral(self, theta: np.ndarray) -> np.ndarray:
        i, x = self._locate(theta)
        return self.cum[i] + (self.values[i] - self.mean) * x + 0.5 * self.slope[i] * x * x


def simulate_drive(angle: np.ndarray, load_torque: np.ndarray, inertia: float,
                   motor: MotorModel | LinearDrive, revs_per_cycle: int = 1, *,
                   added_inertia: float = 0.0, rtol: float = _RTOL) -> DriveCycle:
    """Periodic steady state of a motor-driven shaft under a periodic load torque.

    Solves ``I·ω·dω/dθ = T_motor(ω) − T_load(θ)`` over one cycle for the periodic solution
    ``ω(θ0 + 2π·revs) = ω(θ0)``. With ``W = ω²/2 + L̃(θ)/I``, where ``L̃`` is the exact
    integral of the load fluctuation (the load is interpolated linearly on the grid), the
    equation becomes ``I·dW/dθ = T_motor(ω) − T̄_load`` with a smooth right-hand side; it is
    integrated with :func:`scipy.integrate.solve_ivp` (LSODA, rtol 1e-9) and the periodic
    start found by Newton's method on the one-cycle return map, whose derivative comes
    from the variational equation ``I·dv/dθ = −(k/ω)·v``.

    Parameters
    ----------
    angle : array [rad]
        Uniform grid over one cycle, ``0 ≤ angle < 2π·revs_per_cycle``, end point excluded.
    load_torque : array [N*m]
        Load torque of the driven machine on that grid (periodic).
    inertia : float [kg*m^2]
        Inertia of all rotating parts except the motor rotor, referred to the logged shaft
        (the rotor's ``J·n²`` is added here).
    motor : MotorModel or LinearDrive
        The driving motor, or a linear drive characteristic fitted on a log.
    revs_per_cycle : int
        Shaft revolutions per cycle.
    added_inertia : float [kg*m^2]
        Of ``inertia``, the part that is added flywheel (recorded only).
    rtol : float
        Relative tolerance of the integration and of the periodicity (default 1e-9;
        1e-7 keeps Cs to about six digits at a third of the cost).

    Returns
    -------
    DriveCycle
        Speeds, motor torques (time mean and RMS), Cs = (ω_max − ω_min)/ω̄ with ω̄ the
        time-mean speed, cycle time and the work of motor and load over the cycle.

    Raises
    ------
    DataError
        If the motor cannot carry the load (the speed reaches zero) or the grid is not a
        uniform one-cycle grid.

    References
    ----------
    .. [1] R. L. Norton, *Design of Machinery*, flywheel section (equation of motion).
    .. [2] S. J. Chapman, *Electric Machinery Fundamentals*, induction-motor torque–speed
       characteristic (linear region).
    """
    a, t, period = _check_grid(angle, load_torque, revs_per_cycle)
    if not (math.isfinite(inertia) and inertia > 0):
        raise UsageError(f"inertia must be a positive number of kg m^2, got {inertia!r}")
    load = _PeriodicLoad(a, t, period)
    total = float(inertia) + motor.referred_inertia
    k, w0 = motor.slope, motor.no_load_speed
    w_guess = w0 - load.mean / k
    if w_guess <= 0:
        raise DataError(
            f"the motor cannot carry this load: the mean load torque {load.mean:.4g} N m is "
            f"above the linear-slip motor torque at standstill {k * w0:.4g} N m")
    u_floor = 1e-6 * 0.5 * w_guess ** 2
    th0, th1 = load.theta0, load.theta0 + period
    swing = load.swing_integral
    swing_at = load.swing_scalar
    inv_i = 1.0 / total

    def speed_at(theta: float, w_state: float) -> float:
        return math.sqrt(2.0 * max(w_state - swing_at(theta) * inv_i, 0.0))

    def stall(theta: float, y: np.ndarray) -> float:
        return y[0] - swing_at(theta) * inv_i - u_floor

    stall.terminal = True  # type: ignore[attr-defined]

    def rhs(theta: float, y: np.ndarray) -> list[float]:
        # states: W, ∂W/∂W0 (variational), time, ∫T_m dt, ∫T_m² dt, ∫T_m dθ
        w = max(speed_at(theta, y[0]), 1e-300)
        tm = k * (w0 - w)
        return [(tm - load.mean) * inv_i, -k / w * y[1] * inv_i, 1.0 / w, tm / w,
                tm * tm / w, tm]

    u0 = 0.5 * w_guess ** 2
    for _ in range(40):
        sol = solve_ivp(rhs, (th0, th1), [u0, 1.0, 0.0, 0.0, 0.0, 0.0], method="LSODA",
                        rtol=rtol, atol=[1e-12 * u0, 1e-12, 1e-14, 1e-10, 1e-8, 1e-10],
                        dense_output=True, events=stall)
        if sol.status == 1:
            raise DataError(
                f"the motor cannot carry this load at {total:.4g} kg m^2: the shaft speed "
                f"falls to zero within the cycle; add inertia or check the motor data")
        if not sol.success:
            raise DataError(f"the drive simulation failed to integrate ({sol.message})")
        u_end, v_end = sol.y[0, -1], sol.y[1, -1]  # L̃ is periodic: W(end) − u0 = mismatch
        step = (u_end - u0) / (v_end - 1.0)
        if abs(step) < 10 * rtol * u0:  # periodic to the solver tolerance: keep it
            break
        u_new = u0 - step
        while u_new <= 0:
            step *= 0.5
            u_new = u0 - step
        u0 = u_new
    else:
        raise DataError("the drive simulation found no periodic steady state in 40 iterations")

    def speed_of(theta: np.ndarray, w_state: np.ndarray) -> np.ndarray:
        return np.sqrt(2.0 * np.maximum(w_state - swing(theta) * inv_i, 0.0))

    cycle_time, int_t, int_t2, motor_work = sol.y[2:, -1]
    n_eval = max(8 * a.size, 4096)
    theta = th0 + np.arange(n_eval) * (period / n_eval)
    dense = sol.sol(theta)
    speed = speed_of(theta, dense[0])
    speed_all = np.concatenate([speed, speed_of(sol.t, sol.y[0])])
    w_mean = period / cycle_time
    w_min, w_max = float(speed_all.min()), float(speed_all.max())
    torque_m = motor.torque(speed)
    t_peak = float(max(torque_m.max(), motor.torque(w_min)))
    t_mean = int_t / cycle_time
    t_rms = math.sqrt(int_t2 / cycle_time)
    n = motor.speed_ratio
    messages = []
    rated = motor.rated_torque
    if rated is None:
        rated = math.nan
    elif t_mean / n > rated:
        messages.append(f"the mean motor torque {t_mean / n:.4g} N m is above the rated "
                        f"torque {rated:.4g} N m: the motor is overloaded")
    elif t_rms / n > rated:
        messages.append(f"the RMS motor torque {t_rms / n:.4g} N m is above the rated torque "
                        f"{rated:.4g} N m: the motor would run hot")
    if rated == rated and t_peak / n > 2.0 * rated:
        messages.append(f"the peak motor torque is {t_peak / n / rated:.2g} × rated: beyond "
                        f"the linear slip region the real motor gives less torque than this "
                        f"model (breakdown torque is commonly 2–3 × rated, common practice)")
    return DriveCycle(
        inertia=total, added_inertia=float(added_inertia), cs=float((w_max - w_min) / w_mean),
        speed_min=w_min, speed_max=w_max, speed_mean=float(w_mean),
        cycle_time=float(cycle_time),
        motor_torque_peak=t_peak, motor_torque_min=float(motor.torque(w_max)),
        motor_torque_mean=float(t_mean), motor_torque_rms=t_rms, speed_ratio=n,
        rated_torque_motor=rated, motor_work=float(motor_work), load_work=float(load.work),
        angle=theta, time=dense[2], speed=speed, motor_torque=torque_m,
        load_torque=load.torque(theta), messages=tuple(messages))


def drive_curve(angle: np.ndarray, load_torque: np.ndarray, existing_inertia: float,
                added_grid: np.ndarray, motor: MotorModel,
                revs_per_cycle: int = 1) -> pd.DataFrame:
    """Simulated Cs and motor torque against added flywheel inertia.

    Parameters
    ----------
    angle, load_torque : array [rad], [N*m]
        The mean cycle (see :func:`simulate_drive`).
    existing_inertia : float [kg*m^2]
        Inertia already on the machine except the motor rotor, at the logged shaft.
    added_grid : array [kg*m^2]
        Added inertia values (at the logged shaft), ≥ 0.
    motor : MotorModel
        The driving motor.
    revs_per_cycle : int
        Shaft revolutions per cycle.

    Returns
    -------
    DataFrame
        Columns ``added_inertia_kgm2, cs, speed_min_rpm, speed_max_rpm,
        motor_torque_peak_Nm, motor_torque_peak_to_mean, motor_torque_rms_Nm`` (torques at
        the motor shaft), one row per grid value, sorted by added inertia.

    References
    ----------
    .. [1] R. L. Norton, *Design of Machinery*, flywheel section.
    """
    cycles = drive_cycles(angle, load_torque, existing_inertia, added_grid, motor,
                          revs_per_cycle)
    return curve_frame(cycles)


def drive_cycles(angle: np.ndarray, load_torque: np.ndarray, existing_inertia: float,
                 added_grid: np.ndarray, motor: MotorModel,
                 revs_per_cycle: int = 1) -> list[DriveCycle]:
    """One :class:`DriveCycle` per added inertia (sorted, duplicates dropped).

    Parameters are those of :func:`drive_curve`.
    """
    grid = np.unique(np.asarray(added_grid, dtype=float))
    if grid.size == 0 or np.any(~np.isfinite(grid)) or grid[0] < 0:
        raise UsageError("the added-inertia grid must hold finite values ≥ 0 kg m^2")
    # one simulation per grid point (a handful), not a loop over samples
    return [simulate_drive(angle, load_torque, existing_inertia + added, motor,
                           revs_per_cycle, added_inertia=float(added)) for added in grid]


CURVE_COLUMNS = ("added_inertia_kgm2", "cs", "speed_min_rpm", "speed_max_rpm",
                 "motor_torque_peak_Nm", "motor_torque_peak_to_mean", "motor_torque_rms_Nm")


def curve_frame(cycles: list[DriveCycle]) -> pd.DataFrame:
    """The drive-curve table (columns :data:`CURVE_COLUMNS`) of simulated cycles."""
    rows = []
    for dc in cycles:
        d = dc.to_dict()
        rows.append({"added_inertia_kgm2": dc.added_inertia, "cs": dc.cs,
                     **{c: d[c] for c in CURVE_COLUMNS[2:]}})
    return pd.DataFrame(rows, columns=list(CURVE_COLUMNS))


# --------------------------------------------------------------------------- presses
def press_energy(inertia: float | np.ndarray, speed: float | np.ndarray,
                 slowdown: float | np.ndarray) -> float | np.ndarray:
    """Energy a flywheel gives up when it slows by a stated fraction.

    ``E = ½·I·(ω₁² − ω₂²)`` with ``ω₂ = (1 − slowdown)·ω₁``.

    Parameters
    ----------
    inertia : float [kg*m^2]
        Flywheel (and all rotating parts) inertia at the shaft whose speed is given.
    speed : float [rad/s]
        Speed before the stroke, ω₁.
    slowdown : float
        Fractional slowdown during the stroke, 0 < slowdown < 1 (e.g. 0.10 for 10 %).

    Returns
    -------
    float [J]
        Energy released per stroke.

    References
    ----------
    .. [1] J. E. Shigley, C. R. Mischke, *Mechanical Engineering Design*, flywheel section:
       kinetic energy change ½·I·(ω₁² − ω₂²).
    """
    s = np.asarray(slowdown, dtype=float)
    if np.any(~np.isfinite(s)) or np.any(s <= 0) or np.any(s >= 1):
        raise UsageError(f"slowdown must be a fraction between 0 and 1 (exclusive), "
                         f"got {slowdown!r}")
    w1 = np.asarray(speed, dtype=float)
    out = 0.5 * np.asarray(inertia, dtype=float) * w1 ** 2 * (1.0 - (1.0 - s) ** 2)
    return float(out) if out.ndim == 0 else out


def recovery_time(inertia: float, motor: MotorModel, speed_from: float, speed_to: float,
                  idle_torque: float = 0.0) -> float:
    """Time for the motor to bring the flywheel back up to speed after a stroke.

    With the linear motor ``T = k·(ω₀ − ω)`` and a constant idle load ``T_i``,
    ``I·dω/dt = k·(ω_∞ − ω)`` where ``ω_∞ = ω₀ − T_i/k``: the speed approaches ``ω_∞``
    exponentially with time constant ``τ = I/k`` and
    ``t = τ·ln((ω_∞ − ω_from)/(ω_∞ − ω_to))``.

    Parameters
    ----------
    inertia : float [kg*m^2]
        Inertia of all rotating parts except the motor rotor, at the logged shaft (the
        rotor's ``J·n²`` is added).
    motor : MotorModel
        The driving motor.
    speed_from, speed_to : float [rad/s]
        Logged-shaft speed after the stroke and the speed to reach,
        ``speed_from < speed_to < ω_∞``.
    idle_torque : float [N*m]
        Constant load torque between strokes (friction, idling), at the logged shaft.

    Returns
    -------
    float [s]
        Recovery time.

    References
    ----------
    .. [1] S. J. Chapman, *Electric Machinery Fundamentals*, linear region of the
       induction-motor torque–speed characteristic; the first-order linear ODE
       solution is the exponential response of any textbook on differential equations.
    """
    if not (math.isfinite(inertia) and inertia > 0):
        raise UsageError(f"inertia must be a positive number of kg m^2, got {inertia!r}")
    k = motor.slope
    w_inf = motor.no_load_speed - idle_torque / k
    if not (0 <= speed_from < speed_to):
        raise UsageError("speed_from must be below speed_to (the flywheel speeds up "
                         "during recovery)")
    if speed_to >= w_inf:
        raise UsageError(f"speed_to ({speed_to * _RPM:.6g} rpm) must be below the speed the "
                         f"motor settles at under the idle torque ({w_inf * _RPM:.6g} rpm)")
    tau = (inertia + motor.referred_inertia) / k
    return float(tau * math.log((w_inf - speed_from) / (w_inf - speed_to)))
