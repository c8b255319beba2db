"""The report: one run of the whole chain and one self-contained document to read.

:func:`build_report` runs the stages on one or more logs of one machine -- survey
(``inspect``), cycles, order spectrum, sizing (``size``), flywheel (``flywheel``), shaft
before and after (``shaft``) and, for several logs over time, the shift trend -- by
calling the same library functions the commands call, so every number in the report is
the number the command would print. It keeps each stage's JSON contract and the figures
(PNG at print resolution). :func:`document` arranges it for people -- page one (the
verdict: how rough the machine runs now, what to do, is it safe, what the motor sees, is it
getting worse), one caution block, the body sections with labelled tables
(:mod:`torqlog.present.labels`), and an appendix that keeps everything needed to reproduce the run.
:func:`render_html` writes that as one self-contained HTML file (jinja2, every value
escaped, figures embedded, print CSS for A4 and Letter) and :func:`write_pdf` as a
typeset PDF (reportlab) from the same arrangement, so the two say the same thing.

A log alone gives a report (measured state, cycles, spectrum); each part that needs the
machine profile says so and gives the TOML lines to paste. Without a ``[flywheel]
material`` the flywheel is proposed in three common materials side by side.

The first log is the design log: its cycles set the recommendation, the flywheel and the
shaft checks. Every log appears in the summary table and, when ``torqlog.fleet.trend`` is
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
import contextlib
import hashlib
import importlib.util
import math
import re
import tempfile
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from types import MappingProxyType
from typing import Any

import numpy as np

from torqlog._version import __version__
from torqlog.errors import DataError, TorqlogError
from torqlog.present.labels import label, label_of, show, sig


@dataclass(frozen=True)
class Caution:
    """One caution of the report: what to heed, and what it defers to.

    Attributes
    ----------
    topic : str
        ``estimate``, ``burst``, ``shaft`` or ``stage`` (a stage's own caution).
    text : str
        The caution, one or two sentences.
    basis : str
        What it defers to (codes and standards, a licensed engineer, spin testing ...).
    """

    topic: str
    text: str
    basis: str


#: The report's cautions, each once (DESIGN.md, Safety); ``burst`` only with a flywheel.
CAUTIONS: Mapping[str, Caution] = MappingProxyType({
    "burst": Caution(
        "burst",
        "A flywheel stores energy that is released violently if it bursts or comes loose. "
        "Do not make, fit or run the proposed flywheel until its design is approved, it is "
        "fully guarded, it has been spin-tested above its highest speed and inspected, and "
        "an overspeed trip holds the overspeed assumed in its check.",
        "the applicable codes and standards for rotating machinery and guarding; spin "
        "testing; approval by a qualified, licensed engineer"),
    "shaft": Caution(
        "shaft",
        "Added inertia changes the shaft's stresses, bearing loads and natural frequencies: "
        "the shaft, keys, fits and bearings are checked again before a flywheel is fitted.",
        "the applicable codes and standards for shafts and bearings; a qualified, licensed "
        "engineer"),
    "estimate": Caution(
        "estimate",
        "This report is a preliminary engineering estimate from the logged data, not a "
        "design.",
        "the final design follows the applicable codes and standards and is approved by a "
        "qualified, licensed engineer"),
})

#: Words that tie a stage's own caution to one of :data:`CAUTIONS` (shown once, there).
_CAUTION_TOPICS = (("burst", "burst"), ("adding a flywheel changes", "shaft"),
                   ("preliminary", "estimate"), ("licensed engineer", "estimate"))

#: Kept for callers of earlier versions: the estimate caution as one sentence.
GENERAL_CAUTION = (CAUTIONS["estimate"].text[:-1] + ": "
                   + CAUTIONS["estimate"].basis + ".")

#: Section ids of the HTML report, in order (``trends`` only with several logs, ``fleet``
#: only with several machines).
SECTIONS = ("verdict", "cautions", "measured", "recommendation", "flywheel", "shaft",
            "trends", "fleet", "how-to-read", "appendix")

#: Page-one items, in order (``drift`` only with several logs).
PAGE_ONE = ("machine", "roughness", "action", "flywheel-safe", "shaft-fine", "motor",
            "drift", "anomalies")

#: Common flywheel materials compared when the profile names none, cheapest first
#: (common practice: grey iron costs least to cast, then ductile iron, then steel).
COMPARED_MATERIALS = ("grey-iron-250", "ductile-iron", "steel-s355")

#: The machine class whose common-practice target Cs a report assumes when none is given
#: (the stricter end of its range, :data:`torqlog.sizing.inertia.MACHINE_CLASSES`; presses
#: and shears, pumps and compressors share 0.03-0.05 there).
ASSUMED_MACHINE_CLASS = "shearing-machinery"

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
    cautions : list of Caution
        Each caution once (see :data:`CAUTIONS`).
    notes : list of str
        Things the reader should know.
    version, created : str
        torqlog version and the UTC time the report was built.
    flywheel_options : list of dict
        Without a ``[flywheel] material``: the flywheel in each of
        :data:`COMPARED_MATERIALS` (JSON of ``torqlog flywheel``); ``flywheel`` is the pick.
    material_choice : str
        Why the flywheel's material was taken (one sentence).
    extra : dict
        Results of further stages for page one when present: ``strength`` (shaft strength,
        ``{"verdict", "governing"}``), ``anomalies`` (``{"abnormal", "cycles"}``).
    cs_p90 : float or None
        Worst-decile (90th percentile) Cs of the design log's clean cycles.
    failed_logs : list of dict
        ``{"file", "reason"}`` of every log that could not be read; the report is built
        from the others (each also has a ``skipped`` entry).
    target_from : dict or None
        When no target Cs was given: the machine class whose common-practice target was
        taken (``machine_class``, ``target_cs``, ``range``, ``source``, ``assumed`` --
        True when the report chose the class, False when the caller named it).
    units : str
        Units people read: ``"si"`` (kN·m, kJ, kg·m², mm, MPa) or ``"us"`` (lbf·ft,
        ft·lbf, lb·ft², in, ksi), in tables, sentences and figure axes alike. The stage
        JSON stays SI; each number shown is its JSON value converted by
        :mod:`torqlog.io.units` (the values of ``--units us`` JSON).
    fleet : dict or None
        The fleet table (:meth:`torqlog.fleet.compare.FleetResult.to_dict`) when the
        report was given several machines; it gets a page of its own.
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
    cautions: list[Caution]
    notes: list[str]
    version: str
    created: str
    flywheel_options: list[dict[str, Any]] = field(default_factory=list)
    material_choice: str = ""
    extra: dict[str, Any] = field(default_factory=dict)
    cs_p90: float | None = None
    failed_logs: list[dict[str, str]] = field(default_factory=list)
    target_from: dict[str, Any] | None = None
    units: str = "si"
    fleet: dict[str, Any] | None = None

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


def _return_freed_memory() -> None:
    """Hand the streaming pass's freed buffers back to the operating system (pyarrow's
    memory pool, then glibc's heap where there is one), so the sizing and plotting that
    follow start from a small footprint: the report's peak memory stays that of one pass."""
    import pyarrow as pa

    pa.default_memory_pool().release_unused()
    try:
        import ctypes
        import ctypes.util

        name = ctypes.util.find_library("c")
        libc = ctypes.CDLL(name) if name else None
        if libc is not None and hasattr(libc, "malloc_trim"):
            libc.malloc_trim(0)
    except OSError:  # pragma: no cover - no C library to ask
        pass


def _trend_available() -> bool:
    return importlib.util.find_spec("torqlog.fleet.trend") is not None


# ----------------------------------------------------------------------------- build
def build_report(logs: Sequence[str | Path], profile: str | Path | None = None, *,
                 cycle_options: Any = None, read: Mapping[str, Any] | None = None,
                 target_cs: float | None = None, quantile: float | str = 0.95,
                 seed: int = 0, figure_dir: str | Path | None = None,
                 trend: bool = True, survey: bool = False,
                 extra: Mapping[str, Any] | None = None, units: str = "si",
                 fleet: Any = None, machine_class: str | None = None) -> ReportData:
    """Run the chain on the logs of one machine and collect what the report shows.

    Parameters
    ----------
    logs : sequence of path
        Logger exports of one machine; the first is the design log.
    profile : path, optional
        Machine profile (TOML); without one, each section says which profile lines to add.
    cycle_options : CycleOptions, optional
        Cycle-stage options; default :func:`torqlog.signal.cycles.options_from_profile`.
    read : mapping, optional
        Reading options ``roles``, ``units``, ``rate`` [Hz], ``start`` as for
        :func:`torqlog.io.ingest.sniff_layout`, for every log.
    target_cs : float, optional
        Target coefficient of speed fluctuation (default: the profile's).
    quantile : float or "max"
        Design quantile of the per-cycle energy swing.
    seed : int
        Bootstrap seed of the sizing interval.
    figure_dir : path, optional
        Folder for the PNG figures (created); default a temporary folder, removed after.
    trend : bool
        Run the shift trend when several logs are given and ``torqlog.fleet.trend`` exists.
    survey : bool
        Also run ``inspect``'s full survey of each log (a second pass: gaps, NaN and
        clipping per channel); default: the log facts come from the one cycle pass.
    extra : mapping, optional
        Results of further stages shown on page one (see :attr:`ReportData.extra`).
    units : str
        ``"si"`` or ``"us"``: the units of the tables, sentences and figure axes.
    fleet : FleetResult or its dict, optional
        Several machines' table (:func:`torqlog.fleet.compare.fleet_table`): a fleet page.
    machine_class : str, optional
        Without a target Cs (argument or profile): take this machine class's
        common-practice target (:data:`torqlog.sizing.inertia.MACHINE_CLASSES`); default
        :data:`ASSUMED_MACHINE_CLASS`, and the report says the target is assumed.

    Returns
    -------
    ReportData

    Raises
    ------
    UsageError
        No log given, or an unknown unit system.
    DataError
        A log cannot be read or holds too few cycles.
    """
    _check_request(logs, units)
    with _figure_folder(figure_dir) as out:
        data = _build(logs, profile, cycle_options, dict(read or {}), target_cs, quantile,
                      seed, out, trend, survey, dict(extra or {}), units, machine_class)
    return data if fleet is None else _with_fleet(data, fleet)


def _check_request(logs: Sequence[str | Path], units: str) -> None:
    """Refuse a report without logs or in an unknown unit system."""
    from torqlog.errors import UsageError
    from torqlog.io.units import UNIT_SYSTEMS

    if not logs:
        raise UsageError("give at least one log file")
    if units not in UNIT_SYSTEMS:
        raise UsageError(f"unknown unit system {units!r}; valid: {', '.join(UNIT_SYSTEMS)}")


def _with_fleet(data: ReportData, fleet: Any) -> ReportData:
    """The report with the fleet table of several machines (a FleetResult or its dict)."""
    from dataclasses import replace

    return replace(data, fleet=_plain(fleet if isinstance(fleet, Mapping)
                                      else fleet.to_dict()))


@contextlib.contextmanager
def _figure_folder(figure_dir: str | Path | None) -> Iterator[Path]:
    """The folder for the figures: the one given (created), else a temporary one."""
    if figure_dir is None:
        with tempfile.TemporaryDirectory(prefix="torqlog-report-") as tmp:
            yield Path(tmp)
        return
    out = Path(figure_dir)
    out.mkdir(parents=True, exist_ok=True)
    yield out


def _build(logs: Sequence[str | Path], profile_path: str | Path | None, cycle_options: Any,
           read: dict[str, Any], target_cs: float | None, quantile: float | str, seed: int,
           fig_dir: Path, with_trend: bool, with_survey: bool,
           extra: dict[str, Any], units: str = "si",
           machine_class: str | None = None) -> ReportData:
    """Run the stages in order and collect their JSON, figures and skip reasons."""
    from torqlog.io.profile import MachineProfile, load_profile
    from torqlog.signal.cycles import options_from_profile

    prof = load_profile(profile_path) if profile_path else MachineProfile()
    opts = cycle_options if cycle_options is not None else options_from_profile(prof)
    machine = prof.machine.get("name") or (Path(profile_path).stem if profile_path
                                           else Path(logs[0]).stem)
    skipped: dict[str, str] = {}
    figures: list[ReportFigure] = []
    entries, results, failed = _read_logs(logs, opts, read, with_survey, skipped)
    logs = [e["path"] for e in entries]
    design = results[0]
    _return_freed_memory()

    notes = _design_notes(design, logs)
    target_cs, target_from = _target(prof, target_cs, machine_class)
    size, _ = _run_sizing(design, prof, target_cs, quantile, seed, fig_dir, figures, skipped,
                          units=units)
    _measured_figures(design, size, target_cs, quantile, fig_dir, figures, units=units)
    spectrum = _order_spectrum(design, prof, fig_dir, figures, skipped, units=units)
    if not profile_path and "target_cs" in skipped.get("size", ""):  # not "the profile gives"
        skipped["size"] = ("No profile was given; a machine profile with [machine] target_cs "
                           "sets the Cs to size the flywheel for")
    fw_res, fw, fw_options, material_choice = _run_flywheel(
        prof, size, design, profile_path, fig_dir, figures, skipped, units=units)
    shaft = _run_shaft(prof, design, spectrum, fw_res, fig_dir, figures, skipped, units=units)
    trend = None
    if len(logs) > 1 and with_trend:
        if _trend_available():
            trend = _run_trend(logs, prof, opts, read, machine, fig_dir, figures, skipped,
                               units=units)
        else:
            skipped["trend"] = "no trend: this torqlog has no trend module"

    cautions = collect_cautions([size, fw, shaft], flywheel=fw is not None or bool(fw_options))
    options = _report_options(design, logs, read, quantile, seed, with_survey, target_cs,
                              size=size, flywheel=fw, shaft=shaft, trend=trend)
    if target_from is not None:
        options["report"]["target_cs_from"] = (
            f"{'assumed: ' if target_from['assumed'] else ''}common practice for "
            f"{target_from['machine_class']} ({target_from['source']})")
    return ReportData(
        machine=str(machine), profile=_profile_record(profile_path),
        logs=entries, spectrum=_plain(spectrum.to_dict()) if spectrum is not None else None,
        size=size, flywheel=fw, shaft=shaft, trend=trend, skipped=skipped,
        options=_plain(options), figures=figures, cautions=cautions, notes=notes,
        version=__version__, created=datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC"),
        flywheel_options=fw_options, material_choice=material_choice,
        extra=_plain(_with_anomalies(extra, design)), cs_p90=_cs_p90(design),
        failed_logs=failed, units=units, target_from=target_from)


def _read_logs(logs: Sequence[str | Path], opts: Any, read: dict[str, Any],
               with_survey: bool, skipped: dict[str, str]
               ) -> tuple[list[dict[str, Any]], list[Any], list[dict[str, str]]]:
    """The one pass over each log's samples: (log entries, cycle results, failed logs)."""
    from concurrent.futures import ThreadPoolExecutor

    from torqlog.signal.cycles import analyse_cycles
    from torqlog.signal.survey import survey_log

    entries: list[dict[str, Any]] = []
    results: list[Any] = []
    failed: list[dict[str, str]] = []
    # The file hash runs in a thread beside the pass (hashlib releases the GIL). The
    # sizing and plotting libraries (pandas, matplotlib: ~70 MB) load only after the pass
    # has handed its freed buffers back to the system, so the report's peak memory stays
    # that of one pass (loading them beside the pass saved ~5 % of the time and cost
    # ~70 MB of peak).
    with ThreadPoolExecutor(max_workers=1) as pool:
        for log in logs:
            sha = pool.submit(file_sha256, log)
            try:  # one bad log among several: keep the others, name the bad one
                res = analyse_cycles(log, opts, keep_rows=not results, **read)
                facts = (survey_log(log, nominal_speed=opts.nominal_speed, **read).to_dict()
                         if with_survey else log_facts(res))
            except DataError as exc:
                if len(logs) == 1:
                    raise
                failed.append({"file": str(log), "reason": str(exc)})
                skipped[f"log {log}"] = f"left out: {exc}"
                continue
            results.append(res)
            entries.append({"path": str(log), "name": Path(log).name,
                            "sha256": sha.result(), "bytes": Path(log).stat().st_size,
                            "inspect": _plain(facts), "cycles": _plain(res.to_dict(rows=False))})
    if not results:
        raise DataError("no log could be used: "
                        + "; ".join(f["reason"] for f in failed))
    return entries, results, failed


def _cs_p90(design: Any) -> float | None:
    """Worst-decile (90th percentile) Cs of the design log's clean cycles."""
    ok = design.columns["flag"].astype(str) == ""
    cs_clean = design.columns["cs"].astype(float)[ok]
    cs_clean = cs_clean[np.isfinite(cs_clean)]
    return float(np.quantile(cs_clean, 0.9)) if cs_clean.size else None


def _design_notes(design: Any, logs: Sequence[str]) -> list[str]:
    """Notes for the reader: which log the design uses, and the design log's own notes."""
    notes: list[str] = []
    if len(logs) > 1:
        notes.append(f"{len(logs)} logs: the recommendation, flywheel and shaft checks are "
                     f"from the first, {Path(logs[0]).name}; every log is in the summary.")
    return notes + [f"{Path(design.source).name}: {n}" for n in design.notes]


def _target(prof: Any, target_cs: float | None, machine_class: str | None
            ) -> tuple[float | None, dict[str, Any] | None]:
    """The target Cs (given, else the profile's, else a machine class's common-practice
    value) and, when it came from a machine class, where from."""
    if target_cs is not None:
        return target_cs, None
    if prof.machine.get("target_cs") is not None:
        return float(prof.machine["target_cs"]), None
    from torqlog.sizing.inertia import MACHINE_CLASSES, MACHINE_CLASSES_SOURCE, target_cs_for

    key = str(machine_class or ASSUMED_MACHINE_CLASS).strip().lower().replace("_", "-") \
        .replace(" ", "-")
    value = target_cs_for(key)  # an unknown class: UsageError listing the known ones
    return value, {"machine_class": key, "target_cs": value,
                   "range": list(MACHINE_CLASSES[key]), "source": MACHINE_CLASSES_SOURCE,
                   "assumed": machine_class is None}


def _measured_figures(design: Any, size: dict[str, Any] | None, target_cs: float | None,
                      quantile: float | str, fig_dir: Path,
                      figures: list[ReportFigure], *, units: str = "si") -> None:
    """The figures of the measured state, from the running mean cycle and the fixed
    histograms of the cycle pass: cycles over the angle, and the distributions."""
    from torqlog.present import plots

    n = design.summary["cycles"]
    figures.append(_figure("cycles", "measured", "Torque, E(θ) and speed over the cycle",
                           f"The mean of all {n:,d} clean cycles bold, the band its ± 2 "
                           "standard deviations at each angle, a few single cycles faint. "
                           "E(θ) is the energy above the mean torque; its range over the "
                           "cycle is the energy swing ΔE.",
                           plots.plot_cycles(design, fig_dir / "cycles.png",
                                             units=units)))
    figures.append(_figure(
        "distributions", "measured", "Energy swing and speed fluctuation per cycle",
        "How ΔE and Cs vary from cycle to cycle; the sizing takes the design quantile of ΔE.",
        plots.plot_distributions(design, fig_dir / "distributions.png",
                                 target_cs=target_cs, quantile=quantile,
                                 design_energy_swing=(size or {}).get("design_energy_swing_J"),
                                 title=f"Distributions over {Path(design.source).name}",
                                 units=units)))


def _order_spectrum(design: Any, prof: Any, fig_dir: Path, figures: list[ReportFigure],
                    skipped: dict[str, str], *, units: str = "si") -> Any:
    """The order spectrum of the design log's mean-cycle torque and its figure, or None."""
    has_torque = "torque" in design.layout.roles and \
        bool(np.isfinite(np.asarray(design.mean["torque_mean"], float)).all())
    if not has_torque:
        skipped["spectrum"] = (
            "the design log has no torque channel, so no order spectrum"
            if "torque" not in design.layout.roles else
            f"the design log has no clean cycle to average (flagged: "
            f"{', '.join(f'{k} {v}' for k, v in design.summary['flags'].items())}), so no "
            "order spectrum")
        return None
    from torqlog.present import plots
    from torqlog.signal.spectrum import mean_cycle_spectrum

    spectrum = mean_cycle_spectrum(design)
    min_share = prof.torsional.get("min_share", 0.05)
    figures.append(_figure(
        "spectrum", "measured", "Order spectrum of the torque",
        "Which multiples of the shaft speed drive the machine; the significant orders "
        "are held against the shaft's natural frequencies.",
        plots.plot_order_spectrum(spectrum, fig_dir / "spectrum.png",
                                  min_share=min_share,
                                  speed_rpm=design.summary["speed_mean_rpm"],
                                  units=units)))
    return spectrum


def _run_sizing(design: Any, prof: Any, target_cs: float | None, quantile: float | str,
                seed: int, fig_dir: Path, figures: list[ReportFigure],
                skipped: dict[str, str], *, units: str = "si"
                ) -> tuple[dict[str, Any] | None, Any]:
    """The recommendation (``size`` JSON and result) and the drive-curve figure."""
    from torqlog.present import plots
    from torqlog.sizing.inertia import size_log, size_log_dict

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
                                   recommended=size_res.added_inertia, units=units)))
    return size, size_res


def _run_flywheel(prof: Any, size: dict[str, Any] | None, design: Any,
                  profile_path: str | Path | None, fig_dir: Path,
                  figures: list[ReportFigure], skipped: dict[str, str], *, units: str = "si"
                  ) -> tuple[Any, dict[str, Any] | None, list[dict[str, Any]], str]:
    """The flywheel proposal (result, JSON, compared materials, why this material) and
    its stress figure; nothing when the sizing asks for no added inertia."""
    if size is None:
        skipped["flywheel"] = "no flywheel proposal: the sizing did not run"
        return None, None, [], ""
    if not (size["added_inertia_kgm2"] or 0.0) > 0:
        skipped["flywheel"] = ("no flywheel proposal: no inertia needs adding"
                               if size["added_inertia_kgm2"] == 0.0 else
                               "no flywheel proposal: the existing inertia is unknown, so "
                               "the inertia to add is unknown")
        return None, None, [], ""
    if not prof.flywheel:
        skipped["flywheel"] = ("no flywheel proposal: the profile does not give the room "
                               "for one (no [flywheel] section)")
        return None, None, [], ""
    fw_res, fw, fw_options, material_choice = _propose_flywheel(
        prof, size, f"sizing of {design.source}", profile_path, skipped)
    if fw_res is not None:
        from torqlog.present import plots

        figures.append(_figure(
            "flywheel", "flywheel", "Flywheel stresses at the operating speed",
            "Radial and hoop stress across the disc, with the allowable stress and strength.",
            plots.plot_flywheel_stresses(fw_res, fig_dir / "flywheel.png", units=units)))
    return fw_res, fw, fw_options, material_choice


def _run_shaft(prof: Any, design: Any, spectrum: Any, fw_res: Any, fig_dir: Path,
               figures: list[ReportFigure], skipped: dict[str, str], *,
               units: str = "si") -> dict[str, Any] | None:
    """The shaft check before and after the flywheel (``shaft`` JSON) and its figure."""
    if not prof.shaft:
        skipped["shaft"] = "no shaft check: the profile has no [shaft] section"
        return None
    from torqlog.present import plots
    from torqlog.shaft.check import check_shaft

    ratio = float(prof.machine.get("flywheel_speed_ratio", 1.0))
    add_mass = fw_res.mass if fw_res is not None else None
    add_inertia = fw_res.inertia * ratio ** 2 if fw_res is not None else None
    if add_inertia is not None and not prof.torsional:
        add_inertia = None
    mean_rpm = design.summary["speed_mean_rpm"]
    try:
        sh = check_shaft(prof, speed=mean_rpm / _RPM if mean_rpm else None, orders=spectrum,
                         add_mass=add_mass, add_inertia=add_inertia,
                         cycle_torque=(np.asarray(design.mean["torque_mean"], float)
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
            plots.plot_shaft(sh, fig_dir / "shaft.png", spectrum=spectrum, units=units)))
    except TorqlogError as exc:
        skipped["shaft"] = f"no shaft check: {exc}"
        return None
    return shaft


def _report_options(design: Any, logs: Sequence[str], read: dict[str, Any],
                    quantile: float | str, seed: int, with_survey: bool,
                    target_cs: float | None, **stages: dict[str, Any] | None
                    ) -> dict[str, Any]:
    """Every option that produced the report, by stage."""
    size = stages["size"]
    return {
        "cycles": design.options,
        "report": {"design_log": str(logs[0]), "quantile": quantile, "seed": seed,
                   "survey": with_survey,
                   "target_cs": size["target_cs"] if size else target_cs,
                   "read": {k: v for k, v in read.items() if v}},
        **{name: (st["options"] if st else None) for name, st in stages.items()},
    }


def _profile_record(profile_path: str | Path | None) -> dict[str, Any]:
    """``path``, ``sha256`` and ``text`` of the machine profile (all None/'' without one)."""
    if not profile_path:
        return {"path": None, "sha256": None, "text": ""}
    return {"path": str(profile_path), "sha256": file_sha256(profile_path),
            "text": Path(profile_path).read_text(encoding="utf-8")}


def _propose_flywheel(prof: Any, size: dict[str, Any], source: str,
                      profile_path: str | Path | None, skipped: dict[str, str]
                      ) -> tuple[Any, dict[str, Any] | None, list[dict[str, Any]], str]:
    """The flywheel proposal; without ``[flywheel] material``, one per compared material
    and the pick (the cheapest that passes every check, common practice)."""
    from torqlog.rotor.flywheel import flywheel_from_profile

    def one(material: str | None) -> tuple[Any, dict[str, Any]]:
        res = flywheel_from_profile(prof, size=size, size_source=source, material=material)
        d = _plain(res.to_dict())
        d["options"]["profile"] = str(profile_path) if profile_path else None
        return res, d

    try:
        if prof.flywheel.get("material"):
            res, d = one(None)
            return res, d, [], f"{d['material']}, as the profile names it"
        pairs = [one(m) for m in COMPARED_MATERIALS]
    except TorqlogError as exc:
        skipped["flywheel"] = f"no flywheel proposal: {exc}"
        return None, None, [], ""
    passing = [p for p in pairs if p[1]["verdict"] == "pass"]
    if passing:
        res, d = passing[0]
        why = (f"{d['material']}: the cheapest of the compared materials that passes every "
               "check (grey iron costs least to make, then ductile iron, then steel)")
    else:
        res, d = max(pairs, key=lambda p: p[1]["stress_safety_factor"] or 0.0)
        why = (f"{d['material']}: none of the compared materials passes every check; this "
               "one has the largest stress safety factor")
    return res, d, [p[1] for p in pairs], why


def _caution_topic(text: str) -> str | None:
    """The topic of :data:`CAUTIONS` a stage's caution repeats, or None if it says
    something of its own."""
    low = text.lower()
    return next((t for word, t in _CAUTION_TOPICS if word in low), None)


def collect_cautions(stages: Sequence[Mapping[str, Any] | None], *, flywheel: bool
                     ) -> list[Caution]:
    """The report's caution block: each of :data:`CAUTIONS` once, the burst caution first
    and only when a flywheel is proposed. A stage caution that says something of its own
    is shown in that stage's section instead (:func:`specific_cautions`).

    Parameters
    ----------
    stages : sequence of dict or None
        JSON of the stages; their ``cautions`` lists are read.
    flywheel : bool
        A flywheel is proposed (the burst caution leads).

    Returns
    -------
    list of Caution
    """
    topics = {"burst", "shaft", "estimate"} if flywheel else {"estimate"}
    for stage in stages:
        for text in (stage or {}).get("cautions", []):
            topic = _caution_topic(text)
            if topic is not None:
                topics.add(topic)
    return [CAUTIONS[t] for t in CAUTIONS if t in topics]


def specific_cautions(stage: Mapping[str, Any] | None) -> list[str]:
    """A stage's cautions that the caution block does not already say."""
    return [c for c in (stage or {}).get("cautions", []) if _caution_topic(c) is None]


def log_facts(res: Any) -> dict[str, Any]:
    """What ``inspect`` says of a log, from the cycle pass alone (no second read).

    The gap list, NaN counts and clipping per channel need ``inspect``'s own survey
    (``build_report(..., survey=True)``); here gaps and clipping are counted as the cycles
    they flag.
    """
    lay = res.layout
    o = res.options
    rate = o.get("sample_rate_hz")
    samples = res.summary.get("samples")
    flags = res.summary.get("flags", {})
    return {
        **lay.facts(),
        "rows": samples,
        "duration_s": samples / rate if samples and rate else None,
        "sample_rate_hz": rate,
        "gaps": {"count": int(sum(v for k, v in flags.items() if "gap" in k))},
        "clipped_samples": {k: v for k, v in flags.items() if "clip" in k} or None,
        "facts_from": "the cycle pass",
    }


def _run_trend(logs: Sequence[str | Path], prof: Any, opts: Any, read: dict[str, Any],
               machine: str, fig_dir: Path, figures: list[ReportFigure],
               skipped: dict[str, str], *, units: str = "si") -> dict[str, Any] | None:
    """The shift trend over the logs through :func:`torqlog.fleet.trend.run_trend`."""
    from torqlog.fleet.batch import FileJob
    from torqlog.fleet.trend import ShiftCalendar, run_trend

    reading = {k: v for k, v in read.items() if k != "start"}
    jobs = [FileJob(str(p), opts, machine, reading) for p in logs]
    try:
        res = run_trend(jobs, ShiftCalendar.build(profile=prof), workers=1)
    except TorqlogError as exc:
        skipped["trend"] = f"no trend: {exc}"
        return None
    for path in res.plot(fig_dir / "trend", units=units):
        p = Path(path)
        figure = p.stem.removeprefix("trend_")
        if p.stem.startswith("trend_"):
            title, caption = (f"{label_of(figure).text} per shift, against control limits",
                              "Each shift's value against control limits from the baseline "
                              "shifts; circled points are flagged.")
        else:
            title, caption = (f"{label_of(figure.removesuffix('_box')).text}: spread per "
                              "shift",
                              "The spread of the per-cycle values in each shift.")
        figures.append(_figure(p.stem, "trends", title, caption, p))
    return _plain(res.to_dict())


# ----------------------------------------------------------------------------- render
def _show(value: Any) -> str:
    """An option value as text."""
    if isinstance(value, float):
        return f"{value:.6g}"
    if isinstance(value, dict):
        return "; ".join(f"{k}: {_show(v)}" for k, v in value.items()) or "–"
    if isinstance(value, list | tuple):
        return ", ".join(_show(v) for v in value) or "–"
    return "–" if value is None else str(value)


#: Words for the control charts in drift flags.
_CHART_WORDS = {"individuals": "beyond limits", "ewma": "EWMA", "run": "run rule"}


def _flags(flags: Sequence[str]) -> str:
    """Drift flags ``figure:chart_side`` grouped by figure, in words: ``"Median Cs:
    beyond limits high, EWMA high"``."""
    per: dict[str, list[str]] = {}
    for f in flags:
        fig, _, rule = str(f).partition(":")
        chart, _, side = rule.rpartition("_")
        per.setdefault(label_of(fig).text, []).append(
            f"{_CHART_WORDS.get(chart, chart.replace('_', ' '))} {side}")
    return "; ".join(f"{k}: {', '.join(v)}" for k, v in per.items())


#: Columns of the summary table: (label with unit, JSON path in the cycles summary, scale).
SUMMARY_COLUMNS: tuple[tuple[str, str, float], ...] = (
    ("Clean cycles", "cycles", 1.0),
    ("Cycles in the log", "cycles_total", 1.0),
    ("Cycles per minute", "cycle_rate_per_min", 1.0),
    ("Mean speed, rpm", "speed_mean_rpm", 1.0),
    ("Mean torque, kN·m", "torque_mean_Nm", 1e-3),
    ("Peak torque (99th percentile), kN·m", "torque_peak_Nm_p99", 1e-3),
    ("Energy swing ΔE, median, kJ", "energy_swing_J.median", 1e-3),
    ("Energy swing ΔE, 95th percentile, kJ", "energy_swing_J.p95", 1e-3),
    ("Energy swing ΔE, largest, kJ", "energy_swing_J.max", 1e-3),
    ("Cs, median", "cs.median", 1.0),
    ("Cs, 95th percentile", "cs.p95", 1.0),
    ("Cs, largest", "cs.max", 1.0),
)


def summary_column(text: str, path: str, scale: float, units: str = "si"
                   ) -> tuple[str, str, float]:
    """A row of :data:`SUMMARY_COLUMNS` in ``units``: in US units a figure with a unit
    (``energy_swing_J.p95``) takes the unit and factor of
    :func:`torqlog.present.labels.label_of` (ft·lbf, lbf·ft) in place of kJ, kN·m."""
    lab = label_of(path.split(".", 1)[0], units)
    if units == "si" or not lab.unit or lab.unit == label_of(path.split(".", 1)[0]).unit:
        return text, path, scale
    return f"{text.rsplit(', ', 1)[0]}, {lab.unit}", path, lab.scale


def summary_value(summary: Mapping[str, Any], path: str) -> Any:
    """A value of a cycles summary by dotted path (``"energy_swing_J.p95"``)."""
    value: Any = summary
    for part in path.split("."):
        value = value.get(part) if isinstance(value, Mapping) else None
    return value


# ----------------------------------------------------------------------------- document
def _num(x: Any, digits: int = 3, scale: float = 1.0) -> str:
    """A number for people (:func:`torqlog.present.labels.sig`, three significant figures)."""
    return sig(x, digits, scale)


@dataclass(frozen=True)
class Cell:
    """One table cell or one number in a sentence.

    ``key`` and ``stage`` name the JSON value it shows (``value``, exact), so a reader
    -- or a test -- can trace every number back to the command that made it.
    """

    text: str
    key: str = ""
    stage: str = ""
    value: Any = None
    verdict: str = ""

    @property
    def exact(self) -> str:
        """The exact value for a ``data-value`` attribute ('' when none)."""
        v = self.value
        return "" if v is None or isinstance(v, bool | str) else repr(float(v))


def _cell(stage: str, key: str, value: Any, label_key: str | None = None,
          unit: bool = True, units: str = "si") -> Cell:
    """A number of a stage's JSON as people read it, in ``units``. In US units the cell
    names the key and holds the value of the ``--units us`` JSON (``inertia_lbft2``), so
    the number traces to what that command prints."""
    text = show(label_key or key, value, unit=unit, system=units)
    if units != "si":
        from torqlog.io.units import us_key

        _, factor = us_key(str(label_key or key).rsplit(".", 1)[-1])
        key = ".".join(us_key(part)[0] for part in key.split("."))
        if isinstance(value, int | float) and not isinstance(value, bool):
            value = value * factor
    return Cell(text, key, stage, value)


@dataclass(frozen=True)
class Table:
    """A table for people: ``header`` labels with units, ``rows`` of cells; the first
    cell of each row is its row header."""

    id: str
    caption: str
    header: tuple[str, ...]
    rows: tuple[tuple[Cell, ...], ...]
    sortable: bool = False


@dataclass(frozen=True)
class Advice:
    """What a section needs from the profile: one sentence and the TOML to paste."""

    text: str
    toml: str


@dataclass(frozen=True)
class Section:
    """One section of the body: paragraphs (text or cells), advice, tables, figures."""

    id: str
    title: str
    paragraphs: tuple[tuple[Any, ...], ...] = ()
    advice: tuple[Advice, ...] = ()
    tables: tuple[Table, ...] = ()
    figures: tuple[ReportFigure, ...] = ()
    notes: tuple[str, ...] = ()
    pre: str = ""


@dataclass(frozen=True)
class Finding:
    """One line of page one: a question, the answer (text and cells), a verdict word
    (``pass``, ``fail``, ``info`` or ``not assessed``) and the section it links to."""

    id: str
    question: str
    answer: tuple[Any, ...]
    verdict: str
    link: str

    @property
    def text(self) -> str:
        """The answer as plain text."""
        return "".join(p.text if isinstance(p, Cell) else str(p) for p in self.answer)


def paragraph_text(parts: Sequence[Any]) -> str:
    """A paragraph of text and cells as plain text."""
    return "".join(p.text if isinstance(p, Cell) else str(p) for p in parts)


#: Profile lines a report without them asks for, by what they enable.
_TOML = {
    "target": ("Give the target smoothness (and the existing inertia, if known) to size "
               "a flywheel; paste into the machine profile:",
               "[machine]\nname = \"Press 4, line B\"\ntarget_cs = 0.05\n"
               "inertia_kgm2 = 310.0      # existing, referred to the logged shaft"),
    "motor": ("Describe the motor to see what it carries now and after; paste:",
              "[motor]\npower_kW = 22.0\nsync_rpm = 1500.0\nrated_rpm = 1440.0\n"
              "speed_ratio = 32.0        # motor speed / logged shaft speed"),
    "flywheel": ("Give the room available to propose a flywheel that fits; paste:",
                 "[flywheel]\nshape = \"annular-disc\"\nmaterial = \"ductile-iron\"\n"
                 "outer_diameter_m = 1.4\nbore_m = 0.16\nmax_width_m = 0.35"),
    "shaft": ("Describe the shaft to check it with the flywheel on; paste:",
              "[shaft]\nmaterial = \"steel\"\nbearings_m = [0.0, 1.10]\n"
              "segments = [ { length_m = 0.35, diameter_m = 0.14 },\n"
              "             { length_m = 0.75, diameter_m = 0.16 } ]\n"
              "masses = [ { name = \"flywheel\", mass_kg = 900.0, at_m = 1.10 } ]"),
    "shifts": ("Give the shift pattern to place the logs in shifts; paste:",
               "[shifts]\nstarts = [\"06:00\", \"14:00\", \"22:00\"]\n"
               "names = [\"early\", \"late\", \"night\"]\ntimezone = \"UTC\""),
}


def _advice(*keys: str) -> tuple[Advice, ...]:
    return tuple(Advice(*_TOML[k]) for k in keys)


def _clean_reason(text: str) -> str:
    """A stage's skip reason as a sentence for people (no option names)."""
    text = text.split(": ", 1)[1] if text.startswith("no ") and ": " in text else text
    for opt, plain in (("give --target-cs X, --machine-class NAME or [machine] target_cs in "
                        "the profile", "the profile gives no target Cs"),
                       ("give --profile FILE", "give a machine profile"), ("--", "")):
        text = text.replace(opt, plain)
    return text[:1].upper() + text[1:].rstrip(".") + "."


def _ratio(size: Mapping[str, Any]) -> float:
    return float(size.get("flywheel_speed_ratio") or 1.0)


def _check_name(name: str) -> str:
    return label_of(name).text.lower()


def _governing_flywheel(fw: Mapping[str, Any], units: str = "si") -> tuple[str, str]:
    """(verdict, sentence) naming the governing flywheel check: the failed one, else the
    one with the least margin (value against limit)."""
    checks = fw.get("checks") or []
    failed = [c for c in checks if not c["ok"]]

    def margin(c: Mapping[str, Any]) -> float:
        v, lim = c.get("value"), c.get("limit")
        if not v or not lim:
            return math.inf
        r = float(v) / float(lim)
        return r if r >= 1 else 1.0 / r

    safety = [c for c in checks if not str(c["name"]).startswith("inertia")] or checks
    pick = failed[0] if failed else (min(safety, key=margin) if safety else None)
    if pick is None:
        return str(fw.get("verdict", "info")), "no check recorded"
    word = "fails" if failed else "governs and passes"
    return ("fail" if failed else "pass",
            f"the {_check_name(pick['name'])} check {word}: "
            f"{show(pick['name'], pick['value'], system=units)} against the limit "
            f"{show(pick['name'], pick['limit'], system=units)}")


def page_one(data: ReportData) -> list[Finding]:
    """The verdict, in the order of :data:`PAGE_ONE`: what the machine is and when it was
    logged, how rough it runs now, what to do, is the flywheel safe, is the shaft fine,
    what the motor sees, is it getting worse (several logs), abnormal cycles."""
    out = [_find_machine(data), _find_roughness(data), _find_action(data),
           _find_flywheel(data), _find_shaft(data), _find_motor(data)]
    if len(data.logs) > 1:
        out.append(_find_drift(data))
    out.append(_find_anomalies(data))
    return out


def _find_machine(d: ReportData) -> Finding:
    known = sorted(s for s in (g["inspect"].get("start_time") for g in d.logs) if s)
    dur = sum(g["inspect"].get("duration_s") or 0.0 for g in d.logs)
    cyc = sum(g["cycles"]["summary"]["cycles"] for g in d.logs)
    when = (f"from {known[0][:16].replace('T', ' ')} to {known[-1][:16].replace('T', ' ')}"
            if len(known) > 1 else
            f"from {known[0][:16].replace('T', ' ')}" if known else "(start time not stated)")
    n = len(d.logs)
    span = f"{sig(dur / 60.0)} min" if dur >= 120 else f"{sig(dur)} s"
    out = (f" ({len(d.failed_logs)} more could not be read; the appendix names them)"
           if d.failed_logs else "")
    ans = (f"{d.machine}: {n} log{'s' if n > 1 else ''}{out} {when}, {span} of running, "
           f"{cyc:,d} clean cycles at ",
           _cell("cycles", "summary.speed_mean_rpm",
                 d.design["cycles"]["summary"]["speed_mean_rpm"], "speed_mean_rpm",
                 units=d.units), ".")
    return Finding("machine", "Which machine, which period?", ans, "info", "appendix")


def _find_roughness(d: ReportData) -> Finding:
    s = d.design["cycles"]["summary"]
    med = summary_value(s, "cs.median")
    target = d.size["target_cs"] if d.size else None
    if med is None:
        return Finding("roughness", "How rough does it run now?", (
            "Not measured: the log holds no speed within the cycle (a speed or angle "
            "channel, or an encoder count), so Cs cannot be taken from it.",),
            "not assessed", "measured")
    parts: list[Any] = ["Median Cs ", _cell("cycles", "summary.cs.median", med, "cs"),
                        ", worst tenth of cycles ",
                        Cell(sig(d.cs_p90), "cs_p90", "report", d.cs_p90)]
    if target is None:
        parts.append("; no target Cs is given, so there is no pass or fail.")
        return Finding("roughness", "How rough does it run now?", tuple(parts),
                       "not assessed", "measured")
    worst = d.cs_p90 if d.cs_p90 is not None else med
    ok = worst is not None and worst <= target
    parts += [", against the " + ("assumed " if _assumed(d) else "") + "target ",
              _cell("size", "target_cs", target)]
    if _assumed(d):
        parts.append(f" (no target was given: common practice for "
                     f"{_class_words(d.target_from)})")
    parts += [": " + (
        "smooth enough: even the worst tenth of cycles meets the target." if ok else
        "too rough: the median cycle is above the target." if med is not None and med > target
        else "too rough in its worst tenth of cycles.")]
    return Finding("roughness", "How rough does it run now?", tuple(parts),
                   "pass" if ok else "fail", "measured")


def _find_action(d: ReportData) -> Finding:
    z = d.size
    q = "What to do?"
    if z is None:
        return Finding("action", q, (
            "Not assessed: " + _clean_reason(d.skipped.get("size", "no sizing")) +
            " The recommendation section gives the profile lines to add.",), "not assessed",
            "recommendation")
    added = z.get("added_inertia_kgm2")
    if added is None:
        return Finding("action", q, (
            "The machine needs ", _cell("size", "required_inertia_kgm2",
                                        z["required_inertia_kgm2"], units=d.units),
            " in all at the logged shaft. Its existing inertia is unknown (not given, and "
            "not identified on the log), so taking it as zero, on the safe side, at most "
            "that much is to be added; the recommendation section says what to give.",),
            "info", "recommendation")
    if added <= 0:
        return Finding("action", q, (
            "Nothing to add: the machine meets the target Cs with its existing inertia.",),
            "pass", "recommendation")
    r = _ratio(z)
    ci = z.get("added_ci95_kgm2")
    where = "the flywheel shaft" if r != 1.0 else "the logged shaft"
    parts: list[Any] = ["Add ", _cell("size", "added_inertia_at_flywheel_kgm2",
                                      z["added_inertia_at_flywheel_kgm2"], units=d.units),
                        f" at {where}"]
    if _assumed(d):
        parts += [" to reach the assumed target Cs ", _cell("size", "target_cs", z["target_cs"])]
    if ci:
        lo_t, hi_t = (show("added_inertia_at_flywheel_kgm2", c / r**2, unit=False,
                           system=d.units) for c in ci)
        parts.append(f" (95 % interval {lo_t} to {hi_t})" if lo_t != hi_t else
                     " (its 95 % interval is narrower than the digits shown)")
    model = z.get("model")
    if model and "bound" not in str(model) and z.get("cs_model_error_rel") is not None:
        parts.append(f". The {model} model gives it; at today's inertia it reproduces the "
                     f"measured Cs within {sig(abs(z['cs_model_error_rel']) * 100, 2)} %.")
    else:
        parts.append(". This is the constant-drive bound, on the safe side: no drive model "
                     "could be checked against the log.")
    return Finding("action", q, tuple(parts), "info", "recommendation")


def _assumed(d: ReportData) -> bool:
    """The target Cs is a machine class's common-practice value, not one given."""
    return bool(d.target_from) and d.size is not None


def _class_words(t: Mapping[str, Any]) -> str:
    """``"shearing machinery (0.03 to 0.05)"``: a machine class and its typical Cs range."""
    lo, hi = t["range"]
    span = f"{lo:g} to {hi:g}" if lo != hi else f"{lo:g}"
    return f"{t['machine_class'].replace('-', ' ')} ({span})"


def _find_flywheel(d: ReportData) -> Finding:
    fw = d.flywheel
    q = "Is the proposed flywheel safe?"
    if fw is None:
        why = d.skipped.get("flywheel", "no flywheel is proposed")
        return Finding("flywheel-safe", q, ("Not assessed: " + _clean_reason(why),),
                       "not assessed", "flywheel")
    verdict, text = _governing_flywheel(fw, d.units)
    parts = (f"{label_of(fw['material']).text} {fw['shape'].replace('-', ' ')}, ",
             _cell("flywheel", "outer_diameter_m", fw["outer_diameter_m"], units=d.units),
             " across, ", _cell("flywheel", "mass_kg", fw["mass_kg"], units=d.units),
             f"; {text}.")
    return Finding("flywheel-safe", q, parts, verdict, "flywheel")


def _shaft_strength(d: ReportData) -> Finding | None:
    """Page-one text of the shaft strength check (fatigue, yield, key, fit): the shaft
    JSON's ``strength`` after the flywheel (else before), or a result given in
    ``extra['strength']`` (``{"verdict": "pass"|"fail", "governing": "<check>"}``)."""
    sh = d.shaft or {}
    which = "after" if sh.get("after") else "before"
    st = (sh.get(which) or {}).get("strength")
    if st:
        text = _trim_digits(str(st.get("margin_text", "")).rsplit(": ", 1)[0])
        sf, where = st.get("fatigue_safety_factor"), st.get("governing_section")
        req = re.search(r"\(required [^)]*\)", text)
        parts: tuple[Any, ...] = (f"Strength: {text}.",)
        if sf is not None and where and text.startswith("fatigue safety factor"):
            parts = ("Strength: fatigue safety factor ",
                     Cell(sig(sf), f"{which}.strength.fatigue_safety_factor", "shaft", sf),
                     f" at {where}" + (f" {req.group(0)}" if req else "") + ".")
        return Finding("shaft-fine", "Is the shaft fine with it?", parts,
                       str(st.get("verdict", "info")), "shaft")
    st = d.extra.get("strength")
    if not st:
        return None
    return Finding("shaft-fine", "Is the shaft fine with it?",
                   (f"Strength: {st.get('governing', 'governing check not named')}.",),
                   str(st.get("verdict", "info")), "shaft")


def _trim_digits(text: str) -> str:
    """A stage's sentence with every number of four or more significant figures cut to
    three (``162.8 Hz`` -> ``163 Hz``); shorter numbers and integers stay as written."""

    def cut(m: re.Match[str]) -> str:
        digits = m.group(0).replace(".", "").lstrip("0")  # significant figures as written
        return sig(float(m.group(0))) if len(digits) > 3 else m.group(0)

    return re.sub(r"(?<![\d,.])\d+\.\d+(?![\d,.]*\d)", cut, text)


def _find_shaft(d: ReportData) -> Finding:
    sh = d.shaft
    q = "Is the shaft fine with it?"
    if sh is None:
        return Finding("shaft-fine", q, (
            "Not assessed: " + _clean_reason(d.skipped.get("shaft", "no shaft check")),),
            "not assessed", "shaft")
    state = "after" if sh.get("after") else "before"
    st = sh[state]
    checks = [("lateral", st["lateral"])] + ([("torsional", st["torsional"])]
                                             if st.get("torsional") else [])
    failed = [(n, c) for n, c in checks if c["verdict"] == "fail"]
    name, gov = failed[0] if failed else checks[0]
    strength = _shaft_strength(d)
    verdict = ("fail" if failed or (strength and strength.verdict == "fail") else
               "marginal" if strength and strength.verdict == "marginal" else "pass")
    who = "with the flywheel" if state == "after" else "as it is"
    named = sh.get("governing_check")  # the shaft result's own governing check
    if named and named not in ("lateral", "torsional") and not failed:
        parts: list[Any] = [f"Shaft {who}: {named} governs; the {name} check passes: "]
    else:
        parts = [f"Shaft {who}: the {name} check {'fails' if failed else 'governs'}; "]
    if name == "lateral" and gov.get("fe_hz") and gov.get("ratio") is not None:
        parts += ["first lateral mode ", _cell("shaft", f"{state}.lateral.fe_hz.0",
                                               gov["fe_hz"][0], "natural_frequency_hz"),
                  ", ", Cell(sig(gov["ratio"], 2), f"{state}.lateral.ratio", "shaft",
                             gov["ratio"]),
                  "× the shaft speed" + (f" ({gov['regime']} shaft, required "
                                          f"{gov['required_ratio']:g}×)." if
                                          gov.get("regime") and gov.get("required_ratio")
                                          else ".")]
    else:
        parts.append(_trim_digits(gov["margin_text"].rsplit(": ", 1)[0]) + ".")
    parts += ([" "] + list(strength.answer) if strength is not None else
              [" Strength, fatigue and bearing life are not assessed in this report."])
    return Finding("shaft-fine", q, tuple(parts), verdict, "shaft")


def _find_motor(d: ReportData) -> Finding:
    z = d.size or {}
    q = "What does the motor see, before and after?"
    now, after = z.get("machine_now") or {}, z.get("machine_after") or {}
    if not now.get("drive_torque_rms_share_of_rated"):
        return Finding("motor", q, ("Not assessed: the profile does not describe the motor "
                                    "(the recommendation section gives the lines to add).",),
                       "not assessed", "recommendation")
    k_rms, k_pk = "drive_torque_rms_share_of_rated", "drive_torque_peak_share_of_rated"
    parts: list[Any] = [
        "Now RMS torque ", _cell("size", f"machine_now.{k_rms}", now[k_rms], k_rms),
        " of rated, peak ", _cell("size", f"machine_now.{k_pk}", now[k_pk], k_pk)]
    ok = now[k_rms] <= 1.0
    if after.get(k_rms) and (z.get("added_inertia_kgm2") or 0) > 0:
        ok = after[k_rms] <= 1.0
        parts += ["; with the flywheel RMS ",
                  _cell("size", f"machine_after.{k_rms}", after[k_rms], k_rms),
                  ", peak ", _cell("size", f"machine_after.{k_pk}", after[k_pk], k_pk)]
        kwh = after.get("copper_loss_change_kWh_per_year")
        if kwh is not None:
            parts += [f"; motor losses {'fall' if kwh < 0 else 'rise'} by ",
                      Cell(show("copper_loss_change_kWh_per_year", abs(kwh)),
                           "machine_after.copper_loss_change_kWh_per_year", "size", kwh),
                      f" at {sig(after.get('hours_per_year'))} running hours a year"]
    parts.append(". " + ("The motor runs within its rating." if ok else
                         "The motor runs above its rated RMS torque and will run hot."))
    return Finding("motor", q, tuple(parts), "pass" if ok else "fail", "recommendation")


def _find_drift(d: ReportData) -> Finding:
    t = d.trend
    q = "Is it getting worse?"
    if t is None:
        return Finding("drift", q, ("Not assessed: " + _trend_reason(d) + " The trend "
                                    "section says what to add.",), "not assessed", "trends")
    on = t.get("drift_onset") or {}
    if on.get("date"):
        figs = [t[:1].lower() + t[1:] for t in dict.fromkeys(
            label_of(str(f).partition(":")[0]).text for f in on["flags"])]
        which = ", ".join(figs[:-1]) + " and " + figs[-1] if len(figs) > 1 else "".join(figs)
        return Finding("drift", q, (f"Yes: drift first flagged on {on['date']}, "
                                    f"{on['shift']} shift, in the {which}.",),
                       "fail", "trends")
    return Finding("drift", q, (f"No drift flagged over {len(t.get('shifts', []))} shift "
                                "rows.",), "pass", "trends")


def _trend_reason(d: ReportData) -> str:
    """Why there is no trend, as a sentence for people (the full reason is in the
    appendix's table of stages that did not run)."""
    why = d.skipped.get("trend", "no trend")
    if "no start time" in why:
        return ("The logs state no start time (no timestamp column, 'Start:' line or time "
                "in the file name), so they cannot be placed in shifts.")
    return _clean_reason(why)


def _with_anomalies(extra: dict[str, Any], design: Any) -> dict[str, Any]:
    """``extra`` with the design log's cycle-shape check (``{"abnormal", "cycles",
    "sentence"}``) when the cycle stage scored its cycles and none was given."""
    shape = getattr(design, "anomaly", None)
    if "anomalies" in extra or shape is None:
        return extra
    return {**extra, "anomalies": {"abnormal": shape.flagged, "cycles": shape.scored,
                                   "sentence": shape.sentence}}


def _find_anomalies(d: ReportData) -> Finding:
    """Page-one line of an anomaly result in ``extra['anomalies']`` when present
    (``{"abnormal": n, "cycles": N}``)."""
    a = d.extra.get("anomalies")
    q = "Any abnormal cycles?"
    if not a:
        return Finding("anomalies", q, ("Not assessed: this report has no cycle-shape "
                                        "anomaly check.",), "not assessed", "measured")
    n, total = a.get("abnormal"), a.get("cycles")
    text = a.get("sentence") or f"{sig(n)} abnormal of {sig(total)} cycles."
    verdict = "not assessed" if not total else "fail" if n else "pass"
    return Finding("anomalies", q, (text[:1].upper() + text[1:].rstrip(".") + ".",),
                   verdict, "measured")


def _kv_table(tid: str, caption: str, stage: str, data: Mapping[str, Any],
              keys: Sequence[str], units: str = "si") -> Table:
    rows = tuple((Cell(label(k, units)), _cell(stage, k, data.get(k), unit=False, units=units))
                 for k in keys if k in data)
    return Table(tid, caption, ("Figure", "Value"), rows)


def _section_measured(d: ReportData) -> Section:
    shown = d.logs[:_SUMMARY_LOGS]
    header = ("Figure",) + tuple(g["name"] for g in shown)
    columns = [summary_column(*c, d.units) for c in SUMMARY_COLUMNS]
    rows = tuple((Cell(lab),) + tuple(
        Cell(sig(summary_value(g["cycles"]["summary"], key), 3, scale), key, "cycles",
             summary_value(g["cycles"]["summary"], key)) for g in shown)
        for lab, key, scale in columns)
    rows += ((Cell("Worst tenth of cycles: Cs at least"),
              Cell(sig(d.cs_p90), "cs_p90", "report", d.cs_p90)) +
             tuple(Cell("–") for _ in shown[1:]),)
    paras: list[tuple[Any, ...]] = []
    if d.spectrum is not None:
        paras.append((f"The order spectrum comes from the mean cycle of the design log "
                      f"({d.design['cycles']['summary']['cycles']:,d} clean cycles averaged "
                      "at equal crank angle).",))
    elif "spectrum" in d.skipped:
        paras.append((_clean_reason(d.skipped["spectrum"]),))
    return Section("measured", "The machine as it runs now", tuple(paras), (),
                   (Table("summary-table", "Cycle summary over the clean cycles (first "
                          "column: the design log" + (f"; the other {len(d.logs) - len(shown)} "
                          "logs are in the trend section" if len(d.logs) > len(shown)
                          else "") + ")", header, rows),),
                   tuple(d.figures_in("measured")), tuple(d.notes))


def _section_recommendation(d: ReportData) -> Section:
    """What to do: the model that answers, the bound beside it, the sizing and the motor."""
    z = d.size
    title = "What to do: inertia"
    if z is None:
        return Section("recommendation", title,
                       ((_clean_reason(d.skipped.get("size", "no sizing")),),),
                       _advice("target", "motor"))
    paras, advice = _assumptions(d)
    if z.get("model_reason"):
        paras.append((f"Answer from the {z.get('model')} model: {z['model_reason']}.",))
    if z.get("bound_constant_drive_required_inertia_kgm2") is not None:
        added = z.get("bound_constant_drive_added_inertia_kgm2")
        paras.append(("For comparison, the constant-drive bound I = ΔE/(Cs·ω̄²), which "
                      "takes the drive torque as constant, asks for ",
                      _cell("size", "bound_constant_drive_required_inertia_kgm2",
                            z["bound_constant_drive_required_inertia_kgm2"], units=d.units),
                      " in all at the logged shaft" + ("" if added is None else ", that is "),
                      *(() if added is None else (
                          _cell("size", "bound_constant_drive_added_inertia_kgm2", added,
                                "added_inertia_kgm2", units=d.units),
                          " added to the existing inertia")),
                      "; a motor that slows under load carries part of each cycle itself, "
                      "so the bound is the safe side.",))
    tables = [Table("key-figures", "Sizing", ("Figure", "Value"), _sizing_rows(z, d.units))]
    now = z.get("machine_now") or {}
    if now:
        tables.append(_motor_table(z, d.units))
    if not now.get("drive_torque_rms_share_of_rated"):
        advice += _advice("motor")
    return Section("recommendation", title, tuple(paras), advice, tuple(tables),
                   tuple(d.figures_in("recommendation")),
                   tuple(z.get("messages", [])) +
                   tuple(f"Caution: {c}" for c in specific_cautions(z)))


def _assumptions(d: ReportData) -> tuple[list[tuple[Any, ...]], tuple[Advice, ...]]:
    """What the sizing assumed for lack of profile data (the target Cs from a machine
    class; the existing inertia identified on the log), each with the TOML to paste."""
    z = d.size or {}
    paras: list[tuple[Any, ...]] = []
    advice: tuple[Advice, ...] = ()
    t = d.target_from
    if t:
        which = ("assumed" if t["assumed"] else "taken from the machine class given")
        paras.append((f"No target Cs was given, so the target is {which}: ",
                      _cell("size", "target_cs", z.get("target_cs")),
                      f", the stricter end of the common-practice range for "
                      f"{_class_words(t)} in the machine-class table ({t['source']}). "
                      "Set your own target to replace it.",))
        advice += (Advice("To size for your own target, paste into the machine profile "
                          "(the value shown is the one assumed here):",
                          f"[machine]\ntarget_cs = {t['target_cs']:g}"),)
    src = str((z.get("options") or {}).get("existing_inertia_source") or "")
    given = (d.options.get("cycles") or {}).get("inertia")
    if z.get("existing_inertia_kgm2") is not None and "identified" in src and given is None:
        paras.append(("The existing inertia, ", _cell("size", "existing_inertia_kgm2",
                                                      z["existing_inertia_kgm2"], units=d.units),
                      f", is {src}; give the known value to use it instead.",))
        advice += (Advice("A known existing inertia replaces the identified one; paste:",
                          f"[machine]\ninertia_kgm2 = {sig(z['existing_inertia_kgm2'])}"
                          "      # existing, referred to the logged shaft"),)
    elif z and z.get("existing_inertia_kgm2") is None:
        paras.append(("The existing inertia is neither given nor identified on the log (that "
                      "needs torque and speed within the cycle), so the required inertia is "
                      "the total at the logged shaft; taking the existing parts as zero, on "
                      "the safe side, all of it would be added.",))
        advice += (Advice("Give the existing inertia to size the addition; paste (the value "
                          "is an example):", "[machine]\ninertia_kgm2 = 310.0      # existing, "
                          "referred to the logged shaft"),)
    return paras, advice


def _sizing_rows(z: Mapping[str, Any], units: str = "si") -> tuple[tuple[Cell, ...], ...]:
    """Rows of the sizing table: target, design swing, inertia now, required, added."""
    r = _ratio(z)
    ci = z["ci95_kgm2"]

    def row(key: str, text: str | None = None, path: str | None = None,
            value: Any = None) -> tuple[Cell, Cell]:
        return (Cell(text or label(key, units)),
                _cell("size", path or key, z.get(key) if path is None else value,
                      key if path else None, False, units))

    inertia = label_of("required_inertia_kgm2", units).unit
    rows = [
        row("target_cs"), row("design_energy_swing_J"), row("existing_inertia_kgm2"),
        row("required_inertia_kgm2"),
        row("required_inertia_kgm2", f"Required inertia, 95 % interval, low, {inertia}",
            "ci95_kgm2.0", ci[0]),
        row("required_inertia_kgm2", f"Required inertia, 95 % interval, high, {inertia}",
            "ci95_kgm2.1", ci[1]),
        row("added_inertia_kgm2"),
        row("added_inertia_at_flywheel_kgm2", label("added_inertia_at_flywheel_kgm2", units)
            + (f" (it turns {sig(r)}× as fast as the logged shaft)" if r != 1.0 else "")),
    ]
    for key in ("cs_measured", "cs_model_existing", "cs_model_error_rel",
                "bound_constant_drive_required_inertia_kgm2"):
        if z.get(key) is not None:
            rows.append(row(key))
    return tuple(rows)


def _motor_table(z: Mapping[str, Any], units: str = "si") -> Table:
    """The machine now and with the added inertia: Cs, speeds, drive torque."""
    now, after = z.get("machine_now") or {}, z.get("machine_after") or {}
    at = now.get("drive_torque_at", "drive")
    keys = [k for k in ("cs", "speed_min_rpm", "speed_max_rpm", "drive_torque_rms_Nm",
                        "drive_torque_peak_Nm", "drive_torque_rms_share_of_rated",
                        "drive_torque_peak_share_of_rated") if k in now]
    return Table(
        "motor-table", f"The machine now and with the added inertia ({now.get('model')} "
        "model, median cycle)", ("Figure", "Now", "After"), tuple(
            (Cell(label(k, units) + (f" (at the {at})" if "torque" in k else "")),
             _cell("size", f"machine_now.{k}", now.get(k), k, False, units),
             _cell("size", f"machine_after.{k}", after.get(k), k, False, units))
            for k in keys))


#: Logs shown side by side in the summary table (the rest are in the trend).
_SUMMARY_LOGS = 3

_FLYWHEEL_KEYS = ("outer_diameter_m", "bore_m", "width_m", "mass_kg", "inertia_kgm2",
                  "speed_rpm", "rim_speed_m_s", "rim_speed_limit_m_s", "stored_energy_J",
                  "stress_critical_MPa", "strength_MPa", "stress_safety_factor",
                  "speed_safety_factor", "yield_speed_rpm", "fit_loosening_rpm")


def _section_flywheel(d: ReportData) -> Section:
    fw = d.flywheel
    title = "The proposed flywheel"
    if fw is None:
        adv = _advice("flywheel") if d.size is not None else ()
        return Section("flywheel", title, ((_clean_reason(
            d.skipped.get("flywheel", "no flywheel is proposed")),),), adv)
    _, text = _governing_flywheel(fw, d.units)
    paras: list[tuple[Any, ...]] = [(
        f"{label_of(fw['material']).text} ({fw['material_designation']}), "
        f"{fw['shape'].replace('-', ' ')}: {text}.",)]
    tables = []
    if d.flywheel_options:
        paras.append(("The profile names no flywheel material, so the flywheel is proposed "
                      "in three common materials side by side. Picked: " +
                      d.material_choice + ".",))
        opts = d.flywheel_options
        tables.append(Table(
            "material-comparison", "The flywheel in three materials",
            ("Figure",) + tuple(label_of(o["material"]).text for o in opts),
            tuple((Cell(label(k, d.units)),) + tuple(
                _cell("flywheel-option", k, o.get(k), unit=False, units=d.units)
                for o in opts)
                for k in ("outer_diameter_m", "width_m", "mass_kg", "rim_speed_m_s",
                          "stress_safety_factor", "speed_safety_factor")) +
            ((Cell("Every check"),) + tuple(Cell(o["verdict"], verdict=o["verdict"])
                                           for o in opts),)))
    tables.append(_kv_table("flywheel-table", "The proposed flywheel", "flywheel", fw,
                            _FLYWHEEL_KEYS, d.units))
    tables.append(Table("flywheel-checks", "Flywheel checks",
                        ("Check", "Value", "Limit", "Verdict"), tuple(
        (Cell(_check_name(c["name"]).capitalize()),
         Cell(show(c["name"], c["value"], system=d.units)),
         Cell(show(c["name"], c["limit"], system=d.units)),
         Cell("pass" if c["ok"] else "fail", verdict="pass" if c["ok"] else "fail"))
        for c in fw["checks"])))
    return Section("flywheel", title, tuple(paras), (), tuple(tables),
                   tuple(d.figures_in("flywheel")),
                   tuple(f"Caution: {c}" for c in specific_cautions(fw)))


def _section_shaft(d: ReportData) -> Section:
    sh = d.shaft
    title = "The shaft, before and after"
    if sh is None:
        return Section("shaft", title, ((_clean_reason(
            d.skipped.get("shaft", "no shaft check")),),), _advice("shaft"))
    o = sh["options"]
    rows = []
    for state in ("before", "after"):
        st = sh.get(state)
        for kind in ("lateral", "torsional", "strength"):
            c = (st or {}).get(kind)
            if not c:
                continue
            hz = c.get("fe_hz") if kind == "lateral" else c.get("modes_hz") or []
            rows.append((Cell("with the flywheel" if state == "after" else "as it is"),
                         Cell(kind), Cell(", ".join(sig(h) for h in hz)),
                         Cell(c["verdict"], verdict=c["verdict"]),
                         Cell(c["margin_text"].rsplit(": ", 1)[0])))
    paras: list[tuple[Any, ...]] = [(
        f"Running speed {sig(o.get('speed_rpm'))} rpm ({o.get('speed_source', '')}); "
        f"torque orders from the {o.get('orders_source', 'log')}.",)]
    if o.get("add_mass_kg") is not None:
        paras.append((f"With the flywheel: {show('mass_kg', o['add_mass_kg'], system=d.units)}"
                      f" at {show('add_mass_at_m', o.get('add_mass_at_m'), system=d.units)} "
                      "along the shaft.",))
    return Section("shaft", title, tuple(paras), (),
                   (Table("shaft-table", "Natural frequencies against the forcing, and "
                          "strength",
                          ("State", "Check", "Natural frequencies, Hz", "Verdict",
                           "Governing margin"),
                          tuple(rows)),), tuple(d.figures_in("shaft")),
                   tuple(f"Caution: {c}" for c in specific_cautions(sh)))


def _section_trends(d: ReportData) -> Section:
    t = d.trend
    title = "Across the logs: is it getting worse?"
    used = f"The sizing used the first log, {d.design['name']}."
    if t is None:
        return Section("trends", title, ((_trend_reason(d) + " " + used,),),
                       _advice("shifts"))
    rows = tuple((Cell(str(r.get("date"))), Cell(str(r.get("shift"))),
                  Cell(sig(r.get("cycles"))),
                  Cell(show("energy_swing_J_median", r.get("energy_swing_J_median"),
                            unit=False, system=d.units)),
                  Cell(sig(r.get("cs_median"))), Cell(_flags(r.get("flags") or []) or "–"))
                 for r in t.get("shifts", []))
    on = t.get("drift_onset") or {}
    paras: list[tuple[Any, ...]] = [(
        (f"Drift first flagged on {on['date']}, {on['shift']} shift ({_flags(on['flags'])})."
         if on.get("date") else "No drift flagged.") + " " + used,)]
    paras += [(n,) for n in t.get("notes", [])]
    paras += [(f"Not in the trend: {f['file']}: {f['reason']}",) for f in t.get("failed", [])]
    return Section("trends", title, tuple(paras), (), (Table(
        "trend-table", "One row per shift; control-chart signals in words (beyond limits, "
        "EWMA, run rule; high or low)",
        ("Date", "Shift", "Clean cycles", label("energy_swing_J_median", d.units),
         label("cs_median"), label("flags")), rows),), tuple(d.figures_in("trends")))


def _section_fleet(d: ReportData) -> Section:
    """The fleet page: every machine given, one row each, ranked (sortable in the HTML).

    The rows are the fleet builder's (:func:`torqlog.fleet.compare.fleet_table`), the
    same that fleet.html and the xlsx sheet show, here labelled and in the report's units
    (:func:`torqlog.present.fleet_page.people_table`).
    """
    from torqlog.present.fleet_page import FLEET_CAUTION, people_table

    f = d.fleet or {}
    header, rows = people_table(f, d.units)
    o = f.get("options", {})
    by = label_of(str(o.get("sort_by", "cs_p90_over_target"))).text
    first = "largest" if o.get("descending", True) else "smallest"
    paras: list[tuple[Any, ...]] = [(
        f"{len(rows)} machines, ranked by {by} ({first} first); in the HTML report a click "
        f"on a column header sorts by it. This report's other pages are of {d.machine}.",)]
    table = Table("fleet-table", "The fleet: Cs against each machine's target, the added "
                  "inertia and motor load of its latest log, abnormal cycles and drift",
                  header, tuple(tuple(Cell(text, key if value is not None else "", "fleet",
                                           value) for text, key, value in r) for r in rows),
                  sortable=True)
    return Section("fleet", "The fleet: how the machines compare", tuple(paras), (),
                   (table,), (), tuple(f.get("notes", [])) + (FLEET_CAUTION,))


_GLOSSARY = (
    ("Cycle", "The repeating unit of the machine: one press stroke, one compressor "
     "revolution, two revolutions of a four-stroke engine."),
    ("Energy swing ΔE", "Within a cycle the load takes energy faster than the drive gives "
     "it, then slower; the rotating parts store and return the difference. ΔE is the "
     "largest such swing in a cycle."),
    ("Coefficient of speed fluctuation Cs", "(highest − lowest speed) ÷ mean speed within a "
     "cycle: 0.1 means the speed swings by 10 % of its mean. Smaller is smoother."),
    ("Inertia", "Added inertia lowers Cs: ΔE ≈ I · Cs · ω̄² (Shigley, sec. 16-12)."),
    ("Safety factor", "How many times the material's strength exceeds the largest stress."),
    ("Natural frequency", "A shaft vibrates strongly when the machine excites it at one of "
     "its natural frequencies; the checks want them away from the forcing."),
)


def _section_glossary() -> Section:
    return Section("how-to-read", "How to read this report", (), (), (Table(
        "glossary", "Terms", ("Term", "Meaning"),
        tuple((Cell(a), Cell(b)) for a, b in _GLOSSARY)),))


def _flat_options(prefix: str, value: Any) -> list[tuple[str, str]]:
    if isinstance(value, Mapping):
        out: list[tuple[str, str]] = []
        for k, v in value.items():
            out += _flat_options(f"{prefix}.{k}" if prefix else str(k), v)
        return out
    return [(prefix, _show(value))]


def _section_appendix(d: ReportData) -> Section:
    logs = tuple((Cell(g["name"]), Cell(g["sha256"]), Cell(sig(g["inspect"].get("rows"), 12)),
                  Cell(sig(g["inspect"].get("duration_s"))),
                  Cell(sig(g["inspect"].get("sample_rate_hz"))),
                  Cell((g["inspect"].get("start_time") or "not stated").replace("T", " ")),
                  Cell(g["path"]))
                 for g in d.logs)
    tables = [Table("inputs-table", "Logs", ("File", "SHA-256", "Rows", "Duration, s",
                                             "Sample rate, Hz", "Start", "Full path"), logs)]
    seen: list[Any] = []
    for g in d.logs:
        cols = g["inspect"]["columns"]
        if cols in seen:
            continue
        seen.append(cols)
        tables.append(Table(f"channels-{len(seen)}", f"Channels of {g['name']}",
                            ("Column", "Role", "Unit", "Unit from", "SI factor"),
                            tuple((Cell(c["name"]), Cell(c["role"] or "–"),
                                   Cell(c["unit"] or "–"), Cell(c["unit_source"] or "–"),
                                   Cell(_show(c["si_factor"]))) for c in cols)))
    opts = [(k, v) for stage, o in d.options.items() if o
            for k, v in _flat_options(stage, o)]
    tables.append(Table("options-table", "Every option and default that produced the "
                        "figures, by stage (the cycle stage in SI: rad/s, kg·m²)",
                        ("Option", "Value"), tuple((Cell(k), Cell(v)) for k, v in opts)))
    if d.skipped:
        tables.append(Table("skipped-table", "Stages that did not run", ("Stage", "Why"),
                            tuple((Cell(k), Cell(v)) for k, v in d.skipped.items())))
    p = d.profile
    paras: list[tuple[Any, ...]] = [(f"torqlog {d.version}, built {d.created}.",), (
        f"Machine profile {p['path']}, SHA-256 {p['sha256']}, as read:" if p.get("path")
        else "No machine profile was given.",)]
    return Section("appendix", "Appendix: traceability", tuple(paras), (), tuple(tables),
                   pre=p.get("text") or "")


@dataclass(frozen=True)
class Document:
    """The report arranged for people: page one, cautions, sections (HTML and PDF)."""

    title: str
    subtitle: str
    findings: tuple[Finding, ...]
    cautions: tuple[Caution, ...]
    sections: tuple[Section, ...]


def document(data: ReportData) -> Document:
    """Arrange a :class:`ReportData` for people (what both renderers draw)."""
    secs = [_section_measured(data), _section_recommendation(data),
            _section_flywheel(data), _section_shaft(data)]
    if len(data.logs) > 1:
        secs.append(_section_trends(data))
    if data.fleet is not None:
        secs.append(_section_fleet(data))
    secs += [_section_glossary(), _section_appendix(data)]
    n = len(data.logs)
    sub = (f"Design log {data.design['name']}" + (f" and {n - 1} more" if n > 1 else "") +
           f" · torqlog {data.version} · {data.created}" +
           (" · US customary units (notes quoted from the stages and the appendix in SI)"
            if data.units == "us" else ""))
    return Document(f"Flywheel and shaft report: {data.machine}", sub,
                    tuple(page_one(data)), tuple(data.cautions), tuple(secs))


def _environment() -> Any:
    import jinja2

    env = jinja2.Environment(loader=jinja2.PackageLoader("torqlog.present", "templates"),
                             autoescape=True, undefined=jinja2.StrictUndefined,
                             trim_blocks=True, lstrip_blocks=True)
    env.tests["cell"] = lambda x: isinstance(x, Cell)
    return env


def render_html(data: ReportData) -> str:
    """The report as one self-contained HTML document.

    Page one (the verdict), the cautions, the body and the appendix of :func:`document`.
    Every value is escaped (jinja2 autoescape); figures are embedded as base64 PNG; the page
    needs no network and prints on A4 and Letter.

    Parameters
    ----------
    data : ReportData

    Returns
    -------
    str
    """
    from markupsafe import Markup

    from torqlog.fleet.compare import SORT_SCRIPT

    doc = document(data)
    sortable = any(t.sortable for sec in doc.sections for t in sec.tables)
    # the sort script is the package's own constant text, not data: marked safe
    return _environment().get_template("report.html").render(
        doc=doc, d=data, sort_script=Markup(SORT_SCRIPT) if sortable else "")


def write_pdf(data: ReportData, path: str | Path) -> Path:
    """Write the report as a typeset PDF (see :func:`torqlog.present.report_pdf.write_pdf`)."""
    from torqlog.present.report_pdf import write_pdf as _write

    return _write(document(data), path)


def write_report(data: ReportData, html: str | Path, pdf: str | Path | None = None
                 ) -> list[Path]:
    """Write the HTML report (and the PDF); returns the files written."""
    from torqlog.io.outputs import write_text

    out = write_text(html, render_html(data))
    written = [out]
    if pdf is not None:
        written.append(write_pdf(data, pdf))
    return written


__all__ = ["CAUTIONS", "COMPARED_MATERIALS", "GENERAL_CAUTION", "PAGE_ONE", "SECTIONS",
           "SUMMARY_COLUMNS", "Caution", "Cell", "Document", "Finding", "ReportData",
           "ReportFigure", "Section", "Table", "build_report", "collect_cautions", "document",
           "file_sha256", "log_facts", "page_one", "paragraph_text", "render_html",
           "summary_value", "write_pdf", "write_report"]
