"""Per-group running summaries of cycles, folded block by block and merged across files.

A trend reduces the cycles of many logs to one row per machine and group (shift, day, hour
or file). Instead of a table of every cycle, each group keeps the running summary of the
cycle stage (:class:`torqlog.signal.cycle_table.SummaryStream`: counts, flag counts,
running sums for means, exact quantiles while the group's clean cycles fit a budget and a
relative-error sketch beyond, see :mod:`torqlog.signal.streamstats`) plus the counts of
the cycle-shape check. The summaries of one group found in several files (a shift split
over two logs, or a log that runs across a shift change) are merged: counts, sums and the
exact values add exactly, so a merged summary equals the summary of the concatenated
rows while under the budget; sketches merge bucket by bucket (DDSketch is fully
mergeable, [1]_) and keep their relative-error bound.

Memory: per group, the summary's fixed state plus, below the budget
(:data:`TREND_QUANTILE_BUDGET`), 8 bytes per clean cycle and figure (four figures) —
bounded per group, never a row of every cycle.

References
----------
.. [1] C. Masson, J. E. Rim and H. K. Lee, "DDSketch: a fast and fully-mergeable quantile
   sketch with relative-error guarantees", *Proc. VLDB Endowment* 12(12), 2195–2205, 2019
   (sec. 2.3: merging sketches with the same γ adds their bucket counts).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

import numpy as np
import pandas as pd

from torqlog.fleet.shifts import ShiftCalendar
from torqlog.signal.cycle_table import SummaryStream
from torqlog.signal.streamstats import DEFAULT_SKETCH_ERROR, QuantileKeeper, RelativeErrorSketch

#: Clean cycles per group (and figure) held for exact quantiles in a trend; past it a
#: relative-error sketch (α = DEFAULT_SKETCH_ERROR, 1e-4) answers. A group's memory is then
#: bounded (at most 4 × 8 × 20 000 B ≈ 0.64 MB of exact values, a few kB of sketch),
#: so a trend over days of shift logs keeps its state flat; a shift of a 600 rpm machine
#: (~290 000 cycles) is summarised by the sketch, a 10-minute log exactly.
TREND_QUANTILE_BUDGET = 20_000

#: Columns a block of cycles must carry to be folded into a group summary.
BLOCK_COLUMNS: tuple[str, ...] = (
    "flag", "energy_swing_J", "cs", "torque_peak_Nm", "duration_s", "speed_mean_rpm",
    "work_J", "torque_mean_Nm", "anomaly_score")


# ----------------------------------------------------------------------------- merging
def _merge_buckets(into: Any, other: Any) -> None:
    """Add the log-bucket counts of ``other`` to ``into`` (same γ), merging the lowest
    buckets past the cap as :class:`torqlog.signal.streamstats.RelativeErrorSketch` does."""
    if other.counts.size == 0:
        return
    if into.counts.size == 0:
        into.offset, into.counts = other.offset, other.counts.copy()
    else:
        lo = min(into.offset, other.offset)
        hi = max(into.offset + into.counts.size, other.offset + other.counts.size)
        counts = np.zeros(hi - lo, dtype=np.int64)
        counts[into.offset - lo: into.offset - lo + into.counts.size] += into.counts
        counts[other.offset - lo: other.offset - lo + other.counts.size] += other.counts
        into.offset, into.counts = lo, counts
    into.collapsed = into.collapsed or other.collapsed
    if into.counts.size > into.max_buckets:
        cut = into.counts.size - into.max_buckets
        into.counts[cut] += into.counts[:cut].sum()
        into.counts = into.counts[cut:].copy()
        into.offset += cut
        into.collapsed = True


def merge_sketch(into: RelativeErrorSketch, other: RelativeErrorSketch) -> None:
    """Merge ``other`` into ``into`` (both with the same relative error α).

    References
    ----------
    Masson, Rim & Lee (2019), sec. 2.3.
    """
    if other.n == 0:
        return
    if other.alpha != into.alpha:
        raise ValueError(f"sketches of different relative error ({into.alpha} and "
                         f"{other.alpha}) cannot be merged")
    _merge_buckets(into.pos, other.pos)
    _merge_buckets(into.neg, other.neg)
    into.zeros += other.zeros
    into.n += other.n
    into.min = min(into.min, other.min)
    into.max = max(into.max, other.max)


def merge_keeper(into: QuantileKeeper, other: QuantileKeeper) -> None:
    """Merge the values of ``other`` into ``into``: exact while the two together fit
    ``into``'s budget (the merged keeper then holds exactly the union of the values), a
    sketch otherwise."""
    if other.n == 0:
        return
    if other.sketch is None:
        into.add(other.values)  # exact values: the keeper itself switches past its budget
        return
    if into.sketch is None:  # pour the exact values into a sketch, as the keeper would
        sketch = RelativeErrorSketch(into.relative_error)
        sketch.add(into.values)
        into.sketch = sketch
        into._buf = np.empty(0, dtype=np.float64)  # the keeper's exact buffer, now poured
    merge_sketch(into.sketch, other.sketch)
    into.n += other.n


def merge_summary(into: SummaryStream, other: SummaryStream) -> None:
    """Merge the running summary ``other`` into ``into`` (counts, flag counts, sums and
    quantile keepers)."""
    into.total += other.total
    into.clean += other.clean
    into.flags.update(other.flags)
    for k in into.keepers:
        merge_keeper(into.keepers[k], other.keepers[k])
    for k in into.sums:
        into.sums[k] += other.sums[k]
        into.counts[k] += other.counts[k]


# ----------------------------------------------------------------------------- groups
def _nan(x: float | None) -> float:
    return math.nan if x is None else float(x)


class GroupStats:
    """Running summary of the cycles of one machine in one group (shift, day, hour, file).

    Parameters
    ----------
    machine : str
    key : hashable
        The group's key within the machine (shift start [ns, UTC], hour start [ns],
        production date, or file name).
    quantile_budget : int
        Clean cycles held exactly per figure [count]; a sketch answers beyond.
    sketch_error : float
        Relative error α of the sketch [–].

    Attributes
    ----------
    start : int
        The group's start [ns since 1970, UTC]: shift start for ``shift`` and ``day``,
        hour start for ``hour``, first cycle's start for ``file``.
    first, last : int
        Start of the earliest and the latest cycle [ns, UTC].
    shift, date, file : labels of the earliest cycle.
    scored, abnormal : int
        Cycles scored by the cycle-shape check, and those beyond its limit (score > 1).
    """

    def __init__(self, machine: str, key: Any, quantile_budget: int = TREND_QUANTILE_BUDGET,
                 sketch_error: float = DEFAULT_SKETCH_ERROR) -> None:
        self.machine = machine
        self.key = key
        self.stream = SummaryStream(quantile_budget, sketch_error)
        self.start = np.iinfo(np.int64).max
        self.first = np.iinfo(np.int64).max
        self.last = np.iinfo(np.int64).min
        self.shift = ""
        self.date: Any = None
        self.file = ""
        self.scored = 0
        self.abnormal = 0

    def add(self, block: Mapping[str, np.ndarray], times: np.ndarray, start: np.ndarray,
            shift: np.ndarray, date: np.ndarray, file: np.ndarray) -> None:
        """Fold in the rows of a block that belong to this group.

        Parameters
        ----------
        block : mapping of column → array
            :data:`BLOCK_COLUMNS` (``anomaly_score`` may be missing: no shape check).
        times, start : int arrays
            Each cycle's start and its group start [ns, UTC].
        shift, date, file : arrays
            Labels of each cycle.
        """
        if times.size == 0:
            return
        self.stream.add(block)
        if "anomaly_score" in block:
            sc = np.asarray(block["anomaly_score"], dtype=np.float64)
            self.scored += int(np.isfinite(sc).sum())
            self.abnormal += int((sc > 1.0).sum())
        self.start = min(self.start, int(start.min()))
        i = int(np.argmin(times))
        if times[i] < self.first:
            self.first = int(times[i])
            self.shift, self.date, self.file = str(shift[i]), date[i], str(file[i])
        self.last = max(self.last, int(times.max()))

    def merge(self, other: GroupStats) -> None:
        """Merge the summary of the same group from another file or worker."""
        merge_summary(self.stream, other.stream)
        self.scored += other.scored
        self.abnormal += other.abnormal
        self.start = min(self.start, other.start)
        if other.first < self.first:
            self.first, self.shift, self.date, self.file = (other.first, other.shift,
                                                            other.date, other.file)
        self.last = max(self.last, other.last)

    def compact(self) -> None:
        """Trim the exact-value buffers to the values held (they grow by doubling), before
        the summary is kept or sent to another process."""
        for q in self.stream.keepers.values():
            if q.sketch is None and q._buf.size > q.n:  # the keeper's own buffer
                q._buf = q._buf[: q.n].copy()

    def row(self) -> dict[str, Any]:
        """The group's figures (over clean cycles; NaN where no clean cycle has one):
        ``cycles``, ``cycles_total``, ``cycles_per_min`` (60 / median duration),
        ``energy_swing_J_median``/``_p95``, ``cs_median``/``_p95``,
        ``torque_peak_Nm_p99``, ``work_J_mean``, ``flagged_share`` (flagged / all),
        ``anomaly_rate`` (abnormal / scored), ``cycles_scored``, ``cycles_abnormal``."""
        s = self.stream
        k = s.keepers
        dur = k["duration_s"].median()
        return {
            "cycles": s.clean, "cycles_total": s.total,
            "cycles_per_min": 60.0 / dur if dur else math.nan,
            "energy_swing_J_median": _nan(k["energy_swing_J"].median()),
            "energy_swing_J_p95": _nan(k["energy_swing_J"].quantile(0.95)),
            "cs_median": _nan(k["cs"].median()),
            "cs_p95": _nan(k["cs"].quantile(0.95)),
            "torque_peak_Nm_p99": _nan(k["torque_peak_Nm"].quantile(0.99)),
            "work_J_mean": (s.sums["work_J"] / s.counts["work_J"] if s.counts["work_J"]
                            else math.nan),
            "flagged_share": (s.total - s.clean) / s.total if s.total else math.nan,
            "anomaly_rate": self.abnormal / self.scored if self.scored else math.nan,
            "cycles_scored": self.scored, "cycles_abnormal": self.abnormal,
        }

    def box(self, figure: str = "energy_swing_J", whis: float = 1.5) -> dict[str, Any] | None:
        """Box-plot statistics of a clean-cycle figure (for ``Axes.bxp``): median,
        quartiles and Tukey whiskers (the most extreme values within ``whis`` × IQR of the
        box). Exact while the values are held; from the sketch beyond the budget, the
        whiskers then clipped at the fences (the nearest value inside may lie a little
        nearer the box). None without values."""
        q = self.stream.keepers[figure]
        if q.n == 0:
            return None
        q1, med, q3 = (q.quantile(p) for p in (0.25, 0.5, 0.75))
        lo, hi = q1 - whis * (q3 - q1), q3 + whis * (q3 - q1)
        v = q.values
        if v is not None:
            inside = v[(v >= lo) & (v <= hi)]
            wlo, whi = (float(inside.min()), float(inside.max())) if inside.size else (q1, q3)
        else:
            assert q.sketch is not None
            wlo, whi = max(lo, q.sketch.min), min(hi, q.sketch.max)
        return {"med": med, "q1": q1, "q3": q3, "whislo": wlo, "whishi": whi, "fliers": [],
                "n": q.n, "method": q.method}


def empty_like(g: GroupStats) -> GroupStats:
    """A new, empty summary with the budget and sketch error of ``g``."""
    s = g.stream
    return GroupStats(g.machine, g.key, s.quantile_budget, s.sketch_error)


# ----------------------------------------------------------------------------- keys
def group_keys(times: pd.DatetimeIndex, calendar: ShiftCalendar, by: str,
               file: np.ndarray) -> dict[str, np.ndarray]:
    """Group of each cycle.

    Parameters
    ----------
    times : DatetimeIndex (UTC)
        Each cycle's absolute start.
    calendar : ShiftCalendar
    by : {"shift", "day", "file", "hour"}
        ``day`` is the production day (the shifts that started on one date).
    file : array of str
        Each cycle's file.

    Returns
    -------
    dict
        ``key`` (object array: shift start [ns], date, hour start [ns] or file),
        ``start`` (group start per cycle [ns, UTC]), ``shift``, ``date``.
    """
    sh = calendar.assign(times)
    shift = sh["shift"].to_numpy()
    date = sh["date"].to_numpy()
    shift_start = pd.DatetimeIndex(sh["shift_start"]).as_unit("ns").asi8
    t = times.as_unit("ns").asi8
    if by == "shift":
        key, start = shift_start, shift_start
    elif by == "day":
        key, start = date, shift_start
    elif by == "hour":
        wall = times.tz_convert(calendar.zone).tz_localize(None)
        floor = wall.floor("h")
        start = (times - (wall - floor)).as_unit("ns").asi8
        key = start
        date = np.asarray(floor.date)
    else:
        key, start = np.asarray(file, dtype=object), t
    return {"key": np.asarray(key, dtype=object), "start": start, "shift": shift,
            "date": date}


def fold(groups: dict[tuple[str, Any], GroupStats], machine: str, times: pd.DatetimeIndex,
         block: Mapping[str, np.ndarray], file: np.ndarray, calendar: ShiftCalendar, by: str,
         quantile_budget: int = TREND_QUANTILE_BUDGET,
         sketch_error: float = DEFAULT_SKETCH_ERROR) -> tuple[list[tuple[str, Any]],
                                                              np.ndarray, dict[str, np.ndarray]]:
    """Fold a block of cycles of one machine into the per-group summaries.

    Parameters
    ----------
    groups : dict
        ``(machine, key)`` → :class:`GroupStats`; new groups are added.
    times : DatetimeIndex (UTC)
        Each cycle's absolute start.
    block : mapping of column → array
        :data:`BLOCK_COLUMNS` of the cycles.
    file : array of str
        Each cycle's file.

    Returns
    -------
    (keys, index, labels)
        The group keys met in the block, the position of each cycle's group in ``keys``,
        and :func:`group_keys` of the cycles (``shift`` and ``date`` labels).
    """
    lab = group_keys(times, calendar, by, file)
    codes, uniques = pd.factorize(pd.Series(lab["key"], dtype=object), sort=False)
    t = times.as_unit("ns").asi8
    cols = {k: np.asarray(block[k]) for k in BLOCK_COLUMNS if k in block}
    keys = []
    for j, key in enumerate(uniques):
        gk = (machine, key)
        keys.append(gk)
        g = groups.get(gk)
        if g is None:
            g = groups[gk] = GroupStats(machine, key, quantile_budget, sketch_error)
        m = codes == j
        g.add({k: v[m] for k, v in cols.items()}, t[m], lab["start"][m], lab["shift"][m],
              lab["date"][m], np.asarray(file)[m])
    return keys, codes, lab


def ordered(groups: Mapping[tuple[str, Any], GroupStats]) -> list[GroupStats]:
    """The groups in time order (group start, then machine, then earliest cycle)."""
    return sorted(groups.values(), key=lambda g: (g.start, g.machine, g.first, g.file))


def group_table(stats: list[GroupStats], by: str) -> pd.DataFrame:
    """One row per group (in the order given): ``machine``, (``file``), ``date``,
    ``shift``, ``start_time`` [UTC] and the figures of :meth:`GroupStats.row`."""
    rows = []
    for g in stats:
        r = {"machine": g.machine}
        if by == "file":
            r["file"] = g.file
        r.update(date=g.date, shift="" if by == "day" else g.shift,
                 start_time=pd.Timestamp(g.start, tz="UTC"))
        r.update(g.row())
        rows.append(r)
    cols = ["machine", *(["file"] if by == "file" else []), "date", "shift", "start_time",
            "cycles", "cycles_total", "cycles_per_min", "energy_swing_J_median",
            "energy_swing_J_p95", "cs_median", "cs_p95", "torque_peak_Nm_p99", "work_J_mean",
            "flagged_share", "anomaly_rate", "cycles_scored", "cycles_abnormal"]
    out = pd.DataFrame(rows, columns=cols)
    out["start_time"] = pd.DatetimeIndex(out["start_time"]).as_unit("ns")
    for c in ("cycles", "cycles_total", "cycles_scored", "cycles_abnormal"):
        out[c] = out[c].astype(np.int64)
    return out


def machine_summary(stats: list[GroupStats]) -> dict[str, dict[str, Any]]:
    """Per machine, over all its groups: ``cycles`` (clean), ``cycles_total``,
    ``abnormal``, ``last`` (start of the latest cycle [ns, UTC]) and ``cs`` (a
    :class:`QuantileKeeper` of the clean cycles' Cs, merged from the groups: exact while
    under the budget)."""
    out: dict[str, dict[str, Any]] = {}
    for g in stats:
        m = out.get(g.machine)
        if m is None:
            s = g.stream
            m = out[g.machine] = {"cycles": 0, "cycles_total": 0, "abnormal": 0,
                                  "scored": 0, "last": np.iinfo(np.int64).min,
                                  "cs": QuantileKeeper(s.quantile_budget, s.sketch_error)}
        m["cycles"] += g.stream.clean
        m["cycles_total"] += g.stream.total
        m["abnormal"] += g.abnormal
        m["scored"] += g.scored
        m["last"] = max(m["last"], g.last)
        merge_keeper(m["cs"], g.stream.keepers["cs"])
    return out
