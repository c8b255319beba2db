"""Did the retrofit deliver? The before-log's calibrated model against an after-log.

The model calibrated on the log before the change (:mod:`torqlog.sizing.calibrate`) predicts the
speed fluctuation and the drive load at the new inertia; the log after the change measures
them, and its own fit shows how much inertia was really added. Both predictions are run on
the after-log's load cycle (its mean cycle scaled to its median energy swing), so a change
of load between the logs does not count against the model.

References
----------
.. [1] L. Ljung, *System Identification*, 2nd ed., 1999 (validation of a model on data not
   used to fit it).
.. [2] R. L. Norton, *Design of Machinery*, flywheel section (equation of motion).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from torqlog.errors import DataError
from torqlog.sizing.calibrate import (
    TOLERANCE_REL,
    DriveModel,
    cycle_energy_swing,
    model_from_fit,
    simulate_after,
)
from torqlog.sizing.identify import identify_inertia_cycle


@dataclass(frozen=True)
class RetrofitResult:
    """The before-log's prediction beside what the after-log measures (SI inside)."""

    source_after: str
    target_cs: float
    inertia_before: float
    inertia_after: float
    inertia_after_se: float
    added_planned: float | None
    cs_before_measured: float | None
    cs_after_measured: float
    cs_after_predicted: float
    cs_at_planned_predicted: float | None
    drive_torque_rms_predicted: float | None
    drive_torque_rms_after_log: float | None
    slope_before: float
    slope_after: float | None
    tolerance: float
    messages: tuple[str, ...] = ()
    options: dict[str, Any] = field(default_factory=dict)

    @property
    def added_identified(self) -> float:
        """Inertia the after-log shows was added [kg*m^2]."""
        return self.inertia_after - self.inertia_before

    @property
    def cs_error_rel(self) -> float:
        """Predicted / measured Cs after, minus one."""
        return self.cs_after_predicted / self.cs_after_measured - 1.0

    def to_dict(self) -> dict[str, Any]:
        """JSON of the check (unit-suffixed keys)."""
        planned = self.added_planned
        return {
            "after_log": self.source_after,
            "target_cs": self.target_cs,
            "inertia_before_kgm2": self.inertia_before,
            "inertia_after_identified_kgm2": self.inertia_after,
            "inertia_after_se_kgm2": self.inertia_after_se,
            "added_identified_kgm2": self.added_identified,
            "added_planned_kgm2": planned,
            "added_vs_planned_rel": (self.added_identified / planned - 1.0
                                     if planned else None),
            "cs_before_measured": self.cs_before_measured,
            "cs_after_measured": self.cs_after_measured,
            "cs_after_predicted": self.cs_after_predicted,
            "cs_after_error_rel": self.cs_error_rel,
            "cs_at_planned_predicted": self.cs_at_planned_predicted,
            "meets_target": bool(self.cs_after_measured <= self.target_cs),
            "prediction_within_tolerance": bool(abs(self.cs_error_rel) <= self.tolerance),
            "drive_torque_rms_predicted_Nm": self.drive_torque_rms_predicted,
            "drive_torque_rms_after_log_Nm": self.drive_torque_rms_after_log,
            "drive_slope_before_Nms_per_rad": self.slope_before,
            "drive_slope_after_Nms_per_rad": self.slope_after,
            "messages": list(self.messages),
            "options": dict(self.options),
        }


def retrofit_check(model: DriveModel, after: Any, *, target_cs: float,
                   added_planned: float | None = None, cs_before: float | None = None,
                   tolerance: float = TOLERANCE_REL) -> RetrofitResult:
    """Compare the before-model's prediction with a log taken after adding inertia.

    Parameters
    ----------
    model : DriveModel
        The model that led the sizing of the before-log (``SizeResult.model_params``
        through :meth:`DriveModel.from_dict`).
    after : CycleResult
        Cycles of the log after the change (torque and speed needed).
    target_cs : float
        The target the retrofit was sized for.
    added_planned : float, optional [kg*m^2]
        Inertia meant to be added at the logged shaft (the sizing's recommendation).
    cs_before : float, optional
        Measured median Cs before.
    tolerance : float
        Relative Cs error within which the prediction is said to hold.

    Returns
    -------
    RetrofitResult

    Raises
    ------
    DataError
        The after-log has no torque and speed over its mean cycle, or its inertia cannot be
        identified (the reason is given).

    References
    ----------
    .. [1] L. Ljung, *System Identification*, 1999 (cross-validation on fresh data).
    """
    mc = after.mean_cycle
    o = after.options
    revs = int(o.get("revs_per_cycle", 1))
    if not ({"angle", "torque_mean", "speed_mean"} <= set(mc.columns)
            and np.all(np.isfinite(mc["torque_mean"].to_numpy(float)))
            and np.all(np.isfinite(mc["speed_mean"].to_numpy(float)))):
        raise DataError(f"{after.source}: the after-log needs torque and speed to show the "
                        f"inertia that was added and the speed fluctuation it gives")
    angle = mc["angle"].to_numpy(float)
    torque = mc["torque_mean"].to_numpy(float)
    speed = mc["speed_mean"].to_numpy(float)
    try:
        fit = identify_inertia_cycle(angle, torque, speed, torque_role=model.torque_role,
                                     revs_per_cycle=revs)
    except DataError as exc:
        raise DataError(f"{after.source}: the after-log cannot show its inertia: {exc}") \
            from None
    clean = after.clean
    cs_meas = clean["cs"].to_numpy(float)
    cs_meas = cs_meas[np.isfinite(cs_meas)]
    swings = clean["energy_swing_J"].to_numpy(float)
    swings = swings[np.isfinite(swings)]
    if cs_meas.size == 0 or swings.size == 0:
        raise DataError(f"{after.source}: no clean cycle with a Cs and an energy swing")
    cs_after = float(np.median(cs_meas))
    scale = float(np.median(swings)) / cycle_energy_swing(angle, torque)

    at_after = dataclasses.replace(model, inertia=fit.inertia)
    pred = simulate_after(at_after, 0.0, angle, torque, revs, swing_scale=scale)
    at_plan = None
    if added_planned is not None:
        at_plan = simulate_after(model, float(added_planned), angle, torque, revs,
                                 swing_scale=scale).cs
    n = model.speed_ratio
    messages: list[str] = []
    slope_after, rms_after = None, None
    try:
        own = model_from_fit(fit, float(np.mean(speed)))
        own = dataclasses.replace(own, speed_ratio=n, rated_torque=model.rated_torque)
        slope_after = own.slope
        if model.torque_role == "load":
            rms_after = simulate_after(own, 0.0, angle, torque, revs,
                                       swing_scale=scale).motor_torque_rms / n
    except DataError as exc:
        messages.append(f"the after-log gives no drive model of its own: {exc}")
    added = fit.inertia - model.inertia
    if added_planned:
        gap = added / added_planned - 1.0
        if abs(gap) > 0.10:
            messages.append(f"the after-log shows {added:.4g} kg m^2 added, {gap:+.0%} against "
                            f"the planned {added_planned:.4g} kg m^2: check the flywheel's "
                            f"inertia and what it is referred to (speed ratio²)")
    err = pred.cs / cs_after - 1.0
    if abs(err) <= tolerance:
        messages.append(f"the model predicted Cs {pred.cs:.4g} at the inertia now on the "
                        f"machine; the after-log measures {cs_after:.4g} ({err:+.1%}): the "
                        f"prediction held")
    else:
        messages.append(f"the model predicted Cs {pred.cs:.4g} at the inertia now on the "
                        f"machine but the after-log measures {cs_after:.4g} ({err:+.1%}): the "
                        f"before-model does not explain the machine after the change")
    if cs_after > target_cs:
        messages.append(f"the machine still runs above the target Cs {target_cs:g} "
                        f"(measured {cs_after:.4g})")
    return RetrofitResult(
        source_after=str(after.source), target_cs=float(target_cs),
        inertia_before=model.inertia, inertia_after=fit.inertia,
        inertia_after_se=fit.inertia_se, added_planned=added_planned,
        cs_before_measured=cs_before, cs_after_measured=cs_after,
        cs_after_predicted=float(pred.cs), cs_at_planned_predicted=at_plan,
        drive_torque_rms_predicted=(pred.motor_torque_rms / n
                                    if model.torque_role == "load" else None),
        drive_torque_rms_after_log=rms_after, slope_before=model.slope,
        slope_after=slope_after, tolerance=tolerance, messages=tuple(messages),
        options={"model": model.name, "cycle": "after-log mean cycle scaled to its median "
                 "energy swing", "tolerance_rel": tolerance})


def retrofit_from_size(size: Any, after: Any, *, tolerance: float = TOLERANCE_REL
                       ) -> RetrofitResult:
    """:func:`retrofit_check` with the model, target and plan of a :class:`SizeResult`.

    Raises
    ------
    DataError
        When the sizing had no drive model (a speed-only or torque-only log).
    """
    if not size.model_params:
        raise DataError("the before-log gave no drive model (it needs torque and speed), so "
                        "there is no prediction to check against the after-log")
    model = DriveModel.from_dict(size.model_params)
    planned = size.added_inertia if size.added_inertia is not None else None
    if planned is not None and math.isclose(planned, 0.0):
        planned = None
    return retrofit_check(model, after, target_cs=size.target_cs, added_planned=planned,
                          cs_before=size.cs_measured, tolerance=tolerance)
