"""Per-cycle output of ``torqlog cycles`` written as the cycles complete.

Each writer is a :class:`torqlog.signal.cycles.CycleSink`: it gets the source and options before
the first block, every block of finished cycles, and the result (summary, notes) at the
end, so the per-cycle rows never sit in memory together. A file named with ``-o`` is
written under a temporary name beside it and renamed at the end; a run that fails leaves
no half-written file. Formats:

* ``csv`` — the per-cycle table (as pandas writes it), rows only;
* ``json`` — the same document as before streaming: source, options, ``cycles`` (an
  array written row by row), summary, notes;
* ``jsonl`` — JSON lines: the first line holds ``source`` and ``options``, then one line
  per cycle, the last line ``summary`` and ``notes``;
* ``parquet`` — the per-cycle table in row groups; source, options, summary and notes
  as JSON in the file's key-value metadata under ``torqlog``;
* ``table`` — the readable summary, then the rows (spilled to a temporary file while
  the log is read, since the summary comes first).
"""

from __future__ import annotations

import json
import math
import os
import shutil
import sys
import tempfile
from collections.abc import Callable
from pathlib import Path
from typing import IO, Any

import numpy as np

from torqlog.cli.base import _fmt_float, to_json
from torqlog.errors import UsageError
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


class _Target:
    """A text or binary destination: a file written atomically, or stdout."""

    def __init__(self, path: str | None, binary: bool = False) -> None:
        self.path = Path(path) if path else None
        self.binary = binary
        self.tmp: Path | None = None
        self.fh: IO[Any] | None = None

    def open(self) -> IO[Any]:
        if self.fh is None:
            if self.path is None:
                self.fh = sys.stdout.buffer if self.binary else sys.stdout
            else:
                fd, name = tempfile.mkstemp(dir=self.path.parent or ".",
                                            prefix=f".{self.path.name}.", suffix=".part")
                self.tmp = Path(name)
                self.fh = os.fdopen(fd, "wb") if self.binary else \
                    os.fdopen(fd, "w", encoding="utf-8", newline="\n")
        return self.fh

    def commit(self) -> None:
        fh = self.open()
        if self.tmp is None:
            fh.flush()
            return
        fh.close()
        os.replace(self.tmp, self.path)
        self.tmp = None

    def abort(self) -> None:
        if self.tmp is not None:
            if self.fh is not None:
                self.fh.close()
            self.tmp.unlink(missing_ok=True)
            self.tmp = None


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
    """``--format csv``: the per-cycle table, as pandas writes it, in batches."""

    def __init__(self, path: str | None) -> None:
        self.target = _Target(path)
        self.batch = _Batched(BATCH_ROWS)
        self.header = True

    def start(self, source: str, options: dict[str, Any]) -> None:
        self.target.open()

    def write(self, block: dict[str, Any]) -> None:
        self._flush(self.batch.push(block))

    def _flush(self, block: dict[str, Any] | None) -> None:
        if block is None:
            return
        import pandas as pd

        pd.DataFrame(block, columns=list(COLUMNS)).to_csv(self.target.open(), index=False,
                                                          header=self.header)
        self.header = False

    def finish(self, result: CycleResult) -> None:
        self._flush(self.batch.take())
        self.target.commit()

    def abort(self) -> None:
        self.target.abort()


class ParquetWriter:
    """``--format parquet``: row groups of :data:`ROW_GROUP_ROWS` cycles."""

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

        arrays = {}
        for k in COLUMNS:
            v = block[k]
            if k == "start_time":
                arrays[k] = pa.array(v) if not isinstance(v, np.ndarray) else \
                    pa.array(v, type=pa.timestamp("ns"), from_pandas=True)
            elif k == "flag":
                arrays[k] = pa.array(np.asarray(v).astype(str), type=pa.string())
            else:
                arrays[k] = pa.array(np.asarray(v))
        table = pa.table(arrays)
        if self.writer is None:
            self.writer = pq.ParquetWriter(self.target.open(), table.schema)
        self.writer.write_table(table)

    def finish(self, result: CycleResult) -> None:
        self._flush(self.batch.take())
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

    def __init__(self, path: str | None, text: Callable[[CycleResult], str]) -> None:
        self.target = _Target(path)
        self.text = text
        self.spill = tempfile.TemporaryFile("w+", encoding="utf-8")
        self.batch = _Batched(BATCH_ROWS)
        self.widths = [max(len(c), 6 if c == "cycle" else 10) for c in TABLE_COLUMNS]

    def start(self, source: str, options: dict[str, Any]) -> None:
        head = [c.rjust(w) for c, w in zip(TABLE_COLUMNS[:-1], self.widths, strict=False)]
        self.spill.write(" ".join([*head, TABLE_COLUMNS[-1]]) + "\n")

    def write(self, block: dict[str, Any]) -> None:
        self._flush(self.batch.push(block))

    def _flush(self, block: dict[str, Any] | None) -> None:
        if block is None:
            return
        cols = []
        for c, w in zip(TABLE_COLUMNS, self.widths, strict=True):
            v = np.asarray(block[c])
            if c == "flag":
                cols.append([str(x) for x in v])
            elif v.dtype.kind == "f":
                cols.append([(_fmt_float(x) if x == x else "NaN").rjust(w) for x in v.tolist()])
            else:
                cols.append([str(x).rjust(w) for x in v.tolist()])
        self.spill.write("\n".join(" ".join(r) for r in zip(*cols, strict=True)) + "\n")

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


def make_writer(fmt: str, path: str | None, text: Callable[[CycleResult], str]) -> Any:
    """The streaming writer for ``--format`` ``fmt`` to ``path`` (None: stdout)."""
    from torqlog.io.outputs import check_format_suffix

    check_format_suffix(fmt, path)
    if fmt == "json":
        return JsonWriter(path)
    if fmt == "jsonl":
        return JsonWriter(path, lines=True)
    if fmt == "csv":
        return CsvWriter(path)
    if fmt == "parquet":
        return ParquetWriter(path)
    return TableWriter(path, text)
