"""Benchmark: `torqlog report` end to end against `torqlog cycles` on the same log.

Uses the 10 M-row log (time, torque, speed at 10 kHz) and the 3× longer one under
benchmarks/_data/ (written by make_big_log.py when missing) and a minimal profile (name,
target Cs, existing inertia), then runs, as whole processes and in turn,
``torqlog cycles FILE --format json`` and ``torqlog report FILE --profile P`` several times
and prints the median wall time and peak memory (max RSS of each child, from ``os.wait4``)
of each, and their ratio.

Floors (issue "A report a plant manager acts on"): report ≤ 2.5× the time of cycles on the
10 M-row log; peak memory ≤ 350 MB; memory on the 3× log within 15 % of the 10 M-row log.

Usage: python benchmarks/report_bench.py [--runs 3] [--pdf]
"""

from __future__ import annotations

import argparse
import shutil
import statistics
import tempfile
from pathlib import Path

from cycles_bench import ensure, run

PROFILE = """[machine]
name = "Benchmark press (invented)"
target_cs = 0.05
inertia_kgm2 = 400.0
"""


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--runs", type=int, default=3)
    ap.add_argument("--pdf", action="store_true", help="also write the PDF in each report run")
    args = ap.parse_args()
    exe = shutil.which("torqlog") or "torqlog"
    f10 = ensure(10_000_000, "big10m.csv")
    f30 = ensure(30_000_000, "big30m.csv")
    tmp = Path(tempfile.mkdtemp())
    profile = tmp / "bench.toml"
    profile.write_text(PROFILE, encoding="utf-8")
    out = tmp / "cycles.json"

    def report(path: Path) -> list[str]:
        cmd = [exe, "report", str(path), "--profile", str(profile), "-o",
               str(tmp / "report.html")]
        return cmd + (["--pdf", str(tmp / "report.pdf")] if args.pdf else [])

    results: dict[str, list[tuple[float, float]]] = {"cycles": [], "report": [],
                                                     "report30": []}
    run([exe, "cycles", str(f10), "--format", "json", "-o", str(out)])  # warm-up
    for _ in range(args.runs):
        results["cycles"].append(run([exe, "cycles", str(f10), "--format", "json",
                                      "-o", str(out)]))
        results["report"].append(run(report(f10)))
    for _ in range(max(1, args.runs // 2)):
        results["report30"].append(run(report(f30)))
    med = {k: (statistics.median(w for w, _ in v), statistics.median(m for _, m in v))
           for k, v in results.items()}
    ratios = [r[0] / c[0] for c, r in zip(results["cycles"], results["report"], strict=True)]
    print(f"{'':24s}{'wall s (median)':>16s}{'peak MB (median)':>18s}")
    for k, label in (("cycles", "torqlog cycles, 10 M"), ("report", "torqlog report, 10 M"),
                     ("report30", "torqlog report, 30 M")):
        print(f"{label:24s}{med[k][0]:16.2f}{med[k][1]:18.0f}")
    print(f"time ratio report/cycles (median of pairs): {statistics.median(ratios):.2f} "
          "(floor ≤ 2.5)")
    print(f"peak memory report 10 M: {med['report'][1]:.0f} MB (floor ≤ 350)")
    print(f"memory 30 M / 10 M: {med['report30'][1] / med['report'][1]:.3f} (floor ≤ 1.15)")


if __name__ == "__main__":
    main()
