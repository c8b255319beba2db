"""Read HDF5 logs: a group of 1-D datasets with unit attributes, or a table dataset.

Two layouts rigs write are understood:

* a group holding one 1-D numeric dataset per channel, all of one length, each with a
  ``unit`` (or ``units``) attribute -- ``/log/time`` [s], ``/log/torque`` [kN*m], ...;
* a table: a 1-D compound dataset, one field per channel, with the units in a ``units``
  attribute (one text per field) or in ``<field>_unit`` attributes.

Roles come from the names as for CSV headers (or ``--torque NAME`` ...); file and group
attributes (``rate``, ``start``) are read like a CSV preamble. Data are read in slices of
:data:`BLOCK_ROWS` rows, so memory stays flat in the file length.

References
----------
.. [1] The HDF Group, *HDF5 User's Guide* (datasets, compound types, attributes).
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from torqlog.errors import DataError, UsageError
from torqlog.io.read_mdf import ROWS_KEY, _metadata_units, choose_group, describe_groups

if TYPE_CHECKING:
    import pandas as pd
    import pyarrow as pa

    from torqlog.io.layout import Layout

SUFFIXES = (".h5", ".hdf5", ".hdf", ".he5")
BLOCK_ROWS = 1 << 16


def _h5py() -> Any:
    try:
        import h5py
    except ImportError:
        raise UsageError("reading HDF5 files needs the h5py package; install it with "
                         "pip install 'torqlog[formats]'") from None
    return h5py


def _text(value: Any) -> str:
    if isinstance(value, bytes):
        return value.decode("utf-8", "replace")
    if isinstance(value, np.ndarray) and value.shape == ():
        return _text(value.item())
    return str(value)


def _unit(attrs: Any, name: str | None = None) -> str:
    keys = ("unit", "units", "Unit", "Units") if name is None else \
        (f"{name}_unit", f"unit_{name}", f"{name}_units")
    for k in keys:
        if k in attrs:
            return _text(attrs[k]).strip()
    return ""


def _scan(f: Any) -> list[dict[str, Any]]:
    """Candidate channel groups: groups of equal-length 1-D datasets, and tables."""
    h5py = _h5py()
    found: list[dict[str, Any]] = []

    def visit(name: str, obj: Any) -> None:
        if isinstance(obj, h5py.Group):
            series = [(k, d) for k, d in obj.items() if isinstance(d, h5py.Dataset)
                      and d.ndim == 1 and d.dtype.kind in "fiub"]
            if series:
                lengths = [d.shape[0] for _, d in series]
                n = max(set(lengths), key=lengths.count)
                chans = [(k, _unit(d.attrs), k) for k, d in series if d.shape[0] == n]
                found.append({"index": "/" + name if name else "/", "label": "",
                              "kind": "datasets", "length": n, "channels": chans,
                              "attrs": dict(obj.attrs)})
        elif isinstance(obj, h5py.Dataset) and obj.ndim == 1 and obj.dtype.names:
            units = obj.attrs.get("units")
            names = list(obj.dtype.names)
            listed = [_text(u) for u in units] if units is not None and \
                np.ndim(units) == 1 and len(units) == len(names) else None
            chans = [(k, (listed[i] if listed else _unit(obj.attrs, k)).strip(), k)
                     for i, k in enumerate(names) if obj.dtype[k].kind in "fiub"]
            found.append({"index": "/" + name, "label": "", "kind": "table",
                          "length": obj.shape[0], "channels": chans,
                          "attrs": dict(obj.attrs)})

    visit("", f)
    f.visititems(visit)
    return found


#: Preamble entries the reader writes for people (``inspect``) and reads back itself:
#: where the channels are, how they are stored, and their rows.
PATH_KEY = "location in the file"
STORED_KEY = "stored as"
_STORED = {"datasets": "one dataset per channel", "table": "one table (compound dataset)"}


def sniff_hdf(p: Path, roles: dict[str, str], units: dict[str, str], rate: float | None,
              start: str | pd.Timestamp | None) -> Layout:
    """The :class:`~torqlog.io.layout.Layout` of an HDF5 log (one group or table of it).

    The preamble records the groups and tables found and the one used.
    """
    from torqlog.io.layout import _build_layout

    h5py = _h5py()
    if not p.is_file():
        raise DataError(f"{p}: file does not exist; check the path")
    try:
        f = h5py.File(p, "r")
    except OSError as exc:
        raise DataError(f"{p}: not a readable HDF5 file ({exc})") from None
    with f:
        groups = _scan(f)
        g = choose_group(groups, roles, p, kind="HDF5")
        if g["length"] == 0:
            raise DataError(f"{p}: {g['index']} has no rows")
        meta = {}
        for k, v in {**dict(f.attrs), **g["attrs"]}.items():
            if np.ndim(v) == 0 and not k.endswith("_unit") and k not in ("unit", "units"):
                meta[str(k)] = _text(v)
    names = [n for n, _, _ in g["channels"]]
    preamble = {**meta, "groups found": describe_groups(groups),
                "group used": f"{'table' if g['kind'] == 'table' else 'group'} {g['index']}",
                PATH_KEY: g["index"], STORED_KEY: _STORED[g["kind"]],
                ROWS_KEY: str(g["length"])}
    lay = _build_layout(p, "hdf5", ",", ".", "utf8", 0, names,
                        [u for _, u, _ in g["channels"]], preamble, roles, units, rate,
                        start, [0.0] * len(names))
    return _metadata_units(lay)


def iter_hdf_batches(lay: Layout, names: list[str],
                     block_rows: int = BLOCK_ROWS) -> Iterator[pa.RecordBatch]:
    """Stream the named channels of the layout's group or table, ``block_rows`` at a time."""
    import pyarrow as pa

    h5py = _h5py()
    path = lay.preamble[PATH_KEY]
    kind = next(k for k, v in _STORED.items() if v == lay.preamble[STORED_KEY])
    with h5py.File(lay.path, "r") as f:
        if kind == "table":
            ds = f[path]
            n = ds.shape[0]
            for i in range(0, n, block_rows):
                block = ds[i:i + block_rows]
                yield pa.RecordBatch.from_pydict(
                    {k: np.asarray(block[k], dtype=np.float64) for k in names})
            return
        grp = f[path]
        n = min(grp[k].shape[0] for k in names)
        for i in range(0, n, block_rows):
            yield pa.RecordBatch.from_pydict(
                {k: np.asarray(grp[k][i:i + block_rows], dtype=np.float64) for k in names})
