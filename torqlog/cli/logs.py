"""Commands that read logs: inspect, cycles, size, trend."""

from __future__ import annotations

import json
import math
import sys
from pathlib import Path
from typing import Any

import click

from torqlog.cli.base import (
    FIGURE_FILE,
    FORMATS,
    TABULAR,
    QuantityType,
    check_outputs,
    cli,
    cycle_options,
    emit,
    load_profile_opt,
    log_options,
    make_cycle_options,
    output_options,
    output_settings,
    parse_quantile,
    positive_float,
    read_kwargs,
    run_cycles,
    write_text,
)
from torqlog.cli.watch import shape_options


def _finite(x: float | None) -> bool:
    return x is not None and math.isfinite(x)


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
    import pandas as pd

    from torqlog.signal.survey import survey_log

    check_outputs({"-o": output}, {"log": log})

    s = survey_log(log, nominal_speed=speed_rpm, **read_kwargs(kw))
    d = s.to_dict()
    cols = pd.DataFrame(d["columns"])  # csv keeps the JSON key names
    lines = [
        f"file        {d['source']}",
        f"format      {d['format']}"
        + (f", {d['delimiter']}-delimited, decimal '{d['decimal']}'" if d["delimiter"] else ""),
        f"rows        {d['rows']}",
        f"duration    {d['duration_s']:.6g} s",
        (f"sample rate {d['sample_rate_hz']:.6g} Hz (time-step jitter "
         f"{100 * d['rate_jitter']:.3g} %)" if _finite(d["sample_rate_hz"]) else
         f"sample rate not known: {d['rows']} row(s) give no time step; a rate needs at "
         "least two samples (or give --rate HZ)"),
        f"start       {d['start_time'] or 'not stated'}",
        f"time        {d['time_kind']}",
        f"gaps        {d['gaps']['count']}"
        + (f" (longest {d['gaps']['longest_s']:.4g} s; first after t = "
           f"{d['gaps']['list'][0]['after_s']:.6g} s, row {d['gaps']['list'][0]['row']})"
           if d["gaps"]["count"] else ""),
        "NaN rows    " + (", ".join(f"{k} {v}" for k, v in d["nan_rows"].items()) or "none"),
        *([f"±inf rows   {', '.join(f'{k} {v}' for k, v in d['inf_rows'].items())}"]
          if d["inf_rows"] else []),
        "clipped     " + (", ".join(f"{k} {v} samples" for k, v in d["clipped_samples"].items())
                          or "none found"),
        *([f"spikes      {', '.join(f'{k} {v} samples' for k, v in d['spike_samples'].items())}"]
          if d["spike_samples"] else []),
        f"cycles from {d['cycle_source'] or '-'}: {d['cycle_source_note']}",
    ]
    if d["preamble"]:
        lines.append("preamble    " + "; ".join(f"{k}: {v}" for k, v in d["preamble"].items()))
    emit(d, cols if fmt in TABULAR else cols.rename(columns={"si_factor": "SI factor"}), fmt,
         output, text="\n".join(lines) + "\n")


# --------------------------------------------------------------------------- cycles
def _cycles_text(res: Any, system: str = "si") -> str:
    """Readable summary of a cycles result, in the unit system ``system`` (the units of
    :func:`torqlog.present.labels.label_of`: kJ and kN·m, or ft·lbf and lbf·ft)."""
    from torqlog.present.labels import label_of, sig

    s = res.summary
    de, cs = s["energy_swing_J"], s["cs"]
    e_lab, t_lab = label_of("energy_swing_J", system), label_of("torque_peak_Nm_p99", system)

    def g(x: float | None, scale: float = 1.0, unit: str = "") -> str:
        return "-" if x is None else f"{sig(x, 4, scale)}{unit}"

    def e(x: float | None) -> str:
        return g(x, e_lab.scale, " " + e_lab.unit)

    q = s.get("quantiles") or {}
    return "\n".join([
        f"{res.source}: {s['cycles']} clean cycles of {s['cycles_total']} "
        f"(cycle source: {res.options['cycle_source']}, {res.options['revs_per_cycle']} "
        f"rev/cycle), {g(s['cycle_rate_per_min'])} cycles/min at {g(s['speed_mean_rpm'])} rpm",
        f"energy swing  median {e(de['median'])}, p95 {e(de['p95'])}, max {e(de['max'])}",
        f"Cs            median {g(cs['median'])}, p95 {g(cs['p95'])}, max {g(cs['max'])}"
        f"  (speed low-passed at {res.options['speed_cutoff_orders']:g} cycle orders)",
        f"peak torque   p99 {g(s['torque_peak_Nm_p99'], t_lab.scale, ' ' + t_lab.unit)}",
        *([f"note: quantiles from a sketch (more than {q['exact_budget_cycles']} clean "
           f"cycles), within {100 * q['relative_error_bound']:g} % of the exact values"
           + ("" if q.get("bound_holds") else " except the smallest values")]
          if q.get("method") == "sketch" else []),
        *(f"note: {n}" for n in res.notes),
        *([f"flagged cycles: {', '.join(f'{k} {v}' for k, v in s['flags'].items())} "
           "(kept in the table, left out of the figures above)"] if s["flags"] else []),
        *([f"not running: {len(s['not_running'])} stretch(es): " + "; ".join(
            f"{d['what']} {d['start_s']:.2f}–{d['end_s']:.2f} s"
            for d in s["not_running"][:5]) + ("; ..." if len(s["not_running"]) > 5 else "")]
          if s.get("not_running") else []),
        *([f"cycle shape   {res.anomaly.sentence} (abnormal cycles stay in the figures "
           "above: they are real running)"] if res.anomaly is not None else []),
        "",
    ])


@cli.command()
@click.argument("log", type=click.Path(dir_okay=True))
@cycle_options
@click.option("--plot", type=FIGURE_FILE, default=None,
              help="Write a PNG: torque, E(θ) and speed against crank angle.")
@shape_options
@click.option("--summary-only", is_flag=True,
              help="Write the summary alone, without a row per cycle.")
@click.option("--quantile-budget", type=click.IntRange(min=1), default=None,
              help="Clean cycles held for exact quantiles; past it a sketch within "
                   "--sketch-error answers (the summary says which).  [default: 500000]")
@click.option("--sketch-error", type=click.FloatRange(0, 1, min_open=True, max_open=True),
              default=None, help="Relative error bound of the quantile sketch.  "
                                 "[default: 1e-4]")
@output_options(formats=(*FORMATS, "jsonl"))
def cycles(log: str, fmt: str, output: str | None, plot: str | None, summary_only: bool,
           quantile_budget: int | None, sketch_error: float | None, **kw: Any) -> None:
    """Split a log into machine cycles: energy swing, Cs and torque per cycle, and cycles
    whose shape is abnormal (with where in the cycle).

    The rows are written as the cycles complete (table, csv, json, jsonl, parquet), so
    memory does not grow with the log; the cycles before the shape model has its
    reference cycles wait for their scores. ``jsonl``: a first line with source and
    options, one object per cycle, a last line with summary, notes and the shape check.
    xlsx and ``--units us`` build the table in memory first.
    """
    from torqlog.cli.base import _flat
    from torqlog.cli.cycle_output import make_writer
    from torqlog.cli.watch import shape_kwargs
    from torqlog.io.outputs import check_format_suffix
    from torqlog.present.exporting import DEFAULT_DIGITS

    check_outputs({"-o": output, "--plot": plot}, {"log": log, "--profile": kw.get("profile")})
    check_format_suffix(fmt, output)  # before the log is read
    save = kw.pop("save_shape_model")
    shape_plot = kw.pop("shape_plot")
    extra = {k: v for k, v in (("quantile_budget", quantile_budget),
                               ("sketch_error", sketch_error)) if v is not None}
    extra.update(shape_kwargs(log, kw))
    how = output_settings()
    stream = not summary_only and fmt != "xlsx" and how["units"] == "si"
    if stream:
        writer = make_writer(
            fmt, output, _cycles_text, shape=extra.get("anomaly") is not False,
            digits=None if how["full_precision"] else (how["digits"] or DEFAULT_DIGITS),
            units_row=bool(how["units_row"]))
        try:
            res, _ = run_cycles(log, kw, keep_rows=False, sink=writer, **extra)
        except BaseException:
            writer.abort()
            raise
        if output:
            click.echo(f"wrote {output}", err=True)
    else:
        res, _ = run_cycles(log, kw, keep_rows=not summary_only, **extra)
    if save and res.shape_model is not None:
        res.shape_model.save(save)
        click.echo(f"wrote {save}", err=True)
    if shape_plot and res.anomaly is not None:
        from torqlog.present.plots import plot_anomaly

        plot_anomaly(res.anomaly, shape_plot, units=output_settings()["units"])
        click.echo(f"wrote {shape_plot}", err=True)
    if plot:
        res.plot(plot, units=output_settings()["units"])
        click.echo(f"wrote {plot}", err=True)
    if stream:
        return
    data = res.to_dict(rows=not summary_only)
    if fmt == "jsonl":  # as streamed: head line, a line per cycle (none), last line
        from torqlog.cli.base import _jsonable
        from torqlog.io.units import convert_keys

        if how["units"] != "si":
            data = convert_keys(data, how["units"])
        rows = data.pop("cycles", [])
        head = {k: data.pop(k) for k in ("source", "options")}
        body = "".join(json.dumps(_jsonable(x), ensure_ascii=False) + "\n"
                       for x in (head, *rows, data))
        if output:
            write_text(output, body)
            click.echo(f"wrote {output}", err=True)
        else:
            click.echo(body, nl=False)
        return
    table = None  # the JSON needs no pandas table (and so no pandas)
    if summary_only and fmt in TABULAR:
        import pandas as pd  # only here: the streamed outputs need no pandas

        table = pd.DataFrame([_flat(res.summary)])
    elif fmt in TABULAR:
        table = res.table
    elif fmt == "table" and not summary_only:
        table = res.table[["cycle", "t_start_s", "speed_mean_rpm", "torque_mean_Nm",
                           "torque_peak_Nm", "work_J", "energy_swing_J", "cs",
                           "cs_constant_drive", "flag", "anomaly", "anomaly_score"]]
    system = how["units"]
    emit(data, table, fmt, output, text=lambda _data: _cycles_text(res, system))


# --- size
def _size_text(d: dict[str, Any], source: str, system: str = "si") -> str:
    """Readable summary of a sizing result (SI JSON ``d``): the leading answer first, then
    why; inertia, torque and energy in the units of ``system`` (:func:`label_of`)."""
    from torqlog.present.labels import label_of, sig

    units = {k: (label_of(k, system).scale, label_of(k, system).unit)
             for k in ("inertia_kgm2", "motor_torque_rms_Nm", "design_energy_swing_J")}
    ki, ui = units["inertia_kgm2"]
    kt, ut = units["motor_torque_rms_Nm"]
    ke, ue = units["design_energy_swing_J"]

    def kg(x: float | None) -> str:
        return "-" if x is None else f"{sig(x, 4, ki)} {ui}"

    def pct(x: float | None) -> str:
        return "-" if x is None else f"{100 * x:.0f} %"

    lo, hi = d["ci95_kgm2"]
    q = d["quantile"]
    bound = d["model"] == "constant drive"
    lines = [
        f"{source}: {d['cycles_used']} clean cycles, mean speed {d['speed_mean_rpm']:.4g} rpm, "
        f"target Cs {d['target_cs']:.4g}",
        f"answer from           {d['model']}" + ("  (upper bound)" if bound else ""),
        f"added inertia         {kg(d['added_inertia_kgm2'])}"
        + (f"  (95 % interval {kg(d['added_ci95_kgm2'][0])} to "
           f"{kg(d['added_ci95_kgm2'][1])})" if d.get("added_ci95_kgm2") else ""),
        f"required inertia      {kg(d['required_inertia_kgm2'])}  "
        f"(95 % interval {kg(lo)} to {kg(hi)})",
        f"existing inertia      {kg(d['existing_inertia_kgm2'])}",
    ]
    if d["flywheel_speed_ratio"] != 1.0:
        lines.append(f"  at the flywheel shaft (×{d['flywheel_speed_ratio']:g} speed): "
                     f"{kg(d['added_inertia_at_flywheel_kgm2'])}")
    lines.append(f"why                   {d['model_reason']}")
    if d.get("cs_model_existing") is not None:
        lines.append(f"check at existing     measured Cs {d['cs_measured']:.4g}, "
                     f"{d['cs_model_of']} model {d['cs_model_existing']:.4g} "
                     f"({d['cs_model_error_rel']:+.1%}, tolerance "
                     f"±{d['cs_model_tolerance_rel']:.0%})")
    if d.get("drive_slope_Nms_per_rad") is not None:
        se = d.get("drive_slope_se_Nms_per_rad")
        ks, us = label_of("drive_slope_Nms_per_rad", system).scale, \
            label_of("drive_slope_Nms_per_rad", system).unit
        lines.append(f"drive slope           {d['drive_slope_Nms_per_rad'] * ks:.4g}"
                     + (f" ± {se * ks:.2g}" if se else "") + f" {us} at the logged shaft"
                     + (f" (nameplate {d['drive_slope_nameplate_Nms_per_rad'] * ks:.4g})"
                        if d.get("drive_slope_nameplate_Nms_per_rad") else ""))
    parts = d.get("ci95_parts_kgm2") or {}
    if parts:
        lines.append("interval parts        " + ", ".join(
            f"{k.removesuffix('_kgm2').replace('_', ' ')} {v[0] * ki:+.3g}/{v[1] * ki:+.3g}"
            for k, v in parts.items()) + f" {ui}")
    lines.append(f"constant-drive bound  {kg(d['bound_constant_drive_required_inertia_kgm2'])} "
                 f"required, {kg(d['bound_constant_drive_added_inertia_kgm2'])} added "
                 f"(design swing {d['design_energy_swing_J'] * ke:.4g} {ue}, "
                 f"{'max' if q == 'max' else f'p{100 * float(q):g}'} of the cycles; "
                 f"assumes a constant drive torque: an upper bound)")
    now, after = d.get("machine_now"), d.get("machine_after")
    if now and after:
        lines += ["", f"{'':22}{'now':>12}{'after':>12}   ({now['model']} model, median cycle)",
                  f"{'Cs':22}{now['cs']:>12.4g}{after['cs']:>12.4g}"
                  + (f"   measured now {now['cs_measured']:.4g}"
                     if now.get("cs_measured") is not None else ""),
                  f"{'speed min rpm':22}{now['speed_min_rpm']:>12.5g}"
                  f"{after['speed_min_rpm']:>12.5g}",
                  f"{'speed max rpm':22}{now['speed_max_rpm']:>12.5g}"
                  f"{after['speed_max_rpm']:>12.5g}"]
        for key, label in (("peak", "drive torque peak"), ("mean", "drive torque mean"),
                           ("rms", "drive torque RMS")):
            k = f"drive_torque_{key}_Nm"
            if k in now:
                share = f"drive_torque_{key}_share_of_rated"
                extra = (f"   {pct(now[share])} → {pct(after[share])} of rated"
                         if share in now else "")
                lines.append(f"{label + ' ' + ut:22}{now[k] * kt:>12.4g}"
                             f"{after[k] * kt:>12.4g}{extra}")
        if "copper_loss_change_kWh_per_year" in after:
            lines.append(f"copper loss change    {after['copper_loss_change_rel']:+.0%}, "
                         f"{after['copper_loss_change_kWh_per_year']:+,.0f} kWh/year at "
                         f"{after['hours_per_year']:g} h/year (loss ∝ torque², see JSON)")
    choice = d.get("size_on")
    if choice:
        lines += ["", f"sized on {choice['sized_on']}: {choice['why']} "
                      f"(--size-on {choice['size_on']})"]
        lines += [f"  {r['log']}: design swing {r['design_energy_swing_J'] * ke:.4g} {ue} at "
                  f"{r['speed_mean_rpm']:.4g} rpm" for r in choice["logs"]]
    rf = d.get("retrofit")
    if rf:
        lines += ["", f"retrofit check against {rf['after_log']}",
                  f"  inertia added         {kg(rf['added_identified_kgm2'])} identified "
                  f"(planned {kg(rf['added_planned_kgm2'])})",
                  f"  Cs after              measured {rf['cs_after_measured']:.4g}, predicted "
                  f"{rf['cs_after_predicted']:.4g} ({rf['cs_after_error_rel']:+.1%}); target "
                  f"{rf['target_cs']:g}: {'met' if rf['meets_target'] else 'NOT met'}"]
        if rf.get("drive_torque_rms_predicted_Nm") is not None and \
                rf.get("drive_torque_rms_after_log_Nm") is not None:
            lines.append(f"  drive torque RMS      predicted "
                         f"{rf['drive_torque_rms_predicted_Nm'] * kt:.4g} {ut}, after-log "
                         f"{rf['drive_torque_rms_after_log_Nm'] * kt:.4g} {ut}")
        lines += [f"  {m}" for m in rf["messages"]]
    lines += [""] + [f"note: {m}" for m in d["messages"]]
    if system != "si" and d["messages"]:
        lines.append("(the notes in SI units)")
    lines += ["", "Cautions:"] + [f"  - {c}" for c in d["cautions"]] + [""]
    return "\n".join(lines)


@cli.command("size")
@click.argument("logs", nargs=-1, required=True, type=click.Path(dir_okay=True))
@click.option("--size-on", type=click.Choice(["worst", "latest", "first"]), default="worst",
              show_default=True,
              help="With several logs of one machine: size on the log that needs the most "
                   "inertia, the one that starts last, or the first given.")
@click.option("--after", "after_log", type=click.Path(dir_okay=True), default=None,
              help="A log taken after adding inertia: set the model's prediction beside what "
                   "it measures.")
@click.option("--target-cs", type=float, default=None,
              help="Target coefficient of speed fluctuation (0 < Cs < 1).")
@click.option("--machine-class", default=None, metavar="NAME",
              help="Take the target Cs from the table of machine types, e.g. "
                   "crushing-machinery, shearing-machinery, pumping-machinery, machine-tools "
                   "(a wrong name lists them all).")
@click.option("--quantile", default="0.95", show_default=True,
              help="Design quantile of the per-cycle energy swing, or 'max'.")
@click.option("--motor-power", type=QuantityType("power", "kW"), default=None,
              help="Motor rated power [kW].")
@click.option("--sync-rpm", type=QuantityType("speed", "rpm"), default=None,
              help="Motor synchronous speed [rpm].")
@click.option("--rated-rpm", type=QuantityType("speed", "rpm"), default=None,
              help="Motor rated (full-load) speed [rpm].")
@click.option("--motor-ratio", type=positive_float(), default=None,
              help="Motor speed / logged shaft speed (belt or gear ratio).")
@click.option("--flywheel-speed-ratio", type=positive_float(), default=None,
              help="Flywheel shaft speed / logged shaft speed.  [default: 1, or profile]")
@click.option("--seed", type=int, default=0, show_default=True, help="Bootstrap seed.")
@click.option("--tolerance", type=click.FloatRange(0, 1, min_open=True), default=0.10,
              show_default=True,
              help="Relative Cs error within which a drive model explains the log.")
@click.option("--hours-per-year", type=click.FloatRange(min=0), default=4000.0,
              show_default=True, help="Running hours per year, for the copper-loss change.")
@cycle_options
@click.option("--plot", "plot_path", type=FIGURE_FILE, default=None,
              help="Write a PNG: Cs and motor peak torque against added inertia.")
@output_options
def size_cmd(logs: tuple[str, ...], size_on: str, after_log: str | None,
             target_cs: float | None, machine_class: str | None, quantile: str,
             motor_power: float | None, sync_rpm: float | None, rated_rpm: float | None,
             motor_ratio: float | None, flywheel_speed_ratio: float | None, seed: int,
             tolerance: float, hours_per_year: float,
             plot_path: str | None, fmt: str, output: str | None, **kw: Any) -> None:
    """Flywheel inertia to reach a target Cs, from a drive model checked against the log.

    With several LOGS of one machine, --size-on picks the one to size on; --after checks
    the model's prediction against a log taken after the retrofit.
    """
    from torqlog.errors import UsageError
    from torqlog.sizing.inertia import size_log, size_log_dict
    from torqlog.sizing.logchoice import choose_log

    check_outputs({"-o": output, "--plot": plot_path},
                  {"log": list(logs), "--after": after_log, "--profile": kw.get("profile")})
    fresh = dict(kw)
    results = []
    for path in logs:
        res, profile = run_cycles(path, kw if not results else dict(fresh))
        results.append(res)
    q = parse_quantile(quantile)
    idx, choice = choose_log(results, size_on, quantile=q)
    res = results[idx]
    motor = {"power": motor_power, "sync": sync_rpm, "rated": rated_rpm,
             "speed_ratio": motor_ratio}
    result = size_log(res, profile, target_cs=target_cs, machine_class=machine_class,
                      quantile=q, motor=motor, flywheel_speed_ratio=flywheel_speed_ratio,
                      seed=seed, tolerance=tolerance, hours_per_year=hours_per_year)
    data = size_log_dict(result, res)
    data["size_on"] = choice if len(results) > 1 else None
    data["retrofit"] = None
    if after_log:
        from torqlog.sizing.retrofit import retrofit_from_size

        after, _ = run_cycles(after_log, dict(fresh))
        data["retrofit"] = retrofit_from_size(result, after, tolerance=tolerance).to_dict()
    target_cs = result.target_cs
    if plot_path:
        from torqlog.present.plots import plot_drive_curve

        if result.curve is None:
            raise UsageError("--plot needs a drive model: a log with torque and speed, or a "
                             "motor (--motor-power, --sync-rpm, --rated-rpm, --motor-ratio, "
                             "or [motor] in the profile)")
        plot_drive_curve(result.to_pandas(), plot_path, target_cs=target_cs,
                         recommended=data["added_inertia_kgm2"],
                         units=output_settings()["units"])
        click.echo(f"wrote {plot_path}", err=True)
    emit(data, result.to_pandas() if fmt in TABULAR and result.curve is not None else None,
         fmt, output, text=lambda _: _size_text(data, res.source, output_settings()["units"]))




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
    if dr.get("p_chart") and "anomaly_rate" in dr["figures"]:
        lines.append("anomaly rate: p chart, " + dr["p_chart"].partition(": ")[2])
    on = d["drift_onset"]
    if on:
        who = f"{on['machine']}: " if on["machine"] else ""
        lines.append(f"drift began: {who}{on['date']} {on['shift']} ({on['start_time']}): "
                     + ", ".join(on["flags"]))
    else:
        lines.append("drift: none flagged after the baseline")
    lines += [f"note: {n}" for n in d["notes"]]
    lines += [f"failed: {f['file']}: {f['reason']}" for f in d["failed"]]
    lines.append("flags: limits = beyond the individuals-chart limits (the p-chart limits "
                 "for anomaly_rate), ewma = EWMA beyond its limits, run = run rule; + above, "
                 "- below")
    return "\n".join(lines) + "\n"


def _short_flags(flags: list[str]) -> str:
    """``cs_median:individuals_high`` and friends as ``cs_median limits+ ewma+`` for a
    table (words, not letters: a lone ``R`` reads as a range chart)."""
    sym = {"individuals": "limits", "p_chart": "limits", "ewma": "ewma", "run": "run"}
    per: dict[str, list[str]] = {}
    for f in flags:
        fig, _, rule = f.partition(":")
        chart, _, side = rule.rpartition("_")
        per.setdefault(fig, []).append(sym.get(chart, chart) + ("+" if side == "high" else "-"))
    return "; ".join(f"{k} {' '.join(v)}" for k, v in per.items())


def trend_jobs(paths: tuple[str, ...], kw: dict[str, Any], name_time: str | None,
                machine: str | None, folder_profiles: bool
                ) -> tuple[list[Any], list[dict[str, str]], Any]:
    """File jobs for ``trend``; pops the cycle and read options from ``kw``."""

    from torqlog.errors import UsageError
    from torqlog.fleet.batch import FileJob, discover

    files, missing = discover(paths)
    if kw.get("start") and len(files) > 1:
        raise UsageError("--start places a single file; for several files give --name-time "
                         "PATTERN or logs that carry their own timestamps")
    if name_time:
        from torqlog.fleet.batch import name_time_regex

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
                                              "torque_peak_Nm_p99", "anomaly_rate")),
              show_default=True,
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
@click.option("--fleet", "fleet_flag", is_flag=True,
              help="Add the fleet table: one row per machine (Cs median and worst decile "
                   "against target, added inertia, motor RMS load, drift, last log); it "
                   "becomes the printed table.")
@click.option("--fleet-sort", default="cs_p90_over_target", show_default=True,
              metavar="COLUMN", help="Rank the fleet table by this column (worst first).")
@output_options
def trend_cmd(paths: tuple[str, ...], fmt: str, output: str | None, name_time: str | None,
              machine: str | None, folder_profiles: bool, shifts: str | None,
              shift_names: str | None, timezone: str | None, by: str, baseline_shifts: int,
              baseline_path: str | None, figures: str, limits_method: str,
              ewma_lambda: float, ewma_l: float, run_rule: str, n_jobs: int | None,
              use_dask: bool, scheduler: str | None, out_dir: str | None,
              fleet_flag: bool, fleet_sort: str, **kw: Any) -> None:
    """Trend many logs across shifts (and machines): per-shift figures, control limits
    and the first shift where drift began. PATHS are files, folders or glob patterns."""
    from contextlib import ExitStack, nullcontext

    from torqlog.fleet.batch import dask_client
    from torqlog.fleet.trend import DriftOptions, ShiftCalendar, read_baseline, run_trend
    from torqlog.io.outputs import OUTPUT_NAMES, write_text

    profile_path = kw.get("profile")
    jobs, missing, profile = trend_jobs(paths, kw, name_time, machine, folder_profiles)
    figure_names = [f"trend_{f.strip()}.png" for f in figures.split(",") if f.strip()]
    out_files = ([Path(out_dir) / n for n in (*OUTPUT_NAMES, *figure_names,
                                               "energy_swing_box.png")]
                 if out_dir else None)
    check_outputs({"-o": output, "--out-dir": out_files},
                  {"log": [j.path for j in jobs], "--profile": profile_path,
                   "--baseline": baseline_path})
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
                        workers=n_jobs, client=client, progress=progress, missing=missing,
                        cycles_path=Path(out_dir) / "cycles.parquet" if out_dir else None)
    d = res.to_dict()
    if out_dir:
        out = Path(out_dir)
        write_text(out / "shifts.csv", res.to_pandas().to_csv(index=False))
        written = [out / "cycles.parquet", out / "shifts.csv",
                   *res.plot(out, units=output_settings()["units"])]
        click.echo("wrote " + ", ".join(str(p) for p in written), err=True)
    table = res.to_pandas()
    if fmt == "table":
        table = table.assign(start_time=[t.strftime("%Y-%m-%d %H:%M") for t in
                                         table["start_time"]],
                             flags=[_short_flags(f) for f in res.groups["flags"]])
        table = table.drop(columns=["cycles_total", "energy_swing_J_p95", "cs_p95",
                                    "cycles_scored", "cycles_abnormal", "anomaly_rate_lcl",
                                    "anomaly_rate_ucl"])
    sheets = None
    if fleet_flag:
        from torqlog.cli.fleet import fleet_for
        from torqlog.fleet.compare import rank_rows

        rank_rows([], fleet_sort)  # an unknown column is refused before the sizing runs
        fleet = fleet_for(res, jobs, profile, folder_profiles, fleet_sort)
        d["fleet"] = fleet.to_dict()
        sheets = {"shifts": table}
        table = fleet.to_pandas()
        if out_dir:
            fleet.to_pandas().to_csv(Path(out_dir) / "fleet.csv", index=False)
            fleet.write_html(Path(out_dir) / "fleet.html")
            click.echo(f"wrote {Path(out_dir) / 'fleet.csv'}, {Path(out_dir) / 'fleet.html'}",
                       err=True)
    emit(d, table, fmt, output, text=lambda dd: _trend_text(dd, n_all), sheets=sheets)
    if res.failed:
        click.echo(f"Error: {len(res.failed)} of {n_all} file(s) failed: "
                   + "; ".join(f"{f['file']}: {f['reason']}" for f in res.failed), err=True)
        raise click.exceptions.Exit(1)
