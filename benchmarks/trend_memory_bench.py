"""Peak memory of ``torqlog trend`` over 1 and over 3 shift-like logs: flat in the cycles?

Usage: python benchmarks/trend_memory_bench.py [--rows 1e7] [--rpm 600] [--runs 3]
       [--logs 1,3] [--dir DIR] [--jobs 1] [--out-dir] [--old-src DIR] [--keep]

Writes one log of ROWS rows (10 kHz, an invented press-like load of Brindlemoor Works at
RPM, with ``make_big_log.py``) and links it under shift-like names
press_YYYYmmdd_HHMM.csv (06:20, 14:20 and 22:20 of each day) into one folder per count of
``--logs``. Then runs ``torqlog trend`` on each folder as a whole process under
``/usr/bin/time -v``, interleaved, RUNS times each, and prints the median peak resident
memory (largest single process) and wall time of each, the ratio to the first count, and
the load average.
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
    ap.add_argument("--logs", default="1,3", help="numbers of logs to compare, e.g. 1,3,9")
    a = ap.parse_args()
    root = Path(a.dir) if a.dir else Path(tempfile.mkdtemp(prefix="trend-mem-", dir="/tmp"))
    root.mkdir(parents=True, exist_ok=True)
    counts = [int(c) for c in a.logs.split(",")]
    names = [f"press_202603{2 + i // 3:02d}_{('0620', '1420', '2220')[i % 3]}.csv"
             for i in range(max(counts))]
    try:
        src = root / "log.csv"
        if not src.exists():
            subprocess.run([sys.executable, str(HERE / "make_big_log.py"), str(int(a.rows)),
                            str(src), str(a.rpm)], check=True)
        folders = {}
        for c in counts:  # the same log under c shift names (hard links: no disk space)
            folders[c] = root / f"logs{c}"
            folders[c].mkdir(exist_ok=True)
            for n in names[:c]:
                if not (folders[c] / n).exists():
                    os.link(src, folders[c] / n)
        variants = [("new", None)] + ([("old", a.old_src)] if a.old_src else [])
        results: dict[tuple[str, int], list[tuple[float, float]]] = {}
        loads = []
        for r in range(a.runs):
            for tag, path in variants:
                env = dict(os.environ)
                if path:
                    env["PYTHONPATH"] = path
                for c in counts:
                    cmd = [sys.executable, "-m", "torqlog", "trend", str(folders[c]),
                           "--name-time", "%Y%m%d_%H%M", "--jobs", str(a.jobs),
                           "--format", "json", "-o", str(root / f"{tag}{c}.json")]
                    if a.out_dir:
                        cmd += ["--out-dir", str(root / f"out-{tag}-{c}")]
                    results.setdefault((tag, c), []).append(timed(cmd, env))
                    loads.append(os.getloadavg()[0])
                    print(f"run {r + 1} {tag} {c} log(s): {results[(tag, c)][-1][0]:.1f} MB, "
                          f"{results[(tag, c)][-1][1]:.1f} s", flush=True)
        print(f"\n{a.rows:.3g} rows per log at {a.rpm:g} rpm, --jobs {a.jobs}"
              f"{', --out-dir' if a.out_dir else ''}; medians of {a.runs} interleaved runs; "
              f"load average (1 min) during the runs: median {statistics.median(loads):.2f}, "
              f"range {min(loads):.2f}-{max(loads):.2f}")
        for tag, _ in variants:
            m = {c: statistics.median(x[0] for x in results[(tag, c)]) for c in counts}
            t = {c: statistics.median(x[1] for x in results[(tag, c)]) for c in counts}
            print(f"{tag}: " + "; ".join(
                f"{c} log(s) {m[c]:.1f} MB ({m[c] / m[counts[0]]:.3f}×), {t[c]:.1f} s"
                for c in counts) + " (flat: within 1.15×)")
    finally:
        if not a.keep:
            shutil.rmtree(root, ignore_errors=True)


if __name__ == "__main__":
    main()
