"""How a log's columns are laid out: channel roles, units and the time base, for every
file format.

:class:`Layout` (and its :class:`Column` list) is what every reader hands to the
streaming reader: the CSV sniffer (:mod:`torqlog.io.sniff`), the MDF4 and HDF5 readers.
The role of a column comes from the words of its name, its unit from a bracketed or
suffixed unit text, and a preamble's sample rate or start time from its metadata.
"""

from __future__ import annotations

import datetime
import re
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from torqlog.errors import DataError, UsageError
from torqlog.io.units import is_unit, looks_like_unit_of, si_factor

if TYPE_CHECKING:
    import pandas as pd

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


_ISO = re.compile(r"^\s*\d{4}-\d{2}-\d{2}[T ]\d{2}:\d{2}(:\d{2}(\.\d+)?)?(Z|[+-]\d{2}:?\d{2})?\s*$")


_BRACKET_UNIT = re.compile(r"^(.*?)\s*[\[(]\s*([^\])]*)\s*[\])]\s*$")


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

    def facts(self) -> dict[str, Any]:
        """How the file is laid out, as ``inspect``'s JSON gives it (source, format,
        delimiter, decimal, columns with role, unit and SI factor, time kind, start)."""
        return {
            "source": self.path,
            "format": self.kind,
            "delimiter": {",": "comma", ";": "semicolon", "\t": "tab"}.get(self.delimiter)
            if self.kind == "csv" else None,
            "decimal": self.decimal,
            "columns": [{"name": c.name, "role": c.role, "unit": c.unit or None,
                         "unit_source": c.unit_source or None, "si_factor": c.factor}
                        for c in self.columns],
            "time_kind": self.time_kind,
            "start_time": self.start.isoformat() if self.start is not None else None,
        }

    @property
    def roles(self) -> tuple[str, ...]:
        """Roles present, in file order (time excluded)."""
        return tuple(c.role for c in self.columns if c.role and c.role != "time")


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


def preamble_start(meta: dict[str, str]) -> pd.Timestamp | None:
    """Absolute start time from preamble key/values (``Start: 2026-03-02 06:00:00``), or
    None when the preamble does not state one (or it is not a readable date)."""
    for key, value in meta.items():
        if key.lower() in ("start", "start time", "starttime", "date", "started", "begin"):
            try:
                return _timestamp(value)
            except (ValueError, TypeError):
                return None
