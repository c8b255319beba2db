"""Flywheel inertia: how much a machine needs, how much it has, and how sure we are.

The sizing rests on the small-fluctuation relation between the energy swing of a cycle
and the speed fluctuation it causes on a shaft of inertia I,

    ΔE ≈ I·Cs·ω̄²,   so   I_req = ΔE_design / (Cs·ω̄²),

with ΔE_design a stated quantile of the per-cycle energy swings (default the 95th
percentile) and Cs the target coefficient of speed fluctuation. The existing inertia can be
given, or identified from a mean cycle that has both torque and speed
(:mod:`torqlog.sizing.identify`); with a motor, :mod:`torqlog.sizing.drive` simulates the real Cs.

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

from torqlog.errors import DataError, UsageError
from torqlog.io.notebook import result_html
from torqlog.sizing.calibrate import BOUND_NOTE, HOURS_PER_YEAR, TOLERANCE_REL
from torqlog.sizing.drive import CURVE_COLUMNS, MotorModel
from torqlog.sizing.identify import IdentifyResult, check_role, identify_inertia_cycle
from torqlog.sizing.recommend import recommend

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


def quantile_interval_lognormal(values: np.ndarray, quantile: float,
                                level: float = 0.95) -> tuple[float, float]:
    """Confidence interval of a quantile of log-normal values (noncentral t).

    With ``y = ln x`` normal, the p-quantile is ``μ + z_p·σ``; its two-sided interval is
    ``ȳ + k·s`` with ``k = t'_{α/2, 1−α/2}(n − 1, z_p·√n)/√n`` from the noncentral t
    distribution (:data:`scipy.stats.nct`). A sample of 40 cycles cannot bound a 95th
    percentile from above by order statistics alone; this parametric interval can, and
    it is wider than a percentile bootstrap of the sample quantile.

    Parameters
    ----------
    values : array [J]
        Per-cycle energy swings (positive, finite).
    quantile : float
        In (0, 1).
    level : float
        Coverage.

    Returns
    -------
    (float, float) [J]

    References
    ----------
    .. [1] G. J. Hahn, W. Q. Meeker, *Statistical Intervals: A Guide for Practitioners*,
       Wiley, 1991, confidence intervals for a percentile of a normal distribution.
    """
    from scipy.stats import nct, norm

    y = np.log(np.asarray(values, dtype=float))
    n = y.size
    if n < 3 or not np.all(np.isfinite(y)):
        raise DataError("the quantile interval needs at least 3 positive energy swings")
    sd = float(np.std(y, ddof=1))
    nc = float(norm.ppf(quantile)) * math.sqrt(n)
    alpha = 1.0 - level
    k_lo = float(nct.ppf(alpha / 2, n - 1, nc)) / math.sqrt(n)
    k_hi = float(nct.ppf(1 - alpha / 2, n - 1, nc)) / math.sqrt(n)
    mean = float(np.mean(y))
    return math.exp(mean + k_lo * sd), math.exp(mean + k_hi * sd)


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
                 "work_J", "energy_swing_J", "cs", "cs_constant_drive", "flag")
_METHODS = ("torque", "speed")
SPEED_ONLY_NEEDS_INERTIA = ("a speed-only log needs the existing inertia (--inertia or "
                            "[machine] inertia_kgm2) to size a flywheel")


@dataclass(frozen=True)
class SizeResult:
    """Flywheel inertia recommendation (see :func:`size_from_cycles`).

    Inertias are at the logged shaft unless the name says ``at_flywheel``. The headline
    (``required_inertia``, ``added_inertia``, ``ci95``) comes from ``model``, the model that
    leads; the constant-drive figure is kept as ``bound_required_inertia``.
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
    model: str = "constant drive"
    model_reason: str = ""
    cs_measured: float | None = None
    validation: dict[str, Any] | None = None
    candidates: tuple[dict[str, Any], ...] = ()
    model_params: dict[str, Any] | None = None
    bound_required_inertia: float = math.nan
    bound_ci95: tuple[float, float] = (math.nan, math.nan)
    ci95_parts: dict[str, list[float]] = field(default_factory=dict)
    added_ci95: tuple[float, float] | None = None
    nameplate_slope: float | None = None
    now: dict[str, Any] | None = None
    after: dict[str, Any] | None = None

    @property
    def added_inertia_at_flywheel(self) -> float | None:
        """Added inertia on a shaft turning ``flywheel_speed_ratio`` times faster, I/r²."""
        if self.added_inertia is None:
            return None
        return self.added_inertia / self.flywheel_speed_ratio ** 2

    _repr_html_ = result_html  # the notebook view

    def to_dict(self) -> dict[str, Any]:
        """JSON contract of the sizing (every key is listed in the README)."""
        v = self.validation or {}
        mp = self.model_params or {}
        bound_added = (None if self.existing_inertia is None else
                       max(self.bound_required_inertia - self.existing_inertia, 0.0))
        return {
            "model": self.model,
            "model_reason": self.model_reason,
            "required_inertia_kgm2": self.required_inertia,
            "added_inertia_kgm2": self.added_inertia,
            "ci95_kgm2": [self.ci95[0], self.ci95[1]],
            "ci95_parts_kgm2": {k: list(x) for k, x in self.ci95_parts.items()},
            "added_ci95_kgm2": (None if self.added_ci95 is None else
                                [self.added_ci95[0], self.added_ci95[1]]),
            "cs_measured": self.cs_measured,
            "cs_model_existing": v.get("cs_model_existing"),
            "cs_model_error_rel": v.get("cs_model_error_rel"),
            "cs_model_tolerance_rel": v.get("tolerance_rel"),
            "cs_model_of": v.get("model"),
            "drive_slope_Nms_per_rad": mp.get("slope_Nms_per_rad"),
            "drive_slope_se_Nms_per_rad": mp.get("slope_se_Nms_per_rad"),
            "drive_slope_nameplate_Nms_per_rad": self.nameplate_slope,
            "drive_model": self.model_params,
            "models_checked": list(self.candidates),
            "bound_constant_drive_required_inertia_kgm2": self.bound_required_inertia,
            "bound_constant_drive_added_inertia_kgm2": bound_added,
            "bound_constant_drive_ci95_kgm2": [self.bound_ci95[0], self.bound_ci95[1]],
            "bound_constant_drive_note": BOUND_NOTE,
            "machine_now": self.now,
            "machine_after": self.after,
            "method": self.method,
            "target_cs": self.target_cs,
            "speed_mean_rpm": self.speed_mean * _RPM,
            "design_energy_swing_J": self.design_energy_swing,
            "quantile": self.quantile,
            "existing_inertia_kgm2": self.existing_inertia,
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


#: Given and identified inertia further apart than this are reported as a conflict.
INERTIA_CONFLICT_REL = 0.20
#: Nameplate slope within this of the log's is said to agree (common practice, stated).
NAMEPLATE_AGREES_REL = 0.05


def size_from_cycles(cycles: pd.DataFrame, mean_cycle: pd.DataFrame | None = None, *,
                     target_cs: float, quantile: float | str = 0.95,
                     existing_inertia: float | None = None, method: str | None = None,
                     flywheel_speed_ratio: float = 1.0, motor: MotorModel | None = None,
                     revs_per_cycle: int = 1, seed: int = 0, n_boot: int = 2000,
                     torque_role: str = "load", speed: float | None = None,
                     tolerance: float = TOLERANCE_REL,
                     hours_per_year: float = HOURS_PER_YEAR) -> SizeResult:
    """Recommend flywheel inertia from a per-cycle table and the mean cycle.

    The log is evidence, the nameplate advice: when the mean cycle has torque and speed,
    the inertia and the drive's torque–speed slope are fitted on it
    (:mod:`torqlog.sizing.calibrate`), the fitted model is run at the existing inertia and its Cs
    compared with the measured median Cs; within ``tolerance`` it sizes the flywheel. Else
    the nameplate motor is tried the same way, and failing both the constant-drive bound
    ``I = ΔE/(Cs·ω̄²)`` leads, labelled as an upper bound (:mod:`torqlog.sizing.recommend`).

    Parameters
    ----------
    cycles : DataFrame
        Per-cycle table (columns :data:`CYCLE_COLUMNS`); rows whose ``flag`` is not ""
        are left out.
    mean_cycle : DataFrame, optional
        Mean cycle on a uniform angle grid (``angle`` [rad], ``torque_mean`` [N*m],
        ``speed_mean`` [rad/s], ...).
    target_cs : float
        Target coefficient of speed fluctuation, 0 < Cs < 1.
    quantile : float or "max"
        Design quantile of the per-cycle energy swings.
    existing_inertia : float, optional [kg*m^2]
        Inertia of the existing rotating parts at the logged shaft, not counting the motor
        rotor of ``motor`` (its ``J·n²`` is added). An inertia identified on the log wins
        over it (and a conflict beyond 20 % is reported).
    method : {"torque", "speed"}, optional
        ``torque``: per-cycle ``energy_swing_J`` from the logged torque; ``speed``:
        ``½·I·(ω_max² − ω_min²)`` with the existing inertia. Default: torque when the
        table has torque, else speed.
    flywheel_speed_ratio : float
        Flywheel shaft speed / logged shaft speed (the added inertia there is I/r²).
    motor : MotorModel, optional
        Nameplate motor: fallback model, rated torque for the load shares.
    revs_per_cycle : int
        Shaft revolutions per cycle.
    seed, n_boot : int
        Bootstrap seed and number of resamples.
    torque_role : {"load", "drive"}
        Whose torque was logged ("drive" for an engine log: the fit then gives the load
        side's slope).
    speed : float, optional [rad/s]
        Mean speed to use when the table has no speed (a torque-only log).
    tolerance : float
        Relative Cs error within which a model explains the log (default 0.10).
    hours_per_year : float [h]
        Running hours for the copper-loss change per year.

    Returns
    -------
    SizeResult

    Raises
    ------
    UsageError
        Target Cs, quantile, method or torque role out of range; a speed-only log without
        the existing inertia.
    DataError
        Missing columns, no clean cycles, a torque-only log without a stated speed.

    References
    ----------
    .. [1] R. G. Budynas, J. K. Nisbett, *Shigley's Mechanical Engineering Design*, 10th
       ed., 2015, eq. 16-62 (constant-drive bound).
    .. [2] R. L. Norton, *Design of Machinery*, flywheel section.
    """
    cs, q, ratio = _check_options(target_cs, quantile, torque_role, method,
                                  flywheel_speed_ratio, existing_inertia, revs_per_cycle,
                                  tolerance)
    clean = _clean_cycles(cycles)
    log = _read_cycles(clean, method)
    messages: list[str] = []
    options = _sizing_options(log.method, method, q, n_boot, seed, torque_role,
                              revs_per_cycle, tolerance, hours_per_year)

    mc_ok = _mean_cycle_usable(mean_cycle)
    identified = (_identify(mean_cycle, torque_role, revs_per_cycle, messages)
                  if mc_ok and log.method == "torque" else None)
    rotor = motor.referred_inertia if motor is not None else 0.0
    given = float(existing_inertia) + rotor if existing_inertia is not None else None
    total_existing, source = _existing_inertia(identified, given, rotor, messages)
    options["existing_inertia_source"] = source

    e_used, per_cycle_speed = _cycles_used(log, total_existing, speed, options)
    design = _design_swing(e_used, per_cycle_speed, cs, q, n_boot, seed, options, messages)
    cs_measured, measured = _measured_speed(clean, log)

    rec = _run_models(mean_cycle if mc_ok or (mean_cycle is not None
                                              and "torque_mean" in mean_cycle) else None,
                      log.method, design, identified=identified, motor=motor,
                      existing=total_existing, source=source, cs=cs, cs_measured=cs_measured,
                      measured=measured, torque_role=torque_role, revs=int(revs_per_cycle),
                      tolerance=tolerance, hours_per_year=hours_per_year, messages=messages)
    total_existing = _settle_existing(rec, identified, given, total_existing, options,
                                      messages)
    added, added_ci = _added_inertia(rec, total_existing, identified, cs, cs_measured, ratio,
                                     messages)
    nameplate_slope = _nameplate_check(motor, rec, torque_role, messages)
    options["flywheel_speed_ratio"] = ratio
    return _assemble(log.method, cs, q, ratio, design, rec, identified=identified,
                     existing=total_existing, added=added, added_ci=added_ci,
                     cs_measured=cs_measured, nameplate_slope=nameplate_slope,
                     messages=messages, options=options)


# --------------------------------------------------------------------------- sizing steps
@dataclass(frozen=True)
class _LogCycles:
    """The clean cycles' speeds [rad/s] and torque swings [J], and the sizing method."""

    w_mean: np.ndarray
    w_min: np.ndarray
    w_max: np.ndarray
    swing: np.ndarray
    has_torque: bool
    has_speed: bool
    method: str


@dataclass(frozen=True)
class _DesignSwing:
    """The swings used [J], their mean speed [rad/s], design swing and constant-drive bound."""

    e_used: np.ndarray
    n_used: int
    wbar: float
    e_design: float
    bound: float
    bound_ci: tuple[float, float]


def _check_options(target_cs: float, quantile: float | str, torque_role: str,
                   method: str | None, flywheel_speed_ratio: float,
                   existing_inertia: float | None, revs_per_cycle: int,
                   tolerance: float) -> tuple[float, float | str, float]:
    """Check the caller's options; return the target Cs, the quantile and the speed ratio."""
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
    if not (math.isfinite(tolerance) and tolerance > 0):
        raise UsageError(f"tolerance must be a positive fraction, got {tolerance!r}")
    return cs, q, ratio


def _clean_cycles(cycles: pd.DataFrame) -> pd.DataFrame:
    """The unflagged rows of the per-cycle table, after checking its columns."""
    missing = [c for c in ("speed_mean_rpm", "speed_min_rpm", "speed_max_rpm",
                           "torque_mean_Nm", "energy_swing_J", "flag") if c not in cycles]
    if missing:
        raise DataError(f"the per-cycle table lacks column(s) {', '.join(missing)}")
    clean = cycles[cycles["flag"].fillna("").astype(str) == ""]
    if clean.empty:
        raise DataError("no clean cycles to size from: every cycle is flagged (see the flag "
                        "column)")
    return clean


def _read_cycles(clean: pd.DataFrame, method: str | None) -> _LogCycles:
    """Read the clean cycles in SI and choose the method (torque when the log has it)."""
    rpm = 1.0 / _RPM
    w_mean = _finite(clean["speed_mean_rpm"]) * rpm
    w_min = _finite(clean["speed_min_rpm"]) * rpm
    w_max = _finite(clean["speed_max_rpm"]) * rpm
    swing_t = _finite(clean["energy_swing_J"])
    has_torque = bool(np.any(np.isfinite(_finite(clean["torque_mean_Nm"])) &
                             np.isfinite(swing_t)))
    has_speed = bool(np.any(np.isfinite(w_mean)))
    chosen = method or ("torque" if has_torque else "speed")
    if chosen == "torque" and not has_torque:
        raise DataError("method 'torque' needs the torque channel, but the per-cycle table "
                        "has no energy_swing_J values; use method 'speed'")
    return _LogCycles(w_mean, w_min, w_max, swing_t, has_torque, has_speed, chosen)


def _sizing_options(chosen: str, method: str | None, q: float | str, n_boot: int, seed: int,
                    torque_role: str, revs_per_cycle: int, tolerance: float,
                    hours_per_year: float) -> dict[str, Any]:
    """The options the sizing records (later steps add where each figure came from)."""
    return {
        "method": chosen, "method_chosen_by": "caller" if method else "auto",
        "quantile": q, "n_boot": int(n_boot), "seed": int(seed), "torque_role": torque_role,
        "revs_per_cycle": int(revs_per_cycle), "cs_definition": "(w_max - w_min) / w_mean",
        "energy_swing_relation": "dE = I * Cs * w_mean^2", "tolerance_rel": tolerance,
        "hours_per_year": hours_per_year,
        "model_cycle": "mean cycle, load fluctuation scaled to the median per-cycle energy "
                       "swing (check, now/after) or the design swing (sizing)",
    }


def _mean_cycle_usable(mean_cycle: pd.DataFrame | None) -> bool:
    """Whether the mean cycle has angle, torque and a finite speed to identify from."""
    return (mean_cycle is not None and {"angle", "torque_mean", "speed_mean"} <=
            set(mean_cycle.columns)
            and bool(np.all(np.isfinite(mean_cycle["speed_mean"].to_numpy(float)))))


def _identify(mean_cycle: pd.DataFrame, torque_role: str, revs_per_cycle: int,
              messages: list[str]) -> IdentifyResult | None:
    """The inertia identified on the mean cycle, or None (with a message) if it cannot be."""
    try:
        return identify_inertia_cycle(
            mean_cycle["angle"].to_numpy(float), mean_cycle["torque_mean"].to_numpy(float),
            mean_cycle["speed_mean"].to_numpy(float), torque_role=torque_role,
            revs_per_cycle=int(revs_per_cycle))
    except DataError as exc:
        messages.append(f"the log cannot separate the inertia from the drive slope: {exc}")
        return None


def _existing_inertia(identified: IdentifyResult | None, given: float | None, rotor: float,
                      messages: list[str]) -> tuple[float | None, str | None]:
    """The existing inertia [kg*m^2] and its source: identified on the log, else given."""
    if identified is not None:
        if given is not None:
            gap = identified.inertia / given - 1.0 if given > 0 else math.inf
            if abs(gap) > INERTIA_CONFLICT_REL:
                messages.append(
                    f"the given inertia {given:.4g} kg m^2 and the inertia identified on the "
                    f"log {identified.inertia:.4g} kg m^2 are {abs(gap):.0%} apart: the "
                    f"identified value is used, because the log is evidence of what turns "
                    f"with the shaft; check what the given figure includes")
            else:
                messages.append(f"the log's inertia {identified.inertia:.4g} kg m^2 agrees "
                                f"with the given {given:.4g} kg m^2 within {abs(gap):.0%}")
        return identified.inertia, "identified on the log's mean cycle"
    if given is not None:
        if rotor > 0:
            messages.append(f"the existing inertia includes the motor rotor referred to the "
                            f"logged shaft ({rotor:.4g} kg m^2)")
        return given, "given"
    return None, None


def _cycles_used(log: _LogCycles, total_existing: float | None, speed: float | None,
                 options: dict[str, Any]) -> tuple[np.ndarray, np.ndarray | float]:
    """Energy swings [J] of the cycles that can size, and their mean speeds [rad/s]."""
    if log.method == "speed":
        if total_existing is None:
            raise UsageError(SPEED_ONLY_NEEDS_INERTIA)
        swings = swing_energy_from_speed(total_existing, log.w_max, log.w_min)
        options["energy_swing_source"] = "1/2 * I_existing * (w_max^2 - w_min^2) per cycle"
    else:
        swings = log.swing
        options["energy_swing_source"] = "energy_swing_J from the logged torque"
    swings = np.asarray(swings, dtype=float)
    use = np.isfinite(swings)
    if log.has_speed:
        use &= np.isfinite(log.w_mean)
        per_cycle_speed: np.ndarray | float = log.w_mean[use]
        options["speed_source"] = "mean of speed_mean_rpm over the cycles used"
    elif speed is not None and speed > 0:
        per_cycle_speed = float(speed)
        options["speed_source"] = "given"
    else:
        raise DataError("the log has torque but no speed, and no speed was given: give the "
                        "mean speed (--nominal-speed or [machine] speed_rpm) to size from a "
                        "torque-only log")
    if not np.any(use):
        raise DataError("no clean cycle has an energy swing and a mean speed to size from")
    return swings[use], per_cycle_speed


def _design_swing(e_used: np.ndarray, per_cycle_speed: np.ndarray | float, cs: float,
                  q: float | str, n_boot: int, seed: int, options: dict[str, Any],
                  messages: list[str]) -> _DesignSwing:
    """Design energy swing and the constant-drive bound I = ΔE/(Cs·ω̄²) with its interval."""
    n_used = int(e_used.size)
    wbar = float(np.mean(per_cycle_speed))
    if n_used < 20:
        messages.append(f"only {n_used} clean cycles: the design swing and its interval are "
                        f"rough (20 or more cycles is common practice)")
    e_design = design_energy_swing(e_used, q)
    bound = float(required_inertia(e_design, cs, wbar))
    bound_ci = bootstrap_ci(e_used, per_cycle_speed, target_cs=cs, quantile=q, n_boot=n_boot,
                            seed=seed)
    options["interval"] = ("cycle scatter: percentile bootstrap over cycles")
    if q != "max" and q < 1.0 and n_used >= 10 and np.all(e_used > 0):
        # the wider of the bootstrap and the log-normal (noncentral t) interval of the swing
        p_lo, p_hi = quantile_interval_lognormal(e_used, float(q))
        bound_ci = (min(bound_ci[0], bound * p_lo / e_design),
                    max(bound_ci[1], bound * p_hi / e_design))
        options["interval"] = ("cycle scatter: the wider of a percentile bootstrap over "
                               "cycles and a log-normal noncentral-t interval of the design "
                               "quantile (Hahn & Meeker)")
    options["interval"] += ("; drive slope: ±1.96 standard errors of the fit; model error: "
                            "target moved by the measured/model Cs ratio; combined in "
                            "quadrature on each side (GUM)")
    return _DesignSwing(e_used, n_used, wbar, e_design, bound, bound_ci)


def _measured_speed(clean: pd.DataFrame,
                    log: _LogCycles) -> tuple[float | None, dict[str, float | None]]:
    """The log's median Cs and median min/max speeds [rpm], for the models to match."""
    cs_all = _finite(clean["cs"]) if "cs" in clean else np.array([])
    cs_all = cs_all[np.isfinite(cs_all)]
    cs_measured = float(np.median(cs_all)) if log.has_speed and cs_all.size else None
    measured = {f"speed_{name}_rpm_measured": (float(np.median(x[np.isfinite(x)])) * _RPM
                                                if np.any(np.isfinite(x)) else None)
                for name, x in (("min", log.w_min), ("max", log.w_max))}
    return cs_measured, measured


def _run_models(mean_cycle: pd.DataFrame | None, chosen: str, design: _DesignSwing, *,
                identified: IdentifyResult | None, motor: MotorModel | None,
                existing: float | None, source: str | None, cs: float,
                cs_measured: float | None, measured: dict[str, float | None],
                torque_role: str, revs: int, tolerance: float, hours_per_year: float,
                messages: list[str]) -> dict[str, Any]:
    """Run the drive models against the log and take the one that leads (else the bound)."""
    rec = recommend(
        mean_cycle, fit=identified, motor=motor, existing=existing,
        existing_source=f"the {source} inertia" if source else "",
        target_cs=cs, cs_measured=cs_measured, swing_median=float(np.median(design.e_used)),
        swing_design=design.e_design, bound=design.bound, bound_ci=design.bound_ci,
        torque_role=torque_role, revs=revs, tolerance=tolerance,
        hours_per_year=hours_per_year, measured=measured,
        messages=messages) if chosen == "torque" else None
    if rec is None:
        bound, bound_ci = design.bound, design.bound_ci
        rec = {"model": "constant drive", "required": bound, "ci95": bound_ci,
               "model_reason": ("the log has no torque channel, so the energy swing comes "
                                "from the speed and the given inertia, and no drive model can "
                                "be run; " + BOUND_NOTE),
               "ci95_parts": {"cycle_scatter_kgm2": [bound_ci[0] - bound,
                                                     bound_ci[1] - bound]}}
    return rec


def _settle_existing(rec: dict[str, Any], identified: IdentifyResult | None,
                     given: float | None, total_existing: float | None,
                     options: dict[str, Any], messages: list[str]) -> float | None:
    """The existing inertia [kg*m^2] the leading model stands on (the given one if none)."""
    model_inertia = (rec.get("model_params") or {}).get("inertia_kgm2")
    if rec["model"] != "constant drive" and model_inertia is not None:
        return float(model_inertia)
    if identified is not None and given is not None:
        options["existing_inertia_source"] = "given"
        messages.append(f"no model explains the log, so its identified inertia is not "
                        f"trusted either: the given {given:.4g} kg m^2 is used")
        return given
    return total_existing


def _added_inertia(rec: dict[str, Any], total_existing: float | None,
                   identified: IdentifyResult | None, cs: float, cs_measured: float | None,
                   ratio: float, messages: list[str]
                   ) -> tuple[float | None, tuple[float, float] | None]:
    """Inertia to add [kg*m^2] and its 95 % interval (existing inertia's error included)."""
    i_req = float(rec["required"])
    added: float | None = None
    added_ci: tuple[float, float] | None = None
    if total_existing is not None:
        added = max(i_req - total_existing, 0.0)
        se_i = (rec.get("model_params") or {}).get("inertia_se_kgm2") or 0.0
        if rec["model"] == "constant drive" and identified is not None:
            se_i = identified.inertia_se
        lo, hi = rec["ci95"]
        d_lo, d_hi = i_req - lo, hi - i_req
        h = 1.959963984540054 * se_i
        added_ci = (max(i_req - total_existing - math.hypot(d_lo, h), 0.0),
                    max(i_req - total_existing + math.hypot(d_hi, h), 0.0))
        if added == 0.0:
            extra = (f", measured Cs {cs_measured:.4g}" if cs_measured is not None else "")
            messages.append(f"nothing to add: the machine already meets Cs ≤ {cs:g} with its "
                            f"existing inertia (required {i_req:.4g} kg m^2, existing "
                            f"{total_existing:.4g} kg m^2{extra})")
    else:
        messages.append("no existing inertia given or identified: the required inertia is "
                        "the total at the logged shaft, existing parts included")
    if ratio != 1.0 and added is not None:
        messages.append(f"on a flywheel shaft turning {ratio:g} × the logged shaft the added "
                        f"inertia is {added / ratio ** 2:.4g} kg m^2 (I/r²)")
    return added, added_ci


def _nameplate_check(motor: MotorModel | None, rec: dict[str, Any], torque_role: str,
                     messages: list[str]) -> float | None:
    """The nameplate slope [N*m*s/rad], compared with the log's calibrated one."""
    nameplate_slope = motor.slope if motor is not None else None
    mp = rec.get("model_params") or {}
    if (nameplate_slope is not None and mp.get("name") == "calibrated drive"
            and torque_role == "load"):
        gap = nameplate_slope / mp["slope_Nms_per_rad"] - 1.0
        verb = "disagrees with" if abs(gap) > NAMEPLATE_AGREES_REL else "agrees with"
        messages.append(f"the nameplate motor's slope {nameplate_slope:.4g} N m s/rad "
                        f"{verb} the log's {mp['slope_Nms_per_rad']:.4g} ± "
                        f"{mp['slope_se_Nms_per_rad']:.2g} N m s/rad ({gap:+.0%})"
                        + ("; the log's slope is used" if rec["model"] == "calibrated drive"
                           else ""))
    return nameplate_slope


def _assemble(chosen: str, cs: float, q: float | str, ratio: float, design: _DesignSwing,
              rec: dict[str, Any], *, identified: IdentifyResult | None,
              existing: float | None, added: float | None,
              added_ci: tuple[float, float] | None, cs_measured: float | None,
              nameplate_slope: float | None, messages: list[str],
              options: dict[str, Any]) -> SizeResult:
    """Gather the steps' figures into the frozen result."""
    mp = rec.get("model_params")
    return SizeResult(
        method=chosen, target_cs=cs, speed_mean=design.wbar,
        design_energy_swing=design.e_design, quantile=q,
        required_inertia=float(rec["required"]), ci95=tuple(rec["ci95"]),
        existing_inertia=existing, added_inertia=added, flywheel_speed_ratio=ratio,
        cycles_used=design.n_used,
        identified=identified.to_dict() if identified is not None else None,
        drive=rec.get("drive"), messages=tuple(messages), cautions=CAUTIONS, options=options,
        curve=rec.get("curve"), model=rec["model"], model_reason=rec["model_reason"],
        cs_measured=cs_measured,
        validation=(rec["validation"].to_dict() | {"model": (mp or {}).get("name")}
                    if rec.get("validation") is not None else None),
        candidates=tuple(rec.get("candidates", ())), model_params=mp,
        bound_required_inertia=design.bound, bound_ci95=design.bound_ci,
        ci95_parts=rec["ci95_parts"], added_ci95=added_ci, nameplate_slope=nameplate_slope,
        now=rec.get("now"), after=rec.get("after"))


def size_log(cycles: Any, profile: Any = None, *, target_cs: float | None = None,
             machine_class: str | None = None, quantile: float | str = 0.95,
             motor: Mapping[str, float] | None = None,
             flywheel_speed_ratio: float | None = None, seed: int = 0,
             tolerance: float = TOLERANCE_REL,
             hours_per_year: float = HOURS_PER_YEAR) -> SizeResult:
    """Size a flywheel from the cycles of one log and a machine profile.

    The values given here win over the profile's; this is what ``torqlog size`` and the
    report both run, so their numbers agree.

    Parameters
    ----------
    cycles : CycleResult
        From :func:`torqlog.signal.cycles.analyse_cycles`; its options give the existing inertia,
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
    tolerance : float
        Relative Cs error within which a drive model explains the log.
    hours_per_year : float [h]
        Running hours per year for the copper-loss change.

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
    target_cs = _target_from(target_cs, machine_class, machine)
    model = _motor_from(profile, motor)
    ratio = (flywheel_speed_ratio if flywheel_speed_ratio is not None
             else machine.get("flywheel_speed_ratio", 1.0))
    o = cycles.options
    _check_some_clean(cycles)
    return size_from_cycles(cycles.table, cycles.mean_cycle, target_cs=target_cs,
                            quantile=quantile, existing_inertia=o["inertia"],
                            flywheel_speed_ratio=ratio, motor=model,
                            revs_per_cycle=o["revs_per_cycle"], seed=seed,
                            torque_role=o["torque_role"], speed=o.get("nominal_speed"),
                            tolerance=tolerance, hours_per_year=hours_per_year)


def _target_from(target_cs: float | None, machine_class: str | None,
                 machine: Mapping[str, Any]) -> float:
    """The target Cs: as given, else from the machine class, else from the profile."""
    if target_cs is None and machine_class:
        target_cs = target_cs_for(machine_class)
    if target_cs is None:
        target_cs = machine.get("target_cs")
    if target_cs is None:
        raise UsageError("give --target-cs X, --machine-class NAME or [machine] target_cs in "
                         "the profile")
    return target_cs


def _motor_from(profile: Any, motor: Mapping[str, float] | None) -> MotorModel | None:
    """The motor model from the profile's ``[motor]`` with the given values over it."""
    motor_kw = dict(profile.motor) if profile is not None else {}
    motor_kw.update({k: v for k, v in (motor or {}).items() if v is not None})
    return MotorModel.from_profile(motor_kw) if motor_kw else None


def _check_some_clean(cycles: Any) -> None:
    """Refuse a log whose cycles are all flagged, saying which flags they carry."""
    summary = cycles.summary
    if not summary.get("cycles"):
        flags = ", ".join(f"{k} {v}" for k, v in (summary.get("flags") or {}).items())
        raise DataError(f"{cycles.source}: no clean cycles to size from: all "
                        f"{summary.get('cycles_total', 0)} cycles are flagged"
                        + (f" ({flags})" if flags else "")
                        + "; see the flag column of 'torqlog cycles' and fix the log or how "
                          "it is read")


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
    if "anomaly_score" in cycles.columns:  # cycle-shape check (torqlog.signal.anomaly)
        from torqlog.signal.anomaly import abnormal_effect

        eff = abnormal_effect(cycles.columns, data.get("quantile", 0.95))
        data["abnormal_cycles"] = eff
        if eff and eff["abnormal"] and eff["change"] is not None:
            data["messages"].append(
                f"{eff['abnormal']} cycle(s) of abnormal shape are in the sizing (they are real "
                f"running); without them the design energy swing changes by "
                f"{100 * eff['change']:+.2g} %")
    return data
