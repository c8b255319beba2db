"""Benchmark: `torqlog demo` as a whole process, from a cold interpreter to the report.

Runs ``python -m torqlog demo --out DIR`` several times (a fresh temporary folder each run)
and prints each run's wall time and peak memory (max RSS of the child, from ``os.wait4``),
their median, and whether the median meets the floor.

Floor (issue "report and full demo"): under 60 s on a 2-core machine.

Usage: python benchmarks/demo_bench.py [--runs 3]
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
FLOOR_S = 60.0


def run_demo(out: Path) -> tuple[float, float, str]:
    """Wall time [s], peak RSS [MB] and the last line printed by one demo process."""
    env = dict(os.environ)
    env["PYTHONPATH"] = str(HERE.parent) + os.pathsep + env.get("PYTHONPATH", "")
    t0 = time.perf_counter()
    p = subprocess.Popen([sys.executable, "-m", "torqlog", "demo", "--out", str(out)],
                         stdout=subprocess.PIPE, stderr=subprocess.DEVNULL, env=env)
    stdout = p.stdout.read().decode() if p.stdout else ""
    _, status, usage = os.wait4(p.pid, 0)
    wall = time.perf_counter() - t0
    if status != 0:
        raise SystemExit(f"torqlog demo failed ({status})")
    lines = stdout.strip().splitlines()
    return wall, usage.ru_maxrss / 1024.0, lines[-1] if lines else ""


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=3)
    args = ap.parse_args()
    print(f"cores available: {len(os.sched_getaffinity(0))}")
    walls, mems = [], []
    for i in range(args.runs):
        with tempfile.TemporaryDirectory(prefix="torqlog-demo-bench-") as tmp:
            wall, mem, last = run_demo(Path(tmp) / "demo")
        walls.append(wall)
        mems.append(mem)
        print(f"run {i + 1}: {wall:6.2f} s, peak {mem:6.0f} MB  ({last})")
    med = statistics.median(walls)
    print(f"median {med:.2f} s (min {min(walls):.2f}, max {max(walls):.2f}); peak memory "
          f"median {statistics.median(mems):.0f} MB")
    print(f"floor < {FLOOR_S:g} s: {'met' if med < FLOOR_S else 'NOT met'}")


if __name__ == "__main__":
    main()
