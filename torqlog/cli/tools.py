"""Commands that make data and documents: simulate, report, demo."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import click

from torqlog.cli.base import (
    DateTimeType,
    OutputFile,
    QuantityType,
    check_outputs,
    cli,
    cycle_options,
    load_profile_opt,
    make_cycle_options,
    output_settings,
    parse_quantile,
    positive_float,
    read_kwargs,
    to_json,
    units_option,
    write_text,
)


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
@click.option("--start", type=DateTimeType(), default="2026-03-02T06:00:00",
              show_default=True,
              help="Wall-clock time of the first sample (ISO 8601).")
@click.option("--load-scale", type=positive_float(), default=1.0, show_default=True,
              help="Factor on the working load (to simulate drift).")
@click.option("--profile-out", type=click.Path(dir_okay=False), default=None,
              help="Also write the machine profile (TOML) to this file.")
@click.option("--fault", default=None, metavar="NAME",
              help="Inject a defect: valve-leak, misfire, clutch-slip, gear-tooth; the cycles "
                   "it hits go to a truth file (OUTPUT.truth.json).")
@click.option("--severity", type=float, default=None,
              help="Size of the defect (default per fault, see the docs).")
@click.option("--fault-every", type=click.IntRange(min=1), default=None,
              help="Hit every Nth cycle.")
@click.option("--fault-rate", type=float, default=None,
              help="Hit each cycle with this probability.")
@click.option("--fault-from", type=QuantityType("time", "s"), default=None,
              help="Hit every cycle from this time on [s].")
def simulate_cmd(machine: str, output: str, duration: float, rate: float, channels: str,
                 dialect: str, seed: int, no_noise: bool, gaps: int, spikes: int,
                 clip: float | None, start: str, load_scale: float,
                 profile_out: str | None, fault: str | None, severity: float | None,
                 fault_every: int | None, fault_rate: float | None,
                 fault_from: float | None) -> None:
    """Write a synthetic log of a demo MACHINE (press, compressor, engine) of the
    invented Brindlemoor Works plant."""
    from torqlog.demo.simulate import Fault, demo_profile, get_machine, simulate, write_log

    check_outputs({"-o": output, "--profile-out": profile_out}, {})
    defect = None
    if fault:
        defect = Fault(fault, severity=severity, every=fault_every, rate=fault_rate,
                       start=fault_from, seed=seed)
    log = simulate(get_machine(machine), duration=duration, rate=rate, channels=channels,
                   seed=seed, noise=not no_noise, gaps=gaps, spikes=spikes, clip=clip,
                   start=start, load_scale=load_scale, fault=defect)
    write_log(log, output, dialect=dialect)
    if defect is not None:
        from torqlog.demo.simulate import write_truth

        truth = write_truth(log, f"{output}.truth.json")
        f = log.options["fault"]
        click.echo(f"{f['name']} (severity {f['severity']:g}) in {len(f['events'])} event(s); "
                   f"truth in {truth}", err=True)
    info = log.to_dict()
    line = (f"wrote {output}: {info['name']} ({info['machine']}), {info['rows']} rows, "
            f"{info['duration_s']:g} s at {info['rate_Hz']:g} Hz, "
            f"channels {','.join(info['channels'])}")
    if profile_out:
        write_text(profile_out, demo_profile(log.machine))
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
@click.option("-o", "--output", "output", type=OutputFile((".html", ".htm"), "the report"),
              default="report.html", show_default=True, help="HTML report to write.")
@click.option("--pdf", "pdf_path", type=OutputFile((".pdf",), "the PDF report"),
              default=None,
              help="Also write the report as a typeset PDF (no browser needed).")
@click.option("--figures", "figure_dir", type=click.Path(file_okay=False), default=None,
              help="Also keep the PNG figures in this folder.")
@click.option("--folder-profiles", is_flag=True,
              help="Logs of several machines, one folder per machine with its one .toml "
                   "profile (as trend takes them): the report is of the first log's "
                   "machine and gains a fleet page ranking every machine.")
@click.option("--name-time", default=None, metavar="PATTERN",
              help="With --folder-profiles: read each file's start from its name with this "
                   "strftime pattern, e.g. '%Y%m%d_%H%M' (used when the file states none).")
@click.option("--fleet-sort", default="cs_p90_over_target", show_default=True,
              metavar="COLUMN", help="Rank the fleet page by this column (worst first).")
@units_option
def report_cmd(logs: tuple[str, ...], target_cs: float | None, quantile: str, output: str,
               pdf_path: str | None, figure_dir: str | None, folder_profiles: bool,
               name_time: str | None, fleet_sort: str, **kw: Any) -> None:
    """One self-contained HTML report from LOG(s) of one machine: inputs, measured state,
    inertia recommendation, flywheel proposal, shaft checks, trends and cautions.

    The first LOG is the design log (recommendation, flywheel, shaft); several logs with
    start times also give the shift trend. Without --profile the report holds what the
    log alone gives and says which profile lines would add the rest. With
    --folder-profiles the logs may come from several machines: the report is of the
    first log's machine, and a fleet page ranks them all (sortable by any column).
    """
    from torqlog.errors import UsageError
    from torqlog.present.report import build_report, write_report

    profile_path = kw.get("profile")
    check_outputs({"-o": output, "--pdf": pdf_path}, {"log": logs, "--profile": profile_path})
    fleet = None
    if folder_profiles:
        from torqlog.cli.fleet import fleet_of_jobs
        from torqlog.cli.logs import trend_jobs
        from torqlog.fleet.compare import rank_rows

        if profile_path:
            raise UsageError("give either --profile or --folder-profiles: with "
                             "--folder-profiles each machine's profile is the .toml "
                             "beside its logs")
        rank_rows([], fleet_sort)  # an unknown column is refused before any reading
        jobs, missing, _ = trend_jobs(logs, dict(kw), name_time, None, True)
        if missing:
            raise UsageError(f"no such log: {', '.join(str(m) for m in missing)}")
        fleet = fleet_of_jobs(jobs, fleet_sort)
        logs = tuple(j.path for j in jobs if j.machine == jobs[0].machine)
        profile_path = str(next(Path(logs[0]).parent.glob("*.toml")))
    elif name_time:
        raise UsageError("--name-time applies with --folder-profiles (the fleet page "
                         "needs each log's date)")
    kw.pop("profile", None)
    profile = load_profile_opt(profile_path)
    read = read_kwargs(kw)
    opts = make_cycle_options(kw, profile)
    units = output_settings()["units"]  # --units, else the --profile's [output] units
    if folder_profiles and "units" not in click.get_current_context().meta.get(
            "torqlog.output", {}):
        units = profile.output.get("units", "si")  # the first machine's profile
    data = build_report(list(logs), profile_path, cycle_options=opts, read=read,
                        target_cs=target_cs, quantile=parse_quantile(quantile),
                        figure_dir=figure_dir, fleet=fleet, units=units)
    for stage, why in data.skipped.items():
        if not stage.startswith("log "):
            click.echo(f"note: {why}", err=True)
    for path in write_report(data, output, pdf_path):
        click.echo(f"wrote {path}", err=True)
    click.echo(output)
    if data.failed_logs:
        click.echo(f"Error: {len(data.failed_logs)} of {len(logs)} log(s) left out of the "
                   "report: " + "; ".join(f["reason"] for f in data.failed_logs), err=True)
        raise click.exceptions.Exit(1)


# --- demo
@cli.command("demo")
@click.option("-o", "--output", "--out", "out_dir", type=click.Path(file_okay=False),
              default="torqlog-demo", show_default=True, help="Folder to write the demo into.")
def demo_cmd(out_dir: str) -> None:
    """Run the whole chain on the invented Brindlemoor Works demo machines.

    Writes their logs and profiles, each stage's JSON (inspect, cycles, size, flywheel,
    shaft, trend), the figures and a report per machine into OUT, and prints the path of
    the press report last.
    """
    from torqlog.demo.run import write_demo_inputs
    from torqlog.present.report import build_report, write_report

    reports = []
    runs = write_demo_inputs(out_dir)
    for run in runs:
        data = build_report(list(run.logs), run.profile, figure_dir=run.folder, survey=True)
        stages = data.stage_json()
        for name in ("inspect", "cycles"):
            for log, d in zip(run.logs, stages.pop(name), strict=True):
                write_text(run.folder / f"{name}_{log.stem}.json", to_json(d) + "\n")
        for name, d in stages.items():
            write_text(run.folder / f"{name}.json", to_json(d) + "\n")
        html = run.folder / "report.html"
        write_report(data, html, run.folder / "report.pdf")
        verdicts = ", ".join(f"{v['check']} {v['verdict']}" for v in data.verdicts())
        click.echo(f"{data.machine} ({run.key}, {len(run.logs)} log(s), {run.dialect} "
                   f"dialect): {verdicts or 'no checks'}", err=True)
        for why in data.skipped.values():
            click.echo(f"  note: {why}", err=True)
        reports.append(html)
    from torqlog.cli.fleet import write_demo_fleet

    click.echo("fleet table: " + ", ".join(str(p) for p in write_demo_fleet(runs, out_dir)),
               err=True)

    from torqlog.demo.run import find_demo_fault

    fault = find_demo_fault(out_dir)  # a machine with an injected fault, found
    click.echo(f"compressor with a leaking valve: {fault['result'].sentence} "
               f"(figure {fault['plot']})", err=True)
    first = reports.pop(0)
    for html in reports:
        click.echo(f"report: {html}")
    click.echo(f"report: {first}")
