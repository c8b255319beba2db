"""Benchmark: `torqlog report` end to end against `torqlog cycles` on the same log.

Uses the 10 M-row log (time, torque, speed at 10 kHz, 120 rpm; ``big10m.csv``) and a
60 M-row log (600 rpm, ``flat60m.csv``, the one ``flat_memory_bench.py`` uses: 6× the rows
and 30× the cycles) under benchmarks/_data/ (written by make_big_log.py when missing) and
a minimal profile (name, target Cs, existing inertia). It runs, as whole processes and
interleaved, ``torqlog cycles FILE --format json`` and ``torqlog report FILE --profile P``
on the 10 M log, then ``torqlog report`` on the 60 M log, ``--runs`` times each, and
prints the median wall time and peak memory (max RSS of each child, from ``os.wait4``) of
each, the median of the per-round time ratios report/cycles, and the 1-minute load average
before and after (the machine may be shared: run it with ``nice`` and say so).

Floors (issue "A report a plant manager acts on"): report ≤ 2.5× the time of cycles on the
10 M-row log; peak memory ≤ 350 MB; memory on the longer log within 15 % of the 10 M-row
log.

Usage: python benchmarks/report_bench.py [--runs 5] [--pdf] [--long-rows 60e6]
"""

from __future__ import annotations

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

from cycles_bench import DATA, HERE, ensure, run

PROFILE = """[machine]
name = "Benchmark press (invented)"
target_cs = 0.05
inertia_kgm2 = 400.0
"""


def ensure_long(rows: int) -> Path:
    """The long log at 600 rpm (shared with flat_memory_bench.py when 60 M rows)."""
    name = "flat60m.csv" if rows == 60_000_000 else f"flat{rows // 1_000_000}m.csv"
    path = DATA / name
    if not path.exists():
        DATA.mkdir(exist_ok=True)
        subprocess.run([sys.executable, str(HERE / "make_big_log.py"), str(rows), str(path),
                        "600"], check=True)
    return path


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--runs", type=int, default=5)
    ap.add_argument("--pdf", action="store_true", help="also write the PDF in each report run")
    ap.add_argument("--long-rows", type=float, default=60e6,
                    help="rows of the long log (600 rpm) for the memory comparison")
    args = ap.parse_args()
    exe = shutil.which("torqlog") or "torqlog"
    f10 = ensure(10_000_000, "big10m.csv")
    flong = ensure_long(int(args.long_rows))
    tmp = Path(tempfile.mkdtemp())
    profile = tmp / "bench.toml"
    profile.write_text(PROFILE, encoding="utf-8")
    out = tmp / "cycles.json"

    def report(path: Path) -> list[str]:
        cmd = [exe, "report", str(path), "--profile", str(profile), "-o",
               str(tmp / "report.html")]
        return cmd + (["--pdf", str(tmp / "report.pdf")] if args.pdf else [])

    load0 = os.getloadavg()[0]
    results: dict[str, list[tuple[float, float]]] = {"cycles": [], "report": [],
                                                     "report_long": []}
    run([exe, "cycles", str(f10), "--format", "json", "-o", str(out)])  # warm-up
    for _ in range(args.runs):  # interleaved: each kind once per round
        results["cycles"].append(run([exe, "cycles", str(f10), "--format", "json",
                                      "-o", str(out)]))
        results["report"].append(run(report(f10)))
        results["report_long"].append(run(report(flong)))
    load1 = os.getloadavg()[0]
    shutil.rmtree(tmp, ignore_errors=True)
    med = {k: (statistics.median(w for w, _ in v), statistics.median(m for _, m in v))
           for k, v in results.items()}
    ratios = [r[0] / c[0] for c, r in zip(results["cycles"], results["report"], strict=True)]
    long_label = f"torqlog report, {args.long_rows / 1e6:g} M"
    print(f"{'':24s}{'wall s (median)':>16s}{'peak MB (median)':>18s}")
    for k, label in (("cycles", "torqlog cycles, 10 M"), ("report", "torqlog report, 10 M"),
                     ("report_long", long_label)):
        print(f"{label:24s}{med[k][0]:16.2f}{med[k][1]:18.0f}")
    print("time ratios report/cycles per round: " + ", ".join(f"{r:.2f}" for r in ratios))
    print(f"time ratio report/cycles (median of rounds): {statistics.median(ratios):.2f} "
          "(floor ≤ 2.5)")
    print(f"peak memory report 10 M: {med['report'][1]:.0f} MB, long: "
          f"{med['report_long'][1]:.0f} MB (floor ≤ 350)")
    print(f"memory long / 10 M: {med['report_long'][1] / med['report'][1]:.3f} "
          "(floor within ±15 %)")
    print(f"1-minute load average: {load0:.2f} before, {load1:.2f} after "
          f"({os.cpu_count()} CPUs)")


if __name__ == "__main__":
    main()
