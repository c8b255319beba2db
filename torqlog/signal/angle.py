"""Shaft angle θ(t) from whichever source a log has.

Sources, best first: an angle channel (unwrapped), a once-per-rev index pulse, encoder
counts, integration of a speed channel, a nominal speed, or — with torque alone — the
cycle period estimated from the signal itself. The whole-array functions here are pure;
:class:`AngleTracker` applies them chunk by chunk for streaming, carrying what it needs
(the last angle, the index edges found so far) from one chunk to the next.

References
----------
.. [1] J. S. Bendat and A. G. Piersol, *Random Data: Analysis and Measurement
   Procedures*, 4th ed., Wiley, 2010, ch. 8 (autocorrelation estimates via the FFT).
.. [2] J. O. Smith, *Spectral Audio Signal Processing*, W3K, 2011, "Quadratic
   Interpolation of Spectral Peaks" (sub-sample peak location by a parabola).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from torqlog.errors import DataError, UsageError
from torqlog.signal.condition import fill_nan
from torqlog.signal.energy import cumulative_trapezoid

TWO_PI = 2.0 * math.pi

#: Cycle sources, best first.
CYCLE_SOURCES: tuple[str, ...] = ("angle", "index", "counts", "speed", "nominal", "period")

#: Smallest autocorrelation peak accepted as periodic (common practice; a pure tone
#: with noise at SNR 1 gives about 0.5).
MIN_PERIOD_CONFIDENCE = 0.5


def pick_cycle_source(roles: tuple[str, ...] | list[str] | set[str], *,
                      nominal_speed: float | None = None, forced: str | None = None,
                      path: str = "log") -> str:
    """Choose the cycle source from the channels present.

    Parameters
    ----------
    roles : collection of str
        Channel roles present in the log (``"torque"``, ``"speed"``, ...).
    nominal_speed : float, optional
        A nominal shaft speed [rad/s] given by the user.
    forced : str, optional
        A source the user insists on; it must be available.
    path : str
        Name of the log, for messages.

    Returns
    -------
    str
        One of :data:`CYCLE_SOURCES`.
    """
    roles = set(roles)
    have = {
        "angle": "angle" in roles,
        "index": "index" in roles,
        "counts": "counts" in roles,
        "speed": "speed" in roles,
        "nominal": nominal_speed is not None,
        "period": "torque" in roles or "speed" in roles,
    }
    if forced:
        if forced not in CYCLE_SOURCES:
            raise UsageError(f"unknown cycle source {forced!r}; valid: "
                             f"{', '.join(CYCLE_SOURCES)}")
        if not have[forced]:
            need = {"nominal": "--speed-rpm", "period": "a torque or speed channel"}
            raise DataError(f"{path}: cycle source {forced!r} needs "
                            f"{need.get(forced, f'a {forced} channel')}, which the log lacks; "
                            f"available: {', '.join(s for s in CYCLE_SOURCES if have[s])}")
        return forced
    for s in CYCLE_SOURCES:
        if have[s]:
            return s
    raise DataError(f"{path}: no way to find cycles: the log has no angle, index, counts, "
                    "speed or torque channel")




def wrap_period(angle: np.ndarray) -> float:
    """Guess the wrap period of an angle channel [rad]: 2π, or 4π for 0–720° logs."""
    finite = angle[np.isfinite(angle)]
    if finite.size == 0:
        return TWO_PI
    span = float(np.max(finite) - np.min(finite))
    return 2.0 * TWO_PI if TWO_PI * 1.05 < span <= 2.0 * TWO_PI * 1.01 else TWO_PI


def index_threshold(pulse: np.ndarray) -> tuple[float, float]:
    """Hysteresis thresholds (low, high) [signal units] for an index pulse channel.

    Chosen from the signal: 40 % and 60 % of the way from the 1st to the 99.9th
    percentile, so a pulse a few samples wide in every revolution is found whatever its
    voltage levels.
    """
    x = pulse[np.isfinite(pulse)]
    if x.size == 0:
        raise DataError("the index channel holds no numbers")
    lo, hi = np.percentile(x, [1.0, 99.9])
    if hi - lo <= 0:
        raise DataError("the index channel is flat: no pulses found; check the channel or "
                        "choose another --cycle-source")
    return float(lo + 0.4 * (hi - lo)), float(lo + 0.6 * (hi - lo))


def rising_edges(time: np.ndarray, pulse: np.ndarray, low: float, high: float,
                 state0: bool = False) -> tuple[np.ndarray, bool]:
    """Times [s] of rising edges of a pulse train, with hysteresis (debounced).

    Parameters
    ----------
    time : ndarray [s]
    pulse : ndarray
        The pulse signal (any unit).
    low, high : float
        Hysteresis thresholds: the state goes high above ``high``, low below ``low``.
    state0 : bool
        State before the first sample (for streaming).

    Returns
    -------
    edges : ndarray [s]
        Edge times, linearly interpolated at the mid threshold.
    state : bool
        State after the last sample.
    """
    x = np.asarray(pulse, dtype=np.float64)
    n = x.size
    if n == 0:
        return np.empty(0), state0
    setp = np.where(x > high, 1, np.where(x < low, 0, -1))
    idx = np.where(setp >= 0, np.arange(n), -1)
    last = np.maximum.accumulate(idx)
    state = np.where(last >= 0, setp[np.maximum(last, 0)], int(state0)).astype(bool)
    prev = np.concatenate(([state0], state[:-1]))
    rise = np.flatnonzero(state & ~prev)
    mid = 0.5 * (low + high)
    edges = np.empty(rise.size)
    for_interp = rise[rise > 0]
    # sub-sample time of the mid-threshold crossing just before the state change
    k = for_interp
    x0, x1 = x[k - 1], x[k]
    frac = np.clip((mid - x0) / np.where(x1 != x0, x1 - x0, 1.0), 0.0, 1.0)
    edges[rise > 0] = time[k - 1] + frac * (time[k] - time[k - 1])
    edges[rise == 0] = time[0]
    return edges, bool(state[-1])


def debounce_edges(edges: np.ndarray, min_fraction: float = 0.3) -> np.ndarray:
    """Drop edges closer than ``min_fraction`` of the median spacing to the previous one."""
    if edges.size < 3:
        return edges
    spacing = np.median(np.diff(edges))
    keep = np.concatenate(([True], np.diff(edges) > min_fraction * spacing))
    return edges[keep]


def angle_from_edges(time: np.ndarray, edges: np.ndarray, first_rev: int = 0) -> np.ndarray:
    """Angle [rad] from once-per-rev edge times, linear in time between edges.

    Samples before the first edge or after the last edge get NaN (their revolution is
    not complete). The speed within a revolution is taken as constant, which is what one
    pulse per rev can tell.
    """
    revs = first_rev + np.arange(edges.size, dtype=np.float64)
    theta = np.interp(time, edges, revs * TWO_PI) if edges.size >= 2 else \
        np.full(time.shape, np.nan)
    if edges.size >= 2:
        theta[(time < edges[0]) | (time > edges[-1])] = np.nan
    return theta








@dataclass(frozen=True)
class PeriodEstimate:
    """The cycle period found in a signal.

    Attributes
    ----------
    period : float [s]
    confidence : float
        Normalised autocorrelation at the period (1 = perfectly periodic).
    cycles_seen : int
        Whole periods inside the window used.
    """

    period: float
    confidence: float
    cycles_seen: int


def estimate_period(time: np.ndarray, signal: np.ndarray, *, min_period: float | None = None,
                    max_period: float | None = None, path: str = "log") -> PeriodEstimate:
    """Estimate the cycle period of a signal by autocorrelation, to sub-sample accuracy.

    The autocorrelation is computed with the FFT ([1]_); its highest peak after the
    first zero crossing gives the period; the peak at the largest multiple of it inside
    the window is then located by parabolic interpolation ([2]_) and divided by that
    multiple, so the error shrinks with the number of cycles seen.

    Parameters
    ----------
    time : ndarray [s]
        Evenly sampled times.
    signal : ndarray
        Torque [N*m] or speed [rad/s].
    min_period, max_period : float, optional [s]
        Search range (default: 4 samples to a third of the window).

    Returns
    -------
    PeriodEstimate

    Raises
    ------
    DataError
        When fewer than three periods fit, or the best peak is below
        :data:`MIN_PERIOD_CONFIDENCE` (the signal is not periodic).

    References
    ----------
    .. [1] Bendat & Piersol, *Random Data*, 4th ed., 2010, sec. 11.4.2.
    .. [2] J. O. Smith, *Spectral Audio Signal Processing*, 2011.
    """
    x = np.asarray(signal, dtype=np.float64)
    if np.isnan(x).any():
        x = _filled(time, x)
    n = x.size
    if n < 16:
        raise DataError(f"{path}: too short to find a cycle period ({n} samples)")
    dt = float(np.median(np.diff(time)))
    x = x - x.mean()
    if not np.any(x):
        raise DataError(f"{path}: the signal is constant; no cycle period can be found — give "
                        "--speed-rpm")
    nfft = 1 << int(math.ceil(math.log2(2 * n)))
    spec = np.fft.rfft(x, nfft)
    acf = np.fft.irfft(spec * np.conj(spec), nfft)[:n]
    acf /= acf[0]
    # unbiased correction so late lags are not penalised
    acf = acf * n / (n - np.arange(n))
    lo = max(2, int(min_period / dt)) if min_period else 2
    hi = min(n // 3, int(max_period / dt)) if max_period else n // 3
    if hi <= lo + 2:
        raise DataError(f"{path}: the log is shorter than three cycles; record a longer log "
                        "or give --speed-rpm")
    neg = np.flatnonzero(acf[:hi] < 0)
    start = max(lo, int(neg[0]) if neg.size else lo)
    if start >= hi:
        raise DataError(f"{path}: no periodicity found (the autocorrelation never falls "
                        "below zero); give --speed-rpm or a speed/angle channel")
    seg = acf[start:hi]
    k = start + int(np.argmax(seg))
    conf = float(acf[k])
    if conf < MIN_PERIOD_CONFIDENCE:
        raise DataError(f"{path}: no periodicity found (best autocorrelation peak {conf:.2f} "
                        f"< {MIN_PERIOD_CONFIDENCE}); the signal is not cyclic — give "
                        "--speed-rpm or a speed/angle channel")
    # prefer the shortest lag whose peak is nearly as high (avoid picking 2×period)
    cand = _local_peaks(acf, start, hi)
    good = cand[acf[cand] >= 0.85 * conf]
    if good.size:
        k = int(good[0])
    p0 = _parabolic(acf, k)
    m = max(1, int((n - 1) * 0.5 // p0))
    km = int(round(m * p0))
    w = max(2, int(0.1 * p0))
    a, b = max(1, km - w), min(n - 2, km + w)
    if b > a:
        km = a + int(np.argmax(acf[a:b + 1]))
        period = _parabolic(acf, km) / m * dt
    else:
        period, m = p0 * dt, 1
    return PeriodEstimate(period=float(period), confidence=min(conf, 1.0),
                          cycles_seen=int((n * dt) // period))


def _filled(time: np.ndarray, x: np.ndarray) -> np.ndarray:
    """``x`` with NaN filled by :func:`torqlog.signal.condition.fill_nan`; all-NaN is an error."""
    filled, bad = fill_nan(time, x)
    if bad.all():
        raise DataError("the channel holds no numbers")
    return filled


def _local_peaks(x: np.ndarray, lo: int, hi: int) -> np.ndarray:
    s = x[lo - 1:hi + 1]
    pk = np.flatnonzero((s[1:-1] > s[:-2]) & (s[1:-1] >= s[2:])) + lo
    return pk


def _parabolic(y: np.ndarray, k: int) -> float:
    if k <= 0 or k >= y.size - 1:
        return float(k)
    a, b, c = y[k - 1], y[k], y[k + 1]
    den = a - 2 * b + c
    return float(k) if den == 0 else float(k + 0.5 * (a - c) / den)


def _continue_trapezoid(speed: np.ndarray, time: np.ndarray, speed0: float, time0: float,
                        theta0: float) -> np.ndarray:
    """Angle [rad] at ``time`` integrating ``speed`` [rad/s] on from (time0, speed0, theta0).

    Trapezoid rule, continuing a running integral across chunks without copying the
    chunk: the step from the previous chunk's last sample leads the running sum.
    """
    inc = np.empty(speed.size, dtype=np.float64)
    inc[0] = (speed0 + speed[0]) * (time[0] - time0)
    np.subtract(time[1:], time[:-1], out=inc[1:])
    inc[1:] *= np.add(speed[1:], speed[:-1])
    np.cumsum(inc, out=inc)
    inc *= 0.5
    inc += theta0
    return inc


class AngleTracker:
    """Shaft angle for a stream of chunks, from one cycle source.

    Parameters
    ----------
    source : str
        One of :data:`CYCLE_SOURCES`.
    pulses_per_rev : float
        Encoder counts per revolution (source ``"counts"``).
    nominal_speed : float, optional [rad/s]
        For source ``"nominal"``.
    period : float, optional [s]
        Cycle period for source ``"period"`` (see :func:`estimate_period`).
    revs_per_cycle : int
        Revolutions per machine cycle (period source: θ = 2π·revs·t/period).
    angle_period : float, optional [rad]
        Wrap period of an angle channel (default: guessed from the first chunk).
    """

    def __init__(self, source: str, *, pulses_per_rev: float = 360.0,
                 nominal_speed: float | None = None, period: float | None = None,
                 revs_per_cycle: int = 1, angle_period: float | None = None) -> None:
        if source not in CYCLE_SOURCES:
            raise UsageError(f"unknown cycle source {source!r}; valid: "
                             f"{', '.join(CYCLE_SOURCES)}")
        self.source = source
        self.pulses_per_rev = float(pulses_per_rev)
        self.nominal_speed = nominal_speed
        self.period = period
        self.revs_per_cycle = revs_per_cycle
        self.angle_period = angle_period
        self._last_raw: float | None = None
        self._last_theta = 0.0
        self._last_t: float | None = None
        self._last_w: float | None = None
        self._thresholds: tuple[float, float] | None = None
        self._state = False
        self._edges = np.empty(0)
        self._first_edge_rev = 0

    def push(self, time: np.ndarray, channels: dict[str, np.ndarray]) -> np.ndarray:
        """Angle [rad] for the new samples (NaN where not yet known: index source)."""
        s = self.source
        if s == "angle":
            raw = channels["angle"]
            if self.angle_period is None:
                self.angle_period = wrap_period(raw)
            if self._last_raw is not None:
                raw = np.concatenate(([self._last_raw], raw))
                theta = np.unwrap(raw, period=self.angle_period)
                theta = theta[1:] - theta[0] + self._last_theta
            else:
                theta = np.unwrap(raw, period=self.angle_period)
            self._last_raw = float(channels["angle"][-1])
            self._last_theta = float(theta[-1])
            return theta
        if s == "counts":
            c = channels["counts"]
            theta = c * (TWO_PI / self.pulses_per_rev)
            # interpolate between count steps inside the chunk; carry the last step
            prev_t = self._last_t
            tt = time if prev_t is None else np.concatenate(([prev_t], time))
            th = theta if prev_t is None else np.concatenate(([self._last_theta], theta))
            step = np.flatnonzero(np.diff(th) != 0) + 1
            keep = np.concatenate(([0], step)) if prev_t is not None else step
            if keep.size >= 2:
                out = np.interp(tt, tt[keep], th[keep])
                # after the last step: extrapolate at the latest rate is not known; hold
                theta = out[1:] if prev_t is not None else out
            self._last_t = float(tt[keep[-1]]) if keep.size else self._last_t
            self._last_theta = float(th[keep[-1]]) if keep.size else self._last_theta
            return theta
        if s == "speed":
            w = channels["speed"]
            if np.isnan(w).any():
                w = _filled(time, w)
            if self._last_t is not None:
                theta = _continue_trapezoid(w, time, self._last_w, self._last_t,
                                            self._last_theta)
            else:
                theta = cumulative_trapezoid(w, time, initial=0.0)
            self._last_t, self._last_w = float(time[-1]), float(w[-1])
            self._last_theta = float(theta[-1])
            return theta
        if s == "nominal":
            return time * float(self.nominal_speed)
        if s == "period":
            return time * (TWO_PI * self.revs_per_cycle / float(self.period))
        # index
        pulse = channels["index"]
        if self._thresholds is None:
            self._thresholds = index_threshold(pulse)
        new, self._state = rising_edges(time, pulse, *self._thresholds, state0=self._state)
        self._edges = debounce_edges(np.concatenate((self._edges, new)))
        return self.angle_at(time)

    def angle_at(self, time: np.ndarray) -> np.ndarray:
        """Angle [rad] at given times from what is known so far (index source)."""
        return angle_from_edges(time, self._edges)
