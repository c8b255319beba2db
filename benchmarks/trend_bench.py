"""Benchmark ``torqlog trend``: one process, two processes, and a local Dask cluster.

Usage: python benchmarks/trend_bench.py [--files 48] [--rows 1e6] [--runs 3] [--dir DIR]
       [--keep]

Writes FILES logs of ROWS rows each (time, torque, speed at 10 kHz; an invented press of
Brindlemoor Works at about 120 rpm, the load a little different in every shift), named
press4_YYYYmmdd_HHMM.csv for three shifts a day, with pyarrow's CSV writer. Then runs
``torqlog trend`` on the folder as a whole process (start-up included) with ``--jobs 1``,
``--jobs 2`` and ``--dask --jobs 2``, RUNS times each, and prints the median wall times
and their ratios.
"""

from __future__ import annotations

import argparse
import os
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.csv as pacsv


def write_logs(folder: Path, files: int, rows: int) -> None:
    fs = 10_000.0
    w0 = 2 * np.pi * 2.0
    inertia = 40.0
    t = np.arange(rows) / fs
    th = w0 * t
    dyn = 900 * np.sin(th) + 400 * np.sin(2 * th + 0.4) + 150 * np.sin(3 * th)
    e = -(900 * np.cos(th) - 900 + 200 * np.cos(2 * th + 0.4) + 50 * np.cos(3 * th))
    t0 = np.datetime64("2026-03-02T06:20")
    for i in range(files):
        rng = np.random.default_rng(i)
        load = 1.0 + rng.normal(0, 0.02)
        torque = load * (2000 + dyn) + rng.normal(0, 10, rows)
        speed = (w0 - load * e / (inertia * w0)) * 60 / (2 * np.pi) + rng.normal(0, 0.02, rows)
        stamp = (t0 + np.timedelta64(8 * i, "h")).astype(object)
        name = folder / f"press4_{stamp:%Y%m%d_%H%M}.csv"
        tbl = pa.table({"time_s": np.round(t, 5), "torque_Nm": np.round(torque, 2),
                        "speed_rpm": np.round(speed, 3)})
        pacsv.write_csv(tbl, name)


def run(folder: Path, extra: list[str], out: Path) -> tuple[float, float]:
    """Wall time [s] and CPU time of the process and its children [s]."""
    cmd = [sys.executable, "-m", "torqlog", "trend", str(folder), "--name-time",
           "%Y%m%d_%H%M", "--format", "json", "-o", str(out), *extra]
    r0 = resource.getrusage(resource.RUSAGE_CHILDREN)
    t = time.perf_counter()
    res = subprocess.run(cmd, capture_output=True, text=True)
    dt = time.perf_counter() - t
    r1 = resource.getrusage(resource.RUSAGE_CHILDREN)
    if res.returncode != 0:
        raise SystemExit(f"{' '.join(cmd)} failed:\n{res.stderr}")
    return dt, (r1.ru_utime - r0.ru_utime) + (r1.ru_stime - r0.ru_stime)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--files", type=int, default=48)
    ap.add_argument("--rows", type=float, default=1e6)
    ap.add_argument("--runs", type=int, default=3)
    ap.add_argument("--dir", default=None, help="Folder for the logs (default: a temp dir).")
    ap.add_argument("--keep", action="store_true", help="Keep the logs afterwards.")
    a = ap.parse_args()
    folder = Path(a.dir) if a.dir else Path(tempfile.mkdtemp(prefix="trend_bench_"))
    folder.mkdir(parents=True, exist_ok=True)
    try:
        if len(list(folder.glob("press4_*.csv"))) != a.files:
            t = time.perf_counter()
            write_logs(folder, a.files, int(a.rows))
            print(f"wrote {a.files} logs of {int(a.rows):,} rows in "
                  f"{time.perf_counter() - t:.1f} s to {folder}")
        print(f"cores: {os.cpu_count()}, runs per setting: {a.runs}, load average before: "
              + ", ".join(f"{x:.2f}" for x in os.getloadavg()))
        settings = {"--jobs 1": ["--jobs", "1"], "--jobs 2": ["--jobs", "2"],
                    "--dask --jobs 2": ["--dask", "--jobs", "2"]}
        med: dict[str, float] = {}
        outs: dict[str, str] = {}
        for label, extra in settings.items():
            out = folder.parent / f"{folder.name}_{label.replace(' ', '').replace('-', '')}.json"
            got = [run(folder, extra, out) for _ in range(a.runs)]
            times = [g[0] for g in got]
            med[label] = statistics.median(times)
            outs[label] = out.read_text()
            out.unlink()
            print(f"{label:16s} median {med[label]:7.2f} s wall, "
                  f"{statistics.median(g[1] for g in got):7.2f} s CPU  (runs: "
                  + ", ".join(f"{x:.2f}" for x in times) + ")")
        print(f"speed-up --jobs 2 over --jobs 1:     {med['--jobs 1'] / med['--jobs 2']:.2f}x")
        print(f"--dask time / --jobs 2 time:          "
              f"{med['--dask --jobs 2'] / med['--jobs 2']:.2f}x")
        same = len(set(outs.values())) == 1
        print(f"identical JSON from all three:       {same}")
    finally:
        if not a.keep and not a.dir:
            shutil.rmtree(folder, ignore_errors=True)


if __name__ == "__main__":
    main()
