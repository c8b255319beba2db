"""Memory and time of reading MDF4 and HDF5 logs of two lengths with torqlog's reader.

Writes a 3-channel log (time, torque, speed) of N and 4N rows in each format into a
temporary folder, then reads each in a fresh process with :class:`torqlog.io.ingest.LogReader`
(and the full cycle analysis) and reports the peak resident memory (``ru_maxrss``) and the
wall time. Streaming means the peak memory stays flat when the file grows fourfold.

Usage: ``nice python benchmarks/read_formats.py [N]`` (default N = 1 000 000).
"""

import json
import math
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np

CHILD = r"""
import json, resource, sys, time
from torqlog.signal.cycles import analyse_cycles
t0 = time.perf_counter()
res = analyse_cycles(sys.argv[1])
dt = time.perf_counter() - t0
print(json.dumps({"cycles": int(res.summary["cycles"]), "seconds": dt,
                  "peak_MB": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024}))
"""


def samples(n: int, fs: float = 10_000.0) -> tuple[np.ndarray, ...]:
    t = np.arange(n) / fs
    th = 45.0 * 2 * math.pi / 60 * t
    return t, 1.0 + 0.5 * np.sin(2 * th), 45.0 * (1 + 0.05 * np.sin(th))


def write_hdf(path: Path, n: int) -> None:
    import h5py

    t, q, s = samples(n)
    with h5py.File(path, "w") as f:
        g = f.create_group("log")
        for name, data, unit in (("time", t, "s"), ("torque", q, "kN*m"), ("speed", s, "rpm")):
            g.create_dataset(name, data=data, chunks=(65536,)).attrs["unit"] = unit


def write_mdf(path: Path, n: int) -> None:
    from asammdf import MDF, Signal

    t, q, s = samples(n)
    m = MDF(version="4.10")
    m.append([Signal(q, t, name="Torque", unit="kN*m"), Signal(s, t, name="Speed",
                                                              unit="rpm")])
    m.save(path, overwrite=True)
    m.close()


def main() -> None:
    if sys.argv[1:2] == ["--write"]:
        _, _, fmt, path, rows_n = sys.argv
        (write_hdf if fmt == "hdf5" else write_mdf)(Path(path), int(rows_n))
        return
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    with tempfile.TemporaryDirectory() as tmp:
        rows = []
        for fmt, suffix in (("hdf5", ".h5"), ("mdf4", ".mf4")):
            for rows_n in (n, 4 * n):
                p = Path(tmp) / f"log_{rows_n}{suffix}"
                # written by a process of its own, which has ended before the read starts
                subprocess.run([sys.executable, __file__, "--write", fmt, str(p), str(rows_n)],
                               check=True)
                out = subprocess.run([sys.executable, "-c", CHILD, str(p)], check=True,
                                     capture_output=True, text=True).stdout
                rows.append({"format": fmt, "rows": rows_n,
                             "file_MB": p.stat().st_size / 1e6, **json.loads(out)})
                p.unlink()
        for r in rows:
            print(f"{r['format']:5} {r['rows']:>10} rows {r['file_MB']:8.1f} MB file  "
                  f"{r['cycles']:6} cycles  {r['seconds']:6.2f} s  peak {r['peak_MB']:7.1f} MB")


if __name__ == "__main__":
    main()
