"""Per-cycle output of ``torqlog cycles`` written as the cycles complete.

Each writer is a :class:`torqlog.signal.cycles.CycleSink`: it gets the source and options before
the first block, every block of finished cycles, and the result (summary, notes) at the
end, so the per-cycle rows never sit in memory together. A file named with ``-o`` is
written under a temporary name beside it and renamed at the end; a run that fails leaves
no half-written file. Formats:

* ``csv`` — the per-cycle table, rows only, numbers rounded as every CSV of torqlog
  (:func:`torqlog.present.exporting.to_csv_text`; an optional units row);
* ``json`` — the same document as before streaming: source, options, ``cycles`` (an
  array written row by row), summary, notes;
* ``jsonl`` — JSON lines: the first line holds ``source`` and ``options``, then one
  object per cycle (the keys of a ``cycles`` row of the JSON), the last line
  ``summary``, ``notes`` and ``anomaly`` (the cycle-shape result): a reader tells them
  apart by the key ``cycle``, and the summary is complete only on the last line;
* ``parquet`` — the per-cycle table in row groups, each column's unit in its field
  metadata; source, options, summary and notes as JSON in the file's key-value metadata
  under ``torqlog``;
* ``table`` — the readable summary, then the rows (spilled to a temporary file while
  the log is read, since the summary comes first).
"""

from __future__ import annotations

import csv
import io
import json
import math
import shutil
import sys
import tempfile
from collections.abc import Callable
from pathlib import Path
from typing import IO, Any

import numpy as np

from torqlog.cli.base import _fmt_float, to_json
from torqlog.errors import UsageError
from torqlog.io.outputs import atomic_path
from torqlog.signal.cycles import COLUMNS, CycleResult

#: Formats with a streaming writer here.
STREAM_FORMATS = ("table", "csv", "json", "jsonl", "parquet")
__all__ = ["STREAM_FORMATS", "CsvWriter", "JsonWriter", "ParquetWriter", "TableWriter",
           "make_writer"]
#: Rows gathered before a write (bounds the buffer; fewer, larger writes).
BATCH_ROWS = 4096
#: Rows per Parquet row group.
ROW_GROUP_ROWS = 8192
#: Columns of the readable table.
TABLE_COLUMNS = ("cycle", "t_start_s", "speed_mean_rpm", "torque_mean_Nm", "torque_peak_Nm",
                 "work_J", "energy_swing_J", "cs", "cs_constant_drive", "flag")
#: Columns added to the readable table (before ``flag``) when the cycle-shape check is on.
SHAPE_COLUMNS = ("anomaly", "anomaly_score")


class _Target:
    """A text or binary destination: a file written atomically
    (:func:`torqlog.io.outputs.atomic_path`), or stdout."""

    def __init__(self, path: str | None, binary: bool = False) -> None:
        self.path = Path(path) if path else None
        self.binary = binary
        self.cm: Any = None
        self.fh: IO[Any] | None = None

    def open(self) -> IO[Any]:
        if self.fh is None:
            if self.path is None:
                self.fh = sys.stdout.buffer if self.binary else sys.stdout
            else:
                self.cm = atomic_path(self.path)
                tmp = self.cm.__enter__()
                self.fh = open(tmp, "wb") if self.binary else \
                    open(tmp, "w", encoding="utf-8", newline="\n")  # noqa: SIM115
        return self.fh

    def commit(self) -> None:
        fh = self.open()
        if self.cm is None:
            fh.flush()
            return
        fh.close()
        cm, self.cm = self.cm, None
        cm.__exit__(None, None, None)

    def abort(self) -> None:
        if self.cm is not None:
            if self.fh is not None:
                self.fh.close()
            cm, self.cm = self.cm, None
            stop = RuntimeError("output abandoned")
            cm.__exit__(RuntimeError, stop, None)  # removes the temporary file


class _Batched:
    """Gathers blocks to at least ``rows`` rows before handing them on."""

    def __init__(self, rows: int) -> None:
        self.rows = rows
        self.parts: list[dict[str, Any]] = []
        self.n = 0

    def push(self, block: dict[str, Any]) -> dict[str, Any] | None:
        self.parts.append(block)
        self.n += len(block["cycle"])
        return self.take() if self.n >= self.rows else None

    def take(self) -> dict[str, Any] | None:
        if not self.parts:
            return None
        if len(self.parts) == 1:
            out = self.parts[0]
        else:
            out = {k: _concat([p[k] for p in self.parts]) for k in self.parts[0]}
        self.parts, self.n = [], 0
        return out


def _csv_cells(v: Any, digits: int | None) -> list[str] | None:
    """A column as the text pandas' ``to_csv`` writes for it (``float_format`` ``%.{digits}g``
    or, with None, the shortest text that reads back the same number; NaN, NaT as empty
    cells), without loading pandas; None for time stamps with a zone (not a numpy array)."""
    if not isinstance(v, np.ndarray):
        return None
    kind = v.dtype.kind
    if kind == "f":
        fmt = "%r" if digits is None else f"%.{int(digits)}g"
        return ["" if x != x else fmt % x for x in v.tolist()]
    if kind == "M":
        return [""] * v.size if np.isnat(v).all() else None
    return [str(x) for x in v.tolist()]


def _empty_block() -> dict[str, np.ndarray]:
    """A block of no cycles, each column of its type."""
    out = {k: np.zeros(0) for k in COLUMNS}
    out.update(cycle=np.zeros(0, dtype=np.int64), flag=np.zeros(0, dtype=object),
               anomaly=np.zeros(0, dtype=bool), start_time=np.zeros(0, "datetime64[ns]"))
    return out


def _concat(parts: list[Any]) -> Any:
    if isinstance(parts[0], np.ndarray):
        return np.concatenate(parts)
    return parts[0].append(parts[1:])  # pandas DatetimeIndex keeps its zone


# --------------------------------------------------------------------------- JSON text
def _literals(block: dict[str, Any]) -> list[list[str]]:
    """Each column of a block as JSON literals (the same text json.dumps writes)."""
    out = []
    for name in COLUMNS:
        v = block[name]
        if name == "start_time":
            from torqlog.signal.cycles import _isnat, _iso

            out.append(["null" if _isnat(x) else json.dumps(_iso(x)) for x in v])
        elif name == "flag":
            cache: dict[str, str] = {}
            out.append([cache.get(f) or cache.setdefault(f, json.dumps(str(f),
                                                                       ensure_ascii=False))
                        for f in v])
        elif np.asarray(v).dtype.kind == "b":
            out.append(["true" if x else "false" for x in np.asarray(v).tolist()])
        elif np.asarray(v).dtype.kind == "f":
            out.append(["null" if x != x or x in (math.inf, -math.inf) else repr(x)
                        for x in np.asarray(v, dtype=np.float64).tolist()])
        else:
            out.append([str(x) for x in np.asarray(v).tolist()])
    return out


_ROW_INDENTED = "    {{\n" + ",\n".join(f'      "{k}": {{}}' for k in COLUMNS) + "\n    }}"
_ROW_LINE = "{{" + ", ".join(f'"{k}": {{}}' for k in COLUMNS) + "}}"


class JsonWriter:
    """``--format json``: the whole document, its ``cycles`` array streamed."""

    def __init__(self, path: str | None, lines: bool = False) -> None:
        self.target = _Target(path)
        self.lines = lines
        self.batch = _Batched(BATCH_ROWS)
        self.rows = 0

    def start(self, source: str, options: dict[str, Any]) -> None:
        fh = self.target.open()
        head = {"source": source, "options": options}
        if self.lines:
            fh.write(json.dumps(json.loads(to_json(head)), ensure_ascii=False) + "\n")
        else:
            fh.write(to_json(head)[:-2] + ',\n  "cycles": [\n')

    def write(self, block: dict[str, Any]) -> None:
        self._flush(self.batch.push(block))

    def _flush(self, block: dict[str, Any] | None) -> None:
        if block is None:
            return
        fmt = _ROW_LINE if self.lines else _ROW_INDENTED
        rows = [fmt.format(*r) for r in zip(*_literals(block), strict=True)]
        fh = self.target.open()
        if self.lines:
            fh.write("\n".join(rows) + "\n")
        else:
            fh.write((",\n" if self.rows else "") + ",\n".join(rows))
        self.rows += len(rows)

    def finish(self, result: CycleResult) -> None:
        self._flush(self.batch.take())
        tail = {"summary": result.summary, "notes": result.notes,
                "anomaly": result.anomaly.to_dict() if result.anomaly is not None else None}
        fh = self.target.open()
        if self.lines:
            fh.write(json.dumps(json.loads(to_json(tail)), ensure_ascii=False) + "\n")
        else:
            fh.write("\n  ],\n" + to_json(tail)[2:] + "\n")
        self.target.commit()

    def abort(self) -> None:
        self.target.abort()


class CsvWriter:
    """``--format csv``: the per-cycle table in batches, as
    :func:`torqlog.present.exporting.to_csv_text` writes it (``digits`` significant
    digits, None for full precision; an optional units row under the header)."""

    def __init__(self, path: str | None, digits: int | None = None,
                 units_row: bool = False) -> None:
        self.target = _Target(path)
        self.batch = _Batched(BATCH_ROWS)
        self.header = True
        self.digits = digits
        self.units_row = units_row

    def start(self, source: str, options: dict[str, Any]) -> None:
        self.target.open()

    def write(self, block: dict[str, Any]) -> None:
        self._flush(self.batch.push(block))

    def _flush(self, block: dict[str, Any] | None) -> None:
        if block is None:
            return
        from torqlog.present.exporting import csv_header

        fh = self.target.open()
        if self.header:
            fh.write(csv_header(list(COLUMNS), units_row=self.units_row))
            self.header = False
        cells = [_csv_cells(block[k], self.digits) for k in COLUMNS]
        if any(c is None for c in cells):  # time stamps with a zone: pandas writes them
            import pandas as pd

            from torqlog.present.exporting import to_csv_text

            fh.write(to_csv_text(pd.DataFrame(block, columns=list(COLUMNS)),
                                 digits=self.digits, header=False))
            return
        out = io.StringIO()
        csv.writer(out, lineterminator="\n").writerows(zip(*cells, strict=True))
        fh.write(out.getvalue())

    def finish(self, result: CycleResult) -> None:
        self._flush(self.batch.take())
        if self.header:  # no cycle reached the writer: the header alone
            self._flush(_empty_block())
        self.target.commit()

    def abort(self) -> None:
        self.target.abort()


def _arrow(v: Any) -> Any:
    """A column of a block as a pyarrow array built from its buffers: NaN and NaT become
    nulls (as a pandas table written to Parquet has them). ``pyarrow.array`` on numpy
    data or a list loads pandas in this pyarrow (~50 MB, ~0.3 s); the buffers do not."""
    import pyarrow as pa

    if not isinstance(v, np.ndarray):  # time stamps with a zone: pandas is loaded already
        return pa.array(v)
    n = v.size
    if v.dtype.kind == "O" or v.dtype.kind == "U":  # text: offsets and bytes
        enc = [str(x).encode() for x in v]
        off = np.zeros(n + 1, dtype=np.int32)
        np.cumsum([len(e) for e in enc], out=off[1:])
        return pa.Array.from_buffers(pa.string(), n, [None, pa.py_buffer(off),
                                                      pa.py_buffer(b"".join(enc))])
    if v.dtype.kind == "b":
        return pa.Array.from_buffers(pa.bool_(), n, [None, pa.py_buffer(
            np.packbits(v, bitorder="little"))])
    if v.dtype.kind in "iu":
        return pa.Array.from_buffers(pa.int64(), n, [None, pa.py_buffer(
            np.ascontiguousarray(v, dtype=np.int64))])
    if v.dtype.kind == "M":
        data, typ, valid = v.astype("datetime64[ns]").view(np.int64), pa.timestamp("ns"), \
            ~np.isnat(v)
    else:
        data, typ = np.ascontiguousarray(v, dtype=np.float64), pa.float64()
        valid = ~np.isnan(data)
    nulls = int(n - np.count_nonzero(valid))
    mask = pa.py_buffer(np.packbits(valid, bitorder="little")) if nulls else None
    return pa.Array.from_buffers(typ, n, [mask, pa.py_buffer(np.ascontiguousarray(data))],
                                 null_count=nulls)


class ParquetWriter:
    """``--format parquet``: row groups of :data:`ROW_GROUP_ROWS` cycles.

    Each column's unit is in its field metadata (``unit``) and the options in the schema
    metadata, as :func:`torqlog.present.exporting.parquet_schema` writes them for every
    Parquet table; the schema carries torqlog's output mark (kind ``cycles``, so folder
    discovery never reads the file as a log), and the file's key-value metadata
    ``torqlog`` holds source, options, summary and notes as JSON, written at the end.
    """

    def __init__(self, path: str | None) -> None:
        if not path:
            raise UsageError("--format parquet writes a file: give -o FILE")
        self.target = _Target(path, binary=True)
        self.batch = _Batched(ROW_GROUP_ROWS)
        self.writer: Any = None
        self.head: dict[str, Any] = {}

    def start(self, source: str, options: dict[str, Any]) -> None:
        self.head = {"source": source, "options": options}

    def write(self, block: dict[str, Any]) -> None:
        self._flush(self.batch.push(block))

    def _flush(self, block: dict[str, Any] | None) -> None:
        if block is None:
            return
        import pyarrow as pa
        import pyarrow.parquet as pq

        table = pa.Table.from_arrays([_arrow(block[k]) for k in COLUMNS], names=list(COLUMNS))
        if self.writer is None:
            from torqlog.io.outputs import parquet_metadata
            from torqlog.present.exporting import parquet_schema

            self.schema = parquet_schema(table.schema, self.head.get("options"),
                                         extra=parquet_metadata("cycles"))
            self.writer = pq.ParquetWriter(self.target.open(), self.schema)
        self.writer.write_table(table.cast(self.schema))

    def finish(self, result: CycleResult) -> None:
        self._flush(self.batch.take())
        if self.writer is None:  # no cycle reached the writer: an empty table
            self._flush(_empty_block())
        meta = {**self.head, "summary": result.summary, "notes": result.notes}
        self.writer.add_key_value_metadata({"torqlog": to_json(meta)})
        self.writer.close()
        self.target.commit()

    def abort(self) -> None:
        if self.writer is not None:
            self.writer.close()
        self.target.abort()


class TableWriter:
    """``--format table``: the summary text first, then every row; the rows wait in a
    temporary file while the log is read, so they never sit in memory."""

    def __init__(self, path: str | None, text: Callable[[CycleResult], str],
                 shape: bool = False) -> None:
        self.target = _Target(path)
        self.text = text
        self.spill = tempfile.TemporaryFile("w+", encoding="utf-8")
        self.batch = _Batched(BATCH_ROWS)
        self.columns = (*TABLE_COLUMNS[:-1], *SHAPE_COLUMNS, "flag") if shape \
            else TABLE_COLUMNS
        self.widths = [max(len(c), 6 if c == "cycle" else 10) for c in self.columns]

    def start(self, source: str, options: dict[str, Any]) -> None:
        head = [c.rjust(w) if c != "flag" else c for c, w in zip(self.columns, self.widths,
                                                                 strict=True)]
        self.spill.write(" ".join(head).rstrip() + "\n")

    def write(self, block: dict[str, Any]) -> None:
        self._flush(self.batch.push(block))

    def _flush(self, block: dict[str, Any] | None) -> None:
        if block is None:
            return
        cols = []
        for c, w in zip(self.columns, self.widths, strict=True):
            v = np.asarray(block[c])
            if c == "flag":  # the last column: flags vary in width
                cols.append([str(x) for x in v])
            elif v.dtype.kind == "f":
                cols.append([(_fmt_float(x) if x == x else "NaN").rjust(w) for x in v.tolist()])
            else:
                cols.append([str(x).rjust(w) for x in v.tolist()])
        self.spill.write("\n".join(" ".join(r).rstrip() for r in zip(*cols, strict=True))
                         + "\n")

    def finish(self, result: CycleResult) -> None:
        self._flush(self.batch.take())
        fh = self.target.open()
        fh.write(self.text(result) + "\n")
        self.spill.seek(0)
        shutil.copyfileobj(self.spill, fh, 1 << 20)
        self.spill.close()
        self.target.commit()

    def abort(self) -> None:
        self.spill.close()
        self.target.abort()


def make_writer(fmt: str, path: str | None, text: Callable[[CycleResult], str], *,
                digits: int | None = None, units_row: bool = False,
                shape: bool = False) -> Any:
    """The streaming writer for ``--format`` ``fmt`` to ``path`` (None: stdout).

    ``digits`` and ``units_row`` shape the CSV (None: full precision); ``shape`` adds
    the cycle-shape columns to the readable table.
    """
    from torqlog.io.outputs import check_format_suffix

    check_format_suffix(fmt, path)
    if fmt == "json":
        return JsonWriter(path)
    if fmt == "jsonl":
        return JsonWriter(path, lines=True)
    if fmt == "csv":
        return CsvWriter(path, digits=digits, units_row=units_row)
    if fmt == "parquet":
        return ParquetWriter(path)
    if fmt == "table":
        return TableWriter(path, text, shape=shape)
    raise UsageError(f"--format {fmt} is not written as the cycles complete")
