"""Command-line interface: a thin click layer over the library.

No computation lives here: each command parses options (units through pint), calls
library functions, and prints. Errors from the library (:class:`TorqlogError`) become one
sentence on stderr and exit code 1 (bad data), 2 (bad usage) or 3 (strict check failed);
``--debug`` shows the traceback instead.
"""

from __future__ import annotations

import json
import math
import os
import sys
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING, Any

import click
import numpy as np

from torqlog._version import __version__
from torqlog.errors import TorqlogError
from torqlog.io.outputs import atomic_path, check_outputs, write_text  # noqa: F401 (for commands)
from torqlog.io.units import parse_quantity

if TYPE_CHECKING:
    import pandas as pd

FORMATS = ("table", "csv", "json", "xlsx", "parquet")
#: Formats that carry the full result table.
TABULAR = ("csv", "xlsx", "parquet")


# --------------------------------------------------------------------------- helpers
class QuantityType(click.ParamType):
    """A click parameter that takes ``1.2`` (in ``default_unit``) or ``"1200 mm"``.

    The converted value is SI. ``minimum`` says which values make sense: ``"positive"``
    (the default: zero and negatives refused, never a silent fall-back to the profile),
    ``"nonnegative"`` (zero allowed, e.g. the bore of a solid disc) or None (any finite
    number). A refused value is a usage error (exit 2).
    """

    name = "quantity"

    def __init__(self, kind: str, default_unit: str, minimum: str | None = "positive"
                 ) -> None:
        self.kind = kind
        self.default_unit = default_unit
        self.minimum = minimum

    def get_metavar(self, param: click.Parameter, ctx: click.Context | None = None) -> str:
        return f"[{self.default_unit}]"

    def convert(self, value: Any, param: click.Parameter | None,
                ctx: click.Context | None) -> float:
        name = f"--{param.name.replace('_', '-')}" if param else "value"
        if isinstance(value, float):
            v = value
        else:
            try:
                v = parse_quantity(value, self.default_unit, self.kind, name=name)
            except TorqlogError as exc:
                self.fail(str(exc).removeprefix(f"{name}: "), param, ctx)
        if not math.isfinite(v):
            self.fail(f"{value!r} is not a finite number", param, ctx)
        if self.minimum == "positive" and v <= 0:
            self.fail(f"{value!r} must be greater than zero", param, ctx)
        if self.minimum == "nonnegative" and v < 0:
            self.fail(f"{value!r} must not be negative", param, ctx)
        return v


def positive_float(upper: float | None = None, *, upper_open: bool = True,
                   zero_ok: bool = False) -> click.FloatRange:
    """A plain number that must be > 0 (or >= 0 with ``zero_ok``), optionally below
    ``upper``: ratios, factors, fractions."""
    return click.FloatRange(min=0.0, max=upper, min_open=not zero_ok,
                            max_open=upper_open and upper is not None)


class DateTimeType(click.ParamType):
    """An ISO 8601 date and time (``2026-03-02T06:00:00``, zone optional).

    Passed on as the text given (the readers parse it again), after checking it parses,
    so a wrong date is a usage error (exit 2) naming the option.
    """

    name = "iso-time"

    def get_metavar(self, param: click.Parameter, ctx: click.Context | None = None) -> str:
        return "ISO"

    def convert(self, value: Any, param: click.Parameter | None,
                ctx: click.Context | None) -> str:
        import datetime as dt

        text = str(value).strip()
        try:
            dt.datetime.fromisoformat(text.replace("Z", "+00:00"))
        except ValueError:
            self.fail(f"{value!r} is not an ISO 8601 time; write it like "
                      "2026-03-02T06:00:00 (a zone such as +01:00 may follow)", param, ctx)
        return text


class OutputFile(click.Path):
    """An output file path whose suffix says its format (``.png``, ``.html``...)."""

    def __init__(self, suffixes: tuple[str, ...], what: str) -> None:
        super().__init__(dir_okay=False)
        self.suffixes = suffixes
        self.what = what

    def convert(self, value: Any, param: click.Parameter | None,
                ctx: click.Context | None) -> Any:
        value = super().convert(value, param, ctx)
        if not str(value).lower().endswith(self.suffixes):
            ends = (f"{', '.join(self.suffixes[:-1])} or {self.suffixes[-1]}"
                    if len(self.suffixes) > 1 else self.suffixes[0])
            self.fail(f"{str(value)!r}: {self.what} must end in {ends}", param, ctx)
        return value


#: Figure files: the formats matplotlib writes without extra software.
FIGURE_FILE = OutputFile((".png", ".svg", ".pdf"), "a figure file")


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
    pd = sys.modules.get("pandas")  # no pandas object can exist unless pandas is loaded
    if pd is not None:
        if obj is pd.NaT:
            return None
        if isinstance(obj, pd.Timestamp):
            return obj.isoformat()
    if isinstance(obj, Path):
        return str(obj)
    return obj


def to_json(data: dict[str, Any]) -> str:
    """Serialise a result dict to JSON text (NaN becomes null)."""
    return json.dumps(_jsonable(data), indent=2, ensure_ascii=False)


def output_settings() -> dict[str, Any]:
    """Unit system, digits and units row chosen by the output options of this command."""
    ctx = click.get_current_context(silent=True)
    settings = {"units": "si", "digits": None, "full_precision": False, "units_row": False}
    if ctx is not None:
        settings.update(ctx.meta.get("torqlog.output", {}))
        prof = ctx.params.get("profile") or ctx.params.get("profile_path")
        if "units" not in ctx.meta.get("torqlog.output", {}) and isinstance(prof, str):
            settings["units"] = load_profile_opt(prof).output.get("units", "si")
    return settings


def emit(data: dict[str, Any], table: pd.DataFrame | None, fmt: str, out: str | None,
         text: str | Callable[[dict[str, Any]], str] | None = None,
         sheets: dict[str, pd.DataFrame] | None = None) -> None:
    """Write a result in the chosen format to ``out`` (a path) or stdout.

    ``table`` is printed for ``table`` and ``csv``; ``text`` (if given) is printed
    before the table in ``table`` format -- a function of the (unit-converted) data, or
    fixed text (then shown in SI only); ``data`` is the JSON contract. ``--units us``
    converts data and table (:func:`torqlog.io.units.convert_keys`); xlsx and Parquet go
    through :mod:`torqlog.present.exporting`, with ``sheets`` as extra xlsx sheets.
    """
    from torqlog.io.outputs import check_format_suffix
    from torqlog.io.units import convert_frame, convert_keys
    from torqlog.present.exporting import DEFAULT_DIGITS, to_csv_text, write_binary

    check_format_suffix(fmt, out)
    opts = output_settings()
    system = opts["units"]
    if system != "si":
        data = convert_keys(data, system)
        table = convert_frame(table, system) if table is not None else None
        sheets = {k: convert_frame(v, system) for k, v in (sheets or {}).items()}
    if isinstance(text, str) and system != "si":
        text = (text.rstrip("\n")
                + f"\n(the lines above in SI; the table in {system.upper()} units)\n")
    if callable(text):
        try:
            text = text(data)
        except KeyError:  # a text layout that knows SI keys only: list the values
            text = "\n".join(f"  {k:<34} {_fmt_float(v) if isinstance(v, float) else v}"
                             for k, v in _flat(data).items() if k != "options"
                             and not k.startswith("options.")) + "\n"
    if fmt in ("xlsx", "parquet"):
        path = write_binary(fmt, out, _jsonable(data), table, system, sheets)
        click.echo(f"wrote {path}", err=True)
        return
    if fmt == "json":
        body = to_json(data) + "\n"
    elif fmt == "csv":
        import pandas as pd

        digits = None if opts["full_precision"] else (opts["digits"] or DEFAULT_DIGITS)
        body = to_csv_text(table if table is not None else pd.DataFrame([_flat(data)]),
                           digits=digits, units_row=opts["units_row"], system=system)
    else:
        import pandas as pd

        parts = [text] if text else []
        if table is not None:
            from torqlog.present.labels import relabel_table

            with pd.option_context("display.max_rows", 60, "display.width", 160,
                                   "display.max_columns", 30):
                parts.append(relabel_table(table).to_string(index=False))
        body = "\n".join(parts) + "\n"
    if out:
        write_text(out, body)
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


def _store(key: str) -> Callable[[click.Context, click.Parameter, Any], Any]:
    def callback(ctx: click.Context, param: click.Parameter, value: Any) -> Any:
        if value is not None:
            ctx.meta.setdefault("torqlog.output", {})[key] = value
        return value

    return callback


def units_option(f: Callable) -> Callable:
    """Add ``--units si|us`` (read by :func:`output_settings`, not passed to the command)."""
    return click.option("--units", "units_system", type=click.Choice(["si", "us"]),
                        default=None, expose_value=False, callback=_store("units"),
                        help="Units of the output: si, or us (lbf·ft, ft·lbf, lb·ft², in, "
                             "ksi, lb, hp, rpm)  [default: si, or the profile].")(f)


def output_options(f: Callable | None = None, *, formats: tuple[str, ...] = FORMATS
                   ) -> Callable:
    """Add ``--format``, ``-o/--output`` and the unit/precision options to a command.

    ``--units``, ``--digits``, ``--full-precision`` and ``--units-row`` are read by
    :func:`emit` (through :func:`output_settings`), not passed to the command. Used bare
    (``@output_options``) or with the command's own ``formats``
    (``@output_options(formats=...)``).
    """
    if f is None:
        return lambda g: output_options(g, formats=formats)
    f = click.option("--units-row", is_flag=True, default=None, expose_value=False,
                     callback=_store("units_row"),
                     help="CSV: a second line with each column's unit.")(f)
    f = click.option("--full-precision", is_flag=True, default=None, expose_value=False,
                     callback=_store("full_precision"),
                     help="CSV: keep every digit of each number (default: rounded).")(f)
    f = click.option("--digits", type=click.IntRange(1, 17), default=None,
                     expose_value=False, callback=_store("digits"),
                     help="CSV: significant digits of each number  [default: 6].")(f)
    f = units_option(f)
    f = click.option("-o", "--output", "output", type=click.Path(dir_okay=False),
                     default=None, help="Write the result to this file instead of stdout.")(f)
    f = click.option("--format", "fmt", type=click.Choice(formats), default="table",
                     show_default=True, help="Output format.")(f)
    return f


# --------------------------------------------------------------------------- group
def _oserror_sentence(exc: OSError) -> str:
    where = f"{exc.filename}: " if exc.filename else ""
    what = exc.strerror or (str(exc).strip().splitlines() or [type(exc).__name__])[0]
    return f"{where}{what}; check the path and its permissions"


class _Group(click.Group):
    """Click group that is the one exception boundary of the command line.

    A torqlog error prints its sentence and exits with its code (1 data, 2 usage, 3
    strict); an operating-system error names the file (exit 1); anything else prints
    one sentence and "run with --debug for details" (exit 1). ``--debug`` re-raises.
    Click's own usage errors and exits pass through untouched.
    """

    def invoke(self, ctx: click.Context) -> Any:
        try:
            return super().invoke(ctx)
        except (click.exceptions.ClickException, click.exceptions.Exit,
                click.exceptions.Abort):
            raise
        except Exception as exc:  # noqa: BLE001 - the one boundary: no traceback leaks
            if (ctx.obj or {}).get("debug"):
                raise
            if isinstance(exc, TorqlogError):
                click.echo(f"Error: {exc}", err=True)
                ctx.exit(exc.exit_code)
            if isinstance(exc, OSError):
                click.echo(f"Error: {_oserror_sentence(exc)}", err=True)
                ctx.exit(1)
            text = " ".join(str(exc).split())
            text = text if len(text) <= 160 else text[:157] + "..."
            click.echo(f"Error: unexpected {type(exc).__name__}"
                       + (f" ({text})" if text else "")
                       + "; run with --debug for details", err=True)
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
    lean_arrow_memory()
    cli(prog_name="torqlog")


def lean_arrow_memory() -> None:
    """Ask pyarrow for its jemalloc memory pool on Linux, before pyarrow is loaded.

    The pip wheels for Linux carry jemalloc; it returns freed blocks to the system sooner
    than the default (mimalloc): ``torqlog cycles`` on a 10 M-row log peaked 25–40 MB
    lower, at the same speed (benchmarks/flat_memory_bench.py). A pool the user chose in
    ``ARROW_DEFAULT_MEMORY_POOL`` is kept; child processes (``trend --jobs``) inherit it.
    """
    if sys.platform.startswith("linux") and "pyarrow" not in sys.modules:
        os.environ.setdefault("ARROW_DEFAULT_MEMORY_POOL", "jemalloc")


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
    f = click.option("--start", type=DateTimeType(), default=None,
                     help="Absolute time of the first sample, e.g. 2026-03-02T06:00:00.")(f)
    f = click.option("--rate", type=QuantityType("frequency", "Hz"), default=None,
                     help="Sample rate [Hz] when the time column is a sample number or absent.")(f)
    return f


def read_kwargs(kw: dict[str, Any]) -> dict[str, Any]:
    """Reading options for :func:`torqlog.io.ingest.sniff_layout` from CLI keywords."""
    return {
        "roles": {r: kw.pop(f"{r}_col") for r in _ROLE_OPTS if kw.get(f"{r}_col")},
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
        click.option("--pulses-per-rev", type=positive_float(), default=360.0,
                     show_default=True,
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
    from torqlog.io.profile import load_profile

    return load_profile(path)


def make_cycle_options(kw: dict[str, Any], profile: Any = None) -> Any:
    """Build :class:`torqlog.signal.cycles.CycleOptions` from CLI keywords and a profile."""
    from torqlog.signal.cycles import options_from_profile

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


def run_cycles(log: str, kw: dict[str, Any], **how: Any) -> Any:
    """Run the cycle stage for a CLI command; pops the options it uses from ``kw``.

    ``how`` goes to :func:`torqlog.signal.cycles.analyse_cycles` (``keep_rows``, ``sink``, the
    quantile budget). On a terminal a progress bar (on stderr) follows the bytes read;
    elsewhere it is quiet.
    """
    from torqlog.signal.cycles import analyse_cycles

    profile = load_profile_opt(kw.pop("profile", None))
    read = read_kwargs(kw) | how
    opts = make_cycle_options(kw, profile)
    if not sys.stderr.isatty():
        return analyse_cycles(log, opts, **read), profile
    with click.progressbar(length=1000, label=f"reading {Path(log).name}",
                           file=sys.stderr) as bar:
        def step(fraction: float) -> None:
            bar.update(int(1000 * fraction) - bar.pos)

        return analyse_cycles(log, opts, progress=step, **read), profile


def parse_quantile(text: str) -> float | str:
    """The ``--quantile`` option: a number, or ``"max"``."""
    from torqlog.errors import UsageError

    try:
        return "max" if text.strip().lower() == "max" else float(text)
    except ValueError:
        raise UsageError(f"--quantile: {text!r} is not a number in (0, 1] or 'max'") \
            from None
