"""Coverage of the sizing interval over seeded simulated logs, against the true answer.

Each log is the invented compressor K7 (tests/calibsim.py) with a log-normal
cycle-to-cycle amplitude (sd ``--amp-sd``), speed and torque noise. The true answer is the
added inertia at which the true machine (integrated in time by scipy's solve_ivp) meets the
target Cs on the design cycle: the shape scaled by the true 95th percentile of the
amplitude, exp(1.645·sd). Reports: slope error, Cs reproduction error, added-inertia error
and how often the 95 % interval (``added_ci95_kgm2``) holds the truth.

Usage::

    nice python benchmarks/size_coverage.py --logs 50 --machine compressor
"""

from __future__ import annotations

import argparse
import math
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
from scipy.stats import norm

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

import calibsim  # noqa: E402

from torqlog.signal.cycles import analyse_cycles, options_from_profile  # noqa: E402
from torqlog.sizing.inertia import size_from_cycles  # noqa: E402

MACHINES = {"compressor": (calibsim.COMPRESSOR, 0.01), "press": (calibsim.PRESS, 0.05),
            "engine": (calibsim.ENGINE, 0.005)}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--logs", type=int, default=50)
    ap.add_argument("--machine", choices=list(MACHINES), default="compressor")
    ap.add_argument("--amp-sd", type=float, default=0.05)
    ap.add_argument("--cycles", type=int, default=40)
    args = ap.parse_args()
    base, target = MACHINES[args.machine]
    machine = calibsim.Machine(**{**base.__dict__, "cycles": args.cycles})
    q95 = math.exp(norm.ppf(0.95) * args.amp_sd)
    t0 = time.perf_counter()
    truth = calibsim.true_added_inertia(machine, target, scale=q95, xtol_rel=2e-4)
    print(f"{machine.name}: target Cs {target}, amplitude sd {args.amp_sd}, "
          f"{args.cycles} cycles per log; true added inertia {truth:.5g} kg m² "
          f"({time.perf_counter() - t0:.1f} s)")
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for seed in range(args.logs):
            path = Path(tmp) / f"log{seed}.csv"
            calibsim.simulate_log(machine, path, seed=seed, amp_sd=args.amp_sd)
            cyc = analyse_cycles(path, options_from_profile(
                None, revs_per_cycle=machine.revs, torque_role=machine.role))
            t1 = time.perf_counter()
            res = size_from_cycles(cyc.table, cyc.mean_cycle, target_cs=target,
                                   revs_per_cycle=machine.revs, torque_role=machine.role,
                                   seed=seed)
            d = res.to_dict()
            lo, hi = d["added_ci95_kgm2"] or (math.nan, math.nan)
            rows.append((d["model"] == "calibrated drive",
                         (d["drive_slope_Nms_per_rad"] or math.nan) / machine.slope - 1,
                         d["cs_model_error_rel"] or math.nan,
                         d["added_inertia_kgm2"] / truth - 1, lo <= truth <= hi,
                         (hi - lo) / truth, time.perf_counter() - t1))
            print(f"  seed {seed:2d}: {d['model']:16s} added {d['added_inertia_kgm2']:.4g} "
                  f"[{lo:.4g}, {hi:.4g}] {'covers' if rows[-1][4] else 'MISSES'}", flush=True)
    a = np.array(rows, dtype=float)
    print(f"\ncalibrated model led in {int(a[:, 0].sum())}/{len(a)} logs")
    print(f"slope error            median {np.median(np.abs(a[:, 1])):.2%}, "
          f"max {np.max(np.abs(a[:, 1])):.2%}")
    print(f"Cs reproduction error  median {np.median(np.abs(a[:, 2])):.2%}, "
          f"max {np.max(np.abs(a[:, 2])):.2%}")
    print(f"added-inertia error    median {np.median(np.abs(a[:, 3])):.2%}, "
          f"max {np.max(np.abs(a[:, 3])):.2%} (against bisection on the true machine)")
    print(f"interval coverage      {int(a[:, 4].sum())}/{len(a)} "
          f"(nominal 95 %), median width {np.median(a[:, 5]):.1%} of the truth")
    print(f"sizing time per log    median {np.median(a[:, 6]):.2f} s")


if __name__ == "__main__":
    main()
