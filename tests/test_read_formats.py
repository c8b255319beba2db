"""MDF4 and HDF5 logs read through the same reader as CSV: files written here by the tests.

The same samples written to CSV (17 significant digits, so exact), to an MDF4 file
(ASAM MCD-2 MDF 4.1, by asammdf) and to HDF5 (by h5py, both layouts) must give the same
cycle table to 1e-9.
"""

import json
import math

import h5py
import numpy as np
import pytest
from asammdf import MDF, Signal
from click.testing import CliRunner

from torqlog.cli import cli
from torqlog.errors import DataError
from torqlog.io.ingest import LogReader
from torqlog.signal.cycles import analyse_cycles

FS, RPM, SECONDS = 500.0, 60.0, 12.0


def _samples():
    t = np.arange(0, SECONDS, 1 / FS)
    th = RPM * 2 * math.pi / 60 * t
    rng = np.random.default_rng(3)
    torque_knm = 1.0 + 0.5 * np.sin(2 * th) + rng.normal(0, 0.01, t.size)
    speed_rpm = RPM * (1 + 0.04 * np.sin(th))
    return t, torque_knm, speed_rpm


def _csv(tmp_path):
    t, q, n = _samples()
    p = tmp_path / "log.csv"
    np.savetxt(p, np.column_stack([t, q, n]), delimiter=",", fmt="%.17g",
               header="Time [s],Torque [kN*m],Speed [rpm]", comments="")
    return p


def _mdf(tmp_path, with_slow_group=True, names=("Torque", "Speed")):
    t, q, n = _samples()
    m = MDF(version="4.10")
    if with_slow_group:  # a slow group first: the reader must pick the right one
        m.append([Signal(np.full(t[::50].size, 41.0), t[::50], name="OilTemp", unit="degC")],
                 comment="slow")
    m.append([Signal(q, t, name=names[0], unit="kN*m"),
              Signal(n, t, name=names[1], unit="rpm")], comment="drive")
    p = tmp_path / "log.mf4"
    m.save(p, overwrite=True)
    m.close()
    return p


def _hdf_datasets(tmp_path):
    t, q, n = _samples()
    p = tmp_path / "log.h5"
    with h5py.File(p, "w") as f:
        f.attrs["machine"] = "Press 4, Brindlemoor Works"
        g = f.create_group("rig/log")
        for name, data, unit in (("time", t, "s"), ("torque", q, "kN*m"),
                                 ("speed", n, "rpm")):
            g.create_dataset(name, data=data, chunks=True).attrs["unit"] = unit
        f.create_dataset("rig/notes_len", data=np.arange(3))
    return p


def _hdf_table(tmp_path):
    t, q, n = _samples()
    rows = np.zeros(t.size, dtype=[("t", "f8"), ("shaft_torque", "f8"), ("shaft_speed", "f8")])
    rows["t"], rows["shaft_torque"], rows["shaft_speed"] = t, q, n
    p = tmp_path / "table.hdf5"
    with h5py.File(p, "w") as f:
        ds = f.create_dataset("log", data=rows, chunks=True)
        ds.attrs["units"] = ["s", "kN*m", "rpm"]
    return p


def _table(path, **kw):
    return analyse_cycles(str(path), **kw).table


@pytest.mark.parametrize("writer", [_mdf, _hdf_datasets, _hdf_table])
def test_same_cycle_table_as_csv(tmp_path, writer):
    ref = _table(_csv(tmp_path))
    got = _table(writer(tmp_path), **({"roles": {"time": "t"}} if writer is _hdf_table
                                      else {}))
    assert len(ref) == len(got) >= 10
    num = [c for c in ref.columns if ref[c].dtype.kind == "f"]
    assert "energy_swing_J" in num and "cs" in num
    for c in num:
        np.testing.assert_allclose(got[c].to_numpy(), ref[c].to_numpy(), rtol=1e-9,
                                   atol=1e-9, err_msg=c)


def test_reader_streams_in_bounded_chunks(tmp_path):
    chunks = list(LogReader(_hdf_datasets(tmp_path), block_rows=1000))
    assert [len(c) for c in chunks] == [1000] * 6
    assert chunks[1].channels["torque"][0] == pytest.approx(1e3 * _samples()[1][1000])
    chunks = list(LogReader(_mdf(tmp_path), block_rows=1000))
    assert sum(len(c) for c in chunks) == 6000 and max(len(c) for c in chunks) == 1000


def test_file_without_torque_or_speed_is_refused_naming_its_channels(tmp_path):
    p = _mdf(tmp_path, names=("Pressure", "Flow"))
    with pytest.raises(DataError) as err:
        LogReader(p)
    assert str(err.value) == (
        f"{p}: no torque or speed channel found; the file has group 0 'slow': "
        "OilTemp [degC]; group 1 'drive': Pressure [kN*m], Flow [rpm]; name the channels "
        "with --torque CH and --speed CH")
    h = tmp_path / "empty.h5"
    with h5py.File(h, "w") as f:
        f.create_dataset("log/pressure", data=np.zeros(10)).attrs["unit"] = "bar"
    with pytest.raises(DataError, match="group /log: pressure \\[bar\\]; name the"):
        LogReader(h)


def test_inspect_says_which_groups_were_found_and_used(tmp_path):
    res = CliRunner().invoke(cli, ["inspect", str(_mdf(tmp_path)), "--format", "json"])
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    assert d["format"] == "mdf4"
    assert d["preamble"]["groups found"] == ("group 0 'slow': OilTemp [degC]; group 1 "
                                             "'drive': Torque [kN*m], Speed [rpm]")
    assert d["preamble"]["group used"] == "group 1 'drive'"
    assert [(c["name"], c["role"], c["unit_source"]) for c in d["columns"]] == [
        ("time", "time", "file metadata"), ("Torque", "torque", "file metadata"),
        ("Speed", "speed", "file metadata")]
    res = CliRunner().invoke(cli, ["inspect", str(_hdf_datasets(tmp_path))])
    assert "group used: group /rig/log" in res.stdout
    assert "machine: Press 4, Brindlemoor Works" in res.stdout


def test_inspect_labels_the_readers_own_entries_for_people(tmp_path):
    # no internal key names ("mdf group", "hdf path", "hdf kind") in what inspect shows
    d = json.loads(CliRunner().invoke(
        cli, ["inspect", str(_mdf(tmp_path)), "--format", "json"]).stdout)
    assert {k: d["preamble"][k] for k in ("channel group number", "rows in the group")} == {
        "channel group number": "1", "rows in the group": "6000"}
    d = json.loads(CliRunner().invoke(
        cli, ["inspect", str(_hdf_table(tmp_path)), "--format", "json"]).stdout)
    assert {k: d["preamble"][k] for k in ("location in the file", "stored as",
                                          "rows in the group")} == {
        "location in the file": "/log", "stored as": "one table (compound dataset)",
        "rows in the group": "6000"}
    text = CliRunner().invoke(cli, ["inspect", str(_hdf_datasets(tmp_path))]).stdout
    assert "stored as: one dataset per channel" in text
    assert not any(k in text for k in ("mdf group", "hdf path", "hdf kind"))


@pytest.mark.parametrize("writer", [_mdf, _hdf_datasets, _hdf_table])
def test_progress_counts_rows_read_of_the_rows_the_file_states(tmp_path, writer):
    reader = LogReader(writer(tmp_path), block_rows=1500, read_ahead=False)
    assert reader.fraction_read() == 0.0
    seen = [reader.fraction_read() for _ in reader]
    # 6000 rows in chunks of 1500: a quarter more per chunk; the readers' own blocks
    # (65 536 HDF5 rows, 1 MiB MDF fragments) may run ahead of the chunk handed out
    assert seen[-1] == 1.0 and len(seen) == 4
    assert all(0.25 * (i + 1) <= f <= 1.0 for i, f in enumerate(seen))
    assert seen == sorted(seen)
