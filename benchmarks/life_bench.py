"""Memory and time of ``torqlog life`` on logs of two lengths (streaming: flat memory).

Usage: python benchmarks/life_bench.py [ROWS_SMALL ROWS_BIG]

Writes two logs with ``make_big_log.py`` into a temporary directory and runs
``torqlog life`` on each under ``/usr/bin/time -v``, three times, and prints the median
wall time and peak resident memory. Run it with ``nice`` on a shared machine.
"""

from __future__ import annotations

import re
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent


def run(path: Path) -> tuple[float, float]:
    out = subprocess.run(["/usr/bin/time", "-v", sys.executable, "-m", "torqlog", "life",
                          str(path), "--format", "json", "-o", str(path) + ".json"],
                         capture_output=True, text=True, check=True)
    wall = re.search(r"Elapsed \(wall clock\) time.*: (?:(\d+):)?(\d+):([\d.]+)", out.stderr)
    h, m, s = wall.groups()
    secs = (int(h) * 3600 if h else 0) + int(m) * 60 + float(s)
    rss = float(re.search(r"Maximum resident set size \(kbytes\): (\d+)", out.stderr)[1])
    return secs, rss / 1024.0


def main() -> None:
    sizes = [int(float(a)) for a in sys.argv[1:3]] or [1_000_000, 5_000_000]
    with tempfile.TemporaryDirectory() as tmp:
        for rows in sizes:
            p = Path(tmp) / f"log_{rows}.csv"
            subprocess.run([sys.executable, str(HERE / "make_big_log.py"), str(rows), str(p)],
                           check=True)
            runs = [run(p) for _ in range(3)]
            print(f"{rows:>10} rows: median wall {statistics.median(r[0] for r in runs):.2f} s, "
                  f"median peak RSS {statistics.median(r[1] for r in runs):.0f} MB")


if __name__ == "__main__":
    main()
