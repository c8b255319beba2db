"""What is in a log: columns and roles, units, sample rate, gaps, NaNs, clipping.

This is the library side of ``torqlog inspect``. It streams the file, so it works on
logs of any length in bounded memory.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from torqlog.io.ingest import Layout, LogReader
from torqlog.io.notebook import result_html
from torqlog.signal import condition as cond
from torqlog.signal.angle import pick_cycle_source
from torqlog.signal.health import MIN_RUNNING_SPEED, ChannelScale, spike_runs

_MAX_GAPS_LISTED = 20


@dataclass(frozen=True)
class Survey:
    """Facts about one log file (see :func:`survey_log`)."""

    layout: Layout
    rows: int
    duration: float
    rate: float
    rate_jitter: float
    gaps: list[dict[str, float]]
    gap_count: int
    gap_longest: float
    nan_rows: dict[str, int]
    clipped: dict[str, int]
    cycle_source: str | None
    cycle_source_note: str
    inf_rows: dict[str, int] = field(default_factory=dict)
    spikes: dict[str, int] = field(default_factory=dict)

    _repr_html_ = result_html  # the notebook view

    def to_dict(self) -> dict[str, Any]:
        """JSON contract of ``torqlog inspect``."""
        lay = self.layout
        return {
            **lay.facts(),
            "preamble": lay.preamble,
            "rows": self.rows,
            "duration_s": self.duration,
            "sample_rate_hz": self.rate,
            "rate_jitter": self.rate_jitter,
            "gaps": {"count": self.gap_count, "longest_s": self.gap_longest,
                     "list": self.gaps},
            "nan_rows": self.nan_rows,
            "inf_rows": self.inf_rows,
            "clipped_samples": self.clipped,
            "spike_samples": self.spikes,
            "cycle_source": self.cycle_source,
            "cycle_source_note": self.cycle_source_note,
        }


def survey_log(path: str | Path, *, nominal_speed: float | None = None,
               block_rows: int = 1_000_000, **read_options: Any) -> Survey:
    """Stream a log and report what it holds.

    Parameters
    ----------
    path : str or Path
        The logger export.
    nominal_speed : float, optional [rad/s]
        If given, the "nominal" cycle source counts as available.
    **read_options
        ``roles``, ``units``, ``rate``, ``start`` as for :func:`torqlog.io.ingest.sniff_layout`.

    Returns
    -------
    Survey
        Sample rate is 1 / median time step [Hz]; jitter is the standard deviation of the
        time step over its median (gaps excluded); a gap is a step longer than
        :data:`torqlog.signal.condition.GAP_FACTOR` median steps; clipped samples sit in runs of
        :data:`torqlog.signal.condition.CLIP_RUN` or more equal values at the channel's extreme
        (a flat speed below :data:`torqlog.signal.health.MIN_RUNNING_SPEED` is a standing shaft,
        not clipping); ±inf samples are counted apart (``inf_rows``) and not as NaN; spike
        samples (:func:`torqlog.signal.health.spike_runs`, the test the cycle stage flags
        ``spikes`` by) are counted apart (``spike_samples``), not as clipped.
    """
    reader = LogReader(path, block_rows=block_rows, **read_options)
    lay = reader.layout
    rows = 0
    step = None
    last_t = None
    gap_idx: list[np.ndarray] = []
    gap_dur: list[np.ndarray] = []
    gap_time: list[np.ndarray] = []
    s1 = s2 = 0.0
    ns = 0
    nan_rows = {r: 0 for r in lay.roles}
    nonfinite: dict[str, int] = {}
    extremes: dict[str, list[float]] = {}
    scales: dict[str, ChannelScale] = {}
    spikes: dict[str, int] = {}
    flats: dict[str, list[np.ndarray]] = {}
    t_end = 0.0
    for ch in reader:
        t = ch.time
        tt = t if last_t is None else np.concatenate(([last_t], t))
        d = np.diff(tt)
        if step is None and d.size:  # (one sample so far: no time step to judge yet)
            step = float(np.median(d))
        big = d > cond.GAP_FACTOR * step if step is not None else np.zeros(d.size, bool)
        if big.any():
            k = np.flatnonzero(big)
            gap_idx.append(ch.row0 + k + (0 if last_t is not None else 1))
            gap_dur.append(d[k] - step)
            gap_time.append(tt[k])
        ok = d[~big]
        s1 += float(ok.sum())
        s2 += float((ok * ok).sum())
        ns += int(ok.size)
        for role, x in ch.channels.items():
            nan_rows[role] += int(np.isnan(x).sum())
            inf = np.isinf(x)
            if inf.any():
                nonfinite[role] = nonfinite.get(role, 0) + int(inf.sum())
                x = np.where(inf, np.nan, x)
            if role in ("torque", "speed"):
                # spikes first, by the cycle stage's own test (signal.health.spike_runs),
                # so a short run of equal wild values is a spike there and here, not a rail
                fin = np.isfinite(x)
                if role not in scales and fin.sum() >= 5:
                    scales[role] = ChannelScale.of(x[fin])
                if role in scales:
                    sp = np.zeros(x.size, dtype=bool)
                    sp[fin] = spike_runs(x[fin], scales[role])  # across NaN holes
                    if sp.any():
                        spikes[role] = spikes.get(role, 0) + int(sp.sum())
                        x = np.where(sp, np.nan, x)
                fm = cond.flat_runs(x)
                if fm.any():
                    flats.setdefault(role, []).append(x[fm])
                e = extremes.setdefault(role, [np.inf, -np.inf])
                e[0] = min(e[0], float(np.nanmin(x)) if np.isfinite(x).any() else np.inf)
                e[1] = max(e[1], float(np.nanmax(x)) if np.isfinite(x).any() else -np.inf)
        rows += len(t)
        last_t = float(t[-1])
        t_end = last_t
    mean = s1 / ns if ns else float("nan")
    jitter = float(np.sqrt(max(s2 / ns - mean * mean, 0.0)) / mean) if ns else float("nan")
    rate = lay.rate if lay.rate else (1.0 / step if step else float("nan"))
    clipped = {}
    for role, parts in flats.items():
        v = np.concatenate(parts)
        lo, hi = extremes[role]
        if hi > lo:  # a constant channel is flat, not clipped
            at = (v == lo) | (v == hi)
            if role == "speed":  # a standing shaft reads a flat zero: a stop, not a rail
                at &= np.abs(v) >= MIN_RUNNING_SPEED
            clipped[role] = int(np.sum(at))
    gi = np.concatenate(gap_idx) if gap_idx else np.empty(0, int)
    gd = np.concatenate(gap_dur) if gap_dur else np.empty(0)
    gt = np.concatenate(gap_time) if gap_time else np.empty(0)
    gaps = [{"row": int(i) + 1, "after_s": float(a), "missing_s": float(g)}
            for i, a, g in zip(gi[:_MAX_GAPS_LISTED], gt, gd, strict=False)]
    try:
        src = pick_cycle_source(lay.roles, nominal_speed=nominal_speed, path=lay.path)
        note = {
            "angle": "unwrapped angle channel",
            "index": "once-per-rev index pulse edges",
            "counts": "encoder counts",
            "speed": "integrated speed channel",
            "nominal": "nominal speed given",
            "period": "period estimated from the signal (no speed, angle or index channel)",
        }[src]
    except Exception as exc:  # noqa: BLE001 - reported, not raised, by inspect
        src, note = None, str(exc)
    return Survey(lay, rows, t_end, float(rate), jitter, gaps, int(gi.size),
                  float(gd.max()) if gd.size else 0.0, nan_rows, clipped, src, note,
                  nonfinite, spikes)
