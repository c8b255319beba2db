"""Property test: damaged logs never cause a traceback or touch the input.

Random truncations and byte corruptions of a small CSV, CSV.gz and Parquet log (a
simulated press of the invented Brindlemoor Works) are fed to ``inspect`` and ``cycles``.
Whatever the damage, the run ends with exit 0 (the damage left a readable log), 1 (bad
data) or 2 (bad usage), one ``Error:`` sentence and no traceback, never an "unexpected"
error, and every input file keeps its hash. A larger seeded campaign with counts by
outcome is ``benchmarks/hostile_inputs.py``.
"""

from __future__ import annotations

import hashlib
from pathlib import Path

import pytest
from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from torqlog.cli import cli

FORMATS = ("v.csv", "v.csv.gz", "v.parquet")


def corrupt(data: bytes, kind: str, where: float, value: int) -> bytes:
    """Damage ``data``: ``truncate`` keeps the first ``where`` share of it; ``flip``
    overwrites the byte at ``where`` with ``value``; ``burst`` overwrites 64 bytes from
    there with ``value``."""
    at = min(int(where * len(data)), len(data) - 1)
    if kind == "truncate":
        return data[:at]
    if kind == "flip":
        return data[:at] + bytes([value]) + data[at + 1:]
    return data[:at] + bytes([value]) * 64 + data[at + 64:]


def run_damaged(folder: Path, source: Path, kind: str, where: float, value: int,
                command: str) -> tuple[int, str, bool]:
    """Write a damaged copy of ``source`` into ``folder`` and run ``command`` on it.

    Returns the exit code, stderr, and whether the damaged input kept its hash.
    """
    bad = folder / source.name
    bad.write_bytes(corrupt(source.read_bytes(), kind, where, value))
    before = hashlib.sha256(bad.read_bytes()).hexdigest()
    res = CliRunner().invoke(cli, [command, str(bad)])
    assert res.exception is None or isinstance(res.exception, SystemExit), \
        f"{type(res.exception).__name__}: {res.exception}"
    kept = hashlib.sha256(bad.read_bytes()).hexdigest() == before
    return res.exit_code, res.stderr, kept


@pytest.fixture(scope="module")
def sources(tmp_path_factory):
    from torqlog.demo.simulate import simulate, write_log

    d = tmp_path_factory.mktemp("clean")
    log = simulate("press", duration=4, rate=200, channels="torque,speed", seed=1)
    return {name: write_log(log, d / name) for name in FORMATS}


@settings(derandomize=True, deadline=None, max_examples=60,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(fmt=st.sampled_from(FORMATS), kind=st.sampled_from(["truncate", "flip", "burst"]),
       where=st.floats(0.0, 1.0), value=st.integers(0, 255),
       command=st.sampled_from(["inspect", "cycles"]))
def test_damaged_logs_end_in_one_sentence_and_stay_untouched(sources, tmp_path_factory, fmt,
                                                              kind, where, value, command):
    folder = tmp_path_factory.mktemp("bad")
    code, err, kept = run_damaged(folder, sources[fmt], kind, where, value, command)
    assert kept
    assert code in (0, 1, 2), err
    assert "Traceback" not in err and "unexpected" not in err, err
    if code:
        assert err.startswith("Error: ") and err.count("Error: ") == 1, err
