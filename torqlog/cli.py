"""Command-line interface: a thin click layer over the library.

No computation lives here: each command parses options (units through pint), calls
library functions, and prints. Errors from the library (:class:`TorqlogError`) become one
sentence on stderr and exit code 1 (bad data), 2 (bad usage) or 3 (strict check failed);
``--debug`` shows the traceback instead.
"""

from __future__ import annotations

import json
import math
import sys
import textwrap
from collections.abc import Callable
from pathlib import Path
from typing import Any

import click
import numpy as np
import pandas as pd
from click.core import ParameterSource

from torqlog import __version__
from torqlog.errors import TorqlogError
from torqlog.units import parse_quantity

FORMATS = ("table", "csv", "json")


# --------------------------------------------------------------------------- helpers
class QuantityType(click.ParamType):
    """A click parameter that takes ``1.2`` (in ``default_unit``) or ``"1200 mm"``.

    The converted value is SI.
    """

    name = "quantity"

    def __init__(self, kind: str, default_unit: str) -> None:
        self.kind = kind
        self.default_unit = default_unit

    def get_metavar(self, param: click.Parameter, ctx: click.Context | None = None) -> str:
        return f"[{self.default_unit}]"

    def convert(self, value: Any, param: click.Parameter | None,
                ctx: click.Context | None) -> float:
        if isinstance(value, float):
            return value
        try:
            return parse_quantity(value, self.default_unit, self.kind,
                                  name=f"--{param.name.replace('_', '-')}" if param else "value")
        except TorqlogError as exc:
            self.fail(str(exc), param, ctx)


def _jsonable(obj: Any) -> Any:
    """Convert numpy/pandas scalars, NaN and timestamps to plain JSON values."""
    if isinstance(obj, dict):
        return {str(k): _jsonable(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [_jsonable(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return [_jsonable(v) for v in obj.tolist()]
    if isinstance(obj, np.generic):
        obj = obj.item()
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, pd.Timestamp):
        return None if pd.isna(obj) else obj.isoformat()
    if obj is pd.NaT:
        return None
    if isinstance(obj, Path):
        return str(obj)
    return obj


def to_json(data: dict[str, Any]) -> str:
    """Serialise a result dict to JSON text (NaN becomes null)."""
    return json.dumps(_jsonable(data), indent=2, ensure_ascii=False)


def emit(data: dict[str, Any], table: pd.DataFrame | None, fmt: str, out: str | None,
         text: str | None = None) -> None:
    """Write a result in the chosen format to ``out`` (a path) or stdout.

    ``table`` is printed for ``table`` and ``csv``; ``text`` (if given) is printed
    before the table in ``table`` format; ``data`` is the JSON contract.
    """
    if fmt == "json":
        body = to_json(data) + "\n"
    elif fmt == "csv":
        body = (table if table is not None else pd.DataFrame([_flat(data)])).to_csv(index=False)
    else:
        parts = [text] if text else []
        if table is not None:
            with pd.option_context("display.max_rows", 60, "display.width", 160,
                                   "display.max_columns", 30):
                parts.append(table.to_string(index=False, float_format=_fmt_float))
        body = "\n".join(parts) + "\n"
    if out:
        Path(out).write_text(body, encoding="utf-8")
        click.echo(f"wrote {out}", err=True)
    else:
        click.echo(body, nl=False)


def _fmt_float(x: float) -> str:
    if not math.isfinite(x):
        return ""
    ax = abs(x)
    if ax != 0 and (ax >= 1e6 or ax < 1e-3):
        return f"{x:.4g}"
    return f"{x:.4g}" if ax < 100 else f"{x:.1f}"


def _flat(data: dict[str, Any], prefix: str = "") -> dict[str, Any]:
    flat: dict[str, Any] = {}
    for k, v in data.items():
        key = f"{prefix}{k}"
        if isinstance(v, dict):
            flat.update(_flat(v, key + "."))
        elif isinstance(v, list | tuple):
            flat[key] = "; ".join(str(_jsonable(x)) for x in v)
        else:
            flat[key] = _jsonable(v)
    return flat


def output_options(f: Callable) -> Callable:
    """Add ``--format`` and ``-o/--output`` to a command."""
    f = click.option("-o", "--output", "output", type=click.Path(dir_okay=False),
                     default=None, help="Write the result to this file instead of stdout.")(f)
    f = click.option("--format", "fmt", type=click.Choice(FORMATS), default="table",
                     show_default=True, help="Output format.")(f)
    return f


# --------------------------------------------------------------------------- group
class _Group(click.Group):
    """Click group that turns torqlog errors into one line on stderr and an exit code."""

    def invoke(self, ctx: click.Context) -> Any:
        try:
            return super().invoke(ctx)
        except TorqlogError as exc:
            if (ctx.obj or {}).get("debug"):
                raise
            click.echo(f"Error: {exc}", err=True)
            ctx.exit(exc.exit_code)
        except (FileNotFoundError, IsADirectoryError, PermissionError) as exc:
            if (ctx.obj or {}).get("debug"):
                raise
            click.echo(f"Error: {exc.filename}: {exc.strerror}", err=True)
            ctx.exit(1)


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="torqlog")
@click.option("--debug", is_flag=True, help="Show tracebacks for errors.")
@click.pass_context
def cli(ctx: click.Context, debug: bool) -> None:
    """torqlog: torque and speed logs of cyclic machines to energy swing, flywheel
    sizing, burst and shaft checks, and shift trends."""
    ctx.ensure_object(dict)
    ctx.obj["debug"] = debug


def main() -> None:
    """Console entry point."""
    cli(prog_name="torqlog")


# --------------------------------------------------------------------------- log options
_ROLE_OPTS = ("time", "torque", "speed", "angle", "index", "counts")
_UNIT_OPTS = ("time", "torque", "speed", "angle")


def log_options(f: Callable) -> Callable:
    """Options that say how to read a log (columns, units, rate, start)."""
    for role in reversed(_UNIT_OPTS):
        f = click.option(f"--{role}-unit", f"{role}_unit", default=None, metavar="UNIT",
                         help=f"Unit of the {role} column (overrides the file).")(f)
    for role in reversed(_ROLE_OPTS):
        f = click.option(f"--{role}", f"{role}_col", default=None, metavar="COL",
                         help=f"Column holding {role} (overrides detection by name).")(f)
    f = click.option("--start", default=None, metavar="ISO",
                     help="Absolute time of the first sample, e.g. 2026-03-02T06:00:00.")(f)
    f = click.option("--rate", type=QuantityType("frequency", "Hz"), default=None,
                     help="Sample rate [Hz] when the time column is a sample number or absent.")(f)
    return f


def read_kwargs(kw: dict[str, Any]) -> dict[str, Any]:
    """Reading options for :func:`torqlog.ingest.sniff_layout` from CLI keywords."""
    return {
        "roles": {r: kw.pop(f"{r}_col") for r in _ROLE_OPTS if kw.get(f"{r}_col")}
        | {r: None for r in ()},
        "units": {r: kw.pop(f"{r}_unit") for r in _UNIT_OPTS if kw.get(f"{r}_unit")},
        "rate": kw.pop("rate", None),
        "start": kw.pop("start", None),
    }


_NOMINAL_SPEED_HELP = "Nominal shaft speed [rpm] (cycle source 'nominal')."


def _profile_option() -> Callable:
    return click.option("--profile", type=click.Path(dir_okay=False), default=None,
                        help="Machine profile (TOML); options given here override it.")


def _cycle_stage(leading: list[Callable], speed_help: str) -> Callable[[Callable], Callable]:
    """Decorator: ``leading`` options, the cycle-stage options, then the log options."""
    opts = [
        *leading,
        click.option("--revs-per-cycle", type=click.IntRange(min=1), default=None,
                     help="Shaft revolutions per machine cycle (2 for a four-stroke engine)."
                          "  [default: 1, or the profile]"),
        click.option("--cycle-source", type=click.Choice(
            ["angle", "index", "counts", "speed", "nominal", "period"]), default=None,
            help="Force how cycles are found (default: best the log allows)."),
        click.option("--speed-rpm", type=QuantityType("speed", "rpm"), default=None,
                     help=speed_help),
        click.option("--pulses-per-rev", type=float, default=360.0, show_default=True,
                     help="Encoder counts per revolution."),
        click.option("--inertia", type=QuantityType("inertia", "kg*m**2"), default=None,
                     help="Rotating inertia at the logged shaft [kg·m²]."),
        click.option("--speed-cutoff-orders", type=click.FloatRange(min=0), default=20.0,
                     show_default=True,
                     help="Zero-phase low-pass of speed before Cs, in cycle orders (0: off)."),
        click.option("--torque-role", type=click.Choice(["load", "drive"]), default=None,
                     help="Logged torque loads the shaft, or drives it (an engine's crank "
                          "torque).  [default: load, or the profile]"),
        click.option("--cs-mean", type=click.Choice(["cycle", "midrange"]), default="cycle",
                     show_default=True, help="Mean speed in Cs: cycle mean, or (max+min)/2."),
        click.option("--no-despike", is_flag=True, help="Keep one-sample spikes as they are."),
    ]

    def decorate(f: Callable) -> Callable:
        for o in reversed(opts):
            f = o(f)
        return log_options(f)

    return decorate


def cycle_options(f: Callable) -> Callable:
    """Options of the cycle stage (shared by cycles, size, shaft, trend, report)."""
    return _cycle_stage([_profile_option()], _NOMINAL_SPEED_HELP)(f)


def cycle_stage_options(speed_help: str = _NOMINAL_SPEED_HELP) -> Callable[[Callable], Callable]:
    """Decorator adding the log options and the cycle-stage options, except ``--profile``.

    For commands that declare their own ``--profile``; ``speed_help`` is the help text of
    ``--speed-rpm``, whose meaning such a command may widen.
    """
    return _cycle_stage([], speed_help)


def load_profile_opt(path: str | None) -> Any:
    """The machine profile named by ``--profile``, or None."""
    if not path:
        return None
    from torqlog.profile import load_profile

    return load_profile(path)


def make_cycle_options(kw: dict[str, Any], profile: Any = None) -> Any:
    """Build :class:`torqlog.cycles.CycleOptions` from CLI keywords and a profile."""
    from torqlog.cycles import options_from_profile

    return options_from_profile(
        profile,
        revs_per_cycle=kw.pop("revs_per_cycle", None),
        cycle_source=kw.pop("cycle_source", None),
        nominal_speed=kw.pop("speed_rpm", None),
        pulses_per_rev=kw.pop("pulses_per_rev", 360.0),
        inertia=kw.pop("inertia", None),
        speed_cutoff_orders=kw.pop("speed_cutoff_orders", 20.0),
        torque_role=kw.pop("torque_role", None),
        cs_mean=kw.pop("cs_mean", "cycle"),
        despike=not kw.pop("no_despike", False),
    )


def run_cycles(log: str, kw: dict[str, Any]) -> Any:
    """Run the cycle stage for a CLI command; pops the options it uses from ``kw``.

    On a terminal a progress bar (on stderr) follows the bytes read; elsewhere it is quiet.
    """
    from torqlog.cycles import analyse_cycles

    profile = load_profile_opt(kw.pop("profile", None))
    read = read_kwargs(kw)
    opts = make_cycle_options(kw, profile)
    if not sys.stderr.isatty():
        return analyse_cycles(log, opts, **read), profile
    with click.progressbar(length=1000, label=f"reading {Path(log).name}",
                           file=sys.stderr) as bar:
        def step(fraction: float) -> None:
            bar.update(int(1000 * fraction) - bar.pos)

        return analyse_cycles(log, opts, progress=step, **read), profile


# --------------------------------------------------------------------------- inspect
@cli.command()
@click.argument("log", type=click.Path(dir_okay=True))
@log_options
@click.option("--speed-rpm", type=QuantityType("speed", "rpm"), default=None,
              help="Nominal speed [rpm] (makes the 'nominal' cycle source available).")
@output_options
def inspect(log: str, fmt: str, output: str | None, speed_rpm: float | None,
            **kw: Any) -> None:
    """Show what is in a log: columns, roles, units, rate, gaps, NaNs, clipping."""
    from torqlog.survey import survey_log

    s = survey_log(log, nominal_speed=speed_rpm, **read_kwargs(kw))
    d = s.to_dict()
    cols = pd.DataFrame(d["columns"])  # csv keeps the JSON key names
    lines = [
        f"file        {d['source']}",
        f"format      {d['format']}"
        + (f", {d['delimiter']}-delimited, decimal '{d['decimal']}'" if d["delimiter"] else ""),
        f"rows        {d['rows']}",
        f"duration    {d['duration_s']:.6g} s",
        f"sample rate {d['sample_rate_hz']:.6g} Hz (time-step jitter "
        f"{100 * d['rate_jitter']:.3g} %)",
        f"start       {d['start_time'] or 'not stated'}",
        f"time        {d['time_kind']}",
        f"gaps        {d['gaps']['count']}"
        + (f" (longest {d['gaps']['longest_s']:.4g} s; first after t = "
           f"{d['gaps']['list'][0]['after_s']:.6g} s, row {d['gaps']['list'][0]['row']})"
           if d["gaps"]["count"] else ""),
        "NaN rows    " + (", ".join(f"{k} {v}" for k, v in d["nan_rows"].items()) or "none"),
        "clipped     " + (", ".join(f"{k} {v} samples" for k, v in d["clipped_samples"].items())
                          or "none found"),
        f"cycles from {d['cycle_source'] or '-'}: {d['cycle_source_note']}",
    ]
    if d["preamble"]:
        lines.append("preamble    " + "; ".join(f"{k}: {v}" for k, v in d["preamble"].items()))
    emit(d, cols if fmt == "csv" else cols.rename(columns={"si_factor": "SI factor"}), fmt,
         output, text="\n".join(lines) + "\n")


# --------------------------------------------------------------------------- cycles
@cli.command()
@click.argument("log", type=click.Path(dir_okay=True))
@cycle_options
@click.option("--plot", type=click.Path(dir_okay=False), default=None,
              help="Write a PNG: torque, E(θ) and speed against crank angle.")
@output_options
def cycles(log: str, fmt: str, output: str | None, plot: str | None, **kw: Any) -> None:
    """Split a log into machine cycles: energy swing, Cs and torque per cycle."""
    res, _ = run_cycles(log, kw)
    if plot:
        res.plot(plot)
        click.echo(f"wrote {plot}", err=True)
    s = res.summary
    de, cs = s["energy_swing_J"], s["cs"]

    def g(x: float | None, scale: float = 1.0, unit: str = "") -> str:
        return "-" if x is None else f"{x * scale:.4g}{unit}"

    text = "\n".join([
        f"{res.source}: {s['cycles']} clean cycles of {s['cycles_total']} "
        f"(cycle source: {res.options['cycle_source']}, {res.options['revs_per_cycle']} "
        f"rev/cycle), {g(s['cycle_rate_per_min'])} cycles/min at {g(s['speed_mean_rpm'])} rpm",
        f"energy swing  median {g(de['median'], 1e-3, ' kJ')}, p95 {g(de['p95'], 1e-3, ' kJ')},"
        f" max {g(de['max'], 1e-3, ' kJ')}",
        f"Cs            median {g(cs['median'])}, p95 {g(cs['p95'])}, max {g(cs['max'])}"
        f"  (speed low-passed at {res.options['speed_cutoff_orders']:g} cycle orders)",
        f"peak torque   p99 {g(s['torque_peak_Nm_p99'], 1e-3, ' kN·m')}",
        *(f"note: {n}" for n in res.notes),
        *([f"flagged: {s['flags']}"] if s["flags"] else []),
        "",
    ])
    table = res.table
    if fmt == "table":
        table = table[["cycle", "t_start_s", "speed_mean_rpm", "torque_mean_Nm",
                       "torque_peak_Nm", "work_J", "energy_swing_J", "cs", "cs_predicted",
                       "flag"]]
    emit(res.to_dict(), table, fmt, output, text=text)


# --- shaft
def _flywheel_json(path: str) -> tuple[float, float]:
    """Mass [kg] and inertia [kg*m^2] from a flywheel result JSON file."""
    from torqlog.errors import DataError

    try:
        data = json.loads(Path(path).read_text(encoding="utf-8"))
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise DataError(f"{path}: not a valid JSON file ({exc})") from None
    values = []
    for key in ("mass_kg", "inertia_kgm2"):
        v = data.get(key) if isinstance(data, dict) else None
        if isinstance(v, bool) or not isinstance(v, int | float) or not v > 0:
            raise DataError(f"{path}: needs positive numbers mass_kg and inertia_kgm2 "
                            f"(the JSON of 'torqlog flywheel --format json')")
        values.append(float(v))
    return values[0], values[1]


def _shaft_text(d: dict[str, Any], name: str) -> str:
    o = d["options"]
    lines = [f"Shaft check{': ' + name if name else ''}  (running speed "
             f"{o['speed_rpm']:.1f} rpm = {o['speed_hz']:.3f} Hz; forcing up to order "
             f"{o['forcing_order']:g}, orders {o['orders_source']})"]
    log = d.get("log")
    if log is not None:
        orders = log["orders"]
        lines.append(
            f"Orders from {log['source']}: mean of {log['cycles']} clean cycles (cycle source "
            f"{log['cycle_source']}, {log['revs_per_cycle']} rev/cycle); running speed from "
            f"{log['running_speed_from']}; significant orders (share ≥ {o['min_share']:g}): "
            + (", ".join(f"{k:g} ({v:.2f})" for k, v in zip(orders["order"], orders["share"],
                                                           strict=True)) or "none"))
        lines += [f"note: {n}" for n in log["notes"]]
    for label in ("before", "after"):
        st = d[label]
        if st is None:
            continue
        if label == "after":
            added = []
            if o["add_mass_kg"] is not None:
                added.append(f"+{o['add_mass_kg']:g} kg at {o['add_mass_at_m']:g} m")
            if o["add_inertia_kgm2"] is not None:
                added.append(f"+{o['add_inertia_kgm2']:g} kg·m² at {o['add_inertia_at']}")
            label = f"after ({', '.join(added)})"
        lat = st["lateral"]
        lines.append(f"\n[{label}]")
        lines.append(f"  lateral: Rayleigh {lat['rayleigh_hz']:.1f} Hz, Dunkerley "
                     f"{lat['dunkerley_hz']:.1f} Hz, FE "
                     + ", ".join(f"{f:.1f}" for f in lat["fe_hz"]) + " Hz; "
                     f"max static deflection {lat['static_deflection_max_mm']:.3f} mm")
        lines.append(f"    {lat['margin_text']}")
        tor = st["torsional"]
        if tor is not None:
            modes = ", ".join("0 (rigid body)" if r else f"{f:.1f}"
                              for f, r in zip(tor["modes_hz"], tor["rigid_body"], strict=True))
            lines.append(f"  torsional: modes {modes} Hz")
            lines.append(f"    {tor['margin_text']}")
            for hit in tor["near_orders"]:
                share = "assumed" if hit["share"] is None else f"{hit['share']:.2f}"
                lines.append(f"    ! mode {hit['mode_hz']:.1f} Hz near order {hit['order']:g} "
                             f"({hit['order_hz']:.2f} Hz, share {share}, detune "
                             f"{hit['detune'] * 100:+.1f} %)")
    state = "after" if d["after"] is not None else "current"
    lines.append(f"\nVerdict ({state}): {d['verdict']}"
                 + (f" (failed: {', '.join(d['failed'])})" if d["failed"] else ""))
    lines.append("\nCautions:")
    lines += [f"  - {c}" for c in d["cautions"]]
    return "\n".join(lines) + "\n"


_SHAFT_SPEED_HELP = ("Running shaft speed [rpm] (default: the log's mean speed with --log, "
                     "else [machine] speed_rpm of the profile); with --log also the nominal "
                     "speed for cycle source 'nominal'.")

#: Options that say how to read a log or find its cycles: meaningless without --log.
_LOG_ONLY = ("cycle_source", "pulses_per_rev", "inertia", "speed_cutoff_orders",
             "torque_role", "cs_mean", "no_despike", "rate", "start",
             *(f"{r}_col" for r in _ROLE_OPTS), *(f"{r}_unit" for r in _UNIT_OPTS))


def _given_log_only(ctx: click.Context) -> list[str]:
    """The log-reading options given on the command line (or environment)."""
    return [p.opts[0] for p in ctx.command.params if p.name in _LOG_ONLY
            and ctx.get_parameter_source(p.name) not in (None, ParameterSource.DEFAULT)]


@cli.command("shaft")
@click.option("--profile", "profile_path", required=True,
              type=click.Path(exists=True, dir_okay=False), help="Machine profile (TOML).")
@click.option("--log", type=click.Path(dir_okay=True), default=None,
              help="Torque log: the orders of its mean cycle torque are held against the "
                   "torsional modes and set the lateral forcing; its mean speed is the "
                   "running speed.")
@cycle_stage_options(_SHAFT_SPEED_HELP)
@click.option("--add-mass", type=QuantityType("mass", "kg"), default=None,
              help="Mass added to the shaft, e.g. a new flywheel.")
@click.option("--at", "add_mass_at", type=QuantityType("length", "m"), default=None,
              help="Position of the added mass along the shaft (default: where the "
                   "profile's mass named like --add-inertia-at sits).")
@click.option("--add-inertia", type=QuantityType("inertia", "kg*m**2"), default=None,
              help="Inertia added to the torsional chain.")
@click.option("--add-inertia-at", default=None,
              help="Chain element that takes the added inertia [default: flywheel].")
@click.option("--from-flywheel", "flywheel_file", type=click.Path(exists=True, dir_okay=False),
              default=None, help="Flywheel result JSON (mass_kg, inertia_kgm2) to add.")
@click.option("--required-ratio", type=float, default=None,
              help="Required first lateral frequency / highest forcing [default: 3].")
@click.option("--band", type=float, default=None,
              help="Torsional band around each order, as a fraction [default: 0.10].")
@click.option("--min-share", type=float, default=None,
              help="Smallest share of the dynamic torque that counts [default: 0.05].")
@click.option("--self-weight", is_flag=True, default=None,
              help="Include the shaft's own weight in Rayleigh, Dunkerley and deflection.")
@click.option("--strict", is_flag=True,
              help="Exit with code 3 when a check fails (the result is still written).")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False), default=None,
              help="Write a PNG figure (with --log, also the order spectrum).")
@output_options
@click.pass_context
def shaft_cmd(ctx: click.Context, profile_path: str, log: str | None, add_mass: float | None,
              add_mass_at: float | None, add_inertia: float | None, add_inertia_at: str | None,
              flywheel_file: str | None, required_ratio: float | None, band: float | None,
              min_share: float | None, self_weight: bool | None, strict: bool,
              plot_path: str | None, fmt: str, output: str | None, **kw: Any) -> None:
    """Shaft natural frequencies, lateral and torsional, against the running speed."""
    from torqlog.errors import CheckFailed, UsageError
    from torqlog.profile import load_profile
    from torqlog.shaft import check_shaft
    from torqlog.spectrum import mean_cycle_spectrum
    from torqlog.units import si_factor

    if flywheel_file is not None:
        if add_mass is not None or add_inertia is not None:
            raise UsageError("give either --from-flywheel or --add-mass/--add-inertia, "
                             "not both")
        add_mass, add_inertia = _flywheel_json(flywheel_file)
    speed, revs = kw["speed_rpm"], kw["revs_per_cycle"]
    spectrum, log_info = None, None
    if log is None:
        given = _given_log_only(ctx)
        if given:
            raise UsageError(f"{', '.join(given)} only "
                             f"{'applies' if len(given) == 1 else 'apply'} with --log: "
                             f"{'it says' if len(given) == 1 else 'they say'} how to read a "
                             f"log and find its cycles")
        profile = load_profile(profile_path)
    else:
        cycles, profile = run_cycles(log, {**kw, "profile": profile_path})
        spectrum = mean_cycle_spectrum(cycles)
        revs = cycles.options["revs_per_cycle"]
        mean_rpm = cycles.summary["speed_mean_rpm"]
        speed_from = "--speed-rpm" if speed is not None else "log mean"
        if speed is None and mean_rpm is not None:
            speed = mean_rpm * si_factor("rpm", "speed")
        elif speed is None:
            speed_from = "profile"
        log_info = {"source": cycles.source, "cycles": cycles.summary["cycles"],
                    "cycle_source": cycles.options["cycle_source"], "revs_per_cycle": revs,
                    "speed_mean_rpm": mean_rpm, "running_speed_from": speed_from,
                    "notes": list(cycles.notes)}
    if flywheel_file is not None and add_inertia is not None:
        # the flywheel JSON gives the inertia on its own shaft; the torsional chain is
        # referred to the logged shaft: I·r² (kinetic energy kept)
        add_inertia *= float(profile.machine.get("flywheel_speed_ratio", 1.0)) ** 2
    result = check_shaft(profile, speed=speed, orders=spectrum, add_mass=add_mass,
                         add_mass_at=add_mass_at, add_inertia=add_inertia,
                         add_inertia_at=add_inertia_at, required_ratio=required_ratio,
                         band=band, min_share=min_share, self_weight=self_weight or None,
                         revs_per_cycle=revs)
    data = result.to_dict()
    if log_info is not None:
        log_info["orders"] = spectrum.significant(data["options"]["min_share"]).to_dict()
        data["log"] = log_info
    if plot_path:
        from torqlog.plots import plot_shaft

        plot_shaft(result, plot_path, spectrum=spectrum)
        click.echo(f"wrote {plot_path}", err=True)
    emit(data, result.to_pandas(), fmt, output,
         text=_shaft_text(data, profile.machine.get("name", "")))
    if strict and result.failures:
        reasons = "; ".join(t.removesuffix(": fail") for t in result.failures.values())
        raise CheckFailed(f"shaft check failed ({', '.join(result.failures)}): {reasons}")


# --- flywheel
def _flywheel_text(data: dict[str, Any]) -> str:
    """Readable two-column table, checks and cautions of a flywheel result."""
    verdict = data["verdict"].upper()
    lines = [f"Flywheel check: {verdict}"
             + (f" (failed: {', '.join(data['failed'])})" if data["failed"] else ""), ""]
    rows = [(k, v) for k, v in data.items()
            if k not in ("checks", "failed", "cautions", "options", "verdict")
            and v is not None and not isinstance(v, dict | list)]
    width = max(len(k) for k, _ in rows)
    for key, value in rows:
        shown = _fmt_float(float(value)) if isinstance(value, float) else str(value)
        lines.append(f"  {key:<{width}}  {shown}")
    lines += ["", "Checks:"]
    for c in data["checks"]:
        lines.append(f"  {'ok  ' if c['ok'] else 'FAIL'}  {c['name']:<26} "
                     f"value {_fmt_float(float(c['value']))}, limit "
                     f"{_fmt_float(float(c['limit']))}")
    lines += ["", "Cautions:"]
    for caution in data["cautions"]:
        lines += textwrap.wrap(caution, width=96, initial_indent="  - ",
                               subsequent_indent="    ")
    return "\n".join(lines)


@cli.command("flywheel")
@click.option("--inertia", type=QuantityType("inertia", "kg*m**2"), default=None,
              help="Required flywheel inertia [kg*m**2] (at the flywheel shaft).")
@click.option("--speed-rpm", "speed", type=QuantityType("speed", "rpm"), default=None,
              help="Operating speed of the flywheel shaft [rpm].")
@click.option("--material", default=None,
              help="Material name (e.g. ductile-iron, grey-iron-250, steel-c45).")
@click.option("--shape", type=click.Choice(["solid-disc", "annular-disc", "rim"]),
              default=None, help="Flywheel shape [default: annular-disc].")
@click.option("--outer-diameter", type=QuantityType("length", "m"), default=None,
              help="Outer diameter [m]; left out, it is solved from --width.")
@click.option("--bore", type=QuantityType("length", "m"), default=None,
              help="Bore diameter [m] (0 for a solid disc).")
@click.option("--width", type=QuantityType("length", "m"), default=None,
              help="Face width [m]; left out, it is solved from --outer-diameter.")
@click.option("--max-width", type=QuantityType("length", "m"), default=None,
              help="Largest face width the envelope allows [m].")
@click.option("--max-outer-diameter", type=QuantityType("length", "m"), default=None,
              help="Largest outer diameter the envelope allows [m].")
@click.option("--rim-inner-diameter", type=QuantityType("length", "m"), default=None,
              help="Rim shape: inner diameter of the rim ring [m].")
@click.option("--rim-depth", type=QuantityType("length", "m"), default=None,
              help="Rim shape: radial depth of the rim ring [m].")
@click.option("--web-width", type=QuantityType("length", "m"), default=None,
              help="Rim shape: web thickness [m] (left out, the web is neglected).")
@click.option("--overspeed", type=float, default=None,
              help="Overspeed factor the flywheel must survive [default: 1.2].")
@click.option("--slowdown", type=float, default=None,
              help="Fractional speed drop over the working stroke, e.g. 0.1.")
@click.option("--interference", type=QuantityType("length", "mm"), default=None,
              help="Diametral shrink-fit interference on a solid shaft [mm].")
@click.option("--density", type=QuantityType("density", "kg/m**3"), default=None,
              help="Override the material density [kg/m**3].")
@click.option("--yield", "strength", type=QuantityType("stress", "MPa"), default=None,
              help="Override the material strength [MPa] (tensile for grey iron).")
@click.option("--poisson", type=float, default=None, help="Override Poisson's ratio.")
@click.option("--modulus", type=QuantityType("stress", "GPa"), default=None,
              help="Override Young's modulus [GPa].")
@click.option("--material-factor", type=float, default=None,
              help="Factor on strength kept at the overspeed [default: 1.5 ductile, "
                   "3.0 grey iron].")
@click.option("--profile", "profile_path", type=click.Path(dir_okay=False), default=None,
              help="Machine profile TOML; reads [flywheel] and [machine] speed_rpm x "
                   "flywheel_speed_ratio. Options override the file.")
@click.option("--from-size", "size_path", type=click.Path(dir_okay=False), default=None,
              help="JSON from 'torqlog size --format json': inertia "
                   "added_inertia_at_flywheel_kgm2 (else added_inertia_kgm2 / ratio^2), "
                   "speed speed_mean_rpm x flywheel_speed_ratio (default 1).")
@click.option("--strict", is_flag=True, help="Exit with code 3 when a check fails.")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False), default=None,
              help="Write the stress-profile plot to this PNG file.")
@output_options
def flywheel_cmd(inertia: float | None, speed: float | None, material: str | None,
                 shape: str | None, outer_diameter: float | None, bore: float | None,
                 width: float | None, max_width: float | None,
                 max_outer_diameter: float | None, rim_inner_diameter: float | None,
                 rim_depth: float | None, web_width: float | None, overspeed: float | None,
                 slowdown: float | None, interference: float | None, density: float | None,
                 strength: float | None, poisson: float | None, modulus: float | None,
                 material_factor: float | None, profile_path: str | None,
                 size_path: str | None, strict: bool, plot_path: str | None, fmt: str,
                 output: str | None) -> None:
    """Size a flywheel for an inertia and check its burst margin, rim speed and fit.

    Give --outer-diameter to solve the width, or --width to solve the diameter; give
    both to check a given flywheel. Stresses are evaluated at the operating speed and
    must keep the material factor at the overspeed. A failing design prints its verdict
    and exits 0 (3 with --strict).
    """
    from torqlog.errors import CheckFailed, DataError, UsageError
    from torqlog.flywheel import flywheel_from_profile
    from torqlog.profile import load_profile

    prof = load_profile(profile_path) if profile_path else None
    size = None
    if size_path:
        p = Path(size_path)
        if not p.is_file():
            raise UsageError(f"{p}: size result file does not exist")
        try:
            size = json.loads(p.read_text(encoding="utf-8"))
        except (json.JSONDecodeError, UnicodeDecodeError) as exc:
            raise DataError(f"{p}: not a JSON file from 'torqlog size --format json' "
                            f"({exc})") from None
    result = flywheel_from_profile(
        prof, inertia=inertia, speed=speed, size=size, size_source=str(size_path),
        material=material, shape=shape, outer_diameter=outer_diameter, bore=bore,
        width=width, max_width=max_width, max_outer_diameter=max_outer_diameter,
        rim_inner_diameter=rim_inner_diameter, rim_depth=rim_depth, web_width=web_width,
        overspeed=overspeed, slowdown=slowdown, interference=interference, density=density,
        strength=strength, poisson=poisson, modulus=modulus, material_factor=material_factor)
    data = result.to_dict()
    if profile_path:
        data["options"]["profile"] = profile_path
    if plot_path:
        from torqlog.plots import plot_flywheel_stresses

        plot_flywheel_stresses(result, plot_path)
        click.echo(f"wrote {plot_path}", err=True)
    emit(data, None, fmt, output, text=_flywheel_text(data) if fmt == "table" else None)
    if data["verdict"] != "pass":
        if fmt != "table" or output:
            click.echo(f"flywheel check: FAIL ({', '.join(data['failed'])})", err=True)
        if strict:
            raise CheckFailed(f"flywheel check failed: {', '.join(data['failed'])}")


# --- size
def parse_quantile(text: str) -> float | str:
    """The ``--quantile`` option: a number, or ``"max"``."""
    from torqlog.errors import UsageError

    try:
        return "max" if text.strip().lower() == "max" else float(text)
    except ValueError:
        raise UsageError(f"--quantile: {text!r} is not a number in (0, 1] or 'max'") \
            from None


def _size_text(d: dict[str, Any], source: str) -> str:
    """Readable summary of a sizing result."""
    def kg(x: float | None) -> str:
        return "-" if x is None else f"{x:,.4g} kg·m²"

    lo, hi = d["ci95_kgm2"]
    q = d["quantile"]
    lines = [
        f"{source}: flywheel sizing by {d['method']} ({d['cycles_used']} clean cycles, "
        f"mean speed {d['speed_mean_rpm']:.4g} rpm)",
        f"design energy swing   {d['design_energy_swing_J'] / 1e3:.4g} kJ "
        f"({'max' if q == 'max' else f'p{100 * float(q):g}'} of the cycles)",
        f"target Cs             {d['target_cs']:.4g}",
        f"required inertia      {kg(d['required_inertia_kgm2'])}  "
        f"(95 % interval {kg(lo)} to {kg(hi)})",
        f"existing inertia      {kg(d['existing_inertia_kgm2'])}",
        f"added inertia         {kg(d['added_inertia_kgm2'])}",
    ]
    if d["flywheel_speed_ratio"] != 1.0:
        lines.append(f"  at the flywheel shaft (×{d['flywheel_speed_ratio']:g} speed): "
                     f"{kg(d['added_inertia_at_flywheel_kgm2'])}")
    if d["identified"]:
        idf = d["identified"]
        lines.append(f"identified from log   {kg(idf.get('inertia_kgm2'))} (R² "
                     f"{idf.get('r2', float('nan')):.3f})")
    drive = d.get("drive") or {}
    if drive.get("added_inertia_for_target_cs_kgm2") is not None:
        lines.append(f"with motor slip       {kg(drive['added_inertia_for_target_cs_kgm2'])} "
                     "added meets the target")
    lines += [f"note: {m}" for m in d["messages"]]
    lines += ["", "Cautions:"] + [f"  - {c}" for c in d["cautions"]] + [""]
    return "\n".join(lines)


@cli.command("size")
@click.argument("log", type=click.Path(dir_okay=True))
@click.option("--target-cs", type=float, default=None,
              help="Target coefficient of speed fluctuation (0 < Cs < 1).")
@click.option("--machine-class", default=None, metavar="NAME",
              help="Take the target Cs from the table of machine types (see the docs).")
@click.option("--quantile", default="0.95", show_default=True,
              help="Design quantile of the per-cycle energy swing, or 'max'.")
@click.option("--motor-power", type=QuantityType("power", "kW"), default=None,
              help="Motor rated power [kW].")
@click.option("--sync-rpm", type=QuantityType("speed", "rpm"), default=None,
              help="Motor synchronous speed [rpm].")
@click.option("--rated-rpm", type=QuantityType("speed", "rpm"), default=None,
              help="Motor rated (full-load) speed [rpm].")
@click.option("--motor-ratio", type=float, default=None,
              help="Motor speed / logged shaft speed (belt or gear ratio).")
@click.option("--flywheel-speed-ratio", type=float, default=None,
              help="Flywheel shaft speed / logged shaft speed.  [default: 1, or profile]")
@click.option("--seed", type=int, default=0, show_default=True, help="Bootstrap seed.")
@cycle_options
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False), default=None,
              help="Write a PNG: Cs and motor peak torque against added inertia.")
@output_options
def size_cmd(log: str, target_cs: float | None, machine_class: str | None, quantile: str,
             motor_power: float | None, sync_rpm: float | None, rated_rpm: float | None,
             motor_ratio: float | None, flywheel_speed_ratio: float | None, seed: int,
             plot_path: str | None, fmt: str, output: str | None, **kw: Any) -> None:
    """Flywheel inertia to reach a target Cs, with its interval and the motor's view."""
    from torqlog.errors import UsageError
    from torqlog.inertia import size_log, size_log_dict

    res, profile = run_cycles(log, kw)
    q = parse_quantile(quantile)
    motor = {"power": motor_power, "sync": sync_rpm, "rated": rated_rpm,
             "speed_ratio": motor_ratio}
    result = size_log(res, profile, target_cs=target_cs, machine_class=machine_class,
                      quantile=q, motor=motor, flywheel_speed_ratio=flywheel_speed_ratio,
                      seed=seed)
    data = size_log_dict(result, res)
    target_cs = result.target_cs
    if plot_path:
        from torqlog.plots import plot_drive_curve

        if result.curve is None:
            raise UsageError("--plot needs a motor (--motor-power, --sync-rpm, --rated-rpm, "
                             "--motor-ratio, or [motor] in the profile) to simulate the drive")
        plot_drive_curve(result.to_pandas(), plot_path, target_cs=target_cs,
                         recommended=data["added_inertia_kgm2"])
        click.echo(f"wrote {plot_path}", err=True)
    emit(data, result.to_pandas() if fmt == "csv" and result.curve is not None else None,
         fmt, output, text=_size_text(data, res.source))


# --- simulate
@cli.command("simulate")
@click.argument("machine")
@click.option("-o", "--output", "output", required=True, type=click.Path(dir_okay=False),
              help="Log file to write (.csv, .txt, .gz for gzip, .parquet for Parquet).")
@click.option("--duration", type=QuantityType("time", "s"), default="60", show_default=True,
              help="Length of the log [s].")
@click.option("--rate", type=QuantityType("frequency", "Hz"), default="1000",
              show_default=True, help="Sample rate [Hz].")
@click.option("--channels", default="torque,speed", show_default=True,
              help="Comma-separated channels: torque, speed, angle, index, counts.")
@click.option("--dialect", type=click.Choice(["comma", "semicolon", "preamble", "iso"]),
              default="comma", show_default=True, help="Logger export dialect.")
@click.option("--seed", type=int, default=0, show_default=True, help="Random seed.")
@click.option("--no-noise", is_flag=True, help="Leave out the sensor noise.")
@click.option("--gaps", type=click.IntRange(min=0), default=0, show_default=True,
              help="Number of ~0.2 s gaps (missing samples).")
@click.option("--spikes", type=click.IntRange(min=0), default=0, show_default=True,
              help="Number of one-sample torque spikes.")
@click.option("--clip", type=QuantityType("torque", "N*m"), default=None,
              help="Saturate the torque at ± this value [N*m].")
@click.option("--start", default="2026-03-02T06:00:00", show_default=True,
              help="Wall-clock time of the first sample (ISO 8601).")
@click.option("--load-scale", type=float, default=1.0, show_default=True,
              help="Factor on the working load (to simulate drift).")
@click.option("--profile-out", type=click.Path(dir_okay=False), default=None,
              help="Also write the machine profile (TOML) to this file.")
def simulate_cmd(machine: str, output: str, duration: float, rate: float, channels: str,
                 dialect: str, seed: int, no_noise: bool, gaps: int, spikes: int,
                 clip: float | None, start: str, load_scale: float,
                 profile_out: str | None) -> None:
    """Write a synthetic log of a demo MACHINE (press, compressor, engine) of the
    invented Brindlemoor Works plant."""
    from torqlog.simulate import demo_profile, get_machine, simulate, write_log

    log = simulate(get_machine(machine), duration=duration, rate=rate, channels=channels,
                   seed=seed, noise=not no_noise, gaps=gaps, spikes=spikes, clip=clip,
                   start=start, load_scale=load_scale)
    write_log(log, output, dialect=dialect)
    info = log.to_dict()
    line = (f"wrote {output}: {info['name']} ({info['machine']}), {info['rows']} rows, "
            f"{info['duration_s']:g} s at {info['rate_Hz']:g} Hz, "
            f"channels {','.join(info['channels'])}")
    if profile_out:
        Path(profile_out).write_text(demo_profile(log.machine), encoding="utf-8")
        line += f"; profile {profile_out}"
    click.echo(line)


# --- report
@cli.command("report")
@click.argument("logs", nargs=-1, required=True, type=click.Path(dir_okay=False))
@cycle_options
@click.option("--target-cs", type=float, default=None,
              help="Target coefficient of speed fluctuation [default: the profile's].")
@click.option("--quantile", default="0.95", show_default=True,
              help="Design quantile of the per-cycle energy swing, or 'max'.")
@click.option("-o", "--output", "output", type=click.Path(dir_okay=False),
              default="report.html", show_default=True, help="HTML report to write.")
@click.option("--pdf", "pdf_path", type=click.Path(dir_okay=False), default=None,
              help="Also write the report as PDF (matplotlib; no browser needed).")
@click.option("--figures", "figure_dir", type=click.Path(file_okay=False), default=None,
              help="Also keep the PNG figures in this folder.")
def report_cmd(logs: tuple[str, ...], target_cs: float | None, quantile: str, output: str,
               pdf_path: str | None, figure_dir: str | None, **kw: Any) -> None:
    """One self-contained HTML report from LOG(s) of one machine: inputs, measured state,
    inertia recommendation, flywheel proposal, shaft checks, trends and cautions.

    The first LOG is the design log (recommendation, flywheel, shaft); several logs with
    start times also give the shift trend.
    """
    from torqlog.errors import UsageError
    from torqlog.report import build_report, write_report

    profile_path = kw.pop("profile", None)
    if not profile_path:
        raise UsageError("give --profile FILE: the report needs the machine profile")
    profile = load_profile_opt(profile_path)
    read = read_kwargs(kw)
    opts = make_cycle_options(kw, profile)
    data = build_report(list(logs), profile_path, cycle_options=opts, read=read,
                        target_cs=target_cs, quantile=parse_quantile(quantile),
                        figure_dir=figure_dir)
    for why in data.skipped.values():
        click.echo(f"note: {why}", err=True)
    for path in write_report(data, output, pdf_path):
        click.echo(f"wrote {path}", err=True)
    click.echo(output)


# --- demo
@cli.command("demo")
@click.option("--out", "out_dir", type=click.Path(file_okay=False), default="torqlog-demo",
              show_default=True, help="Folder to write the demo into.")
def demo_cmd(out_dir: str) -> None:
    """Run the whole chain on the invented Brindlemoor Works demo machines.

    Writes their logs and profiles, each stage's JSON (inspect, cycles, size, flywheel,
    shaft, trend), the figures and a report per machine into OUT, and prints the path of
    the press report last.
    """
    from torqlog.demo import write_demo_inputs
    from torqlog.report import build_report, write_report

    reports = []
    for run in write_demo_inputs(out_dir):
        data = build_report(list(run.logs), run.profile, figure_dir=run.folder)
        stages = data.stage_json()
        for name in ("inspect", "cycles"):
            for log, d in zip(run.logs, stages.pop(name), strict=True):
                (run.folder / f"{name}_{log.stem}.json").write_text(to_json(d) + "\n",
                                                                   encoding="utf-8")
        for name, d in stages.items():
            (run.folder / f"{name}.json").write_text(to_json(d) + "\n", encoding="utf-8")
        html = run.folder / "report.html"
        write_report(data, html, run.folder / "report.pdf" if run.key == "press" else None)
        verdicts = ", ".join(f"{v['check']} {v['verdict']}" for v in data.verdicts())
        click.echo(f"{data.machine} ({run.key}, {len(run.logs)} log(s), {run.dialect} "
                   f"dialect): {verdicts or 'no checks'}", err=True)
        for why in data.skipped.values():
            click.echo(f"  note: {why}", err=True)
        reports.append(html)
    first = reports.pop(0)
    for html in reports:
        click.echo(f"report: {html}")
    click.echo(f"report: {first}")


# --- trend
def _trend_text(d: dict[str, Any], n_files: int) -> str:
    o = d["options"]
    dr = o["drift"]
    lines = [f"{n_files - len(d['failed'])} of {n_files} file(s) used; {len(d['shifts'])} "
             f"{o['by']} row(s); shifts {', '.join(o['shifts']['starts'])} "
             f"({', '.join(o['shifts']['names'])}), zone {o['shifts']['timezone'] or 'UTC'}",
             f"limits: {dr['baseline']}; individuals {dr['individuals']} ({dr['limits']}), "
             f"EWMA λ = {dr['ewma_lambda']:g}, L = {dr['ewma_L']:g}; run rule {dr['run_rule']} "
             f"({dr['run_length']} in a row on one side)"]
    on = d["drift_onset"]
    if on:
        who = f"{on['machine']}: " if on["machine"] else ""
        lines.append(f"drift began: {who}{on['date']} {on['shift']} ({on['start_time']}): "
                     + ", ".join(on["flags"]))
    else:
        lines.append("drift: none flagged after the baseline")
    lines += [f"note: {n}" for n in d["notes"]]
    lines += [f"failed: {f['file']}: {f['reason']}" for f in d["failed"]]
    lines.append("flags: I individuals chart, E EWMA, R run rule; + above, - below")
    return "\n".join(lines) + "\n"


def _short_flags(flags: list[str]) -> str:
    """``cs_median:individuals_high`` and friends as ``cs_median I+ E+`` for a table."""
    sym = {"individuals": "I", "ewma": "E", "run": "R"}
    per: dict[str, list[str]] = {}
    for f in flags:
        fig, _, rule = f.partition(":")
        chart, _, side = rule.rpartition("_")
        per.setdefault(fig, []).append(sym.get(chart, chart) + ("+" if side == "high" else "-"))
    return "; ".join(f"{k} {' '.join(v)}" for k, v in per.items())


def _trend_jobs(paths: tuple[str, ...], kw: dict[str, Any], name_time: str | None,
                machine: str | None, folder_profiles: bool
                ) -> tuple[list[Any], list[dict[str, str]], Any]:
    """File jobs for ``trend``; pops the cycle and read options from ``kw``."""
    from torqlog.batch import FileJob, discover
    from torqlog.errors import UsageError

    files, missing = discover(paths)
    if kw.get("start") and len(files) > 1:
        raise UsageError("--start places a single file; for several files give --name-time "
                         "PATTERN or logs that carry their own timestamps")
    if kw.get("start"):
        try:
            pd.Timestamp(kw["start"])
        except ValueError:
            raise UsageError(f"--start {kw['start']!r} is not an ISO time, e.g. "
                             "2026-03-02T06:00:00") from None
    if name_time:
        from torqlog.batch import name_time_regex

        name_time_regex(name_time)
    profile = load_profile_opt(kw.pop("profile", None))
    read = read_kwargs(kw)
    start = read.pop("start")
    cyc_kw = dict(kw)
    opts = make_cycle_options(dict(cyc_kw), profile)
    folder_cache: dict[Path, tuple[Any, Any]] = {}
    jobs = []
    for f in files:
        prof, o = profile, opts
        if folder_profiles:
            folder = f.parent
            if folder not in folder_cache:
                tomls = sorted(folder.glob("*.toml"))
                if len(tomls) != 1:
                    raise UsageError(f"--folder-profiles: {folder} holds {len(tomls)} .toml "
                                     "files; put exactly one machine profile beside its logs")
                p = load_profile_opt(str(tomls[0]))
                folder_cache[folder] = (p, make_cycle_options(dict(cyc_kw), p))
            prof, o = folder_cache[folder]
        name = machine or (prof.machine.get("name") if prof is not None else None) \
            or f.parent.name
        jobs.append(FileJob(str(f), o, name, read, start, name_time))
    return jobs, missing, profile


@cli.command("trend")
@click.argument("paths", nargs=-1, required=True)
@cycle_options
@click.option("--name-time", default=None, metavar="PATTERN",
              help="Read each file's start from its name with this strftime pattern, e.g. "
                   "'%Y%m%d_%H%M' for press4_20260302_0600.csv (used when the file states "
                   "no start).")
@click.option("--machine", default=None,
              help="Machine name for all files [default: the profile's [machine] name, "
                   "else each file's folder name].")
@click.option("--folder-profiles", is_flag=True,
              help="Use the one .toml profile in each file's folder for that file (a fleet "
                   "laid out one folder per machine).")
@click.option("--shifts", default=None, metavar="HH:MM,...",
              help="Shift start times [default: the profile's, else 06:00,14:00,22:00].")
@click.option("--shift-names", default=None, metavar="NAME,...",
              help="One name per shift start [default: early,late,night for the default "
                   "starts, else the start times].")
@click.option("--timezone", default=None, metavar="ZONE",
              help="IANA time zone of the shift calendar, e.g. Europe/Berlin [default: the "
                   "profile's, else UTC]; times without a zone are read as local times in it.")
@click.option("--by", type=click.Choice(["shift", "day", "file", "hour"]), default="shift",
              show_default=True, help="One row per shift, production day, file or hour.")
@click.option("--baseline-shifts", type=click.IntRange(min=2), default=9, show_default=True,
              help="The first N rows of each machine set the control limits.")
@click.option("--baseline", "baseline_path", type=click.Path(dir_okay=False), default=None,
              help="Take the limits from an earlier run instead (its shifts.csv or JSON).")
@click.option("--figures", default=",".join(("energy_swing_J_median", "cs_median",
                                              "torque_peak_Nm_p99")), show_default=True,
              help="Row figures to chart and judge, comma-separated.")
@click.option("--limits", "limits_method", type=click.Choice(["prediction", "classic"]),
              default="prediction", show_default=True,
              help="'classic': mean ± 3σ; 'prediction': widened for the baseline's size so a "
                   "point has the nominal 0.27 % false-alarm chance.")
@click.option("--ewma-lambda", type=click.FloatRange(0, 1, min_open=True), default=0.2,
              show_default=True, help="EWMA weight λ.")
@click.option("--ewma-L", "ewma_l", type=click.FloatRange(min=0, min_open=True), default=3.0,
              show_default=True, help="EWMA limit width L [σ of the EWMA].")
@click.option("--run-rule", type=click.Choice(["western-electric-4", "nelson-2"]),
              default="western-electric-4", show_default=True,
              help="Run rule: 8 (Western Electric) or 9 (Nelson) in a row on one side.")
@click.option("--jobs", "-j", "n_jobs", type=click.IntRange(min=1), default=None,
              help="Parallel processes [default: all cores].")
@click.option("--dask", "use_dask", is_flag=True,
              help="Run on a local Dask cluster of --jobs workers (needs torqlog[cluster]).")
@click.option("--scheduler", default=None, metavar="ADDRESS",
              help="Run on the Dask cluster at this scheduler address (tcp://host:8786).")
@click.option("--out-dir", type=click.Path(file_okay=False), default=None,
              help="Write cycles.parquet (every cycle), shifts.csv (the rows) and the PNG "
                   "plots into this folder.")
@output_options
def trend_cmd(paths: tuple[str, ...], fmt: str, output: str | None, name_time: str | None,
              machine: str | None, folder_profiles: bool, shifts: str | None,
              shift_names: str | None, timezone: str | None, by: str, baseline_shifts: int,
              baseline_path: str | None, figures: str, limits_method: str,
              ewma_lambda: float, ewma_l: float, run_rule: str, n_jobs: int | None,
              use_dask: bool, scheduler: str | None, out_dir: str | None,
              **kw: Any) -> None:
    """Trend many logs across shifts (and machines): per-shift figures, control limits
    and the first shift where drift began. PATHS are files, folders or glob patterns."""
    import sys
    from contextlib import ExitStack, nullcontext

    from torqlog.batch import dask_client
    from torqlog.trend import DriftOptions, ShiftCalendar, read_baseline, run_trend

    jobs, missing, profile = _trend_jobs(paths, kw, name_time, machine, folder_profiles)
    calendar = ShiftCalendar.build(shifts, shift_names, timezone, profile)
    drift = DriftOptions(figures=tuple(f.strip() for f in figures.split(",") if f.strip()),
                         baseline_groups=baseline_shifts, lam=ewma_lambda, L=ewma_l,
                         run_rule=run_rule, limits=limits_method)
    baseline = read_baseline(baseline_path) if baseline_path else None
    n_all = len(jobs) + len(missing)
    cluster = dask_client(scheduler, n_jobs) if (use_dask or scheduler) else nullcontext()
    with cluster as client, ExitStack() as stack:
        progress = None
        if sys.stderr.isatty() and jobs:
            bar = stack.enter_context(click.progressbar(length=len(jobs), label="logs",
                                                        file=sys.stderr))
            progress = lambda: bar.update(1)  # noqa: E731
        res = run_trend(jobs, calendar, by=by, drift=drift, baseline=baseline,
                        workers=n_jobs, client=client, progress=progress, missing=missing)
    d = res.to_dict()
    if out_dir:
        out = Path(out_dir)
        out.mkdir(parents=True, exist_ok=True)
        res.cycles_table().to_parquet(out / "cycles.parquet", index=False)
        res.to_pandas().to_csv(out / "shifts.csv", index=False)
        written = [out / "cycles.parquet", out / "shifts.csv", *res.plot(out)]
        click.echo("wrote " + ", ".join(str(p) for p in written), err=True)
    table = res.to_pandas()
    if fmt == "table":
        table = table.assign(start_time=[t.strftime("%Y-%m-%d %H:%M") for t in
                                         table["start_time"]],
                             flags=[_short_flags(f) for f in res.groups["flags"]])
        table = table.drop(columns=["cycles_total", "energy_swing_J_p95", "cs_p95"])
    emit(d, table, fmt, output, text=_trend_text(d, n_all))
    if res.failed:
        click.echo(f"Error: {len(res.failed)} of {n_all} file(s) failed: "
                   + "; ".join(f"{f['file']}: {f['reason']}" for f in res.failed), err=True)
        raise click.exceptions.Exit(1)
