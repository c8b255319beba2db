"""Read ASAM MDF4 measurement files (the open standard of test-cell and vehicle loggers).

An MDF file holds channel groups; the channels of one group share a time base (its
master channel). torqlog reads one group: the one that holds the torque and speed (or
angle) channels, found by the channel names as for CSV headers, or by ``--torque CH``
etc. Units come from each channel's own unit field. Data are streamed fragment by
fragment with asammdf, so memory stays flat in the file length.

References
----------
.. [1] ASAM MCD-2 MDF, version 4.1.1 (2019): channel groups, master channels, units.
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from torqlog.errors import DataError, UsageError

if TYPE_CHECKING:
    import pandas as pd
    import pyarrow as pa

    from torqlog.io.layout import Layout

SUFFIXES = (".mf4", ".mdf", ".mf3")
#: Bytes per read fragment: ~64k samples of a few float channels per step.
FRAGMENT_BYTES = 1 << 20


def _open(p: Path) -> tuple[Any, Any]:
    """The MDF object and the file handle it reads through (close both).

    A file handle rather than a path: given a path, asammdf maps the whole file into
    memory, and the resident size then grows with the file as it is read.
    """
    try:
        from asammdf import MDF
    except ImportError:
        raise UsageError(f"{p}: reading MDF files needs the asammdf package; install it "
                         "with pip install 'torqlog[formats]'") from None
    if not p.is_file():
        raise DataError(f"{p}: file does not exist; check the path")
    handle = open(p, "rb")  # noqa: SIM115 - closed by the caller, with the MDF
    try:
        mdf = MDF(handle)
    except Exception as exc:  # noqa: BLE001 - asammdf raises several types
        handle.close()
        raise DataError(f"{p}: not a readable MDF file ({str(exc).split(': ', 1)[-1]})") \
            from None
    mdf.configure(read_fragment_size=FRAGMENT_BYTES)
    return mdf, handle


def _close(mdf: Any, handle: Any) -> None:
    try:
        mdf.close()
    finally:
        handle.close()


#: Preamble entries the reader writes for people (``inspect``) and reads back itself:
#: the number of the channel group used, and its rows (the file states them).
GROUP_KEY = "channel group number"
ROWS_KEY = "rows in the group"


def _groups(mdf: Any) -> list[dict[str, Any]]:
    """Each channel group: index, label, master name, channels (name, unit, index)."""
    out = []
    for g, grp in enumerate(mdf.groups):
        master = mdf.masters_db.get(g)
        chans = [(c.name, (c.unit or "").strip(), i) for i, c in enumerate(grp.channels)]
        label = (grp.channel_group.acq_name or grp.channel_group.comment or "").strip()
        out.append({"index": g, "label": label, "master": master,
                    "length": int(getattr(grp.channel_group, "cycles_nr", 0) or 0),
                    "channels": [c for c in chans if c[2] != master],
                    "master_name": chans[master][0] if master is not None else None,
                    "master_unit": chans[master][1] if master is not None else ""})
    return out


def describe_groups(groups: list[dict[str, Any]]) -> str:
    """``0 'main' (time; Torque [kN*m]; Speed [rpm]); 1 ...`` for messages and inspect."""
    parts = []
    for g in groups:
        names = [f"{n} [{u}]" if u else n for n, u, _ in g["channels"]]
        lab = f" {g['label']!r}" if g["label"] else ""
        parts.append(f"group {g['index']}{lab}: {', '.join(names) or 'no channels'}")
    return "; ".join(parts)


def choose_group(groups: list[dict[str, Any]], roles: dict[str, str], path: Path,
                 kind: str = "MDF") -> dict[str, Any]:
    """The group holding the log's channels (by name, or by the ``roles`` overrides).

    Raises
    ------
    DataError
        No group has a torque or speed channel (naming every channel found), or the
        channels named are in different groups.
    """
    from torqlog.io.layout import _detect_role, _name_and_unit

    wanted = set(roles.values())
    if wanted:
        holding = [g for g in groups if wanted & {n for n, _, _ in g["channels"]}]
        if len({g["index"] for g in holding}) > 1:
            raise DataError(f"{path}: the channels named ({', '.join(sorted(wanted))}) are "
                            f"in different {kind} groups, on different time bases; name "
                            "channels of one group")
        if holding:
            return holding[0]
    best, score = None, 0
    for g in groups:
        found = {_detect_role(_name_and_unit(n)[0]) for n, _, _ in g["channels"]}
        s = 2 * ("torque" in found) + 2 * ("speed" in found) + ("angle" in found)
        if s > score:
            best, score = g, s
    if best is None:
        raise DataError(f"{path}: no torque or speed channel found; the file has "
                        f"{describe_groups(groups) or 'no channel groups'}; name the "
                        "channels with --torque CH and --speed CH")
    return best


def sniff_mdf(p: Path, roles: dict[str, str], units: dict[str, str], rate: float | None,
              start: str | pd.Timestamp | None) -> Layout:
    """The :class:`~torqlog.io.layout.Layout` of an MDF file: one channel group, its units.

    The layout's preamble records the groups found and the one used (``inspect`` shows
    them).
    """
    from torqlog.io.layout import _build_layout

    mdf, handle = _open(p)
    try:
        groups = _groups(mdf)
        g = choose_group(groups, roles, p)
        st = start
        if st is None:
            try:
                st = mdf.header.start_time.isoformat()
            except (AttributeError, ValueError):
                st = None
    finally:
        _close(mdf, handle)
    master = g["master_name"] or "time"
    names = [master] + [n for n, _, _ in g["channels"]]
    unit_row = [g["master_unit"] or "s"] + [u for _, u, _ in g["channels"]]
    roles = {"time": master, **roles}
    preamble = {"groups found": describe_groups(groups),
                "group used": f"group {g['index']}" + (f" {g['label']!r}" if g["label"]
                                                      else ""),
                GROUP_KEY: str(g["index"]), ROWS_KEY: str(g["length"])}
    lay = _build_layout(p, "mdf4", ",", ".", "utf8", 0, names, unit_row, preamble, roles,
                        units, rate, st, [0.0] * len(names))
    return _metadata_units(lay)


def _metadata_units(lay: Layout) -> Layout:
    from dataclasses import replace

    cols = tuple(replace(c, unit_source="file metadata") if c.unit_source == "unit row"
                 else c for c in lay.columns)
    return replace(lay, columns=cols)


def iter_mdf_batches(lay: Layout, names: list[str]) -> Iterator[pa.RecordBatch]:
    """Stream the named channels of the layout's group as record batches.

    The master channel (time, in its own unit) is taken from the first data channel's
    time stamps; every channel of a group is read fragment by fragment in step.
    """
    import pyarrow as pa

    p = Path(lay.path)
    group = int(lay.preamble[GROUP_KEY])
    time_col = lay.column("time")
    data_names = [n for n in names if time_col is None or n != time_col.name]
    mdf, handle = _open(p)
    try:
        index = {c.name: i for i, c in enumerate(mdf.groups[group].channels)}
        iters = [mdf.iter_get(n, group=group, index=index[n]) for n in data_names]
        for sigs in zip(*iters, strict=True):
            cols = {}
            n = len(sigs[0].samples)
            for name, sig in zip(data_names, sigs, strict=True):
                if len(sig.samples) != n:
                    raise DataError(f"{p}: channel {name!r} came back out of step with "
                                    f"{data_names[0]!r}; re-export the group")
                cols[name] = np.asarray(sig.samples, dtype=np.float64)
            if time_col is not None:
                cols[time_col.name] = np.asarray(sigs[0].timestamps, dtype=np.float64)
            yield pa.RecordBatch.from_pydict({k: cols[k] for k in names})
    finally:
        _close(mdf, handle)
