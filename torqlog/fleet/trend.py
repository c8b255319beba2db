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
from torqlog.fleet.batch import FileJob, FileOutcome, run_files
from torqlog.fleet.control import (
    D2_MR2,
    RUN_RULES,
    baseline_factors,
    ewma_chart,
    individuals_limits,
    run_rule,
)
from torqlog.fleet.shifts import ShiftCalendar
from torqlog.io.notebook import result_html
from torqlog.signal.cycles import CycleOptions

#: Ways to group cycles into rows.
GROUP_BY: tuple[str, ...] = ("shift", "day", "file", "hour")
#: Figures a group row carries (all may be charted).
GROUP_FIGURES: tuple[str, ...] = (
    "cycles_per_min", "energy_swing_J_median", "energy_swing_J_p95", "cs_median", "cs_p95",
    "torque_peak_Nm_p99", "work_J_mean", "flagged_share", "anomaly_rate")
#: Figures charted unless told otherwise: energy swing, speed fluctuation, peak torque.
DEFAULT_FIGURES: tuple[str, ...] = ("energy_swing_J_median", "cs_median", "torque_peak_Nm_p99")

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
            reason = o.error or ""
            if reason.startswith(f"{o.path}: "):
                reason = reason[len(o.path) + 2:]
            failed.append({"file": o.path, "reason": reason})
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


def group_cycles(cycles: pd.DataFrame, calendar: ShiftCalendar, by: str = "shift"
                 ) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Put each cycle in a group and reduce every group to one row.

    Parameters
    ----------
    cycles : DataFrame
        Per-cycle table with ``machine``, ``file``, ``start_time`` (aware) and the cycle
        columns of :data:`torqlog.signal.cycles.COLUMNS`.
    by : {"shift", "day", "file", "hour"}
        ``day`` is the production day: the shifts that started on one date.

    Returns
    -------
    (cycles, groups)
        ``cycles`` gains ``date``, ``shift`` and ``group`` (row number in ``groups``);
        ``groups`` has one row per machine and group in time order: ``machine``,
        ``date``, ``shift``, ``start_time`` [UTC], ``cycles`` (clean), ``cycles_total``,
        ``cycles_per_min`` (60 / median clean cycle duration), ``energy_swing_J_median``,
        ``energy_swing_J_p95``, ``cs_median``, ``cs_p95``, ``torque_peak_Nm_p99``,
        ``work_J_mean`` (all over clean cycles), ``flagged_share`` (flagged / all) and
        ``anomaly_rate`` (abnormal cycle shape / cycles scored, :mod:`torqlog.signal.anomaly`).
    """
    if by not in GROUP_BY:
        raise UsageError(f"unknown grouping {by!r}; valid: {', '.join(GROUP_BY)}")
    c = cycles.reset_index(drop=True)
    sh = calendar.assign(c["start_time"])
    c["shift"] = sh["shift"].to_numpy()
    c["date"] = sh["date"].to_numpy()
    if by == "shift":
        key = start = pd.Series(sh["shift_start"].to_numpy())
    elif by == "day":
        key = pd.Series(pd.to_datetime(c["date"]).to_numpy())
        start = pd.Series(sh["shift_start"].to_numpy())
    elif by == "hour":
        t = pd.DatetimeIndex(c["start_time"])
        wall = t.tz_convert(calendar.zone).tz_localize(None)
        floor = wall.floor("h")
        key = start = pd.Series(t - (wall - floor))
        c["date"] = floor.date
    else:
        key, start = c["file"], c["start_time"]
    gid = pd.DataFrame({"m": c["machine"], "k": key}).groupby(
        ["m", "k"], sort=False).ngroup().to_numpy()
    c["_g"] = gid
    c["_start"] = start.to_numpy()
    c["_bad"] = (c["flag"] != "").astype(np.int64)
    # cycle-shape check: abnormal share of the scored cycles (torqlog.signal.anomaly)
    score = c["anomaly_score"] if "anomaly_score" in c else pd.Series(np.nan, index=c.index)
    c["_scored"] = np.isfinite(score.to_numpy(dtype=np.float64)).astype(np.int64)
    c["_abn"] = (score.to_numpy(dtype=np.float64) > 1.0).astype(np.int64)
    g_all = c.groupby("_g", sort=True)
    out = g_all.agg(machine=("machine", "first"), date=("date", "first"),
                    shift=("shift", "first"), start_time=("_start", "min"),
                    cycles_total=("cycle", "size"), flagged=("_bad", "sum"),
                    scored=("_scored", "sum"), abnormal=("_abn", "sum"))
    if by == "file":
        out.insert(1, "file", g_all["file"].first())
    g = c[c["_bad"] == 0].groupby("_g", sort=True)
    stats = pd.DataFrame({
        "cycles": g.size(),
        "cycles_per_min": 60.0 / g["duration_s"].median(),
        "energy_swing_J_median": g["energy_swing_J"].median(),
        "energy_swing_J_p95": g["energy_swing_J"].quantile(0.95),
        "cs_median": g["cs"].median(),
        "cs_p95": g["cs"].quantile(0.95),
        "torque_peak_Nm_p99": g["torque_peak_Nm"].quantile(0.99),
        "work_J_mean": g["work_J"].mean(),
    })
    out = out.join(stats, how="left")
    out["cycles"] = out["cycles"].fillna(0).astype(np.int64)
    out["flagged_share"] = out.pop("flagged") / out["cycles_total"]
    scored = out.pop("scored")
    out["anomaly_rate"] = (out.pop("abnormal") / scored).where(scored > 0)
    if by == "day":
        out["shift"] = ""
    out["start_time"] = pd.DatetimeIndex(out["start_time"]).tz_convert("UTC")
    out = out.sort_values(["start_time", "machine"], kind="stable")
    rank = np.empty(len(out), dtype=np.int64)
    rank[out.index.to_numpy()] = np.arange(len(out))
    c["group"] = rank[gid]
    cols = ["machine", "date", "shift", "start_time", "cycles", "cycles_total",
            "cycles_per_min", "energy_swing_J_median", "energy_swing_J_p95", "cs_median",
            "cs_p95", "torque_peak_Nm_p99", "work_J_mean", "flagged_share", "anomaly_rate"]
    if by == "file":
        cols.insert(1, "file")
    return (c.drop(columns=["_g", "_start", "_bad", "_scored", "_abn"]),
            out[cols].reset_index(drop=True))


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
        ``individuals`` (beyond ±k·σ), ``ewma`` (EWMA beyond its limits) or ``run``
        (the run rule); ``charts``: long table (row, machine, figure, value, centre, lcl,
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
                limits.append({"machine": machine, "figure": fig, "centre": None,
                               "sigma": None, "lcl": None, "ucl": None,
                               "baseline_groups": int(np.isfinite(bx).sum()),
                               "note": "too few baseline values: not charted"})
                continue
            m_base = int(np.isfinite(bx).sum())
            k_eff, l_eff, c_var = baseline_factors(o.k, o.L, m_base, o.limits)
            centre, sigma, lcl, ucl = individuals_limits(bx, k_eff)
            z, zl, zu = ewma_chart(x, centre, sigma, o.lam, l_eff, c_var)
            # runs are counted afresh from the first group after the baseline: the
            # baseline points set the centre line, so a run among them says little
            hi_r, lo_r = np.zeros(x.size, bool), np.zeros(x.size, bool)
            for part in (in_base, ~in_base):
                hi_r[part], lo_r[part] = run_rule(x[part], centre, run_len)
            marks = {"individuals_high": x > ucl, "individuals_low": x < lcl,
                     "ewma_high": z > zu, "ewma_low": z < zl,
                     "run_high": hi_r, "run_low": lo_r}
            for name, m in marks.items():
                for j in np.flatnonzero(m):
                    flags[idx[j]].append(f"{fig}:{name}")
                hit |= m
            limits.append({"machine": machine, "figure": fig, "centre": centre,
                           "sigma": sigma, "lcl": lcl, "ucl": ucl, "k_eff": k_eff,
                           "ewma_L_eff": l_eff, "baseline_groups": m_base, "note": ""})
            charts.append(pd.DataFrame({
                "row": idx, "machine": machine, "figure": fig, "value": x,
                "centre": centre, "sigma": sigma, "lcl": lcl, "ucl": ucl, "ewma": z, "ewma_lcl": zl,
                "ewma_ucl": zu, "baseline": in_base,
                "flagged": np.any(np.column_stack(list(marks.values())), axis=1)}))
        after = np.flatnonzero(hit & ~in_base)
        onsets.append({"machine": machine,
                       "row": int(idx[after[0]]) if after.size else None})
    chart = pd.concat(charts, ignore_index=True) if charts else pd.DataFrame(
        columns=["row", "machine", "figure", "value", "centre", "sigma", "lcl", "ucl", "ewma",
                 "ewma_lcl", "ewma_ucl", "baseline", "flagged"])
    return flags, chart, limits, onsets


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
    cycles : DataFrame
        Every cycle of every good file with ``machine``, ``file``, ``start_time`` (UTC),
        ``date``, ``shift``, ``group`` and the cycle columns.
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
    cycles: pd.DataFrame
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

    def cycles_table(self) -> pd.DataFrame:
        """The per-cycle table as shown (local ``start_time``)."""
        c = self.cycles.copy()
        c["start_time"] = self.local(c["start_time"])
        return c

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
    c, groups = group_cycles(c, calendar, by)
    flags, charts, limits, onsets = detect_drift(groups, drift, baseline)
    groups = groups.copy()
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
    files = files or []
    any_tz = any(f.get("tz_given") for f in files) if files else not naive
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
        "shifts": {"starts": list(calendar.starts), "names": list(calendar.names),
                   "timezone": calendar.timezone, "zone": calendar.zone},
        "drift": {"figures": list(drift.figures),
                  "baseline": "table" if baseline is not None else
                  f"first {drift.baseline_groups} groups per machine",
                  "individuals": f"mean ± {drift.k:g}·MR̄/{D2_MR2}", "k": drift.k,
                  "limits": drift.limits,
                  "ewma_lambda": drift.lam, "ewma_L": drift.L,
                  "run_rule": drift.run_rule, "run_length": RUN_RULES[drift.run_rule]},
    })
    return TrendResult(groups, c, charts, limits, files, list(failed or []), onset, shown,
                       opts, notes, display)


def run_trend(jobs: Sequence[FileJob], calendar: ShiftCalendar, *, by: str = "shift",
              drift: DriftOptions = DriftOptions(), baseline: pd.DataFrame | None = None,
              workers: int | None = None, client: Any = None,
              progress: Callable[[], None] | None = None,
              missing: Sequence[dict[str, str]] = ()) -> TrendResult:
    """Run the batch and build the trend.

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

    Returns
    -------
    TrendResult
        ``failed`` lists every file that could not be used, with its reason.

    Raises
    ------
    DataError
        When no file could be used.
    """
    outcomes = run_files(jobs, workers=workers, client=client, progress=progress)
    cycles, files, failed = combine(outcomes, calendar)
    failed = list(missing) + failed
    if cycles.empty:
        first = f"{failed[0]['file']}: {failed[0]['reason']}" if failed else "no files given"
        more = f" (and {len(failed) - 1} more)" if len(failed) > 1 else ""
        raise DataError(f"no file could be used: {first}{more}")
    o = jobs[0].options if jobs else CycleOptions()
    copts = asdict(o)
    copts.pop("block_rows", None)
    return trend_table(cycles, calendar, by=by, drift=drift, baseline=baseline, files=files,
                       failed=failed, options={"cycles": copts})


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
