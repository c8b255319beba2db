"""Per-cycle work, energy swing and speed fluctuation, vectorised across cycles.

The energy swing of a cycle is ΔE = max − min over the cycle of
E(θ) = ∫ (T(θ) − T̄) dθ, T̄ the cycle's mean torque [1]_ [2]_. The work-energy theorem
ties it to the speed: over the angle where E rises, the load takes more than the drive
gives and the shaft slows, so (for a load torque) the speed is lowest where E peaks and
highest where it dips; for small fluctuations ΔE ≈ I·Cs·ω̄², Cs = (ω_max − ω_min)/ω̄.

References
----------
.. [1] R. G. Budynas and J. K. Nisbett, *Shigley's Mechanical Engineering Design*,
   10th ed., McGraw-Hill, 2015, sec. 16-12 "Flywheels" (eqs. 16-59 to 16-64).
.. [2] R. L. Norton, *Design of Machinery*, 5th ed., McGraw-Hill, 2012, sec. 11.11
   "Flywheels" (the energy method from the accumulated area under T(θ)).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np


def cumulative_trapezoid(y: np.ndarray, x: np.ndarray, initial: float = 0.0) -> np.ndarray:
    """Running trapezoid-rule integral of ``y`` over ``x``, starting at ``initial``.

    The same rule as ``scipy.integrate.cumulative_trapezoid(..., initial=0)``, kept here
    in numpy so the streaming path does not import scipy (it costs ~1 s of start-up).
    The sums are formed in place, and the factor ½ is applied after the running sum
    (scaling by a power of two is exact, so the result is bit-for-bit the same).
    """
    out = np.empty(y.size, dtype=np.float64)
    out[0] = initial
    if y.size > 1:
        run = out[1:]
        np.subtract(x[1:], x[:-1], out=run)  # Δx, then (y[i] + y[i-1])·Δx, in place
        run *= np.add(y[1:], y[:-1])
        np.cumsum(run, out=run)
        run *= 0.5
        if initial:
            run += initial
    return out


def energy_curve(torque: np.ndarray, angle: np.ndarray) -> np.ndarray:
    """E(θ) = ∫ (T − T̄) dθ over one cycle [J], trapezoidal, starting at 0.

    Parameters
    ----------
    torque : ndarray [N*m]
        Torque samples over exactly one cycle (first and last sample on the cycle's ends).
    angle : ndarray [rad]
        Increasing shaft angle at the same samples.

    References
    ----------
    Budynas & Nisbett, *Shigley's*, 10th ed., sec. 16-12.
    """
    w = cumulative_trapezoid(torque, angle, initial=0.0)
    mean = w[-1] / (angle[-1] - angle[0])
    return w - mean * (angle - angle[0])


def energy_swing(torque: np.ndarray, angle: np.ndarray) -> float:
    """Energy swing ΔE [J] of one cycle: max − min of :func:`energy_curve`.

    Examples
    --------
    >>> import numpy as np
    >>> th = np.linspace(0, 2 * np.pi, 20001)
    >>> round(energy_swing(100 + 30 * np.sin(th), th), 3)   # 2A/k with A=30, k=1
    60.0
    """
    e = energy_curve(np.asarray(torque, float), np.asarray(angle, float))
    return float(e.max() - e.min())


@dataclass(frozen=True)
class CycleEnergy:
    """Per-cycle torque figures, each an array with one value per cycle.

    Attributes
    ----------
    work : ndarray [J]
    torque_mean, torque_peak, torque_min : ndarray [N*m]
    energy_swing : ndarray [J]
    angle_e_max, angle_e_min : ndarray [rad]
        Angle from the cycle start where E(θ) peaks and dips.
    """

    work: np.ndarray
    torque_mean: np.ndarray
    torque_peak: np.ndarray
    torque_min: np.ndarray
    energy_swing: np.ndarray
    angle_e_max: np.ndarray
    angle_e_min: np.ndarray


@dataclass(frozen=True)
class Segments:
    """Where each cycle's samples lie, computed once and shared by the reductions.

    Attributes
    ----------
    bounds : ndarray [rad]
        Cycle boundary angles (n + 1).
    lo, stop : int
        First sample of the first cycle; one past the last sample of the last cycle.
    offsets : ndarray of int
        Start of each cycle relative to ``lo`` (for ``ufunc.reduceat``).
    cid : ndarray of int
        Cycle number of each sample in ``lo:stop``.
    frac : ndarray
        Position of each sample in ``lo:stop`` within its cycle, 0 ≤ frac ≤ 1.
    counts : ndarray of int
        Samples in each cycle.
    """

    bounds: np.ndarray
    lo: int
    stop: int
    offsets: np.ndarray
    cid: np.ndarray
    frac: np.ndarray
    counts: np.ndarray
    _bins: dict = field(default_factory=dict, compare=False, repr=False)

    @property
    def n(self) -> int:
        """Number of cycles."""
        return int(self.bounds.size - 1)

    @classmethod
    def build(cls, angle: np.ndarray, bounds: np.ndarray) -> Segments:
        """Locate the cycles given by ``bounds`` in an increasing ``angle`` array."""
        starts, cid, stop = segments(angle, bounds)
        lo = int(starts[0])
        counts = np.diff(np.append(starts, stop))
        # per-cycle values spread by np.repeat: the same numbers as indexing by ``cid``,
        # without a gather
        frac = angle[lo:stop] - np.repeat(bounds[:-1], counts)
        frac /= np.repeat(np.diff(bounds), counts)
        return cls(bounds, lo, stop, starts - lo, cid, frac, counts)

    def head(self, n: int) -> Segments:
        """The first ``n`` cycles (views, no copies)."""
        if n >= self.n:
            return self
        end = int(self.offsets[n])
        return Segments(self.bounds[: n + 1], self.lo, self.lo + end, self.offsets[:n],
                        self.cid[:end], self.frac[:end], self.counts[:n])

    def spread(self, per_cycle: np.ndarray) -> np.ndarray:
        """One value per cycle repeated over that cycle's samples (``per_cycle[cid]``)."""
        return np.repeat(per_cycle, self.counts)

    def bins(self, values: np.ndarray, nbins: int, *, sequential: bool = True
             ) -> np.ndarray:
        """Mean of ``values`` (full-length array) in ``nbins`` equal angle bins per cycle.

        The bin of every sample is worked out once per ``nbins`` and shared by every
        channel. With the angle increasing (the usual case) each bin is a contiguous run
        of samples, so the sample counts come from the run lengths.

        Parameters
        ----------
        values : ndarray
            One value per sample of the angle array the segments were built on.
        nbins : int
            Bins per cycle.
        sequential : bool
            True: each bin's samples are added one by one in sample order
            (``np.bincount``), the order the per-cycle figures are defined with. False:
            contiguous runs are summed with ``np.add.reduceat`` (pairwise, several times
            faster, equal but for the last few bits) — for the mean cycle and plots.

        Returns
        -------
        ndarray, shape (n_cycles, nbins)
            Bin means; an empty bin is NaN.
        """
        n = self.n
        if nbins not in self._bins:
            self._bins[nbins] = self._bin_layout(nbins)
        lay = self._bins[nbins]
        x = values[self.lo:self.stop]
        if lay["runs"] is None:  # angle not increasing: scatter, counting every bin
            g = self._bin_number(nbins)
            with np.errstate(invalid="ignore", divide="ignore"):
                out = np.bincount(g, weights=x, minlength=n * nbins)
                out /= np.bincount(g, minlength=n * nbins)
            return out.reshape(n, nbins)
        start, ids, count = lay["runs"]
        out = np.full(n * nbins, np.nan)
        if sequential:
            g = self._bin_number(nbins)
            out[ids] = np.bincount(g, weights=x, minlength=n * nbins)[ids] / count
        else:
            out[ids] = np.add.reduceat(x, start) / count
        return out.reshape(n, nbins)

    def _bin_layout(self, nbins: int) -> dict[str, Any]:
        """Bin of every sample within its cycle (``j``) and, when the bins never go back
        within a cycle, the runs of samples sharing a bin: (start, global bin, length)."""
        j = (self.frac * nbins).astype(np.int64)
        np.clip(j, 0, nbins - 1, out=j)
        lay: dict[str, Any] = {"j": j, "runs": None}
        if j.size == 0:
            return lay
        new_cycle = self.offsets[1:] - 1  # pair (i, i + 1) that opens the next cycle
        new_cycle = new_cycle[(new_cycle >= 0) & (new_cycle < j.size - 1)]  # empty cycles
        back = j[1:] < j[:-1]
        back[new_cycle] = False
        if back.any():
            return lay
        change = j[1:] != j[:-1]
        change[new_cycle] = True
        start = np.flatnonzero(change)
        start += 1
        start = np.concatenate(([0], start))
        cycle = np.searchsorted(self.offsets, start, side="right") - 1
        lay["runs"] = (start, cycle * nbins + j[start], np.diff(np.append(start, j.size)))
        return lay

    def _bin_number(self, nbins: int) -> np.ndarray:
        """Global bin number (cycle · nbins + bin) of every sample, kept once made."""
        lay = self._bins[nbins]
        if "g" not in lay:
            g = np.repeat(np.arange(0, self.n * nbins, nbins, dtype=np.int64), self.counts)
            g += lay["j"]
            lay["g"] = g
        return lay["g"]


def segments(angle: np.ndarray, bounds: np.ndarray) -> tuple[np.ndarray, np.ndarray, int]:
    """Sample ranges of cycles: samples with bounds[k] < θ ≤ bounds[k+1].

    Returns
    -------
    starts : ndarray of int
        First sample of each cycle.
    cid : ndarray of int
        Cycle number of each sample from ``starts[0]`` to the end of the last cycle.
    stop : int
        One past the last sample of the last cycle.
    """
    idx = np.searchsorted(angle, bounds, side="right")
    starts, stops = idx[:-1], idx[1:]
    cid = np.repeat(np.arange(starts.size), stops - starts)
    return starts, cid, int(idx[-1])


def _first_where(mask: np.ndarray, cid: np.ndarray, n: int) -> np.ndarray:
    pos = np.flatnonzero(mask)
    out = np.full(n, -1)
    if pos.size:
        cyc, first = np.unique(cid[pos], return_index=True)
        out[cyc] = pos[first]
    return out


def cycle_energy(angle: np.ndarray, torque: np.ndarray, bounds: np.ndarray,
                 seg: Segments | None = None) -> CycleEnergy:
    """Work, mean/peak torque and energy swing of consecutive cycles, vectorised.

    Parameters
    ----------
    angle : ndarray [rad]
        Increasing shaft angle of every sample.
    torque : ndarray [N*m]
        Torque at the same samples (NaN-free).
    bounds : ndarray [rad]
        Cycle boundary angles, ``n + 1`` for ``n`` cycles, inside the angle range; every
        cycle must hold at least one sample.

    Returns
    -------
    CycleEnergy

    References
    ----------
    Budynas & Nisbett, *Shigley's*, 10th ed., sec. 16-12; Norton, *Design of
    Machinery*, 5th ed., sec. 11.11.
    """
    n = bounds.size - 1
    seg = seg or Segments.build(angle, bounds)
    w = cumulative_trapezoid(torque, angle, initial=0.0)
    wb = np.interp(bounds, angle, w)
    span = np.diff(bounds)
    work = np.diff(wb)
    tmean = work / span
    lo, stop, cid, off = seg.lo, seg.stop, seg.cid, seg.offsets
    ww, tq = w[lo:stop], torque[lo:stop]
    # E = W(θ) − W(θ_start) − T̄·(θ − θ_start), with T̄·(θ − θ_start) = work·frac
    e = ww - seg.spread(wb[:-1])
    tw = seg.spread(work)
    tw *= seg.frac
    e -= tw
    emax = np.maximum(np.maximum.reduceat(e, off), 0.0)
    emin = np.minimum(np.minimum.reduceat(e, off), 0.0)
    tb = np.interp(bounds, angle, torque)
    tpeak = np.maximum(np.maximum.reduceat(tq, off), np.maximum(tb[:-1], tb[1:]))
    tmin = np.minimum(np.minimum.reduceat(tq, off), np.minimum(tb[:-1], tb[1:]))
    imax = _first_where(e == seg.spread(emax), cid, n)
    imin = _first_where(e == seg.spread(emin), cid, n)

    def rel(i: np.ndarray) -> np.ndarray:  # angle from the cycle start at sample i
        k = np.maximum(i, 0)
        return seg.frac[k] * span[cid[k]]

    amax = np.where(imax >= 0, rel(imax), 0.0)
    amin = np.where(imin >= 0, rel(imin), 0.0)
    return CycleEnergy(work, tmean, tpeak, tmin, emax - emin, amax, amin)


def angle_bins(angle: np.ndarray, values: np.ndarray, bounds: np.ndarray, nbins: int
               ) -> np.ndarray:
    """Mean of ``values`` in ``nbins`` equal angle bins of each cycle.

    Returns an array of shape (n_cycles, nbins); a bin with no sample is NaN.
    """
    return Segments.build(angle, bounds).bins(values, nbins)


def speed_bins_from_angle(time: np.ndarray, angle: np.ndarray, bounds: np.ndarray,
                          nbins: int) -> np.ndarray:
    """Mean speed [rad/s] in equal angle bins: bin width over the time spent in it.

    Exact for a measured angle (encoder or angle channel): the time at each bin edge is
    interpolated from θ(t), and ω̄_bin = Δθ_bin / Δt_bin.
    """
    n = bounds.size - 1
    frac = np.arange(nbins) / nbins
    edges = (bounds[:-1, None] + np.diff(bounds)[:, None] * frac[None, :]).ravel()
    edges = np.concatenate((edges, bounds[-1:]))
    te = np.interp(edges, angle, time)
    dt = np.diff(te)
    with np.errstate(divide="ignore"):
        w = np.diff(edges) / dt
    return w.reshape(n, nbins)


def fill_rows(a: np.ndarray) -> np.ndarray:
    """Fill NaN bins by linear interpolation along the flattened series."""
    flat = a.ravel()
    bad = ~np.isfinite(flat)
    if bad.any() and (~bad).any():
        x = np.arange(flat.size)
        flat = flat.copy()
        flat[bad] = np.interp(x[bad], x[~bad], flat[~bad])
    return flat.reshape(a.shape)


def coefficient_of_fluctuation(speed_max: np.ndarray, speed_min: np.ndarray,
                               speed_mean: np.ndarray, *, mean: str = "cycle"
                               ) -> np.ndarray:
    """Coefficient of speed fluctuation Cs.

    Parameters
    ----------
    speed_max, speed_min, speed_mean : ndarray [rad/s]
    mean : {"cycle", "midrange"}
        ``"cycle"``: Cs = (ω_max − ω_min)/ω̄ with ω̄ the cycle's mean speed;
        ``"midrange"``: ω̄ = (ω_max + ω_min)/2 (the form in [1]_ eq. 16-59).

    Examples
    --------
    >>> import numpy as np
    >>> coefficient_of_fluctuation(np.array([52.0]), np.array([48.0]), np.array([50.0]))
    array([0.08])

    References
    ----------
    .. [1] Budynas & Nisbett, *Shigley's*, 10th ed., eq. 16-59.
    """
    if mean not in ("cycle", "midrange"):
        raise ValueError(f"unknown mean {mean!r}; valid: cycle, midrange")
    ref = speed_mean if mean == "cycle" else 0.5 * (speed_max + speed_min)
    return (speed_max - speed_min) / ref
