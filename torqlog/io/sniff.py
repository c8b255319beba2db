"""Sniff a logger export: dialect, preamble, header, unit row, column roles and units.

:func:`sniff_layout` reads the first part of a CSV, CSV.gz or Parquet file once and
returns its :class:`Layout`: delimiter, decimal mark, metadata preamble, header, unit
row, the role of each column (time, torque, speed, angle, index pulse, encoder counts),
its unit and the factor to SI, and how time is given. The streaming reader of
:mod:`torqlog.io.ingest` reads the data with it.

References
----------
.. [1] A. Thompson and B. N. Taylor, *Guide for the Use of the International System of
   Units (SI)*, NIST SP 811, 2008 (unit conversion factors, applied through pint).
.. [2] ISO 8601-1:2019, *Date and time — Representations for information interchange*.
"""

from __future__ import annotations

import gzip
import re
import zlib
from pathlib import Path
from typing import TYPE_CHECKING, Any

from torqlog.errors import DataError, UsageError
from torqlog.io.layout import (
    _ISO,
    ROLES,
    Layout,
    _build_layout,
)
from torqlog.io.units import si_factor

if TYPE_CHECKING:
    import pandas as pd




_DELIMS = (",", ";", "\t")
_NUM = re.compile(r"^\s*[-+]?(\d+([.,]\d*)?|[.,]\d+)([eE][-+]?\d+)?\s*$")
_META = re.compile(r"^\s*#?\s*([A-Za-z][\w .()/-]{0,40}?)\s*[:=]\s*(.*?)\s*$")
_SNIFF_BYTES = 64 * 1024






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
    from torqlog.io import read_hdf, read_mdf

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






    return None




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
