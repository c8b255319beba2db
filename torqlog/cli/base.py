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
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING, Any

import click
import numpy as np

from torqlog import __version__
from torqlog.errors import TorqlogError
from torqlog.units import parse_quantity

if TYPE_CHECKING:
    import pandas as pd

FORMATS = ("table", "csv", "json")
#: Formats of commands that stream a row per cycle as the cycles complete.
STREAM_FORMATS = ("table", "csv", "json", "jsonl", "parquet")


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


def emit(data: dict[str, Any], table: pd.DataFrame | None, fmt: str, out: str | None,
         text: str | None = None) -> None:
    """Write a result in the chosen format to ``out`` (a path) or stdout.

    ``table`` is printed for ``table`` and ``csv``; ``text`` (if given) is printed
    before the table in ``table`` format; ``data`` is the JSON contract.
    """
    if fmt == "json":
        body = to_json(data) + "\n"
    elif fmt == "csv":
        import pandas as pd

        body = (table if table is not None else pd.DataFrame([_flat(data)])).to_csv(index=False)
    else:
        import pandas as pd

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


def run_cycles(log: str, kw: dict[str, Any], **how: Any) -> Any:
    """Run the cycle stage for a CLI command; pops the options it uses from ``kw``.

    ``how`` goes to :func:`torqlog.cycles.analyse_cycles` (``keep_rows``, ``sink``, the
    quantile budget). On a terminal a progress bar (on stderr) follows the bytes read;
    elsewhere it is quiet.
    """
    from torqlog.cycles import analyse_cycles

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
