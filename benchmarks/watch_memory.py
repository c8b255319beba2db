"""Memory of a long watch: the cycle engine + shape check + drain loop of `torqlog watch`
after 10³ and after 10⁶ cycles (synthetic chunks, no file parsing: the file side reads
1 MiB at a time whatever the length).

Prints tracemalloc's current Python/numpy heap and the process RSS at each mark.
Run: python benchmarks/watch_memory.py [cycles]
"""

from __future__ import annotations

import json
import resource
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

import numpy as np

from torqlog.fleet import watch as wt
from torqlog.io.ingest import Chunk, LogReader
from torqlog.signal import anomaly as an
from torqlog.signal import cycles as cy

RATE = 1200.0  # Hz: 72 samples per cycle at 1000 rpm (2 per 10° model bin)
W0 = 1000.0 * 2 * np.pi / 60


def rss_mb() -> float:
    with open("/proc/self/status") as fh:
        for line in fh:
            if line.startswith("VmRSS"):
                return int(line.split()[1]) / 1024
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def chunks(rows: int, rng: np.random.Generator):
    row = 0
    while True:
        t = (row + np.arange(rows)) / RATE
        speed = W0 * (1 + 0.01 * np.sin(W0 * t)) + rng.normal(0, 0.01, rows)
        torque = 250 * (1 + np.sin(W0 * t)) + rng.normal(0, 3, rows)
        yield Chunk(row, t, {"torque": torque, "speed": speed})
        row += rows


def main() -> None:
    total = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    d = Path(tempfile.mkdtemp())
    (d / "head.csv").write_text("time_s,torque_Nm,speed_rad_s\n0,1,100\n0.001,1,100\n")
    lay = LogReader(d / "head.csv").layout
    o = cy.CycleOptions()
    rng = np.random.default_rng(0)
    it = chunks(100_000, rng)
    first = next(it)
    tracker, _, _ = cy._tracker_for("speed", o, first, "synthetic")
    st = cy._Stream(o, tracker, {"torque", "speed"}, False, 360, 160)
    mon = an.ShapeMonitor(an.AnomalyOptions(), 1, {"torque", "speed"})
    st.shape_sink = lambda c, ts, du, cu: st.shape_scores.extend(mon.push(c, ts, du, cu))
    seen = {"n": 0, "bad": 0}

    def on_cycles(cols):
        seen["n"] += len(cols["cycle"])
        seen["bad"] += int(cols["anomaly"].sum())

    tracemalloc.start()
    marks = {}
    t0 = time.perf_counter()
    pending = first
    for chunk in it:
        st.feed(pending, final=False)
        pending = chunk
        wt._drain(st, mon, lay, o, on_cycles)
        for m in (1_000, 10_000, 100_000, 1_000_000, total):
            if seen["n"] >= m and m not in marks and m <= total:
                marks[m] = {"cycles": seen["n"], "heap_MB": tracemalloc.get_traced_memory()[0]
                            / 2**20, "rss_MB": rss_mb(), "wall_s": time.perf_counter() - t0}
                print(m, marks[m], file=sys.stderr, flush=True)
        if seen["n"] >= total:
            break
    print(json.dumps({"marks": marks, "abnormal": seen["bad"], "cycles": seen["n"],
                      "false_alarm_rate": seen["bad"] / seen["n"]}, indent=1))


if __name__ == "__main__":
    main()
