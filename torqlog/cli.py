"""Command-line interface: a thin click layer over the library.

No computation lives here: each command parses options (units through pint), calls
library functions, and prints. Errors from the library (:class:`TorqlogError`) become one
sentence on stderr and exit code 1 (bad data), 2 (bad usage) or 3 (strict check failed);
``--debug`` shows the traceback instead.
"""

from __future__ import annotations

import json
import math
from collections.abc import Callable
from pathlib import Path
from typing import Any

import click
import numpy as np
import pandas as pd

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
