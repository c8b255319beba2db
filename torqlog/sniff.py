"""Sniff a logger export: dialect, preamble, header, unit row, column roles and units.

:func:`sniff_layout` reads the first part of a CSV, CSV.gz or Parquet file once and
returns its :class:`Layout`: delimiter, decimal mark, metadata preamble, header, unit
row, the role of each column (time, torque, speed, angle, index pulse, encoder counts),
its unit and the factor to SI, and how time is given. The streaming reader of
:mod:`torqlog.ingest` reads the data with it.

References
----------
.. [1] A. Thompson and B. N. Taylor, *Guide for the Use of the International System of
   Units (SI)*, NIST SP 811, 2008 (unit conversion factors, applied through pint).
.. [2] ISO 8601-1:2019, *Date and time — Representations for information interchange*.
"""

from __future__ import annotations

import datetime
import gzip
import re
import zlib
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from torqlog.errors import DataError, UsageError
from torqlog.units import is_unit, looks_like_unit_of, si_factor

if TYPE_CHECKING:
    import pandas as pd

#: Channel roles torqlog understands, with the unit kind used to convert each to SI.
#: Channel roles torqlog understands, with the unit kind used to convert each to SI.
ROLES: dict[str, str] = {
    "time": "time",
    "torque": "torque",
    "speed": "speed",
    "angle": "angle",
    "index": "dimensionless",
    "counts": "dimensionless",
}

# Words in a column name that reveal its role (matched against whole words).
_ROLE_WORDS: dict[str, tuple[str, ...]] = {
    "time": ("time", "t", "timestamp", "datetime", "elapsed", "sample", "samples", "zeit"),
    "torque": ("torque", "trq", "tq"),
    "speed": ("speed", "rpm", "omega", "velocity", "revs"),
    "angle": ("angle", "theta", "crank", "crankangle", "phi", "position", "pos"),
    "index": ("index", "once", "tdc", "pulse", "trigger", "marker", "oncerev", "zero"),
    "counts": ("counts", "count", "encoder", "enc", "cnt", "ticks", "counter"),
}
# When several roles match a name, the first in this order wins
# ("Encoder counts" is counts, "Index [V]" is index, "Crank angle" is angle).
_ROLE_ORDER = ("counts", "index", "angle", "torque", "speed", "time")

_DEFAULT_UNITS = {"time": "s", "torque": "N*m", "speed": "rad/s", "angle": "deg",
                  "index": "", "counts": ""}

_DELIMS = (",", ";", "\t")
_NUM = re.compile(r"^\s*[-+]?(\d+([.,]\d*)?|[.,]\d+)([eE][-+]?\d+)?\s*$")
_ISO = re.compile(r"^\s*\d{4}-\d{2}-\d{2}[T ]\d{2}:\d{2}(:\d{2}(\.\d+)?)?(Z|[+-]\d{2}:?\d{2})?\s*$")
_META = re.compile(r"^\s*#?\s*([A-Za-z][\w .()/-]{0,40}?)\s*[:=]\s*(.*?)\s*$")
_BRACKET_UNIT = re.compile(r"^(.*?)\s*[\[(]\s*([^\])]*)\s*[\])]\s*$")
_SNIFF_BYTES = 64 * 1024


@dataclass(frozen=True)
class Column:
    """One column of a log as found in the file.

    Attributes
    ----------
    name : str
        The header text as written.
    role : str or None
        One of :data:`ROLES`, or None for a column torqlog does not use.
    unit : str
        The unit as written (header brackets, suffix or unit row); "" if none.
    unit_source : str
        Where the unit came from: "header", "unit row", "option", "assumed".
    factor : float
        Multiply by this to get SI (1.0 for index and counts).
    """

    name: str
    role: str | None
    unit: str
    unit_source: str
    factor: float


@dataclass(frozen=True)
class Layout:
    """How a file is laid out: everything the streaming reader needs.

    Attributes
    ----------
    path : str
        The file.
    kind : str
        "csv", "parquet", "mdf4" or "hdf5".
    delimiter, decimal : str
        Field delimiter and decimal mark.
    encoding : str
        Text encoding ("utf8", "latin1" or "utf-16").
    skip_rows : int
        Lines before the first data row (preamble, header, unit row).
    columns : tuple of Column
        Every column in file order.
    time_kind : str
        "seconds" (numeric, with unit factor), "timestamp" (ISO-8601), "index" (sample
        number, divided by the rate) or "none" (row number / rate).
    rate : float or None
        Sample rate [Hz] from the preamble or ``--rate``.
    start : pandas.Timestamp or None
        Absolute start time, if the file or options say it.
    preamble : dict
        Metadata key/values found before the header.
    timestamp_tz : bool
        ISO timestamps carry a UTC offset.
    """

    path: str
    kind: str
    delimiter: str
    decimal: str
    encoding: str
    skip_rows: int
    columns: tuple[Column, ...]
    time_kind: str
    rate: float | None
    start: pd.Timestamp | None
    preamble: dict[str, str] = field(default_factory=dict)
    timestamp_tz: bool = False

    def column(self, role: str) -> Column | None:
        """The column carrying ``role``, or None."""
        for c in self.columns:
            if c.role == role:
                return c
        return None

    @property
    def roles(self) -> tuple[str, ...]:
        """Roles present, in file order (time excluded)."""
        return tuple(c.role for c in self.columns if c.role and c.role != "time")


# ----------------------------------------------------------------------------- sniffing
def _read_head(path: Path) -> tuple[str, str, bool]:
    """First bytes of the file as text, the encoding to read it with, and whether the
    text was cut short (the file is longer than the sniff window)."""
    if not path.exists():
        raise DataError(f"{path}: file does not exist; check the path")
    if path.is_dir():
        raise DataError(f"{path}: is a directory, not a log file; give a CSV, CSV.gz or "
                        "Parquet file")
    opener = gzip.open if path.suffix.lower() == ".gz" else open
    try:
        with opener(path, "rb") as fh:
            raw = fh.read(_SNIFF_BYTES)
    except (OSError, EOFError, zlib.error) as exc:
        raise DataError(f"{path}: cannot be read as {'gzip' if opener is gzip.open else 'a file'}"
                        f" ({exc}); check that the file is complete") from None
    if not raw.strip():
        raise DataError(f"{path}: the file is empty; export the log again")
    if raw[:2] in (b"\xff\xfe", b"\xfe\xff"):  # UTF-16 with its byte-order mark
        cut16 = len(raw) >= _SNIFF_BYTES
        try:
            text = raw[: len(raw) // 2 * 2].decode("utf-16", errors="strict")
        except UnicodeDecodeError:
            raise DataError(f"{path}: starts as UTF-16 text but is not valid UTF-16; save "
                            "the export again as UTF-8 CSV") from None
        return text, "utf-16", cut16
    if b"\x00" in raw[:4096]:
        raise DataError(f"{path}: binary content, not a text export; give a CSV, CSV.gz or "
                        "Parquet file")
    try:
        text = raw.decode("utf-8")
        enc = "utf8"
    except UnicodeDecodeError as exc:
        if exc.start > len(raw) - 4:  # a multi-byte character cut by the sniff window
            text, enc = raw[: exc.start].decode("utf-8"), "utf8"
        else:
            text, enc = raw.decode("latin-1"), "latin1"
    if text.startswith("\ufeff"):
        text = text[1:]
    head = text[:4096]
    bad = sum(1 for ch in head if ord(ch) < 32 and ch not in "\r\n\t")
    # bytes 0x80-0x9f read as Latin-1 are control characters: a few are cp1252 text
    # (€, …, quotes), many are binary
    c1 = sum(1 for ch in head if 0x80 <= ord(ch) < 0xA0) if enc == "latin1" else 0
    if bad > 8 or c1 > max(8, len(head) // 50):
        raise DataError(f"{path}: binary content, not a text export; give a CSV, CSV.gz or "
                        "Parquet file")
    return text, enc, len(raw) >= _SNIFF_BYTES


def split_fields(line: str, delimiter: str) -> list[str]:
    """Fields of one text line, stripped of blanks and of quotes around them.

    Parameters
    ----------
    line : str
        One line, without its line end.
    delimiter : str

    Returns
    -------
    list of str
    """
    if '"' in line:  # quoted fields may hold the delimiter ("12,5" in a comma file)
        import csv

        try:
            parts = next(csv.reader([line], delimiter=delimiter), [])
        except csv.Error:
            parts = line.split(delimiter)
    else:
        parts = line.split(delimiter)
    return [f.strip().strip('"').strip("'").strip() for f in parts]


def _is_num(s: str, decimal: str) -> bool:
    if not _NUM.match(s):
        return False
    return decimal == "," or "," not in s


def _is_value(s: str, decimal: str) -> bool:
    s = s.strip()
    return (s == "" or s.lower() in ("nan", "na", "null") or _is_num(s, decimal)
            or bool(_ISO.match(s)))


def _choose_delimiter(lines: list[str]) -> str:
    best, best_score = ",", -1.0
    tail = [ln for ln in lines[-50:] if ln.strip()]
    for d in _DELIMS:
        counts = [ln.count(d) for ln in tail]
        if not counts or max(counts) == 0:
            continue
        mode = max(set(counts), key=counts.count)
        score = counts.count(mode) / len(counts) * (1 + min(mode, 8) / 100)
        if d == "," and ";" in tail[-1]:
            score *= 0.5  # decimal commas inside a ;-delimited file
        if score > best_score:
            best, best_score = d, score
    return best


def _name_and_unit(name: str) -> tuple[str, str]:
    """Split ``"Torque [kN·m]"`` / ``"torque (lbf*ft)"`` into name and unit text."""
    m = _BRACKET_UNIT.match(name)
    if m and m.group(2).strip():
        return m.group(1).strip(), m.group(2).strip()
    return name.strip(), ""


def _words(name: str) -> list[str]:
    return [w for w in re.split(r"[^a-z0-9]+", name.lower()) if w]


def _detect_role(name: str) -> str | None:
    words = _words(name)
    if not words:
        return None
    for role in _ROLE_ORDER:
        if any(w in _ROLE_WORDS[role] for w in words):
            return role
    return None


#: Last words of a column name that are words, not units, though pint may read some
#: of them as one ("in" inch, "min" minute, "a" year): ``speed_in``, ``torque_max``.
_NOT_UNIT_WORDS = frozenset({"mean", "raw", "filt", "filtered", "avg", "max", "min", "rms",
                             "in", "out", "act", "actual", "set", "ref", "cmd", "meas",
                             "motor", "shaft", "crank", "drive", "load", "value", "val",
                             "abs", "pk", "peak", "sum", "std", "a", "b", "c", "x", "y",
                             "z", "l", "r"})


def _suffix_unit(name: str, role: str | None) -> str:
    """Unit given as a name suffix: ``time_s``, ``Speed_rpm``, ``speed_rad_s``.

    A last word that is a unit of another kind (``torque_kg``, ``speed_furlongs``) or a
    misspelt unit of this kind (``torque_kNx``: a torque unit followed by junk) is
    returned too, so that reading the column fails with a message naming it rather than
    taking the values as SI.
    """
    if role is None or role in ("index", "counts"):
        return ""
    parts = name.split("_")
    for k in (2, 1):
        if len(parts) > k:
            cand = "/".join(parts[-k:]) if k == 2 else parts[-1]
            if not cand or cand.lower() in ("mean", "raw", "filt", "1", "2"):
                continue
            try:
                si_factor(cand, ROLES[role])
                return cand
            except UsageError:
                continue
    if len(parts) < 2:
        return ""
    last = parts[-1]
    if (not last or last.lower() in _NOT_UNIT_WORDS or last.isdigit()
            or _words(last) and _detect_role(last)):
        return ""
    if is_unit(last):
        return last  # a unit, but not of this kind: refused by the caller
    return last if looks_like_unit_of(last, ROLES[role]) else ""  # kNx: "kN" then junk


def sniff_layout(path: str | Path, *, roles: dict[str, str] | None = None,
                 units: dict[str, str] | None = None, rate: float | None = None,
                 start: str | pd.Timestamp | None = None) -> Layout:
    """Work out how a log file is laid out.

    Parameters
    ----------
    path : str or Path
        CSV, CSV.gz, Parquet, MDF4 (``.mf4``) or HDF5 (``.h5``) file.
    roles : dict, optional
        Role → column name overrides (``{"torque": "Drehmoment"}``).
    units : dict, optional
        Role → unit overrides (``{"torque": "kN*m"}``).
    rate : float, optional
        Sample rate [Hz] for logs whose time is a sample index or absent.
    start : str or Timestamp, optional
        Absolute start time (overrides the file).

    Returns
    -------
    Layout

    Raises
    ------
    DataError
        Empty, binary, header-less or otherwise unreadable files, naming the fix.
    """
    p = Path(path)
    roles = {k: v for k, v in (roles or {}).items() if v}
    units = {k: v for k, v in (units or {}).items() if v}
    for k in list(roles) + list(units):
        if k not in ROLES:
            raise UsageError(f"unknown channel role {k!r}; valid: {', '.join(ROLES)}")
    if p.suffix.lower() in (".parquet", ".pq"):
        return _sniff_parquet(p, roles, units, rate, start)
    from torqlog import read_hdf, read_mdf

    if p.suffix.lower() in read_mdf.SUFFIXES:
        return read_mdf.sniff_mdf(p, roles, units, rate, start)
    if p.suffix.lower() in read_hdf.SUFFIXES:
        return read_hdf.sniff_hdf(p, roles, units, rate, start)
    text, enc, cut = _read_head(p)
    # pyarrow ends lines at \n, \r and \r\n only; str.splitlines() would also split at
    # \x85, \x0c, \u2028 ... and shift every line number (and skip_rows) after them
    lines = re.split(r"\r\n|\r|\n", text)
    if lines and not lines[-1]:
        lines.pop()
    if cut and len(lines) > 1:
        lines = lines[:-1]  # the last line may be cut by the sniff window
    delim = _choose_delimiter(lines)
    decimal = "."
    # Locate the data: the first row of numbers as wide as most numeric rows; the header
    # is the line before it (a unit row may sit between). Scanning forward keeps a row
    # with text in a numeric column from being taken for the header.
    fields = [split_fields(ln, delim) for ln in lines]
    numeric = [i for i, (ln, f) in enumerate(zip(lines, fields, strict=True))
               if ln.strip() and all(_is_value(x, ",") for x in f)]
    if not numeric:
        if len(lines) <= 2:
            raise DataError(f"{p}: has a header but no data rows; export the log with data")
        raise DataError(f"{p}: no rows of numbers found with a comma, semicolon or tab "
                        "delimiter; is this a logger export? "
                        "(expected a header line followed by numeric rows)")
    widths = [len(fields[i]) for i in numeric[-50:]]
    n_fields = max(set(widths), key=widths.count)
    data_start = first = next(i for i in numeric if len(fields[i]) == n_fields)
    # A first data row holding a bad value is still a data row (the reader then names it):
    # step back over rows as wide as the data that hold numbers and are not a unit row.
    while data_start > 1:
        j = data_start - 1
        f = fields[j]
        if not lines[j].strip() or len(f) != n_fields or _looks_like_units(f) or \
                not any(_is_num(x, ",") or _ISO.match(x) for x in f) or \
                len(fields[j - 1]) != n_fields:
            break
        data_start = j
    sample = [split_fields(ln, delim) for ln in lines[data_start:data_start + 50] if ln.strip()]
    if delim == ";" and any("," in x for row in sample for x in row):
        decimal = ","
    if delim == "," and any("," in x for row in sample for x in row):
        decimal = ","  # "12,5","46,2": decimal commas inside quoted fields
    header_idx = data_start - 1
    unit_row: list[str] | None = None
    while header_idx >= 0 and not lines[header_idx].strip():
        header_idx -= 1
    if header_idx < 0:
        raise DataError(f"{p}: no header line with column names; add one "
                        "(e.g. time_s,torque_Nm,speed_rpm)")
    prev = header_idx - 1
    cand = split_fields(lines[header_idx], delim)
    if prev >= 0 and lines[prev].count(delim) == lines[header_idx].count(delim) and \
            len(cand) == n_fields and _looks_like_units(cand):
        unit_row = cand
        header_idx = prev
    header = split_fields(lines[header_idx], delim)
    if len(header) != n_fields and all(_is_value(x, ",") for x in header):
        # a short or long data row right under the header, not a header
        head = next((i for i in range(header_idx - 1, -1, -1) if lines[i].strip()), None)
        where = (f"the header (line {head + 1}) and the other rows have" if head is not None
                 and len(split_fields(lines[head], delim)) == n_fields else
                 "the other rows have")
        raise DataError(f"{p}: line {header_idx + 1}: a data row has {len(header)} fields "
                        f"where {where} {n_fields}; fix or remove that row")
    if len(header) != n_fields:
        raise DataError(f"{p}: line {header_idx + 1}: the header has {len(header)} fields but "
                        f"the data rows have {n_fields}; check the delimiter")
    preamble = _parse_preamble(lines[:header_idx])
    skip = data_start
    return _build_layout(p, "csv", delim, decimal, enc, skip, header, unit_row, preamble,
                         roles, units, rate, start, first_values=fields[first])


def _looks_like_units(fields: list[str]) -> bool:
    nonblank = [f for f in fields if f]
    # "1" is the unit of a pulse or count column; other numbers mean a data row
    if not nonblank or any(_NUM.match(f) and f != "1" for f in nonblank):
        return False
    ok = real = 0
    for f in nonblank:
        t = f.strip("[]() ")
        if t in ("-", "", "#", "V", "1"):
            ok += 1
            continue
        for kind in ("time", "torque", "speed", "angle"):
            try:
                si_factor(t, kind)
                ok += 1
                real += 1
                break
            except UsageError:
                pass
    if "1" in nonblank and not real:
        return False
    return ok >= max(1, len(nonblank) - 1)


def _parse_preamble(lines: list[str]) -> dict[str, str]:
    meta: dict[str, str] = {}
    for ln in lines:
        m = _META.match(ln)
        if m:
            meta[m.group(1).strip()] = m.group(2).strip()
    return meta


def _preamble_rate(meta: dict[str, str]) -> float | None:
    for key, value in meta.items():
        k = key.lower()
        if k in ("rate", "sample rate", "sampling rate", "samplerate", "fs", "frequency"):
            m = re.match(r"^\s*([-+]?\d+(?:[.,]\d+)?(?:[eE][-+]?\d+)?)\s*(\S*)", value)
            if m:
                v = float(m.group(1).replace(",", "."))
                unit = m.group(2) or "Hz"
                return v * si_factor(unit, "frequency")
        if k in ("interval", "sample interval", "dt", "period"):
            m = re.match(r"^\s*([-+]?\d+(?:[.,]\d+)?(?:[eE][-+]?\d+)?)\s*(\S*)", value)
            if m:
                dt = float(m.group(1).replace(",", ".")) * si_factor(m.group(2) or "s", "time")
                return 1.0 / dt if dt > 0 else None
    return None


def _timestamp(value: Any) -> pd.Timestamp:
    """``pandas.Timestamp(value)``; pandas is imported here, only when a time is given, so
    reading a log without one does not wait for it."""
    import pandas as pd

    return pd.Timestamp(value)


def preamble_start(meta: dict[str, str]) -> pd.Timestamp | None:
    """Absolute start time from preamble key/values (``Start: 2026-03-02 06:00:00``), or
    None when the preamble does not state one (or it is not a readable date)."""
    for key, value in meta.items():
        if key.lower() in ("start", "start time", "starttime", "date", "started", "begin"):
            try:
                return _timestamp(value)
            except (ValueError, TypeError):
                return None
    return None


def _build_layout(p: Path, kind: str, delim: str, decimal: str, enc: str, skip: int,
                  header: list[str], unit_row: list[str] | None, preamble: dict[str, str],
                  roles: dict[str, str], units: dict[str, str], rate: float | None,
                  start: str | pd.Timestamp | None, first_values: list[Any]) -> Layout:
    names = list(header)
    if len(set(names)) != len(names):
        dup = next(n for n in names if names.count(n) > 1)
        raise DataError(f"{p}: column name {dup!r} appears twice in the header; rename one")
    bare = [_name_and_unit(n) for n in names]
    assigned: dict[int, str] = {}
    for role, col in roles.items():
        if col in names:
            assigned[names.index(col)] = role
            continue
        # the name without its unit also selects a column: --torque Drehmoment
        same = [i for i, (base, _) in enumerate(bare) if base.casefold() == col.casefold()]
        if len(same) != 1:
            raise UsageError(f"--{role} {col!r}: no such column in {p}; columns are: "
                             f"{', '.join(names)}")
        assigned[same[0]] = role
    for i, (base, unit) in enumerate(bare):
        if i in assigned:
            continue
        role = _detect_role(base) or (_detect_role(unit) if unit.lower() == "rpm" else None)
        if role and role not in assigned.values() and role not in roles:
            assigned[i] = role
    cols: list[Column] = []
    for i, name in enumerate(names):
        role = assigned.get(i)
        base, unit = bare[i]
        source = "header"
        if not unit and role:
            unit = _suffix_unit(base, role)
        if not unit and unit_row is not None and unit_row[i].strip("[]() -#"):
            unit, source = unit_row[i].strip("[]() "), "unit row"
        if role in units:
            unit, source = units[role], "option"
        factor = 1.0
        if role and ROLES[role] != "dimensionless":
            if not unit:
                unit, source = _DEFAULT_UNITS[role], "assumed"
            try:
                factor = si_factor(unit, ROLES[role])
            except UsageError as exc:
                if source == "option":
                    raise UsageError(f"--{role}-unit: {exc}") from None
                raise DataError(f"{p}: column {name!r}: {exc}; fix the header or give "
                                f"--{role}-unit") from None
        cols.append(Column(name, role, unit if role else unit, source if unit else "", factor))
    # time
    tcol = next((c for c in cols if c.role == "time"), None)
    meta_rate = _preamble_rate(preamble)
    rate = rate or meta_rate
    if tcol is None:
        if rate is None:
            raise DataError(f"{p}: no time column found among {', '.join(names)}; name it "
                            "with --time COL, or give --rate HZ if rows are evenly sampled")
        time_kind = "none"
    else:
        ti = cols.index(tcol)
        v = first_values[ti]
        words = _words(_name_and_unit(tcol.name)[0])
        if isinstance(v, str) and _ISO.match(v):
            time_kind = "timestamp"
        elif isinstance(v, np.datetime64 | datetime.datetime):  # pandas Timestamp too
            time_kind = "timestamp"
        elif "sample" in words or "samples" in words or tcol.unit in ("-", "#"):
            if rate is None:
                raise DataError(f"{p}: time column {tcol.name!r} is a sample number and no "
                                "rate is given; give --rate HZ or a 'Rate: ... Hz' line")
            time_kind = "index"
        else:
            time_kind = "seconds"
        if time_kind != "seconds":
            unit = "ISO-8601" if time_kind == "timestamp" else "sample"
            cols[ti] = replace(tcol, factor=1.0, unit=unit, unit_source="header")
    st = _timestamp(start) if start is not None else preamble_start(preamble)
    if st is None and time_kind == "timestamp":
        st = _timestamp(first_values[ti])
    tz = False
    if time_kind == "timestamp" and isinstance(first_values[0], str):
        tz = bool(re.search(r"(Z|[+-]\d{2}:?\d{2})\s*$", first_values[ti]))
    used = [c for c in cols if c.role and c.role != "time"]
    if not used:
        raise DataError(f"{p}: no torque, speed, angle, index or counts column found among "
                        f"{', '.join(names)}; name them with --torque COL, --speed COL, ...")
    return Layout(str(p), kind, delim, decimal, enc, skip, tuple(cols), time_kind, rate, st,
                  preamble, tz)


def _sniff_parquet(p: Path, roles: dict[str, str], units: dict[str, str],
                   rate: float | None, start: Any) -> Layout:
    import pyarrow.parquet as pq

    if not p.exists():
        raise DataError(f"{p}: file does not exist; check the path")
    try:
        pf = pq.ParquetFile(str(p))
    except Exception as exc:  # noqa: BLE001 - pyarrow raises several types
        raise DataError(f"{p}: not a readable Parquet file ({exc})") from None
    names = pf.schema_arrow.names
    try:
        first = pf.read_row_group(0, columns=names).slice(0, 1).to_pylist() \
            if pf.num_row_groups else []
        meta = {k.decode(): v.decode() for k, v in (pf.schema_arrow.metadata or {}).items()
                if not k.startswith(b"ARROW") and not k.startswith(b"pandas")}
    except Exception as exc:  # noqa: BLE001 - pyarrow raises several types
        text = (str(exc).strip().splitlines() or [type(exc).__name__])[0][:120]
        raise DataError(f"{p}: not a readable Parquet file ({text}); check that the file is "
                        "complete") from None
    if not first:
        raise DataError(f"{p}: the Parquet file has no rows")
    values = [first[0][n] for n in names]
    return _build_layout(p, "parquet", ",", ".", "utf8", 0, names, None, meta, roles, units,
                         rate, start, values)
