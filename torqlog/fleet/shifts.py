"""Shift calendars: which shift (and which production day) an instant belongs to.

Shift starts are local wall-clock times in an IANA time zone, so a shift that spans a
daylight-saving change is an hour shorter (spring) or longer (autumn); a shift that
crosses midnight belongs to the date it started on.

References
----------
.. [1] IANA time zone database, through Python's :mod:`zoneinfo`; for Europe, the
   changes follow Directive 2000/84/EC (summer time from 01:00 UTC on the last Sunday of
   March to 01:00 UTC on the last Sunday of October).
"""

from __future__ import annotations

import re
import zoneinfo
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from torqlog.errors import DataError, UsageError

#: Default shift calendar (a three-shift pattern; common practice, no source).
DEFAULT_SHIFT_STARTS: tuple[str, ...] = ("06:00", "14:00", "22:00")
DEFAULT_SHIFT_NAMES: tuple[str, ...] = ("early", "late", "night")


_CLOCK = re.compile(r"^\s*(\d{1,2}):(\d{2})(?::(\d{2}))?\s*$")


def _clock_seconds(text: str) -> int:
    m = _CLOCK.match(text)
    if not m:
        raise UsageError(f"shift start {text!r} is not a clock time; write HH:MM, "
                         "e.g. 06:00,14:00,22:00")
    h, mi, s = int(m.group(1)), int(m.group(2)), int(m.group(3) or 0)
    if h > 23 or mi > 59 or s > 59:
        raise UsageError(f"shift start {text!r} is not a clock time between 00:00 and 23:59")
    return 3600 * h + 60 * mi + s


@dataclass(frozen=True)
class ShiftCalendar:
    """A daily shift pattern in one time zone.

    Attributes
    ----------
    starts : tuple of str
        Clock times ("HH:MM") at which shifts begin, strictly increasing within the day.
        The last shift of a day runs to the first start of the next day, across midnight
        if the first start is after 00:00.
    names : tuple of str
        One name per start.
    timezone : str or None
        IANA zone name ("Europe/Berlin"); shift boundaries are local wall-clock times in
        it, so a shift across a daylight-saving change is an hour shorter or longer.
        None: the UTC clock (and times without a zone are shown without one).
    """

    starts: tuple[str, ...] = DEFAULT_SHIFT_STARTS
    names: tuple[str, ...] = DEFAULT_SHIFT_NAMES
    timezone: str | None = None

    def __post_init__(self) -> None:
        if not self.starts:
            raise UsageError("the shift calendar needs at least one start time")
        secs = [_clock_seconds(s) for s in self.starts]
        if any(b <= a for a, b in zip(secs, secs[1:], strict=False)):
            raise UsageError("shift starts must increase within the day, e.g. "
                             f"06:00,14:00,22:00; got {','.join(self.starts)}")
        if len(self.names) != len(self.starts):
            raise UsageError(f"{len(self.names)} shift name(s) for {len(self.starts)} shift "
                             "start(s); give one name per start")
        if len(set(self.names)) != len(self.names):
            raise UsageError("shift names must differ from each other")
        if self.timezone is not None:
            try:
                zoneinfo.ZoneInfo(self.timezone)
            except (zoneinfo.ZoneInfoNotFoundError, ValueError):
                raise UsageError(f"unknown time zone {self.timezone!r}; give an IANA name "
                                 "such as Europe/Berlin or UTC") from None

    @property
    def zone(self) -> str:
        """The zone used for shift boundaries ("UTC" when none was given)."""
        return self.timezone or "UTC"

    @classmethod
    def build(cls, starts: str | Sequence[str] | None = None,
              names: str | Sequence[str] | None = None, timezone: str | None = None,
              profile: Any = None) -> ShiftCalendar:
        """Calendar from option text (``"06:00,14:00"``), falling back on a profile's
        ``[shifts]`` section and then on the defaults. Names default to the start times
        (or early/late/night for the default starts)."""
        sec = getattr(profile, "shifts", None) or {}

        def split(v: str | Sequence[str] | None) -> tuple[str, ...] | None:
            if v is None:
                return None
            parts = v.split(",") if isinstance(v, str) else list(v)
            return tuple(p.strip() for p in parts if str(p).strip())

        st = split(starts) or split(sec.get("starts")) or DEFAULT_SHIFT_STARTS
        nm = split(names) or (split(sec.get("names")) if not starts else None)
        if nm is None:
            nm = DEFAULT_SHIFT_NAMES if st == DEFAULT_SHIFT_STARTS else st
        return cls(st, nm, timezone or sec.get("timezone"))

    def boundaries(self, first: pd.Timestamp, last: pd.Timestamp
                   ) -> tuple[pd.DatetimeIndex, pd.DatetimeIndex]:
        """Absolute shift starts covering ``first``..``last`` and their local dates.

        Each start is the wall-clock time on each date, localised in :attr:`zone`; a start
        that falls in the hour skipped in spring moves forward to the end of the gap, one
        that falls in the hour repeated in autumn is taken at its first occurrence.

        Returns
        -------
        (starts, dates)
            UTC instants of every shift start, and the local date of each (naive).
        """
        tz = self.zone
        lo = first.tz_convert(tz).tz_localize(None).normalize() - pd.Timedelta(days=1)
        hi = last.tz_convert(tz).tz_localize(None).normalize() + pd.Timedelta(days=1)
        days = pd.date_range(lo, hi, freq="D")
        secs = np.array([_clock_seconds(s) for s in self.starts], dtype=np.int64)
        naive = (days.values[:, None] + (secs * 1_000_000_000).astype("timedelta64[ns]")
                 [None, :]).ravel()
        local = pd.DatetimeIndex(naive).tz_localize(
            tz, ambiguous=np.ones(naive.size, dtype=bool), nonexistent="shift_forward")
        return local.tz_convert("UTC"), pd.DatetimeIndex(np.repeat(days.values, secs.size))

    def assign(self, times: pd.Series | pd.DatetimeIndex) -> pd.DataFrame:
        """Shift of each instant.

        Parameters
        ----------
        times : Series or DatetimeIndex of time-zone aware timestamps
            (naive ones are read as wall-clock times in :attr:`zone`).

        Returns
        -------
        DataFrame
            ``shift`` (name), ``date`` (the local date the shift started on, so a night
            shift from 22:00 to 06:00 belongs to the day it began), ``shift_start`` and
            ``shift_end`` (UTC), ``shift_hours`` (length, 7 or 9 across a DST change).
        """
        t = pd.DatetimeIndex(times)
        if t.tz is None:
            t = t.tz_localize(self.zone, ambiguous=np.ones(len(t), dtype=bool),
                              nonexistent="shift_forward")
        t = t.tz_convert("UTC").as_unit("ns")
        if len(t) == 0:
            return pd.DataFrame({"shift": [], "date": [], "shift_start": [], "shift_end": [],
                                 "shift_hours": []})
        finite = ~t.isna()
        if not finite.all():
            raise DataError("a cycle has no absolute time; every file must be placed in time")
        bounds, dates = self.boundaries(t.min(), t.max())
        bounds = bounds.as_unit("ns")
        k = np.searchsorted(bounds.asi8, t.asi8, side="right") - 1
        names = np.asarray(self.names, dtype=object)
        start, end = bounds[k], bounds[k + 1]
        return pd.DataFrame({
            "shift": names[k % len(self.names)],
            "date": dates[k].date,
            "shift_start": start,
            "shift_end": end,
            "shift_hours": (end.asi8 - start.asi8) / 3.6e12,
        })
