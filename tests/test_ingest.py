"""Reading logger exports: every dialect, from files written here, into SI arrays.

Every file below is written by the test with known values; the expected SI numbers come
from those values and published conversion factors:

[NIST] A. Thompson and B. N. Taylor, *Guide for the Use of the International System of
    Units (SI)*, NIST SP 811 (2008), App. B: 1 lbf·ft = 1.355818 N·m, 1 kgf·m = 9.80665 N·m,
    1 rpm = 2π/60 rad/s = 0.1047198 rad/s, 1° = π/180 rad = 0.01745329 rad; SI prefixes
    (k = 1e3, m = 1e-3) exact (sec. 4.3).
[ISO8601] ISO 8601-1:2019, date-time with and without a UTC offset (``Z``, ``+01:00``).
[RFC4180] RFC 4180, quoted fields in comma-separated files.
"""

import gzip
import math
import os
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from torqlog.errors import DataError, UsageError
from torqlog.io.ingest import LogReader, read_log, sniff_layout

LBF_FT = 1.355818  # [NIST] App. B
KGF_M = 9.80665  # [NIST] App. B
RPM = 0.1047198  # [NIST] App. B
DEG = 0.01745329  # [NIST] App. B
NIST_REL = 5e-7  # the factors above carry seven significant digits

# One small log used across dialects: time [s], torque [N·m], speed [rpm]
T = [0.0, 0.001, 0.002, 0.003]
TQ = [1.5, -2.25, 3.0, 1250.5]
SP = [100.0, 101.5, 99.25, 100.0]


def write(tmp_path, name, text, encoding="utf-8"):
    p = tmp_path / name
    data = text.encode(encoding) if isinstance(text, str) else text
    if name.endswith(".gz"):
        data = gzip.compress(data)
    p.write_bytes(data)
    return p


def read_error(tmp_path, name, text, error=DataError, **options):
    """Write ``text`` to ``name`` and read it; the file and the message of the ``error``
    the reader raises."""
    p = write(tmp_path, name, text)
    with pytest.raises(error) as err:
        read_log(p, **options)
    return p, str(err.value)


def rows(delim=",", decimal=".", t=T, tq=TQ, sp=SP):
    out = []
    for a, b, c in zip(t, tq, sp, strict=True):
        out.append(delim.join(repr(float(x)).replace(".", decimal) for x in (a, b, c)))
    return "\n".join(out) + "\n"


def check_standard(rec, torque_factor=1.0, time_factor=1.0):
    """The log above read back: time from 0, torque and speed in SI [NIST]."""
    np.testing.assert_allclose(rec.time, np.array(T) * time_factor, rtol=1e-12, atol=1e-15)
    np.testing.assert_allclose(rec.channels["torque"], np.array(TQ) * torque_factor,
                               rtol=NIST_REL)
    np.testing.assert_allclose(rec.channels["speed"], np.array(SP) * RPM, rtol=NIST_REL)
    assert sorted(rec.channels) == ["speed", "torque"]
    assert len(rec) == 4


# ----------------------------------------------------------------------- delimiters
@pytest.mark.parametrize(("delim", "name"), [(",", "comma"), (";", "semicolon"),
                                             ("\t", "tab")])
def test_delimiters(tmp_path, delim, name):
    header = delim.join(["time_s", "torque_Nm", "speed_rpm"])
    p = write(tmp_path, f"{name}.csv", header + "\n" + rows(delim))
    rec = read_log(p)
    check_standard(rec)
    assert rec.layout.delimiter == delim
    assert rec.layout.decimal == "."
    assert [(c.role, c.unit, c.unit_source) for c in rec.layout.columns] == [
        ("time", "s", "header"), ("torque", "Nm", "header"), ("speed", "rpm", "header")]


def test_decimal_comma_with_semicolons(tmp_path):
    p = write(tmp_path, "dec.csv", "time_s;torque_Nm;speed_rpm\n" + rows(";", ","))
    rec = read_log(p)
    check_standard(rec)
    assert (rec.layout.delimiter, rec.layout.decimal) == (";", ",")


def test_decimal_comma_with_exponent_and_sign(tmp_path):
    p = write(tmp_path, "exp.csv", "time_s;torque_Nm\n0;-1,5e3\n0,5;+2,25E-1\n1;3\n")
    rec = read_log(p)
    np.testing.assert_array_equal(rec.channels["torque"], [-1500.0, 0.225, 3.0])
    np.testing.assert_array_equal(rec.time, [0.0, 0.5, 1.0])


def test_quoted_header(tmp_path):
    # [RFC4180] quoted fields; units in brackets inside the quotes
    p = write(tmp_path, "quoted.csv", '"Time [s]","Torque [kN·m]","Speed [rpm]"\n' + rows())
    rec = read_log(p)
    check_standard(rec, torque_factor=1e3)  # kilo, exact [NIST] sec. 4.3
    assert [c.name for c in rec.layout.columns] == ["Time [s]", "Torque [kN·m]",
                                                    "Speed [rpm]"]


def test_crlf_line_ends(tmp_path):
    p = write(tmp_path, "crlf.csv",
              ("time_s,torque_Nm,speed_rpm\n" + rows()).replace("\n", "\r\n"))
    check_standard(read_log(p))


# ----------------------------------------------------------------------- preamble
PREAMBLE = "Logger: Brindlemoor Works DAQ-7\nStart: 2026-03-02 06:00:00\nRate: 5000 Hz\n"


def test_preamble_unit_row_and_sample_index(tmp_path):
    text = (PREAMBLE + "Sample,Torque,Speed\n-,kN*m,rpm\n"
            + "".join(f"{k},{v},{s}\n" for k, v, s in zip(range(4), TQ, SP, strict=True)))
    p = write(tmp_path, "pre.csv", text)
    rec = read_log(p)
    lay = rec.layout
    assert lay.preamble == {"Logger": "Brindlemoor Works DAQ-7",
                            "Start": "2026-03-02 06:00:00", "Rate": "5000 Hz"}
    assert lay.rate == 5000.0
    assert rec.rate == 5000.0
    assert rec.start == pd.Timestamp("2026-03-02 06:00:00")
    assert lay.time_kind == "index"
    assert lay.skip_rows == 5
    # time = sample number / rate
    np.testing.assert_allclose(rec.time, np.arange(4) / 5000.0, rtol=1e-12)
    np.testing.assert_allclose(rec.channels["torque"], np.array(TQ) * 1e3, rtol=1e-12)
    np.testing.assert_allclose(rec.channels["speed"], np.array(SP) * RPM, rtol=NIST_REL)
    assert [(c.name, c.role, c.unit, c.unit_source) for c in lay.columns] == [
        ("Sample", "time", "sample", "header"), ("Torque", "torque", "kN*m", "unit row"),
        ("Speed", "speed", "rpm", "unit row")]


def test_preamble_with_blank_lines_decimal_comma_and_unit_row(tmp_path):
    text = (PREAMBLE.replace("\n", "\n\n") + "time;torque;speed\ns;lbf*ft;rpm\n"
            + rows(";", ","))
    rec = read_log(write(tmp_path, "pre2.csv", text))
    check_standard(rec, torque_factor=LBF_FT)  # [NIST] App. B
    assert rec.start == pd.Timestamp("2026-03-02 06:00:00")
    assert rec.layout.rate == 5000.0  # stated, even though the time column is in seconds


def test_latin1_preamble_with_byte_0x85_keeps_every_row(tmp_path):
    # 0x85 is "…" in Windows-1252 exports; read as Latin-1 it is U+0085, which Python's
    # str.splitlines() treats as a line end but a CSV reader does not. No row may be lost.
    text = "Logger: Brindlemoor\x85 line B\nRate: 1000 Hz\ntime_s,torque_Nm,speed_rpm\n" + rows()
    rec = read_log(write(tmp_path, "nel.csv", text, encoding="latin-1"))
    check_standard(rec)
    assert rec.layout.preamble["Rate"] == "1000 Hz"


# ----------------------------------------------------------------------- units in the header
@pytest.mark.parametrize(("header", "role", "values", "si"), [
    ("Torque [kN·m]", "torque", [1.0, 2.5], [1e3, 2.5e3]),               # [NIST] 4.3
    ("torque (lbf*ft)", "torque", [1.0, 2.5], [LBF_FT, 2.5 * LBF_FT]),   # [NIST] App. B
    ("Torque [kgf·m]", "torque", [1.0, 2.0], [KGF_M, 2 * KGF_M]),        # [NIST] App. B
    ("Speed_rpm", "speed", [60.0, 120.0], [60 * RPM, 120 * RPM]),        # [NIST] App. B
    ("speed [rad/s]", "speed", [1.5, 3.0], [1.5, 3.0]),
    ("angle [deg]", "angle", [90.0, 180.0], [90 * DEG, 180 * DEG]),      # [NIST] App. B
    ("crank angle [°]", "angle", [90.0, 360.0], [90 * DEG, 360 * DEG]),
])
def test_units_in_header(tmp_path, header, role, values, si):
    text = f"time [s],{header}\n0,{values[0]}\n0.5,{values[1]}\n"
    rec = read_log(write(tmp_path, "u.csv", text))
    np.testing.assert_allclose(rec.channels[role], si, rtol=NIST_REL)
    col = rec.layout.column(role)
    assert col.name == header
    assert col.unit_source == "header"
    assert col.factor == pytest.approx(si[0] / values[0], rel=NIST_REL)


def test_foreign_names_need_the_role_option(tmp_path):
    text = "Zeit [s];Drehmoment [kN·m];Drehzahl [1/min]\n0;1,5;100\n0,001;2,5;101\n"
    p, msg = read_error(tmp_path, "de.csv", text)
    assert msg == (
        f"{p}: no torque, speed, angle, index or counts column found among Zeit [s], "
        "Drehmoment [kN·m], Drehzahl [1/min]; name them with --torque COL, --speed COL, ...")
    # the full header text, or the name without its unit, selects the column
    for name in ("Drehmoment [kN·m]", "Drehmoment"):
        rec = read_log(p, roles={"torque": name, "speed": "Drehzahl"})
        np.testing.assert_allclose(rec.channels["torque"], [1500.0, 2500.0], rtol=1e-12)
        np.testing.assert_allclose(rec.channels["speed"], [100 * RPM, 101 * RPM],
                                   rtol=NIST_REL)
        np.testing.assert_allclose(rec.time, [0.0, 0.001], rtol=1e-12)


def test_role_option_naming_a_missing_column(tmp_path):
    p, msg = read_error(tmp_path, "de.csv", "Zeit [s];Drehmoment\n0;1\n1;2\n", UsageError,
                        roles={"torque": "Moment"})
    assert msg == f"--torque 'Moment': no such column in {p}; columns are: Zeit [s], Drehmoment"


# ----------------------------------------------------------------------- time bases
@pytest.mark.parametrize("header", ["time [ms]", "time_ms", "Time (ms)"])
def test_milliseconds_from_the_unit(tmp_path, header):
    text = f"{header},torque_Nm,speed_rpm\n" + rows(t=[0, 1, 2, 3])
    rec = read_log(write(tmp_path, "ms.csv", text))
    check_standard(rec)  # 1 ms = 1e-3 s [NIST] sec. 4.3
    assert rec.layout.column("time").factor == pytest.approx(1e-3, rel=1e-12)


def test_milliseconds_from_a_unit_row(tmp_path):
    text = "time,torque,speed\nms,N*m,rpm\n" + rows(t=[0, 1, 2, 3])
    rec = read_log(write(tmp_path, "ms2.csv", text))
    check_standard(rec)
    assert rec.layout.column("time").unit_source == "unit row"


@pytest.mark.parametrize(("stamps", "start"), [
    # [ISO8601] local time without offset
    (["2026-03-02T06:00:00.000", "2026-03-02T06:00:00.001", "2026-03-02T06:00:00.002",
      "2026-03-02T06:00:00.003"], pd.Timestamp("2026-03-02 06:00:00")),
    # space instead of T
    (["2026-03-02 06:00:00.000", "2026-03-02 06:00:00.001", "2026-03-02 06:00:00.002",
      "2026-03-02 06:00:00.003"], pd.Timestamp("2026-03-02 06:00:00")),
    # [ISO8601] with a UTC offset
    (["2026-03-02T06:00:00.000+01:00", "2026-03-02T06:00:00.001+01:00",
      "2026-03-02T06:00:00.002+01:00", "2026-03-02T06:00:00.003+01:00"],
     pd.Timestamp("2026-03-02 05:00:00", tz="UTC")),
    # [ISO8601] UTC designator Z
    (["2026-03-02T06:00:00.000Z", "2026-03-02T06:00:00.001Z", "2026-03-02T06:00:00.002Z",
      "2026-03-02T06:00:00.003Z"], pd.Timestamp("2026-03-02 06:00:00", tz="UTC")),
])
def test_iso_timestamps(tmp_path, stamps, start):
    text = "timestamp,torque_Nm,speed_rpm\n" + "".join(
        f"{s},{a},{b}\n" for s, a, b in zip(stamps, TQ, SP, strict=True))
    rec = read_log(write(tmp_path, "iso.csv", text))
    check_standard(rec)
    assert rec.layout.time_kind == "timestamp"
    assert rec.start == start
    assert rec.layout.column("time").unit == "ISO-8601"


def test_iso_timestamps_with_offset_in_a_later_column(tmp_path):
    text = "torque_Nm,timestamp\n1,2026-03-02T06:00:00.000-05:00\n2,2026-03-02T06:00:00.250-05:00\n"
    rec = read_log(write(tmp_path, "iso2.csv", text))
    np.testing.assert_allclose(rec.time, [0.0, 0.25], rtol=1e-12)
    assert rec.start == pd.Timestamp("2026-03-02 11:00:00", tz="UTC")


def test_sample_index_with_rate_option(tmp_path):
    p, msg = read_error(tmp_path, "idx.csv", "sample,torque_Nm\n0,1\n1,2\n2,3\n")
    assert msg == (f"{p}: time column 'sample' is a sample number and no rate is given; "
                   "give --rate HZ or a 'Rate: ... Hz' line")
    rec = read_log(p, rate=2000.0)
    np.testing.assert_allclose(rec.time, [0.0, 0.0005, 0.001], rtol=1e-12)
    assert rec.rate == 2000.0


def test_no_time_column_with_rate(tmp_path):
    p = write(tmp_path, "notime.csv", "torque_Nm,speed_rpm\n1,60\n2,60\n3,60\n")
    rec = read_log(p, rate=100.0)
    assert rec.layout.time_kind == "none"
    np.testing.assert_allclose(rec.time, [0.0, 0.01, 0.02], rtol=1e-12)
    np.testing.assert_allclose(rec.channels["speed"], [60 * RPM] * 3, rtol=NIST_REL)


def test_start_option_overrides_the_file(tmp_path):
    p = write(tmp_path, "pre.csv", PREAMBLE + "time_s,torque_Nm\n0,1\n1,2\n")
    assert read_log(p).start == pd.Timestamp("2026-03-02 06:00:00")
    assert read_log(p, start="2026-03-03T14:00:00").start == pd.Timestamp("2026-03-03 14:00")


# ----------------------------------------------------------------------- overrides
def test_every_role_and_unit_overridable(tmp_path):
    text = "a,b,c,d,e,f\n" + "".join(
        f"{k * 2},{k},{60 + k},{90 * k},{int(k == 2)},{10 * k}\n" for k in range(4))
    p = write(tmp_path, "plain.csv", text)
    roles = {"time": "a", "torque": "b", "speed": "c", "angle": "d", "index": "e",
             "counts": "f"}
    units = {"time": "ms", "torque": "kgf*m", "speed": "rpm", "angle": "deg"}
    rec = read_log(p, roles=roles, units=units)
    k = np.arange(4.0)
    np.testing.assert_allclose(rec.time, 2 * k * 1e-3, rtol=1e-12)
    np.testing.assert_allclose(rec.channels["torque"], k * KGF_M, rtol=1e-12)   # [NIST]
    np.testing.assert_allclose(rec.channels["speed"], (60 + k) * RPM, rtol=NIST_REL)
    np.testing.assert_allclose(rec.channels["angle"], 90 * k * DEG, rtol=NIST_REL)
    np.testing.assert_array_equal(rec.channels["index"], [0, 0, 1, 0])
    np.testing.assert_array_equal(rec.channels["counts"], 10 * k)
    assert [(c.name, c.role, c.unit, c.unit_source) for c in rec.layout.columns] == [
        ("a", "time", "ms", "option"), ("b", "torque", "kgf*m", "option"),
        ("c", "speed", "rpm", "option"), ("d", "angle", "deg", "option"),
        ("e", "index", "", ""), ("f", "counts", "", "")]


def test_unit_option_overrides_the_header(tmp_path):
    p = write(tmp_path, "h.csv", "time [s],torque [kN·m]\n0,2\n1,4\n")
    rec = read_log(p, units={"torque": "lbf*ft"})
    np.testing.assert_allclose(rec.channels["torque"], [2 * LBF_FT, 4 * LBF_FT], rtol=NIST_REL)


def test_roles_detected_from_names(tmp_path):
    p = write(tmp_path, "names.csv",
              "Time [s],Torque [N·m],Speed [rpm],Crank angle [deg],TDC pulse,Encoder counts,"
              "Oil temp [degC]\n0,1,60,0,1,0,40\n0.01,2,60,3.6,0,1,40\n")
    lay = sniff_layout(p)
    assert [c.role for c in lay.columns] == ["time", "torque", "speed", "angle", "index",
                                             "counts", None]
    assert lay.roles == ("torque", "speed", "angle", "index", "counts")


def test_unknown_role_and_bad_unit_option(tmp_path):
    p = write(tmp_path, "h.csv", "time_s,torque_Nm\n0,1\n1,2\n")
    with pytest.raises(UsageError) as err:
        read_log(p, roles={"force": "torque_Nm"})
    assert str(err.value) == ("unknown channel role 'force'; valid: time, torque, speed, "
                              "angle, index, counts")
    with pytest.raises(UsageError) as err:
        read_log(p, units={"torque": "blorp"})
    assert str(err.value) == ("--torque-unit: unknown unit 'blorp' for torque; write it as "
                              "e.g. 'kN*m'")


def test_unknown_unit_in_header_names_it(tmp_path):
    p, msg = read_error(tmp_path, "bad.csv", "time [s],torque [blorp]\n0,1\n1,2\n")
    assert msg == (f"{p}: column 'torque [blorp]': unknown unit 'blorp' for torque; write it "
                   "as e.g. 'kN*m'; fix the header or give --torque-unit")


# ----------------------------------------------------------------------- containers, encodings
def test_gzip(tmp_path):
    p = write(tmp_path, "log.csv.gz", "time_s;torque_Nm;speed_rpm\n" + rows(";", ","))
    check_standard(read_log(p))


def test_parquet_numbers(tmp_path):
    p = tmp_path / "log.parquet"
    pd.DataFrame({"time_s": T, "torque_kNm": TQ, "speed_rpm": SP}).to_parquet(p)
    rec = read_log(p)
    check_standard(rec, torque_factor=1e3)
    assert rec.layout.kind == "parquet"


def test_parquet_timestamps(tmp_path):
    p = tmp_path / "ts.parquet"
    stamps = pd.date_range("2026-03-02 06:00", periods=4, freq="1ms", tz="UTC")
    pd.DataFrame({"timestamp": stamps, "Torque [lbf·ft]": TQ, "Speed [rpm]": SP}).to_parquet(p)
    rec = read_log(p)
    check_standard(rec, torque_factor=LBF_FT)
    assert rec.layout.time_kind == "timestamp"
    assert rec.start == pd.Timestamp("2026-03-02 06:00", tz="UTC")


def test_parquet_text_in_a_numeric_column(tmp_path):
    p = tmp_path / "txt.parquet"
    pd.DataFrame({"time_s": T, "torque_Nm": ["1", "2", "n/a?", "4"]}).to_parquet(p)
    with pytest.raises(DataError) as err:
        read_log(p)
    assert str(err.value) == (f"{p}: row 3, column 'torque_Nm': 'n/a?' is not a number; fix "
                              "the value or remove the row")


def test_utf8_bom(tmp_path):
    p = write(tmp_path, "bom.csv", "\ufeff" + '"Time [s]",Torque [N·m],Speed_rpm\n' + rows())
    rec = read_log(p)
    check_standard(rec)
    assert rec.layout.columns[0].name == "Time [s]"


def test_latin1_degree_sign(tmp_path):
    text = "time [s];torque [N*m];angle [°]\n0;1,5;90\n0,5;2;180\n"
    rec = read_log(write(tmp_path, "l1.csv", text, encoding="latin-1"))
    assert rec.layout.encoding == "latin1"
    assert rec.layout.column("angle").name == "angle [°]"
    np.testing.assert_allclose(rec.channels["angle"], [90 * DEG, 180 * DEG], rtol=NIST_REL)
    np.testing.assert_allclose(rec.channels["torque"], [1.5, 2.0], rtol=1e-12)


def test_latin1_degree_sign_in_a_unit_row(tmp_path):
    text = "time;torque;angle\ns;kN·m;°\n0;1;90\n1;2;180\n"
    rec = read_log(write(tmp_path, "l2.csv", text, encoding="latin-1"))
    np.testing.assert_allclose(rec.channels["angle"], [90 * DEG, 180 * DEG], rtol=NIST_REL)
    np.testing.assert_allclose(rec.channels["torque"], [1e3, 2e3], rtol=1e-12)


def test_missing_values_become_nan(tmp_path):
    p = write(tmp_path, "nan.csv", "time_s,torque_Nm\n0,1\n1,NaN\n2,\n3,4\n")
    rec = read_log(p)
    np.testing.assert_array_equal(np.isnan(rec.channels["torque"]), [False, True, True, False])


# ----------------------------------------------------------------------- bad rows
@pytest.mark.parametrize(("where", "line"), [(0, 2), (1, 3), (150, 152), (299, 301)])
def test_text_in_a_numeric_column_names_line_and_column(tmp_path, where, line):
    data = [f"{k / 1000},{k % 17},{60 + k % 3}" for k in range(300)]
    data[where] = f"{where / 1000},oops,60"
    p, msg = read_error(tmp_path, "txt.csv",
                        "time_s,torque_Nm,speed_rpm\n" + "\n".join(data) + "\n")
    assert msg == (f"{p}: line {line}, column 'torque_Nm': 'oops' is not a number; fix the "
                   "value or remove the row")


def test_unit_row_with_a_dimensionless_1(tmp_path):
    text = "time,torque,speed,pulse\ns,kN*m,rpm,1\n0,1,100,0\n0.1,2,100,1\n0.2,3,100,0\n"
    rec = read_log(write(tmp_path, "u1.csv", text))
    assert [(c.role, c.unit, c.unit_source) for c in rec.layout.columns] == [
        ("time", "s", "unit row"), ("torque", "kN*m", "unit row"), ("speed", "rpm", "unit row"),
        ("index", "1", "unit row")]
    np.testing.assert_allclose(rec.channels["torque"], [1e3, 2e3, 3e3], rtol=1e-12)
    np.testing.assert_array_equal(rec.channels["index"], [0, 1, 0])


def test_text_in_the_first_row_under_a_unit_row(tmp_path):
    text = "time,torque,speed,pulse\ns,kN*m,rpm,1\n0,abc,100,0\n0.1,2,100,1\n0.2,3,100,0\n"
    p, msg = read_error(tmp_path, "u2.csv", text)
    assert msg == (f"{p}: line 3, column 'torque': 'abc' is not a number; fix the value or "
                   "remove the row")


def test_bad_timestamp_names_line(tmp_path):
    text = ("timestamp,torque_Nm\n2026-03-02T06:00:00.000,1\n2026-03-02T06:00:00.001,2\n"
            "later,3\n2026-03-02T06:00:00.003,4\n")
    p, msg = read_error(tmp_path, "ts.csv", text)
    assert msg == (f"{p}: line 4, column 'timestamp': 'later' is not an ISO-8601 timestamp; "
                   "fix the value or remove the row")


def test_row_with_too_few_fields(tmp_path):
    p, msg = read_error(tmp_path, "short.csv",
                        "time_s,torque_Nm,speed_rpm\n0,1,60\n0.1,2\n0.2,3,60\n")
    assert msg == (f"{p}: a row has 2 fields where the header has 3: '0.1,2'; fix or remove "
                   "that row")


# ----------------------------------------------------------------------- chunked reading
def _long_log(tmp_path, n=25_000, name="long.csv"):
    k = np.arange(n)
    t = k / 2000.0
    tq = 1.5 + np.sin(2 * np.pi * 7 * t)
    sp = 600 + 10 * np.cos(2 * np.pi * 7 * t)
    ang = (k * 1.8) % 360
    p = tmp_path / name
    with open(p, "w") as fh:
        fh.write("time_s,Torque [kN·m],speed_rpm,angle [deg]\n")
        np.savetxt(fh, np.c_[t, tq, sp, ang], delimiter=",", fmt="%.9g")
    return p, t, tq, sp, ang


def test_chunked_equals_whole(tmp_path):
    p, t, tq, sp, ang = _long_log(tmp_path)
    whole = read_log(p)
    chunks = list(LogReader(p, block_rows=1000))
    assert len(chunks) == 25
    assert [c.row0 for c in chunks] == list(range(0, 25_000, 1000))
    np.testing.assert_array_equal(np.concatenate([c.time for c in chunks]), whole.time)
    for role in ("torque", "speed", "angle"):
        np.testing.assert_array_equal(np.concatenate([c.channels[role] for c in chunks]),
                                      whole.channels[role])
    # and both equal the numbers written, in SI [NIST]
    np.testing.assert_allclose(whole.time, t, rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(whole.channels["torque"], tq * 1e3, rtol=1e-8)
    np.testing.assert_allclose(whole.channels["speed"], sp * RPM, rtol=NIST_REL)
    np.testing.assert_allclose(whole.channels["angle"], ang * DEG, rtol=NIST_REL, atol=1e-12)


@pytest.mark.parametrize("block_rows", [1, 7, 999, 1000, 4096, 30_000])
def test_chunk_sizes_are_bounded(tmp_path, block_rows):
    p, *_ = _long_log(tmp_path, n=3001)
    sizes = [len(c) for c in LogReader(p, block_rows=block_rows)]
    assert sum(sizes) == 3001
    assert max(sizes) <= block_rows
    # every chunk but the last is full
    assert all(s == block_rows for s in sizes[:-1])


def test_parquet_chunks(tmp_path):
    p = tmp_path / "long.parquet"
    t = np.arange(5000) / 1000
    pd.DataFrame({"time_s": t, "torque_Nm": np.cos(t)}).to_parquet(p, row_group_size=1500)
    chunks = list(LogReader(p, block_rows=700))
    assert max(len(c) for c in chunks) <= 700
    np.testing.assert_array_equal(np.concatenate([c.channels["torque"] for c in chunks]),
                                  np.cos(t))


def test_gzip_chunks(tmp_path):
    p, t, *_ = _long_log(tmp_path, n=5000)
    gz = tmp_path / "long.csv.gz"
    gz.write_bytes(gzip.compress(p.read_bytes()))
    chunks = list(LogReader(gz, block_rows=800))
    assert [len(c) for c in chunks] == [800] * 6 + [200]
    np.testing.assert_array_equal(np.concatenate([c.time for c in chunks]), read_log(p).time)


def test_block_rows_must_be_positive(tmp_path):
    p, *_ = _long_log(tmp_path, n=10)
    with pytest.raises(UsageError) as err:
        LogReader(p, block_rows=0)
    assert str(err.value) == "block_rows must be at least 1, got 0"


@pytest.mark.parametrize("block_rows", [1000, 1001, 50_000])
def test_time_errors_across_chunk_boundaries(tmp_path, block_rows):
    # row 1001 (0-based 1000) repeats the time of row 1000; file line = row + 2 (header)
    t = np.arange(3000) / 1000.0
    t[1000] = t[999]
    p = tmp_path / "dup.csv"
    p.write_text("time_s,torque_Nm\n" + "".join(f"{x:.3f},1\n" for x in t))
    with pytest.raises(DataError) as err:
        read_log(p, block_rows=block_rows)
    assert str(err.value) == (f"{p}: line 1002: timestamp repeats the previous time; sort the "
                              "rows by time and remove duplicates")


# ----------------------------------------------------------------------- property test
TORQUE_UNITS = {"N*m": 1.0, "kN*m": 1e3, "lbf*ft": LBF_FT, "kgf*m": KGF_M}  # [NIST]
SPEED_UNITS = {"rpm": RPM, "rad/s": 1.0}  # [NIST]
ANGLE_UNITS = {"deg": DEG, "rad": 1.0}  # [NIST]
DIALECTS = ["comma", "semicolon", "tab", "decimal-comma", "preamble", "quoted", "gzip",
            "iso", "parquet"]


@st.composite
def logs(draw):
    n = draw(st.integers(min_value=2, max_value=40))
    finite = st.floats(min_value=-1e4, max_value=1e4, allow_nan=False, allow_infinity=False)
    return {
        "dialect": draw(st.sampled_from(DIALECTS)),
        "tu": draw(st.sampled_from(sorted(TORQUE_UNITS))),
        "su": draw(st.sampled_from(sorted(SPEED_UNITS))),
        "au": draw(st.sampled_from(sorted(ANGLE_UNITS))),
        "ms": draw(st.booleans()),
        "dt": draw(st.sampled_from([0.0002, 0.001, 0.0125, 0.5])),
        "torque": draw(st.lists(finite, min_size=n, max_size=n)),
        "speed": draw(st.lists(finite, min_size=n, max_size=n)),
        "angle": draw(st.lists(finite, min_size=n, max_size=n)),
    }


def _write_log(folder, spec):
    """Write ``spec`` in its dialect; return the path and the numbers as written."""
    n = len(spec["torque"])
    tu, su, au = spec["tu"], spec["su"], spec["au"]
    fmt = "{:.6g}".format  # six significant digits: the written precision
    tq = [fmt(x) for x in spec["torque"]]
    sp = [fmt(x) for x in spec["speed"]]
    an = [fmt(x) for x in spec["angle"]]
    written = {"torque": [float(x) for x in tq], "speed": [float(x) for x in sp],
               "angle": [float(x) for x in an]}
    k = np.arange(n)
    times = k * spec["dt"]
    d = spec["dialect"]
    time_unit = "ms" if spec["ms"] else "s"
    tscale = 1e3 if spec["ms"] else 1.0
    tcol = [f"{x * tscale:.10g}" for x in times]
    names = [f"time [{time_unit}]", f"torque [{tu}]", f"speed [{su}]", f"angle [{au}]"]
    delim, dec, pre, suffix = ",", ".", "", ".csv"
    if d == "semicolon":
        delim = ";"
    elif d == "tab":
        delim = "\t"
    elif d == "decimal-comma":
        delim, dec = ";", ","
    elif d == "preamble":
        pre = f"Logger: Brindlemoor Works test rig\nRate: {1 / spec['dt']:.10g} Hz\n"
        names = ["Sample", "Torque", "Speed", "Angle"]
        tcol = [str(i) for i in k]
    elif d == "quoted":
        names = [f'"{x}"' for x in names]
    elif d == "gzip":
        suffix = ".csv.gz"
    elif d == "iso":
        base = pd.Timestamp("2026-03-02T06:00:00")
        names[0] = "timestamp"
        tcol = [(base + pd.Timedelta(seconds=float(x))).isoformat() for x in times]
    if d == "parquet":
        path = Path(folder) / "log.parquet"
        pd.DataFrame({names[0]: [float(x) for x in tcol], names[1]: written["torque"],
                      names[2]: written["speed"], names[3]: written["angle"]}).to_parquet(path)
        return path, written, times
    lines = [delim.join(names)]
    if d == "preamble":
        lines.append(delim.join(["-", tu, su, au]))
    for row in zip(tcol, tq, sp, an, strict=True):
        lines.append(delim.join(x if d == "iso" and i == 0 else x.replace(".", dec)
                                for i, x in enumerate(row)))
    text = pre + "\n".join(lines) + "\n"
    path = Path(folder) / f"log{suffix}"
    data = text.encode()
    path.write_bytes(gzip.compress(data) if suffix.endswith(".gz") else data)
    return path, written, times


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(spec=logs())
def test_written_logs_read_back_in_si(spec):
    with tempfile.TemporaryDirectory() as folder:
        path, written, times = _write_log(folder, spec)
        before = os.stat(path).st_mtime_ns, path.read_bytes()
        rec = read_log(path)
        assert (os.stat(path).st_mtime_ns, path.read_bytes()) == before  # never written to
    factors = {"torque": TORQUE_UNITS[spec["tu"]], "speed": SPEED_UNITS[spec["su"]],
               "angle": ANGLE_UNITS[spec["au"]]}
    for role, f in factors.items():
        expected = np.array(written[role]) * f
        # NIST factors carry 7 digits; values were written to 6
        np.testing.assert_allclose(rec.channels[role], expected, rtol=NIST_REL, atol=1e-12)
    np.testing.assert_allclose(rec.time, times, rtol=1e-9, atol=1e-12)
    assert len(rec) == len(times)
    assert not math.isnan(rec.rate)
