"""The ``life`` command: drivetrain life from the log's torque, before and after."""

from __future__ import annotations

from typing import Any

import click

from torqlog.cli.base import (
    QuantityType,
    cli,
    cycle_options,
    emit,
    load_profile_opt,
    output_options,
    output_settings,
    read_kwargs,
    run_cycles,
)


def _life_text(d: dict[str, Any], system: str = "si") -> str:
    """Readable life result of the SI JSON ``d``; torques and inertia in ``system``'s units."""
    from torqlog.cli.design import _q

    lines = [f"Drivetrain life: {d['source']}  ({d['samples']} samples"
             + (f", {d['duration_s']:.1f} s" if d["duration_s"] else "") + ")",
             f"  rainflow (ASTM E1049): {d['cycles_counted']:.1f} cycles, largest range "
             f"{_q('torque_range_max_Nm', d['torque_range_max_Nm'], system, '.0f')}",
             f"  damage-equivalent torque range "
             f"{_q('damage_equivalent_torque_Nm', d['damage_equivalent_torque_Nm'], system, '.0f')}"
             f" at {d['equivalent_cycles']:.3g} cycles, S–N slope m = {d['sn_slope']:g}"]
    if d["miner_damage"] is not None:
        lines.append(f"  Miner damage of the log {d['miner_damage']:.3g}"
                     + (f"; life {d['life_hours']:.3g} h at this duty" if d["life_hours"]
                        else ""))
    if "life_ratio_after_before" in d:
        side = ("load-side" if d["drive_model_used"]["torque_role"] == "drive"
                else "drive-side")
        after, before = (_q("torque_Nm", d[f"{k}_damage_equivalent_torque_Nm"], system, ".0f")
                         for k in ("after", "before"))
        lines.append(f"  after adding {_q('added_inertia_kgm2', d['added_inertia_kgm2'], system)} "
                     f"({d['added_inertia_source']}): {side} damage-equivalent range {after} "
                     f"(before {before} per cycle); life ratio after/before "
                     f"{d['life_ratio_after_before']:.2f}")
        lines.append(f"  model: {d['drive_model']} ({d['drive_model_note']})")
    lines += [f"  note: {n}" for n in d.get("notes", [])]
    if system != "si" and d.get("notes"):
        lines.append("  (the notes in SI units)")
    lines += ["Cautions:"] + [f"  - {c}" for c in d["cautions"]]
    return "\n".join(lines) + "\n"


def _after_block(cycles: Any, profile: Any, target: float | None,
                 add_inertia: float | None, sn_slope: float) -> dict[str, Any]:
    """Size the log (the model it leads with, its recommendation), then life after/before."""
    import numpy as np

    from torqlog.errors import UsageError
    from torqlog.shaft.life import life_after, life_drive_model
    from torqlog.sizing.inertia import size_log, size_log_dict

    if target is None:  # the model choice does not depend on the target: size at the
        cs = cycles.table["cs"].to_numpy(float) if "cs" in cycles.table else np.array([])
        cs = cs[np.isfinite(cs)]  # measured Cs, the cheapest to solve for
        target = float(np.median(cs)) if cs.size else 0.01
        sized_for = None
    else:
        sized_for = target
    size = size_log_dict(size_log(cycles, profile, target_cs=target), cycles)
    choice = life_drive_model(size, profile)
    if add_inertia is None:
        if size["added_inertia_kgm2"] is None:
            raise UsageError("'torqlog size' gives no added inertia for this log (no existing "
                             "inertia given or identified): give --add-inertia")
        add_inertia = float(size["added_inertia_kgm2"])
        source = (f"the added inertia 'torqlog size' recommends for the profile's target Cs "
                  f"{sized_for:g}, {size['model']} model")
    else:
        source = "given with --add-inertia"
    mc = cycles.mean_cycle
    out = life_after(mc["angle"].to_numpy(float), mc["torque_mean"].to_numpy(float),
                     int(cycles.options["revs_per_cycle"]), choice, add_inertia, sn_slope)
    out["added_inertia_source"] = source
    return out


@cli.command("life")
@click.argument("log", type=click.Path(dir_okay=True))
@cycle_options
@click.option("--sn-slope", type=float, default=None,
              help="Basquin S–N slope m [default: 5, EN 1993-1-9 for shear].")
@click.option("--equivalent-cycles", type=float, default=None,
              help="Cycles N_eq of the damage-equivalent torque range [default: 1e7].")
@click.option("--reference-range", type=QuantityType("torque", "N*m"), default=None,
              help="Torque range the shaft survives --reference-cycles times (a point of its "
                   "S–N curve), for Miner's damage and life in hours.")
@click.option("--reference-cycles", type=float, default=1e7, show_default=True,
              help="Cycles at --reference-range.")
@click.option("--add-inertia", type=QuantityType("inertia", "kg*m**2"), default=None,
              help="Flywheel inertia added at the logged shaft: life ratio after/before of "
                   "the unlogged side's torque, simulated with the model 'size' leads with "
                   "[default: the added inertia 'size' recommends, when the profile has "
                   "target_cs].")
@output_options
def life_cmd(log: str, sn_slope: float | None, equivalent_cycles: float | None,
             reference_range: float | None, reference_cycles: float,
             add_inertia: float | None, fmt: str, output: str | None, **kw: Any) -> None:
    """Rainflow count of the torque, Miner damage and damage-equivalent torque; with a
    profile and --add-inertia, the life ratio after/before."""
    import pandas as pd

    from torqlog.errors import DataError, UsageError
    from torqlog.io.ingest import LogReader
    from torqlog.shaft.lateral import CAUTIONS
    from torqlog.shaft.life import (
        DEFAULT_EQUIVALENT_CYCLES,
        DEFAULT_SN_SLOPE,
        check_life_options,
        count_torque,
    )

    m = DEFAULT_SN_SLOPE if sn_slope is None else sn_slope
    n_eq = DEFAULT_EQUIVALENT_CYCLES if equivalent_cycles is None else equivalent_cycles
    check_life_options(m, n_eq)
    read = read_kwargs(dict(kw))
    reader = LogReader(log, **read)
    last = {"t": None, "t0": None}

    def torque_chunks():
        for chunk in reader:
            if "torque" not in chunk.channels:
                raise DataError(f"{log}: no torque channel; name it with --torque COL")
            if len(chunk):
                if last["t0"] is None:
                    last["t0"] = float(chunk.time[0])
                last["t"] = float(chunk.time[-1])
            yield chunk.channels["torque"]

    res = count_torque(torque_chunks(), m, n_eq, source=str(log),
                       reference_range=reference_range, reference_cycles=reference_cycles)
    duration = (last["t"] - last["t0"]) if last["t"] is not None else None
    d = res.to_dict()
    d["duration_s"] = duration
    if res.miner is not None and duration and res.miner > 0:
        d["life_hours"] = duration / res.miner / 3600.0
    notes: list[str] = []
    profile = load_profile_opt(kw.get("profile"))
    target = profile.machine.get("target_cs") if profile is not None else None
    if profile is not None and add_inertia is None and target is None:
        notes.append("no life ratio after/before: give --add-inertia, or [machine] target_cs "
                     "in the profile for the added inertia 'torqlog size' recommends")
    elif add_inertia is not None or target is not None:
        cycles, profile = run_cycles(log, dict(kw))
        if add_inertia is not None:
            d.update(_after_block(cycles, profile, target, add_inertia, m))
        elif target is not None:  # not asked for: a refusal is a note, not an error
            try:
                d.update(_after_block(cycles, profile, target, None, m))
            except (DataError, UsageError) as exc:
                notes.append(str(exc))
    d["notes"] = notes
    d["cautions"] = [*d["cautions"], CAUTIONS[0], CAUTIONS[2],
                     "The S–N slope and reference point are assumptions: use the part's "
                     "own fatigue data where known.",
                     "The torque is counted as logged: spikes are not removed and the "
                     "signal is joined across gaps, so check torque_range_max_Nm against the "
                     "machine's real peak torque."]
    h = d["histogram"]
    edges = h["range_edges_Nm"]
    tab = pd.DataFrame({"range_from_Nm": edges[:-1], "range_to_Nm": edges[1:],
                        "cycles_counted": h["range_counts"]})
    tab = tab[tab["cycles_counted"] > 0]
    emit(d, tab, fmt, output, text=lambda _: _life_text(d, output_settings()["units"]))
