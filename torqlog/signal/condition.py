"""Signal conditioning: gaps, spikes, flat (clipped) stretches, NaN filling, low-pass.

All functions are vectorised over whole arrays (no per-sample Python loops) and pure.

References
----------
.. [1] R. K. Pearson, "Outliers in process modeling and identification", *IEEE Trans.
   Control Systems Technology* 10(1), 2002 (robust MAD scale, Hampel-type identifiers).
.. [2] A. V. Oppenheim and R. W. Schafer, *Discrete-Time Signal Processing*, 3rd ed.,
   Pearson, 2010, sec. 5.7 (zero-phase systems: a real, even frequency response).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: A time step longer than this many median steps counts as a gap (common practice).
GAP_FACTOR = 1.5
#: This many equal consecutive samples at a cycle's extreme count as clipped.
CLIP_RUN = 5
#: Missing samples in runs up to this long are filled and the cycle kept; a longer run of
#: NaNs flags its cycle (common practice: one or two dropped samples are logger hiccups).
NAN_REPAIR_RUN = 2
#: A one-sample jump larger than this many robust SDs of the second difference is a spike.
SPIKE_K = 10.0


@dataclass(frozen=True)
class Gaps:
    """Gaps in a time base.

    Attributes
    ----------
    index : ndarray of int
        Index of the first sample after each gap.
    duration : ndarray [s]
        Length of each missing stretch (step minus the median step).
    """

    index: np.ndarray
    duration: np.ndarray

    @property
    def count(self) -> int:
        """Number of gaps."""
        return int(self.index.size)

    @property
    def longest(self) -> float:
        """Longest gap [s] (0 when none)."""
        return float(self.duration.max()) if self.duration.size else 0.0


def find_gaps(time: np.ndarray, step: float | None = None, factor: float = GAP_FACTOR
              ) -> Gaps:
    """Find gaps in a time base [s]: steps longer than ``factor`` × the median step."""
    d = np.diff(np.asarray(time, dtype=np.float64))
    if d.size == 0:
        return Gaps(np.empty(0, dtype=int), np.empty(0))
    step = float(np.median(d)) if step is None else step
    big = np.flatnonzero(d > factor * step)
    return Gaps(big + 1, d[big] - step)


def fill_nan(time: np.ndarray, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Replace NaN by linear interpolation in time; returns (filled, nan_mask)."""
    x = np.asarray(x, dtype=np.float64)
    bad = np.isnan(x)
    if not bad.any():
        return x, bad
    ok = ~bad
    if not ok.any():
        return np.zeros_like(x), bad
    return np.interp(time, time[ok], x[ok]), bad


def spike_scale(x: np.ndarray) -> float:
    """Robust SD (1.4826 × MAD, [1]_) of the second difference x[i] − (x[i−1]+x[i+1])/2.

    Estimated on at most ~20 000 evenly spread samples, so it is cheap on long logs.
    """
    x = np.asarray(x, dtype=np.float64)
    if x.size < 5:
        return 1.0
    d = x[1:-1] - 0.5 * (x[:-2] + x[2:])
    sub = d[:: max(1, d.size // 20_000)]
    scale = 1.4826 * float(np.median(np.abs(sub - np.median(sub))))
    return scale if scale > 0 else (float(np.std(sub)) or 1.0)


def long_runs(mask: np.ndarray, longer_than: int) -> np.ndarray:
    """Mask of the True samples of ``mask`` that sit in runs longer than ``longer_than``."""
    m = np.asarray(mask, dtype=bool)
    if not m.any():
        return m
    edges = np.diff(np.concatenate(([0], m.view(np.int8), [0])))
    starts, ends = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)
    keep = ends - starts > longer_than
    delta = np.zeros(m.size + 1, dtype=np.int64)
    np.add.at(delta, starts[keep], 1)
    np.add.at(delta, ends[keep], -1)
    return np.cumsum(delta[:-1]) > 0


def despike(x: np.ndarray, k: float = SPIKE_K, scale: float | None = None
            ) -> tuple[np.ndarray, np.ndarray]:
    """Replace one-sample spikes by the mean of their neighbours.

    A sample is a spike when it departs from the mean of its two neighbours by more than
    ``k`` robust standard deviations (1.4826 × MAD, [1]_) of that same second
    difference, and stands out on both sides in the same direction.

    Parameters
    ----------
    x : ndarray
        Signal (any unit); NaN-free.
    k : float
        Threshold in robust SDs.
    scale : float, optional
        The robust SD from :func:`spike_scale` (computed here when not given; pass it to
        use one threshold over a whole streamed log).

    Returns
    -------
    cleaned : ndarray
    spikes : ndarray of bool
        Where spikes were replaced.
    """
    x = np.asarray(x, dtype=np.float64)
    mask = np.zeros(x.shape, dtype=bool)
    if x.size < 5:
        return x, mask
    if scale is None:
        scale = spike_scale(x)
    d = x[:-2] + x[2:]  # one temporary: d = |x[i] − (x[i−1] + x[i+1])/2|, in place
    d *= -0.5
    d += x[1:-1]
    np.abs(d, out=d)
    cand = np.flatnonzero(d > k * scale)  # few: the rest of the test runs on these only
    if cand.size:
        i = cand + 1
        left, right = x[i] - x[i - 1], x[i] - x[i + 1]
        ok = (np.sign(left) == np.sign(right)) & \
            (np.minimum(np.abs(left), np.abs(right)) > 0.5 * k * scale)
        hit = i[ok]
        if hit.size:
            x = x.copy()
            x[hit] = 0.5 * (x[hit - 1] + x[hit + 1])
            mask[hit] = True
    return x, mask


def flat_run_index(x: np.ndarray, min_run: int = CLIP_RUN) -> np.ndarray:
    """Indices of the samples inside runs of at least ``min_run`` equal consecutive values.

    One comparison pass over ``x``; the rest works on the (usually few) samples equal to
    their predecessor, so it is cheap on noisy signals. NaN equals nothing.
    """
    x = np.asarray(x)
    n = x.size
    if n < min_run:
        return np.empty(0, dtype=np.int64)
    if min_run <= 1:
        return np.arange(n)
    pos = np.flatnonzero(x[1:] == x[:-1])  # x[p + 1] == x[p]
    if pos.size < min_run - 1:
        return np.empty(0, dtype=np.int64)
    brk = np.flatnonzero(np.diff(pos) != 1) + 1  # where consecutive equal pairs break
    first = pos[np.concatenate(([0], brk))]
    length = pos[np.concatenate((brk, [pos.size])) - 1] - first + 2  # samples in the run
    keep = length >= min_run
    first, length = first[keep], length[keep]
    if not first.size:
        return np.empty(0, dtype=np.int64)
    within = np.arange(int(length.sum())) - np.repeat(np.cumsum(length) - length, length)
    return np.repeat(first, length) + within


def flat_runs(x: np.ndarray, min_run: int = CLIP_RUN) -> np.ndarray:
    """Mask of samples inside runs of at least ``min_run`` equal consecutive values."""
    mask = np.zeros(np.asarray(x).size, dtype=bool)
    mask[flat_run_index(x, min_run)] = True
    return mask


#: Half-length of :func:`lowpass_taps` in units of 1/(taper·cutoff) samples: where the
#: raised-cosine pulse is cut off (chosen so the gain stays within 5·10⁻⁴ of the raised
#: cosine at every frequency; measured with scipy.signal.freqz, see tests/test_condition.py).
LOWPASS_SPAN = 6.0


def lowpass_taps(cutoff: float, taper: float = 0.25) -> np.ndarray:
    """Taps of a linear-phase FIR low-pass whose gain is the raised cosine.

    The filter's gain is 1 below ``cutoff·(1 − taper)``, 0 above ``cutoff·(1 + taper)``
    and a half cosine between (the raised-cosine spectrum, [5]_). Its impulse response
    is a windowed sinc: the ideal low-pass ``c·sinc(c·n)`` times the raised-cosine factor
    ``cos(π·r·c·n) / (1 − (2·r·c·n)²)`` (c the cut-off as a fraction of Nyquist, r the
    taper), which falls off as 1/n³; it is cut at ``|n| ≤ LOWPASS_SPAN / (r·c)`` — far
    enough that the gain stays within 5·10⁻⁴ of the raised cosine (pass band within
    5·10⁻⁴ of 1, stop band below −65 dB) — and scaled to a gain of exactly 1 at zero
    frequency. Truncating a known impulse response and checking the response is FIR
    design by windowing ([3]_ sec. 7.5).

    Parameters
    ----------
    cutoff : float
        Cut-off (gain ½) as a fraction of the Nyquist frequency, 0 < cutoff < 1.
    taper : float
        Half-width of the roll-off as a fraction of the cut-off, 0 < taper ≤ 1.

    Returns
    -------
    ndarray
        An odd number of taps, symmetric about the middle one (zero phase once centred).

    References
    ----------
    .. [3] A. V. Oppenheim and R. W. Schafer, *Discrete-Time Signal Processing*, 3rd ed.,
       Pearson, 2010, sec. 7.5 (design of FIR filters by windowing).
    .. [5] J. G. Proakis and M. Salehi, *Digital Communications*, 5th ed., McGraw-Hill,
       2008, sec. 9.2 (the raised-cosine spectrum and its pulse; section from memory).

    Examples
    --------
    >>> h = lowpass_taps(0.25)           # the cycle engine's default: 20 orders of 80
    >>> h.size, round(float(h.sum()), 12)
    (193, 1.0)
    """
    half = int(np.ceil(LOWPASS_SPAN / (taper * cutoff)))
    n = np.arange(-half, half + 1, dtype=np.float64)
    x = 2.0 * taper * cutoff * n
    shape = np.empty_like(n)
    ends = np.isclose(np.abs(x), 1.0)  # 0/0 in the factor: its limit π/4
    shape[ends] = np.pi / 4.0
    shape[~ends] = np.cos(0.5 * np.pi * x[~ends]) / (1.0 - x[~ends] ** 2)
    h = cutoff * np.sinc(cutoff * n) * shape
    return h / h.sum()


def lowpass(x: np.ndarray, cutoff: float, taper: float = 0.25,
            taps: np.ndarray | None = None) -> np.ndarray:
    """Zero-phase low-pass by a linear-phase FIR filter centred on each sample.

    Each output sample is the weighted sum of the input within ``M`` samples either side
    of it, with the taps of :func:`lowpass_taps` (``2M + 1``, symmetric: the response is
    real and shifts no phase, so peaks stay where they are, [2]_). Its gain is the raised
    cosine: 1 below ``cutoff·(1 − taper)``, 0 above ``cutoff·(1 + taper)``, a half cosine
    between (within 5·10⁻⁴). Being local, the result at a sample does not depend on the
    signal further than ``M`` samples away: a stream filtered in pieces, each with ``M``
    samples of context on both sides, gives the same numbers as the whole signal. At both
    ends the signal is extended by odd reflection (so its ends do not ring). The
    convolution is computed with the FFT.

    Parameters
    ----------
    x : ndarray
        Evenly sampled signal (in torqlog: speed on an angle grid, so frequencies are
        cycle orders).
    cutoff : float
        Cut-off as a fraction of the Nyquist frequency (0 < cutoff); ≥ 1 returns ``x``.
    taper : float
        Half-width of the roll-off as a fraction of the cut-off.
    taps : ndarray, optional
        Taps from :func:`lowpass_taps` for this cut-off and taper (designed here when not
        given; pass them to design once for a stream).

    Returns
    -------
    ndarray
        The filtered signal, same length.
    """
    x = np.asarray(x, dtype=np.float64)
    n = x.size
    if cutoff >= 1.0 or n < 2:
        return x
    h = lowpass_taps(cutoff, taper) if taps is None else taps
    half = h.size // 2
    pad = min(n - 1, half)
    head = 2.0 * x[0] - x[pad:0:-1]
    tail = 2.0 * x[-1] - x[-2:-pad - 2:-1]
    if pad < half:  # shorter than the filter: hold the reflected ends
        head = np.concatenate((np.full(half - pad, head[0]), head))
        tail = np.concatenate((tail, np.full(half - pad, tail[-1])))
    y = np.concatenate((head, x, tail))
    size = 1 << (y.size + h.size - 2).bit_length()  # linear, not circular, convolution
    full = np.fft.irfft(np.fft.rfft(y, size) * np.fft.rfft(h, size), size)
    return full[h.size - 1: h.size - 1 + n]
