"""One inertia recommendation: pick the model that explains the log, size with it, bound it.

Candidates, in order: the drive model calibrated on the log, the nameplate motor. The first
whose Cs at the existing inertia reproduces the measured median Cs (within the tolerance
of :data:`torqlog.sizing.calibrate.TOLERANCE_REL`) leads; with no speed channel to check against,
the nameplate leads unchecked and says so; otherwise the constant-drive bound leads,
labelled as an upper bound, with the likely reasons the models fail.

The 95 % interval of the leading model combines, in quadrature on each side, three parts
found by re-solving the model: the cycle-to-cycle scatter of the design energy swing
(percentile bootstrap over cycles), the uncertainty of the fitted slope (±1.96 standard
errors) and the model's validation error (the target moved by the measured/model Cs ratio).

References
----------
.. [1] B. Efron, R. J. Tibshirani, *An Introduction to the Bootstrap*, 1993 (percentile
   interval).
.. [2] JCGM 100:2008, *Guide to the expression of uncertainty in measurement* (GUM),
   sec. 5 (combining uncertainty components in quadrature, sensitivity by re-evaluation).
.. [3] L. Ljung, *System Identification*, 2nd ed., 1999 (model validation).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pandas as pd

from torqlog.errors import DataError
from torqlog.sizing.calibrate import (
    BOUND_NOTE,
    LIKELY_REASONS,
    DriveModel,
    Validation,
    copper_loss_change,
    cycle_energy_swing,
    inertia_for_cs,
    machine_state,
    model_from_fit,
    model_from_nameplate,
    reasons_text,
    simulate_after,
    validate,
)
from torqlog.sizing.drive import MotorModel, curve_frame
from torqlog.sizing.identify import IdentifyResult

_Z95 = 1.959963984540054  # two-sided 95 % normal quantile (scipy.stats.norm.ppf(0.975))


def candidate_models(fit: IdentifyResult | None, motor: MotorModel | None,
                     existing: float | None, existing_source: str, speed_mean: float,
                     torque_role: str, messages: list[str]) -> list[DriveModel]:
    """The models worth trying, best first (calibrated, then nameplate)."""
    out: list[DriveModel] = []
    if fit is not None:
        try:
            out.append(model_from_fit(fit, speed_mean, motor=motor))
        except DataError as exc:
            messages.append(f"no calibrated drive model: {exc}")
    if motor is not None and torque_role == "load" and existing is not None:
        out.append(model_from_nameplate(motor, existing, existing_source))
    return out


def model_interval(model: DriveModel, angle: np.ndarray, torque: np.ndarray, revs: int,
                   target_cs: float, swing_scale: float, required: float,
                   bound_rel: tuple[float, float], validation: Validation | None
                   ) -> tuple[tuple[float, float], dict[str, list[float]]]:
    """95 % interval on the model's required inertia, and its parts [kg*m^2].

    Parameters
    ----------
    model : DriveModel
    angle, torque : array [rad], [N*m]
        The mean cycle.
    revs : int
        Revolutions per cycle.
    target_cs : float
    swing_scale : float
        Scale that brings the mean cycle to the design energy swing.
    required : float [kg*m^2]
        The model's required total inertia.
    bound_rel : (float, float)
        Bootstrap interval of the constant-drive figure divided by the figure (the
        relative scatter of the design swing over the mean speed squared).
    validation : Validation or None

    Returns
    -------
    (lo, hi), parts
        Parts are [below, above] offsets from ``required``.

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), sec. 5; Efron & Tibshirani 1993.
    """
    def solve(**kw: Any) -> float:
        kw.setdefault("swing_scale", swing_scale)
        kw.setdefault("guess", required)
        target = kw.pop("target", target_cs)
        return inertia_for_cs(model, angle, torque, target, revs, rtol=1e-4, **kw)

    parts: dict[str, list[float]] = {}
    lo_s = solve(swing_scale=swing_scale * bound_rel[0], guess=required * bound_rel[0])
    hi_s = solve(swing_scale=swing_scale * bound_rel[1], guess=required * bound_rel[1])
    parts["cycle_scatter_kgm2"] = [min(lo_s - required, 0.0), max(hi_s - required, 0.0)]
    if model.slope_se:
        k, se = model.slope, model.slope_se
        a = solve(slope=k + _Z95 * se)
        b = solve(slope=max(k - _Z95 * se, 0.5 * k))
        parts["drive_slope_kgm2"] = [min(a, b, required) - required,
                                     max(a, b, required) - required]
    else:
        parts["drive_slope_kgm2"] = [0.0, 0.0]
    if validation is not None and validation.error_rel != 0.0:
        moved = solve(target=target_cs * (1.0 + validation.error_rel))
        h = abs(moved - required)
        parts["model_error_kgm2"] = [-h, h]
    else:
        parts["model_error_kgm2"] = [0.0, 0.0]
    lo = required - math.sqrt(sum(p[0] ** 2 for p in parts.values()))
    hi = required + math.sqrt(sum(p[1] ** 2 for p in parts.values()))
    return (max(lo, 0.0), hi), parts


def recommend(mean_cycle: pd.DataFrame | None, *, fit: IdentifyResult | None,
              motor: MotorModel | None, existing: float | None, existing_source: str,
              target_cs: float, cs_measured: float | None, swing_median: float,
              swing_design: float, bound: float, bound_ci: tuple[float, float],
              torque_role: str, revs: int, tolerance: float, hours_per_year: float,
              measured: dict[str, float | None], messages: list[str]) -> dict[str, Any]:
    """Choose the leading model and size with it (the core of ``torqlog size``).

    Parameters
    ----------
    mean_cycle : DataFrame or None
        ``angle`` [rad], ``torque_mean`` [N*m], ``speed_mean`` [rad/s].
    fit : IdentifyResult or None
        The inertia/slope fit on the mean cycle.
    motor : MotorModel or None
        Nameplate.
    existing : float or None [kg*m^2]
        Existing total inertia used (identified or given).
    existing_source : str
    target_cs : float
    cs_measured : float or None
        Median measured Cs (None without a speed channel).
    swing_median, swing_design : float [J]
        Median and design per-cycle energy swing.
    bound, bound_ci : float, (float, float) [kg*m^2]
        Constant-drive required inertia and its bootstrap interval.
    torque_role : {"load", "drive"}
    revs : int
    tolerance : float
        Relative tolerance of the validation.
    hours_per_year : float [h]
    measured : dict
        Measured figures for the current state (speed min/max in rpm).
    messages : list of str
        Appended to.

    Returns
    -------
    dict
        Fields of :class:`torqlog.sizing.inertia.SizeResult` for the leading model.

    References
    ----------
    .. [1] Budynas & Nisbett, *Shigley's*, 10th ed., eq. 16-62 (the bound).
    """
    out: dict[str, Any] = {
        "model": "constant drive", "model_reason": "", "required": bound, "ci95": bound_ci,
        "ci95_parts": {"cycle_scatter_kgm2": [bound_ci[0] - bound, bound_ci[1] - bound],
                       "drive_slope_kgm2": [0.0, 0.0], "model_error_kgm2": [0.0, 0.0]},
        "validation": None, "candidates": [], "model_params": None, "now": None,
        "after": None, "curve": None, "drive": None,
    }
    ok = (mean_cycle is not None and "torque_mean" in mean_cycle
          and np.all(np.isfinite(mean_cycle["torque_mean"].to_numpy(float))))
    if not ok:
        out["model_reason"] = ("the log has no torque channel over the mean cycle, so no drive "
                               "model can be run; " + BOUND_NOTE)
        return out
    angle = mean_cycle["angle"].to_numpy(float)
    torque = mean_cycle["torque_mean"].to_numpy(float)
    speed = mean_cycle["speed_mean"].to_numpy(float) if "speed_mean" in mean_cycle else None
    wbar = float(np.mean(speed)) if speed is not None and np.all(np.isfinite(speed)) else 0.0
    models = candidate_models(fit, motor, existing, existing_source, wbar, torque_role,
                              messages)
    e_mc = cycle_energy_swing(angle, torque)
    if not e_mc > 0:
        out["model_reason"] = "the mean cycle shows no energy swing; " + BOUND_NOTE
        return out
    s_med, s_design = swing_median / e_mc, swing_design / e_mc

    lead: DriveModel | None = None
    lead_val: Validation | None = None
    failed: list[tuple[DriveModel, Validation]] = []
    for m in models:
        if cs_measured is None:
            continue
        try:
            v = validate(m, angle, torque, cs_measured, revs, swing_scale=s_med,
                         tolerance=tolerance)
        except DataError as exc:
            messages.append(f"the {m.name} model could not be run: {exc}")
            continue
        out["candidates"].append({"model": m.name, **v.to_dict()})
        if v.passed:
            lead, lead_val = m, v
            break
        failed.append((m, v))
    if lead is not None:
        out["model_reason"] = (
            f"the {lead.name} model reproduces the measured median Cs "
            f"{lead_val.cs_measured:.4g} at the existing inertia within "
            f"{abs(lead_val.error_rel):.1%} (tolerance {tolerance:.0%})")
    elif cs_measured is None and models and models[-1].name == "nameplate drive":
        lead = models[-1]
        out["model_reason"] = ("the log shows no speed within the cycle (no speed or angle "
                               "channel), so no model can be checked against a measured Cs; "
                               "the nameplate motor leads, unchecked, and its interval holds "
                               "no model error because none can be measured")
    else:
        refused = [m for m in messages if m.startswith(("no calibrated drive model",
                                                         "the log cannot separate"))]
        if failed:
            why = reasons_text(failed[0][1].error_rel)
        elif refused:
            why = ("no drive model explains the log (" + refused[-1] + "); likely reasons: "
                   + "; ".join(LIKELY_REASONS))
        elif cs_measured is None:
            why = ("the log shows no speed within the cycle (no speed or angle channel), "
                   "so no drive model can be calibrated on it or checked against a measured "
                   "Cs, and no nameplate motor was given")
        else:
            why = "no drive model could be built from the log or a nameplate"
        out["model_reason"] = f"{why}; the constant-drive bound leads: {BOUND_NOTE}"
        messages.append(why)
    out["validation"] = (lead_val or (failed[0][1] if failed else None))
    sim = lead or (failed[0][0] if failed else (models[0] if models else None))
    if sim is None:
        return out
    out["model_params"] = sim.to_dict()

    required = bound
    if lead is not None:
        out["model"] = lead.name
        required = inertia_for_cs(lead, angle, torque, target_cs, revs, swing_scale=s_design,
                                  guess=bound)
        bound_rel = (bound_ci[0] / bound, bound_ci[1] / bound)
        out["ci95"], out["ci95_parts"] = model_interval(
            lead, angle, torque, revs, target_cs, s_design, required, bound_rel, lead_val)
        out["required"] = required
    added = max(required - sim.inertia, 0.0)

    # the machine now and after, on the median cycle; a drive curve on the design cycle
    try:
        now = simulate_after(sim, 0.0, angle, torque, revs, swing_scale=s_med)
        after = simulate_after(sim, added, angle, torque, revs, swing_scale=s_med)
        top = 2.0 * added if added > 0 else sim.inertia
        grid = np.unique(np.append(np.linspace(0.0, top, 5), added))
        sims = [simulate_after(sim, float(g), angle, torque, revs, swing_scale=s_design)
                for g in grid]
    except DataError as exc:
        messages.append(f"no drive simulation of the machine now and after: {exc}")
        return out
    state_now = machine_state(now, sim, target_cs=target_cs)
    state_now["messages"] = [m.replace("would run hot", "runs hot")
                             for m in state_now["messages"]]
    state_now.update({"cs_measured": cs_measured, **measured, "model": sim.name})
    state_after = machine_state(after, sim, target_cs=target_cs)
    state_after["model"] = sim.name
    if "drive_torque_rms_Nm" in state_now and motor is not None and torque_role == "load":
        state_after.update(copper_loss_change(state_now["drive_torque_rms_Nm"],
                                              state_after["drive_torque_rms_Nm"], motor,
                                              hours_per_year=hours_per_year))
    messages.extend(f"now: {m.replace('would run hot', 'runs hot')}" for m in now.messages)
    messages.extend(f"after: {m}" for m in after.messages)
    out["now"], out["after"] = state_now, state_after
    out["curve"] = curve_frame(sims)
    rec = next(s for s in sims if s.added_inertia == added)
    out["drive"] = {"model": sim.to_dict(), "existing": sims[0].to_dict(),
                    "recommended": rec.to_dict(),
                    "curve": out["curve"].to_dict(orient="records")}
    return out
