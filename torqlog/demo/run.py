"""The demo: logs and profiles of the invented Brindlemoor Works machines, ready to run.

:func:`write_demo_inputs` simulates short logs of the three demo machines in three logger
dialects (and, for the press, a run of shift logs a few days long whose load creeps up at
the end, for the trend) and writes each machine's profile beside its logs. ``torqlog
demo`` then runs the whole chain on each machine and writes every stage's JSON, the
figures and the report. Durations are short so the whole demo runs in well under a minute.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import pandas as pd

#: Start of the first demo shift (invented).
DEMO_START = pd.Timestamp("2026-03-02T06:00:00")
#: Hours between shift logs (three-shift pattern of the demo profiles).
SHIFT_HOURS = 8
#: Press shift logs: 12 (four days of three shifts; the trend's baseline takes nine).
PRESS_SHIFTS = 12
#: Load factor of the last press shifts (die wear, invented), and how many shifts it covers.
PRESS_DRIFT = (1.08, 3)


@dataclass(frozen=True)
class DemoRun:
    """One demo machine's log(s) and profile, written by :func:`write_demo_inputs`.

    Attributes
    ----------
    key : str
        Demo machine key (``press``, ``compressor``, ``engine``).
    folder : Path
        Where its inputs (and, after the run, its outputs) live.
    logs : tuple of Path
        Its logs; the first is the design log.
    profile : Path
        Its machine profile (TOML).
    dialect : str
        Logger dialect of the logs.
    """

    key: str
    folder: Path
    logs: tuple[Path, ...]
    profile: Path
    dialect: str


# key: (duration [s], rate [Hz], channels, dialect, file suffix)
_SPECS: dict[str, tuple[float, float, str, str, str]] = {
    "press": (30.0, 1000.0, "torque,speed", "iso", ".csv"),
    "compressor": (8.0, 2000.0, "torque,speed,angle", "semicolon", ".csv"),
    "engine": (4.0, 5000.0, "torque,index", "preamble", ".txt"),
}
_SHIFT_DURATION = 10.0  # [s] each further press shift log


def write_demo_inputs(out_dir: str | Path) -> list[DemoRun]:
    """Simulate the demo logs and write them with the machine profiles.

    Parameters
    ----------
    out_dir : path
        Folder to write into (created); one sub-folder per machine.

    Returns
    -------
    list of DemoRun
        Press, compressor, engine.
    """
    from torqlog.demo.simulate import demo_profile, simulate, write_log
    from torqlog.io.outputs import write_text

    root = Path(out_dir)
    runs = []
    for key, (duration, rate, channels, dialect, suffix) in _SPECS.items():
        folder = root / key
        folder.mkdir(parents=True, exist_ok=True)
        profile = folder / f"{key}.toml"
        write_text(profile, demo_profile(key))
        logs = []
        shifts = PRESS_SHIFTS if key == "press" else 1
        for i in range(shifts):
            start = DEMO_START + pd.Timedelta(hours=SHIFT_HOURS * i)
            scale = PRESS_DRIFT[0] if i >= shifts - PRESS_DRIFT[1] and shifts > 1 else 1.0
            log = simulate(key, duration=duration if i == 0 else _SHIFT_DURATION, rate=rate,
                           channels=channels, seed=i, start=start, load_scale=scale)
            name = (f"{key}_{start:%Y%m%d_%H%M}{suffix}" if shifts > 1
                    else f"{key}_{dialect}{suffix}")
            logs.append(write_log(log, folder / name, dialect=dialect))
        runs.append(DemoRun(key, folder, tuple(logs), profile, dialect))
    return runs


def find_demo_fault(out_dir: str | Path) -> dict[str, object]:
    """The compressor with a leaking valve: a healthy reference log, a faulty log, the
    cycle-shape check on it against the reference, its figure and JSON.

    Invented scenario: compressor 2 of the Brindlemoor Works, a suction valve starting to
    leak (a torque deficit over part of the stroke in 5 % of the cycles).

    Returns
    -------
    dict
        ``folder``, ``reference``, ``log``, ``truth``, ``json``, ``plot`` (paths) and
        ``result`` (the :class:`torqlog.signal.anomaly.AnomalyResult`).
    """
    import json

    from torqlog.demo.simulate import Fault, simulate, write_log, write_truth
    from torqlog.present.plots import plot_anomaly
    from torqlog.signal.cycles import analyse_cycles, shape_model_from_log

    folder = Path(out_dir) / "compressor-fault"
    folder.mkdir(parents=True, exist_ok=True)
    start = DEMO_START + pd.Timedelta(hours=SHIFT_HOURS)
    ref = write_log(simulate("compressor", duration=40.0, rate=1000.0, seed=21,
                             start=DEMO_START), folder / "compressor_known_good.csv")
    log = simulate("compressor", duration=30.0, rate=1000.0, seed=22, start=start,
                   fault=Fault("valve-leak", seed=5))
    path = write_log(log, folder / "compressor_valve_leak.csv")
    truth = write_truth(log, folder / "compressor_valve_leak.truth.json")
    res = analyse_cycles(path, shape_model=shape_model_from_log(ref))
    plot = plot_anomaly(res.anomaly, folder / "shape_anomalies.png")
    out = folder / "shape_anomalies.json"
    out.write_text(json.dumps(res.anomaly.to_dict(), indent=1, default=float) + "\n",
                   encoding="utf-8")
    return {"folder": folder, "reference": ref, "log": path, "truth": truth, "json": out,
            "plot": plot, "result": res.anomaly}


__all__ = ["DEMO_START", "DemoRun", "PRESS_DRIFT", "PRESS_SHIFTS", "SHIFT_HOURS",
           "find_demo_fault", "write_demo_inputs"]
