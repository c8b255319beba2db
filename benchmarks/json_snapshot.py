"""Every command's JSON on sample_data/, written to a folder, and two folders compared.

Used to show that a change of layout or a refactor leaves every answer as it was:

    python benchmarks/json_snapshot.py write before/     # on the old tree
    python benchmarks/json_snapshot.py write after/      # on the new tree
    python benchmarks/json_snapshot.py compare before/ after/

``compare`` prints each file that differs and exits 1 when any does. Keys that name the
software version or a temporary path are left out of the comparison.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

ROOT = Path.cwd()  # run from the repository root
S = "sample_data"

#: name -> torqlog arguments (run from the repository root).
RUNS = {
    "inspect_press": ["inspect", f"{S}/press_comma.csv"],
    "inspect_engine": ["inspect", f"{S}/engine_preamble.txt"],
    "cycles_press": ["cycles", f"{S}/press_comma.csv", "--profile", f"{S}/press.toml"],
    "cycles_compressor": ["cycles", f"{S}/compressor_semicolon.csv",
                          "--profile", f"{S}/compressor.toml"],
    "cycles_engine": ["cycles", f"{S}/engine_preamble.txt", "--profile", f"{S}/engine.toml"],
    "cycles_counts": ["cycles", f"{S}/press_counts_iso.csv", "--profile", f"{S}/press.toml"],
    "cycles_gaps": ["cycles", f"{S}/press_gaps_spikes.csv", "--profile", f"{S}/press.toml"],
    "size_press": ["size", f"{S}/press_comma.csv", "--profile", f"{S}/press.toml"],
    "size_compressor": ["size", f"{S}/compressor_semicolon.csv",
                        "--profile", f"{S}/compressor.toml"],
    "size_engine": ["size", f"{S}/engine_preamble.txt", "--profile", f"{S}/engine.toml"],
    "flywheel_press": ["flywheel", "--profile", f"{S}/press.toml", "--inertia", "20"],
    "shaft_press": ["shaft", "--profile", f"{S}/press.toml"],
    "shaft_engine": ["shaft", "--profile", f"{S}/engine.toml"],
    "shaft_engine_log": ["shaft", "--profile", f"{S}/engine.toml", "--log",
                         f"{S}/engine_preamble.txt"],
    "life_press": ["life", f"{S}/press_comma.csv", "--profile", f"{S}/press.toml",
                   "--add-inertia", "150"],
    "trend_press_hour": ["trend", f"{S}/press_counts_iso.csv", "--profile", f"{S}/press.toml",
                         "--by", "hour", "--jobs", "1"],
    "trend_two_files": ["trend", f"{S}/press_counts_iso.csv", f"{S}/engine_preamble.txt",
                        "--by", "file", "--jobs", "1"],
}
IGNORED = {"version", "torqlog_version", "software_version"}


def _clean(obj: object) -> object:
    if isinstance(obj, dict):
        return {k: _clean(v) for k, v in obj.items() if k not in IGNORED}
    if isinstance(obj, list):
        return [_clean(v) for v in obj]
    return obj


def write(folder: Path) -> None:
    folder.mkdir(parents=True, exist_ok=True)
    for name, args in RUNS.items():
        proc = subprocess.run([sys.executable, "-m", "torqlog", *args, "--format", "json"],
                              cwd=ROOT, capture_output=True, text=True)
        out = {"exit": proc.returncode, "stderr": proc.stderr.strip()}
        try:
            out["json"] = _clean(json.loads(proc.stdout)) if proc.stdout.strip() else None
        except json.JSONDecodeError:
            out["stdout"] = proc.stdout
        (folder / f"{name}.json").write_text(json.dumps(out, indent=1, sort_keys=True))
        print(name, "exit", proc.returncode)


def compare(a: Path, b: Path) -> int:
    bad = 0
    for fa in sorted(a.glob("*.json")):
        fb = b / fa.name
        if not fb.exists() or fa.read_text() != fb.read_text():
            bad += 1
            print("differs:", fa.name)
    print(f"{bad} of {len(list(a.glob('*.json')))} differ")
    return 1 if bad else 0


if __name__ == "__main__":
    if sys.argv[1:2] == ["write"]:
        write(Path(sys.argv[2]))
    elif sys.argv[1:2] == ["compare"]:
        sys.exit(compare(Path(sys.argv[2]), Path(sys.argv[3])))
    else:
        sys.exit(__doc__)
