"""Flywheel inertia: how much a machine needs, how much it has, and how sure we are.

The sizing rests on the small-fluctuation relation between the energy swing of a cycle
and the speed fluctuation it causes on a shaft of inertia I,

    ΔE ≈ I·Cs·ω̄²,   so   I_req = ΔE_design / (Cs·ω̄²),

with ΔE_design a stated quantile of the per-cycle energy swings (default the 95th
percentile) and Cs the target coefficient of speed fluctuation. The existing inertia can be
given, or identified from a mean cycle that has both torque and speed
(:mod:`torqlog.identify`); with a motor, :mod:`torqlog.drive` simulates the real Cs.

References
----------
.. [1] J. E. Shigley, C. R. Mischke, *Mechanical Engineering Design*, flywheel section
   (energy swing, coefficient of speed fluctuation, I = ΔE/(Cs·ω̄²)).
.. [2] R. L. Norton, *Design of Machinery*, flywheel section (the same relation and a
   table of typical coefficients of speed fluctuation by machine type).
.. [3] B. Efron, R. J. Tibshirani, *An Introduction to the Bootstrap*, Chapman & Hall,
   1993 (percentile bootstrap interval).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import numpy as np
import pandas as pd

from torqlog.drive import (
    CURVE_COLUMNS,
    DriveCycle,
    MotorModel,
    curve_frame,
    drive_cycles,
)
from torqlog.errors import DataError, UsageError
from torqlog.identify import IdentifyResult, check_role, identify_inertia_cycle

_RPM = 60.0 / (2.0 * math.pi)  # rad/s -> rpm

# --------------------------------------------------------------------------- machine classes
#: Typical coefficients of speed fluctuation (low, high) by type of driven machine.
#: Source: R. L. Norton, *Design of Machinery*, flywheel section, table of typical
#: coefficients of speed fluctuation (the same values appear in older machine-design texts).
#: The values are quoted FROM MEMORY and should be checked against the printed table
#: before they are relied on; a single value is given as (v, v).
MACHINE_CLASSES: Mapping[str, tuple[float, float]] = MappingProxyType({
    "crushing-machinery": (0.200, 0.200),
    "electrical-machinery": (0.003, 0.003),
    "electrical-machinery-direct-driven": (0.002, 0.002),
    "engines-with-belt-drive": (0.030, 0.030),
    "flour-milling-machinery": (0.020, 0.020),
    "gear-wheel-transmission": (0.020, 0.020),
    "hammering-machinery": (0.200, 0.200),
    "machine-tools": (0.030, 0.030),
    "paper-making-machinery": (0.025, 0.025),
    "pumping-machinery": (0.030, 0.050),
    "shearing-machinery": (0.030, 0.050),
    "spinning-machinery": (0.010, 0.020),
    "textile-machinery": (0.025, 0.025),
})
MACHINE_CLASSES_SOURCE = ("R. L. Norton, Design of Machinery, flywheel section, table of "
                          "typical coefficients of speed fluctuation (values from memory)")


def target_cs_for(machine_class: str) -> float:
    """Recommended target Cs for a type of driven machine.

    Parameters
    ----------
    machine_class : str
        A key of :data:`MACHINE_CLASSES` (e.g. ``"shearing-machinery"``).

    Returns
    -------
    float
        The low (stricter) end of the typical range.

    Raises
    ------
    UsageError
        For an unknown name; the message lists the valid names.

    References
    ----------
    .. [1] R. L. Norton, *Design of Machinery*, flywheel section (values from memory).
    """
    key = str(machine_class).strip().lower().replace("_", "-").replace(" ", "-")
    if key not in MACHINE_CLASSES:
        raise UsageError(f"unknown machine class {machine_class!r}; valid names: "
                         f"{', '.join(MACHINE_CLASSES)}")
    return MACHINE_CLASSES[key][0]


# --------------------------------------------------------------------------- formulas
def _check_cs(target_cs: float) -> float:
    try:
        cs = float(target_cs)
    except (TypeError, ValueError):
        raise UsageError(f"target Cs must be a number between 0 and 1, got {target_cs!r}") \
            from None
    if not (math.isfinite(cs) and 0.0 < cs < 1.0):
        raise UsageError(f"target Cs must be between 0 and 1 (exclusive), got {cs:g}")
    return cs


def _check_quantile(quantile: float | str) -> float | str:
    if isinstance(quantile, str) and quantile.strip().lower() == "max":
        return "max"
    try:
        q = float(quantile)
    except (TypeError, ValueError):
        q = math.nan
    if not (math.isfinite(q) and 0.0 < q <= 1.0):
        raise UsageError(f"quantile must be in (0, 1] or 'max', got {quantile!r}")
    return q


def required_inertia(energy_swing: float | np.ndarray, target_cs: float,
                     speed: float | np.ndarray) -> float | np.ndarray:
    """Inertia that keeps the speed fluctuation within a target Cs.

    ``I = ΔE / (Cs·ω̄²)``.

    Parameters
    ----------
    energy_swing : float [J]
        Design energy swing ΔE (max − min of ∫(T − T̄)dθ over a cycle).
    target_cs : float
        Target coefficient of speed fluctuation Cs = (ω_max − ω_min)/ω̄, 0 < Cs < 1.
    speed : float [rad/s]
        Mean shaft speed ω̄.

    Returns
    -------
    float [kg*m^2]
        Total inertia needed at that shaft.

    Examples
    --------
    A design swing of 8.2 kJ at 45 rpm (4.712 rad/s) and a target Cs of 0.10:

    >>> import math
    >>> round(required_inertia(8200.0, 0.10, 45 * 2 * math.pi / 60), 1)
    3692.6

    References
    ----------
    .. [1] J. E. Shigley, C. R. Mischke, *Mechanical Engineering Design*, flywheel section.
    .. [2] R. L. Norton, *Design of Machinery*, flywheel section.
    """
    cs = _check_cs(target_cs)
    w = np.asarray(speed, dtype=float)
    if np.any(~(w > 0)):
        raise UsageError(f"mean speed must be positive, got {speed!r}")
    out = np.asarray(energy_swing, dtype=float) / (cs * w * w)
    return float(out) if out.ndim == 0 else out


def design_energy_swing(values: np.ndarray, quantile: float | str = 0.95) -> float:
    """Design energy swing: a quantile (or the maximum) of the per-cycle swings.

    Parameters
    ----------
    values : array [J]
        Per-cycle energy swings; NaN values are ignored.
    quantile : float or "max"
        Quantile in (0, 1] (linear interpolation between order statistics, numpy's
        default), or ``"max"`` for the largest cycle.

    Returns
    -------
    float [J]

    Raises
    ------
    UsageError
        Quantile outside (0, 1].
    DataError
        No finite values.
    """
    q = _check_quantile(quantile)
    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    if v.size == 0:
        raise DataError("no energy-swing values to size from (all missing)")
    return float(v.max() if q == "max" else np.quantile(v, q))


def swing_energy_from_speed(inertia: float | np.ndarray, speed_max: float | np.ndarray,
                            speed_min: float | np.ndarray) -> float | np.ndarray:
    """Energy swing implied by a speed fluctuation on a known inertia.

    ``ΔE = ½·I·(ω_max² − ω_min²)``.

    Parameters
    ----------
    inertia : float [kg*m^2]
        Inertia of all rotating parts, referred to the shaft whose speed is given.
    speed_max, speed_min : float or array [rad/s]
        Highest and lowest speed within the cycle.

    Returns
    -------
    float or array [J]

    References
    ----------
    .. [1] J. E. Shigley, C. R. Mischke, *Mechanical Engineering Design*, flywheel section
       (kinetic energy change of the flywheel between ω_min and ω_max).
    """
    wmax = np.asarray(speed_max, dtype=float)
    wmin = np.asarray(speed_min, dtype=float)
    out = 0.5 * np.asarray(inertia, dtype=float) * (wmax * wmax - wmin * wmin)
    return float(out) if out.ndim == 0 else out


def bootstrap_ci(energy_swing: np.ndarray, speed: np.ndarray | float, *, target_cs: float,
                 quantile: float | str = 0.95, n_boot: int = 2000, seed: int = 0,
                 level: float = 0.95) -> tuple[float, float]:
    """Percentile-bootstrap interval on the required inertia, resampling whole cycles.

    Each resample draws the cycles with replacement (energy swing and mean speed of a
    cycle stay together; index matrices drawn in blocks of bounded size), takes the design
    quantile of the swings and the mean of the speeds, and computes ``I = ΔE_q/(Cs·ω̄²)``;
    the interval is the central ``level`` share of those values.

    Parameters
    ----------
    energy_swing : array [J]
        Per-cycle energy swings (finite).
    speed : array or float [rad/s]
        Per-cycle mean speeds (same length) or one mean speed for all.
    target_cs : float
        Target Cs.
    quantile : float or "max"
        Design quantile (see :func:`design_energy_swing`). With ``"max"`` the upper end
        cannot exceed the largest observed cycle.
    n_boot : int
        Number of resamples.
    seed : int
        Seed of ``numpy.random.default_rng``.
    level : float
        Coverage of the interval.

    Returns
    -------
    (float, float) [kg*m^2]
        Lower and upper ends.

    References
    ----------
    .. [1] B. Efron, R. J. Tibshirani, *An Introduction to the Bootstrap*, 1993,
       percentile interval.
    """
    cs = _check_cs(target_cs)
    q = _check_quantile(quantile)
    e = np.asarray(energy_swing, dtype=float)
    n = e.size
    if n == 0 or np.any(~np.isfinite(e)):
        raise DataError("the bootstrap needs finite energy-swing values for every cycle")
    if int(n_boot) < 10:
        raise UsageError(f"n_boot must be at least 10, got {n_boot!r}")
    rng = np.random.default_rng(seed)
    w = np.asarray(speed, dtype=float)
    i_req = np.empty(int(n_boot))
    # index matrices of at most ~1 M entries (≈ 30 MB of temporaries), so a long shift
    # log stays in bounded memory; the draws are the same for any block size
    block = max(1, 1_000_000 // n)
    for start in range(0, int(n_boot), block):
        rows = min(block, int(n_boot) - start)
        idx = rng.integers(0, n, size=(rows, n))
        samples = e[idx]
        eq = samples.max(axis=1) if q == "max" else np.quantile(samples, q, axis=1)
        wbar = w[idx].mean(axis=1) if w.ndim else np.full(rows, float(w))
        i_req[start:start + rows] = eq / (cs * wbar * wbar)
    alpha = 0.5 * (1.0 - level)
    lo, hi = np.quantile(i_req, [alpha, 1.0 - alpha])
    return float(lo), float(hi)


# --------------------------------------------------------------------------- sizing
CAUTIONS: tuple[str, ...] = (
    "Adding a flywheel changes shaft stresses, bearing loads and the shaft's natural "
    "frequencies: check them with `torqlog shaft`.",
    "A flywheel stores energy that is released violently if it bursts: check its rim speed "
    "and stresses with `torqlog flywheel`; guards, spin testing and inspection follow the "
    "applicable codes and standards.",
    "This is a preliminary engineering estimate; the final design follows the applicable "
    "codes and standards and is approved by a qualified, licensed engineer.",
)

CYCLE_COLUMNS = ("cycle", "t_start_s", "duration_s", "speed_mean_rpm", "speed_min_rpm",
                 "speed_max_rpm", "torque_mean_Nm", "torque_peak_Nm", "torque_min_Nm",
                 "work_J", "energy_swing_J", "cs", "cs_predicted", "flag")
_METHODS = ("torque", "speed")
SPEED_ONLY_NEEDS_INERTIA = ("a speed-only log needs the existing inertia (--inertia or "
                            "[machine] inertia_kgm2) to size a flywheel")


@dataclass(frozen=True)
class SizeResult:
    """Flywheel inertia recommendation (see :func:`size_from_cycles`).

    Inertias are at the logged shaft unless the name says ``at_flywheel``.
    """

    method: str
    target_cs: float
    speed_mean: float
    design_energy_swing: float
    quantile: float | str
    required_inertia: float
    ci95: tuple[float, float]
    existing_inertia: float | None
    added_inertia: float | None
    flywheel_speed_ratio: float
    cycles_used: int
    identified: dict[str, Any] | None = None
    drive: dict[str, Any] | None = None
    messages: tuple[str, ...] = ()
    cautions: tuple[str, ...] = CAUTIONS
    options: dict[str, Any] = field(default_factory=dict)
    curve: pd.DataFrame | None = field(default=None, repr=False, compare=False)

    @property
    def added_inertia_at_flywheel(self) -> float | None:
        """Added inertia on a shaft turning ``flywheel_speed_ratio`` times faster, I/r²."""
        if self.added_inertia is None:
            return None
        return self.added_inertia / self.flywheel_speed_ratio ** 2

    def to_dict(self) -> dict[str, Any]:
        """JSON contract of the sizing."""
        return {
            "method": self.method,
            "target_cs": self.target_cs,
            "speed_mean_rpm": self.speed_mean * _RPM,
            "design_energy_swing_J": self.design_energy_swing,
            "quantile": self.quantile,
            "required_inertia_kgm2": self.required_inertia,
            "ci95_kgm2": [self.ci95[0], self.ci95[1]],
            "existing_inertia_kgm2": self.existing_inertia,
            "added_inertia_kgm2": self.added_inertia,
            "flywheel_speed_ratio": self.flywheel_speed_ratio,
            "added_inertia_at_flywheel_kgm2": self.added_inertia_at_flywheel,
            "cycles_used": self.cycles_used,
            "identified": self.identified,
            "drive": self.drive,
            "messages": list(self.messages),
            "cautions": list(self.cautions),
            "options": dict(self.options),
        }

    def to_pandas(self) -> pd.DataFrame:
        """The simulated drive curve (empty, with its columns, when none was run)."""
        if self.curve is None:
            return pd.DataFrame(columns=list(CURVE_COLUMNS))
        return self.curve.copy()


def _finite(col: pd.Series) -> np.ndarray:
    return pd.to_numeric(col, errors="coerce").to_numpy(dtype=float)


def size_from_cycles(cycles: pd.DataFrame, mean_cycle: pd.DataFrame | None = None, *,
                     target_cs: float, quantile: float | str = 0.95,
                     existing_inertia: float | None = None, method: str | None = None,
                     flywheel_speed_ratio: float = 1.0, motor: MotorModel | None = None,
                     revs_per_cycle: int = 1, seed: int = 0, n_boot: int = 2000,
                     torque_role: str = "load", speed: float | None = None) -> SizeResult:
    """Recommend flywheel inertia from a per-cycle table.

    Parameters
    ----------
    cycles : DataFrame
        Per-cycle table (columns :data:`CYCLE_COLUMNS`); rows whose ``flag`` is not ""
        are left out.
    mean_cycle : DataFrame, optional
        Mean cycle on a uniform angle grid (``angle`` [rad], ``torque_mean`` [N*m],
        ``speed_mean`` [rad/s], ...). Used to identify the existing inertia (when it has
        both torque and speed) and, with ``motor``, to simulate the drive.
    target_cs : float
        Target coefficient of speed fluctuation, 0 < Cs < 1.
    quantile : float or "max"
        Design quantile of the per-cycle energy swings.
    existing_inertia : float, optional [kg*m^2]
        Inertia of the existing rotating parts at the logged shaft, not counting the motor
        rotor of ``motor`` (its ``J·n²`` is added).
    method : {"torque", "speed"}, optional
        ``torque``: per-cycle ``energy_swing_J`` from the logged torque; ``speed``:
        ``½·I·(ω_max² − ω_min²)`` with the existing inertia. Default: torque when the
        table has torque, else speed.
    flywheel_speed_ratio : float
        Flywheel shaft speed / logged shaft speed (the added inertia there is I/r²).
    motor : MotorModel, optional
        Drive motor, for the simulated Cs and motor torque against added inertia.
    revs_per_cycle : int
        Shaft revolutions per cycle.
    seed, n_boot : int
        Bootstrap seed and number of resamples.
    torque_role : {"load", "drive"}
        Whose torque was logged ("drive" for an engine log).
    speed : float, optional [rad/s]
        Mean speed to use when the table has no speed (a torque-only log).

    Returns
    -------
    SizeResult

    Raises
    ------
    UsageError
        Target Cs, quantile, method or torque role out of range; a speed-only log without
        the existing inertia.
    DataError
        Missing columns, no clean cycles.

    References
    ----------
    .. [1] J. E. Shigley, C. R. Mischke, *Mechanical Engineering Design*, flywheel section.
    .. [2] R. L. Norton, *Design of Machinery*, flywheel section.
    """
    cs = _check_cs(target_cs)
    q = _check_quantile(quantile)
    check_role(torque_role)
    if method is not None and method not in _METHODS:
        raise UsageError(f"unknown method {method!r}; valid choices: {', '.join(_METHODS)}")
    ratio = float(flywheel_speed_ratio)
    if not (math.isfinite(ratio) and ratio > 0):
        raise UsageError(f"flywheel speed ratio must be positive, got {flywheel_speed_ratio!r}")
    if existing_inertia is not None and not (math.isfinite(existing_inertia)
                                             and existing_inertia >= 0):
        raise UsageError(f"existing inertia must be zero or positive, got {existing_inertia!r}")
    if int(revs_per_cycle) != revs_per_cycle or revs_per_cycle < 1:
        raise UsageError(f"revs_per_cycle must be a whole number ≥ 1, got {revs_per_cycle!r}")
    missing = [c for c in ("speed_mean_rpm", "speed_min_rpm", "speed_max_rpm",
                           "torque_mean_Nm", "energy_swing_J", "flag") if c not in cycles]
    if missing:
        raise DataError(f"the per-cycle table lacks column(s) {', '.join(missing)}")
    clean = cycles[cycles["flag"].fillna("").astype(str) == ""]
    if clean.empty:
        raise DataError("no clean cycles to size from: every cycle is flagged (see the flag "
                        "column)")

    rpm = 1.0 / _RPM
    w_mean = _finite(clean["speed_mean_rpm"]) * rpm
    w_min = _finite(clean["speed_min_rpm"]) * rpm
    w_max = _finite(clean["speed_max_rpm"]) * rpm
    swing_t = _finite(clean["energy_swing_J"])
    has_torque = bool(np.any(np.isfinite(_finite(clean["torque_mean_Nm"])) &
                             np.isfinite(swing_t)))
    chosen = method or ("torque" if has_torque else "speed")
    if chosen == "torque" and not has_torque:
        raise DataError("method 'torque' needs the torque channel, but the per-cycle table "
                        "has no energy_swing_J values; use method 'speed'")
    messages: list[str] = []
    options: dict[str, Any] = {
        "method": chosen, "method_chosen_by": "caller" if method else "auto",
        "quantile": q, "n_boot": int(n_boot), "seed": int(seed), "torque_role": torque_role,
        "revs_per_cycle": int(revs_per_cycle), "cs_definition": "(w_max - w_min) / w_mean",
        "energy_swing_relation": "dE = I * Cs * w_mean^2",
    }

    # existing inertia: given, or identified from the mean cycle
    rotor = motor.referred_inertia if motor is not None else 0.0
    identified: IdentifyResult | None = None
    mc_ok = (mean_cycle is not None and {"angle", "torque_mean", "speed_mean"} <=
             set(mean_cycle.columns))
    if mc_ok and chosen == "torque":
        try:
            identified = identify_inertia_cycle(
                mean_cycle["angle"].to_numpy(float), mean_cycle["torque_mean"].to_numpy(float),
                mean_cycle["speed_mean"].to_numpy(float), torque_role=torque_role,
                revs_per_cycle=int(revs_per_cycle))
        except DataError as exc:
            messages.append(f"the existing inertia could not be identified from the mean "
                            f"cycle: {exc}")
    total_existing: float | None
    if existing_inertia is not None:
        total_existing = float(existing_inertia) + rotor
        options["existing_inertia_source"] = "given"
        if rotor > 0:
            messages.append(f"the existing inertia includes the motor rotor referred to the "
                            f"logged shaft ({rotor:.4g} kg m^2)")
        if identified is not None:
            messages.append(f"the log suggests a total inertia of {identified.inertia:.4g} "
                            f"kg m^2 (given: {total_existing:.4g} kg m^2)")
    elif identified is not None:
        total_existing = identified.inertia
        options["existing_inertia_source"] = "identified from the mean cycle"
        messages.append(f"existing inertia identified from the log: {identified.inertia:.4g} "
                        f"kg m^2 (R² {identified.r2:.3f})")
    else:
        total_existing = None
        options["existing_inertia_source"] = None

    # per-cycle energy swings
    if chosen == "speed":
        if total_existing is None:
            raise UsageError(SPEED_ONLY_NEEDS_INERTIA)
        swings = swing_energy_from_speed(total_existing, w_max, w_min)
        options["energy_swing_source"] = "1/2 * I_existing * (w_max^2 - w_min^2) per cycle"
    else:
        swings = swing_t
        options["energy_swing_source"] = "energy_swing_J from the logged torque"
    swings = np.asarray(swings, dtype=float)
    use = np.isfinite(swings)
    if np.any(np.isfinite(w_mean)):
        use &= np.isfinite(w_mean)
        per_cycle_speed: np.ndarray | float = w_mean[use]
        options["speed_source"] = "mean of speed_mean_rpm over the cycles used"
    elif speed is not None and speed > 0:
        per_cycle_speed = float(speed)
        options["speed_source"] = "given"
    else:
        raise DataError("the per-cycle table has no speed_mean_rpm values; give the mean "
                        "speed ([machine] speed_rpm or --speed) to size from a torque-only log")
    if not np.any(use):
        raise DataError("no clean cycle has an energy swing and a mean speed to size from")
    e_used = swings[use]
    n_used = int(e_used.size)
    wbar = float(np.mean(per_cycle_speed))
    if n_used < 20:
        messages.append(f"only {n_used} clean cycles: the design swing and its interval are "
                        f"rough (20 or more cycles is common practice)")
    e_design = design_energy_swing(e_used, q)
    i_req = float(required_inertia(e_design, cs, wbar))
    ci = bootstrap_ci(e_used, per_cycle_speed, target_cs=cs, quantile=q, n_boot=n_boot,
                      seed=seed)

    added: float | None = None
    if total_existing is not None:
        added = max(i_req - total_existing, 0.0)
        if added == 0.0:
            messages.append(f"the machine already meets Cs ≤ {cs:g} with its existing "
                            f"inertia (required {i_req:.4g} kg m^2, existing "
                            f"{total_existing:.4g} kg m^2); no inertia needs adding")
    else:
        messages.append("no existing inertia given: the required inertia is the total at the "
                        "logged shaft, existing parts included")
    if ratio != 1.0 and added is not None:
        messages.append(f"on a flywheel shaft turning {ratio:g} × the logged shaft the added "
                        f"inertia is {added / ratio ** 2:.4g} kg m^2 (I/r²)")

    drive, curve = None, None
    if motor is not None:
        drive, curve = _drive_block(mean_cycle, motor, total_existing, added, cs,
                                    torque_role, int(revs_per_cycle), messages)
    options["flywheel_speed_ratio"] = ratio
    return SizeResult(
        method=chosen, target_cs=cs, speed_mean=wbar, design_energy_swing=e_design,
        quantile=q, required_inertia=i_req, ci95=ci, existing_inertia=total_existing,
        added_inertia=added, flywheel_speed_ratio=ratio, cycles_used=n_used,
        identified=identified.to_dict() if identified is not None else None, drive=drive,
        messages=tuple(messages), cautions=CAUTIONS, options=options, curve=curve)


def _drive_block(mean_cycle: pd.DataFrame | None, motor: MotorModel,
                 total_existing: float | None, added: float | None, cs: float,
                 torque_role: str, revs_per_cycle: int,
                 messages: list[str]) -> tuple[dict[str, Any] | None, pd.DataFrame | None]:
    """Simulate the motor drive over a grid of added inertia (for size_from_cycles)."""
    if torque_role != "load":
        messages.append("no motor simulation: the logged torque is the drive torque (engine "
                        "log), not the load a motor drives")
        return None, None
    if (mean_cycle is None or "torque_mean" not in mean_cycle
            or not np.all(np.isfinite(mean_cycle["torque_mean"].to_numpy(float)))):
        messages.append("no motor simulation: it needs the mean cycle with the load torque")
        return None, None
    if total_existing is None or added is None:
        messages.append("no motor simulation: the existing inertia is unknown")
        return None, None
    base = total_existing - motor.referred_inertia
    if base <= 0:
        messages.append("no motor simulation: the existing inertia is not larger than the "
                        "motor rotor's")
        return None, None
    top = 2.0 * added if added > 0 else total_existing
    grid = np.unique(np.append(np.linspace(0.0, top, 9), added))
    angle = mean_cycle["angle"].to_numpy(float)
    load = mean_cycle["torque_mean"].to_numpy(float)
    try:
        sims: list[DriveCycle] = drive_cycles(angle, load, base, grid, motor, revs_per_cycle)
    except DataError as exc:
        messages.append(f"no motor simulation: {exc}")
        return None, None
    curve = curve_frame(sims)
    rec = next(s for s in sims if s.added_inertia == added)
    cs_curve = curve["cs"].to_numpy()
    inertia_curve = curve["added_inertia_kgm2"].to_numpy()
    for_target: float | None
    below = np.nonzero(cs_curve <= cs)[0]
    if below.size == 0:
        for_target = None
        messages.append(f"with the motor's slip the simulated Cs stays above {cs:g} up to "
                        f"{inertia_curve[-1]:.4g} kg m^2 added")
    elif below[0] == 0:
        for_target = 0.0
    else:
        j = int(below[0])
        c0, c1 = cs_curve[j - 1], cs_curve[j]
        i0, i1 = inertia_curve[j - 1], inertia_curve[j]
        for_target = float(i0 + (c0 - cs) * (i1 - i0) / (c0 - c1))
    messages.append(f"with the motor's slip the simulated Cs at the recommended inertia is "
                    f"{rec.cs:.4g} (the static estimate assumes a constant drive torque)")
    messages.extend(f"motor: {m}" for m in rec.messages)
    drive = {
        "motor": motor.to_dict(),
        "existing": sims[0].to_dict(),
        "recommended": rec.to_dict(),
        "added_inertia_for_target_cs_kgm2": for_target,
        "curve": curve.to_dict(orient="records"),
    }
    return drive, curve


def size_log(cycles: Any, profile: Any = None, *, target_cs: float | None = None,
             machine_class: str | None = None, quantile: float | str = 0.95,
             motor: Mapping[str, float] | None = None,
             flywheel_speed_ratio: float | None = None, seed: int = 0) -> SizeResult:
    """Size a flywheel from the cycles of one log and a machine profile.

    The values given here win over the profile's; this is what ``torqlog size`` and the
    report both run, so their numbers agree.

    Parameters
    ----------
    cycles : CycleResult
        From :func:`torqlog.cycles.analyse_cycles`; its options give the existing inertia,
        revs per cycle, torque role and nominal speed.
    profile : MachineProfile, optional
        ``[machine] target_cs`` and ``flywheel_speed_ratio``, and ``[motor]``.
    target_cs : float, optional
        Target coefficient of speed fluctuation; else from ``machine_class``, else the
        profile.
    machine_class : str, optional
        A key of :data:`MACHINE_CLASSES` for the target.
    quantile : float or "max"
        Design quantile of the per-cycle energy swing.
    motor : mapping, optional
        Motor values over the profile's ``[motor]`` (SI keys ``power`` [W], ``sync``,
        ``rated`` [rad/s], ``speed_ratio``); the drive is simulated when a motor results.
    flywheel_speed_ratio : float, optional
        Flywheel shaft speed / logged shaft speed (default: profile, else 1).
    seed : int
        Bootstrap seed.

    Returns
    -------
    SizeResult

    Raises
    ------
    UsageError
        No target Cs anywhere; see also :func:`size_from_cycles`.

    References
    ----------
    Shigley & Mischke, *Mechanical Engineering Design*, flywheel section.
    """
    machine = profile.machine if profile is not None else {}
    if target_cs is None and machine_class:
        target_cs = target_cs_for(machine_class)
    if target_cs is None:
        target_cs = machine.get("target_cs")
    if target_cs is None:
        raise UsageError("give --target-cs X, --machine-class NAME or [machine] target_cs in "
                         "the profile")
    motor_kw = dict(profile.motor) if profile is not None else {}
    motor_kw.update({k: v for k, v in (motor or {}).items() if v is not None})
    model = MotorModel.from_profile(motor_kw) if motor_kw else None
    ratio = flywheel_speed_ratio or machine.get("flywheel_speed_ratio", 1.0)
    o = cycles.options
    return size_from_cycles(cycles.table, cycles.mean_cycle, target_cs=target_cs,
                            quantile=quantile, existing_inertia=o["inertia"],
                            flywheel_speed_ratio=ratio, motor=model,
                            revs_per_cycle=o["revs_per_cycle"], seed=seed,
                            torque_role=o["torque_role"], speed=o.get("nominal_speed"))


def size_log_dict(result: SizeResult, cycles: Any) -> dict[str, Any]:
    """The JSON contract of ``torqlog size``: the sizing plus the log and its cycle options.

    Parameters
    ----------
    result : SizeResult
        From :func:`size_log`.
    cycles : CycleResult
        The cycles it was sized from.

    Returns
    -------
    dict
    """
    data = result.to_dict()
    data["source"] = cycles.source
    data["cycle_options"] = cycles.options
    return data
