"""Benchmark: `torqlog cycles` end to end against a bare pyarrow read of the same CSV.

Writes a 10 M-row log (time, torque, speed at 10 kHz) and a 3× longer one under
benchmarks/_data/ (skipped when present), then runs, as whole processes and in turn,
``python benchmarks/bare_read.py FILE`` and ``torqlog cycles FILE --format json -o ...``
several times and prints the median wall time and peak memory (max RSS of each child,
from ``os.wait4``) of each, and their ratio.

Floors (issue "cycle engine"): cycles ≤ 1.5× the bare read; peak memory < 400 MB; memory
on the 3× file within 15 % of the 10 M-row file.

Usage: python benchmarks/cycles_bench.py [--runs 5]
"""

from __future__ import annotations

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
DATA = HERE / "_data"


def run(cmd: list[str]) -> tuple[float, float]:
    """Wall time [s] and peak RSS [MB] of one child process."""
    t0 = time.perf_counter()
    p = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    _, status, usage = os.wait4(p.pid, 0)
    wall = time.perf_counter() - t0
    if status != 0:
        raise SystemExit(f"command failed ({status}): {' '.join(cmd)}")
    return wall, usage.ru_maxrss / 1024.0


def ensure(rows: int, name: str) -> Path:
    path = DATA / name
    if not path.exists():
        DATA.mkdir(exist_ok=True)
        subprocess.run([sys.executable, str(HERE / "make_big_log.py"), str(rows), str(path)],
                       check=True)
    return path


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--runs", type=int, default=5)
    args = ap.parse_args()
    exe = shutil.which("torqlog") or "torqlog"
    f10 = ensure(10_000_000, "big10m.csv")
    f30 = ensure(30_000_000, "big30m.csv")
    out = Path(tempfile.mkdtemp()) / "cycles.json"
    results: dict[str, list[tuple[float, float]]] = {"bare": [], "cycles": [], "cycles30": []}
    run([exe, "cycles", str(f10), "--format", "json", "-o", str(out)])  # warm-up
    for _ in range(args.runs):
        results["bare"].append(run([sys.executable, str(HERE / "bare_read.py"), str(f10)]))
        results["cycles"].append(run([exe, "cycles", str(f10), "--format", "json",
                                      "-o", str(out)]))
    for _ in range(max(1, args.runs // 2)):
        results["cycles30"].append(run([exe, "cycles", str(f30), "--format", "json",
                                        "-o", str(out)]))
    med = {k: (statistics.median(w for w, _ in v), statistics.median(m for _, m in v))
           for k, v in results.items()}
    ratios = [c[0] / b[0] for b, c in zip(results["bare"], results["cycles"], strict=True)]
    print(f"{'':22s}{'wall s (median)':>16s}{'peak MB (median)':>18s}")
    for k, label in (("bare", "pyarrow read, 10 M"), ("cycles", "torqlog cycles, 10 M"),
                     ("cycles30", "torqlog cycles, 30 M")):
        print(f"{label:22s}{med[k][0]:16.2f}{med[k][1]:18.0f}")
    print(f"time ratio cycles/bare (median of pairs): {statistics.median(ratios):.2f} "
          "(floor ≤ 1.5)")
    print(f"memory 30 M / 10 M: {med['cycles30'][1] / med['cycles'][1]:.3f} (floor ≤ 1.15)")


if __name__ == "__main__":
    main()
