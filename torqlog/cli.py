"""Command-line interface: a thin click layer over the library.

No computation lives here: each command parses options (units through pint), calls
library functions, and prints. Errors from the library (:class:`TorqlogError`) become one
sentence on stderr and exit code 1 (bad data), 2 (bad usage) or 3 (strict check failed);
``--debug`` shows the traceback instead.
"""

from __future__ import annotations

import json
import math
import textwrap
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
    from torqlog.flywheel import check_flywheel, design_flywheel, requirement_from_size
    from torqlog.materials import custom_material, get_material
    from torqlog.profile import load_profile

    fw: dict[str, Any] = {}
    mach: dict[str, Any] = {}
    if profile_path:
        prof = load_profile(profile_path)
        fw, mach = prof.flywheel, prof.machine
    ratio = mach.get("flywheel_speed_ratio")
    size_info: dict[str, Any] = {}
    if size_path:
        p = Path(size_path)
        if not p.is_file():
            raise UsageError(f"{p}: size result file does not exist")
        try:
            data = json.loads(p.read_text(encoding="utf-8"))
        except (json.JSONDecodeError, UnicodeDecodeError) as exc:
            raise DataError(f"{p}: not a JSON file from 'torqlog size --format json' "
                            f"({exc})") from None
        size_inertia, size_speed, size_info = requirement_from_size(data, str(p), ratio)
        inertia = inertia if inertia is not None else size_inertia
        speed = speed if speed is not None else size_speed
    if speed is None and "speed" in mach:
        speed = mach["speed"] * (ratio if ratio is not None else 1.0)
    if speed is None:
        raise UsageError("give --speed-rpm (or a --profile with [machine] speed_rpm, or "
                         "--from-size)")

    def pick(value: Any, key: str, default: Any = None) -> Any:
        return value if value is not None else fw.get(key, default)

    material = pick(material, "material")
    if material is None:
        raise UsageError(f"give --material; known: {', '.join(_material_names())}")
    mat = get_material(material)
    if any(v is not None for v in (density, strength, poisson, modulus)):
        mat = custom_material(mat, density=density, modulus=modulus, poisson=poisson,
                              strength=strength)
    shape = pick(shape, "shape", "annular-disc")
    outer_diameter = pick(outer_diameter, "outer_diameter")
    bore = pick(bore, "bore", 0.0)
    width = pick(width, "width")
    max_width = pick(max_width, "max_width")
    interference = pick(interference, "interference")
    overspeed = pick(overspeed, "overspeed", 1.2)
    common = dict(overspeed=overspeed, slowdown=slowdown, interference=interference,
                  material_factor=material_factor)
    if inertia is None:
        if outer_diameter is None or width is None:
            raise UsageError("give --inertia or --from-size to size a flywheel, or both "
                             "--outer-diameter and --width to check a given one")
        from torqlog.flywheel import DiscGeometry

        rid = rim_inner_diameter
        if shape == "rim" and rid is None and rim_depth is not None:
            rid = outer_diameter - 2.0 * rim_depth
        geometry = DiscGeometry(shape, outer_diameter, bore, width,
                                rim_inner_diameter=rid, web_width=web_width)
        result = check_flywheel(geometry, mat, speed, **common)
    else:
        result = design_flywheel(inertia, speed, mat, shape, outer_diameter, bore, width,
                                 max_width, max_outer_diameter=max_outer_diameter,
                                 rim_depth=rim_depth, rim_inner_diameter=rim_inner_diameter,
                                 web_width=web_width, **common)
    data = result.to_dict()
    data["options"].update(size_info)
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


def _material_names() -> list[str]:
    from torqlog.materials import MATERIALS

    return list(MATERIALS)
