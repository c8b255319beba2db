"""A drive model calibrated on the log, checked against the measured speed fluctuation.

A log with torque and speed shows both the inertia of the shaft and how the unlogged side
(the motor of a press or compressor, the load of an engine) answers speed changes:
:func:`torqlog.sizing.identify.identify_inertia_cycle` fits ``I`` and a linear torque–speed slope
``k`` on the mean cycle. Here that fit becomes a model of the machine,

    ``I·ω·dω/dθ = k·(ω₀ − ω) − L(θ)``,

with ``L`` the logged load torque (or the logged engine torque with its sign turned), and
the model is run at the existing inertia (:func:`torqlog.sizing.drive.simulate_drive`) to see
whether it reproduces the coefficient of speed fluctuation the log measures. Only a model
that does is used to size the flywheel; the nameplate motor is a fallback, and the
constant-drive rule ``I = ΔE/(Cs·ω̄²)`` an upper bound.

The mean cycle's load fluctuation is scaled so its energy swing equals a chosen per-cycle
swing (the median for the check against the measured median Cs, the design quantile for
sizing); the mean load and the shape stay those of the log.

References
----------
.. [1] R. L. Norton, *Design of Machinery*, flywheel section (equation of motion of a
   flywheel shaft, I·ω·dω/dθ = T_drive − T_load).
.. [2] R. G. Budynas, J. K. Nisbett, *Shigley's Mechanical Engineering Design*, 10th ed.,
   McGraw-Hill, 2015, sec. 16-12, eq. 16-62 (constant-drive relation I = ΔE/(Cs·ω̄²)).
.. [3] L. Ljung, *System Identification: Theory for the User*, 2nd ed., Prentice Hall,
   1999 (model validation against measured output; parameter covariance).
.. [4] S. J. Chapman, *Electric Machinery Fundamentals*, induction motor: rotor copper
   loss = slip × air-gap power; torque ∝ rotor current in the linear slip region.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy.optimize import brentq

from torqlog.errors import DataError, UsageError
from torqlog.sizing.drive import DriveCycle, LinearDrive, MotorModel, simulate_drive
from torqlog.sizing.identify import IdentifyResult

_RPM = 60.0 / (2.0 * math.pi)  # rad/s -> rpm
#: Integration tolerance of the sizing simulations (Cs to about six digits).
_SIZING_RTOL = 1e-7

#: Relative difference between the model's Cs at the existing inertia and the measured
#: median Cs within which a model is taken to explain the log (common practice, stated).
TOLERANCE_REL = 0.10
#: Default running hours per year for the copper-loss figure (two shifts, ~250 days;
#: stated, not a standard).
HOURS_PER_YEAR = 4000.0

#: Why a model may not reproduce the measured Cs (said when it does not).
LIKELY_REASONS: tuple[str, ...] = (
    "rotating inertia the log does not see (a motor rotor or pulley behind a soft belt or "
    "coupling)",
    "belt slip",
    "the logger's filtering of the speed channel (a low-passed speed shows less "
    "fluctuation than the shaft had)",
    "a controlled drive (inverter or servo speed control) that does not follow a fixed "
    "torque–speed line",
)
BOUND_NOTE = ("I = ΔE/(Cs·ω̄²) assumes the drive torque stays "
              "constant through the cycle, so the flywheel alone carries the swing; a "
              "slipping motor carries part of it, so this is an upper bound")


@dataclass(frozen=True)
class DriveModel:
    """A machine model: total inertia and a linear drive (or load) characteristic.

    Attributes
    ----------
    name : str
        ``"calibrated drive"`` (fitted on the log) or ``"nameplate drive"``.
    inertia : float [kg*m^2]
        Total inertia at the logged shaft (motor rotor included).
    slope : float [N*m*s/rad]
        Drop of the unlogged drive torque per unit speed (load log) or rise of the
        unlogged load torque per unit speed (engine log), at the logged shaft.
    no_load_speed : float [rad/s]
        Speed at which the characteristic ``k·(ω₀ − ω)`` is zero (may be negative for an
        engine log).
    torque_role : str
        ``"load"``: the log holds the load torque; ``"drive"``: the engine torque.
    speed_ratio : float
        Motor shaft speed / logged shaft speed (1 without a motor).
    rated_torque : float or None [N*m]
        Rated torque at the motor shaft, from a nameplate.
    inertia_se, slope_se : float or None [kg*m^2], [N*m*s/rad]
        Standard errors of the fit (None for a nameplate).
    source : str
        Where the parameters come from.
    speed_mean : float or None [rad/s]
        Running speed of the fit (the point a re-sloped characteristic keeps).
    """

    name: str
    inertia: float
    slope: float
    no_load_speed: float
    torque_role: str = "load"
    speed_ratio: float = 1.0
    rated_torque: float | None = None
    inertia_se: float | None = None
    slope_se: float | None = None
    source: str = ""
    speed_mean: float | None = None

    def characteristic(self, slope: float | None = None) -> LinearDrive:
        """The drive as :func:`torqlog.sizing.drive.simulate_drive` takes it (optionally re-sloped
        about the same running point)."""
        if slope is None or slope == self.slope:
            return LinearDrive(self.slope, self.no_load_speed, self.speed_ratio,
                               self.rated_torque)
        # keep the drive torque at the running point: k·(ω₀ − ω̄) = k'·(ω₀' − ω̄)
        wbar = self.speed_mean if self.speed_mean is not None else self.no_load_speed
        w0 = wbar + (self.no_load_speed - wbar) * self.slope / slope
        return LinearDrive(slope, w0, self.speed_ratio, self.rated_torque)

    def to_dict(self) -> dict[str, Any]:
        """JSON of the model (unit-suffixed keys)."""
        return {
            "name": self.name,
            "inertia_kgm2": self.inertia,
            "inertia_se_kgm2": self.inertia_se,
            "slope_Nms_per_rad": self.slope,
            "slope_se_Nms_per_rad": self.slope_se,
            "no_load_speed_rpm": self.no_load_speed * _RPM,
            "torque_role": self.torque_role,
            "speed_ratio": self.speed_ratio,
            "rated_torque_motor_Nm": self.rated_torque,
            "source": self.source,
            "speed_mean_rpm": None if self.speed_mean is None else self.speed_mean * _RPM,
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> DriveModel:
        """Rebuild a model from :meth:`to_dict` (e.g. the ``drive_model`` of size JSON)."""
        rpm = 1.0 / _RPM
        wbar = data.get("speed_mean_rpm")
        return cls(name=data["name"], inertia=float(data["inertia_kgm2"]),
                   slope=float(data["slope_Nms_per_rad"]),
                   no_load_speed=float(data["no_load_speed_rpm"]) * rpm,
                   torque_role=data.get("torque_role", "load"),
                   speed_ratio=float(data.get("speed_ratio", 1.0)),
                   rated_torque=data.get("rated_torque_motor_Nm"),
                   inertia_se=data.get("inertia_se_kgm2"),
                   slope_se=data.get("slope_se_Nms_per_rad"), source=data.get("source", ""),
                   speed_mean=None if wbar is None else float(wbar) * rpm)


def model_from_fit(fit: IdentifyResult, speed_mean: float, *,
                   motor: MotorModel | None = None) -> DriveModel:
    """Turn an inertia/slope fit on the mean cycle into a :class:`DriveModel`.

    Load log: the fit says ``T_drive = c − k·(ω − ω̄)``, so ``ω₀ = ω̄ + c/k``. Engine log:
    ``T_load = c + k·(ω − ω̄)``, simulated as a drive ``−T_load = k·(ω₀ − ω)`` with
    ``ω₀ = ω̄ − c/k``.

    Parameters
    ----------
    fit : IdentifyResult
        From :func:`torqlog.sizing.identify.identify_inertia_cycle`.
    speed_mean : float [rad/s]
        The mean of the speed the fit used (its ω̄).
    motor : MotorModel, optional
        The nameplate, for the speed ratio and the rated torque only.

    Returns
    -------
    DriveModel

    Raises
    ------
    DataError
        When the fitted slope is not significantly positive (the log cannot separate a
        speed-dependent drive from a constant one).

    References
    ----------
    .. [1] L. Ljung, *System Identification*, 2nd ed., 1999 (linear regression).
    """
    k, se = float(fit.slope), float(fit.slope_se)
    if not (k > 0 and k > 2.0 * se):
        raise DataError(f"the log shows no significant drive slope (fitted {k:.4g} ± "
                        f"{se:.2g} N m s/rad): it cannot tell a slipping drive from a "
                        f"constant one")
    c = float(fit.drive_torque_mean)
    w0 = speed_mean + c / k if fit.torque_role == "load" else speed_mean - c / k
    return DriveModel(
        name="calibrated drive", inertia=float(fit.inertia), slope=k, no_load_speed=w0,
        torque_role=fit.torque_role,
        speed_ratio=motor.speed_ratio if motor is not None else 1.0,
        rated_torque=motor.rated_torque if motor is not None and fit.torque_role == "load"
        else None,
        inertia_se=float(fit.inertia_se), slope_se=se,
        source=f"inertia and {'drive' if fit.torque_role == 'load' else 'load'} slope fitted "
               f"on the log's mean cycle (least squares, R² {fit.r2:.3f})",
        speed_mean=float(speed_mean))


def model_from_nameplate(motor: MotorModel, inertia: float, source: str) -> DriveModel:
    """The nameplate motor (linear slip) on a stated total inertia.

    Parameters
    ----------
    motor : MotorModel
        Nameplate data.
    inertia : float [kg*m^2]
        Total inertia at the logged shaft, motor rotor included.
    source : str
        Where the inertia comes from.

    References
    ----------
    .. [1] S. J. Chapman, *Electric Machinery Fundamentals*, linear slip region.
    """
    return DriveModel(name="nameplate drive", inertia=float(inertia), slope=motor.slope,
                      no_load_speed=motor.no_load_speed, torque_role="load",
                      speed_ratio=motor.speed_ratio, rated_torque=motor.rated_torque,
                      source=f"nameplate motor (linear slip) on {source}")


# --------------------------------------------------------------------------- simulation
def load_torque(torque: np.ndarray, torque_role: str, swing_scale: float = 1.0) -> np.ndarray:
    """The load the model's drive works against, its fluctuation scaled.

    Parameters
    ----------
    torque : array [N*m]
        Logged mean-cycle torque on a uniform angle grid.
    torque_role : {"load", "drive"}
        Whose torque was logged (an engine torque enters with its sign turned).
    swing_scale : float
        Factor on the fluctuation about the mean (the energy swing scales with it).

    Returns
    -------
    array [N*m]
    """
    t = np.asarray(torque, dtype=float)
    load = t if torque_role == "load" else -t
    mean = float(np.mean(load))
    return mean + float(swing_scale) * (load - mean)


def cycle_energy_swing(angle: np.ndarray, torque: np.ndarray) -> float:
    """Energy swing [J] of a mean cycle on a uniform grid: max − min of ∫(T − T̄)dθ.

    Parameters
    ----------
    angle : array [rad]
        Uniform grid over one cycle (end point excluded).
    torque : array [N*m]

    Examples
    --------
    A single harmonic ``T = T̄ + A·sin θ`` swings by ``2·A`` over a revolution:

    >>> import numpy as np
    >>> theta = np.linspace(0.0, 2 * np.pi, 3600, endpoint=False)
    >>> round(cycle_energy_swing(theta, 100.0 + 50.0 * np.sin(theta)), 1)
    100.0

    References
    ----------
    .. [1] Budynas & Nisbett, *Shigley's*, 10th ed., sec. 16-12 (energy swing).
    """
    t = np.asarray(torque, dtype=float)
    h = float(angle[1] - angle[0])
    # bin values as piecewise constant over their bins: the cumulative sum is exact
    e = np.concatenate([[0.0], np.cumsum((t - t.mean()) * h)])
    return float(e.max() - e.min())


def simulate_after(model: DriveModel, added_inertia: float, angle: np.ndarray,
                   torque: np.ndarray, revs_per_cycle: int = 1, *,
                   swing_scale: float = 1.0, rtol: float = 1e-7) -> DriveCycle:
    """The machine of ``model`` with ``added_inertia`` more, over the logged mean cycle.

    Parameters
    ----------
    model : DriveModel
        Calibrated (or nameplate) model.
    added_inertia : float [kg*m^2]
        Flywheel inertia added at the logged shaft (0 for the machine as it runs now).
    angle : array [rad]
        Uniform grid over one cycle (the mean cycle's ``angle``).
    torque : array [N*m]
        Logged mean-cycle torque (load, or engine torque for ``torque_role="drive"``).
    revs_per_cycle : int
        Shaft revolutions per cycle.
    swing_scale : float
        Factor on the load fluctuation (see :func:`load_torque`).
    rtol : float
        Integration tolerance (1e-7 keeps Cs and torques to about six digits).

    Returns
    -------
    DriveCycle
        Speed, drive torque (``motor_torque``, at the logged shaft; for an engine log the
        load torque with its sign turned) and load torque over the cycle, Cs, peaks, RMS.

    References
    ----------
    .. [1] R. L. Norton, *Design of Machinery*, flywheel section (equation of motion).
    """
    if not (math.isfinite(added_inertia) and added_inertia >= 0):
        raise UsageError(f"added inertia must be zero or positive, got {added_inertia!r}")
    load = load_torque(torque, model.torque_role, swing_scale)
    return simulate_drive(np.asarray(angle, dtype=float), load,
                          model.inertia + float(added_inertia), model.characteristic(),
                          revs_per_cycle, added_inertia=float(added_inertia), rtol=rtol)


def _cs(model: DriveModel, total: float, angle: np.ndarray, load: np.ndarray,
        revs: int, drive: LinearDrive) -> float:
    return simulate_drive(angle, load, total, drive, revs, rtol=_SIZING_RTOL).cs


def inertia_for_cs(model: DriveModel, angle: np.ndarray, torque: np.ndarray,
                   target_cs: float, revs_per_cycle: int = 1, *, swing_scale: float = 1.0,
                   slope: float | None = None, guess: float | None = None,
                   rtol: float = 1e-4) -> float:
    """Total inertia at which the model's Cs equals the target.

    Cs falls monotonically with inertia; the root is found on ``log Cs`` against
    ``log I`` (nearly a straight line of slope −1) with Brent's method.

    Parameters
    ----------
    model : DriveModel
    angle, torque : array [rad], [N*m]
        The mean cycle.
    target_cs : float
        Target coefficient of speed fluctuation.
    revs_per_cycle : int
    swing_scale : float
        Factor on the load fluctuation.
    slope : float, optional [N*m*s/rad]
        Use this slope instead of the model's (same zero-torque speed).
    guess : float, optional [kg*m^2]
        Starting total inertia (default: the model's).
    rtol : float
        Relative tolerance on the inertia.

    Returns
    -------
    float [kg*m^2]
        Total inertia; below the model's own when it already meets the target (the
        model's own if the drive could not carry the load at a lighter inertia).

    References
    ----------
    .. [1] R. P. Brent, *Algorithms for Minimization without Derivatives*, 1973
       (:func:`scipy.optimize.brentq`).
    """
    a = np.asarray(angle, dtype=float)
    load = load_torque(torque, model.torque_role, swing_scale)
    drive = model.characteristic(slope)
    revs = int(revs_per_cycle)

    def f(log_i: float) -> float:
        return math.log(_cs(model, math.exp(log_i), a, load, revs, drive) / target_cs)

    x0 = math.log(model.inertia)
    f0 = f(x0)
    if f0 == 0:
        return model.inertia
    if f0 < 0:  # already meets the target: the inertia it needs lies below its own
        hi, x1 = x0, x0 + min(1.2 * f0, -0.05)
        try:
            f1 = f(x1)
            while f1 < 0:
                hi, x1 = x1, x1 + min(1.2 * f1, -0.05)
                f1 = f(x1)
        except DataError:  # the drive cannot carry the load that light: say "no less"
            return model.inertia
        return float(math.exp(brentq(f, x1, hi, xtol=rtol, rtol=rtol)))
    x1 = max(math.log(guess) if guess else x0 + f0, x0 + 1e-6)
    f1 = f(x1)
    lo = x0
    while f1 > 0:  # Cs ∝ 1/I roughly: step out by the remaining log error
        lo = x1
        x1 = x1 + max(1.2 * f1, 0.05)
        f1 = f(x1)
    return float(math.exp(brentq(f, lo, x1, xtol=rtol, rtol=rtol)))


# --------------------------------------------------------------------------- validation
@dataclass(frozen=True)
class Validation:
    """The model's Cs at the existing inertia against the measured median Cs."""

    cs_measured: float
    cs_model: float
    error_rel: float
    tolerance_rel: float

    @property
    def passed(self) -> bool:
        """Within the tolerance."""
        return abs(self.error_rel) <= self.tolerance_rel

    def to_dict(self) -> dict[str, Any]:
        """JSON of the check."""
        return {"cs_measured": self.cs_measured, "cs_model_existing": self.cs_model,
                "cs_model_error_rel": self.error_rel, "tolerance_rel": self.tolerance_rel,
                "passed": self.passed}


def validate(model: DriveModel, angle: np.ndarray, torque: np.ndarray, cs_measured: float,
             revs_per_cycle: int = 1, *, swing_scale: float = 1.0,
             tolerance: float = TOLERANCE_REL) -> Validation:
    """Run the model at the existing inertia and compare its Cs with the measured Cs.

    Parameters
    ----------
    model : DriveModel
    angle, torque : array [rad], [N*m]
        The mean cycle.
    cs_measured : float
        Median per-cycle Cs of the log (same definition as the cycle table).
    revs_per_cycle : int
    swing_scale : float
        Factor that brings the mean cycle's energy swing to the median per-cycle swing.
    tolerance : float
        Relative tolerance.

    Returns
    -------
    Validation

    References
    ----------
    .. [1] L. Ljung, *System Identification*, 2nd ed., 1999, model validation (simulate
       the model and compare with measured output).
    """
    dc = simulate_after(model, 0.0, angle, torque, revs_per_cycle, swing_scale=swing_scale)
    return Validation(cs_measured=float(cs_measured), cs_model=float(dc.cs),
                      error_rel=float(dc.cs / cs_measured - 1.0), tolerance_rel=tolerance)


def reasons_text(error_rel: float) -> str:
    """One sentence: the model does not explain the log, and the likely reasons."""
    side = "less" if error_rel < 0 else "more"
    return (f"the drive model predicts {side} speed fluctuation than the log measures "
            f"({error_rel:+.0%}), so it does not explain the log; likely reasons: "
            + "; ".join(LIKELY_REASONS))


# --------------------------------------------------------------------------- state blocks
def machine_state(dc: DriveCycle, model: DriveModel, *, target_cs: float) -> dict[str, Any]:
    """Figures of the machine in one simulated state (Cs, speeds, drive torque shares).

    Parameters
    ----------
    dc : DriveCycle
        From :func:`simulate_after`.
    model : DriveModel
    target_cs : float

    Returns
    -------
    dict
        Unit-suffixed keys; torque shares of the rated torque when a nameplate gives it.
    """
    n = model.speed_ratio
    out: dict[str, Any] = {
        "added_inertia_kgm2": dc.added_inertia,
        "inertia_kgm2": dc.inertia,
        "cs": dc.cs,
        "meets_target": bool(dc.cs <= target_cs * (1 + 1e-6)),
        "speed_min_rpm": dc.speed_min * _RPM,
        "speed_max_rpm": dc.speed_max * _RPM,
        "speed_mean_rpm": dc.speed_mean * _RPM,
    }
    if model.torque_role == "load":
        out.update({
            "drive_torque_peak_Nm": dc.motor_torque_peak / n,
            "drive_torque_mean_Nm": dc.motor_torque_mean / n,
            "drive_torque_rms_Nm": dc.motor_torque_rms / n,
            "drive_torque_at": "motor shaft" if n != 1.0 else "logged shaft",
        })
        rated = model.rated_torque
        if rated:
            out.update({
                "drive_torque_rated_Nm": rated,
                "drive_torque_peak_share_of_rated": dc.motor_torque_peak / n / rated,
                "drive_torque_mean_share_of_rated": dc.motor_torque_mean / n / rated,
                "drive_torque_rms_share_of_rated": dc.motor_torque_rms / n / rated,
            })
    else:
        out.update({"load_torque_peak_Nm": float(-dc.motor_torque_min),
                    "load_torque_mean_Nm": float(-dc.motor_torque_mean),
                    "load_torque_rms_Nm": dc.motor_torque_rms})
    out["messages"] = list(dc.messages)
    return out


def copper_loss_change(rms_now: float, rms_after: float, motor: MotorModel, *,
                       hours_per_year: float = HOURS_PER_YEAR) -> dict[str, Any]:
    """Change in motor copper loss from a change in RMS torque.

    Assumes copper loss ∝ current² ∝ torque² (linear slip region, magnetising current
    neglected) and a rated copper loss of twice the rotor copper loss at rated slip,
    ``2·s/(1 − s)·P`` (stator loss taken equal to rotor loss; common practice, stated).

    Parameters
    ----------
    rms_now, rms_after : float [N*m]
        RMS motor torque (motor shaft) before and after.
    motor : MotorModel
        Nameplate (power, synchronous and rated speed).
    hours_per_year : float [h]
        Running hours per year.

    Returns
    -------
    dict
        ``copper_loss_change_rel``, ``copper_loss_change_W``,
        ``copper_loss_change_kWh_per_year``, the assumption and the hours.

    Examples
    --------
    An 11 kW, 1500/1465 rpm motor whose RMS torque drops from rated to 90 % of rated:

    >>> import math
    >>> m = MotorModel(11e3, 1500 * math.pi / 30, 1465 * math.pi / 30, 2.45)
    >>> c = copper_loss_change(m.rated_torque, 0.9 * m.rated_torque, m)
    >>> round(c["copper_loss_change_rel"], 2), round(c["copper_loss_change_kWh_per_year"])
    (-0.19, -399)

    References
    ----------
    .. [1] S. J. Chapman, *Electric Machinery Fundamentals*: rotor copper loss = s·P_ag,
       P_mech = (1 − s)·P_ag; torque ∝ rotor current at small slip.
    """
    if not (math.isfinite(hours_per_year) and hours_per_year >= 0):
        raise UsageError(f"running hours per year must be zero or positive, "
                         f"got {hours_per_year!r}")
    slip = 1.0 - motor.rated_speed / motor.sync_speed
    rated_loss = 2.0 * slip / (1.0 - slip) * motor.power
    t_r = motor.rated_torque
    change_w = rated_loss * (rms_after ** 2 - rms_now ** 2) / t_r ** 2
    return {
        "drive_torque_rms_change_Nm": rms_after - rms_now,
        "copper_loss_change_rel": (rms_after ** 2 / rms_now ** 2 - 1.0) if rms_now else None,
        "copper_loss_change_W": change_w,
        "copper_loss_change_kWh_per_year": change_w * hours_per_year / 1e3,
        "hours_per_year": hours_per_year,
        "copper_loss_assumption": (
            "copper loss ∝ RMS torque² (linear slip region, magnetising current "
            "neglected); rated copper loss taken as 2·s/(1 − s)·P_rated = "
            f"{rated_loss:.4g} W (stator loss equal to rotor loss, common practice)"),
    }
