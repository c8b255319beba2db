"""Trends across shifts and fleets: many logs → per-shift table, control limits, drift.

Each cycle of every log (run by :mod:`torqlog.fleet.batch`) gets an absolute time; a shift
calendar (:class:`torqlog.fleet.shifts.ShiftCalendar`, time-zone aware, shifts may cross
midnight and daylight-saving changes) puts it in a shift; the cycles are reduced to one
row per shift (or day, hour, file); and each figure is held against control limits from
a baseline with the charts of :mod:`torqlog.fleet.control`: an individuals chart, an EWMA chart
and a run rule.
The first flagged group after the baseline is where drift began.

References
----------
.. [1] D. C. Montgomery, *Introduction to Statistical Quality Control*, 7th ed., Wiley,
   2013, sec. 6.4, 9.2 and 5.3.6 (individuals and EWMA charts, run rules).
.. [2] NIST/SEMATECH e-Handbook of Statistical Methods, 2012, sec. 6.3.2.4 (EWMA).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import asdict, dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from torqlog.errors import DataError, UsageError
from torqlog.fleet.batch import FileJob, FileOutcome, Grouping, absolute_start, run_files
from torqlog.fleet.control import (
    D2_MR2,
    RUN_RULES,
    baseline_factors,
    ewma_chart,
    individuals_limits,
    p_chart_centre,
    p_chart_limits,
    run_rule,
)
from torqlog.fleet.groupstats import (
    BLOCK_COLUMNS,
    TREND_QUANTILE_BUDGET,
    GroupStats,
    fold,
    group_table,
    machine_summary,
    ordered,
)
from torqlog.fleet.shifts import ShiftCalendar
from torqlog.io.notebook import result_html
from torqlog.signal.cycles import CycleOptions
from torqlog.signal.streamstats import DEFAULT_SKETCH_ERROR

#: Ways to group cycles into rows.
GROUP_BY: tuple[str, ...] = ("shift", "day", "file", "hour")
#: Figures a group row carries (all may be charted).
GROUP_FIGURES: tuple[str, ...] = (
    "cycles_per_min", "energy_swing_J_median", "energy_swing_J_p95", "cs_median", "cs_p95",
    "torque_peak_Nm_p99", "work_J_mean", "flagged_share", "anomaly_rate")
#: Figures charted unless told otherwise: energy swing, speed fluctuation, peak torque and
#: the share of cycles of abnormal shape.
DEFAULT_FIGURES: tuple[str, ...] = ("energy_swing_J_median", "cs_median", "torque_peak_Nm_p99",
                                    "anomaly_rate")
#: The figure that is a rate of counts, charted as a p chart (binomial limits per group).
P_FIGURE = "anomaly_rate"

# ----------------------------------------------------------------------------- tables
def combine(outcomes: Sequence[FileOutcome], calendar: ShiftCalendar
            ) -> tuple[pd.DataFrame, list[dict[str, Any]], list[dict[str, str]]]:
    """One per-cycle table from the good outcomes, with ``machine``, ``file`` and an
    absolute ``start_time`` (UTC) per cycle; the file facts; the failures.

    A file whose start has no zone is read as wall-clock time in the calendar's zone;
    the cycles then follow at their elapsed time from that instant.
    """
    parts, files, failed = [], [], []
    for o in outcomes:
        if not o.ok:
            failed.append(_failure(o))
            continue
        start = pd.Timestamp(o.facts["start_time"])
        if start.tz is None:
            start = start.tz_localize(calendar.zone, ambiguous=True,
                                      nonexistent="shift_forward")
        t = o.table.drop(columns=["start_time"])
        t.insert(0, "start_time", start.tz_convert("UTC")
                 + pd.to_timedelta(t["t_start_s"].to_numpy(), unit="s"))
        t.insert(0, "file", o.path)
        t.insert(0, "machine", o.machine)
        parts.append(t)
        files.append({**o.facts, "start_time": start,
                      "tz_given": pd.Timestamp(o.facts["start_time"]).tz is not None})
    if not parts:
        return pd.DataFrame(), files, failed
    cycles = pd.concat(parts, ignore_index=True)
    cycles = cycles.sort_values(["machine", "start_time"], kind="stable", ignore_index=True)
    return cycles, files, failed


def group_cycles(cycles: pd.DataFrame, calendar: ShiftCalendar, by: str = "shift", *,
                 quantile_budget: int = TREND_QUANTILE_BUDGET,
                 sketch_error: float = DEFAULT_SKETCH_ERROR
                 ) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Put each cycle in a group and reduce every group to one row.

    The same reduction as the batch workers make file by file (per-group running
    summaries, :mod:`torqlog.fleet.groupstats`), here over a table already in memory.

    Parameters
    ----------
    cycles : DataFrame
        Per-cycle table with ``machine``, ``file``, ``start_time`` (aware) and the cycle
        columns of :data:`torqlog.signal.cycles.COLUMNS`.
    by : {"shift", "day", "file", "hour"}
        ``day`` is the production day: the shifts that started on one date.
    quantile_budget, sketch_error
        Exact quantiles up to this many clean cycles per group, a sketch of this
        relative error beyond.

    Returns
    -------
    (cycles, groups)
        ``cycles`` gains ``date``, ``shift`` and ``group`` (row number in ``groups``);
        ``groups`` has one row per machine and group in time order (see
        :func:`torqlog.fleet.groupstats.group_table`).
    """
    c = cycles.reset_index(drop=True)
    stats, index, labels = _fold_table(c, calendar, by, quantile_budget, sketch_error)
    rank = {id(g): i for i, g in enumerate(stats)}
    c["shift"], c["date"] = labels["shift"], labels["date"]
    c["group"] = np.array([rank[id(g)] for g in index], dtype=np.int64) if len(c) else \
        np.zeros(0, dtype=np.int64)
    return c, group_table(stats, by)


def _fold_table(c: pd.DataFrame, calendar: ShiftCalendar, by: str, quantile_budget: int,
                sketch_error: float) -> tuple[list[GroupStats], list[GroupStats],
                                              dict[str, np.ndarray]]:
    """Per-group summaries of a per-cycle table: the groups in time order, each cycle's
    group and its ``shift`` and ``date`` labels."""
    if by not in GROUP_BY:
        raise UsageError(f"unknown grouping {by!r}; valid: {', '.join(GROUP_BY)}")
    groups: dict[tuple[str, Any], GroupStats] = {}
    index: list[Any] = [None] * len(c)
    labels = {"shift": np.empty(len(c), dtype=object), "date": np.empty(len(c), dtype=object)}
    times = pd.DatetimeIndex(c["start_time"])
    files = c["file"].to_numpy(dtype=object)
    for machine, rows in c.groupby("machine", sort=False).indices.items():
        # a figure the table lacks is empty (NaN); no anomaly_score: no shape check
        block = {k: c[k].to_numpy()[rows] if k in c else np.full(rows.size, np.nan)
                 for k in BLOCK_COLUMNS if k in c or k != "anomaly_score"}
        keys, codes, lab = fold(groups, machine, times[rows], block, files[rows], calendar, by,
                                quantile_budget, sketch_error)
        for r, code in zip(rows, codes, strict=True):
            index[r] = groups[keys[code]]
        labels["shift"][rows], labels["date"][rows] = lab["shift"], lab["date"]
    return ordered(groups), index, labels


def _failure(o: FileOutcome) -> dict[str, str]:
    """A failed file and its reason, without the path the reason may start with."""
    reason = o.error or ""
    if reason.startswith(f"{o.path}: "):
        reason = reason[len(o.path) + 2:]
    return {"file": o.path, "reason": reason}


def merge_outcomes(outcomes: Sequence[FileOutcome], calendar: ShiftCalendar
                   ) -> tuple[list[GroupStats], list[dict[str, Any]], list[dict[str, str]]]:
    """Per-group summaries of the good outcomes merged over files (a group found in
    several files is one group), in time order; the file facts; the failures."""
    merged: dict[tuple[str, Any], GroupStats] = {}
    files, failed = [], []
    for o in outcomes:
        if not o.ok:
            failed.append(_failure(o))
            continue
        start = pd.Timestamp(o.facts["start_time"])
        files.append({**o.facts, "start_time": absolute_start(start, calendar),
                      "tz_given": start.tz is not None})
        for key, g in (o.groups or {}).items():
            if key in merged:
                merged[key].merge(g)
            else:
                merged[key] = g
    for g in merged.values():
        g.compact()
    return ordered(merged), files, failed


def write_cycles(path: str | Path, outcomes: Sequence[FileOutcome],
                 stats: list[GroupStats], result: TrendResult) -> Path:
    """Every cycle of the trend into one Parquet file, streamed row group by row group
    from the workers' part files (never the whole table in memory): files by machine and
    start, each cycle with ``group`` (row of the group table) and its ``start_time`` as
    the trend shows it.
    """
    import pyarrow as pa
    import pyarrow.parquet as pq

    from torqlog.io.outputs import atomic_path, parquet_metadata

    rank = {(g.machine, g.key): i for i, g in enumerate(stats)}
    good = [o for o in outcomes if o.ok and o.part]
    good.sort(key=lambda o: (o.machine, min((g.first for g in (o.groups or {}).values()),
                                            default=0)))
    meta = parquet_metadata("trend-cycles")
    out = Path(path)
    with atomic_path(out) as tmp:
        writer = None
        try:
            for o in good:
                to_row = np.array([rank[k] for k in (o.groups or {})], dtype=np.int64)
                part = pq.ParquetFile(o.part)
                for i in range(part.num_row_groups):
                    df = part.read_row_group(i).to_pandas()
                    df["start_time"] = result.local(df["start_time"])
                    df["group"] = to_row[df["group"].to_numpy()]
                    table = pa.Table.from_pandas(df, preserve_index=False)
                    if writer is None:
                        schema = table.schema.with_metadata({**(table.schema.metadata or {}),
                                                             **meta})
                        writer = pq.ParquetWriter(tmp, schema)
                    writer.write_table(table.cast(writer.schema))
        finally:
            if writer is not None:
                writer.close()
    return out


# ----------------------------------------------------------------------------- drift
@dataclass(frozen=True)
class DriftOptions:
    """How drift is judged.

    Attributes
    ----------
    figures : tuple of str
        Group figures to chart (from :data:`GROUP_FIGURES`).
    baseline_groups : int
        The first N groups of each machine set the limits (default 9: three days of
        three shifts) unless a baseline table is given.
    lam, L : float
        EWMA weight and limit width (0.2 and 3, NIST/SEMATECH 6.3.2.4).
    k : float
        Individuals limits at ±k sigma (3).
    run_rule : str
        A name from :data:`RUN_RULES` (default "western-electric-4": 8 in a row).
    limits : {"prediction", "classic"}
        ``prediction`` (default) widens the ±k·σ and EWMA limits for the size of the
        baseline so a point has the nominal 0.27 % false-alarm probability; ``classic``
        is the textbook mean ± k·σ̂ (see :func:`torqlog.fleet.control.baseline_factors`).
    """

    figures: tuple[str, ...] = DEFAULT_FIGURES
    baseline_groups: int = 9
    lam: float = 0.2
    L: float = 3.0
    k: float = 3.0
    run_rule: str = "western-electric-4"
    limits: str = "prediction"

    def __post_init__(self) -> None:
        bad = [f for f in self.figures if f not in GROUP_FIGURES]
        if bad or not self.figures:
            raise UsageError(f"unknown figure {bad[0] if bad else ''!r}; valid: "
                             f"{', '.join(GROUP_FIGURES)}")
        if self.run_rule not in RUN_RULES:
            raise UsageError(f"unknown run rule {self.run_rule!r}; valid: "
                             f"{', '.join(RUN_RULES)}")
        if self.baseline_groups < 2:
            raise UsageError("the baseline needs at least 2 groups (--baseline-shifts ≥ 2)")
        if not 0.0 < self.lam <= 1.0:
            raise UsageError(f"EWMA λ must be in (0, 1], got {self.lam}")
        if self.limits not in ("prediction", "classic"):
            raise UsageError(f"unknown limits method {self.limits!r}; valid: prediction, "
                             "classic")
        if self.L <= 0 or self.k <= 0:
            raise UsageError("limit widths (L, k) must be positive")


def detect_drift(groups: pd.DataFrame, options: DriftOptions = DriftOptions(),
                 baseline: pd.DataFrame | None = None
                 ) -> tuple[list[list[str]], pd.DataFrame, list[dict[str, Any]],
                            list[dict[str, Any]]]:
    """Control charts per machine and figure; flags per group row; where drift began.

    Parameters
    ----------
    groups : DataFrame
        Group rows in time order (from :func:`group_cycles`).
    options : DriftOptions
    baseline : DataFrame, optional
        Group rows of an earlier period; all of its rows (of the same machine, when it
        has a ``machine`` column) set the limits, and every row of ``groups`` is judged.

    Returns
    -------
    (flags, charts, limits, onsets)
        ``flags[i]``: codes for row i, ``"<figure>:<chart>_<high|low>"`` with chart
        ``individuals`` (beyond ±k·σ; ``p_chart`` for the anomaly rate, beyond its
        binomial limits, see :func:`_p_chart`), ``ewma`` (EWMA beyond its limits) or
        ``run`` (the run rule); ``charts``: long table (row, machine, figure, value, centre, lcl,
        ucl, ewma, ewma_lcl, ewma_ucl, baseline); ``limits``: one dict per machine and
        figure; ``onsets``: per machine, the first flagged row after the baseline (or
        None).
    """
    o = options
    n = len(groups)
    flags: list[list[str]] = [[] for _ in range(n)]
    charts, limits, onsets = [], [], []
    run_len = RUN_RULES[o.run_rule]
    for machine, idx in groups.groupby("machine", sort=False).indices.items():
        idx = np.asarray(idx)
        rows = groups.iloc[idx]
        if baseline is not None:
            base = baseline
            if "machine" in base and (base["machine"] == machine).any():
                base = base[base["machine"] == machine]
            in_base = np.zeros(idx.size, dtype=bool)
        else:
            in_base = np.arange(idx.size) < o.baseline_groups
        hit = np.zeros(idx.size, dtype=bool)
        for fig in o.figures:
            x = rows[fig].to_numpy(dtype=np.float64)
            bx = (base[fig].to_numpy(dtype=np.float64) if baseline is not None
                  else x[in_base])
            if np.isfinite(bx).sum() < 2:
                limits.append({"machine": machine, "figure": fig,
                               "chart": "p" if fig == P_FIGURE else "individuals",
                               "centre": None, "sigma": None, "lcl": None, "ucl": None,
                               "baseline_groups": int(np.isfinite(bx).sum()),
                               "note": "too few baseline values: not charted"})
                continue
            m_base = int(np.isfinite(bx).sum())
            if fig == P_FIGURE:  # a rate of counts: the p chart, binomial limits per group
                base_rows = base if baseline is not None else rows[in_base]
                centre, sigma, lcl, ucl, z, zl, zu, lim = _p_chart(rows, base_rows, o)
                beyond = "p_chart"
            else:
                k_eff, l_eff, c_var = baseline_factors(o.k, o.L, m_base, o.limits)
                centre, sigma, lcl, ucl = individuals_limits(bx, k_eff)
                z, zl, zu = ewma_chart(x, centre, sigma, o.lam, l_eff, c_var)
                lim = {"chart": "individuals", "centre": centre, "sigma": sigma, "lcl": lcl,
                       "ucl": ucl, "k_eff": k_eff, "ewma_L_eff": l_eff, "note": ""}
                beyond = "individuals"
            # runs are counted afresh from the first group after the baseline: the
            # baseline points set the centre line, so a run among them says little
            hi_r, lo_r = np.zeros(x.size, bool), np.zeros(x.size, bool)
            for part in (in_base, ~in_base):
                hi_r[part], lo_r[part] = run_rule(x[part], centre, run_len)
            marks = {f"{beyond}_high": x > ucl, f"{beyond}_low": x < lcl,
                     "ewma_high": z > zu, "ewma_low": z < zl,
                     "run_high": hi_r, "run_low": lo_r}
            for name, m in marks.items():
                for j in np.flatnonzero(m):
                    flags[idx[j]].append(f"{fig}:{name}")
                hit |= m
            limits.append({"machine": machine, "figure": fig, **lim,
                           "baseline_groups": m_base})
            charts.append(pd.DataFrame({
                "row": idx, "machine": machine, "figure": fig, "chart": lim["chart"],
                "value": x, "centre": centre, "sigma": sigma, "lcl": lcl, "ucl": ucl,
                "ewma": z, "ewma_lcl": zl, "ewma_ucl": zu, "baseline": in_base,
                "flagged": np.any(np.column_stack(list(marks.values())), axis=1)}))
        after = np.flatnonzero(hit & ~in_base)
        onsets.append({"machine": machine,
                       "row": int(idx[after[0]]) if after.size else None})
    chart = pd.concat(charts, ignore_index=True) if charts else pd.DataFrame(
        columns=["row", "machine", "figure", "chart", "value", "centre", "sigma", "lcl", "ucl",
                 "ewma", "ewma_lcl", "ewma_ucl", "baseline", "flagged"])
    return flags, chart, limits, onsets


def _p_chart(rows: pd.DataFrame, base: pd.DataFrame, o: DriftOptions) -> tuple[Any, ...]:
    """The p chart of the anomaly rate of one machine's group rows.

    Centre p̄ = Σ abnormal / Σ scored over the baseline groups
    (:func:`torqlog.fleet.control.p_chart_centre`), limits p̄ ± k·√(p̄(1 − p̄)/n_i) with n_i
    the cycles scored in group i, the lower limit clipped at 0
    (:func:`torqlog.fleet.control.p_chart_limits`). The EWMA and run rule are the same
    as for every figure; the EWMA runs on the standardized rate (p_i − p̄)/σ_i, so that
    groups of different size weigh alike (its centre 0, σ 1, limits ±L·√(λ/(2 − λ)·…)).
    σ comes from the binomial model, not from the spread of the baseline, so the limits
    are not widened for the baseline's size. A baseline table without the counts (an
    earlier run's rows) gives p̄ as the mean of its rates (noted).

    References
    ----------
    Montgomery, *Introduction to Statistical Quality Control*, 7th ed., sec. 7.2.2
    (variable sample size; the standardized chart z_i = (p̂_i − p̄)/σ_i).
    """
    x = rows[P_FIGURE].to_numpy(dtype=np.float64)
    n = rows["cycles_scored"].to_numpy(dtype=np.float64)
    note = ""
    if "cycles_scored" in base and "cycles_abnormal" in base:
        centre, note = p_chart_centre(base["cycles_abnormal"].to_numpy(dtype=np.float64),
                                      base["cycles_scored"].to_numpy(dtype=np.float64))
    else:
        centre = float(np.nanmean(base[P_FIGURE].to_numpy(dtype=np.float64)))
        note = "baseline without cycle counts: centre is the mean of its rates"
    sigma, lcl, ucl = p_chart_limits(centre, n, o.k)
    with np.errstate(divide="ignore", invalid="ignore"):
        std = np.where(sigma > 0, (x - centre) / sigma, np.nan)
    z, zl, zu = ewma_chart(std, 0.0, 1.0, o.lam, o.L)
    lim = {"chart": "p", "centre": centre, "sigma": None, "lcl": None, "ucl": None,
           "limits": f"p̄ ± {o.k:g}·√(p̄(1 − p̄)/n) per group, n = cycles scored; "
                     "lower limit clipped at 0",
           "baseline_cycles_scored": int(np.nansum(base["cycles_scored"]))
           if "cycles_scored" in base else None,
           "ewma_of": "(rate − p̄)/σ_n", "note": note}
    return centre, sigma, lcl, ucl, z, zl, zu, lim


# ----------------------------------------------------------------------------- result
def _show(times: Any, display_tz: str | None, zone: str) -> pd.DatetimeIndex:
    """UTC instants in the display zone, or as naive wall clock in ``zone``."""
    t = pd.DatetimeIndex(times)
    if t.tz is None:
        t = t.tz_localize("UTC")
    if display_tz is None:
        return t.tz_convert(zone).tz_localize(None)
    return t.tz_convert(display_tz)


@dataclass(frozen=True)
class TrendResult:
    """Trend of many logs: group rows with drift flags, the per-cycle table, the limits.

    Attributes
    ----------
    groups : DataFrame
        One row per machine and group, in time order (see :func:`group_cycles`), plus
        ``flags`` (list of codes, see :func:`detect_drift`); ``start_time`` in UTC.
    stats : list of GroupStats
        The running summary of each group row (same order as ``groups``): the clean
        cycles' quantiles (exact below the budget), counts and box-plot statistics —
        what the trend keeps instead of a row per cycle.
    charts : DataFrame
        Chart points (long format) for the plots.
    limits : list of dict
        Centre, sigma and limits per machine and figure.
    files, failed : list of dict
        Facts of each good file; ``{"file", "reason"}`` of each failed one.
    drift_onset : dict or None
        The earliest first-flagged group after the baseline over all machines.
    onsets : list of dict
        The same per machine.
    options : dict
        Every option that produced the result.
    notes : list of str
    display_tz : str or None
        Zone the times are shown in (None: wall clock without a zone).
    """

    groups: pd.DataFrame
    stats: list[GroupStats]
    charts: pd.DataFrame
    limits: list[dict[str, Any]]
    files: list[dict[str, Any]]
    failed: list[dict[str, str]]
    drift_onset: dict[str, Any] | None
    onsets: list[dict[str, Any]]
    options: dict[str, Any]
    notes: list[str] = field(default_factory=list)
    display_tz: str | None = None

    def local(self, times: pd.Series | pd.DatetimeIndex) -> pd.DatetimeIndex:
        """UTC instants as shown: in the display zone, or naive wall clock."""
        return _show(times, self.display_tz, self.options["shifts"]["zone"])

    def to_pandas(self) -> pd.DataFrame:
        """The group table as shown (local times, flags joined with ``;``)."""
        g = self.groups.copy()
        g["start_time"] = self.local(g["start_time"])
        g["flags"] = ["; ".join(f) for f in g["flags"]]
        return g

    def machine_summary(self) -> dict[str, dict[str, Any]]:
        """Per machine over all its groups: clean and total cycles, abnormal and scored
        cycles, start of the latest cycle [ns, UTC] and the Cs quantile keeper
        (:func:`torqlog.fleet.groupstats.machine_summary`)."""
        return machine_summary(self.stats)

    def _row(self, i: int) -> dict[str, Any]:
        r = self.groups.iloc[i]
        d = {k: r[k] for k in self.groups.columns if k not in ("flags",)}
        d["date"] = r["date"].isoformat() if r["date"] is not None else None
        d["start_time"] = self.local([r["start_time"]])[0].isoformat()
        order = ["machine", "date", "shift", "start_time", "cycles", "cycles_per_min",
                 "energy_swing_J_median", "energy_swing_J_p95", "cs_median", "cs_p95",
                 "torque_peak_Nm_p99", "work_J_mean", "flagged_share"]
        out = {k: d.pop(k) for k in order}
        out["flags"] = list(r["flags"])
        out.update(d)
        for k, v in out.items():
            if isinstance(v, float) and not math.isfinite(v):
                out[k] = None
            elif isinstance(v, np.generic):
                out[k] = v.item()
        return out

    _repr_html_ = result_html  # the notebook view

    def to_dict(self) -> dict[str, Any]:
        """The JSON contract of ``torqlog trend``."""
        files = []
        for f in self.files:
            f = dict(f)
            f["start_time"] = self.local([f["start_time"]])[0].isoformat()
            files.append(f)
        return {"shifts": [self._row(i) for i in range(len(self.groups))],
                "files": files, "failed": list(self.failed),
                "drift_onset": self.drift_onset, "drift_by_machine": self.onsets,
                "limits": self.limits, "options": self.options, "notes": self.notes}

    def plot(self, folder: str | Path, units: str = "si") -> list[Path]:
        """Write the trend charts (one PNG per figure) and the ΔE box plot to a folder,
        their axes in ``units`` ("si" or "us")."""
        from torqlog.present.plots import plot_trend, plot_trend_box

        d = Path(folder)
        d.mkdir(parents=True, exist_ok=True)
        out = [plot_trend(self, fig, d / f"trend_{fig}.png", units=units)
               for fig in self.options["drift"]["figures"]]
        out.append(plot_trend_box(self, d / "energy_swing_box.png", units=units))
        return out


def trend_table(cycles: pd.DataFrame, calendar: ShiftCalendar, *, by: str = "shift",
                drift: DriftOptions = DriftOptions(), baseline: pd.DataFrame | None = None,
                files: list[dict[str, Any]] | None = None,
                failed: list[dict[str, str]] | None = None,
                options: dict[str, Any] | None = None) -> TrendResult:
    """Groups, control charts and drift from a per-cycle table (no files involved).

    Parameters
    ----------
    cycles : DataFrame
        ``machine``, ``file``, ``start_time`` (aware, or naive wall clock in the
        calendar's zone), ``cycle``, ``duration_s`` [s], ``energy_swing_J`` [J], ``cs``,
        ``torque_peak_Nm`` [N*m], ``work_J`` [J], ``flag`` ("" for a clean cycle).
    calendar : ShiftCalendar
    by : {"shift", "day", "file", "hour"}
    drift : DriftOptions
    baseline : DataFrame, optional
        Group rows of an earlier period to take the limits from.
    files, failed, options
        Carried into the result.

    Returns
    -------
    TrendResult
    """
    c = cycles.copy()
    t = pd.DatetimeIndex(c["start_time"])
    naive = t.tz is None
    if naive:
        t = t.tz_localize(calendar.zone, ambiguous=np.ones(len(t), dtype=bool),
                          nonexistent="shift_forward")
    c["start_time"] = t.tz_convert("UTC")
    stats = _fold_table(c.reset_index(drop=True), calendar, by, TREND_QUANTILE_BUDGET,
                        DEFAULT_SKETCH_ERROR)[0]
    files = files or []
    any_tz = any(f.get("tz_given") for f in files) if files else not naive
    return _result(stats, calendar, by=by, drift=drift, baseline=baseline, files=files,
                   failed=failed, options=options, any_tz=any_tz)


def _result(stats: list[GroupStats], calendar: ShiftCalendar, *, by: str, drift: DriftOptions,
            baseline: pd.DataFrame | None, files: list[dict[str, Any]],
            failed: list[dict[str, str]] | None, options: dict[str, Any] | None,
            any_tz: bool) -> TrendResult:
    """Group rows, control charts, drift onsets and notes from the per-group summaries."""
    groups = group_table(stats, by)
    sketched = any(k.method == "sketch" for g in stats for k in g.stream.keepers.values())
    s0 = stats[0].stream if stats else None
    flags, charts, limits, onsets = detect_drift(groups, drift, baseline)
    groups = groups.copy()
    # each group's own p-chart limits of the anomaly rate (they vary with its size)
    pc = charts[charts["figure"] == P_FIGURE]
    for side in ("lcl", "ucl"):
        col = np.full(len(groups), np.nan)
        col[pc["row"].to_numpy(dtype=np.int64)] = pc[side].to_numpy(dtype=np.float64)
        groups[f"{P_FIGURE}_{side}"] = col
    groups["flags"] = flags
    notes: list[str] = []
    for m, idx in groups.groupby("machine", sort=False).indices.items():
        if baseline is None and len(idx) <= drift.baseline_groups:
            notes.append(f"machine {m or '(unnamed)'}: {len(idx)} group(s), all in the "
                         f"baseline of {drift.baseline_groups}; drift not judged")
    for lim in limits:
        if lim["note"]:
            notes.append(f"machine {lim['machine'] or '(unnamed)'}: {lim['figure']}: "
                         f"{lim['note']}")
    display = calendar.timezone or ("UTC" if any_tz else None)
    if calendar.timezone is None and any_tz:
        notes.append("times carry a zone but no --timezone was given: shifts follow the "
                     "UTC clock")

    def describe(row: int | None) -> dict[str, Any]:
        if row is None:
            return {"date": None, "shift": None, "start_time": None, "flags": []}
        r = groups.iloc[row]
        return {"date": r["date"].isoformat(), "shift": r["shift"],
                "start_time": _show([r["start_time"]], display, calendar.zone)[0].isoformat(),
                "flags": list(r["flags"])}

    shown = [{"machine": o["machine"], **describe(o["row"])} for o in onsets]
    rows = [o["row"] for o in onsets if o["row"] is not None]
    first = min(rows, key=lambda i: (groups["start_time"].iloc[i], i)) if rows else None
    onset = None if first is None else {"machine": groups["machine"].iloc[first],
                                        **describe(first)}
    opts = dict(options or {})
    opts.update({
        "by": by,
        "quantiles": {"method": "sketch" if sketched else "exact",
                      "exact_budget_cycles_per_group": s0.quantile_budget if s0 else None,
                      "relative_error_bound": s0.sketch_error if sketched and s0 else None},
        "shifts": {"starts": list(calendar.starts), "names": list(calendar.names),
                   "timezone": calendar.timezone, "zone": calendar.zone},
        "drift": {"figures": list(drift.figures),
                  "baseline": "table" if baseline is not None else
                  f"first {drift.baseline_groups} groups per machine",
                  "individuals": f"mean ± {drift.k:g}·MR̄/{D2_MR2}", "k": drift.k,
                  "p_chart": f"{P_FIGURE}: p̄ ± {drift.k:g}·√(p̄(1 − p̄)/n), n = cycles "
                             "scored in the group, lower limit clipped at 0; EWMA of "
                             "(rate − p̄)/σ_n",
                  "limits": drift.limits,
                  "ewma_lambda": drift.lam, "ewma_L": drift.L,
                  "run_rule": drift.run_rule, "run_length": RUN_RULES[drift.run_rule]},
    })
    return TrendResult(groups, stats, charts, limits, files, list(failed or []), onset, shown,
                       opts, notes, display)


def run_trend(jobs: Sequence[FileJob], calendar: ShiftCalendar, *, by: str = "shift",
              drift: DriftOptions = DriftOptions(), baseline: pd.DataFrame | None = None,
              workers: int | None = None, client: Any = None,
              progress: Callable[[], None] | None = None,
              missing: Sequence[dict[str, str]] = (), cycles_path: str | Path | None = None,
              quantile_budget: int = TREND_QUANTILE_BUDGET,
              sketch_error: float = DEFAULT_SKETCH_ERROR) -> TrendResult:
    """Run the batch and build the trend.

    Each worker reduces its file's cycles to per-group running summaries
    (:mod:`torqlog.fleet.groupstats`); this process merges them, so its memory does not
    grow with the number of cycles.

    Parameters
    ----------
    jobs : sequence of FileJob
        One per file (see :func:`discover`).
    calendar : ShiftCalendar
    by, drift, baseline
        As for :func:`trend_table`.
    workers, client, progress
        As for :func:`run_files`.
    missing : sequence of dict
        Paths that named no file (from :func:`discover`), reported with the failures.
    cycles_path : str or Path, optional
        Write every cycle to this Parquet file, streamed by row groups from the workers
        (see :func:`write_cycles`). On a Dask cluster the workers write their parts next
        to it, so they must see that folder.
    quantile_budget : int
        Clean cycles per group held for exact quantiles [count]; beyond it a
        relative-error sketch answers (recorded in the options).
    sketch_error : float
        Relative error α of that sketch [–].

    Returns
    -------
    TrendResult
        ``failed`` lists every file that could not be used, with its reason.

    Raises
    ------
    DataError
        When no file could be used.
    """
    import tempfile

    if cycles_path is not None:
        Path(cycles_path).parent.mkdir(parents=True, exist_ok=True)
    with tempfile.TemporaryDirectory(
            prefix=".torqlog-parts-",
            dir=None if cycles_path is None else Path(cycles_path).parent) as parts:
        grouping = Grouping(calendar, by, quantile_budget, sketch_error,
                            parts if cycles_path is not None else None)
        if by not in GROUP_BY:
            raise UsageError(f"unknown grouping {by!r}; valid: {', '.join(GROUP_BY)}")
        outcomes = run_files(jobs, workers=workers, client=client, progress=progress,
                             grouping=grouping)
        stats, files, failed = merge_outcomes(outcomes, calendar)
        failed = list(missing) + failed
        if not stats:
            first = (f"{failed[0]['file']}: {failed[0]['reason']}" if failed
                     else "no files given")
            more = f" (and {len(failed) - 1} more)" if len(failed) > 1 else ""
            raise DataError(f"no file could be used: {first}{more}")
        o = jobs[0].options if jobs else CycleOptions()
        copts = asdict(o)
        copts.pop("block_rows", None)
        res = _result(stats, calendar, by=by, drift=drift, baseline=baseline, files=files,
                      failed=failed, options={"cycles": copts},
                      any_tz=any(f.get("tz_given") for f in files))
        if cycles_path is not None:
            write_cycles(cycles_path, outcomes, stats, res)
    return res


def read_baseline(path: str | Path) -> pd.DataFrame:
    """Group rows of an earlier run to take limits from: the ``shifts.csv`` written by
    ``torqlog trend --out-dir`` or the JSON of ``torqlog trend --format json``."""
    import json

    p = Path(path)
    if not p.is_file():
        raise UsageError(f"--baseline {p}: no such file")
    if p.suffix.lower() == ".json":
        try:
            data = json.loads(p.read_text(encoding="utf-8"))
            df = pd.DataFrame(data["shifts"])
        except (json.JSONDecodeError, KeyError, TypeError, UnicodeDecodeError):
            raise DataError(f"--baseline {p}: not the JSON of 'torqlog trend --format json' "
                            "(needs a \"shifts\" list)") from None
    else:
        try:
            df = pd.read_csv(p)
        except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError) as exc:
            raise DataError(f"--baseline {p}: not a readable CSV ({exc})") from None
    if not any(f in df for f in GROUP_FIGURES):
        raise DataError(f"--baseline {p}: has none of the figure columns "
                        f"({', '.join(GROUP_FIGURES)}); give the shifts.csv of an earlier "
                        "trend run")
    return df
