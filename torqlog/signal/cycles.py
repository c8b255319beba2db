"""Cycles in the angle domain: split a streamed log into machine cycles, one row each.

:func:`analyse_cycles` reads a log chunk by chunk (memory bounded by the chunk size),
tracks the shaft angle, cuts a cycle every ``revs_per_cycle`` × 2π, and reduces each
cycle to its figures (work, energy swing, Cs ...) with vectorised segment reductions. A
cycle that spans a chunk boundary is carried over to the next chunk. Cycles with a gap,
NaNs, clipped samples or another channel fault (:mod:`torqlog.signal.health`: spike runs,
dropouts, frozen runs, ±inf, stops, reversals, off-length or unsteady cycles) stay in the
table with a ``flag`` and are left out of the summary; a log with no two clean cycles, or
one that is not cyclic, is refused with the reason.

References
----------
.. [1] R. G. Budynas and J. K. Nisbett, *Shigley's Mechanical Engineering Design*,
   10th ed., McGraw-Hill, 2015, sec. 16-12 (energy swing and coefficient of speed
   fluctuation; ΔE ≈ I·Cs·ω̄², eq. 16-62).
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable
from dataclasses import asdict, dataclass, field
from itertools import chain
from pathlib import Path
from typing import TYPE_CHECKING, Any, Protocol

import numpy as np

from torqlog.errors import DataError, UsageError, naming_file
from torqlog.io.ingest import Chunk, Layout, LogReader
from torqlog.io.notebook import result_html
from torqlog.signal import angle as ang
from torqlog.signal import condition as cond
from torqlog.signal import energy as en
from torqlog.signal import health
from torqlog.signal.cycle_table import ColumnStore, ScoredBlocks, SummaryStream
from torqlog.signal.streamstats import DEFAULT_QUANTILE_BUDGET, DEFAULT_SKETCH_ERROR, RunningMoments

if TYPE_CHECKING:
    import pandas as pd

TWO_PI = 2.0 * math.pi
RPM = 60.0 / TWO_PI

#: Default low-pass cut-off for speed before Cs, in cycle orders (stated in every result).
DEFAULT_SPEED_CUTOFF_ORDERS = 20.0
#: Fewest cycles of look-ahead kept back in each chunk (more when the speed filter is
#: longer; see :func:`speed_filter`).
_HOLD = 2
#: Fewest emitted cycles kept in front of each chunk as the speed filter's context.
_CONTEXT = 4
#: Cycles kept for plotting every cycle faintly.
MAX_CURVES = 300
#: A block allocated and freed once before streaming (see :func:`_recycle_temporaries`).
_WARM_BLOCK_BYTES = 8 << 20
#: Faulty stretches listed in a result (all are counted).
_MAX_EVENTS = 200

COLUMNS = ("cycle", "t_start_s", "start_time", "duration_s", "speed_mean_rpm",
           "speed_min_rpm", "speed_max_rpm", "torque_mean_Nm", "torque_peak_Nm",
           "torque_min_Nm", "work_J", "energy_swing_J", "angle_speed_min_deg",
           "angle_speed_max_deg", "cs", "cs_constant_drive", "flag", "anomaly",
           "anomaly_score")


@dataclass(frozen=True)
class CycleOptions:
    """Options of the cycle stage (all SI).

    Attributes
    ----------
    revs_per_cycle : int
        Shaft revolutions per machine cycle (2 for a four-stroke engine).
    cycle_source : str or None
        Force one of :data:`torqlog.signal.angle.CYCLE_SOURCES`; None picks the best available.
    nominal_speed : float or None [rad/s]
        Nominal shaft speed (cycle source ``"nominal"``).
    pulses_per_rev : float
        Encoder counts per revolution.
    inertia : float or None [kg*m^2]
        Rotating inertia referred to the logged shaft (for ``cs_constant_drive`` and the
        speed-only energy swing).
    speed_cutoff_orders : float
        Zero-phase low-pass of speed before max − min, in cycle orders (0 = off): a
        linear-phase FIR filter (Kaiser-windowed sinc, :func:`torqlog.signal.condition.lowpass`)
        on the speed binned over the angle (:func:`speed_bins_per_cycle` bins a cycle),
        passing orders below 0.75 × the cut-off, stopping those above 1.25 ×. It reaches
        a fixed number of bins either side, and each chunk keeps that much context and
        look-ahead, so Cs does not depend on ``block_rows``.
    cs_mean : {"cycle", "midrange"}
        Which mean speed Cs divides by.
    torque_role : {"load", "drive"}
        Whether the logged torque loads the shaft (press, compressor) or drives it (an
        engine's crank torque); decides where speed is lowest.
    despike : bool
        Replace one-sample spikes before computing.
    block_rows : int
        Rows per chunk read.
    read_ahead : bool
        Parse the next chunk in a background thread while this one is computed (about
        1.3 cores in use); off, the log is read and computed in turn on one core.
    """

    revs_per_cycle: int = 1
    cycle_source: str | None = None
    nominal_speed: float | None = None
    pulses_per_rev: float = 360.0
    inertia: float | None = None
    speed_cutoff_orders: float = DEFAULT_SPEED_CUTOFF_ORDERS
    cs_mean: str = "cycle"
    torque_role: str = "load"
    despike: bool = True
    block_rows: int = 100_000
    read_ahead: bool = True

    def __post_init__(self) -> None:
        if int(self.revs_per_cycle) != self.revs_per_cycle or self.revs_per_cycle < 1:
            raise UsageError(f"revs per cycle must be a whole number ≥ 1, got "
                             f"{self.revs_per_cycle}")
        if self.torque_role not in ("load", "drive"):
            raise UsageError(f"unknown torque role {self.torque_role!r}; valid: load, drive")
        if self.cs_mean not in ("cycle", "midrange"):
            raise UsageError(f"unknown Cs mean {self.cs_mean!r}; valid: cycle, midrange")
        if self.speed_cutoff_orders < 0:
            raise UsageError("speed cut-off orders must be ≥ 0 (0 turns the filter off)")
        if self.nominal_speed is not None and self.nominal_speed <= 0:
            raise UsageError("nominal speed must be positive")
        if self.inertia is not None and self.inertia <= 0:
            raise UsageError("inertia must be positive")
        if self.pulses_per_rev <= 0:
            raise UsageError("pulses per rev must be positive")


def options_from_profile(profile: Any = None, *, revs_per_cycle: int | None = None,
                         cycle_source: str | None = None, nominal_speed: float | None = None,
                         pulses_per_rev: float = 360.0, inertia: float | None = None,
                         speed_cutoff_orders: float = DEFAULT_SPEED_CUTOFF_ORDERS,
                         torque_role: str | None = None, cs_mean: str = "cycle",
                         despike: bool = True) -> CycleOptions:
    """Cycle options from given values, falling back on a machine profile's ``[machine]``.

    A value given here wins; None takes the profile's (``revs_per_cycle``, ``speed_rpm``
    as the nominal speed, ``inertia_kgm2``, ``torque_role``), then the default of
    :class:`CycleOptions`. The CLI commands and the report build their options here.

    Parameters
    ----------
    profile : MachineProfile, optional
    revs_per_cycle : int, optional
    cycle_source : str, optional
    nominal_speed : float, optional [rad/s]
    pulses_per_rev : float
    inertia : float, optional [kg*m^2]
    speed_cutoff_orders : float
    torque_role : {"load", "drive"}, optional
    cs_mean : {"cycle", "midrange"}
    despike : bool

    Returns
    -------
    CycleOptions
    """
    machine = profile.machine if profile is not None else {}
    return CycleOptions(
        revs_per_cycle=int(revs_per_cycle or machine.get("revs_per_cycle", 1)),
        cycle_source=cycle_source,
        nominal_speed=nominal_speed if nominal_speed is not None else machine.get("speed"),
        pulses_per_rev=pulses_per_rev,
        inertia=inertia if inertia is not None else machine.get("inertia"),
        speed_cutoff_orders=speed_cutoff_orders,
        torque_role=torque_role or machine.get("torque_role", "load"),
        cs_mean=cs_mean,
        despike=despike,
    )


class CycleSink(Protocol):
    """Where finished cycles go as they complete (see :mod:`torqlog.cycle_writers`)."""

    def start(self, source: str, options: dict[str, Any]) -> None:
        """Called once, before the first block."""

    def write(self, block: dict[str, np.ndarray]) -> None:
        """A block of finished cycles, columns :data:`COLUMNS`."""

    def finish(self, result: CycleResult) -> None:
        """Called once at the end with the result (summary, notes)."""


@dataclass(frozen=True)
class CycleResult:
    """Everything the cycle stage found in one log.

    Attributes
    ----------
    source : str
        The log file.
    columns : dict of str to ndarray
        The per-cycle figures, one array per column of :data:`COLUMNS`; ``table`` is the
        same as a pandas.DataFrame.
    summary : dict
        Statistics over clean cycles.
    mean : dict of str to ndarray
        The mean clean cycle on a uniform angle grid: ``angle`` [rad] (bin centres),
        ``torque_mean``, ``torque_sd`` [N*m], ``speed_mean``, ``speed_sd`` [rad/s];
        ``mean_cycle`` is the same as a pandas.DataFrame.
    curves : dict
        ``"torque"`` and ``"speed"``: arrays (cycles, bins) of the first clean cycles,
        for plots.
    options : dict
        Every option that produced this result, including the cycle source used.
    layout : Layout
        How the file was read.
    notes : list of str
        Things the reader should know (missing channels, estimated period ...).
    rows_kept : bool
        False when the rows were streamed out and not kept: ``columns`` is empty.
    stats : SummaryStream or None
        The running summary (histograms of the clean-cycle figures for plots).
    """

    source: str
    columns: dict[str, np.ndarray]
    summary: dict[str, Any]
    mean: dict[str, np.ndarray]
    curves: dict[str, np.ndarray]
    options: dict[str, Any]
    layout: Layout
    notes: list[str] = field(default_factory=list)
    anomaly: Any = None  #: AnomalyResult of the cycle-shape check, or None when off
    shape_model: Any = None  #: the ShapeModel the cycles were scored against
    rows_kept: bool = True
    stats: SummaryStream | None = field(default=None, repr=False, compare=False)

    # The figures are kept as numpy columns; the pandas tables are built on first use, so
    # `torqlog cycles` never has to import pandas (~0.3 s of start-up).
    @functools.cached_property
    def table(self) -> pd.DataFrame:
        """One row per cycle, columns :data:`COLUMNS`."""
        import pandas as pd

        return pd.DataFrame(self.columns)

    @functools.cached_property
    def mean_cycle(self) -> pd.DataFrame:
        """The mean clean cycle on a uniform angle grid (see the class docstring)."""
        import pandas as pd

        return pd.DataFrame(self.mean)

    def to_pandas(self) -> pd.DataFrame:
        """The per-cycle table."""
        return self.table

    @property
    def clean(self) -> pd.DataFrame:
        """Rows without a flag."""
        return self.table[self.table["flag"] == ""]

    _repr_html_ = result_html  # the notebook view

    def to_dict(self, rows: bool = True) -> dict[str, Any]:
        """The JSON contract of ``torqlog cycles`` (NaN and NaT become None).

        ``rows=False`` (or rows not kept) leaves out ``cycles``, the one part that grows
        with the log.
        """
        shape = self.anomaly.to_dict() if self.anomaly is not None else None
        if not (rows and self.rows_kept):
            return {"source": self.source, "options": self.options,
                    "summary": self.summary, "notes": self.notes, "anomaly": shape}
        return {"source": self.source, "options": self.options,
                "cycles": row_dicts(self.columns), "summary": self.summary,
                "notes": self.notes, "anomaly": shape}

    def distribution(self, name: str, bins: int = 40) -> tuple[np.ndarray, np.ndarray] | None:
        """Histogram of a clean-cycle figure from the running summary (no table needed).

        Parameters
        ----------
        name : {"energy_swing_J", "cs", "torque_peak_Nm", "duration_s"}
        bins : int
            Equal-width bins over the values' range.

        Returns
        -------
        (counts, edges) or None when no clean cycle has the figure.
        """
        return None if self.stats is None else self.stats.histogram(name, bins)

    def energy_curve(self) -> np.ndarray:
        """E(θ) [J] of the mean cycle on the ``mean_cycle`` grid (bin edges from 0)."""
        a = self.mean["angle"]
        t = self.mean["torque_mean"]
        step = a[1] - a[0]
        e = np.concatenate(([0.0], np.cumsum(t - t.mean()) * step))
        return e

    def plot(self, path: str | Path, units: str = "si") -> Path:
        """Three panels: torque vs angle, E(θ) of the mean cycle, speed vs angle; axes in
        ``units`` ("si" or "us")."""
        from torqlog.present.plots import plot_cycles

        return plot_cycles(self, path, units=units)


# ----------------------------------------------------------------------------- engine
class _Stream:
    """Carries samples and state from chunk to chunk."""

    def __init__(self, opts: CycleOptions, tracker: ang.AngleTracker, has: set[str],
                 speed_from_angle: bool, nb_mean: int, nb_speed: int,
                 on_block: Callable[[dict[str, np.ndarray]], None] | None = None) -> None:
        self.o = opts
        self.tracker = tracker
        self.has = has
        self.speed_from_angle = speed_from_angle
        self.nb_mean = nb_mean
        self.nb_speed = nb_speed
        self.span = TWO_PI * opts.revs_per_cycle
        self.carry: dict[str, np.ndarray] | None = None
        self.next_m: int | None = None
        self.dt: float | None = None
        # takes each block of finished cycles, then drops it; without one (the live
        # watcher) the blocks are listed in ``rows`` for the caller to take
        self.rows: list[dict[str, np.ndarray]] = []
        self.on_block = on_block if on_block is not None else self.rows.append
        self.speed_ctx: np.ndarray | None = None  # raw speed bins of recent cycles
        self.mean_ctx: dict[str, np.ndarray] = {}  # the last emitted cycle on the mean grid
        # the speed filter (None: off) and the cycles it reaches either side of a cycle
        self.speed_taps, reach = speed_filter(opts, nb_speed)
        self.hold = max(_HOLD, reach)
        self.context = max(_CONTEXT, reach)
        self.moments: dict[str, RunningMoments] = {}
        self.mean_n = 0
        self.curves: dict[str, list[np.ndarray]] = {"torque": [], "speed": []}
        self.n_curves = 0
        self.spikes = 0
        self.nan_filled = 0
        self.spike_scale: dict[str, float] = {}
        self.samples = 0
        self.cycle_no = 0
        # channel health (torqlog.signal.health)
        self.scales: dict[str, health.ChannelScale] = {}
        self.frozen_len: dict[str, int] = {}
        self.speed_ref: float | None = None
        self.prev_speed: float | None = None
        self.events: list[dict[str, Any]] = []
        self.event_count: dict[str, int] = {}
        self.stretches: list[tuple[float, float, str]] = []
        self.theta_offset = 0.0
        self.last_time: float | None = None
        self.last_theta: float | None = None
        self.durations = np.empty(0)
        self.dead: set[str] = set()
        self.last_speed_mean: float | None = None
        self.theta_max = -np.inf
        self.tails: dict[str, tuple[np.ndarray, np.ndarray]] = {}
        self.activity = np.empty(0)
        #: consumer of each chunk's clean cycles (cycle numbers, start, duration, curves)
        self.shape_sink: Callable[..., Any] | None = None
        self.shape_scores: list[tuple[np.ndarray, np.ndarray]] = []

    def feed(self, chunk: Chunk, final: bool) -> None:
        """Condition a chunk's channels, track its angle, and cut the cycles it completes."""
        t = chunk.time
        self.samples += len(t)
        if self.dt is None and len(t) > 1:
            self.dt = float(np.median(np.diff(t)))
        new: dict[str, np.ndarray] = {"time": t}
        fault = np.zeros(len(t), dtype=np.uint8)
        channels = dict(chunk.channels)
        for role in ("torque", "speed"):
            if role in chunk.channels:
                x, for_angle = self._condition(role, t, chunk.channels[role], fault)
                channels[role] = for_angle
                new[role] = x
        new["fault"] = fault
        theta = np.asarray(self.tracker.push(t, channels), dtype=np.float64)
        if self.tracker.source in ("angle", "counts"):
            self._angle_reversal(t, theta, fault)
        new["theta"] = self._anchor(t, theta)
        buf = new if self.carry is None else {
            k: np.concatenate((self.carry[k], new[k])) for k in new}
        if self.tracker.source == "index" and self.carry is not None:
            nc = len(self.carry["time"])
            head = buf["theta"][:nc]
            if np.isnan(head).any():
                buf["theta"][:nc] = self.tracker.angle_at(buf["time"][:nc]) + self.theta_offset
        self._process(buf, final)

    def _condition(self, role: str, t: np.ndarray, raw: np.ndarray, fault: np.ndarray
                   ) -> tuple[np.ndarray, np.ndarray]:
        """One channel's samples made usable, its faults marked in ``fault`` (see
        :mod:`torqlog.signal.health`); returns (conditioned, bridged-only for the angle)."""
        B = health.BITS
        inf = np.isinf(raw)
        if inf.any():
            raw = np.where(inf, np.nan, raw)
            fault[inf] |= B["nonfinite"]
            self._event(role, "nonfinite", t, inf)
        x, bad = cond.fill_nan(t, raw)
        if bad.any():
            long = cond.long_runs(bad & ~inf, cond.NAN_REPAIR_RUN)
            self.nan_filled += int((bad & ~inf).sum() - long.sum())
            fault[long] |= B["nan"]
            self._event(role, "nan", t, long)
        if role not in self.scales:
            self.scales[role] = health.ChannelScale.of(x)
        sc = self.scales[role]
        x = self._spike_runs(role, t, x, sc, fault)
        still = np.zeros(x.size, dtype=bool)
        if sc.high <= sc.low:  # one value from the start: a dead sensor or a set-point
            self.dead.add(role)
        if role in self.dead:
            return x, x
        if role == "speed":
            if self.speed_ref is None:
                self.speed_ref = health.running_speed(x)
            ref = self.speed_ref or 2.0 * health.MIN_RUNNING_SPEED  # standing so far
            drop, stop, rev = health.speed_state(x, ref, self.prev_speed)
            self.prev_speed = float(x[-1])
            if drop.any():
                lag = int(round(self.span / (ref * self.dt))) if self.dt else 0
                hist = self.carry[role] if self.carry is not None else None
                x = health.bridge_periodic(t, x, drop, lag, hist)
                fault[drop] |= B["dropout"]
                self._event(role, "dropout", t, drop)
            fault[stop] |= B["stop"]
            fault[rev] |= B["reversal"]
            still = stop
            if stop.any():
                self._record_stretches(t, x, stop, rev)
        if role not in self.frozen_len:  # runs this long are frozen (judged per cycle)
            per_rev = (TWO_PI / (self.speed_ref * self.dt)) if (
                self.speed_ref and self.dt) else None
            self.frozen_len[role] = health.frozen_run_length(sc, per_rev)
        for_angle = x
        if self.o.despike:
            if role not in self.spike_scale:
                self.spike_scale[role] = cond.spike_scale(x)
            x, one = cond.despike(x, scale=self.spike_scale[role])
            one &= ~still
            self.spikes += int(one.sum())
        return x, for_angle

    def _angle_reversal(self, t: np.ndarray, theta: np.ndarray, fault: np.ndarray) -> None:
        """A measured angle that runs back more than :data:`torqlog.signal.health.REVERSAL_ANGLE`
        behind its running maximum: the shaft turned backwards (jitter is far smaller)."""
        fin = np.where(np.isfinite(theta), theta, -np.inf)
        run = np.maximum.accumulate(np.concatenate(([self.theta_max], fin)))[1:]
        self.theta_max = float(run[-1])
        back = run - fin > health.REVERSAL_ANGLE
        back &= np.isfinite(fin)
        if back.any():
            fault[back] |= health.BITS["reversal"]
            s, e = health.runs(back)
            self.stretches.extend(zip(t[s].tolist(), t[e - 1].tolist(),
                                      ["reversal"] * s.size, strict=True))

    def _spike_runs(self, role: str, t: np.ndarray, x: np.ndarray,
                    sc: health.ChannelScale, fault: np.ndarray) -> np.ndarray:
        """Find spike runs in this chunk with the previous chunk's last samples in front,
        so a run across the chunk boundary is seen whole; repair them; a lone sample is
        counted as a one-sample spike, a run is flagged (also on the carried samples)."""
        k = health.SPIKE_RUN_MAX + 1
        tail = self.tails.get(role)
        n0 = 0 if tail is None else tail[1].size
        xx = x if tail is None else np.concatenate((tail[1], x))
        sp = health.spike_runs(xx, sc)
        if sp.any():
            tt = t if tail is None else np.concatenate((tail[0], t))
            xx = health.bridge(tt, xx, sp)
            lone = sp & ~cond.long_runs(sp, 1)
            self.spikes += int(lone.sum())
            sp &= ~lone
            self._event(role, "spikes", tt, sp)
            fault[sp[n0:]] |= health.BITS["spikes"]
            back = sp[:n0]
            if back.any() and self.carry is not None:
                m = min(n0, len(self.carry["time"]))
                if m:
                    self.carry["fault"][-m:][back[-m:]] |= health.BITS["spikes"]
                    self.carry[role][-m:] = np.where(back[-m:], xx[n0 - m:n0],
                                                     self.carry[role][-m:])
            x = xx[n0:]
        self.tails[role] = (t[-k:], x[-k:])
        return x

    def _event(self, role: str, kind: str, t: np.ndarray, mask: np.ndarray) -> None:
        """Count the faulty stretches of one kind and keep the first ones (start, end)."""
        if not mask.any():
            return
        s, e = health.runs(mask)
        self.event_count[kind] = self.event_count.get(kind, 0) + int(s.size)
        room = max(_MAX_EVENTS - len(self.events), 0)
        self.events.extend({"kind": kind, "channel": role, "start_s": a, "end_s": b}
                           for a, b in zip(t[s[:room]].tolist(), t[e[:room] - 1].tolist(),
                                           strict=True))

    def _record_stretches(self, t: np.ndarray, speed: np.ndarray, stop: np.ndarray,
                          rev: np.ndarray) -> None:
        """Non-running stretches of the speed channel: what happened, start, end [s]."""
        s, e = health.runs(stop)
        reversed_ = np.maximum.reduceat(rev, s)
        ref = self.speed_ref or 2.0 * health.MIN_RUNNING_SPEED
        rest = np.minimum.reduceat(np.abs(speed), s) < 0.05 * ref
        kind = np.where(reversed_, "reversal", np.where(
            rest, "stop", "run-down/run-up (below half the running speed)"))
        self.stretches.extend(zip(t[s].tolist(), t[e - 1].tolist(), kind.tolist(),
                                  strict=True))

    def _anchor(self, t: np.ndarray, theta: np.ndarray) -> np.ndarray:
        """Shift the angle after each gap back by whole cycles so at most one cycle
        boundary falls inside the gap: a long gap costs the cycle it interrupts (and the
        one before), and the cycles after it keep the phase their angle source gives.
        Records gaps longer than a cycle as non-running stretches."""
        theta = theta + self.theta_offset if self.theta_offset else theta
        prev_t, prev_th = self.last_time, self.last_theta
        self.last_time = float(t[-1])
        if self.dt is None or theta.size == 0:
            return theta
        tt = t if prev_t is None else np.concatenate(([prev_t], t))
        off = 0 if prev_t is None else 1
        for j in np.flatnonzero(np.diff(tt) > cond.GAP_FACTOR * self.dt):  # gaps are few
            i = int(j) + 1 - off  # index in theta of the first sample after the gap
            before = prev_th if i == 0 else float(theta[i - 1])
            after = float(theta[i])
            if before is None or not (math.isfinite(before) and math.isfinite(after)):
                continue
            nxt = self.span * (math.floor(before / self.span) + 1)
            if after >= nxt + self.span:
                shift = self.span * math.floor((after - nxt) / self.span)
                theta[i:] -= shift
                self.theta_offset -= shift
                self.stretches.append((float(tt[j]), float(tt[j + 1]), "gap"))
        fin = theta[np.isfinite(theta)]
        if fin.size:
            self.last_theta = float(fin[-1])
        return theta

    def _process(self, buf: dict[str, np.ndarray], final: bool) -> None:
        """Emit the complete cycles of the carried and new samples, holding back the
        look-ahead (none at the end); carry the rest to the next chunk."""
        theta = buf["theta"]
        finite = np.isfinite(theta)
        if not finite.any():
            self.carry = buf
            return
        first = int(np.argmax(finite))
        last = len(theta) - int(np.argmax(finite[::-1])) - 1
        if first > 0:  # before the first index edge: no angle yet, drop
            buf = {k: v[first:] for k, v in buf.items()}
            theta = buf["theta"]
            last -= first
        if self.tracker.source in ("angle", "counts", "speed"):
            # measured angles can jitter back; an integrated speed runs back on a reversal
            th = np.maximum.accumulate(np.where(np.isfinite(theta), theta, -np.inf))
        elif last + 1 < len(theta):  # integrated or interpolated: increasing by construction
            th = theta.copy()
        else:  # nothing to blank out: no copy
            th = theta
        th[last + 1:] = np.nan
        if self.next_m is None:
            self.next_m = math.ceil(th[0] / self.span - 1e-12)
        m_last = math.floor(th[last] / self.span)
        m_stop = m_last if final else m_last - self.hold
        n_emit = m_stop - self.next_m
        n_all = m_last - self.next_m
        if n_emit < 1:
            self.carry = buf
            return
        if n_all > len(theta):  # more cycles than samples: no real machine turns so fast
            raise DataError("the log's speed or angle implies more cycles than samples (a "
                            "damaged file, or the wrong unit); check the column's values and "
                            "unit")
        bounds_all = self.span * np.arange(self.next_m, m_last + 1, dtype=np.float64)
        seg = slice(0, last + 1)
        t, thv = buf["time"][seg], th[seg]
        self._emit(buf, t, thv, bounds_all, n_emit)
        cut = self.span * m_stop
        keep_from = max(int(np.searchsorted(thv, cut, side="right")) - 1, 0)
        self.carry = {k: v[keep_from:] for k, v in buf.items()}
        self.next_m = m_stop

    def _emit(self, buf: dict[str, np.ndarray], t: np.ndarray, th: np.ndarray,
              bounds_all: np.ndarray, n_emit: int) -> None:
        """Reduce the first ``n_emit`` complete cycles of ``buf`` to their figures and flags,
        hand them on as one block, and add the clean ones to the mean cycle.

        Steps: cut → time and mean speed → torque → sample faults → gaps → filtered
        speed → length, quiet torque, unsteady speed → flags → block → mean cycle.
        """
        sg_all = self._segments(th, bounds_all)
        sg = sg_all.head(n_emit)
        bounds = bounds_all[: n_emit + 1]
        tb = np.interp(bounds, th, t)
        duration = np.diff(tb)
        w_mean = self.span / duration
        row: dict[str, np.ndarray] = {
            "t_start_s": tb[:-1], "duration_s": duration, "speed_mean": w_mean}
        tq, ce = self._torque_figures(buf, t, th, bounds, sg, row)
        fault, clipped, frozen = self._sample_faults(buf, t, sg, n_emit)
        gap = self._gap_check(t, sg, n_emit)
        mine = self._speed_figures(buf, t, th, sg_all, bounds_all, n_emit, row,
                                   angles_from_speed=tq is None)
        length = self._length_check(duration)
        if ce is not None and ("speed" not in self.has or "speed" in self.dead):
            self._quiet_torque(ce, tb, fault)
        unsteady = self._steady_check(w_mean)
        if mine is not None:  # steady running ends a cycle at the speed it began with
            unsteady |= np.abs(mine[:, -1] - mine[:, 0]) > health.UNSTEADY_TOL * w_mean
        B = health.BITS
        row["flag"] = _flag_text(n_emit, (
            ("gap", gap), ("nan", (fault & B["nan"]) != 0), ("clipped", clipped),
            *((k, (fault & B[k]) != 0) for k in
              ("nonfinite", "spikes", "dropout", "stop", "reversal")),
            ("frozen", frozen), ("length", length), ("unsteady", unsteady)))
        row["cycle"] = self.cycle_no + 1 + np.arange(n_emit)
        self.cycle_no += n_emit
        self.on_block(row)
        self._add_clean(buf, t, th, bounds_all, sg_all, n_emit, tq, row)

    @staticmethod
    def _segments(th: np.ndarray, bounds_all: np.ndarray) -> en.Segments:
        """The samples of each complete cycle; refuses a cycle of fewer than two samples."""
        sg_all = en.Segments.build(th, bounds_all)
        if np.any(sg_all.counts < 2):
            raise DataError("fewer than two samples in a cycle: the sample rate is too low for "
                            "this speed, or the cycle source is wrong")
        return sg_all

    def _torque_figures(self, buf: dict[str, np.ndarray], t: np.ndarray, th: np.ndarray,
                        bounds: np.ndarray, sg: en.Segments, row: dict[str, np.ndarray]
                        ) -> tuple[np.ndarray | None, Any]:
        """Work, torque mean/peak/min, energy swing and the angles of least and most speed
        into ``row``; returns (torque samples, cycle energy), or (None, None) without torque."""
        tq = buf.get("torque")
        if tq is None:
            return None, None
        tq = tq[: len(t)]
        # the emitted cycles end before sample ``stop``: integrate no further
        end = min(sg.stop + 1, len(t))
        ce = en.cycle_energy(th[:end], tq[:end], bounds, sg)
        row.update(work=ce.work, torque_mean=ce.torque_mean, torque_peak=ce.torque_peak,
                   torque_min=ce.torque_min, energy_swing=ce.energy_swing)
        if self.o.torque_role == "load":
            row["angle_speed_min"], row["angle_speed_max"] = ce.angle_e_max, ce.angle_e_min
        else:
            row["angle_speed_min"], row["angle_speed_max"] = ce.angle_e_min, ce.angle_e_max
        return tq, ce

    def _sample_faults(self, buf: dict[str, np.ndarray], t: np.ndarray, sg: en.Segments,
                       n_emit: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """The sample fault bits OR-ed over each cycle, and the clipped and frozen cycles."""
        lo, stop = sg.lo, sg.stop
        fault_s = buf["fault"][lo:stop]
        fault = np.bitwise_or.reduceat(fault_s, sg.offsets)
        clipped = np.zeros(n_emit, dtype=bool)
        frozen = np.zeros(n_emit, dtype=bool)
        for role in ("torque", "speed"):
            if role in self.has and role not in self.dead:
                self._flat(buf[role][lo:stop], role, sg, fault_s, t[lo:stop], clipped,
                           frozen)
        return fault, clipped, frozen

    def _gap_check(self, t: np.ndarray, sg: en.Segments, n_emit: int) -> np.ndarray:
        """Cycles with a time step longer than GAP_FACTOR median steps: the cycle after the
        gap, and the one before when a boundary fell inside it."""
        gap = np.zeros(n_emit, dtype=bool)
        if self.dt is None:
            return gap
        limit = cond.GAP_FACTOR * self.dt
        lo, stop = sg.lo, sg.stop
        if lo == 0:
            big = np.flatnonzero(np.diff(t[:stop]) > limit) + 1
        else:
            big = np.flatnonzero(np.diff(t[lo - 1:stop]) > limit)
        gap[sg.cid[big]] = True
        gap[sg.cid[np.maximum(big - 1, 0)]] = True
        return gap

    def _speed_figures(self, buf: dict[str, np.ndarray], t: np.ndarray, th: np.ndarray,
                       sg_all: en.Segments, bounds_all: np.ndarray, n_emit: int,
                       row: dict[str, np.ndarray], angles_from_speed: bool
                       ) -> np.ndarray | None:
        """Speed per angle bin, low-passed in the angle domain: each emitted cycle's highest
        and lowest speed into ``row`` (and where they fall, without torque); returns the
        emitted cycles' filtered bins, or None without a speed."""
        if "speed" not in self.has and not self.speed_from_angle:
            return None
        if "speed" in self.has:
            sp_bins_all = sg_all.bins(buf["speed"][: len(t)], self.nb_speed)
        else:
            sp_bins_all = en.speed_bins_from_angle(t, th, bounds_all, self.nb_speed)
        ctx = self.speed_ctx
        series = sp_bins_all if ctx is None else np.vstack((ctx, sp_bins_all))
        nctx = 0 if ctx is None else ctx.shape[0]
        filled = en.fill_rows(series)
        if self.speed_taps is not None:
            cutoff = self.o.speed_cutoff_orders / (self.nb_speed / 2.0)
            smooth = cond.lowpass(filled.ravel(), cutoff, taps=self.speed_taps
                                  ).reshape(filled.shape)
        else:
            smooth = filled
        mine = smooth[nctx: nctx + n_emit]
        # the last emitted cycles (raw) are the next chunk's context: the filter reaches
        # no further back, so the figures do not depend on where chunks end
        self.speed_ctx = series[max(0, nctx + n_emit - self.context): nctx + n_emit]
        if angles_from_speed:
            centre = (np.arange(self.nb_speed) + 0.5) * self.span / self.nb_speed
            row["angle_speed_min"] = centre[np.argmin(mine, axis=1)]
            row["angle_speed_max"] = centre[np.argmax(mine, axis=1)]
        row["speed_max"], row["speed_min"] = mine.max(axis=1), mine.min(axis=1)
        return mine

    def _quiet_torque(self, ce: Any, tb: np.ndarray, fault: np.ndarray) -> None:
        """No speed to tell a stop by: a cycle whose torque hardly moves is not running
        (marked as a stop in ``fault`` and listed as a non-running stretch)."""
        quiet = self._quiet(ce.torque_peak - ce.torque_min)
        if quiet.any():
            fault[quiet] |= health.BITS["stop"]
            self.stretches.extend(
                (float(tb[k]), float(tb[k + 1]), "stop (torque quiet; no speed channel)")
                for k in np.flatnonzero(quiet))

    def _add_clean(self, buf: dict[str, np.ndarray], t: np.ndarray, th: np.ndarray,
                   bounds_all: np.ndarray, sg_all: en.Segments, n_emit: int,
                   tq: np.ndarray | None, row: dict[str, np.ndarray]) -> None:
        """The clean cycles of a block on the mean-cycle grid: into the running mean cycle,
        the plot curves and the cycle-shape check."""
        clean = row["flag"] == ""
        parts = self._mean_grid(buf, t, th, bounds_all, sg_all, n_emit, tq)
        if not clean.any():
            return
        for k, a in parts.items():
            a = a[clean]
            self.moments.setdefault(k, RunningMoments()).add(a)
            room = MAX_CURVES - self.n_curves
            if room > 0:
                self.curves[k].append(a[:room])
        if self.shape_sink is not None:
            self.shape_sink(row["cycle"][clean], row["t_start_s"][clean],
                            row["duration_s"][clean], {k: a[clean] for k, a in parts.items()})
        self.mean_n += int(clean.sum())
        self.n_curves = min(MAX_CURVES, self.n_curves + int(clean.sum()))

    def _mean_grid(self, buf: dict[str, np.ndarray], t: np.ndarray, th: np.ndarray,
                   bounds_all: np.ndarray, sg_all: en.Segments, n_emit: int,
                   tq: np.ndarray | None) -> dict[str, np.ndarray]:
        """Torque and speed of the emitted cycles on the mean-cycle grid, empty bins filled
        by interpolation between the nearest samples — across the cycle before (kept from
        the last block) and the one after (held back), so a chunk's ends change nothing."""
        raw: dict[str, np.ndarray] = {}
        if tq is not None:
            raw["torque"] = sg_all.bins(tq, self.nb_mean, sequential=False)
        if "speed" in self.has:
            raw["speed"] = sg_all.bins(buf["speed"][: len(t)], self.nb_mean, sequential=False)
        elif self.speed_from_angle:
            raw["speed"] = en.speed_bins_from_angle(t, th, bounds_all, self.nb_mean)
        parts = {}
        for k, a in raw.items():
            prev = self.mean_ctx.get(k)
            series = a if prev is None else np.vstack((prev, a))
            off = 0 if prev is None else 1
            parts[k] = en.fill_rows(series)[off: off + n_emit]
            self.mean_ctx[k] = a[n_emit - 1: n_emit]
        return parts

    def _flat(self, x: np.ndarray, role: str, sg: en.Segments, fault: np.ndarray,
              t: np.ndarray, clipped: np.ndarray, frozen: np.ndarray) -> None:
        """Flat runs of one channel over the emitted cycles: at a cycle's peak or minimum
        (≥ CLIP_RUN equal samples) the cycle is clipped; elsewhere, longer than the noise
        makes plausible (``frozen_len``), frozen. A standing machine is neither."""
        i = cond.flat_run_index(x)  # samples in runs of ≥ CLIP_RUN equal values (few)
        if not i.size:
            return
        cid, off = sg.cid, sg.offsets
        top, bot = np.maximum.reduceat(x, off), np.minimum.reduceat(x, off)
        stop = health.BITS["stop"]
        c, v = cid[i], x[i]
        at = (v == top[c]) | (v == bot[c])
        moving = (fault[i] & stop) == 0
        hit = at & moving
        if hit.any():
            clipped[c[hit]] = True
            # a rail under noise: the samples that reach it tie with the extreme without
            # forming one run; counted only once a run at an extreme was seen
            n_tie = max(self.frozen_len.get(role, 0), 2 * cond.CLIP_RUN)
            still = (fault & stop) != 0
            ties = np.add.reduceat((x == sg.spread(top)) & ~still, off) + \
                np.add.reduceat((x == sg.spread(bot)) & ~still, off)
            clipped |= ties >= n_tie
        n = self.frozen_len.get(role)
        if not n:
            return
        # frozen: runs of ≥ n equal samples away from the cycle's extremes
        brk = np.flatnonzero((np.diff(i) != 1) | (v[1:] != v[:-1])) + 1
        first = np.concatenate(([0], brk))
        length = np.diff(np.append(first, i.size))
        sel = np.repeat(length >= n, length) & ~at & moving
        if not sel.any():
            return
        frozen[c[sel]] = True
        mask = np.zeros(x.size, dtype=bool)
        mask[i[sel]] = True
        self._event(role, "frozen", t, mask)

    def _quiet(self, torque_range: np.ndarray) -> np.ndarray:
        """Cycles whose torque range [N*m] is below :data:`torqlog.signal.health.QUIET_SHARE` of
        the running median (last 50 cycles): the machine stood or idled unloaded."""
        hist = np.concatenate((self.activity, torque_range))
        self.activity = hist[-50:]
        return torque_range < health.QUIET_SHARE * float(np.median(hist))

    def _steady_check(self, speed_mean: np.ndarray) -> np.ndarray:
        """Cycles whose mean speed [rad/s] differs from the previous cycle's by more than
        :data:`torqlog.signal.health.UNSTEADY_TOL`: the machine is running up or down."""
        prev = np.concatenate(([self.last_speed_mean if self.last_speed_mean else
                                speed_mean[0]], speed_mean[:-1]))
        self.last_speed_mean = float(speed_mean[-1])
        return np.abs(speed_mean / prev - 1.0) > health.UNSTEADY_TOL

    def _length_check(self, duration: np.ndarray) -> np.ndarray:
        """Cycles off the running median length (last 50 cycles) by more than
        :data:`torqlog.signal.health.CYCLE_LENGTH_TOL`: merged or split cycles, run-downs."""
        hist = np.concatenate((self.durations, duration))
        ref = float(np.median(hist))
        self.durations = hist[-50:]
        return np.abs(duration / ref - 1.0) > health.CYCLE_LENGTH_TOL


def _flag_text(n: int, masks: Any) -> np.ndarray:
    """Each cycle's flag: the names of its faults joined by "+" in the order given ("" when
    clean); ``masks`` is a sequence of (name, mask over the ``n`` cycles)."""
    flags = np.full(n, "", dtype=object)
    for name, mask in masks:
        if mask.any():
            flags[mask] = np.where(flags[mask] == "", name, flags[mask] + "+" + name)
    return flags


def _recycle_temporaries() -> None:
    """Let the C allocator recycle the chunk-sized temporaries instead of faulting them in.

    Each chunk makes a few dozen temporary arrays of about 1 MB. glibc's malloc serves a
    block above its mmap threshold (128 KiB at start) with fresh pages, and gives back
    free memory at the top of its heap beyond twice that threshold, so every chunk paid
    page faults for all its temporaries (~2 ms a chunk, a quarter of the computation,
    measured on a 10 M-row log). Freeing one block that was served by mmap raises the
    threshold to that block's size (the dynamic threshold described in mallopt(3));
    after that the temporaries are reused from the heap. The block is never touched, so
    it costs no memory; with another allocator this does nothing.
    """
    np.empty(_WARM_BLOCK_BYTES, dtype=np.uint8)


def _tracker_for(source: str, opts: CycleOptions, first: Chunk, path: str
                 ) -> tuple[ang.AngleTracker, list[str], dict[str, Any]]:
    """The angle tracker of a cycle source (the period estimated from the first chunk when
    the source is ``"period"``), with its notes and the options it adds to the record."""
    notes: list[str] = []
    extra: dict[str, Any] = {}
    period = None
    if source == "period":
        sig = first.channels.get("torque", first.channels.get("speed"))
        n = min(len(sig), 1 << 19)
        t = first.time[:n]
        sig = np.where(np.isinf(sig[:n]), np.nan, sig[:n])
        if not np.isnan(sig).all():  # spike runs would swamp the autocorrelation
            sig = cond.fill_nan(t, sig)[0]
            sig = health.bridge(t, sig, health.spike_runs(sig, health.ChannelScale.of(sig)))
        est = ang.estimate_period(t, sig, path=path)
        period = est.period
        extra = {"period_s": est.period, "period_confidence": round(est.confidence, 4)}
        notes.append(f"no speed, angle or index channel: cycle period estimated from the "
                     f"signal as {est.period:.6g} s (autocorrelation peak "
                     f"{est.confidence:.2f}); give --speed-rpm or a speed channel to be sure")
    tracker = ang.AngleTracker(source, pulses_per_rev=opts.pulses_per_rev,
                               nominal_speed=opts.nominal_speed, period=period,
                               revs_per_cycle=opts.revs_per_cycle)
    return tracker, notes, extra


def analyse_cycles(path: str | Path, options: CycleOptions | None = None, *,
                   roles: dict[str, str] | None = None, units: dict[str, str] | None = None,
                   rate: float | None = None, start: str | None = None,
                   progress: Callable[[float], None] | None = None,
                   anomaly: Any = True, shape_model: Any = None,
                   keep_rows: bool = True, sink: CycleSink | None = None,
                   quantile_budget: int = DEFAULT_QUANTILE_BUDGET,
                   sketch_error: float = DEFAULT_SKETCH_ERROR) -> CycleResult:
    """Split a log into cycles and compute the per-cycle figures, streaming.

    The state kept per cycle is the summary's (running sums; values for exact quantiles
    up to ``quantile_budget`` clean cycles, a relative-error sketch beyond) and, with
    ``keep_rows``, the per-cycle table in compact typed columns. With ``keep_rows=False``
    and a ``sink`` memory does not grow with the number of cycles: each block of finished
    cycles goes to the sink (a file written as the cycles complete) and is dropped.

    Parameters
    ----------
    path : str or Path
        The logger export (CSV, CSV.gz, Parquet).
    options : CycleOptions, optional
        Cycle-stage options (defaults stated in :class:`CycleOptions`).
    roles, units, rate, start
        Reading options, as for :func:`torqlog.io.ingest.sniff_layout`.
    progress : callable, optional
        Called after each chunk with the share of the file read (0 to 1).
    keep_rows : bool
        Keep every cycle's row (``columns``, ``table``); False keeps the summary, mean
        cycle and plot curves only.
    sink : CycleSink, optional
        Receives ``start(source, options)`` before the first block, ``write(block)`` for
        each block of finished cycles (columns :data:`COLUMNS`) and ``finish(result)``.
    quantile_budget : int
        Clean cycles held for exact quantiles [count] (recorded in the options).
    sketch_error : float
        Relative error bound of the quantile sketch used past the budget [–].
    anomaly : AnomalyOptions or bool
        The cycle-shape check (:mod:`torqlog.signal.anomaly`): options, True for the defaults,
        False to leave it out (``anomaly`` columns then empty).
    shape_model : ShapeModel, optional
        Score against this reference model instead of learning one from the log.

    Returns
    -------
    CycleResult

    Raises
    ------
    DataError
        Too few cycles, no periodicity, a missing channel for the chosen source.

    References
    ----------
    Budynas & Nisbett, *Shigley's*, 10th ed., sec. 16-12.
    """
    o = options or CycleOptions()
    reader = LogReader(path, block_rows=o.block_rows, roles=roles, units=units, rate=rate,
                       start=start, read_ahead=o.read_ahead)
    lay = reader.layout
    plan = _plan(lay, o)
    it = iter(reader)
    first = next(it)
    tracker, notes, extra = _tracker_for(plan.source, o, first, lay.path)
    out = _Outputs(lay, o, plan, extra, keep_rows, sink, quantile_budget, sketch_error)
    st = out.st = plan.stream(o, tracker, out.on_block)
    monitor = _shape_monitor(st, o, anomaly, shape_model, out.take_scores)
    out.expect_scores(monitor)
    _run(reader, st, first, it, progress)
    _check_cycle_count(st, lay.path, plan.source, o)
    if monitor is not None:
        out.take_scores(monitor.finish())
    out.held.close()
    notes += _reading_notes(lay, o, plan, st)
    res = _assemble(out, st, monitor, notes)
    if sink is not None:
        sink.finish(res)
    return res


def shape_model_from_log(path: str | Path, cycle_options: CycleOptions | None = None,
                         options: Any = None, max_cycles: int = 2000,
                         **read: Any) -> Any:
    """Learn the cycle-shape model from a known-good reference log (its first clean cycles).

    The reference log runs through the same cycle engine as the logs it will judge, with
    the shape check learning from up to ``max_cycles`` clean cycles; the model learned is
    returned (:class:`torqlog.signal.anomaly.ShapeModel`, its ``source`` naming the log).

    Parameters
    ----------
    path : str or Path
        The reference log.
    cycle_options : CycleOptions, optional
    options : AnomalyOptions, optional
        The shape check's options (:class:`torqlog.signal.anomaly.AnomalyOptions`).
    max_cycles : int
        Most clean cycles learned from [count] (a bounded buffer).
    **read
        Reading options, as for :func:`analyse_cycles`.

    Returns
    -------
    ShapeModel

    Raises
    ------
    DataError
        Fewer clean cycles than the model needs, stating the count.
    """
    from dataclasses import replace

    from torqlog.signal import anomaly as an

    o = options or an.AnomalyOptions()
    res = analyse_cycles(path, cycle_options, anomaly=replace(o, learn_cycles=max_cycles),
                         keep_rows=False, **read)
    if res.shape_model is None:
        why = res.anomaly.notes[0] if res.anomaly is not None and res.anomaly.notes else ""
        raise DataError(f"{path}: cannot serve as shape reference: {why}")
    return replace(res.shape_model, source=f"reference log {path}")


@dataclass(frozen=True)
class _Plan:
    """What a log holds and how its cycles are cut, chosen once from its layout."""

    source: str  #: the cycle source (:data:`torqlog.signal.angle.CYCLE_SOURCES`)
    has: frozenset[str]  #: the channels of {"torque", "speed"} present
    speed_from_angle: bool  #: no speed channel: speed from a measured angle
    nb_speed: int  #: speed bins per cycle for the filtered max − min
    nb_mean: int  #: bins per cycle of the mean cycle and the curves

    def stream(self, o: CycleOptions, tracker: ang.AngleTracker,
               on_block: Callable[[dict[str, np.ndarray]], None] | None = None) -> _Stream:
        """A cycle engine for this log."""
        return _Stream(o, tracker, set(self.has), self.speed_from_angle, self.nb_mean,
                       self.nb_speed, on_block)


def speed_bins_per_cycle(o: CycleOptions) -> int:
    """Speed bins per cycle [count]: 8 per order of the cut-off (32 to 2048), or two per
    degree with the filter off."""
    if o.speed_cutoff_orders:
        return int(min(2048, max(32, 8 * o.speed_cutoff_orders)))
    return 720 * o.revs_per_cycle


def speed_filter(o: CycleOptions, nb_speed: int) -> tuple[np.ndarray | None, int]:
    """The taps of the speed low-pass on the ``nb_speed``-bin angle grid (None when off or
    when the cut-off is at or above the grid's Nyquist order) and its reach [cycles]: how
    many whole cycles its half-length spans, so that context and look-ahead cover it."""
    if not o.speed_cutoff_orders:
        return None, 0
    cutoff = o.speed_cutoff_orders / (nb_speed / 2.0)
    if cutoff >= 1.0:
        return None, 0
    taps = cond.lowpass_taps(cutoff)
    return taps, math.ceil((taps.size // 2) / nb_speed)


def _plan(lay: Layout, o: CycleOptions) -> _Plan:
    """The cycle source, channels and angle grids of a log; refuses a log with nothing
    to compute."""
    roles_present = set(lay.roles)
    source = ang.pick_cycle_source(roles_present, nominal_speed=o.nominal_speed,
                                   forced=o.cycle_source, path=lay.path)
    has = roles_present & {"torque", "speed"}
    if not has and "angle" not in roles_present and "counts" not in roles_present:
        raise DataError(f"{lay.path}: no torque or speed channel (and no angle or encoder to "
                        "derive speed from): nothing to compute; name the columns with "
                        "--torque COL / --speed COL")
    speed_from_angle = "speed" not in has and source in ("angle", "counts")
    return _Plan(source, frozenset(has), speed_from_angle, speed_bins_per_cycle(o),
                 360 * o.revs_per_cycle)


class _Outputs:
    """Where each block of finished cycles goes — held until the shape scores of its cycles
    are known (:class:`torqlog.signal.cycle_table.ScoredBlocks`), then to the running
    summary, the kept rows (or only the columns the health checks read) and the caller's
    sink, in cycle order — and the options record."""

    def __init__(self, lay: Layout, o: CycleOptions, plan: _Plan, extra: dict[str, Any],
                 keep_rows: bool, sink: CycleSink | None, quantile_budget: int,
                 sketch_error: float) -> None:
        self.lay, self.o, self.plan, self.extra, self.sink = lay, o, plan, extra, sink
        self.budget, self.sketch_error = quantile_budget, sketch_error
        self.stats = SummaryStream(quantile_budget, sketch_error)
        self.store = ColumnStore() if keep_rows else None
        # the running-segment and refusal checks read three columns of every cycle (17 bytes
        # a cycle); without kept rows only those are stored
        self.running = ColumnStore()
        self.opts: dict[str, Any] = {}
        self.started = False
        self.st: _Stream | None = None  # the engine feeding this (its sample step, dead channels)
        self.held = ScoredBlocks(self.release)
        self.monitor: Any = None

    def record(self) -> dict[str, Any]:
        """Every option that made the result (fixed at the first call)."""
        if not self.opts:
            dt = self.st.dt if self.st is not None else None
            self.opts.update(asdict(self.o))
            self.opts.update({"cycle_source": self.plan.source,
                              "speed_cutoff_bins_per_cycle": self.plan.nb_speed,
                              "angle_grid_bins": self.plan.nb_mean,
                              "sample_rate_hz": 1.0 / dt if dt else None, **self.extra,
                              "quantile_budget_cycles": int(self.budget),
                              "sketch_relative_error": float(self.sketch_error)})
            self.opts.pop("block_rows")
            self.opts.pop("read_ahead")
        return self.opts

    def expect_scores(self, monitor: Any) -> None:
        """Hold the blocks for the scores of the shape check ``monitor`` (None: off)."""
        self.monitor = monitor
        if monitor is None:
            self.held.stop_waiting()

    def take_scores(self, scored: list[tuple[np.ndarray, np.ndarray]]) -> None:
        """Shape scores as the monitor gives them: (cycle numbers, scores) pairs."""
        self.held.add_scores(scored)
        if self.monitor is not None and self.monitor.failed:  # no model: none will come
            self.held.stop_waiting()

    def on_block(self, row: dict[str, np.ndarray]) -> None:
        """A block of finished cycles: held until its shape scores are known."""
        dead = self.st.dead if self.st is not None else set()
        self.held.add(_block_columns(row, self.lay, self.o, dead))

    def release(self, block: dict[str, Any]) -> None:
        """A scored block: to the summary, the kept rows and the sink."""
        self.stats.add(block)
        if self.store is not None:
            self.store.add({k: v for k, v in block.items() if k != "start_time"})
        else:
            self.running.add({k: block[k] for k in ("t_start_s", "duration_s", "flag")})
        if self.sink is not None:
            if not self.started:
                self.started = True
                self.sink.start(self.lay.path, self.record())
            self.sink.write(block)

    def health_columns(self) -> dict[str, np.ndarray]:
        """Start, duration and flag of every cycle (from the kept rows when kept)."""
        return (self.store or self.running).columns()


def _run(reader: LogReader, st: _Stream, first: Chunk, rest: Any,
         progress: Callable[[float], None] | None) -> None:
    """Feed every chunk to the engine (the last one marked final), reporting progress."""
    _recycle_temporaries()
    pending = first
    try:
        for chunk in chain(rest, [None]):
            st.feed(pending, final=chunk is None)
            pending = chunk
            if progress is not None:
                progress(reader.fraction_read())
    except DataError as exc:  # the cycle stage does not know the file: name it here
        raise naming_file(exc, reader.layout.path) from None


def _check_cycle_count(st: _Stream, path: str, source: str, o: CycleOptions) -> None:
    """Refuse a log of fewer than two complete cycles."""
    if st.cycle_no < 2:
        raise DataError(f"{path}: the log holds {st.cycle_no} complete cycle(s); at least 2 "
                        f"are needed — record a longer log (cycle source {source!r}, "
                        f"{o.revs_per_cycle} rev per cycle)")


def _reading_notes(lay: Layout, o: CycleOptions, plan: _Plan, st: _Stream) -> list[str]:
    """What the reader should know about the channels: assumed units, missing channels,
    filled samples, replaced spikes, dead sensors."""
    notes = []
    for col in lay.columns:
        if col.role in ("time", "torque", "speed", "angle") and col.unit_source == "assumed":
            notes.append(f"column {col.name!r} states no unit: {col.role} taken as "
                         f"{col.unit}; if that is wrong give --{col.role}-unit")
    if "torque" not in plan.has:
        notes.append("no torque channel: energy swing " + (
            "from ½·I·(ω_max² − ω_min²) with the given inertia" if o.inertia else
            "needs the inertia (--inertia or [machine] inertia_kgm2); left empty"))
    if "speed" not in plan.has and not plan.speed_from_angle:
        notes.append("no speed channel (and no angle/encoder): Cs left empty")
    if st.nan_filled:
        notes.append(f"{st.nan_filled} isolated missing sample(s) (runs of at most "
                     f"{cond.NAN_REPAIR_RUN}) filled by linear interpolation; longer runs "
                     "flag their cycle")
    if st.spikes:
        notes.append(f"{st.spikes} one-sample spike(s) replaced by their neighbours' mean")
    for role in sorted(st.dead):
        notes.append(f"the {role} channel holds one value from the start (a dead sensor or "
                     "a set-point, not a measurement)" + (
                         ": cycles cut at that speed as if it were constant, Cs left empty, "
                         "and the energy swing off by up to about Cs (the angle ignores the "
                         "speed's swing)" if role == "speed"
                         else ""))
    return notes


def _assemble(out: _Outputs, st: _Stream, monitor: Any, notes: list[str]) -> CycleResult:
    """The result: health checks and summary, kept rows with their shape scores, mean
    cycle, curves, the shape check's findings and the options record."""
    lay = out.lay
    health_summary = _health(st, out.health_columns(), lay.path, out.plan.source)
    summary = out.stats.result(spikes=st.spikes, samples=st.samples, **health_summary)
    mean_cycle = _mean_cycle(st)
    curves = {k: np.vstack(v) for k, v in st.curves.items() if v}
    table = _stored_columns(out.store, lay) if out.store is not None else {}
    scored, abnormal = out.held.scored, out.held.abnormal
    summary["anomaly"] = {"scored": scored, "abnormal": abnormal,
                          "rate": abnormal / scored if scored else None}
    shape = _shape_findings(monitor, st, out.stats, notes)
    return CycleResult(lay.path, table, summary, mean_cycle, curves, out.record(), lay, notes,
                       anomaly=shape,
                       shape_model=monitor.model if monitor is not None else None,
                       rows_kept=out.store is not None, stats=out.stats)


def _shape_findings(monitor: Any, st: _Stream, stats: SummaryStream, notes: list[str]) -> Any:
    """The cycle-shape check's result (None when off); why it was not checked, and a
    sampling too coarse for its bins, go into ``notes``."""
    if monitor is None:
        return None
    shape = monitor.result()
    notes += [f"cycle shape not checked: {n}" for n in shape.notes]
    dur = stats.keepers["duration_s"].median() or float("nan")
    per_bin = dur / st.dt / monitor.bins if st.dt else 9.0
    if shape.scored and per_bin < 2.0:
        notes.append(f"cycle shape: {per_bin:.2g} samples per "
                     f"{360 // monitor.o.bins_per_rev}° model bin (at least 2 are "
                     "needed); where the cycle's sampling moves expect false alarms: "
                     "log faster")
    return shape


def row_dicts(columns: dict[str, np.ndarray]) -> list[dict[str, Any]]:
    """Rows of per-cycle columns as JSON-ready dicts (NaN and NaT become None)."""
    cols = []
    for name in COLUMNS:
        v = columns[name]
        if name == "start_time":
            cols.append([None if _isnat(x) else _iso(x) for x in v])
        elif v.dtype.kind == "f":
            cols.append([None if x != x else x for x in v.tolist()])
        else:
            cols.append(v.tolist())
    return [dict(zip(COLUMNS, r, strict=True)) for r in zip(*cols, strict=True)]


def _shape_monitor(st: _Stream, o: CycleOptions, anomaly: Any, model: Any,
                   take: Callable[[list[Any]], None]) -> Any:
    """Attach the cycle-shape check (torqlog.signal.anomaly) to the stream, or None when off;
    ``take`` gets each list of (cycles, scores) as the monitor scores them."""
    if anomaly is False and model is None:
        return None
    from torqlog.signal import anomaly as an

    chans = set(st.has) | ({"speed"} if st.speed_from_angle else set())
    opts = anomaly if isinstance(anomaly, an.AnomalyOptions) else an.AnomalyOptions()
    monitor = an.ShapeMonitor(opts, o.revs_per_cycle, chans, model)

    def sink(cycles: np.ndarray, t_start: np.ndarray, duration: np.ndarray,
             curves: dict[str, np.ndarray]) -> None:
        take(monitor.push(cycles, t_start, duration, curves))

    st.shape_sink = sink
    return monitor


def _health(st: _Stream, table: dict[str, np.ndarray], path: str, source: str
            ) -> dict[str, Any]:
    """Faults, non-running stretches and running segments of a log (summary keys);
    refuses a log with no segment of two clean cycles, or one that is not cyclic."""
    not_running, segs = health.running_segments(
        st.stretches, table["t_start_s"], table["duration_s"], table["flag"],
        join=2.0 * (st.dt or 0.0))
    health.refuse_without_clean_cycles(path, table["flag"], not_running)
    share = float("nan")
    for k in ("torque", "speed"):
        rm = st.moments.get(k)
        if rm is not None and rm.mean is not None and k not in st.dead:
            # the sums the share is defined on, from the running moments
            s1 = rm.mean * rm.n
            s2 = rm.m2 + rm.n * rm.mean * rm.mean
            share = health.cyclic_share(s1, s2, st.mean_n)
            health.refuse_if_not_cyclic(path, share, st.mean_n, k, source)
            break
    return {"cyclic_share": None if share != share else round(share, 4),
            "faults": {k: st.event_count[k] for k in health.BITS if k in st.event_count},
            "fault_list": st.events, "not_running": not_running, "segments": segs}


def _isnat(x: Any) -> bool:
    """A missing time stamp (None, NaT or NaN)."""
    return x is None or (isinstance(x, np.datetime64) and bool(np.isnat(x))) or x != x


def _iso(x: Any) -> str:
    """ISO-8601 text of a time stamp, as pandas.Timestamp.isoformat writes it. A start time
    exists only when the file or the options gave one, and pandas parsed it then."""
    import pandas as pd

    return pd.Timestamp(x).isoformat()


def _block_columns(cols: dict[str, np.ndarray], lay: Layout, o: CycleOptions,
                   dead: set[str]) -> dict[str, np.ndarray]:
    """The output columns (:data:`COLUMNS`, SI converted at this edge) of a block of cycles."""
    n = cols["cycle"].size
    nan = np.full(n, np.nan)
    wmean = cols["speed_mean"]
    wmax, wmin = cols.get("speed_max", nan), cols.get("speed_min", nan)
    if "speed" in dead:  # a constant channel cannot tell the fluctuation
        wmax = wmin = nan
    cs = en.coefficient_of_fluctuation(wmax, wmin, wmean, mean=o.cs_mean)
    de = cols.get("energy_swing")
    if de is None:
        de = 0.5 * o.inertia * (wmax**2 - wmin**2) if o.inertia else nan
        cs_pred = nan
    else:
        cs_pred = de / (o.inertia * wmean**2) if o.inertia else nan
    start = _start_times(cols["t_start_s"], lay)
    deg = 180.0 / math.pi
    return {
        "cycle": cols["cycle"].astype(np.int64),
        "t_start_s": cols["t_start_s"],
        "start_time": start,
        "duration_s": cols["duration_s"],
        "speed_mean_rpm": wmean * RPM,
        "speed_min_rpm": wmin * RPM,
        "speed_max_rpm": wmax * RPM,
        "torque_mean_Nm": cols.get("torque_mean", nan),
        "torque_peak_Nm": cols.get("torque_peak", nan),
        "torque_min_Nm": cols.get("torque_min", nan),
        "work_J": cols.get("work", nan),
        "energy_swing_J": de,
        "angle_speed_min_deg": cols.get("angle_speed_min", nan) * deg,
        "angle_speed_max_deg": cols.get("angle_speed_max", nan) * deg,
        "cs": cs,
        "cs_constant_drive": cs_pred,
        "flag": cols["flag"],
        "anomaly": np.zeros(n, dtype=bool),  # scored later: filled into kept rows at the end
        "anomaly_score": np.full(n, np.nan),
    }


def _start_times(t_start: np.ndarray, lay: Layout) -> Any:
    """Absolute start of each cycle (NaT without a start time in the file or options)."""
    if lay.start is None:
        return np.full(t_start.size, np.datetime64("NaT"), dtype="datetime64[ns]")
    import pandas as pd  # the file or the options gave a time: pandas is loaded

    return lay.start + pd.to_timedelta(t_start, unit="s")  # keeps the zone


def _stored_columns(store: ColumnStore, lay: Layout) -> dict[str, np.ndarray]:
    """Every kept row, in :data:`COLUMNS` order."""
    cols = store.columns()
    cols["start_time"] = _start_times(cols["t_start_s"], lay)
    return {k: cols[k] for k in COLUMNS}


def summarise(table: Any, *, quantile_budget: int = DEFAULT_QUANTILE_BUDGET,
              sketch_error: float = DEFAULT_SKETCH_ERROR, **extra: Any) -> dict[str, Any]:
    """Summary over the clean cycles of a per-cycle table.

    Parameters
    ----------
    table : pandas.DataFrame or mapping of str to ndarray
        The per-cycle table (columns :data:`COLUMNS`).

    Returns
    -------
    dict
        ``cycles`` (clean count), ``cycles_total``, ``flagged``, ``cycle_rate_per_min``,
        ``energy_swing_J`` and ``cs`` ({median, p95 (linear interpolation), max}),
        ``torque_peak_Nm_p99``, ``speed_mean_rpm``, ``work_J_mean``, ``torque_mean_Nm``,
        ``flags`` (count of each reason), ``quantiles`` (exact, or the sketch and its
        relative error bound past ``quantile_budget`` clean cycles); NaN values are left
        out of each figure. :func:`analyse_cycles` forms the same summary block by block.
    """
    acc = SummaryStream(quantile_budget, sketch_error)
    acc.add({k: np.asarray(table[k]) for k in ("flag", "energy_swing_J", "cs", "torque_peak_Nm",
                                               "duration_s", "speed_mean_rpm", "work_J",
                                               "torque_mean_Nm")})
    out = acc.result(**extra)
    if "anomaly_score" in table:
        sc = np.asarray(table["anomaly_score"], dtype=np.float64)
        scored = int(np.isfinite(sc).sum())
        bad = int((sc > 1.0).sum())
        out["anomaly"] = {"scored": scored, "abnormal": bad,
                          "rate": bad / scored if scored else None}
    return out


def _mean_cycle(st: _Stream) -> dict[str, np.ndarray]:
    """The running (Welford) mean cycle and its spread on the angle grid."""
    nb = st.nb_mean
    a = (np.arange(nb) + 0.5) * st.span / nb
    df = {"angle": a}
    for k in ("torque", "speed"):
        rm = st.moments.get(k)
        if rm is not None and rm.mean is not None and k not in st.dead:
            df[k + "_mean"], df[k + "_sd"] = rm.mean, rm.std()
        else:
            df[k + "_mean"] = df[k + "_sd"] = np.full(nb, np.nan)
    return df


def _columns(st: _Stream, lay: Layout, o: CycleOptions) -> dict[str, np.ndarray]:
    """The listed blocks of a stream without a block handler (the live watcher), as one
    set of output columns."""
    rows = {k: np.concatenate([r[k] for r in st.rows]) for k in st.rows[0]}
    out = _block_columns(rows, lay, o, st.dead)
    first = int(out["cycle"][0])
    for c, sc in st.shape_scores:  # cycle numbers run 1..n
        i = np.asarray(c) - first
        ok = (i >= 0) & (i < out["cycle"].size)
        out["anomaly_score"][i[ok]] = np.asarray(sc, dtype=np.float64)[ok]
    out["anomaly"] = out["anomaly_score"] > 1.0
    return out
