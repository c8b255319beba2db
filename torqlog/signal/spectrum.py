"""Order spectrum of the torque: which multiples of the shaft speed drive the machine.

The torque is sampled on a uniform shaft-angle grid over whole machine cycles, so the
discrete Fourier transform bins fall on the orders of the cycle; a cycle of
``revs_per_cycle`` shaft revolutions puts bin k at order k / revs_per_cycle of the SHAFT
speed (a four-stroke engine, 2 revs per cycle, has half orders 0.5, 1, 1.5, ...).

References
----------
.. [1] E. O. Brigham, *The Fast Fourier Transform and its Applications*, 1988
   (single-sided amplitude of a real sequence, 2 |X_k| / N).
.. [2] W. Ker Wilson, *Practical Solution of Torsional Vibration Problems*, vol. 2
   (harmonic analysis of engine torque by orders).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from torqlog.errors import DataError, UsageError
from torqlog.io.notebook import result_html

if TYPE_CHECKING:
    from torqlog.signal.cycles import CycleResult


@dataclass(frozen=True, eq=False)
class OrderSpectrum:
    """Single-sided amplitude spectrum of the dynamic torque by shaft order.

    Attributes
    ----------
    order : array
        Orders of the shaft speed, ascending (the mean, order 0, is not included).
    amplitude : array [N*m]
        Peak amplitude of each order's sinusoid.
    share : array
        amplitude / sqrt(sum of squares of ALL dynamic amplitudes of the cycle), i.e. the
        order's fraction of the root-sum-square dynamic torque (1 for a pure sinusoid).
        This root-sum-square share is used because it does not shrink when many tiny
        noise orders are present, unlike a share of the plain sum.
    mean : float [N*m]
        Mean torque (order 0).
    revs_per_cycle : int
    n_cycles : int
        Number of cycles whose complex spectra were averaged.
    """

    order: np.ndarray
    amplitude: np.ndarray
    share: np.ndarray
    mean: float
    revs_per_cycle: int
    n_cycles: int

    def frequencies(self, speed: float) -> np.ndarray:
        """Frequency of each order at the shaft speed ``speed`` [rad/s], in [Hz]."""
        return self.order * speed / (2 * math.pi)

    def significant(self, min_share: float = 0.05) -> OrderSpectrum:
        """The orders whose share is at least ``min_share`` (shares unchanged)."""
        keep = self.share >= min_share
        return replace(self, order=self.order[keep], amplitude=self.amplitude[keep],
                       share=self.share[keep])

    def to_pandas(self) -> pd.DataFrame:
        """Columns ``order``, ``amplitude_Nm``, ``share``."""
        return pd.DataFrame({"order": self.order, "amplitude_Nm": self.amplitude,
                             "share": self.share})

    _repr_html_ = result_html  # the notebook view

    def to_dict(self) -> dict[str, Any]:
        """The JSON contract."""
        return {"order": self.order.tolist(), "amplitude_Nm": self.amplitude.tolist(),
                "share": self.share.tolist(), "mean_Nm": self.mean,
                "revs_per_cycle": self.revs_per_cycle, "n_cycles": self.n_cycles,
                "share_definition": "amplitude / root-sum-square of all dynamic amplitudes"}


def order_spectrum(torque: np.ndarray, revs_per_cycle: int = 1,
                   max_order: float | None = None, *, n_cycles: int = 1) -> OrderSpectrum:
    """Order spectrum of a torque sampled on a uniform shaft-angle grid.

    Parameters
    ----------
    torque : array [N*m], shape (n,) or (n_cycles, n)
        Torque at angles j * (2 pi revs_per_cycle / n), j = 0 .. n-1, of each cycle (the
        first sample of the next cycle is not repeated). A 1-D array may hold
        ``n_cycles`` whole cycles end to end; a 2-D array holds one cycle per row. Cycles
        are averaged as complex spectra (phase kept), so order content that is not
        locked to the cycle averages out.
    revs_per_cycle : int
        Shaft revolutions per cycle (1 press or compressor, 2 four-stroke engine).
    max_order : float, optional
        Highest order reported (default: up to the Nyquist order).
    n_cycles : int
        Number of whole cycles in a 1-D ``torque`` (default 1).

    Returns
    -------
    OrderSpectrum
        Amplitudes are single-sided peak values 2 |X_k| / n (|X_k| / n at the Nyquist
        bin of an even n).

    Examples
    --------
    A mean of 500 N*m with an 80 N*m second order:

    >>> import numpy as np
    >>> th = np.linspace(0, 2 * np.pi, 360, endpoint=False)
    >>> s = order_spectrum(500 + 80 * np.sin(2 * th))
    >>> float(s.mean), float(s.order[s.amplitude.argmax()]), round(float(s.amplitude.max()), 6)
    (500.0, 2.0, 80.0)

    References
    ----------
    Brigham, *The Fast Fourier Transform and its Applications* (1988).
    """
    t = np.asarray(torque, dtype=float)
    if revs_per_cycle < 1 or int(revs_per_cycle) != revs_per_cycle:
        raise UsageError(f"revs_per_cycle must be a whole number of 1 or more, "
                         f"got {revs_per_cycle}")
    if t.ndim == 1:
        if n_cycles < 1 or t.size % n_cycles:
            raise DataError(f"torque of {t.size} samples does not split into {n_cycles} "
                            f"whole cycles of equal length")
        t = t.reshape(n_cycles, -1)
    elif t.ndim == 2:
        if n_cycles not in (1, t.shape[0]):
            raise UsageError(f"n_cycles={n_cycles} does not match the {t.shape[0]} rows "
                             f"of a 2-D torque array (one cycle per row)")
    else:
        raise DataError(f"torque must be 1-D or 2-D (cycles x samples), got {t.ndim}-D")
    n = t.shape[1]
    if n < 4:
        raise DataError(f"a cycle needs at least 4 angle samples for a spectrum, got {n}")
    if not np.all(np.isfinite(t)):
        raise DataError("torque contains NaN or infinite values; fill or drop the gaps "
                        "before taking the order spectrum")
    X = np.fft.rfft(t, axis=1).mean(axis=0)
    amp = 2.0 * np.abs(X) / n
    if n % 2 == 0:
        amp[-1] /= 2.0
    dyn = amp[1:]
    total = float(np.sqrt(np.sum(dyn**2)))
    share = dyn / total if total > 0 else np.zeros_like(dyn)
    order = np.arange(1, len(X)) / revs_per_cycle
    if max_order is not None:
        keep = order <= max_order * (1 + 1e-12)
        order, dyn, share = order[keep], dyn[keep], share[keep]
    return OrderSpectrum(order, dyn, share, float(X[0].real / n), int(revs_per_cycle),
                         int(t.shape[0]))


def mean_cycle_spectrum(cycles: CycleResult, max_order: float | None = None) -> OrderSpectrum:
    """Order spectrum of the mean cycle torque of a log.

    Parameters
    ----------
    cycles : CycleResult
        From :func:`torqlog.signal.cycles.analyse_cycles`; its ``mean_cycle`` holds
        ``torque_mean`` [N*m] on a uniform angle grid over one cycle of
        ``options["revs_per_cycle"]`` shaft revolutions.
    max_order : float, optional
        Highest order reported (default: up to the Nyquist order of the grid).

    Returns
    -------
    OrderSpectrum
        Orders of the shaft speed, from :func:`order_spectrum`.

    Notes
    -----
    The mean cycle is an average over clean cycles in the angle domain, so torque content
    not locked to the cycle (a resonance ringing at its own frequency, noise) is reduced
    or averaged out; only the cycle's orders remain.

    Raises
    ------
    DataError
        When the log has no torque channel (or its mean cycle has no torque).

    References
    ----------
    Brigham, *The Fast Fourier Transform and its Applications* (1988).
    """
    torque = cycles.mean_cycle["torque_mean"].to_numpy(dtype=float)
    if "torque" not in cycles.layout.roles or np.isnan(torque).all():
        raise DataError(f"{cycles.source}: no torque channel, so no order spectrum of the "
                        f"torque; name the torque column with --torque COL, or leave out "
                        f"--log to assume every order significant")
    return order_spectrum(torque, int(cycles.options["revs_per_cycle"]), max_order)
