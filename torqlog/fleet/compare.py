"""A fleet table: one row per machine, to compare and rank the machines of a plant.

Built from the per-cycle table of a trend over several machines (:mod:`torqlog.fleet.trend`),
each machine's target Cs (its profile), the sizing of its latest log (the calibrated
added inertia and the motor's RMS load, taken from the sizing result's keys by name) and
the drift status per machine. Rows rank by how far the worst decile of Cs stands above
the target (worst first) unless another column is chosen.

Cs of a machine: the median, and the worst decile as its 90th percentile (a tenth of the
clean cycles fluctuate more), over every clean cycle of every log of the machine.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from torqlog.errors import UsageError

if TYPE_CHECKING:
    import pandas as pd

#: Columns of the fleet table, in order.
FLEET_COLUMNS: tuple[str, ...] = (
    "rank", "machine", "logs", "cycles", "last_log", "cs_median", "cs_p90", "target_cs",
    "cs_p90_over_target", "status", "added_inertia_kgm2", "motor_rms_load",
    "anomaly_rate", "flagged_share", "drift")

#: Keys of a sizing result tried in order for the added inertia (calibrated first).
ADDED_INERTIA_KEYS = ("added_inertia_kgm2",)


def _get(d: Mapping[str, Any] | None, dotted: str) -> Any:
    cur: Any = d
    for part in dotted.split("."):
        if not isinstance(cur, Mapping) or part not in cur:
            return None
        cur = cur[part]
    return cur


def size_figures(size: Mapping[str, Any] | None) -> dict[str, Any]:
    """Added inertia [kg*m^2] and motor RMS load [-] from a sizing result, by key name.

    The added inertia is the first of :data:`ADDED_INERTIA_KEYS` present; the motor RMS
    load is ``drive.existing.motor_torque_rms_Nm / drive.existing.motor_torque_rated_Nm``
    (the motor's RMS torque now over its rated torque; above 1 the motor runs hot).
    """
    out: dict[str, Any] = {"added_inertia_kgm2": None, "added_inertia_key": None,
                           "motor_rms_load": None}
    for key in ADDED_INERTIA_KEYS:
        v = _get(size, key)
        if isinstance(v, int | float) and math.isfinite(v):
            out["added_inertia_kgm2"], out["added_inertia_key"] = float(v), key
            break
    rms = _get(size, "drive.existing.motor_torque_rms_Nm")
    rated = _get(size, "drive.existing.motor_torque_rated_Nm")
    if isinstance(rms, int | float) and isinstance(rated, int | float) and rated > 0:
        out["motor_rms_load"] = float(rms) / float(rated)
    return out


@dataclass(frozen=True)
class FleetResult:
    """One row per machine (see :data:`FLEET_COLUMNS`), ranked.

    Attributes
    ----------
    rows : tuple of dict
        The rows in rank order (SI, keys with unit suffixes).
    options : dict
        Sort column and order, where each figure came from.
    notes : tuple of str
    """

    rows: tuple[dict[str, Any], ...]
    options: dict[str, Any]
    notes: tuple[str, ...] = field(default_factory=tuple)

    def to_dict(self) -> dict[str, Any]:
        """The JSON contract: ``{"machines": [...], "options": {...}, "notes": [...]}``."""
        return {"machines": [dict(r) for r in self.rows], "options": dict(self.options),
                "notes": list(self.notes)}

    def to_pandas(self) -> pd.DataFrame:
        """The fleet table, one row per machine in rank order."""
        import pandas as pd

        return pd.DataFrame(list(self.rows), columns=list(FLEET_COLUMNS))

    def sorted_by(self, column: str, descending: bool | None = None) -> FleetResult:
        """The same table ranked by another column (see :func:`rank_rows`)."""
        rows = rank_rows(list(self.rows), column, descending)
        return FleetResult(tuple(rows), {**self.options, "sort_by": column,
                                         "descending": _descending(column, descending)},
                           self.notes)

    def _repr_html_(self) -> str:
        from torqlog.io.notebook import frame_html

        return frame_html("Fleet", self.to_pandas(), self.options, self.notes)

    def write_html(self, path: str | Path, title: str = "Fleet") -> Path:
        """Write the fleet table as a self-contained HTML page (click a header to sort)."""
        import html

        from torqlog.io.notebook import frame_html

        body = frame_html(title, self.to_pandas(), self.options, self.notes)
        body = body.replace("<table><tr><th>", "<table id=fleet class=sortable><tr><th>", 1)
        page = (f"<!doctype html><html lang=en><head><meta charset=utf-8>"
                f"<title>{html.escape(title)}</title></head><body>{body}"
                f"<p><small>{html.escape(FLEET_CAUTION)}</small></p>"
                f"<script>{SORT_SCRIPT}</script></body></html>")
        p = Path(path)
        p.write_text(page, encoding="utf-8")
        return p


#: Shown under every fleet page: the added inertia is a sizing estimate, not a design.
FLEET_CAUTION = ("Added inertia figures are preliminary engineering estimates; a flywheel "
                 "retrofit, its guards and its shaft follow the applicable codes and "
                 "standards and are approved by a qualified, licensed engineer.")

#: Click a column header of any ``table.sortable`` to sort by it (again to reverse); a
#: cell's exact ``data-value`` is compared when it has one, else its text; empty cells and
#: "–" go last. Used by fleet.html and by the report's fleet page (no network, no library).
SORT_SCRIPT = """
document.querySelectorAll('table.sortable').forEach(function (t) {
  var body = t.tBodies.length ? t.tBodies[0] : t;
  var head = t.tHead ? t.tHead.rows[0] : t.rows[0];
  Array.from(head.cells).forEach(function (th, i) {
    th.style.cursor = 'pointer';
    th.title = 'click to sort';
    th.addEventListener('click', function () {
      var rows = Array.from(body.rows).filter(function (r) { return r !== head; });
      var down = th.dataset.down !== '1'; th.dataset.down = down ? '1' : '0';
      var key = function (r) {
        var c = r.cells[i], v = c.dataset.value;
        v = (v === undefined || v === '') ? c.textContent.trim() : v;
        return v === '\u2013' ? '' : v;
      };
      rows.sort(function (a, b) {
        var x = key(a), y = key(b);
        if (x === '' || y === '') { return (x === '') - (y === ''); }
        var nx = Number(x.replace(/,/g, '')), ny = Number(y.replace(/,/g, ''));
        var c = (isNaN(nx) || isNaN(ny)) ? x.localeCompare(y) : nx - ny;
        return down ? -c : c;
      });
      rows.forEach(function (r) { body.appendChild(r); });
    });
  });
});
"""


#: Columns where a larger value is better, so ranking puts the smallest first.
_BETTER_HIGH = ("machine", "logs", "cycles", "last_log", "rank")


def _descending(column: str, descending: bool | None) -> bool:
    return (column not in _BETTER_HIGH) if descending is None else descending


def rank_rows(rows: list[dict[str, Any]], column: str,
              descending: bool | None = None) -> list[dict[str, Any]]:
    """Sort rows by ``column`` (worst first for figures; empty values last) and number them.

    Raises
    ------
    UsageError
        An unknown column, naming the valid ones.
    """
    if column not in FLEET_COLUMNS:
        raise UsageError(f"unknown fleet column {column!r}; sort by one of "
                         f"{', '.join(FLEET_COLUMNS)}")
    desc = _descending(column, descending)

    def missing(r: dict[str, Any]) -> bool:
        v = r.get(column)
        return v is None or (isinstance(v, float) and not math.isfinite(v))

    present = sorted((r for r in rows if not missing(r)), key=lambda r: r[column],
                     reverse=desc)
    out = present + [r for r in rows if missing(r)]
    return [{**r, "rank": i} for i, r in enumerate(out, start=1)]


def _date(t: Any) -> str:
    import pandas as pd

    return pd.Timestamp(t).date().isoformat()


def _drift_text(onset: Mapping[str, Any] | None, judged: bool) -> str:
    if not judged:
        return "not judged (baseline only)"
    if onset is None or onset.get("date") is None:
        return "none"
    return f"since {onset['date']} {onset.get('shift') or ''}".strip()


def fleet_table(cycles: pd.DataFrame | Mapping[str, Mapping[str, Any]], *,
                targets: Mapping[str, float | None] | None = None,
                sizes: Mapping[str, Mapping[str, Any] | None] | None = None,
                onsets: Sequence[Mapping[str, Any]] = (),
                unjudged: Sequence[str] = (), sort_by: str = "cs_p90_over_target",
                descending: bool | None = None) -> FleetResult:
    """Compare machines: one row each, ranked.

    Parameters
    ----------
    cycles : DataFrame or mapping
        Per-cycle rows of every log: ``machine``, ``file``, ``start_time``, ``cs``
        [-], ``flag`` ("" for a clean cycle), optionally ``anomaly`` (true for an
        anomalous cycle shape); or those figures per machine already reduced
        (:func:`trend_figures` of a trend's per-group summaries).
    targets : mapping, optional
        Machine -> target Cs.
    sizes : mapping, optional
        Machine -> sizing result (the JSON of ``torqlog size``) of its latest log.
    onsets : sequence of dict
        Per machine ``{"machine", "date", "shift", ...}`` of the first drifted group
        (:attr:`torqlog.fleet.trend.TrendResult.onsets`).
    unjudged : sequence of str
        Machines whose drift was not judged (all their groups were in the baseline).
    sort_by : str
        A column of :data:`FLEET_COLUMNS`; ranked worst first for figures.
    descending : bool, optional
        Override the order.

    Returns
    -------
    FleetResult
    """
    targets = targets or {}
    sizes = sizes or {}
    by_onset = {o["machine"]: o for o in onsets}
    rows = []
    notes = []
    per = cycles if isinstance(cycles, Mapping) else _table_figures(cycles)
    for machine, f in per.items():
        med, p90 = f["cs_median"], f["cs_p90"]
        target = targets.get(machine)
        ratio = p90 / target if (p90 is not None and target) else None
        if p90 is None:
            status = "no Cs in the logs"
        elif not target:
            status = "no target"
        else:
            status = "within target" if ratio <= 1.0 else "over target"
        figs = size_figures(sizes.get(machine))
        if sizes.get(machine) is not None and figs["added_inertia_key"] is None:
            notes.append(f"{machine}: the sizing result has no added inertia")
        last = f["last"]
        rows.append({
            "rank": 0, "machine": machine, "logs": f["logs"], "cycles": f["cycles"],
            "last_log": None if last is None or last != last else _date(last),
            "cs_median": med, "cs_p90": p90, "target_cs": target,
            "cs_p90_over_target": ratio, "status": status,
            "added_inertia_kgm2": figs["added_inertia_kgm2"],
            "motor_rms_load": figs["motor_rms_load"], "anomaly_rate": f["anomaly_rate"],
            "flagged_share": f["flagged_share"],
            "drift": _drift_text(by_onset.get(machine), machine not in unjudged),
        })
    if rows and all(r["anomaly_rate"] is None for r in rows):
        notes.append("anomaly_rate: no cycle-shape anomaly scores in these results; "
                     "flagged_share gives the share of cycles flagged as untrustworthy")
    rows = rank_rows(rows, sort_by, descending)
    keys = sorted({size_figures(s)["added_inertia_key"] for s in sizes.values()} - {None})
    options = {"sort_by": sort_by, "descending": _descending(sort_by, descending),
               "cs_worst_decile": "90th percentile of the clean cycles' Cs",
               "added_inertia_from": keys,
               "motor_rms_load": "drive.existing.motor_torque_rms_Nm / "
                                 "drive.existing.motor_torque_rated_Nm of the latest log"}
    return FleetResult(tuple(rows), options, tuple(notes))


def _table_figures(cycles: pd.DataFrame) -> dict[str, dict[str, Any]]:
    """Per machine from a per-cycle table: ``logs``, ``cycles`` (clean), ``last`` (latest
    cycle start), ``cs_median``, ``cs_p90``, ``anomaly_rate`` (abnormal / all cycles),
    ``flagged_share``."""
    out = {}
    for machine, c in cycles.groupby("machine", sort=False):
        clean = c["flag"].astype(str) == "" if "flag" in c else np.ones(len(c), bool)
        cs = c.loc[clean, "cs"].to_numpy(dtype=float)
        cs = cs[np.isfinite(cs)]
        out[machine] = {
            "logs": int(c["file"].nunique()), "cycles": int(clean.sum()),
            "last": c["start_time"].max() if "start_time" in c else None,
            "cs_median": float(np.median(cs)) if cs.size else None,
            "cs_p90": float(np.quantile(cs, 0.9)) if cs.size else None,
            "anomaly_rate": (float(np.mean(c["anomaly"].astype(bool))) if "anomaly" in c
                             else None),
            "flagged_share": float(1.0 - np.mean(clean)) if len(c) else None}
    return out


def trend_figures(trend: Any) -> dict[str, dict[str, Any]]:
    """Per machine from a trend's per-group summaries, as :func:`_table_figures` gives
    them from a per-cycle table (Cs quantiles exact while the merged groups fit the
    budget, from the quantile sketch beyond)."""
    logs: dict[str, set[str]] = {}
    for f in trend.files:
        logs.setdefault(f["machine"], set()).add(f["file"])
    out = {}
    for machine, m in trend.machine_summary().items():
        last = trend.local([m["last"]])[0] if m["last"] > np.iinfo(np.int64).min else None
        out[machine] = {
            "logs": len(logs.get(machine, ())), "cycles": m["cycles"], "last": last,
            "cs_median": m["cs"].median(), "cs_p90": m["cs"].quantile(0.9),
            "anomaly_rate": m["abnormal"] / m["cycles_total"] if m["cycles_total"] else None,
            "flagged_share": (1.0 - m["cycles"] / m["cycles_total"] if m["cycles_total"]
                              else None)}
    return out


def fleet_from_trend(trend: Any, latest: Mapping[str, Any],
                     profiles: Mapping[str, Any] | None = None, *, size: bool = True,
                     sort_by: str = "cs_p90_over_target",
                     descending: bool | None = None) -> FleetResult:
    """The fleet table of a trend over several machines.

    Parameters
    ----------
    trend : TrendResult
        From :func:`torqlog.fleet.trend.run_trend`.
    latest : mapping
        Machine -> the :class:`torqlog.fleet.batch.FileJob` of its latest log (sized when
        ``size``).
    profiles : mapping, optional
        Machine -> :class:`torqlog.io.profile.MachineProfile` (target Cs, motor).
    size : bool
        Size each machine's latest log for the added inertia and the motor RMS load.
    sort_by, descending
        See :func:`fleet_table`.

    Returns
    -------
    FleetResult
    """
    from torqlog.errors import TorqlogError

    profiles = profiles or {}
    targets = {m: (p.machine.get("target_cs") if p is not None else None)
               for m, p in profiles.items()}
    sizes: dict[str, Any] = {}
    notes: list[str] = []
    if size:
        from torqlog.signal.cycles import analyse_cycles
        from torqlog.sizing.inertia import size_log, size_log_dict

        for machine, job in latest.items():
            prof = profiles.get(machine)
            try:
                res = analyse_cycles(job.path, job.options, **job.read)
                sizes[machine] = size_log_dict(size_log(res, prof), res)
            except TorqlogError as exc:
                notes.append(f"{machine}: not sized ({exc})")
    unjudged = [n.split(": ", 1)[0].removeprefix("machine ") for n in trend.notes
                if n.endswith("drift not judged")]
    result = fleet_table(trend_figures(trend), targets=targets, sizes=sizes,
                         onsets=trend.onsets, unjudged=unjudged, sort_by=sort_by,
                         descending=descending)
    return FleetResult(result.rows, {**result.options, "sized": size},
                       tuple(notes) + result.notes)
