"""Which of several logs of one machine to size on.

With logs of several shifts the flywheel must serve the hardest recent running, not the
first file given. Rules (``size_on``):

- ``worst`` (default): the log whose cycles need the most inertia by the constant-drive
  measure ``ΔE_q/ω̄²`` (the target Cs cancels out of the ranking);
- ``latest``: the log that starts last (by its first cycle's time stamp, else the order
  given);
- ``first``: the first log given.

References
----------
.. [1] R. G. Budynas, J. K. Nisbett, *Shigley's Mechanical Engineering Design*, 10th ed.,
   eq. 16-62 (I = ΔE/(Cs·ω̄²): for a fixed target the need scales with ΔE/ω̄²).
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import numpy as np

from torqlog.errors import UsageError
from torqlog.sizing.inertia import design_energy_swing

SIZE_ON = ("worst", "latest", "first")


def _need(cycles: Any, quantile: float | str) -> tuple[float, float, float]:
    """(ΔE_q [J], ω̄ [rad/s], ΔE_q/ω̄² [kg*m^2 · Cs]) over a log's clean cycles."""
    table = cycles.clean
    swing = table["energy_swing_J"].to_numpy(float)
    speed = table["speed_mean_rpm"].to_numpy(float) * math.pi / 30.0
    ok = np.isfinite(swing) & np.isfinite(speed)
    if not np.any(ok):
        return math.nan, math.nan, math.nan
    e = design_energy_swing(swing[ok], quantile)
    w = float(np.mean(speed[ok]))
    return e, w, e / (w * w)


def _start(cycles: Any) -> Any:
    col = cycles.columns.get("start_time")
    if col is None or col.size == 0:
        return None
    first = col[0]
    return None if first != first else first  # NaT compares unequal to itself


def choose_log(results: list[Any], size_on: str = "worst", *,
               quantile: float | str = 0.95) -> tuple[int, dict[str, Any]]:
    """Pick the log to size on.

    Parameters
    ----------
    results : list of CycleResult
        One per log, in the order given.
    size_on : {"worst", "latest", "first"}
        The rule (see the module docstring).
    quantile : float or "max"
        Design quantile of the per-cycle energy swing, for the ranking.

    Returns
    -------
    (int, dict)
        Index of the chosen log, and a record: the rule, the chosen log, why, and per log
        its design swing, mean speed and ΔE_q/ω̄².

    Raises
    ------
    UsageError
        Unknown rule, or no logs.

    References
    ----------
    .. [1] Budynas & Nisbett, *Shigley's*, 10th ed., eq. 16-62.
    """
    if size_on not in SIZE_ON:
        raise UsageError(f"unknown --size-on {size_on!r}; valid choices: {', '.join(SIZE_ON)}")
    if not results:
        raise UsageError("give at least one log to size on")
    rows = []
    for res in results:
        e, w, need = _need(res, quantile)
        start = _start(res)
        rows.append({"log": Path(res.source).name, "design_energy_swing_J": e,
                     "speed_mean_rpm": w * 30.0 / math.pi,
                     "need_J_s2_per_rad2": need, "start": None if start is None else str(start)})
    if size_on == "first" or len(results) == 1:
        idx, why = 0, "the first log given"
    elif size_on == "latest":
        starts = [_start(r) for r in results]
        if all(s is not None for s in starts):
            idx = int(max(range(len(starts)), key=lambda i: starts[i]))
            why = "the log that starts last"
        else:
            idx, why = len(results) - 1, "the last log given (the logs carry no start time)"
    else:
        needs = np.array([r["need_J_s2_per_rad2"] for r in rows], dtype=float)
        if not np.any(np.isfinite(needs)):
            idx, why = 0, "no log has energy swings to rank; the first log given"
        else:
            idx = int(np.nanargmax(needs))
            ratio = needs[idx] / np.nanmin(needs)
            why = (f"the log that needs the most inertia (design swing / mean speed², "
                   f"{ratio:.3g} × the least demanding log)")
    return idx, {"size_on": size_on, "sized_on": rows[idx]["log"], "why": why, "logs": rows}
