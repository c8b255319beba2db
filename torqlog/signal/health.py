"""Channel health: sensor faults and non-running stretches, sample by sample.

The cycle stage asks these pure, vectorised functions which samples of a channel cannot
be trusted, marks them in a per-sample bit mask (:data:`BITS`), bridges the faulty
stretches of the speed channel before the shaft angle is integrated from it, and flags
every cycle a marked sample falls in. What each check looks for:

- ``nonfinite``: ±inf samples (NaN runs are the ``nan`` flag of :mod:`torqlog.signal.condition`).
- ``spikes``: runs of 1 to :data:`SPIKE_RUN_MAX` samples that leave the channel's normal
  envelope and come back: a jump away larger than :data:`torqlog.signal.condition.SPIKE_K`
  robust SDs of the first difference, a jump back of the opposite sign within the run
  length, the flanks at the same level, and the run outside the channel's robust range
  widened by :data:`ENVELOPE_MARGIN` on each side.
- ``dropout``: the speed channel falls below :data:`RUNNING_SHARE` of the running speed
  and comes back *in one sample step* each way — faster than any real shaft can
  decelerate — so it is the sensor, not the machine.
- ``stop`` / ``reversal``: the speed channel is below :data:`RUNNING_SHARE` of the running
  speed (or negative) and got there gradually: the machine stopped, ran down or up, or
  turned backwards. These split the log into running segments.
- ``frozen``: a channel repeats one value for longer than its noise makes plausible
  (:func:`frozen_run_length`); at the cycle's extreme the same run is ``clipped``.

References
----------
.. [1] R. K. Pearson, "Outliers in process modeling and identification", *IEEE Trans.
   Control Systems Technology* 10(1), 2002 (robust MAD scale, Hampel-type identifiers).
.. [2] P. J. Rousseeuw and C. Croux, "Alternatives to the median absolute deviation",
   *J. American Statistical Association* 88(424), 1993 (the 1.4826 × MAD scale).
"""

from __future__ import annotations

import math
from collections import Counter
from dataclasses import dataclass
from typing import Any

import numpy as np

from torqlog.errors import DataError
from torqlog.signal import condition as cond

#: Bit of each per-sample fault in the mask the cycle stage carries, and its flag name.
BITS: dict[str, int] = {"nan": 1, "nonfinite": 2, "spikes": 4, "dropout": 8, "frozen": 16,
                        "stop": 32, "reversal": 64}
#: Longest run of samples still called a spike (longer departures are a level change).
SPIKE_RUN_MAX = 8
#: A spike leaves the channel's range [p0.1, p99.9] widened by this share of the range on
#: each side (common practice: a genuine peak stays inside the range of its neighbours).
ENVELOPE_MARGIN = 0.25
#: Slowest shaft counted as running [rad/s] (about 5 rpm; common practice for the
#: machines torqlog serves).
MIN_RUNNING_SPEED = 0.5
#: Below this share of the running speed the shaft is not running (stop, run-down, run-up).
RUNNING_SHARE = 0.5
#: A one-step change of speed larger than this share of the running speed is a sensor
#: jump (a shaft with inertia cannot change speed that fast between two samples).
JUMP_SHARE = 0.4
#: Chance that a run of equal samples this long arises from noise alone, below which a
#: run counts as frozen.
FROZEN_CHANCE = 1e-6
#: Cycles longer or shorter than the running median cycle by more than this share are
#: flagged ``length`` (merged or split cycles; common practice).
CYCLE_LENGTH_TOL = 0.2
#: Cycles whose mean speed differs from the previous cycle's by more than this share are
#: flagged ``unsteady`` (running up or down; common practice).
UNSTEADY_TOL = 0.03
#: A measured angle this far [rad] behind its running maximum is a reversal (about 6°;
#: encoder jitter is a count or two).
REVERSAL_ANGLE = 0.1
#: Without a speed channel, a cycle whose torque range is below this share of the running
#: median counts as not running (common practice).
QUIET_SHARE = 0.2
#: Smallest share of the within-cycle variance the mean cycle must explain for a log to
#: count as cyclic (common practice; a sine at a signal-to-noise ratio of 1 explains 0.5).
MIN_CYCLIC_SHARE = 0.3


@dataclass(frozen=True)
class ChannelScale:
    """Robust figures of one channel, estimated once and used over a streamed log.

    Attributes
    ----------
    diff_sd : float [channel unit]
        Robust SD (1.4826 × MAD) of the first difference.
    low, high : float [channel unit]
        0.1st and 99.9th percentiles of the channel.
    equal_share : float
        Share of consecutive samples that are equal (quantisation, held values).
    """

    diff_sd: float
    low: float
    high: float
    equal_share: float

    @classmethod
    def of(cls, x: np.ndarray) -> ChannelScale:
        """Estimate from (at most ~20 000 evenly spread samples of) a finite signal."""
        x = np.asarray(x, dtype=np.float64)
        x = x[np.isfinite(x)]
        if x.size < 5:
            return cls(1.0, -np.inf, np.inf, 0.0)
        d = np.diff(x)
        sub = d[:: max(1, d.size // 20_000)]
        sd = 1.4826 * float(np.median(np.abs(sub - np.median(sub))))
        sd = sd if sd > 0 else (float(np.std(sub)) or 1.0)
        lo, hi = np.percentile(x[:: max(1, x.size // 20_000)], [0.1, 99.9])
        return cls(sd, float(lo), float(hi), float(np.mean(d == 0)))


def runs(mask: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Start and end (exclusive) indices of the runs of True in a boolean mask."""
    m = np.asarray(mask, dtype=bool)
    edges = np.diff(np.concatenate(([0], m.view(np.int8), [0])))
    return np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)


def fill_runs(mask: np.ndarray, starts: np.ndarray, ends: np.ndarray) -> np.ndarray:
    """Set ``mask[s:e]`` True for every run (vectorised)."""
    delta = np.zeros(mask.size + 1, dtype=np.int64)
    np.add.at(delta, starts, 1)
    np.add.at(delta, ends, -1)
    mask |= np.cumsum(delta[:-1]) > 0
    return mask


def spike_runs(x: np.ndarray, scale: ChannelScale, *, k: float = cond.SPIKE_K,
               max_run: int = SPIKE_RUN_MAX, margin: float = ENVELOPE_MARGIN) -> np.ndarray:
    """Mask of the samples in spike runs of 1 to ``max_run`` samples.

    A run ``x[i+1 .. j]`` is a spike run when the step into it and the step out of it
    are both larger than ``k`` robust SDs of the first difference ([1]_, [2]_) and of
    opposite sign, the flanks ``x[i]`` and ``x[j+1]`` differ by less than half the smaller
    step, and the run's farthest sample lies outside the channel's range widened by
    ``margin`` × the range on each side. Only the (few) large steps are examined, so the
    cost is one pass over the signal.

    Parameters
    ----------
    x : ndarray
        Finite signal (any unit).
    scale : ChannelScale
        Its robust figures.
    k : float
        Step threshold in robust SDs.
    max_run : int
        Longest run [samples].
    margin : float
        Widening of the range, as a share of it.

    Returns
    -------
    ndarray of bool

    Examples
    --------
    >>> import numpy as np
    >>> x = np.sin(np.linspace(0, 200, 20000))
    >>> x[5000:5004] = 50.0
    >>> int(spike_runs(x, ChannelScale.of(x)).sum())
    4
    """
    x = np.asarray(x, dtype=np.float64)
    mask = np.zeros(x.size, dtype=bool)
    if x.size < 3:
        return mask
    d = np.diff(x)
    big = np.flatnonzero(np.abs(d) > k * scale.diff_sd)
    if big.size < 2:
        return mask
    width = scale.high - scale.low
    lo, hi = scale.low - margin * width, scale.high + margin * width
    starts, ends = [], []
    for step in range(1, 4):  # pair each big step with the next few big steps
        a, b = big[:-step], big[step:]
        ok = (b - a <= max_run) & (np.sign(d[a]) != np.sign(d[b]))
        a, b = a[ok], b[ok]
        if not a.size:
            continue
        ok = np.abs(x[b + 1] - x[a]) < 0.5 * np.minimum(np.abs(d[a]), np.abs(d[b]))
        a, b = a[ok], b[ok]
        if not a.size:
            continue
        # farthest sample of each run (runs are short: at most max_run samples)
        idx = a[:, None] + 1 + np.arange(max_run)[None, :]
        inside = idx <= b[:, None]
        v = x[np.minimum(idx, x.size - 1)]
        far = np.where(inside, np.maximum(v - hi, lo - v), -np.inf).max(axis=1)
        ok = far > 0
        starts.append(a[ok] + 1)
        ends.append(b[ok] + 1)
    if starts:
        fill_runs(mask, np.concatenate(starts), np.concatenate(ends))
    return mask


def bridge(time: np.ndarray, x: np.ndarray, bad: np.ndarray) -> np.ndarray:
    """``x`` with the ``bad`` samples replaced by linear interpolation in time."""
    if not bad.any():
        return x
    y = np.array(x, dtype=np.float64)
    y[bad] = np.nan
    return cond.fill_nan(time, y)[0]


def bridge_periodic(time: np.ndarray, x: np.ndarray, bad: np.ndarray, lag: int,
                    before: np.ndarray | None = None) -> np.ndarray:
    """``x`` with the ``bad`` runs replaced by the signal one cycle earlier.

    A cyclic signal repeats itself one cycle (``lag`` samples) back, so a missing stretch
    is filled with the samples ``lag`` (or a whole multiple of it) before, plus a straight
    line that makes both ends meet the good neighbours. A run with no cycle of history
    before it is bridged by a straight line (:func:`bridge`).

    Parameters
    ----------
    time : ndarray [s]
    x : ndarray
        Signal (any unit).
    bad : ndarray of bool
    lag : int
        Samples per cycle.
    before : ndarray, optional
        The samples just before ``x`` (streaming history).
    """
    if not bad.any():
        return x
    k = 0 if before is None else before.size
    xx = np.concatenate((before, x)) if k else np.array(x, dtype=np.float64)
    n = xx.size
    s, e = runs(bad)
    linear = np.zeros(x.size, dtype=bool)
    for a, b in zip((s + k).tolist(), (e + k).tolist(), strict=True):  # runs are few
        if lag < 2 or a - lag < 1 or b >= n:
            linear[a - k:b - k] = True
            continue
        idx = np.arange(a, b + 1)  # the run and its right neighbour
        src = idx - ((idx - a) // lag + 1) * lag
        copy = xx[src]
        left = xx[a - 1] - xx[a - 1 - lag]  # mismatch at each end
        right = xx[b] - copy[-1]
        ramp = np.linspace(0.0, 1.0, idx.size)
        xx[a:b] = (copy + left + (right - left) * ramp)[:-1]
    out = xx[k:]
    return bridge(time, out, linear) if linear.any() else out


def speed_state(speed: np.ndarray, running: float, previous: float | None = None
                ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Dropouts, stops and reversals in a speed channel.

    Parameters
    ----------
    speed : ndarray [rad/s]
        Finite speed samples (positive = the machine's running direction).
    running : float [rad/s]
        The running speed of the log.
    previous : float, optional [rad/s]
        The sample before ``speed[0]`` (streaming), to judge how a stretch began.

    Returns
    -------
    dropout, stop, reversal : ndarray of bool
        ``dropout``: stretches below :data:`RUNNING_SHARE` × ``running`` entered and left
        by one-sample jumps larger than :data:`JUMP_SHARE` × ``running`` (sensor);
        ``stop``: the other stretches below it (the machine stopped, ran down or up);
        ``reversal``: samples of those stretches below −5 % of ``running``.
    """
    w = np.asarray(speed, dtype=np.float64)
    n = w.size
    low = w < RUNNING_SHARE * running
    dropout = np.zeros(n, dtype=bool)
    if not low.any():
        return dropout, low, dropout.copy()
    s, e = runs(low)
    jump = JUMP_SHARE * running
    before = np.where(s > 0, w[np.maximum(s - 1, 0)],
                      previous if previous is not None else np.nan)
    after = np.where(e < n, w[np.minimum(e, n - 1)], np.nan)
    entry = before - w[s] > jump
    leave = after - w[e - 1] > jump
    # a stretch touching the end of the data is judged by its entry alone
    sensor = entry & (leave | (e == n))
    fill_runs(dropout, s[sensor], e[sensor])
    stop = low & ~dropout
    reversal = stop & (w < -0.05 * running)
    return dropout, stop, reversal


def running_speed(speed: np.ndarray) -> float | None:
    """The speed [rad/s] a machine runs at in a stretch of log, or None if it stands.

    The median of the samples above half the 99.5th percentile (so stops, run-downs and
    dropouts in the stretch do not pull it down); None when that percentile is below
    :data:`MIN_RUNNING_SPEED`.
    """
    w = np.asarray(speed, dtype=np.float64)
    w = w[:: max(1, w.size // 20_000)]
    if w.size == 0:
        return None
    hi = float(np.percentile(w, 99.5))
    if hi < MIN_RUNNING_SPEED:
        return None
    return float(np.median(w[w > 0.5 * hi]))


def frozen_run_length(scale: ChannelScale, samples_per_rev: float | None = None) -> int:
    """Shortest run of equal samples that counts as frozen [samples].

    A run of L equal samples happens by chance with probability about p^(L−1), p the
    share of equal neighbours in the channel; the run is frozen when that falls below
    :data:`FROZEN_CHANCE`. At least :data:`torqlog.signal.condition.CLIP_RUN`, and at least 2 %
    of a revolution's samples when known (a slowly turning extreme can repeat a rounded
    value for a few samples).
    """
    p = min(scale.equal_share, 0.99)
    n = cond.CLIP_RUN
    if p > 0:
        n = max(n, int(math.ceil(math.log(FROZEN_CHANCE) / math.log(p))) + 1)
    if samples_per_rev:
        n = max(n, int(math.ceil(0.02 * samples_per_rev)))
    return n


def cyclic_share(s1: np.ndarray, s2: np.ndarray, n: int) -> float:
    """Share of the variation within cycles that the mean cycle explains (0 to 1).

    From running sums over ``n`` cycles of a signal on a fixed angle grid: ``s1`` (sum)
    and ``s2`` (sum of squares) per bin. Between = variance over the bins of the mean
    cycle, less its sampling part (within / n, so noise alone scores about 0); within =
    mean over the bins of the variance across cycles. A cyclic machine scores near 1;
    noise scores near 0 (analysis of variance, one-way layout).
    """
    if n < 2:
        return float("nan")
    m = s1 / n
    within = float(np.mean(np.maximum(s2 / n - m * m, 0.0))) * n / (n - 1)
    between = max(float(np.var(m)) - within / n, 0.0)
    total = between + within
    return between / total if total > 0 else 0.0


def running_segments(stretches: list[tuple[float, float, str]], t_start: np.ndarray,
                     duration: np.ndarray, flag: np.ndarray, join: float = 0.0
                     ) -> tuple[list[dict[str, Any]], list[dict[str, Any]]]:
    """Non-running stretches merged, and the running segments between them.

    Parameters
    ----------
    stretches : list of (start [s], end [s], what)
        Stops, run-downs, reversals, gaps as found (may overlap).
    t_start, duration : ndarray [s]
        Start and length of each cycle.
    flag : ndarray of str
        Each cycle's flags ("" when clean).
    join : float [s]
        Stretches closer than this are one.

    Returns
    -------
    not_running : list of dict
        ``start_s``, ``end_s``, ``what`` (kinds joined by " + ").
    segments : list of dict
        ``start_s``, ``end_s``, ``cycles``, ``clean`` of each running segment.
    """
    merged: list[list[Any]] = []
    for a, b, kind in sorted(stretches):
        if merged and a <= merged[-1][1] + join:
            merged[-1][1] = max(merged[-1][1], b)
            if kind not in merged[-1][2]:
                merged[-1][2].append(kind)
        else:
            merged.append([a, b, [kind]])
    not_running = [{"start_s": a, "end_s": b, "what": " + ".join(k)} for a, b, k in merged]
    edges = [-np.inf] + [x for a, b, _ in merged for x in (a, b)] + [np.inf]
    segs = []
    for a, b in zip(edges[::2], edges[1::2], strict=True):
        inside = (t_start >= a) & (t_start < b)
        if inside.any():
            end = float(b) if np.isfinite(b) else float(t_start[inside][-1] +
                                                        duration[inside][-1])
            segs.append({"start_s": float(t_start[inside][0]), "end_s": end,
                         "cycles": int(inside.sum()),
                         "clean": int((inside & (flag == "")).sum())})
    return not_running, segs


def refuse_without_clean_cycles(path: str, flag: np.ndarray,
                                not_running: list[dict[str, Any]], need: int = 2) -> None:
    """Raise DataError naming the flags and the stops when fewer than ``need`` cycles are
    clean: no running segment holds enough for a statistic."""
    clean = int((flag == "").sum())
    if clean >= need:
        return
    counts = Counter(r for f in flag[flag != ""] for r in f.split("+"))
    why = ", ".join(f"{k} {v}" for k, v in counts.most_common())
    stops = f"; not running: {len(not_running)} stretch(es), " + ", ".join(
        f"{d['what']} {d['start_s']:.2f}–{d['end_s']:.2f} s" for d in not_running[:3]
    ) if not_running else ""
    raise DataError(f"{path}: no running stretch holds {need} clean cycles ({len(flag)} "
                    f"cycle(s), {clean} clean; flagged: {why}{stops}); see the flag column "
                    "of `torqlog cycles` for where")


def refuse_if_not_cyclic(path: str, share: float, cycles: int, channel: str,
                         source: str) -> None:
    """Raise DataError with the measured figure when the mean cycle explains less than
    :data:`MIN_CYCLIC_SHARE` of the variation within cycles (see :func:`cyclic_share`)."""
    if share < MIN_CYCLIC_SHARE:
        raise DataError(
            f"{path}: the log is not cyclic: over {cycles} clean cycles the mean cycle "
            f"explains {share:.0%} of the {channel} variation within cycles (a cyclic "
            f"machine: at least {MIN_CYCLIC_SHARE:.0%}); check the cycle source "
            f"({source!r}) and the revs per cycle, or that the machine was running")
