"""Drivetrain life from a torque log: rainflow count, Miner's rule, damage-equivalent
torque range, and the life ratio after / before a flywheel retrofit.

The damage-equivalent torque range at N_eq equivalent cycles is

    DEL = (sum_i n_i dT_i^m / N_eq)^(1/m)

with the rainflow ranges dT_i, their counts n_i (half cycles 0.5) and the Basquin slope m
of the S-N curve N dT^m = const. With a reference point of the S-N curve (a torque range
dT_ref that the part survives N_ref times) Miner's damage is D = sum n_i / N_i,
N_i = N_ref (dT_ref / dT_i)^m. Between two loadings of the same duration the life ratio
is D_before / D_after = sum n dT^m before / after.

Default slope m = 5: the slope EN 1993-1-9 (Eurocode 3, fatigue) gives shear stress
ranges; machined shafts often show higher slopes (common practice), so it is an option.
Default N_eq = 10^7, common practice for a damage-equivalent load.

References
----------
.. [1] ASTM E1049-85 (2017), rainflow counting (see :mod:`torqlog.shaft.rainflow`).
.. [2] M. A. Miner, "Cumulative damage in fatigue", *J. Appl. Mech.* 12 (1945) A159.
.. [3] O. H. Basquin, "The exponential law of endurance tests", *Proc. ASTM* 10 (1910).
.. [4] EN 1993-1-9:2005, *Eurocode 3: Design of steel structures, Part 1-9: Fatigue*,
   sec. 7.1 (S-N slope m = 5 for shear stress ranges).
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from torqlog.errors import UsageError
from torqlog.shaft.rainflow import RainflowCounter

if TYPE_CHECKING:
    from torqlog.sizing.calibrate import DriveModel

DEFAULT_SN_SLOPE = 5.0
DEFAULT_EQUIVALENT_CYCLES = 1.0e7


def check_life_options(sn_slope: float, equivalent_cycles: float) -> None:
    """One sentence naming the option when the S-N slope or N_eq is not positive."""
    if not (math.isfinite(sn_slope) and sn_slope > 0):
        raise UsageError(f"sn_slope (S-N slope m) must be positive, got {sn_slope:g}")
    if not (math.isfinite(equivalent_cycles) and equivalent_cycles > 0):
        raise UsageError(f"equivalent_cycles must be positive, got {equivalent_cycles:g}")


def damage_equivalent_range(damage_sum: float, sn_slope: float,
                            equivalent_cycles: float) -> float:
    """DEL = (sum n dT^m / N_eq)^(1/m) [same unit as the ranges].

    Examples
    --------
    Ten cycles of 100 N*m are equivalent to one cycle of 100 * 10^(1/m):

    >>> round(damage_equivalent_range(10 * 100.0**5, 5.0, 1.0), 3)
    158.489
    """
    return (damage_sum / equivalent_cycles) ** (1.0 / sn_slope)


def miner_damage(damage_sum: float, sn_slope: float, reference_range: float,
                 reference_cycles: float) -> float:
    """Miner's damage sum n_i / N_i with N_i = N_ref (dT_ref / dT_i)^m."""
    return damage_sum / (reference_cycles * reference_range**sn_slope)


@dataclass(frozen=True, eq=False)
class LifeResult:
    """Rainflow count and damage of one torque signal. ``to_dict()`` is the JSON
    contract (keys carry units)."""

    source: str
    samples: int
    duration: float | None              # [s]
    cycles: float
    range_max: float                    # [N*m]
    damage_sum: float                   # sum n dT^m [(N*m)^m]
    sn_slope: float
    equivalent_cycles: float
    histogram: dict[str, list[float]] = field(repr=False)
    miner: float | None = None
    life_hours: float | None = None
    after: dict[str, Any] | None = None
    options: dict[str, Any] = field(default_factory=dict)
    cautions: tuple[str, ...] = ()

    @property
    def damage_equivalent_torque(self) -> float:
        return damage_equivalent_range(self.damage_sum, self.sn_slope, self.equivalent_cycles)

    def to_dict(self) -> dict[str, Any]:
        d: dict[str, Any] = {
            "source": self.source, "samples": self.samples, "duration_s": self.duration,
            "cycles_counted": self.cycles, "torque_range_max_Nm": self.range_max,
            "damage_equivalent_torque_Nm": self.damage_equivalent_torque,
            "sn_slope": self.sn_slope, "equivalent_cycles": self.equivalent_cycles,
            "miner_damage": self.miner, "life_hours": self.life_hours,
            "histogram": {"range_edges_Nm": self.histogram["range_edges"],
                          "range_counts": self.histogram["range_counts"],
                          "mean_edges_Nm": self.histogram["mean_edges"],
                          "mean_counts": self.histogram["mean_counts"]},
        }
        if self.after is not None:
            d.update(self.after)
        d["options"] = dict(self.options)
        d["cautions"] = list(self.cautions)
        return d


def count_torque(chunks: Iterable[np.ndarray], sn_slope: float = DEFAULT_SN_SLOPE,
                 equivalent_cycles: float = DEFAULT_EQUIVALENT_CYCLES, *,
                 source: str = "", duration: float | None = None,
                 reference_range: float | None = None, reference_cycles: float = 1.0e7,
                 nbins: int = 64) -> LifeResult:
    """Rainflow-count a torque stream and sum its damage; memory flat in its length.

    Parameters
    ----------
    chunks : iterable of arrays [N*m]
        The torque in time order, in pieces of any size.
    sn_slope : float
        Basquin slope m (default 5, see the module notes).
    equivalent_cycles : float
        N_eq of the damage-equivalent range (default 10^7).
    source : str
    duration : float, optional [s]
        Time the log covers (for Miner's life in hours).
    reference_range : float, optional [N*m]
        Torque range the shaft survives ``reference_cycles`` times (a point of its S-N
        curve); without it Miner's damage is not computed.
    reference_cycles : float
    nbins : int
        Bins of the range and mean histograms.

    Returns
    -------
    LifeResult

    References
    ----------
    ASTM E1049-85 sec. 5.4.4; Miner (1945); Basquin (1910).
    """
    check_life_options(sn_slope, equivalent_cycles)
    if reference_range is not None and not reference_range > 0:
        raise UsageError(f"reference_range must be positive, got {reference_range:g} N*m")
    counter = RainflowCounter((sn_slope,), nbins)
    for chunk in chunks:
        counter.add(chunk)
    counter.finish()
    dsum = float(counter.damage_sums[0])
    miner = life = None
    if reference_range is not None:
        miner = miner_damage(dsum, sn_slope, reference_range, reference_cycles)
        if duration and miner > 0:
            life = duration / miner / 3600.0
    return LifeResult(source, counter.samples, duration, counter.cycles, counter.range_max,
                      dsum, sn_slope, equivalent_cycles, counter.histogram(), miner, life,
                      options={"counting": "ASTM E1049-85 rainflow (four-point rule, residue "
                                           "as half cycles)",
                               "half_cycle_weight": 0.5,
                               "reference_range_Nm": reference_range,
                               "reference_cycles": reference_cycles})


def periodic_damage_sum(cycle_torque: np.ndarray, sn_slope: float) -> float:
    """Sum n dT^m of one period of a periodic torque repeated without end.

    Rotating the period to start at its largest value closes every cycle within one
    period (ASTM E1049 sec. 5.4.4 applied to a repeated history), so the residue is a
    single full cycle from the maximum to the minimum and back.
    """
    from torqlog.shaft.rainflow import rainflow

    t = np.asarray(cycle_torque, float)
    k = int(np.argmax(t))
    t = np.concatenate([t[k:], t[:k], t[k:k + 1]])
    r, _, n = rainflow(t)
    return float((n * r**sn_slope).sum())


@dataclass(frozen=True)
class LifeModel:
    """The drive model the life ratio after/before runs, and why.

    Attributes
    ----------
    model : DriveModel
        The model simulated before and after (calibrated, or nameplate).
    size_model : str
        The model ``torqlog size`` leads with on the same log (``"calibrated drive"``,
        ``"nameplate drive"`` or ``"constant drive"``).
    validation_error_rel : float or None
        The model's Cs at the existing inertia over the measured median Cs, minus 1 (None
        when the log has no speed within the cycle to check against).
    validated : bool
        Whether that error is within the sizing's tolerance.
    note : str
        One sentence on the choice (said in the output).
    """

    model: DriveModel
    size_model: str
    validation_error_rel: float | None
    validated: bool
    note: str

    def to_dict(self) -> dict[str, Any]:
        """JSON keys of the choice (``drive_model_*``)."""
        return {"drive_model": self.model.name, "drive_model_used": self.model.to_dict(),
                "drive_model_size_leads": self.size_model,
                "drive_model_validation_error_rel": self.validation_error_rel,
                "drive_model_validated": self.validated, "drive_model_note": self.note}


def _checked(size: dict[str, Any], name: str) -> dict[str, Any] | None:
    return next((c for c in size.get("models_checked") or [] if c.get("model") == name), None)


def life_drive_model(size: dict[str, Any], profile: Any = None) -> LifeModel:
    """Pick the drive model for the life ratio the way ``torqlog size`` picks its lead.

    The model ``size`` leads with is used: the drive (or, for an engine log, the load side)
    calibrated on the log when it reproduces the measured Cs, else the nameplate motor when
    that does. When only the constant-drive bound leads, no validated model exists: a
    profile's nameplate ``[motor]`` is used with a note saying so (a load log with a known
    existing inertia), otherwise the ratio is refused.

    Parameters
    ----------
    size : dict
        ``SizeResult.to_dict()`` of :func:`torqlog.sizing.inertia.size_log` on the same log.
    profile : MachineProfile, optional
        For the nameplate fallback (``[motor]``).

    Returns
    -------
    LifeModel

    Raises
    ------
    UsageError
        One sentence naming what to add when no model can run.

    References
    ----------
    .. [1] L. Ljung, *System Identification*, 2nd ed., 1999 (a model is used only when its
       simulated output reproduces the measurement).
    """
    from torqlog.sizing.calibrate import DriveModel, model_from_nameplate
    from torqlog.sizing.drive import MotorModel

    lead = size.get("model", "constant drive")
    if lead != "constant drive" and size.get("drive_model"):
        model = DriveModel.from_dict(size["drive_model"])
        err = size.get("cs_model_error_rel")
        if err is None:
            note = (f"the {model.name} model runs unchecked: the log shows no speed within "
                    f"the cycle to check it against")
        else:
            note = (f"the {model.name} model reproduces the measured Cs within "
                    f"{abs(err):.1%}")
        return LifeModel(model, lead, err, err is not None, note)
    role = (size.get("cycle_options") or {}).get("torque_role", "load")
    existing = size.get("existing_inertia_kgm2")
    if size.get("cs_measured") is None:
        why = "the log shows no speed within the cycle"
        fix = "a speed or angle channel to the log"
    else:
        why = ", ".join(f"the {c['model']} model misses the measured Cs by "
                        f"{c['cs_model_error_rel']:+.0%}"
                        for c in size.get("models_checked") or []
                        if c.get("cs_model_error_rel") is not None)
        why = why or "no drive model could be fitted on the log"
        fix = "an unfiltered speed or angle channel logged on the shaft the torque acts on"
    motor = getattr(profile, "motor", None) if profile is not None else None
    if role == "load" and motor and existing is not None:
        src = (size.get("options") or {}).get("existing_inertia_source") or "given"
        model = model_from_nameplate(MotorModel.from_profile(profile), existing,
                                     f"the {src} inertia")
        chk = _checked(size, "nameplate drive")
        err = None if chk is None else chk.get("cs_model_error_rel")
        note = (f"the ratio cannot be computed from a validated drive model ({why}): the "
                f"nameplate motor is used instead; read the ratio as indicative")
        return LifeModel(model, lead, err, False, note)
    side = "load-side" if role == "drive" else "drive"
    extra = ("" if role == "drive" else
             ", or a [motor] section and [machine] inertia_kgm2 to the profile")
    raise UsageError(f"the life ratio after/before needs a validated {side} model and "
                     f"there is none ({why}): add {fix}{extra}")


def drive_torque_before_after(angle: np.ndarray, torque: np.ndarray, revs_per_cycle: int,
                              model: DriveModel, added_inertia: float
                              ) -> tuple[np.ndarray, np.ndarray]:
    """Shaft torque of the unlogged side over the mean cycle, as the machine runs and after
    adding ``added_inertia`` [kg*m^2] (at the logged shaft).

    The one adapter between life and the drive model: :func:`torqlog.sizing.calibrate.
    simulate_after` of the model ``size`` leads with (:func:`life_drive_model`). Before
    and after run the same model, so their ratio compares like with like. For a load log
    this is the motor's torque; for an engine log the load's (generator's) torque with its
    sign turned, which leaves the ranges unchanged.

    Parameters
    ----------
    angle : array [rad]
        Uniform grid over one cycle (the mean cycle's ``angle``).
    torque : array [N*m]
        Logged mean-cycle torque.
    revs_per_cycle : int
    model : DriveModel
    added_inertia : float [kg*m^2]

    Returns
    -------
    before, after : arrays [N*m]
        On the simulation's grid.

    References
    ----------
    .. [1] R. L. Norton, *Design of Machinery*, flywheel section (equation of motion).
    """
    from torqlog.sizing.calibrate import simulate_after

    before = simulate_after(model, 0.0, angle, torque, revs_per_cycle)
    after = simulate_after(model, added_inertia, angle, torque, revs_per_cycle)
    return before.motor_torque, after.motor_torque


def life_after(angle: np.ndarray, torque: np.ndarray, revs_per_cycle: int,
               choice: LifeModel, added_inertia: float, sn_slope: float) -> dict[str, Any]:
    """The after/before block of the life result: damage-equivalent ranges per cycle of
    the unlogged side's torque before and after, their life ratio and the model used.

    Parameters
    ----------
    angle, torque : arrays [rad], [N*m]
        The mean cycle.
    revs_per_cycle : int
    choice : LifeModel
        From :func:`life_drive_model`.
    added_inertia : float [kg*m^2]
        At the logged shaft.
    sn_slope : float
        Basquin slope m.

    Returns
    -------
    dict
        ``life_ratio_after_before``, ``before_/after_damage_equivalent_torque_Nm`` (at one
        equivalent cycle per machine cycle), ``added_inertia_kgm2`` and the
        ``drive_model_*`` keys of :meth:`LifeModel.to_dict`.

    References
    ----------
    Miner (1945); Basquin (1910); ASTM E1049-85 (see the module notes).
    """
    before, after = drive_torque_before_after(angle, torque, revs_per_cycle, choice.model,
                                              added_inertia)
    d_b = periodic_damage_sum(before, sn_slope)
    d_a = periodic_damage_sum(after, sn_slope)
    side = "load (generator) side" if choice.model.torque_role == "drive" else "drive side"
    return {"added_inertia_kgm2": added_inertia, **choice.to_dict(),
            "before_damage_equivalent_torque_Nm": damage_equivalent_range(d_b, sn_slope, 1.0),
            "after_damage_equivalent_torque_Nm": damage_equivalent_range(d_a, sn_slope, 1.0),
            "life_ratio_after_before": math.inf if d_a == 0 else d_b / d_a,
            "after_basis": f"{side} shaft torque of the mean cycle simulated with the "
                           f"{choice.model.name} model, per cycle (damage-equivalent range "
                           f"at 1 cycle per machine cycle)"}


def life_ratio(before: np.ndarray, after: np.ndarray, sn_slope: float) -> float:
    """Life after / before of one periodic torque replacing another, same cycle count:
    sum n dT^m before / after (Miner, Basquin)."""
    d_after = periodic_damage_sum(after, sn_slope)
    d_before = periodic_damage_sum(before, sn_slope)
    return math.inf if d_after == 0 else d_before / d_after


__all__ = ["DEFAULT_EQUIVALENT_CYCLES", "DEFAULT_SN_SLOPE", "LifeModel", "LifeResult",
           "check_life_options", "count_torque", "damage_equivalent_range",
           "drive_torque_before_after", "life_after", "life_drive_model", "life_ratio",
           "miner_damage", "periodic_damage_sum"]
