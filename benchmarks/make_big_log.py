"""Write a long synthetic log (time, torque, speed at 10 kHz) for the benchmarks.

Usage: python benchmarks/make_big_log.py ROWS PATH [RPM]

The machine is an invented press-like load at about 120 rpm (or RPM): torque with a few
harmonics plus noise, speed from the small-fluctuation relation. Vectorised, written in
blocks with pyarrow so writing 30 M rows takes seconds, not minutes.
"""

from __future__ import annotations

import sys

import numpy as np
import pyarrow as pa
import pyarrow.csv as pacsv


def main() -> None:
    rows = int(float(sys.argv[1]))
    path = sys.argv[2]
    fs = 10_000.0
    rpm = float(sys.argv[3]) if len(sys.argv) > 3 else 120.0
    w0 = 2 * np.pi * rpm / 60.0
    inertia = 400.0
    rng = np.random.default_rng(1)
    block = 1_000_000
    opts = pacsv.WriteOptions(include_header=True)
    with pacsv.CSVWriter(path, pa.schema([("time_s", pa.float64()), ("torque_Nm", pa.float64()),
                                          ("speed_rpm", pa.float64())]),
                         write_options=opts) as w:
        for start in range(0, rows, block):
            n = min(block, rows - start)
            t = (start + np.arange(n)) / fs
            th = w0 * t
            dyn = 900 * np.sin(th) + 400 * np.sin(2 * th + 0.4) + 150 * np.sin(3 * th)
            torque = 2000 + dyn + rng.normal(0, 10, n)
            # E(θ) = ∫(T − T̄)dθ of the harmonics above (zero mean over a cycle)
            e = -(900 * np.cos(th) + 200 * np.cos(2 * th + 0.4) + 50 * np.cos(3 * th))
            speed = (w0 - e / (inertia * w0)) * 60 / (2 * np.pi) + rng.normal(0, 0.02, n)
            tbl = pa.table({"time_s": np.round(t, 5), "torque_Nm": np.round(torque, 2),
                            "speed_rpm": np.round(speed, 3)})
            w.write_table(tbl)


if __name__ == "__main__":
    main()
