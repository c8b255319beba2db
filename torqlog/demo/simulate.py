"""Synthetic logs of the demo machines: integration, noise and gaps, logger exports.

The demo machines of the invented Brindlemoor Works plant (press, compressor, engine)
and their torque models live in :mod:`torqlog.demo.machines`.

The shaft speed comes from integrating the equation of motion of one rigid inertia,
``I dω/dt = T_drive(θ, ω) − T_load(θ, ω)``, with :func:`scipy.integrate.solve_ivp`
(dense output evaluated at all sample times at once). The run starts at ``θ = 0`` and the
nominal speed a settling time before the log begins, so the log is in steady state.

:func:`simulate` returns a :class:`SimulatedLog` (SI columns); :func:`write_log` writes it
in one of four logger dialects (or Parquet); :func:`demo_profile` gives the matching
machine profile TOML.

Angle conventions: the logged angle is the crank angle [rad], unwrapped, zero at top dead
centre (for the engine: TDC at the start of the intake stroke, so the firing TDC is at
4π·k + 2π) and starts in the first cycle. The once-per-revolution index pulse is at
angle 0 (mod 2π).

References
----------
.. [1] R. G. Budynas, J. K. Nisbett, *Shigley's Mechanical Engineering Design*, 10th ed.,
   McGraw-Hill, 2015, sec. 16-12 (flywheels: equation of motion of a rotating inertia).
"""

from __future__ import annotations

import gzip
import io
import json
import math
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
from scipy.integrate import solve_ivp

from torqlog.demo.machines import PROFILE_PARTS, DemoMachine, get_machine
from torqlog.errors import UsageError
from torqlog.io.notebook import result_html
from torqlog.io.units import si_factor

#: Channels :func:`simulate` can produce, in the order they appear in the data.
CHANNELS: tuple[str, ...] = ("torque", "speed", "angle", "index", "counts")
#: Text dialects :func:`write_log` can write (a ``.parquet`` path writes Parquet instead).
DIALECTS: tuple[str, ...] = ("comma", "semicolon", "preamble", "iso")
#: Encoder pulses per revolution of the simulated ``counts`` channel.
COUNTS_PER_REV = 360
#: Index pulse height [V] and width [rad].
INDEX_VOLTS = 5.0
INDEX_WIDTH = math.radians(5.0)
#: Nominal length of one gap made by ``gaps=n`` [s].
GAP_LENGTH = 0.2

_RPM = 2.0 * math.pi / 60.0
_TWO_PI = 2.0 * math.pi


# ============================================================================ integration
#: Grid of the tabulated equation of motion: points per degree of shaft angle.
TABLE_POINTS_PER_DEGREE = 100


def motion_table(machine: DemoMachine,
                 points_per_degree: int = TABLE_POINTS_PER_DEGREE
                 ) -> tuple[np.ndarray, np.ndarray]:
    """Tabulate the angular acceleration of a machine over one cycle.

    Every demo torque model is at most quadratic in speed (linear-slip motor, linear
    generator load, reciprocating inertia torque ∝ ω²), so
    ``dω/dt = a(θ) + b(θ) ω + c(θ) ω²`` holds exactly; ``a, b, c`` are found from the
    model at three speeds and checked at a fourth.

    Parameters
    ----------
    machine : DemoMachine
    points_per_degree : int
        Grid density over the cycle.

    Returns
    -------
    angle : array [rad]
        Grid over one cycle, ``0 .. 2π·revs_per_cycle`` inclusive.
    coefficients : array, shape (3, n)
        ``a`` [rad/s^2], ``b`` [1/s], ``c`` [1/rad] on the grid.

    Raises
    ------
    UsageError
        If the machine's torque is not quadratic in speed.
    """
    n = int(round(360 * points_per_degree * machine.revs_per_cycle))
    grid = np.linspace(0.0, machine.cycle_angle, n + 1)
    w = machine.speed
    n0, n1, n2 = (machine.acceleration(grid, s) for s in (0.0, w, 2.0 * w))
    c = (n2 - 2.0 * n1 + n0) / (2.0 * w * w)
    b = (n1 - n0) / w - c * w
    a = n0
    check = machine.acceleration(grid, 1.5 * w)
    if np.max(np.abs(a + 1.5 * w * (b + 1.5 * w * c) - check)) > 1e-9 * np.max(np.abs(check)):
        raise UsageError(f"the torque model of {machine.name} is not quadratic in speed; "
                         "it cannot be tabulated")
    return grid, np.vstack([a, b, c])


def integrate_motion(machine: DemoMachine, time: np.ndarray, settle: float | None = None,
                     rtol: float = 1e-8) -> tuple[np.ndarray, np.ndarray]:
    """Shaft angle and speed at ``time`` from the equation of motion.

    Solves ``dθ/dt = ω``, ``I dω/dt = T_drive(θ, ω) − T_load(θ, ω)`` with
    :func:`scipy.integrate.solve_ivp` (RK45, dense output) from ``t = −settle`` with
    ``θ = 0`` and ``ω = machine.speed``, and evaluates the dense output at all ``time``
    at once. The right-hand side interpolates the exact tabulation of
    :func:`motion_table` (0.01° grid) so each step costs microseconds; the step is kept
    below 10° of shaft angle so no load pulse is stepped over.

    Parameters
    ----------
    machine : DemoMachine
    time : array [s]
        Increasing sample times, ``time >= 0``.
    settle : float [s], optional
        Time integrated before ``t = 0``; default ``machine.settle``.
    rtol : float
        Relative tolerance of the integrator.

    Returns
    -------
    angle : array [rad]
        Absolute shaft angle (0 at ``t = −settle``).
    speed : array [rad/s]

    References
    ----------
    Budynas and Nisbett (2015), sec. 16-12 (equation of motion of a flywheel).
    """
    t = np.asarray(time, dtype=float)
    t0 = -(machine.settle if settle is None else settle)
    t_end = max(float(t[-1]) if t.size else 0.0, t0 + 1e-9)
    grid, coef = motion_table(machine)
    cycle = machine.cycle_angle
    last = grid.size - 2
    step = cycle / (grid.size - 1)
    a_tab, b_tab, c_tab = (row.tolist() for row in coef)

    def rhs(_t: float, y: np.ndarray) -> list[float]:
        # scalar arithmetic on Python floats: one call per integrator stage
        th, w = float(y[0]), float(y[1])
        u = (th % cycle) / step
        i = min(int(u), last)
        f = u - i
        a = a_tab[i] + f * (a_tab[i + 1] - a_tab[i])
        b = b_tab[i] + f * (b_tab[i + 1] - b_tab[i])
        c = c_tab[i] + f * (c_tab[i + 1] - c_tab[i])
        return [w, a + (b + c * w) * w]

    sol = solve_ivp(rhs, (t0, t_end), [0.0, machine.speed], method="RK45",
                    dense_output=True, rtol=rtol, atol=[rtol, rtol * machine.speed],
                    max_step=_TWO_PI / machine.speed / 36.0)
    if not sol.success:  # pragma: no cover - the demo models are well behaved
        raise UsageError(f"the simulation of {machine.name} failed: {sol.message}")
    y = sol.sol(t)
    return y[0], y[1]


# ============================================================================ logs
@dataclass(frozen=True)
class SimulatedLog:
    """A simulated logger record.

    Attributes
    ----------
    data : pandas.DataFrame
        SI columns ``time`` [s from ``start``] and the channels asked for among
        ``torque`` [N*m], ``speed`` [rad/s], ``angle`` [rad, unwrapped], ``index`` [V]
        and ``counts`` [encoder pulses, cumulative].
    machine : DemoMachine
        The machine as simulated (with ``load_scale`` and ``inertia`` applied).
    start : pandas.Timestamp
        Wall-clock time of ``time = 0``.
    options : dict
        The options that produced the log, plus ``settle`` [s], ``gap_times`` (per gap,
        the last sample time before and the first after [s]) and ``spike_times`` [s].
    """

    data: pd.DataFrame
    machine: DemoMachine
    start: pd.Timestamp
    options: dict[str, Any]

    @property
    def channels(self) -> tuple[str, ...]:
        """The channels present (without ``time``)."""
        return tuple(c for c in self.data.columns if c != "time")

    @property
    def rate(self) -> float:
        """Sample rate [Hz]."""
        return float(self.options["rate"])

    _repr_html_ = result_html  # the notebook view

    def to_dict(self) -> dict[str, Any]:
        """Summary for JSON output: machine, rows, duration, channels, options."""
        return {
            "machine": self.machine.key,
            "name": self.machine.name,
            "rows": int(len(self.data)),
            "duration_s": float(self.options["duration"]),
            "rate_Hz": self.rate,
            "channels": list(self.channels),
            "start": self.start.isoformat(),
            "options": dict(self.options),
        }


def _check_channels(channels: Sequence[str] | str) -> tuple[str, ...]:
    if isinstance(channels, str):
        channels = [c.strip() for c in channels.split(",") if c.strip()]
    chosen = tuple(channels)
    bad = [c for c in chosen if c not in CHANNELS]
    if bad:
        raise UsageError(f"unknown channel {bad[0]!r}; valid channels: {', '.join(CHANNELS)}")
    if not chosen:
        raise UsageError(f"no channels asked for; choose from: {', '.join(CHANNELS)}")
    return tuple(c for c in CHANNELS if c in chosen)


def simulate(machine: DemoMachine | str, duration: float = 60.0, rate: float = 1000.0,
             channels: Sequence[str] | str = ("torque", "speed"), seed: int = 0,
             noise: bool = True, gaps: int = 0, spikes: int = 0, clip: float | None = None,
             start: str | pd.Timestamp = "2026-03-02T06:00:00", inertia: float | None = None,
             load_scale: float = 1.0, fault: Fault | None = None) -> SimulatedLog:
    """Simulate a steady-state log of a demo machine.

    Parameters
    ----------
    machine : DemoMachine or str
        A machine or its key in :data:`torqlog.demo.machines.MACHINES`.
    duration : float [s]
        Length of the log.
    rate : float [Hz]
        Sample rate.
    channels : sequence of str or comma-separated str
        Any of ``torque``, ``speed``, ``angle``, ``index``, ``counts``.
    seed : int
        Seed of the numpy random generator (noise, gap and spike positions).
    noise : bool
        Add sensor noise: torque SD 1 % of its dynamic range, speed SD 0.05 % of the
        mean speed, index SD 0.02 V.
    gaps : int
        Number of ~0.2 s blocks of samples to remove (the time column jumps).
    spikes : int
        Number of one-sample spikes added to the torque (or to the speed when there is
        no torque channel).
    clip : float [N*m], optional
        Saturate the logged torque at ``±clip``.
    start : str or Timestamp
        Wall-clock time of the first sample.
    inertia : float [kg*m^2], optional
        Override the machine inertia at the logged shaft.
    load_scale : float
        Factor on the working load (die work, gas load, generator load).
    fault : Fault, optional
        A defect injected into the logged channels (:class:`Fault`); the cycles it hits
        are in ``options["fault"]`` (see :func:`write_truth`).

    Returns
    -------
    SimulatedLog

    Raises
    ------
    UsageError
        For options out of range; the message names the option.
    """
    m = get_machine(machine) if isinstance(machine, str) else machine
    chans = _check_channels(channels)
    if not (duration > 0 and math.isfinite(duration)):
        raise UsageError(f"duration must be a positive number of seconds, got {duration!r}")
    if not (rate > 0 and math.isfinite(rate)):
        raise UsageError(f"rate must be a positive number in Hz, got {rate!r}")
    n = int(round(duration * rate))
    if n < 2:
        raise UsageError(f"duration {duration:g} s at {rate:g} Hz gives fewer than 2 samples")
    if int(gaps) != gaps or gaps < 0 or int(spikes) != spikes or spikes < 0:
        raise UsageError("gaps and spikes must be whole numbers, 0 or more")
    if clip is not None and not (clip > 0):
        raise UsageError(f"clip must be a positive torque in N*m, got {clip!r}")
    try:
        t_start = pd.Timestamp(start)
    except (ValueError, TypeError):
        raise UsageError(f"start {start!r} is not an ISO-8601 time such as "
                         "'2026-03-02T06:00:00'") from None
    if pd.isna(t_start):
        raise UsageError(f"start {start!r} is not an ISO-8601 time such as "
                         "'2026-03-02T06:00:00'")
    gap_len = max(1, int(round(GAP_LENGTH * rate)))
    if gaps and n < gaps * 4 * gap_len:
        raise UsageError(f"{gaps} gaps of {GAP_LENGTH} s need a log of at least "
                         f"{gaps * 4 * GAP_LENGTH:g} s; give a longer duration or fewer gaps")

    m = m.with_load_scale(load_scale)
    if inertia is not None:
        m = m.with_inertia(inertia)

    time = np.arange(n) / rate
    theta, omega = integrate_motion(m, time)
    # start the logged angle in the first cycle, keeping the cycle phase
    theta = theta - math.floor(theta[0] / m.cycle_angle) * m.cycle_angle

    rng = np.random.default_rng(seed)
    torque = m.logged_torque(theta, omega)
    t_range = float(np.ptp(torque))
    truth = None
    if fault is not None:
        torque, omega, truth = apply_fault(fault, m, time, theta, torque, omega)
    t_noise = rng.normal(0.0, 0.01 * t_range, n)
    w_noise = rng.normal(0.0, 5e-4 * float(np.mean(omega)), n)
    i_noise = rng.normal(0.0, 0.02, n)
    if noise:
        torque = torque + t_noise
        speed = omega + w_noise
    else:
        speed = omega.copy()

    keep = np.ones(n, dtype=bool)
    gap_times: list[list[float]] = []
    if gaps:
        seg = n // gaps
        offsets = rng.integers(seg // 4, seg - seg // 4 - gap_len + 1, size=gaps)
        starts = np.arange(gaps) * seg + offsets
        idx = (starts[:, None] + np.arange(gap_len)[None, :]).ravel()
        keep[idx] = False
        gap_times = [[float(time[s - 1]), float(time[s + gap_len])] for s in starts]

    spike_times: list[float] = []
    if spikes:
        candidates = np.flatnonzero(keep[1:-1]) + 1
        if spikes > candidates.size:
            raise UsageError(f"{spikes} spikes do not fit in {candidates.size} samples")
        where = np.sort(rng.choice(candidates, size=spikes, replace=False))
        sign = rng.choice([-1.0, 1.0], size=spikes)
        size = 2.0 + rng.random(spikes)
        if "torque" in chans:
            torque[where] += sign * size * t_range
        else:
            speed[where] += sign * size * 0.2 * float(np.mean(omega))
        spike_times = [float(x) for x in time[where]]

    if clip is not None:
        torque = np.clip(torque, -clip, clip)

    columns: dict[str, np.ndarray] = {"time": time}
    if "torque" in chans:
        columns["torque"] = torque
    if "speed" in chans:
        columns["speed"] = speed
    if "angle" in chans:
        columns["angle"] = theta
    if "index" in chans:
        pulse = np.where(np.mod(theta, _TWO_PI) < INDEX_WIDTH, INDEX_VOLTS, 0.0)
        columns["index"] = pulse + i_noise if noise else pulse
    if "counts" in chans:
        columns["counts"] = np.floor(theta / _TWO_PI * COUNTS_PER_REV).astype(np.int64)
    data = pd.DataFrame({k: v[keep] for k, v in columns.items()})
    data = data.reset_index(drop=True)

    options = {
        "machine": m.key, "duration": float(duration), "rate": float(rate),
        "channels": list(chans), "seed": int(seed), "noise": bool(noise),
        "gaps": int(gaps), "spikes": int(spikes), "clip": clip,
        "inertia": float(m.inertia), "load_scale": float(load_scale),
        "settle": float(m.settle), "gap_times": gap_times, "spike_times": spike_times,
        "fault": truth,
    }
    return SimulatedLog(data=data, machine=m, start=t_start, options=options)


# ============================================================================ faults
#: Fault types: default severity, what it is relative to, the cycle angle window [deg]
#: (None: moves with a gear) and which cycles it hits by default.
FAULTS: dict[str, dict[str, Any]] = {
    "valve-leak": {"severity": 0.10, "channel": "torque", "window": (60.0, 130.0),
                   "pick": "random", "rate": 0.05,
                   "about": "a leaking compressor valve: a local torque deficit over part of "
                            "the stroke (severity × the normal peak torque)"},
    "misfire": {"severity": 1.0, "channel": "torque", "window": (360.0, 500.0),
                "pick": "every", "every": 7,
                "about": "one cylinder misfiring every Nth cycle: the firing stroke's torque "
                         "pulse lost (severity × 40 % of the torque range)"},
    "clutch-slip": {"severity": 0.01, "channel": "speed", "window": (90.0, 250.0),
                    "pick": "from", "from": 0.5,
                    "about": "a slipping clutch or belt: the logged speed sags over part of "
                             "the stroke (severity × mean speed), sustained from a time on"},
    "gear-tooth": {"severity": 0.08, "channel": "torque", "window": None, "order": 0.73,
                   "tooth_deg": 8.0, "pick": "all",
                   "about": "a damaged gear tooth: a short torque dip once per gear revolution "
                            "(gear at 0.73× shaft speed; severity × the torque range)"},
}


@dataclass(frozen=True)
class Fault:
    """A defect to inject into a simulated log (invented scenarios for tests and the demo).

    Attributes
    ----------
    name : str
        One of :data:`FAULTS`: ``valve-leak``, ``misfire``, ``clutch-slip``, ``gear-tooth``.
    severity : float, optional
        Size of the defect (meaning per fault, see :data:`FAULTS`); None takes the default.
    every : int, optional
        Hit every Nth cycle.
    rate : float, optional
        Hit each cycle with this probability (seeded).
    start : float [s], optional
        Hit every cycle from this time on.
    seed : int
        Seed of the random choice of cycles.
    """

    name: str
    severity: float | None = None
    every: int | None = None
    rate: float | None = None
    start: float | None = None
    seed: int = 0

    def __post_init__(self) -> None:
        if self.name not in FAULTS:
            raise UsageError(f"unknown fault {self.name!r}; valid faults: {', '.join(FAULTS)}")
        if self.severity is not None and not (self.severity > 0 and math.isfinite(
                self.severity)):
            raise UsageError(f"fault severity must be a positive number, got {self.severity!r}")
        if self.every is not None and self.every < 1:
            raise UsageError(f"fault every N cycles needs N ≥ 1, got {self.every}")
        if self.rate is not None and not (0 < self.rate <= 1):
            raise UsageError(f"fault rate must be in (0, 1], got {self.rate}")

    @property
    def level(self) -> float:
        """The severity used."""
        return float(self.severity if self.severity is not None
                     else FAULTS[self.name]["severity"])


def _half_sine(x: np.ndarray, lo: float, hi: float) -> np.ndarray:
    inside = (x >= lo) & (x < hi)
    return np.where(inside, np.sin(np.pi * (x - lo) / (hi - lo)), 0.0)


def apply_fault(fault: Fault, machine: DemoMachine, time: np.ndarray, theta: np.ndarray,
                torque: np.ndarray, speed: np.ndarray
                ) -> tuple[np.ndarray, np.ndarray, dict[str, Any]]:
    """Inject a fault into the logged torque or speed (not into the motion).

    The defect is added to the logged channel only: the machine's motion is integrated
    without it, which is close for a heavy flywheel and keeps the healthy cycles of a
    faulty log identical to a healthy log's.

    Parameters
    ----------
    fault : Fault
    machine : DemoMachine
    time : ndarray [s]
    theta : ndarray [rad]
        Crank angle (unwrapped, the cycle starts at multiples of the cycle angle).
    torque : ndarray [N*m]
    speed : ndarray [rad/s]

    Returns
    -------
    torque, speed : ndarray
        The logged channels with the defect.
    truth : dict
        ``name``, ``severity``, ``channel``, ``about`` and ``events``: the time [s] of the
        middle of each defect (``t_s``), its extent (``from_s``, ``to_s``) and its cycle
        index (crank angle // cycle angle).
    """
    spec = FAULTS[fault.name]
    span = machine.cycle_angle
    span_deg = math.degrees(span)
    m = np.floor(theta / span).astype(np.int64)
    m0, m1 = int(m[0]), int(m[-1])
    n_cyc = m1 - m0 + 1
    phase = np.degrees(theta - m * span)
    pick = "every" if fault.every else "rate" if fault.rate else "from" if fault.start \
        is not None else spec["pick"]
    hit = np.zeros(n_cyc, dtype=bool)
    if pick == "every":
        n = int(fault.every or spec["every"])
        hit[(np.arange(m0, m1 + 1) % n) == 0] = True
    elif pick in ("random", "rate"):
        rng = np.random.default_rng(fault.seed + 7919)
        hit = rng.random(n_cyc) < (fault.rate or spec["rate"])
    elif pick == "from":
        t_from = fault.start if fault.start is not None else spec["from"] * float(time[-1])
        cyc_from = int(m[np.searchsorted(time, t_from)]) if t_from <= time[-1] else m1 + 1
        hit[cyc_from - m0:] = True
    else:
        hit[:] = True
    sev = fault.level
    mask = hit[m - m0]
    if spec["window"] is None:  # gear tooth: once per gear revolution, any crank angle
        order = spec["order"]
        gear = np.degrees(theta * order) % 360.0
        tooth = spec["tooth_deg"]
        shape = _half_sine(gear, 180.0, 180.0 + tooth)
        rev = np.floor(theta * order / _TWO_PI)
        centres = (rev * _TWO_PI + math.radians(180.0 + tooth / 2)) / order
        ev_theta = np.unique(centres)
        ev_theta = ev_theta[(ev_theta >= theta[0]) & (ev_theta <= theta[-1])]
        half = math.radians(tooth / 2) / order
    else:
        lo, hi = spec["window"]
        lo, hi = lo % span_deg, min(hi, span_deg)
        shape = _half_sine(phase, lo, hi)
        ev_theta = (np.arange(m0, m1 + 1) * span + math.radians(0.5 * (lo + hi)))
        ev_theta = ev_theta[(ev_theta >= theta[0]) & (ev_theta <= theta[-1])]
        half = math.radians(0.5 * (hi - lo))
    shape = np.where(mask, shape, 0.0)
    ev_cycle = np.floor(ev_theta / span).astype(np.int64)
    keep = hit[ev_cycle - m0]
    ev_theta, ev_cycle = ev_theta[keep], ev_cycle[keep]
    ev_time = np.interp(ev_theta, theta, time)
    ev_from = np.interp(ev_theta - half, theta, time)
    ev_to = np.interp(ev_theta + half, theta, time)
    if spec["channel"] == "torque":
        size = {"valve-leak": float(np.max(np.abs(torque))),
                "misfire": 0.4 * float(np.ptp(torque))}.get(fault.name, float(np.ptp(torque)))
        torque = torque - sev * size * shape
        amount = sev * size
    else:
        amount = sev * float(np.mean(speed))
        speed = speed * (1.0 - sev * shape)
    truth = {"name": fault.name, "severity": sev, "channel": spec["channel"],
             "amplitude": amount, "about": spec["about"], "pick": pick,
             "events": [{"t_s": float(t), "from_s": float(a), "to_s": float(b),
                         "cycle_index": int(c)}
                        for t, a, b, c in zip(ev_time, ev_from, ev_to, ev_cycle, strict=True)]}
    return torque, speed, truth


def write_truth(log: SimulatedLog, path: str | Path) -> Path:
    """Write the sidecar truth file of a faulty log (JSON: the fault and its events)."""
    p = Path(path)
    data = {"machine": log.machine.key, "start": log.start.isoformat(),
            "fault": log.options.get("fault")}
    p.write_text(json.dumps(data, indent=1), encoding="utf-8")
    return p


def truth_cycles(events: list[dict[str, Any]], t_start: np.ndarray,
                 duration: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Mask of the cycles (start [s], duration [s]) that overlap a fault event.

    ``hit``: the cycles holding an event's middle; ``touched`` (second value): every
    cycle that overlaps an event's extent (a cycle split at another phase than the
    crank's may hold part of a defect).
    """
    ev = sorted(events, key=lambda e: e["t_s"])
    t = np.array([e["t_s"] for e in ev], dtype=np.float64)
    a = np.searchsorted(t, t_start, side="left")
    b = np.searchsorted(t, t_start + duration, side="left")
    lo = np.array([e.get("from_s", e["t_s"]) for e in ev], dtype=np.float64)
    hi = np.array([e.get("to_s", e["t_s"]) for e in ev], dtype=np.float64)
    # cycle [s, e) overlaps event [lo, hi] when lo < e and hi > s
    first = np.searchsorted(np.maximum.accumulate(hi) if hi.size else hi, t_start,
                            side="right")
    last = np.searchsorted(lo, t_start + duration, side="left")
    return b > a, last > first


# ============================================================================ writing
_COMMA_NAMES = {"time": "time_s", "torque": "torque_Nm", "speed": "speed_rpm",
                "angle": "angle_deg", "index": "index_V", "counts": "counts"}
_SEMICOLON_NAMES = {"time": "Time [ms]", "torque": "Torque [kN·m]", "speed": "Speed [rpm]",
                    "angle": "Crank angle [deg]", "index": "Index [V]",
                    "counts": "Encoder counts"}
_PREAMBLE_NAMES = {"time": "Sample", "torque": "Torque", "speed": "Speed", "angle": "Angle",
                   "index": "Index", "counts": "Counts"}
_PREAMBLE_UNITS = {"time": "-", "torque": "lbf·ft", "speed": "rad/s", "angle": "deg",
                   "index": "V", "counts": "-"}
_ISO_NAMES = {"time": "timestamp", "torque": "torque [N·m]", "speed": "speed [rad/s]",
              "angle": "angle [rad]", "index": "index [V]", "counts": "counts"}
_PARQUET_NAMES = {"time": "time_s", "torque": "torque_Nm", "speed": "speed_rad_s",
                  "angle": "angle_rad", "index": "index_V", "counts": "counts"}

# unit each dialect writes, per channel (converted from SI with torqlog.io.units.si_factor)
_UNITS = {
    "comma": {"time": ("s", "time"), "torque": ("N*m", "torque"),
              "speed": ("rpm", "speed"), "angle": ("deg", "angle")},
    "semicolon": {"time": ("ms", "time"), "torque": ("kN*m", "torque"),
                  "speed": ("rpm", "speed"), "angle": ("deg", "angle")},
    "preamble": {"torque": ("lbf*ft", "torque"), "speed": ("rad/s", "speed"),
                 "angle": ("deg", "angle")},
    "iso": {},
}


def _round_sig(values: np.ndarray, digits: int = 6) -> np.ndarray:
    """Round a column to ``digits`` significant digits of its largest magnitude."""
    big = float(np.max(np.abs(values))) if values.size else 0.0
    if big == 0.0 or not math.isfinite(big):
        return values
    decimals = digits - 1 - math.floor(math.log10(big))
    return np.round(values, decimals)


def _table(log: SimulatedLog, dialect: str) -> pd.DataFrame:
    """The columns of ``log`` in the units of ``dialect``, rounded for writing."""
    out: dict[str, Any] = {}
    units = _UNITS[dialect]
    for col in log.data.columns:
        values = log.data[col].to_numpy()
        if col == "counts":
            out[col] = values
            continue
        if col == "time":
            if dialect == "preamble":
                out[col] = np.round(values * log.rate).astype(np.int64)
            elif dialect == "iso":
                ns = np.round(values * 1e9).astype(np.int64)
                out[col] = log.start + pd.to_timedelta(ns, unit="ns")
            else:
                unit, kind = units["time"]
                # time to the nanosecond, so every sample time is written exactly
                out[col] = np.round(values / si_factor(unit, kind), 9 - 3 * (unit == "ms"))
            continue
        if col in units:
            unit, kind = units[col]
            values = values / si_factor(unit, kind)
        if col == "angle":
            # cumulative: a fixed resolution (1e-4 deg, 1e-6 rad) however long the log
            out[col] = np.round(values, 6 if dialect == "iso" else 4)
        else:
            out[col] = _round_sig(values, 4 if col == "index" else 6)
    return pd.DataFrame(out)


def _open_text(path: Path, gz: bool) -> io.TextIOBase:
    if gz:
        raw = gzip.GzipFile(filename="", mode="wb", fileobj=open(path, "wb"), mtime=0)
        return io.TextIOWrapper(raw, encoding="utf-8", newline="")
    return open(path, "w", encoding="utf-8", newline="")


def write_log(log: SimulatedLog, path: str | Path, dialect: str = "comma") -> Path:
    """Write a simulated log as a logger export.

    Parameters
    ----------
    log : SimulatedLog
    path : str or Path
        Output file. A ``.gz`` suffix writes gzip-compressed text; a ``.parquet`` suffix
        writes Parquet with SI columns ``time_s, torque_Nm, speed_rad_s, angle_rad,
        index_V, counts`` (the dialect is then not used).
    dialect : {"comma", "semicolon", "preamble", "iso"}
        ``comma``: ``,``-delimited, header ``time_s,torque_Nm,speed_rpm,angle_deg,
        index_V,counts``. ``semicolon``: ``;``-delimited, decimal comma, quoted header
        ``"Time [ms]";"Torque [kN·m]";"Speed [rpm]";"Crank angle [deg]";"Index [V]";
        "Encoder counts"``. ``preamble``: ``Key: value`` metadata lines, a blank line, a
        tab-delimited header ``Sample, Torque, Speed, Angle, Index, Counts`` and a unit
        row (torque in lbf·ft, speed in rad/s, angle in deg); time is the sample number.
        ``iso``: ``,``-delimited, ISO-8601 ``timestamp`` with microseconds and SI
        columns ``torque [N·m], speed [rad/s], angle [rad], index [V], counts``.
        Only the channels present are written; values carry about 6 significant digits
        (the cumulative angle a fixed 1e-4 deg or 1e-6 rad, time exact to 1 ns).

    Returns
    -------
    Path
        The file written.

    Raises
    ------
    UsageError
        For an unknown dialect, or a log with gaps in the ``preamble`` dialect (which
        has no time column).
    """
    from torqlog.io.outputs import atomic_path

    p = Path(path)
    if p.suffix == ".parquet":
        with atomic_path(p) as tmp:
            _write_parquet(log, tmp)
        return p
    if dialect not in DIALECTS:
        raise UsageError(f"unknown dialect {dialect!r}; valid dialects: {', '.join(DIALECTS)}")
    if dialect == "preamble" and log.options.get("gaps", 0):
        raise UsageError("the preamble dialect has no time column, so a log with gaps "
                         "cannot be written in it; use gaps=0 or another dialect")
    table = _table(log, dialect)
    cols = list(table.columns)
    with atomic_path(p) as tmp, _open_text(tmp, p.suffix == ".gz") as fh:
        if dialect == "comma":
            table.to_csv(fh, index=False, header=[_COMMA_NAMES[c] for c in cols],
                         lineterminator="\n")
        elif dialect == "semicolon":
            fh.write(";".join(f'"{_SEMICOLON_NAMES[c]}"' for c in cols) + "\n")
            table.to_csv(fh, index=False, header=False, sep=";", decimal=",",
                         lineterminator="\n")
        elif dialect == "preamble":
            start = log.start.strftime("%Y-%m-%d %H:%M:%S")
            fh.write("Logger: Imaginary Logger Mk 0 (invented for the torqlog demo)\n"
                     f"Machine: {log.machine.name}\n"
                     f"Start: {start}\nRate: {log.rate:g} Hz\n"
                     f"Channels: {len(cols) - 1}\n\n")
            fh.write("\t".join(_PREAMBLE_NAMES[c] for c in cols) + "\n")
            fh.write("\t".join(_PREAMBLE_UNITS[c] for c in cols) + "\n")
            table.to_csv(fh, index=False, header=False, sep="\t", lineterminator="\n")
        else:  # iso
            table.to_csv(fh, index=False, header=[_ISO_NAMES[c] for c in cols],
                         date_format="%Y-%m-%dT%H:%M:%S.%f", lineterminator="\n")
    return p


def _write_parquet(log: SimulatedLog, path: Path) -> Path:
    import pyarrow as pa
    import pyarrow.parquet as pq

    arrays = {_PARQUET_NAMES[c]: log.data[c].to_numpy() for c in log.data.columns}
    meta = {"machine": log.machine.name, "machine_key": log.machine.key,
            "start": log.start.isoformat(), "rate_Hz": log.rate}
    table = pa.table(arrays).replace_schema_metadata({"torqlog": json.dumps(meta)})
    pq.write_table(table, path)
    return path


# ============================================================================ profiles
def _num(x: float) -> str:
    return f"{x:.6g}"


def demo_profile(machine: DemoMachine | str) -> str:
    """Machine profile (TOML text) of a demo machine, consistent with its simulation.

    Sections ``machine``, ``motor`` (not for the engine), ``flywheel``, ``shaft``,
    ``torsional`` and ``shifts`` in the schema of :mod:`torqlog.io.profile`. Speed,
    inertia, cycle and motor data come from the machine; shaft geometry, bearing
    positions, masses and the torsional chain are invented but plausible, and the
    torsional inertias add up to the machine inertia.

    Parameters
    ----------
    machine : DemoMachine or str

    Returns
    -------
    str
        TOML text, loadable with :func:`torqlog.io.profile.load_profile`.
    """
    m = get_machine(machine) if isinstance(machine, str) else machine
    parts = PROFILE_PARTS[m.key]
    nominal = parts["torsional_inertias"]
    inertias = [j * m.inertia / sum(nominal) for j in nominal]
    lines = [
        f"# {m.name}, Brindlemoor Works (invented demo machine): {m.description}",
        "# Generated by torqlog simulate; values are invented but plausible.",
        "",
        "[machine]",
        f'name = "{m.name}"',
        f"revs_per_cycle = {m.revs_per_cycle}",
        f"speed_rpm = {m.speed / _RPM:.2f}",
        f"inertia_kgm2 = {_num(m.inertia)}        # referred to the logged shaft",
        f"target_cs = {parts['target_cs']}",
        f"flywheel_speed_ratio = {parts['flywheel_speed_ratio']}",
        f'torque_role = "{"load" if m.motor is not None else "drive"}"'
        + ("          # the log holds the engine's crank torque" if m.motor is None else ""),
        "",
    ]
    motor = m.motor
    if motor is not None:
        lines += [
            "[motor]                     # induction motor, linear slip region",
            f"power_kW = {_num(motor.power / 1e3)}",
            f"sync_rpm = {_num(motor.sync_speed / _RPM)}",
            f"rated_rpm = {_num(motor.rated_speed / _RPM)}",
            f"speed_ratio = {_num(motor.speed_ratio)}",
            "",
        ]
    names = ", ".join(f'"{n}"' for n in parts["torsional_names"])
    lines += [
        "[flywheel]",
        parts["flywheel"],
        "[shaft]",
        parts["shaft"],
        "[torsional]                  # referred to the logged shaft",
        f"names = [{names}]",
        f"inertias_kgm2 = [{', '.join(_num(i) for i in inertias)}]",
        f"stiffness_Nm_per_rad = [{', '.join(_num(k) for k in parts['stiffness'])}]",
        "",
        "[shifts]",
        'starts = ["06:00", "14:00", "22:00"]',
        'names = ["early", "late", "night"]',
        'timezone = "UTC"',
        "",
    ]
    return "\n".join(lines)
