"""The fleet table of ``torqlog trend --fleet``: which machine's log and profile to use."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from torqlog.cli.base import load_profile_opt


def fleet_for(res: Any, jobs: list[Any], profile: Any, folder_profiles: bool,
              sort_by: str, size: bool = True) -> Any:
    """Fleet table of a trend: each machine's latest log and its profile.

    With ``folder_profiles`` a machine's profile is the one ``.toml`` beside its logs;
    else the ``--profile`` given (or none).
    """
    from torqlog.fleet.compare import fleet_from_trend

    by_path = {j.path: j for j in jobs}
    latest: dict[str, Any] = {}
    when: dict[str, Any] = {}
    for f in res.files:
        m = f["machine"]
        if m not in when or f["start_time"] > when[m]:
            when[m], latest[m] = f["start_time"], by_path[f["file"]]
    profiles: dict[str, Any] = {}
    for m, job in latest.items():
        if folder_profiles:
            tomls = sorted(Path(job.path).parent.glob("*.toml"))
            profiles[m] = load_profile_opt(str(tomls[0])) if len(tomls) == 1 else None
        else:
            profiles[m] = profile
    return fleet_from_trend(res, latest, profiles, size=size, sort_by=sort_by)


def fleet_of_jobs(jobs: list[Any], sort_by: str = "cs_p90_over_target") -> Any:
    """Trend the logs of several machines (each job with its folder's profile) and build
    their fleet table; the first machine's profile gives the shift calendar."""
    from torqlog.fleet.trend import DriftOptions, ShiftCalendar, run_trend

    tomls = sorted(Path(jobs[0].path).parent.glob("*.toml"))
    calendar = ShiftCalendar.build(None, None, None,
                                   load_profile_opt(str(tomls[0])) if tomls else None)
    res = run_trend(jobs, calendar, drift=DriftOptions(), workers=1)
    return fleet_for(res, jobs, None, True, sort_by)


def write_demo_fleet(runs: list[Any], out_dir: str | Path) -> list[Path]:
    """Trend every demo machine's logs and write the plant's fleet table.

    Writes ``fleet.xlsx`` (sheets fleet, shifts, options), ``fleet.csv`` (with a units
    row) and ``fleet.json`` into ``out_dir``; returns their paths.
    """
    from torqlog.cli.base import make_cycle_options, to_json
    from torqlog.demo.run import DEMO_START
    from torqlog.fleet.batch import FileJob
    from torqlog.fleet.compare import fleet_from_trend
    from torqlog.fleet.trend import DriftOptions, ShiftCalendar, run_trend
    from torqlog.present.exporting import to_csv_text, write_xlsx

    jobs, profiles = [], {}
    for run in runs:
        prof = load_profile_opt(str(run.profile))
        name = prof.machine.get("name") or run.key
        profiles[name] = prof
        opts = make_cycle_options({}, prof)
        # a log that states no start of its own is placed at the demo's first shift
        start = None if len(run.logs) > 1 else DEMO_START.isoformat()
        jobs += [FileJob(str(log), opts, name, {}, start) for log in run.logs]
    press = profiles[next(iter(profiles))]
    res = run_trend(jobs, ShiftCalendar.build(None, None, None, press),
                    drift=DriftOptions(), workers=1)
    latest = {}
    for f in sorted(res.files, key=lambda f: f["start_time"]):
        latest[f["machine"]] = next(j for j in jobs if j.path == f["file"])
    fleet = fleet_from_trend(res, latest, profiles)
    out = Path(out_dir)
    table = fleet.to_pandas()
    paths = [write_xlsx(out / "fleet.xlsx", {"fleet": table, "shifts": res.to_pandas()},
                        fleet.options)]
    (out / "fleet.csv").write_text(to_csv_text(table, units_row=True), encoding="utf-8")
    (out / "fleet.json").write_text(to_json(fleet.to_dict()) + "\n", encoding="utf-8")
    page = fleet.write_html(out / "fleet.html", "Brindlemoor Works: fleet")
    return [*paths, out / "fleet.csv", out / "fleet.json", page]
