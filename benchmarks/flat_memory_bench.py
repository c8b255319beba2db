"""Benchmark: memory that does not grow with the number of cycles.

Writes 10 M- and 60 M-row logs (time, torque, speed at 10 kHz, 600 rpm: 1000 samples and
one cycle every 0.1 s) with ``make_big_log.py`` under benchmarks/_data/ (kept when
present), and, opt-in (``--shift``), a 288 M-row log (~9 GB: one 8-hour shift, ~290 000
cycles) in ``--shift-dir`` (default: the system's temporary folder), deleted afterwards
unless ``--keep-shift`` (there: ``--shift-formats``, default table and json, once each,
and no bare read, which would hold the whole ~22 GB table). Then runs as whole
processes, interleaved (every kind once per round), ``--runs`` times each:

* ``bare``     — ``bare_read.py FILE``: a threaded pyarrow ``read_csv``, nothing else;
* ``table``    — ``torqlog cycles FILE`` (readable table on stdout; the default command,
  cycle-shape check on);
* ``json``, ``jsonl``, ``csv``, ``parquet`` — ``torqlog cycles FILE --format F -o OUT``;
* ``report``   — ``torqlog report FILE --profile P -o OUT`` (on the shift log only with
  ``--report-shift``);

and prints the median wall time and median peak memory (max RSS of each child, from
``os.wait4``, the figure ``/usr/bin/time -v`` reports), the load average of the machine
during the runs, and each cycles format's time over the bare read (median of the ratios
within a round). It then checks the answer: the summary of each log with exact
quantiles (the default budget of 500 000 clean cycles holds every value: numpy's
quantiles of all of them) against the same log with ``--quantile-budget 1000`` (the
sketch answers) and the sketch's stated bound; ``--compare FILE`` compares the 10 M-row
summary with a JSON ``{"summary": ...}`` saved from another version (``torqlog cycles
LOG --summary-only --format json``) to 1e-9.

Floors (issue "shift-long log in flat memory"): cycles peak on 60 M within 15 % of the
10 M figure for every format and ≤ 220 MB on 10 M; cycles time ≤ 1.25× the bare read on
10 M; report ≤ 350 MB on 60 M; the shift log in ≤ 300 MB.

Usage: python benchmarks/flat_memory_bench.py [--runs 3] [--shift] [--compare FILE]
Run it with ``nice`` on a shared machine and say how loaded the machine was.
"""

from __future__ import annotations

import argparse
import functools
import json
import math
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
RPM = 600.0
#: Output formats of ``cycles`` measured (``table`` goes to stdout).
FORMATS = ("table", "json", "jsonl", "csv", "parquet")
PROFILE = """[machine]
name = "Bench press, Brindlemoor Works (invented)"
revs_per_cycle = 1
speed_rpm = 600.0
inertia_kgm2 = 400.0
target_cs = 0.01
"""


def run(cmd: list[str]) -> tuple[float, float]:
    """Wall time [s] and peak RSS [MB] of one child process."""
    t0 = time.perf_counter()
    p = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    _, status, usage = os.wait4(p.pid, 0)
    wall = time.perf_counter() - t0
    err = p.stderr.read().decode() if p.stderr else ""
    if status != 0:
        raise SystemExit(f"command failed ({status}): {' '.join(cmd)}\n{err}")
    return wall, usage.ru_maxrss / 1024.0


def cycles_to_file(exe: str, fmt: str, folder: Path, log: Path) -> list[str]:
    return [exe, "cycles", str(log), "--format", fmt, "-o", str(folder / f"c.{fmt}")]


def ensure(rows: int, name: str, folder: Path = DATA) -> Path:
    path = folder / name
    if not path.exists():
        folder.mkdir(exist_ok=True)
        t0 = time.perf_counter()
        subprocess.run([sys.executable, str(HERE / "make_big_log.py"), str(rows), str(path),
                        str(RPM)], check=True)
        print(f"wrote {path} ({rows:,} rows) in {time.perf_counter() - t0:.0f} s")
    return path


def summary(exe: str, log: Path, *extra: str) -> dict:
    out = subprocess.run([exe, "cycles", str(log), "--summary-only", "--format", "json",
                          *extra], check=True, capture_output=True, text=True).stdout
    return json.loads(out)["summary"]


def figures(s: dict) -> dict[str, float]:
    return {"energy_swing_J.median": s["energy_swing_J"]["median"],
            "energy_swing_J.p95": s["energy_swing_J"]["p95"],
            "energy_swing_J.max": s["energy_swing_J"]["max"],
            "cs.median": s["cs"]["median"], "cs.p95": s["cs"]["p95"], "cs.max": s["cs"]["max"],
            "torque_peak_Nm_p99": s["torque_peak_Nm_p99"],
            "cycle_rate_per_min": s["cycle_rate_per_min"],
            "speed_mean_rpm": s["speed_mean_rpm"], "work_J_mean": s["work_J_mean"],
            "torque_mean_Nm": s["torque_mean_Nm"]}


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--runs", type=int, default=3)
    ap.add_argument("--shift", action="store_true", help="Also the 288 M-row shift log.")
    ap.add_argument("--report-shift", action="store_true", help="Also report on it.")
    ap.add_argument("--shift-dir", type=Path, default=Path(tempfile.gettempdir()),
                    help="Folder for the 288 M-row log (~9 GB).")
    ap.add_argument("--keep-shift", action="store_true", help="Keep the shift log.")
    ap.add_argument("--shift-formats", default="table,json",
                    help="cycles formats run on the shift log (comma-separated).")
    ap.add_argument("--only-shift", action="store_true",
                    help="Run the shift log alone (with --shift).")
    ap.add_argument("--compare", type=Path, default=None,
                    help="JSON with the 10 M-row summary of another version.")
    args = ap.parse_args()
    exe = shutil.which("torqlog") or "torqlog"
    logs = {} if args.only_shift else {"10M": ensure(10_000_000, "flat10m.csv"),
                                       "60M": ensure(60_000_000, "flat60m.csv")}
    if args.shift:
        logs["288M"] = ensure(288_000_000, "flat288m.csv", args.shift_dir)
    tmp = Path(tempfile.mkdtemp())
    prof = tmp / "bench.toml"
    prof.write_text(PROFILE, encoding="utf-8")
    cmds = {
        "bare": lambda f: [sys.executable, str(HERE / "bare_read.py"), str(f)],
        "table": lambda f: [exe, "cycles", str(f)],
        **{fmt: functools.partial(cycles_to_file, exe, fmt, tmp) for fmt in FORMATS[1:]},
        "report": lambda f: [exe, "report", str(f), "--profile", str(prof), "-o",
                             str(tmp / "r.html")],
    }
    results: dict[tuple[str, str], list[tuple[float, float]]] = {}
    loads: list[float] = []
    for size, log in logs.items():
        kinds = list(cmds)
        if size == "288M":  # no bare read: pyarrow would need ~22 GB for the whole table
            kinds = args.shift_formats.split(",") + (["report"] if args.report_shift else [])
        runs = 1 if size == "288M" else args.runs
        for _ in range(runs):  # interleaved: every kind once per round
            for kind in kinds:
                loads.append(os.getloadavg()[0])
                results.setdefault((size, kind), []).append(run(cmds[kind](log)))
                print(f"  {size} {kind}: {results[size, kind][-1][0]:.2f} s, "
                      f"{results[size, kind][-1][1]:.0f} MB", flush=True)
    print(f"\nload average (1 min) during the runs: median {statistics.median(loads):.2f}, "
          f"max {max(loads):.2f} on {os.cpu_count()} cores")
    print(f"\n{'log':6s}{'run':10s}{'wall s (median)':>17s}{'peak MB (median)':>18s}"
          f"{'runs':>6s}")
    med = {}
    for (size, kind), v in results.items():
        med[size, kind] = (statistics.median(w for w, _ in v), statistics.median(m for _, m in v))
        print(f"{size:6s}{kind:10s}{med[size, kind][0]:17.2f}{med[size, kind][1]:18.0f}"
              f"{len(v):6d}")
    if "10M" in logs:
        print()
        for kind in FORMATS:
            ratios = [c[0] / b[0] for b, c in zip(results["10M", "bare"], results["10M", kind],
                                                  strict=True)]
            print(f"cycles {kind:8s} time / bare read on 10M (median of the rounds' ratios): "
                  f"{statistics.median(ratios):.2f} (floor ≤ 1.25)")
        for kind in FORMATS:
            print(f"cycles {kind:8s} peak 60M / 10M: "
                  f"{med['60M', kind][1] / med['10M', kind][1]:.3f} (floor ≤ 1.15); "
                  f"10M peak {med['10M', kind][1]:.0f} MB (floor ≤ 220)")
        print(f"report peak on 60M: {med['60M', 'report'][1]:.0f} MB (floor ≤ 350)")
    if "288M" in logs:
        worst = max(m for (s, k), (_, m) in med.items() if s == "288M" and k != "bare")
        print(f"shift log (288M): largest cycles peak {worst:.0f} MB (floor ≤ 300)")

    # the answer: exact below the budget, the sketch within its bound beyond it
    for size, log in logs.items():
        if size == "288M":  # two more passes of several minutes: not by default
            continue
        exact = summary(exe, log)
        sketched = summary(exe, log, "--quantile-budget", "1000")
        q = sketched["quantiles"]
        bound = q["relative_error_bound"]
        print(f"\n{size}: exact quantiles ({exact['quantiles']['method']}) vs sketch "
              f"({q['method']}, stated bound {bound:g}, holds {q['bound_holds']}):")
        fe, fs = figures(exact), figures(sketched)
        for k in fe:
            err = abs(fs[k] - fe[k]) / abs(fe[k]) if fe[k] else 0.0
            print(f"  {k:22s} exact {fe[k]:.10g}  sketch {fs[k]:.10g}  rel. error {err:.2e}"
                  + ("" if err <= bound else "  ABOVE THE BOUND"))
        if size == "10M" and args.compare:
            ref = figures(json.loads(args.compare.read_text())["summary"])
            worst = max(abs(fe[k] - ref[k]) / max(abs(ref[k]), 1e-300) for k in ref
                        if ref[k] is not None and not math.isnan(ref[k]))
            print(f"  10M summary vs {args.compare.name}: largest relative difference "
                  f"{worst:.2e} (floor ≤ 1e-9)")
    shutil.rmtree(tmp, ignore_errors=True)
    if "288M" in logs and not args.keep_shift:
        logs["288M"].unlink()
        print(f"deleted {logs['288M']}")


if __name__ == "__main__":
    main()
