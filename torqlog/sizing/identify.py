"""Identify the inertia of a shaft (and the slope of its drive) from a log.

A log with both torque and speed holds the shaft's inertia: the speed changes in answer to
the torque, I·dω/dt = T_drive − T_load. Modelling the unlogged torque as linear in speed
turns that into a linear least-squares problem in I, the slope k and a constant.

References
----------
.. [1] R. L. Norton, *Design of Machinery*, flywheel section (equation of motion of a
   flywheel shaft).
.. [2] L. Ljung, *System Identification: Theory for the User*, 2nd ed., Prentice Hall,
   1999 (linear-regression identification of physical parameters).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy import signal

from torqlog.errors import DataError, UsageError
from torqlog.io.notebook import result_html


@dataclass(frozen=True)
class IdentifyResult:
    """Inertia and drive slope identified from a log by least squares.

    Attributes
    ----------
    inertia : float [kg*m^2]
        Total inertia at the logged shaft.
    slope : float [N*m*s/rad]
        Load log: drop of the drive torque per unit speed (motor slope referred to the
        logged shaft). Drive log: rise of the load torque per unit speed.
    drive_torque_mean : float [N*m]
        Fitted mean of the unlogged torque (drive for a load log, load for a drive log).
    r2 : float
        Share of the torque variation explained.
    residual_rms : float [N*m]
    condition_number : float
        Of the column-scaled regression matrix (large = columns nearly collinear).
    inertia_se, slope_se : float
        Standard errors (least-squares formula with an effective sample count; residuals
        of smoothed signals are correlated, so treat them as rough).
    """

    inertia: float
    slope: float
    drive_torque_mean: float
    r2: float
    residual_rms: float
    condition_number: float
    inertia_se: float
    slope_se: float
    n_samples: int
    torque_role: str
    domain: str
    options: dict[str, Any] = field(default_factory=dict)

    _repr_html_ = result_html  # the notebook view

    def to_dict(self) -> dict[str, Any]:
        """JSON contract."""
        return {
            "inertia_kgm2": self.inertia,
            "slope_Nm_s_per_rad": self.slope,
            "r2": self.r2,
            "inertia_se_kgm2": self.inertia_se,
            "slope_se_Nm_s_per_rad": self.slope_se,
            "other_torque_mean_Nm": self.drive_torque_mean,
            "residual_rms_Nm": self.residual_rms,
            "condition_number": self.condition_number,
            "n_samples": self.n_samples,
            "torque_role": self.torque_role,
            "domain": self.domain,
            "options": dict(self.options),
        }


_ROLES = ("load", "drive")
_MIN_R2 = 0.5
_MAX_COND = 1e3
_MAX_REL_SE = 0.2


def check_role(torque_role: str) -> str:
    """Return ``torque_role`` if it is "load" or "drive"; else a UsageError listing both."""
    if torque_role not in _ROLES:
        raise UsageError(f"unknown torque_role {torque_role!r}; valid choices: "
                         f"{', '.join(_ROLES)}")
    return torque_role


def _fit(torque: np.ndarray, accel: np.ndarray, speed: np.ndarray, torque_role: str,
         n_eff: float, domain: str, options: dict[str, Any]) -> IdentifyResult:
    """Least squares of ±T = I·accel + k·(ω − ω̄) + c, refusing fits that cannot be trusted."""
    dev = speed - speed.mean()
    if not np.any(dev != 0) or float(np.std(dev)) <= 1e-12 * abs(float(speed.mean())):
        raise DataError("the speed is constant over the log, so it shows no inertia "
                        "(I·dω/dt is zero); use a log where the load varies and the speed "
                        "visibly fluctuates")
    y = -torque if torque_role == "load" else torque
    x = np.column_stack([accel, dev, np.ones_like(dev)])
    scale = np.sqrt(np.mean(x * x, axis=0))
    xs = x / scale
    cond = float(np.linalg.cond(xs))
    if not math.isfinite(cond) or cond > _MAX_COND:
        raise DataError(f"the speed change rate and the speed deviation move together "
                        f"(condition number {cond:.3g}), so inertia and drive slope cannot be "
                        f"told apart; use a log of steady cyclic running, not a run-up or "
                        f"coast-down")
    coef, *_ = np.linalg.lstsq(xs, y, rcond=None)
    resid = y - xs @ coef
    rss = float(resid @ resid)
    tss = float(((y - y.mean()) ** 2).sum())
    r2 = 1.0 - rss / tss if tss > 0 else 0.0
    n = y.size
    # residuals of filtered signals are correlated: inflate by n / n_eff
    sigma2 = rss / max(n - 3, 1)
    cov = sigma2 * np.linalg.inv(xs.T @ xs) * (n / max(min(n_eff, n), 4.0))
    se = np.sqrt(np.diag(cov)) / scale
    beta = coef / scale
    inertia, slope = float(beta[0]), float(beta[1])
    other = -float(beta[2]) if torque_role == "load" else float(beta[2])
    if r2 < _MIN_R2:
        raise DataError(f"the speed changes explain only R² = {r2:.2f} of the torque "
                        f"variation (need ≥ {_MIN_R2}), so the log cannot show the inertia; "
                        f"the speed barely responds to the load or the signals are too noisy")
    if inertia <= 0:
        raise DataError(f"the fit gives a non-positive inertia ({inertia:.4g} kg m^2); check "
                        f"the torque sign and torque_role ('load' or 'drive')")
    if se[0] > _MAX_REL_SE * inertia:
        raise DataError(f"the identified inertia {inertia:.4g} kg m^2 is uncertain by "
                        f"±{se[0]:.2g} kg m^2 (more than {_MAX_REL_SE:.0%}); use a longer "
                        f"log or one with more speed fluctuation")
    return IdentifyResult(
        inertia=inertia, slope=slope, drive_torque_mean=other, r2=r2,
        residual_rms=math.sqrt(rss / n), condition_number=cond, inertia_se=float(se[0]),
        slope_se=float(se[1]), n_samples=n, torque_role=torque_role, domain=domain,
        options=options)


def identify_inertia(time: np.ndarray, torque: np.ndarray, speed: np.ndarray, *,
                     torque_role: str = "load", smooth: float | None = None) -> IdentifyResult:
    """Identify the inertia (and drive slope) of a shaft from a torque-and-speed log.

    Load log (the logged torque is the driven machine's): the drive is modelled as a
    torque that falls linearly with speed, ``T_drive = c − k·(ω − ω̄)``, so

        ``−T_load = I·dω/dt + k·(ω − ω̄) − c``;

    drive log (an engine): the load rises linearly with speed,
    ``T_drive = I·dω/dt + k·(ω − ω̄) + c``. The unknowns I, k, c come from linear least
    squares. Speed and torque pass through the same zero-phase low-pass filter
    (4th-order Butterworth, :func:`scipy.signal.sosfiltfilt`) before ``dω/dt`` is taken
    with :func:`numpy.gradient`; because the filter is linear and the same on both sides,
    the equation still holds for the filtered signals while the noise is cut. The ends
    (two filter time constants) are dropped.

    Parameters
    ----------
    time : array [s]
        Evenly spaced sample times.
    torque : array [N*m]
        Logged torque.
    speed : array [rad/s]
        Logged shaft speed.
    torque_role : {"load", "drive"}
        Whose torque was logged.
    smooth : float, optional [Hz]
        Cut-off frequency of the low-pass filter. Default: four times the frequency of the
        strongest speed oscillation, at most a quarter of the sample rate.

    Returns
    -------
    IdentifyResult

    Notes
    -----
    Speed noise that survives the filter enters ``dω/dt`` and biases the inertia low by
    about the noise-to-signal variance ratio of ``dω/dt`` (errors in variables); it grows
    with the cube of the cut-off, so keep ``smooth`` low (a few times the cycle frequency).

    Raises
    ------
    DataError
        When the log cannot separate inertia from slope (constant speed, collinear
        columns, R² below 0.5, an uncertain or non-positive inertia), saying why.

    References
    ----------
    .. [1] R. L. Norton, *Design of Machinery*, flywheel section (I·dω/dt = T_drive − T_load).
    .. [2] L. Ljung, *System Identification: Theory for the User*, 2nd ed., Prentice Hall,
       1999 (linear-regression identification of physical parameters).
    """
    check_role(torque_role)
    t = np.asarray(time, dtype=float)
    tq = np.asarray(torque, dtype=float)
    w = np.asarray(speed, dtype=float)
    if not (t.ndim == 1 and t.shape == tq.shape == w.shape):
        raise DataError("time, torque and speed must be 1-D arrays of the same length")
    if t.size < 100:
        raise DataError(f"the log has {t.size} samples; identification needs at least 100")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(tq)) and np.all(np.isfinite(w))):
        raise DataError("time, torque or speed has missing values (NaN); fill or cut the "
                        "gaps before identifying the inertia")
    dt = np.diff(t)
    step = float(np.median(dt))
    if not step > 0 or np.max(np.abs(dt - step)) > 0.01 * step:
        raise DataError("the time stamps are not evenly spaced; resample the log to a "
                        "uniform rate before identifying the inertia")
    fs = 1.0 / step
    dev = w - w.mean()
    if float(np.std(dev)) <= 1e-12 * abs(float(w.mean())):
        raise DataError("the speed is constant over the log, so it shows no inertia "
                        "(I·dω/dt is zero); use a log where the load varies and the speed "
                        "visibly fluctuates")
    if smooth is None:
        spec = np.abs(np.fft.rfft(dev * np.hanning(dev.size)))
        f1 = float(np.fft.rfftfreq(dev.size, step)[1 + int(np.argmax(spec[1:]))])
        cutoff = min(4.0 * f1, 0.25 * fs)
    else:
        cutoff = float(smooth)
        if not (math.isfinite(cutoff) and 0 < cutoff < 0.5 * fs):
            raise UsageError(f"smooth (filter cut-off) must be between 0 and half the sample "
                             f"rate {0.5 * fs:.6g} Hz, got {smooth!r}")
    sos = signal.butter(4, cutoff, fs=fs, output="sos")
    wf = signal.sosfiltfilt(sos, w)
    tf = signal.sosfiltfilt(sos, tq)
    accel = np.gradient(wf, step)
    edge = int(math.ceil(2.0 * fs / cutoff))
    if t.size - 2 * edge < 50:
        raise DataError(f"the log is too short for the filter ({t.size} samples at "
                        f"{fs:.6g} Hz with a {cutoff:.3g} Hz cut-off); log longer")
    keep = slice(edge, t.size - edge)
    n = t.size - 2 * edge
    n_eff = max(n * min(2.0 * cutoff / fs, 1.0), 4.0)
    options = {"filter": "butterworth-4 zero-phase", "cutoff_Hz": cutoff,
               "sample_rate_Hz": fs, "trimmed_samples_each_end": edge}
    return _fit(tf[keep], accel[keep], wf[keep], torque_role, n_eff, "time", options)


def identify_inertia_cycle(angle: np.ndarray, torque: np.ndarray, speed: np.ndarray, *,
                           torque_role: str = "load", revs_per_cycle: int = 1
                           ) -> IdentifyResult:
    """Identify the inertia from a mean cycle on a uniform angle grid.

    As :func:`identify_inertia`, but in the angle domain: ``I·dω/dt = I·d(ω²/2)/dθ``,
    the derivative taken spectrally over the periodic cycle (exact for a band-limited
    cycle). Torque, speed and ω²/2 pass through the same spectral low-pass (the harmonics
    holding 99.9 % of the torque fluctuation, doubled, at least 6, at most N/4), which keeps
    the equation and cuts the noise; the effective sample count for the standard errors is
    the number of real parameters kept, ``2·harmonics + 1``.

    Parameters
    ----------
    angle : array [rad]
        Uniform grid over one cycle, end point excluded.
    torque : array [N*m]
        Mean-cycle torque.
    speed : array [rad/s]
        Mean-cycle speed.
    torque_role : {"load", "drive"}
        Whose torque was logged.
    revs_per_cycle : int
        Shaft revolutions per cycle (the period is 2π·revs_per_cycle).

    Returns
    -------
    IdentifyResult

    References
    ----------
    .. [1] R. L. Norton, *Design of Machinery*, flywheel section (I·ω·dω/dθ = T_drive −
       T_load).
    """
    check_role(torque_role)
    a = np.asarray(angle, dtype=float)
    tq = np.asarray(torque, dtype=float)
    w = np.asarray(speed, dtype=float)
    if not (a.ndim == 1 and a.shape == tq.shape == w.shape and a.size >= 16):
        raise DataError("angle, torque and speed of the mean cycle must be 1-D arrays of the "
                        "same length (at least 16 points)")
    if not (np.all(np.isfinite(tq)) and np.all(np.isfinite(w))):
        raise DataError("the mean cycle has no torque or no speed channel (NaN); both are "
                        "needed to identify the inertia")
    period = 2.0 * math.pi * revs_per_cycle
    u = 0.5 * w * w
    m = np.fft.rfftfreq(a.size, 1.0 / a.size)  # harmonic numbers 0..N/2
    # The same low-pass on torque, ω and ω²/2 keeps the (linear) equation of motion and
    # cuts the speed noise that the derivative would amplify (errors in variables bias the
    # inertia low): keep the harmonics that hold 99.9 % of the torque fluctuation, doubled.
    spec_t = np.fft.rfft(tq)
    power = np.abs(spec_t[1:]) ** 2
    share = np.cumsum(power) / power.sum() if power.sum() > 0 else np.ones_like(power)
    needed = int(np.searchsorted(share, 0.999)) + 1
    keep = min(max(2 * needed + 2, 6), a.size // 4)
    low = m <= keep
    du = 1j * m * (2.0 * math.pi / period) * np.fft.rfft(u) * low
    if a.size % 2 == 0:
        du[-1] = 0.0
    dudtheta = np.fft.irfft(du, n=a.size)
    tq_f = np.fft.irfft(spec_t * low, n=a.size)
    w_f = np.fft.irfft(np.fft.rfft(w) * low, n=a.size)
    options = {"derivative": "spectral, periodic", "revs_per_cycle": revs_per_cycle,
               "harmonics_kept": keep}
    return _fit(tq_f, dudtheta, w_f, torque_role, float(2 * keep + 1), "angle (mean cycle)",
                options)
