"""The fault campaign at full size: every fault class of ``tests/test_faults.py`` on the
three demo machines, at several positions and seeds, with the outcome of each case counted.

Outcomes: ``flagged`` (every cycle overlapping the fault flagged, none farther than one
period from it, clean median/p95 of Cs and ΔE within 0.5 % of the fault-free log, and
``size`` agreeing on the clean count), ``refused`` (a DataError; its first words shown),
``missed`` (a cycle overlapping the fault left clean), ``overflagged`` (a cycle more than a
period away flagged), ``stats`` (clean statistics moved more than 0.5 %).

Run: ``python benchmarks/fault_campaign.py [positions] [seeds]`` (defaults 3 and 1).
"""

from __future__ import annotations

import sys
import tempfile
import time
from collections import Counter, defaultdict
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

import test_faults as tf  # noqa: E402

from torqlog.errors import DataError  # noqa: E402
from torqlog.signal.cycles import analyse_cycles  # noqa: E402


def outcome(make, machine: str, at: float, seed: int, tmp: Path) -> str:
    log = tf.base(machine, seed)
    try:
        log = make(log, at)
    except TypeError:
        log = make(log)
    try:
        res = analyse_cycles(log.write(tmp / "c.csv"), tf._opts(log))
    except DataError as exc:
        return "refused: " + str(exc).split(": ", 1)[1][:40]
    try:
        tf.check_flagged(res, log, stats_of=tf.clean_stats(machine, tmp, seed))
    except AssertionError as exc:
        text = str(exc)
        if "is clean" in text or "no cycle overlaps" in text:
            return "missed"
        if "far from" in text:
            return "overflagged"
        return "stats"
    return "flagged"


CLASSES = {
    "speed dropout": lambda g, at: tf.speed_dropout(g, at=at),
    "speed dropout, 3 revs": lambda g, at: tf.speed_dropout(g, at=at, revs=3),
    "speed frozen": lambda g, at: tf.speed_frozen(g, at=at),
    "torque dropout": lambda g, at: tf.torque_dropout(g, at=at),
    "torque spike run 4": lambda g, at: tf.spike_run(g, at=at, n=4),
    "torque spike run 8": lambda g, at: tf.spike_run(g, at=at, n=8),
    "speed spike run 3": lambda g, at: tf.spike_run(g, at=at, n=3, channel="speed",
                                                    height=3.0),
    "torque ±inf": lambda g, at: tf.infinite(g, at=at),
    "speed ±inf": lambda g, at: tf.infinite(g, at=at, channel="speed"),
    "torque NaN run": lambda g, at: tf.nan_run(g, at=at),
    "stop and restart": lambda g, at: tf.stop_restart(g, at=at),
    "run-down and up": lambda g, at: tf.slow_down(g, at=at),
    "reversal": lambda g, at: tf.reversal(g, at=at),
    "3 s gap": lambda g, at: tf.gap(g, at=0.1 + at * 0.5, secs=3.0),
    "20 ms gap": lambda g, at: tf.gap(g, at=at),
}


def main() -> None:
    positions = int(sys.argv[1]) if len(sys.argv) > 1 else 3
    seeds = int(sys.argv[2]) if len(sys.argv) > 2 else 1
    ats = [0.2 + 0.6 * k / max(positions - 1, 1) for k in range(positions)]
    table: dict[str, Counter] = defaultdict(Counter)
    t0 = time.perf_counter()
    n = 0
    with tempfile.TemporaryDirectory() as d:
        tmp = Path(d)
        for name, make in CLASSES.items():
            for machine in ("press", "compressor", "engine"):
                for seed in range(3, 3 + seeds):
                    for at in ats:
                        table[name][outcome(make, machine, at, seed, tmp)] += 1
                        n += 1
    wall = time.perf_counter() - t0
    total: Counter = Counter()
    for name, c in table.items():
        total.update(c)
        print(f"{name:24s} " + ", ".join(f"{k} {v}" for k, v in sorted(c.items())))
    print(f"{'all':24s} " + ", ".join(f"{k} {v}" for k, v in sorted(total.items())))
    print(f"{n} cases in {wall:.1f} s")


if __name__ == "__main__":
    main()
