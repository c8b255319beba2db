"""Commands that check a design: flywheel and shaft."""

from __future__ import annotations

import json
import textwrap
from pathlib import Path
from typing import Any

import click
from click.core import ParameterSource

from torqlog.cli.base import (
    _ROLE_OPTS,
    _UNIT_OPTS,
    FIGURE_FILE,
    QuantityType,
    _fmt_float,
    check_outputs,
    cli,
    cycle_stage_options,
    emit,
    output_options,
    output_settings,
    positive_float,
    run_cycles,
)


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


def _q(key: str, value: float | None, system: str, fmt: str = ".4g") -> str:
    """A value of an SI output key with its unit, in ``system``'s unit (the labels' map:
    N·m or lbf·ft, kg or lb, m or in, MPa or ksi, N or lbf)."""
    from torqlog.present.labels import label_of

    if value is None:
        return "-"
    lab = label_of(key, system)
    return f"{value * lab.scale:{fmt}} {lab.unit}".rstrip()


def _shaft_text(d: dict[str, Any], name: str, system: str = "si") -> str:
    """Readable shaft check of the SI JSON ``d``; masses, lengths, torques, stresses and
    forces in the units of ``system``."""
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
                added.append(f"+{_q('mass_kg', o['add_mass_kg'], system)} at "
                             f"{_q('at_m', o['add_mass_at_m'], system)}")
            if o["add_inertia_kgm2"] is not None:
                added.append(f"+{_q('inertia_kgm2', o['add_inertia_kgm2'], system)} at "
                             f"{o['add_inertia_at']}")
            label = f"after ({', '.join(added)})"
        lat = st["lateral"]
        lines.append(f"\n[{label}]")
        deflection = (f"{lat['static_deflection_max_mm']:.3f} mm" if system == "si" else
                      _q("static_deflection_max_mm", lat["static_deflection_max_mm"], system,
                         ".3g"))
        lines.append(f"  lateral: Rayleigh {lat['rayleigh_hz']:.1f} Hz, Dunkerley "
                     f"{lat['dunkerley_hz']:.1f} Hz, FE "
                     + ", ".join(f"{f:.1f}" for f in lat["fe_hz"]) + " Hz; "
                     f"max static deflection {deflection}")
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
        lines += _response_lines(st.get("forced_response"), system)
        lines += _strength_lines(st.get("strength"), system)
    state = "after" if d["after"] is not None else "current"
    lines.append(f"\nVerdict ({state}): {d['verdict']}"
                 + (f" (failed: {', '.join(d['failed'])})" if d["failed"] else "")
                 + (f" (marginal: {', '.join(d.get('marginal', []))})"
                    if d.get("marginal") else "")
                 + (f"\nGoverning check: {d['governing_check']}"
                    if d.get("governing_check") else ""))
    lines.append("\nCautions:")
    lines += [f"  - {c}" for c in d["cautions"]]
    return "\n".join(lines) + "\n"


def _response_lines(fr: dict[str, Any] | None, system: str = "si") -> list[str]:
    if not fr:
        return []
    o = fr["options"]

    def nm(x: float) -> str:
        return _q("torque_Nm", x, system, ".0f")

    lines = [f"  forced response (log torque at {o['excitation_at']}, damping ratio "
             f"{o['damping_ratio']:g}):"]
    for i, name in enumerate(fr["sections"]):
        lines.append(f"    {name}: mean (time average) {nm(fr['torque_mean_Nm'][i])}, "
                     "dynamic peak "
                     f"{nm(fr['torque_dynamic_peak_Nm'][i])}, peak "
                     f"{nm(fr['torque_peak_Nm'][i])}")
    if fr["governing_section"]:
        amp = fr["governing_amplification"]
        lines.append(f"    largest single order: order {fr['governing_order']:g} in "
                     f"{fr['governing_section']}, {nm(fr['governing_torque_dynamic_Nm'])}"
                     + (f" ({amp:.2f}× quasi-static)" if amp is not None else ""))
    return lines


def _positions_in_units(obj: Any, system: str) -> Any:
    """``obj`` (a shaft result dict or table) with the positions in section names
    ("shoulder at 0.100 m") written in ``system``'s length unit (in)."""
    from torqlog.shaft.sections import position_text

    def sections(d: Any) -> list[dict[str, Any]]:
        if isinstance(d, dict):
            own = d["sections"] if isinstance(d.get("sections"), list) else []
            return [*(r for r in own if isinstance(r, dict)),
                    *(r for v in d.values() for r in sections(v))]
        return []

    rows = (obj.to_dict("records") if hasattr(obj, "to_dict") and "x_m" in getattr(
        obj, "columns", ()) else sections(obj))
    swap = {f"at {position_text(float(r['x_m']))}": f"at {_q('x_m', r['x_m'], system, '.2f')}"
            for r in rows if r.get("x_m") is not None}

    def fix(v: Any) -> Any:
        if isinstance(v, str):
            for old, new in swap.items():
                v = v.replace(old, new)
            return v
        if isinstance(v, dict):
            return {k: fix(x) for k, x in v.items()}
        if isinstance(v, list):
            return [fix(x) for x in v]
        return v

    if hasattr(obj, "columns"):
        out = obj.copy()
        for c in out.columns:
            if out[c].dtype == object:
                out[c] = [fix(x) for x in out[c].tolist()]
        return out
    return fix(obj)


def _strength_lines(sd: dict[str, Any] | None, system: str = "si") -> list[str]:
    if not sd:
        return []
    t, o = sd["torque"], sd["options"]

    def nm(x: float, fmt: str = ".0f") -> str:
        return _q("torque_Nm", x, system, fmt)

    def diameter(mm: float) -> str:  # a shaft diameter: mm, or inches (not mils)
        return f"{mm:5.0f} mm" if system == "si" else _q("diameter_m", mm / 1e3, system, "5.2f")

    mid = t.get("torque_midrange_Nm", t.get("torque_mean_Nm"))
    lines = [f"  strength ({o['material']}, {o['method']}; shaft torque mid-range "
             f"(max+min)/2 {nm(mid).split()[0]}, alternating "
             f"{nm(t['torque_alt_Nm']).split()[0]}, peak {nm(t['torque_peak_Nm'])}):"]
    for r in sd["sections"]:
        lines.append(f"    {r['section']:<34} d {diameter(r['diameter_mm'])}  Kf {r['kf']:.2f} "
                     f"Kfs {r['kfs']:.2f}  M {nm(r['moment_alt_Nm'], '7.0f')}  n_fatigue "
                     f"{r['fatigue_safety_factor']:5.2f}  n_yield "
                     f"{r['yield_safety_factor']:5.2f}")
    for k in sd["keys"]:
        lines.append(f"    key of {k['part']}: n shear {k['shear_safety_factor']:.2f}, n bearing "
                     f"{k['bearing_safety_factor']:.2f} at {nm(k['torque_design_Nm'])}")
    for f in sd["fits"]:
        lines.append(f"    shrink fit of {f['part']}: p "
                     f"{_q('pressure_MPa', f['pressure_MPa'], system, '.1f')} carries "
                     f"{nm(f['torque_capacity_Nm'])} vs {nm(f['torque_design_Nm'])}")
    for b in sd["bearings"]:
        life = (f", L10 {b['l10_hours']:.3g} h" if b.get("l10_hours") is not None else "")
        lines.append(f"    bearing {b['bearing']} at {_q('x_m', b['x_m'], system)}: "
                     f"reaction {_q('reaction_N', b['reaction_N'], system, '.0f')}{life}")
    lines.append(f"    {sd['margin_text']}")
    return lines


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
@click.option("--at", "add_mass_at", type=QuantityType("length", "m", "nonnegative"),
              default=None,
              help="Position of the added mass along the shaft (default: where the "
                   "profile's mass named like --add-inertia-at sits).")
@click.option("--add-inertia", type=QuantityType("inertia", "kg*m**2"), default=None,
              help="Inertia added to the torsional chain.")
@click.option("--add-inertia-at", default=None,
              help="Chain element that takes the added inertia [default: flywheel].")
@click.option("--from-flywheel", "flywheel_file", type=click.Path(exists=True, dir_okay=False),
              default=None, help="Flywheel result JSON (mass_kg, inertia_kgm2) to add.")
@click.option("--required-ratio", type=positive_float(), default=None,
              help="Required first lateral frequency / highest forcing [default: 3].")
@click.option("--band", type=positive_float(1.0), default=None,
              help="Torsional band around each order, as a fraction [default: 0.10].")
@click.option("--min-share", type=positive_float(1.0, zero_ok=True), default=None,
              help="Smallest share of the dynamic torque that counts [default: 0.05].")
@click.option("--self-weight", is_flag=True, default=None,
              help="Include the shaft's own weight in Rayleigh, Dunkerley and deflection.")
@click.option("--margin", "separation_margin", type=float, default=None,
              help="Lateral separation margin from 1× and 2× for a shaft running above its "
                   "first critical, as a fraction [default: 0.15].")
@click.option("--damping-ratio", type=float, default=None,
              help="Modal damping ratio of the torsional forced response (with --log) "
                   "[default: 0.02].")
@click.option("--fatigue-method", type=click.Choice(["goodman", "gerber", "asme-elliptic"]),
              default=None, help="Fatigue criterion of the strength check [default: goodman].")
@click.option("--speed-range", nargs=2, type=QuantityType("speed", "rpm"), default=None,
              help="Speed range MIN MAX [rpm] of a Campbell diagram (with --plot, written "
                   "next to it as NAME_campbell.png).")
@click.option("--materials", "materials_path", type=click.Path(dir_okay=False),
              default=None, help="The plant's own materials table (TOML, one table per "
                                 "material), where [shaft] material names are looked up.")
@click.option("--strict", is_flag=True,
              help="Exit with code 3 when a check fails or is marginal (a safety factor "
                   "below the required one); the result is still written.")
@click.option("--plot", "plot_path", type=FIGURE_FILE, default=None,
              help="Write a PNG figure (with --log, also the order spectrum).")
@output_options
@click.pass_context
def shaft_cmd(ctx: click.Context, profile_path: str, log: str | None, add_mass: float | None,
              add_mass_at: float | None, add_inertia: float | None, add_inertia_at: str | None,
              flywheel_file: str | None, required_ratio: float | None, band: float | None,
              min_share: float | None, self_weight: bool | None,
              separation_margin: float | None, damping_ratio: float | None,
              fatigue_method: str | None, speed_range: tuple[float, float] | None,
              materials_path: str | None, strict: bool, plot_path: str | None, fmt: str,
              output: str | None, **kw: Any) -> None:
    """Shaft natural frequencies, lateral and torsional, against the running speed."""
    from torqlog.errors import CheckFailed, UsageError
    from torqlog.io.profile import load_profile
    from torqlog.io.units import si_factor
    from torqlog.rotor.materials import load_materials
    from torqlog.shaft.check import check_shaft
    from torqlog.signal.spectrum import mean_cycle_spectrum

    check_outputs({"-o": output, "--plot": plot_path},
                  {"--profile": profile_path, "--log": log, "--from-flywheel": flywheel_file,
                   "--materials": materials_path})
    materials = load_materials(materials_path) if materials_path else None
    if flywheel_file is not None:
        if add_mass is not None or add_inertia is not None:
            raise UsageError("give either --from-flywheel or --add-mass/--add-inertia, "
                             "not both")
        add_mass, add_inertia = _flywheel_json(flywheel_file)
    speed, revs = kw["speed_rpm"], kw["revs_per_cycle"]
    spectrum, log_info = None, None
    cycle_torque, torque_peak = None, None
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
        cycle_torque = cycles.mean_cycle["torque_mean"].to_numpy(dtype=float)
        table = cycles.table
        clean = table[table["flag"] == ""]
        torque_peak = float(max(clean["torque_peak_Nm"].abs().max(),
                                clean["torque_min_Nm"].abs().max()))
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
                         revs_per_cycle=revs, margin=separation_margin,
                         cycle_torque=cycle_torque, torque_peak_logged=torque_peak,
                         damping_ratio=damping_ratio, fatigue_method=fatigue_method,
                         materials=materials)
    data = result.to_dict()
    if log_info is not None:
        log_info["orders"] = spectrum.significant(data["options"]["min_share"]).to_dict()
        data["log"] = log_info
    if plot_path:
        from torqlog.present.plots import plot_shaft

        plot_shaft(result, plot_path, spectrum=spectrum, units=output_settings()["units"])
        click.echo(f"wrote {plot_path}", err=True)
        if speed_range is not None:
            from torqlog.present.campbell import plot_campbell

            camp = str(Path(plot_path).with_name(Path(plot_path).stem + "_campbell.png"))
            plot_campbell(result, camp, speed_range, spectrum=spectrum)
            click.echo(f"wrote {camp}", err=True)
    elif speed_range is not None:
        raise UsageError("--speed-range draws a Campbell diagram: give --plot FILE.png too")
    system = output_settings()["units"]
    table = result.to_pandas()
    if system != "si":
        data, table = _positions_in_units(data, system), _positions_in_units(table, system)
    emit(data, table, fmt, output,
         text=lambda _: _shaft_text(data, profile.machine.get("name", ""), system))
    if strict and result.failures:
        reasons = "; ".join(t.removesuffix(": fail") for t in result.failures.values())
        raise CheckFailed(f"shaft check failed ({', '.join(result.failures)}): {reasons}")
    if strict and result.marginals:
        reasons = "; ".join(result.marginals.values())
        raise CheckFailed(f"shaft check marginal ({', '.join(result.marginals)}): {reasons}")


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
@click.option("--bore", type=QuantityType("length", "m", "nonnegative"), default=None,
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
@click.option("--web-width", type=QuantityType("length", "m", "nonnegative"), default=None,
              help="Rim shape: web thickness [m] (left out, the web is neglected).")
@click.option("--overspeed", type=positive_float(), default=None,
              help="Overspeed factor the flywheel must survive [default: 1.2].")
@click.option("--slowdown", type=positive_float(1.0), default=None,
              help="Fractional speed drop over the working stroke, e.g. 0.1.")
@click.option("--interference", type=QuantityType("length", "mm", "nonnegative"),
              default=None,
              help="Diametral shrink-fit interference on a solid shaft [mm].")
@click.option("--density", type=QuantityType("density", "kg/m**3"), default=None,
              help="Override the material density [kg/m**3].")
@click.option("--yield", "strength", type=QuantityType("stress", "MPa"), default=None,
              help="Override the material strength [MPa] (tensile for grey iron).")
@click.option("--poisson", type=positive_float(0.5), default=None, help="Override Poisson's ratio.")
@click.option("--modulus", type=QuantityType("stress", "GPa"), default=None,
              help="Override Young's modulus [GPa].")
@click.option("--behaviour", type=click.Choice(["ductile", "brittle"]), default=None,
              help="Ductile (von Mises vs yield) or brittle (max principal vs tensile) "
                   "for a material given by its properties.")
@click.option("--material-name", default=None,
              help="Your name for a material given by its properties [default: custom].")
@click.option("--materials", "materials_path", type=click.Path(dir_okay=False),
              default=None, help="The plant's own materials table (TOML), one table "
                                 "per material.")
@click.option("--material-factor", type=positive_float(), default=None,
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
@click.option("--plot", "plot_path", type=FIGURE_FILE, default=None,
              help="Write the stress-profile plot to this PNG file.")
@output_options
def flywheel_cmd(inertia: float | None, speed: float | None, material: str | None,
                 shape: str | None, outer_diameter: float | None, bore: float | None,
                 width: float | None, max_width: float | None,
                 max_outer_diameter: float | None, rim_inner_diameter: float | None,
                 rim_depth: float | None, web_width: float | None, overspeed: float | None,
                 slowdown: float | None, interference: float | None, density: float | None,
                 strength: float | None, poisson: float | None, modulus: float | None,
                 behaviour: str | None, material_name: str | None,
                 materials_path: str | None,
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
    from torqlog.io.profile import load_profile
    from torqlog.rotor.flywheel import flywheel_from_profile
    from torqlog.rotor.materials import load_materials

    check_outputs({"-o": output, "--plot": plot_path},
                  {"--profile": profile_path, "--from-size": size_path})
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
        strength=strength, poisson=poisson, modulus=modulus, material_factor=material_factor,
        brittle=None if behaviour is None else behaviour == "brittle",
        material_name=material_name, materials=load_materials(materials_path)
        if materials_path else None)
    data = result.to_dict()
    if profile_path:
        data["options"]["profile"] = profile_path
    if plot_path:
        from torqlog.present.plots import plot_flywheel_stresses

        plot_flywheel_stresses(result, plot_path, units=output_settings()["units"])
        click.echo(f"wrote {plot_path}", err=True)
    emit(data, None, fmt, output, text=_flywheel_text if fmt == "table" else None)
    if data["verdict"] != "pass":
        if fmt != "table" or output:
            click.echo(f"flywheel check: FAIL ({', '.join(data['failed'])})", err=True)
        if strict:
            raise CheckFailed(f"flywheel check failed: {', '.join(data['failed'])}")
