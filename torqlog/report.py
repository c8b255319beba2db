"""The report: one run of the whole chain and one self-contained document to read.

:func:`build_report` runs the stages on one or more logs of one machine -- survey
(``inspect``), cycles, order spectrum, sizing (``size``), flywheel (``flywheel``), shaft
before and after (``shaft``) and, for several logs over time, the shift trend -- by
calling the same library functions the commands call, so every number in the report is
the number the command would print. It keeps each stage's JSON contract and the figures
(PNG at print resolution). :func:`render_html` turns that into one HTML file (jinja2,
every value escaped, figures embedded as base64, CSS for A4 print, no network needed);
:func:`write_pdf` writes the same content with matplotlib's PDF backend.

The first log is the design log: its cycles set the recommendation, the flywheel and the
shaft checks. Every log appears in the summary table and, when ``torqlog.trend`` is
available and the logs carry start times, in the trend.

References
----------
.. [1] R. G. Budynas and J. K. Nisbett, *Shigley's Mechanical Engineering Design*,
   10th ed., McGraw-Hill, 2015, sec. 16-12 (energy swing, Cs, ΔE ≈ I·Cs·ω̄²).
.. [2] S. P. Timoshenko and J. N. Goodier, *Theory of Elasticity*, 3rd ed., 1970, sec. 32
   (rotating-disc stresses of the flywheel check).
"""

from __future__ import annotations

import base64
import hashlib
import importlib.util
import math
import tempfile
import textwrap
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import numpy as np

from torqlog import __version__
from torqlog.errors import DataError, TorqlogError

#: Caution every report carries, whatever the stages found (DESIGN.md, Safety).
GENERAL_CAUTION = (
    "This report is a preliminary engineering estimate. Flywheels store energy that is "
    "released violently when one bursts, and a shaft that fails can injure people: guards, "
    "spin testing, inspection and the final design follow the applicable codes and "
    "standards and are approved by a qualified, licensed engineer.")

#: Section ids of the HTML report, in order (``trends`` only with a trend).
SECTIONS = ("summary", "cautions", "how-to-read", "inputs", "measured", "recommendation",
            "flywheel", "shaft", "trends")

_RPM = 60.0 / (2.0 * math.pi)


@dataclass(frozen=True)
class ReportFigure:
    """One figure of the report.

    Attributes
    ----------
    key : str
        Short name (``cycles``, ``distributions``, ``spectrum``, ``drive``, ``flywheel``,
        ``shaft``, ``trend_...``); also the PNG's file stem.
    section : str
        Id of the section it belongs to.
    title, caption : str
    png : bytes
        The PNG file.
    path : str
        Where the PNG was written.
    """

    key: str
    section: str
    title: str
    caption: str
    png: bytes = field(repr=False)
    path: str = ""

    @property
    def data_uri(self) -> str:
        """``data:image/png;base64,...`` for an ``<img src>``."""
        return "data:image/png;base64," + base64.b64encode(self.png).decode("ascii")


@dataclass(frozen=True)
class ReportData:
    """Everything a report shows; each stage as its command's JSON contract.

    Attributes
    ----------
    machine : str
        Machine name (profile ``[machine] name``, else the profile file name).
    profile : dict
        ``path``, ``sha256`` and ``text`` of the machine profile.
    logs : list of dict
        Per log: ``path``, ``name``, ``sha256``, ``bytes``, ``inspect`` (the JSON of
        ``torqlog inspect``) and ``cycles`` (the JSON of ``torqlog cycles``).
    spectrum : dict or None
        Order spectrum of the design log's mean-cycle torque (``OrderSpectrum.to_dict``).
    size, flywheel, shaft, trend : dict or None
        JSON of ``torqlog size``, ``flywheel``, ``shaft`` and ``trend``; None when the
        stage could not run (the reason is in ``skipped``).
    skipped : dict
        Stage -> one sentence on why it did not run.
    options : dict
        Every option that produced the report, by stage.
    figures : list of ReportFigure
    cautions : list of str
        The cautions of every stage, the general one first.
    notes : list of str
        Things the reader should know.
    version, created : str
        torqlog version and the UTC time the report was built.
    failed_logs : list of dict
        ``{"file", "reason"}`` of every log that could not be read; the report is built
        from the others (each also has a ``skipped`` entry).
    """

    machine: str
    profile: dict[str, Any]
    logs: list[dict[str, Any]]
    spectrum: dict[str, Any] | None
    size: dict[str, Any] | None
    flywheel: dict[str, Any] | None
    shaft: dict[str, Any] | None
    trend: dict[str, Any] | None
    skipped: dict[str, str]
    options: dict[str, Any]
    figures: list[ReportFigure]
    cautions: list[str]
    notes: list[str]
    version: str
    created: str
    failed_logs: list[dict[str, str]] = field(default_factory=list)

    @property
    def design(self) -> dict[str, Any]:
        """The design log's entry (the first log)."""
        return self.logs[0]

    def figures_in(self, section: str) -> list[ReportFigure]:
        """The figures of one section, in order."""
        return [f for f in self.figures if f.section == section]

    def stage_json(self) -> dict[str, Any]:
        """Each stage's JSON contract by command name (``inspect`` and ``cycles`` are
        lists, one per log); stages that did not run are left out."""
        out: dict[str, Any] = {"inspect": [g["inspect"] for g in self.logs],
                               "cycles": [g["cycles"] for g in self.logs]}
        for name in ("size", "flywheel", "shaft", "trend"):
            if getattr(self, name) is not None:
                out[name] = getattr(self, name)
        if self.spectrum is not None:
            out["spectrum"] = self.spectrum
        return out

    def verdicts(self) -> list[dict[str, str]]:
        """One line per check with a verdict: ``check``, ``verdict``, ``text``."""
        rows: list[dict[str, str]] = []
        if self.flywheel is not None:
            fw = self.flywheel
            bad = [f"{c['name']} {_num(c['value'])} against the limit {_num(c['limit'])}"
                   for c in fw["checks"] if not c["ok"]]
            rows.append({"check": "flywheel (burst margin, rim speed, fit)",
                         "verdict": fw["verdict"],
                         "text": "failed: " + "; ".join(bad) if bad else "every check passes"})
        if self.shaft is not None:
            for state in ("before", "after"):
                st = self.shaft.get(state)
                if st is None:
                    continue
                rows.append({"check": f"shaft lateral, {state}",
                             "verdict": st["lateral"]["verdict"],
                             "text": st["lateral"]["margin_text"]})
                if st["torsional"] is not None:
                    rows.append({"check": f"shaft torsional, {state}",
                                 "verdict": st["torsional"]["verdict"],
                                 "text": st["torsional"]["margin_text"]})
                if st.get("strength"):  # fatigue, yield, key, fit: governing check named
                    rows.append({"check": f"shaft strength, {state}",
                                 "verdict": st["strength"]["verdict"],
                                 "text": st["strength"]["margin_text"]})
        return rows


# ----------------------------------------------------------------------------- helpers
def file_sha256(path: str | Path, block: int = 1 << 20) -> str:
    """SHA-256 of a file's bytes, as 64 hex digits (read in blocks)."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(block), b""):
            h.update(chunk)
    return h.hexdigest()


def _plain(obj: Any) -> Any:
    """numpy scalars and arrays to plain Python, NaN to None (for JSON-like dicts)."""
    if isinstance(obj, dict):
        return {str(k): _plain(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [_plain(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return [_plain(v) for v in obj.tolist()]
    if isinstance(obj, np.generic):
        obj = obj.item()
    if isinstance(obj, float) and not math.isfinite(obj):
        return None
    return obj


def _figure(key: str, section: str, title: str, caption: str, path: Path) -> ReportFigure:
    return ReportFigure(key, section, title, caption, path.read_bytes(), str(path))


def _trend_available() -> bool:
    return importlib.util.find_spec("torqlog.trend") is not None


# ----------------------------------------------------------------------------- build
def build_report(logs: Sequence[str | Path], profile: str | Path, *,
                 cycle_options: Any = None, read: Mapping[str, Any] | None = None,
                 target_cs: float | None = None, quantile: float | str = 0.95,
                 seed: int = 0, figure_dir: str | Path | None = None,
                 trend: bool = True) -> ReportData:
    """Run the chain on the logs of one machine and collect what the report shows.

    Parameters
    ----------
    logs : sequence of path
        Logger exports of one machine; the first is the design log.
    profile : path
        Machine profile (TOML).
    cycle_options : CycleOptions, optional
        Cycle-stage options; default :func:`torqlog.cycles.options_from_profile`.
    read : mapping, optional
        Reading options ``roles``, ``units``, ``rate`` [Hz], ``start`` as for
        :func:`torqlog.ingest.sniff_layout`, for every log.
    target_cs : float, optional
        Target coefficient of speed fluctuation (default: the profile's).
    quantile : float or "max"
        Design quantile of the per-cycle energy swing.
    seed : int
        Bootstrap seed of the sizing interval.
    figure_dir : path, optional
        Folder for the PNG figures (created); default a temporary folder, removed after.
    trend : bool
        Run the shift trend when several logs are given and ``torqlog.trend`` exists.

    Returns
    -------
    ReportData

    Raises
    ------
    UsageError
        No log given.
    DataError
        A log cannot be read or holds too few cycles.

    References
    ----------
    Budynas & Nisbett, *Shigley's*, 10th ed., sec. 16-12.
    """
    from torqlog.errors import UsageError

    if not logs:
        raise UsageError("give at least one log file")
    if figure_dir is None:
        with tempfile.TemporaryDirectory(prefix="torqlog-report-") as tmp:
            return _build(logs, profile, cycle_options, dict(read or {}), target_cs,
                          quantile, seed, Path(tmp), trend)
    out = Path(figure_dir)
    out.mkdir(parents=True, exist_ok=True)
    return _build(logs, profile, cycle_options, dict(read or {}), target_cs, quantile, seed,
                  out, trend)


def _build(logs: Sequence[str | Path], profile_path: str | Path, cycle_options: Any,
           read: dict[str, Any], target_cs: float | None, quantile: float | str, seed: int,
           fig_dir: Path, with_trend: bool) -> ReportData:
    from torqlog import plots
    from torqlog.cycles import analyse_cycles, options_from_profile
    from torqlog.flywheel import flywheel_from_profile
    from torqlog.inertia import size_log, size_log_dict
    from torqlog.profile import load_profile
    from torqlog.shaft_check import check_shaft
    from torqlog.spectrum import mean_cycle_spectrum
    from torqlog.survey import survey_log

    prof = load_profile(profile_path)
    opts = cycle_options if cycle_options is not None else options_from_profile(prof)
    machine = prof.machine.get("name") or Path(profile_path).stem
    notes: list[str] = []
    skipped: dict[str, str] = {}
    figures: list[ReportFigure] = []

    entries: list[dict[str, Any]] = []
    results = []
    failed: list[dict[str, str]] = []
    for log in logs:
        try:  # one bad log among several: keep the others, name the bad one
            # chunks of the cycle stage's size, read in turn: the survey's buffers stay
            # small; only the design log (the first good one) keeps its rows, for the
            # sizing's bootstrap over every clean cycle, and no entry holds rows
            survey = survey_log(log, nominal_speed=opts.nominal_speed,
                                block_rows=opts.block_rows, read_ahead=False, **read)
            res = analyse_cycles(log, opts, keep_rows=not results, **read)
        except DataError as exc:
            if len(logs) == 1:
                raise
            failed.append({"file": str(log), "reason": str(exc)})
            skipped[f"log {log}"] = f"left out: {exc}"
            continue
        results.append(res)
        entries.append({"path": str(log), "name": Path(log).name,
                        "sha256": file_sha256(log), "bytes": Path(log).stat().st_size,
                        "inspect": _plain(survey.to_dict()),
                        "cycles": _plain(res.to_dict(rows=False))})
    if not results:
        raise DataError("no log could be used: "
                        + "; ".join(f["reason"] for f in failed))
    logs = [e["path"] for e in entries]
    design = results[0]
    if len(logs) > 1:
        notes.append(f"{len(logs)} logs: the recommendation, flywheel and shaft checks are "
                     f"from the first, {Path(logs[0]).name}; every log is in the summary.")
    notes += [f"{Path(design.source).name}: {n}" for n in design.notes]

    # --- measured state
    figures.append(_figure("cycles", "measured", "Torque, E(θ) and speed over the cycle",
                           "Every clean cycle faint, the mean cycle bold. E(θ) is the energy "
                           "above the mean torque; its range over the cycle is the energy "
                           "swing ΔE.", plots.plot_cycles(design, fig_dir / "cycles.png")))
    figures.append(_figure(
        "distributions", "measured", "Energy swing and speed fluctuation per cycle",
        "How ΔE and Cs vary from cycle to cycle; the sizing takes the design quantile of ΔE.",
        plots.plot_distributions(design.table, fig_dir / "distributions.png",
                                 target_cs=target_cs or prof.machine.get("target_cs"),
                                 quantile=quantile,
                                 title=f"Distributions over {Path(design.source).name}")))
    spectrum = None
    has_torque = "torque" in design.layout.roles and \
        bool(np.isfinite(design.mean_cycle["torque_mean"].to_numpy(float)).all())
    if has_torque:
        spectrum = mean_cycle_spectrum(design)
        min_share = prof.torsional.get("min_share", 0.05)
        figures.append(_figure(
            "spectrum", "measured", "Order spectrum of the torque",
            "Which multiples of the shaft speed drive the machine; the significant orders "
            "are held against the shaft's natural frequencies.",
            plots.plot_order_spectrum(spectrum, fig_dir / "spectrum.png",
                                      min_share=min_share,
                                      speed_rpm=design.summary["speed_mean_rpm"])))
    else:
        skipped["spectrum"] = (
            "the design log has no torque channel, so no order spectrum"
            if "torque" not in design.layout.roles else
            f"the design log has no clean cycle to average (flagged: "
            f"{', '.join(f'{k} {v}' for k, v in design.summary['flags'].items())}), so no "
            "order spectrum")

    # --- recommendation
    size = size_res = None
    try:
        size_res = size_log(design, prof, target_cs=target_cs, quantile=quantile, seed=seed)
        size = _plain(size_log_dict(size_res, design))
    except TorqlogError as exc:
        skipped["size"] = f"no sizing: {exc}"
    if size_res is not None and size_res.curve is not None:
        figures.append(_figure(
            "drive", "recommendation", "Drive simulation against added inertia",
            "Cs and the motor's peak torque simulated with the motor's slip for a range of "
            "added inertia; the star marks the recommendation.",
            plots.plot_drive_curve(size_res.to_pandas(), fig_dir / "drive.png",
                                   target_cs=size_res.target_cs,
                                   recommended=size_res.added_inertia)))

    # --- flywheel
    fw = fw_res = None
    if size is None:
        skipped["flywheel"] = "no flywheel proposal: the sizing did not run"
    elif not (size["added_inertia_kgm2"] or 0.0) > 0:
        skipped["flywheel"] = ("no flywheel proposal: no inertia needs adding"
                               if size["added_inertia_kgm2"] == 0.0 else
                               "no flywheel proposal: the existing inertia is unknown, so "
                               "the inertia to add is unknown")
    else:
        try:
            fw_res = flywheel_from_profile(prof, size=size,
                                           size_source=f"sizing of {design.source}")
            fw = _plain(fw_res.to_dict())
            fw["options"]["profile"] = str(profile_path)
        except TorqlogError as exc:
            skipped["flywheel"] = f"no flywheel proposal: {exc}"
    if fw_res is not None:
        figures.append(_figure(
            "flywheel", "flywheel", "Flywheel stresses at the operating speed",
            "Radial and hoop stress across the disc, with the allowable stress and strength.",
            plots.plot_flywheel_stresses(fw_res, fig_dir / "flywheel.png")))

    # --- shaft
    shaft = None
    if not prof.shaft:
        skipped["shaft"] = "no shaft check: the profile has no [shaft] section"
    else:
        ratio = float(prof.machine.get("flywheel_speed_ratio", 1.0))
        add_mass = fw_res.mass if fw_res is not None else None
        add_inertia = fw_res.inertia * ratio ** 2 if fw_res is not None else None
        if add_inertia is not None and not prof.torsional:
            add_inertia = None
        mean_rpm = design.summary["speed_mean_rpm"]
        try:
            sh = check_shaft(prof, speed=mean_rpm / _RPM if mean_rpm else None, orders=spectrum,
                             add_mass=add_mass, add_inertia=add_inertia,
                             cycle_torque=(design.mean_cycle["torque_mean"].to_numpy(float)
                                           if spectrum is not None else None))
            shaft = _plain(sh.to_dict())
            shaft["options"]["speed_source"] = ("mean speed of the design log" if mean_rpm
                                                else "profile [machine] speed_rpm")
            if add_inertia is not None:
                shaft["options"]["add_inertia_referred_to"] = (
                    f"the logged shaft (flywheel inertia × {ratio:g}²)")
            figures.append(_figure(
                "shaft", "shaft", "Shaft deflection, lateral modes and torque orders",
                "Static deflection and the first lateral mode shapes; the measured torque "
                "orders against the torsional natural frequencies.",
                plots.plot_shaft(sh, fig_dir / "shaft.png", spectrum=spectrum)))
        except TorqlogError as exc:
            skipped["shaft"] = f"no shaft check: {exc}"

    # --- trend
    trend = None
    if len(logs) > 1 and with_trend:
        if _trend_available():
            trend = _run_trend(logs, prof, opts, read, machine, fig_dir, figures, skipped)
        else:
            skipped["trend"] = "no trend: this torqlog has no trend module"

    cautions = [GENERAL_CAUTION]
    for stage in (size, fw, shaft):
        for c in (stage or {}).get("cautions", []):
            if c not in cautions:
                cautions.append(c)
    options = {
        "cycles": design.options,
        "report": {"design_log": str(logs[0]), "quantile": quantile, "seed": seed,
                   "target_cs": size["target_cs"] if size else target_cs,
                   "read": {k: v for k, v in read.items() if v}},
        "size": size["options"] if size else None,
        "flywheel": fw["options"] if fw else None,
        "shaft": shaft["options"] if shaft else None,
        "trend": trend["options"] if trend else None,
    }
    return ReportData(
        machine=str(machine),
        profile={"path": str(profile_path), "sha256": file_sha256(profile_path),
                 "text": Path(profile_path).read_text(encoding="utf-8")},
        logs=entries, spectrum=_plain(spectrum.to_dict()) if spectrum is not None else None,
        size=size, flywheel=fw, shaft=shaft, trend=trend, skipped=skipped,
        options=_plain(options), figures=figures, cautions=cautions, notes=notes,
        version=__version__, created=datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC"),
        failed_logs=failed)


def _run_trend(logs: Sequence[str | Path], prof: Any, opts: Any, read: dict[str, Any],
               machine: str, fig_dir: Path, figures: list[ReportFigure],
               skipped: dict[str, str]) -> dict[str, Any] | None:
    """The shift trend over the logs through :func:`torqlog.trend.run_trend`."""
    from torqlog.batch import FileJob
    from torqlog.trend import ShiftCalendar, run_trend

    reading = {k: v for k, v in read.items() if k != "start"}
    jobs = [FileJob(str(p), opts, machine, reading) for p in logs]
    try:
        res = run_trend(jobs, ShiftCalendar.build(profile=prof), workers=1)
    except TorqlogError as exc:
        skipped["trend"] = f"no trend: {exc}"
        return None
    for path in res.plot(fig_dir / "trend"):
        p = Path(path)
        figure = p.stem.removeprefix("trend_")
        if p.stem.startswith("trend_"):
            title, caption = (f"Trend of {figure} per shift",
                              "Each shift's value against control limits from the baseline "
                              "shifts; circled points are flagged.")
        else:
            title, caption = (f"{figure.replace('_', ' ').capitalize()} per shift",
                              "The spread of the per-cycle values in each shift.")
        figures.append(_figure(p.stem, "trends", title, caption, p))
    return _plain(res.to_dict())


# ----------------------------------------------------------------------------- render
def _num(x: Any, digits: int = 4, scale: float = 1.0) -> str:
    """A number to ``digits`` significant digits with thousands separators; None: '–'."""
    if x is None or isinstance(x, str):
        return "–" if x is None else x
    if isinstance(x, bool):
        return "yes" if x else "no"
    if isinstance(x, int) and scale == 1.0:
        return f"{x:,d}"
    v = float(x) * scale
    if not math.isfinite(v):
        return "–"
    if v == 0:
        return "0"
    mag = math.floor(math.log10(abs(v)))
    if mag >= digits or mag < -3:
        return f"{v:.{digits - 1}e}" if mag < -3 or mag >= 9 else f"{v:,.0f}"
    return f"{v:,.{max(digits - 1 - mag, 0)}f}"


def _exact(x: Any) -> str:
    """The exact value of a number for a ``data-value`` attribute ('' for None)."""
    if x is None or isinstance(x, bool):
        return ""
    return repr(float(x))


def _show(value: Any) -> str:
    """An option value as text."""
    if isinstance(value, float):
        return f"{value:.6g}"
    if isinstance(value, dict):
        return "; ".join(f"{k}: {_show(v)}" for k, v in value.items()) or "–"
    if isinstance(value, list | tuple):
        return ", ".join(_show(v) for v in value) or "–"
    return "–" if value is None else str(value)


def _flags(flags: Sequence[str]) -> str:
    """Drift flags ``figure:chart_side`` grouped by figure: ``"cs_median: individuals
    high, ewma high"``."""
    per: dict[str, list[str]] = {}
    for f in flags:
        fig, _, rule = str(f).partition(":")
        per.setdefault(fig, []).append(rule.replace("_", " "))
    return "; ".join(f"{k}: {', '.join(v)}" for k, v in per.items())


def _environment() -> Any:
    import jinja2

    env = jinja2.Environment(loader=jinja2.PackageLoader("torqlog", "templates"),
                             autoescape=True, undefined=jinja2.StrictUndefined,
                             trim_blocks=True, lstrip_blocks=True)
    env.filters.update(num=_num, exact=_exact, show=_show, flags=_flags)
    return env


#: Columns of the summary table: (group, label, JSON path in the cycles summary, scale).
SUMMARY_COLUMNS: tuple[tuple[str, str, str, float], ...] = (
    ("cycles", "clean", "cycles", 1.0),
    ("cycles", "in log", "cycles_total", 1.0),
    ("cycles", "per min", "cycle_rate_per_min", 1.0),
    ("speed [rpm]", "mean", "speed_mean_rpm", 1.0),
    ("torque [kN·m]", "mean", "torque_mean_Nm", 1e-3),
    ("torque [kN·m]", "peak p99", "torque_peak_Nm_p99", 1e-3),
    ("energy swing ΔE [kJ]", "median", "energy_swing_J.median", 1e-3),
    ("energy swing ΔE [kJ]", "p95", "energy_swing_J.p95", 1e-3),
    ("energy swing ΔE [kJ]", "max", "energy_swing_J.max", 1e-3),
    ("Cs [–]", "median", "cs.median", 1.0),
    ("Cs [–]", "p95", "cs.p95", 1.0),
    ("Cs [–]", "max", "cs.max", 1.0),
)


def summary_value(summary: Mapping[str, Any], path: str) -> Any:
    """A value of a cycles summary by dotted path (``"energy_swing_J.p95"``)."""
    value: Any = summary
    for part in path.split("."):
        value = value.get(part) if isinstance(value, Mapping) else None
    return value


def render_html(data: ReportData) -> str:
    """The report as one self-contained HTML document.

    Every value is escaped (jinja2 autoescape); figures are embedded as base64 PNG; the
    page needs no network and prints on A4.

    Parameters
    ----------
    data : ReportData

    Returns
    -------
    str
    """
    env = _environment()
    template = env.get_template("report.html")
    groups: list[tuple[str, int]] = []
    for group, *_ in SUMMARY_COLUMNS:
        if groups and groups[-1][0] == group:
            groups[-1] = (group, groups[-1][1] + 1)
        else:
            groups.append((group, 1))
    columns = [{"label": label, "key": key, "scale": scale}
               for _, label, key, scale in SUMMARY_COLUMNS]
    rows = [{"name": g["name"], "cells": [
        {"key": c["key"], "scale": c["scale"],
         "value": summary_value(g["cycles"]["summary"], c["key"])} for c in columns]}
        for g in data.logs]
    layouts: list[dict[str, Any]] = []  # logs with the same columns share one table
    for g in data.logs:
        cols = g["inspect"]["columns"]
        for lay in layouts:
            if lay["columns"] == cols:
                lay["logs"].append(g["name"])
                break
        else:
            layouts.append({"columns": cols, "logs": [g["name"]]})
    return template.render(d=data, summary_groups=groups, summary_columns=columns,
                           summary_rows=rows, layouts=layouts, general=GENERAL_CAUTION)


# ----------------------------------------------------------------------------- pdf
def report_text(data: ReportData) -> list[str]:
    """The report's findings as plain text lines (for the PDF's text pages)."""
    lines = [f"torqlog report: {data.machine}",
             f"torqlog {data.version}, {data.created}; profile {data.profile['path']} "
             f"(SHA-256 {data.profile['sha256'][:16]}…)", ""]
    lines.append("CAUTIONS")
    lines += [f"- {c}" for c in data.cautions]
    lines += ["", "LOGS"]
    for g in data.logs:
        s, i = g["cycles"]["summary"], g["inspect"]
        lines.append(f"- {g['name']}: SHA-256 {g['sha256'][:16]}…, {i['rows']} rows, "
                     f"{_num(i['duration_s'])} s at {_num(i['sample_rate_hz'])} Hz; "
                     f"{s['cycles']} clean of {s['cycles_total']} cycles at "
                     f"{_num(s['speed_mean_rpm'])} rpm; ΔE median "
                     f"{_num(summary_value(s, 'energy_swing_J.median'), scale=1e-3)} kJ, p95 "
                     f"{_num(summary_value(s, 'energy_swing_J.p95'), scale=1e-3)} kJ; Cs median "
                     f"{_num(summary_value(s, 'cs.median'))}")
    lines += ["", "RECOMMENDATION"]
    if data.size is not None:
        z = data.size
        lo, hi = z["ci95_kgm2"]
        lines.append(f"- target Cs {z['target_cs']:g}; design energy swing "
                     f"{_num(z['design_energy_swing_J'], scale=1e-3)} kJ; required inertia "
                     f"{_num(z['required_inertia_kgm2'])} kg·m² (95 % interval {_num(lo)} to "
                     f"{_num(hi)}); existing {_num(z['existing_inertia_kgm2'])}; added "
                     f"{_num(z['added_inertia_kgm2'])} kg·m² at the logged shaft, "
                     f"{_num(z['added_inertia_at_flywheel_kgm2'])} kg·m² at the flywheel")
        lines += [f"  note: {m}" for m in z["messages"]]
    else:
        lines.append(f"- {data.skipped.get('size', '')}")
    lines += ["", "FLYWHEEL AND SHAFT CHECKS"]
    if data.flywheel is not None:
        f = data.flywheel
        lines.append(f"- flywheel {f['shape']}, {f['material']}, OD "
                     f"{_num(f['outer_diameter_m'] * 1e3)} mm, width "
                     f"{_num(f['width_m'] * 1e3)} mm, {_num(f['mass_kg'])} kg; rim speed "
                     f"{_num(f['rim_speed_m_s'])} m/s (limit {_num(f['rim_speed_limit_m_s'])});"
                     f" stress safety factor {_num(f['stress_safety_factor'])} (required "
                     f"{_num(f['stress_safety_factor_required'])})")
    for stage in ("flywheel", "shaft", "trend"):
        if stage in data.skipped:
            lines.append(f"- {data.skipped[stage]}")
    lines += [f"- {v['check']}: {v['verdict'].upper()} — {v['text']}" for v in data.verdicts()]
    if data.notes:
        lines += ["", "NOTES"] + [f"- {n}" for n in data.notes]
    return lines


def write_pdf(data: ReportData, path: str | Path) -> Path:
    """Write the report as a PDF with matplotlib's own PDF backend (no browser).

    Text pages with the findings and cautions, then one A4 page per figure.

    Parameters
    ----------
    data : ReportData
    path : str or Path

    Returns
    -------
    Path
    """
    import io

    import matplotlib.image as mpimg
    import matplotlib.pyplot as plt
    from matplotlib.backends.backend_pdf import PdfPages

    from torqlog.plots import style

    a4 = (8.27, 11.69)
    wrapped: list[str] = []
    for line in report_text(data):
        wrapped += textwrap.wrap(line, 100, subsequent_indent="    ") or [""]
    per_page = 62
    from torqlog.outputs import atomic_path

    p = Path(path)
    with plt.rc_context(style()), atomic_path(p) as tmp, PdfPages(tmp) as pdf:
        info = pdf.infodict()
        info["Title"] = f"torqlog report: {data.machine}"
        info["Creator"] = f"torqlog {data.version}"
        for start in range(0, len(wrapped), per_page):
            fig = plt.figure(figsize=a4)
            fig.text(0.07, 0.96, "\n".join(wrapped[start:start + per_page]), va="top",
                     ha="left", family="DejaVu Sans Mono", fontsize=7.2, linespacing=1.35)
            pdf.savefig(fig)
            plt.close(fig)
        for f in data.figures:
            img = mpimg.imread(io.BytesIO(f.png), format="png")
            h, w = img.shape[:2]
            fig = plt.figure(figsize=a4)
            fig.text(0.07, 0.96, f.title, fontsize=12, fontweight="bold", va="top")
            fig.text(0.07, 0.935, textwrap.fill(f.caption, 110), fontsize=8, va="top")
            width = 0.86
            height = min(0.8, width * (h / w) * a4[0] / a4[1])
            ax = fig.add_axes((0.07, 0.9 - height, width, height))
            ax.imshow(img)
            ax.set_axis_off()
            pdf.savefig(fig, dpi=150)
            plt.close(fig)
    return p


def write_report(data: ReportData, html: str | Path, pdf: str | Path | None = None
                 ) -> list[Path]:
    """Write the HTML report (and the PDF); returns the files written."""
    from torqlog.outputs import write_text

    out = write_text(html, render_html(data))
    written = [out]
    if pdf is not None:
        written.append(write_pdf(data, pdf))
    return written


__all__ = ["GENERAL_CAUTION", "SECTIONS", "SUMMARY_COLUMNS", "ReportData", "ReportFigure",
           "build_report", "file_sha256", "render_html", "report_text", "summary_value",
           "write_pdf", "write_report"]
