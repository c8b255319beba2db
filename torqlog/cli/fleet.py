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
    from torqlog.fleet import fleet_from_trend

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
