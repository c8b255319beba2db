"""Peak memory of ``torqlog trend`` over 1 and over 3 shift-like logs: flat in the cycles?

Usage: python benchmarks/trend_memory_bench.py [--rows 1e7] [--rpm 600] [--runs 3]
       [--dir DIR] [--jobs 1] [--out-dir] [--old-src DIR] [--keep]

Writes one log of ROWS rows (10 kHz, an invented press-like load of Brindlemoor Works at
RPM, with ``make_big_log.py``) and copies it to three shift-like logs named
press_YYYYmmdd_HHMM.csv (06:20, 14:20 and 22:20 of one day). Then runs ``torqlog trend``
as a whole process under ``/usr/bin/time -v`` on a folder with the first log and on a
folder with all three, interleaved, RUNS times each, and prints the median peak resident
memory (largest single process) and wall time of each, their ratio, and the load average.
``--out-dir`` also writes cycles.parquet (streamed). ``--old-src DIR`` runs the same
commands a second time with ``PYTHONPATH=DIR`` (a checkout of an earlier torqlog) for the
before/after figure. The logs go to DIR (default: a temporary folder in /tmp), deleted at
the end unless ``--keep``.
"""

from __future__ import annotations

import argparse
import os
import re
import shutil
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent


def timed(cmd: list[str], env: dict[str, str]) -> tuple[float, float]:
    """Peak RSS [MB] and wall time [s] of a command, from GNU time's report."""
    res = subprocess.run(["/usr/bin/time", "-v", *cmd], capture_output=True, text=True,
                         env=env)
    if res.returncode != 0:
        raise SystemExit(f"failed: {' '.join(cmd)}\n{res.stderr[-2000:]}")
    rss = float(re.search(r"Maximum resident set size \(kbytes\): (\d+)", res.stderr)[1])
    wall = re.search(r"Elapsed \(wall clock\) time \(h:mm:ss or m:ss\): ([\d:.]+)",
                     res.stderr)[1]
    secs = 0.0
    for part in wall.split(":"):
        secs = 60 * secs + float(part)
    return rss / 1024.0, secs


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--rows", type=float, default=1e7)
    ap.add_argument("--rpm", type=float, default=600.0)
    ap.add_argument("--runs", type=int, default=3)
    ap.add_argument("--jobs", type=int, default=1)
    ap.add_argument("--dir", default=None)
    ap.add_argument("--out-dir", action="store_true")
    ap.add_argument("--old-src", default=None)
    ap.add_argument("--keep", action="store_true")
    a = ap.parse_args()
    root = Path(a.dir) if a.dir else Path(tempfile.mkdtemp(prefix="trend-mem-", dir="/tmp"))
    one, three = root / "one", root / "three"
    one.mkdir(parents=True, exist_ok=True)
    three.mkdir(parents=True, exist_ok=True)
    names = ["press_20260302_0620.csv", "press_20260302_1420.csv", "press_20260302_2220.csv"]
    try:
        src = three / names[0]
        if not src.exists():
            subprocess.run([sys.executable, str(HERE / "make_big_log.py"), str(int(a.rows)),
                            str(src), str(a.rpm)], check=True)
        for n in names[1:]:
            if not (three / n).exists():
                shutil.copyfile(src, three / n)
        if not (one / names[0]).exists():
            os.link(src, one / names[0])
        variants = [("new", None)] + ([("old", a.old_src)] if a.old_src else [])
        results: dict[tuple[str, str], list[tuple[float, float]]] = {}
        loads = []
        for r in range(a.runs):
            for tag, path in variants:
                env = dict(os.environ)
                if path:
                    env["PYTHONPATH"] = path
                for label, folder in (("1 log", one), ("3 logs", three)):
                    out = root / f"out-{tag}-{label[0]}"
                    cmd = [sys.executable, "-m", "torqlog", "trend", str(folder),
                           "--name-time", "%Y%m%d_%H%M", "--jobs", str(a.jobs),
                           "--format", "json", "-o", str(root / f"{tag}{label[0]}.json")]
                    if a.out_dir:
                        cmd += ["--out-dir", str(out)]
                    results.setdefault((tag, label), []).append(timed(cmd, env))
                    loads.append(os.getloadavg()[0])
                    print(f"run {r + 1} {tag} {label}: {results[(tag, label)][-1][0]:.1f} MB, "
                          f"{results[(tag, label)][-1][1]:.1f} s", flush=True)
        print(f"\n{a.rows:.3g} rows per log at {a.rpm:g} rpm, --jobs {a.jobs}"
              f"{', --out-dir' if a.out_dir else ''}; medians of {a.runs} interleaved runs; "
              f"load average (1 min) during the runs: median {statistics.median(loads):.2f}, "
              f"range {min(loads):.2f}-{max(loads):.2f}")
        for tag, _ in variants:
            m1 = statistics.median(x[0] for x in results[(tag, "1 log")])
            m3 = statistics.median(x[0] for x in results[(tag, "3 logs")])
            t1 = statistics.median(x[1] for x in results[(tag, "1 log")])
            t3 = statistics.median(x[1] for x in results[(tag, "3 logs")])
            print(f"{tag}: peak 1 log {m1:.1f} MB, 3 logs {m3:.1f} MB, ratio {m3 / m1:.3f} "
                  f"(flat: within 1.15); wall {t1:.1f} s / {t3:.1f} s")
    finally:
        if not a.keep:
            shutil.rmtree(root, ignore_errors=True)


if __name__ == "__main__":
    main()
