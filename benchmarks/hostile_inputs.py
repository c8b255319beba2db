"""Campaign: damaged logs through every log-reading command, counted by outcome.

A seeded random campaign (the big brother of ``tests/test_hostile.py``): a small
simulated press log of the invented Brindlemoor Works, as CSV, CSV.gz and Parquet, is
truncated or has bytes overwritten at random places, and each damaged copy goes through
``inspect``, ``cycles``, ``size``, ``trend`` and (every 10th run) ``report``, in-process
with click's runner. Each run is classed:

- ``ok``: exit 0 (the damage left a readable log; e.g. a CSV cut at a line end)
- ``data``: exit 1 with one ``Error:`` sentence
- ``usage``: exit 2 with one sentence
- ``unexpected``: the sentence is the boundary's "unexpected ..." fall-back (a defect)
- ``traceback``: an exception escaped the command (a defect)
- ``input changed``: the damaged input's hash changed (a defect)

Usage: python benchmarks/hostile_inputs.py [--runs 400] [--seed 20]
"""

from __future__ import annotations

import argparse
import collections
import hashlib
import random
import shutil
import sys
import tempfile
from pathlib import Path

from click.testing import CliRunner

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent / "tests"))

from test_hostile import corrupt  # noqa: E402  (the same damage as the property test)

from torqlog.cli import cli  # noqa: E402


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=400)
    ap.add_argument("--seed", type=int, default=20)
    args = ap.parse_args()

    from torqlog.demo.simulate import simulate, write_log

    rng = random.Random(args.seed)
    tmp = Path(tempfile.mkdtemp(prefix="torqlog-hostile-"))
    log = simulate("press", duration=6, rate=200, channels="torque,speed", seed=1)
    sources = {n: write_log(log, tmp / n) for n in ("v.csv", "v.csv.gz", "v.parquet")}
    profile = HERE.parent / "sample_data" / "press.toml"
    counts: collections.Counter[tuple[str, str]] = collections.Counter()
    by_format: collections.Counter[tuple[str, str]] = collections.Counter()
    defects = []
    for i in range(args.runs):
        name = rng.choice(list(sources))
        kind = rng.choice(["truncate", "flip", "burst"])
        where, value = rng.random(), rng.randrange(256)
        command = "report" if i % 10 == 9 else rng.choice(["inspect", "cycles", "size",
                                                            "trend"])
        folder = tmp / f"run{i}"
        folder.mkdir()
        bad = folder / name
        bad.write_bytes(corrupt(sources[name].read_bytes(), kind, where, value))
        before = hashlib.sha256(bad.read_bytes()).hexdigest()
        argv = [command, str(bad)]
        if command in ("size", "report"):
            argv += ["--profile", str(profile)]
        if command == "report":
            argv += ["-o", str(folder / "r.html")]
        if command == "trend":
            argv += ["--start", "2026-03-02T06:00:00", "--jobs", "1"]
        res = CliRunner().invoke(cli, argv)
        err = res.stderr
        if res.exception is not None and not isinstance(res.exception, SystemExit):
            outcome = "traceback"
        elif hashlib.sha256(bad.read_bytes()).hexdigest() != before:
            outcome = "input changed"
        elif "unexpected" in err:
            outcome = "unexpected"
        else:
            outcome = {0: "ok", 1: "data", 2: "usage"}.get(res.exit_code, f"exit {res.exit_code}")
        counts[(command, outcome)] += 1
        by_format[(name, outcome)] += 1
        if outcome not in ("ok", "data", "usage"):
            defects.append((command, name, kind, round(where, 4), value, outcome,
                            err.strip()[:200] or repr(res.exception)))
        shutil.rmtree(folder)
    shutil.rmtree(tmp)

    outcomes = ["ok", "data", "usage", "unexpected", "traceback", "input changed"]
    print(f"{args.runs} runs, seed {args.seed}")
    print(f"{'command':<10}" + "".join(f"{o:>15}" for o in outcomes))
    for cmd in ("inspect", "cycles", "size", "trend", "report"):
        print(f"{cmd:<10}" + "".join(f"{counts[(cmd, o)]:>15}" for o in outcomes))
    print(f"{'total':<10}" + "".join(
        f"{sum(v for (c, o), v in counts.items() if o == oc):>15}" for oc in outcomes))
    print()
    for fmt in sources:
        print(f"{fmt:<10}" + "".join(f"{by_format[(fmt, o)]:>15}" for o in outcomes))
    for d in defects:
        print("DEFECT", *d)


if __name__ == "__main__":
    main()
