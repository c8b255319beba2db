"""Simulated logs of machines with a known inertia and a known linear drive (or load) slope,
and the "true" added inertia for a target Cs by direct simulation of the true machine.

Both sides integrate ``I·dω/dt = T_drive − T_load`` in time with scipy's ``solve_ivp``
(independent of torqlog's angle-domain periodic solver); the truth is found by bisection
(:func:`scipy.optimize.bisect`) on the added inertia. Machines are invented (Brindlemoor
Works scenario); their numbers are plausible, not taken from any real machine.

References
----------
.. [1] R. G. Budynas, J. K. Nisbett, *Shigley's Mechanical Engineering Design*, 10th ed.,
   sec. 16-12 (equation of motion of a flywheel shaft).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import bisect


@dataclass(frozen=True)
class Machine:
    """A shaft of inertia ``inertia`` [kg m²] with a linear unlogged characteristic.

    ``role="load"``: the log holds the load torque ``shape(θ)``; the drive gives
    ``slope·(w0 − ω)``. ``role="drive"``: the log holds the engine torque ``shape(θ)``;
    the load takes ``mean + slope·(ω − w_ref)``.
    """

    name: str
    inertia: float
    slope: float
    speed: float           # nominal mean speed [rad/s]
    revs: int
    role: str
    harmonics: tuple[tuple[float, float, float], ...]  # (order, amplitude N m, phase)
    mean_torque: float
    pulse: tuple[float, float, float] | None = None     # (peak N m, centre rad, half width)
    rate: float = 2000.0
    cycles: int = 40
    extra: dict = field(default_factory=dict)

    @property
    def period(self) -> float:
        return 2.0 * math.pi * self.revs

    def fluct(self, theta: np.ndarray | float) -> np.ndarray:
        """Fluctuating part of the logged torque (zero mean over a cycle)."""
        th = np.asarray(theta, dtype=float)
        out = np.zeros_like(th)
        for order, amp, ph in self.harmonics:
            out = out + amp * np.sin(order * th + ph)
        if self.pulse is not None:
            peak, centre, half = self.pulse
            r = np.mod(th - centre + math.pi * self.revs, self.period) - math.pi * self.revs
            bump = np.where(np.abs(r) < half, (0.5 * (1 + np.cos(math.pi * r / half))) ** 2,
                            0.0)
            # mean of the squared raised cosine over the cycle: peak·(3/4)·half/π/revs
            out = out + peak * (bump - 0.75 * half / (math.pi * self.revs))
        return out

    def logged(self, theta, scale=1.0):
        return self.mean_torque + scale * self.fluct(theta)

    def accel(self, theta, w, inertia, scale=1.0):
        logged = self.logged(theta, scale)
        if self.role == "load":
            w0 = self.speed + self.mean_torque / self.slope
            return (self.slope * (w0 - w) - logged) / inertia
        return (logged - (self.mean_torque + self.slope * (w - self.speed))) / inertia


COMPRESSOR = Machine("compressor K7 (invented)", inertia=4.0, slope=120.0, speed=62.83,
                     revs=1, role="load", harmonics=((1, 170.0, 0.0), (2, 70.0, 0.7)),
                     mean_torque=150.0, rate=2000.0, cycles=40)
PRESS = Machine("press 9 (invented)", inertia=300.0, slope=3000.0, speed=4.8, revs=1,
                role="load", harmonics=(), mean_torque=1000.0,
                pulse=(9000.0, 3.5, 0.6), rate=400.0, cycles=30)
ENGINE = Machine("generator set G3 engine (invented)", inertia=12.0, slope=400.0,
                 speed=150.0, revs=2, role="drive",
                 harmonics=((0.5, 900.0, 0.0), (1.0, 500.0, 0.3), (1.5, 200.0, 1.57)),
                 mean_torque=300.0, rate=5000.0, cycles=40)


def simulate_log(m: Machine, path: Path, *, seed: int = 0, amp_sd: float = 0.0,
                 speed_noise: float = 2e-4, torque_noise: float = 5e-3,
                 inertia: float | None = None, speed_lowpass_hz: float | None = None,
                 unlogged: tuple[float, float] | None = None) -> dict:
    """Write a CSV log (time_s, torque_Nm, speed_rpm, angle_deg) of machine ``m``.

    ``amp_sd``: cycle-to-cycle sd of the (log-normal) amplitude of the fluctuation.
    ``speed_lowpass_hz``: the logger low-passes the speed (1st order) — a log the model
    cannot explain. ``unlogged``: (inertia, stiffness) of a drive inertia behind a soft
    coupling, not in the log's shaft. Returns the amplitude factors.
    """
    rng = np.random.default_rng(seed)
    n_cyc = m.cycles + 12
    amps = np.exp(rng.normal(0.0, amp_sd, n_cyc)) if amp_sd else np.ones(n_cyc)
    i_shaft = m.inertia if inertia is None else inertia
    period = m.period

    def scale(theta):
        return amps[min(int(theta // period), n_cyc - 1)]

    if unlogged is None:
        def rhs(t, y):
            return [y[1], m.accel(y[0], y[1], i_shaft, scale(y[0]))]
        y0 = [0.0, m.speed]
    else:
        j_m, stiff = unlogged
        w0 = m.speed + m.mean_torque / m.slope

        def rhs(t, y):  # shaft angle, shaft speed, motor angle, motor speed
            twist = stiff * (y[2] - y[0])
            t_drive = m.slope * (w0 - y[3])
            return [y[1], (twist - m.logged(y[0], scale(y[0]))) / i_shaft, y[3],
                    (t_drive - twist) / j_m]
        y0 = [0.0, m.speed, m.mean_torque / stiff, m.speed]
    settle = 6 * period / m.speed
    t_end = settle + m.cycles * period / m.speed
    sol = solve_ivp(rhs, (0.0, t_end), y0, rtol=1e-9, atol=1e-9, dense_output=True,
                    max_step=period / m.speed / 200)
    t = np.arange(0.0, t_end - settle, 1.0 / m.rate)
    y = sol.sol(t + settle)
    theta, w = y[0], y[1]
    if speed_lowpass_hz:
        from scipy.signal import butter, lfilter
        b, a = butter(1, speed_lowpass_hz, fs=m.rate)
        w = lfilter(b, a, w - w[0]) + w[0]
    idx = np.minimum((theta // period).astype(int), n_cyc - 1)
    torque = m.logged(theta, amps[idx])
    torque = torque + rng.normal(0.0, torque_noise * abs(m.mean_torque), t.size)
    w = w + rng.normal(0.0, speed_noise * m.speed, t.size)
    ang = np.degrees(np.mod(theta, 2 * math.pi))
    with open(path, "w") as fh:
        fh.write("time_s,torque_Nm,speed_rpm,angle_deg\n")
        np.savetxt(fh, np.column_stack([t, torque, w * 60 / (2 * math.pi), ang]),
                   delimiter=",", fmt=["%.6f", "%.5f", "%.6f", "%.4f"])
    return {"amps": amps[6:6 + m.cycles]}


def steady_cs(m: Machine, inertia: float, scale: float = 1.0) -> float:
    """Cs of the true machine in steady state: (ω_max − ω_min)/ω̄ over the last cycle,
    ω̄ the time mean (the cycle table's definition)."""
    period = m.period
    tau = inertia / m.slope
    n = int(math.ceil(12 * tau * m.speed / period)) + 4
    t_end = n * period / m.speed

    def rhs(t, y):
        return [y[1], m.accel(y[0], y[1], inertia, scale)]

    def done(t, y):
        return y[0] - n * period
    done.terminal = True
    sol = solve_ivp(rhs, (0.0, 2 * t_end), [0.0, m.speed], rtol=1e-10, atol=1e-10,
                    dense_output=True, max_step=period / m.speed / 100, events=done)
    t1 = float(sol.t_events[0][0])
    tt = np.linspace(0.8 * t1 * (n - 1) / n, t1, 50_000)
    t0 = float(np.interp((n - 1) * period, sol.sol(tt)[0], tt))
    ts = np.linspace(t0, t1, 20_001)
    w = sol.sol(ts)[1]
    wbar = period / (t1 - t0)
    return float((w.max() - w.min()) / wbar)


def true_added_inertia(m: Machine, target_cs: float, scale: float = 1.0,
                       xtol_rel: float = 1e-3) -> float:
    """Added inertia at which the true machine meets ``target_cs`` (bisection)."""
    if steady_cs(m, m.inertia, scale) <= target_cs:
        return 0.0
    hi = m.inertia
    while steady_cs(m, m.inertia + hi, scale) > target_cs:
        hi *= 2.0
    return float(bisect(lambda a: steady_cs(m, m.inertia + a, scale) - target_cs, 0.0, hi,
                        xtol=xtol_rel * hi))
