"""Read logger exports (CSV, CSV.gz, Parquet) into SI arrays, streaming in chunks.

The file is sniffed once (:func:`torqlog.io.sniff.sniff_layout`, also importable from here):
delimiter, decimal mark, metadata preamble, header, unit row, the role of each column
(time, torque, speed, angle, index pulse, encoder counts) and its unit. Then
:class:`LogReader` streams the data in chunks of SI arrays with pyarrow's streaming CSV
reader, so a file of any length is read in bounded memory; :func:`read_log` builds a
whole :class:`Record` on top of it.

References
----------
.. [1] A. Thompson and B. N. Taylor, *Guide for the Use of the International System of
   Units (SI)*, NIST SP 811, 2008 (unit conversion factors, applied through pint).
.. [2] ISO 8601-1:2019, *Date and time — Representations for information interchange*.
"""

from __future__ import annotations

import gzip
import math
import queue
import re
import threading
import zlib
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import pyarrow as pa
import pyarrow.csv as pacsv

from torqlog.errors import DataError, UsageError
from torqlog.io.layout import ROLES, Column, Layout
from torqlog.io.sniff import sniff_layout, split_fields

if TYPE_CHECKING:
    import pandas as pd

__all__ = ["ROLES", "Chunk", "Column", "Layout", "LogReader", "Record", "read_log",
           "sniff_layout"]


@dataclass(frozen=True)
class Chunk:
    """A block of consecutive rows in SI.

    Attributes
    ----------
    row0 : int
        Index of the first row of the block among all data rows (0-based).
    time : ndarray [s]
        Time since the first sample of the file.
    channels : dict of str to ndarray
        SI arrays by role (torque [N*m], speed [rad/s], angle [rad], index, counts).
    """

    row0: int
    time: np.ndarray
    channels: dict[str, np.ndarray]

    def __len__(self) -> int:
        return len(self.time)


@dataclass(frozen=True)
class Record:
    """A whole log in SI arrays plus metadata.

    Attributes
    ----------
    time : ndarray [s]
        Time since the first sample.
    channels : dict of str to ndarray
        SI arrays by role.
    layout : Layout
        How the file was read (source, units as written, preamble, start time).
    """

    time: np.ndarray
    channels: dict[str, np.ndarray]
    layout: Layout

    @property
    def source(self) -> str:
        """Path of the file read."""
        return self.layout.path

    @property
    def start(self) -> pd.Timestamp | None:
        """Absolute time of the first sample, if known."""
        return self.layout.start

    @property
    def rate(self) -> float:
        """Sample rate [Hz]: the stated rate, or 1 / median time step."""
        if self.layout.rate:
            return self.layout.rate
        if len(self.time) < 2:
            return float("nan")
        return float(1.0 / np.median(np.diff(self.time)))

    def __len__(self) -> int:
        return len(self.time)


# ----------------------------------------------------------------------------- reading
class LogReader:
    """Stream a log file as SI chunks.

    Parameters
    ----------
    path : str or Path
        The file.
    block_rows : int
        Rows per chunk (the last may be shorter); memory is bounded by this and by
        pyarrow's read block, not by the file length.
    **sniff_options
        Passed to :func:`sniff_layout` (``roles``, ``units``, ``rate``, ``start``).

    Examples
    --------
    >>> reader = LogReader("sample_data/press_comma.csv")          # doctest: +SKIP
    >>> for chunk in reader:                                       # doctest: +SKIP
    ...     process(chunk.time, chunk.channels["torque"])
    """

    def __init__(self, path: str | Path, block_rows: int = 500_000, *,
                 read_ahead: bool = True, **sniff_options: Any) -> None:
        if int(block_rows) < 1:
            raise UsageError(f"block_rows must be at least 1, got {block_rows}")
        self.layout = sniff_layout(path, **sniff_options)
        self.block_rows = int(block_rows)
        self.read_ahead = read_ahead
        self._raw: pa.NativeFile | None = None
        self._size = max(Path(self.layout.path).stat().st_size, 1)
        self._rows_read = 0

    def fraction_read(self) -> float:
        """Share of the file read so far (0 to 1), for progress bars: bytes of a CSV or
        Parquet file; rows read of the rows an MDF4 or HDF5 file states for its group."""
        from torqlog.io.read_mdf import ROWS_KEY

        total = self.layout.preamble.get(ROWS_KEY) if self.layout.kind in ("mdf4", "hdf5") \
            else None
        if total:
            return min(1.0, self._rows_read / max(int(total), 1))
        raw = self._raw
        try:
            return min(1.0, raw.tell() / self._size) if raw is not None else 0.0
        except (OSError, ValueError):  # closed
            return 1.0

    def __iter__(self) -> Iterator[Chunk]:
        """Read a chunk, convert it to SI, zero its time, check the time, yield it."""
        wanted = [c for c in self.layout.columns if c.role]
        t0: float | int | None = None
        last_t: float | None = None
        row = 0
        for batch in self._grouped(wanted):
            n = batch.num_rows
            if n == 0:
                continue
            time, chans = self._to_si(batch, wanted, row)
            time, t0 = self._zeroed_time(time, row, n, t0)
            self._check_time(time, row, last_t)
            last_t = float(time[-1])
            yield Chunk(row, time, chans)
            row += n
        if row == 0:
            raise DataError(f"{self.layout.path}: has a header but no data rows; export the "
                            "log with data")

    def _to_si(self, batch: pa.Table, wanted: list[Column],
               row: int) -> tuple[np.ndarray | None, dict[str, np.ndarray]]:
        """The time column as read (None if the file has none) and each channel in SI."""
        chans: dict[str, np.ndarray] = {}
        time = None
        for c in wanted:
            arr = batch.column(c.name)
            if c.role == "time":
                time = self._time(arr, row, batch.num_rows)
            elif c.factor != 1.0:
                values = _scaled(arr, c.factor)
                chans[c.role] = values if values is not None else \
                    self._values(arr, c, row) * c.factor
            else:
                chans[c.role] = self._values(arr, c, row)
        return time, chans

    def _zeroed_time(self, time: np.ndarray | None, row: int, n: int,
                     t0: float | int | None) -> tuple[np.ndarray, float | int | None]:
        """Time [s] since the first sample, and the first time as read (kept across chunks)."""
        lay = self.layout
        if time is None:
            return (row + np.arange(n, dtype=np.float64)) / lay.rate, t0
        if lay.time_kind == "timestamp":
            if t0 is None:
                t0 = int(time[0])
            return (time - t0).astype(np.float64) * 1e-9, t0
        if lay.time_kind == "seconds":
            if t0 is None:
                t0 = float(time[0])
            time -= t0  # a fresh array from _time: shift it in place
        return time, t0

    def _values(self, arr: pa.Array | pa.ChunkedArray, col: Column, row: int) -> np.ndarray:
        """A channel as float64; a Parquet column holding text is refused, naming the row."""
        if isinstance(arr, pa.ChunkedArray):
            arr = arr.combine_chunks()
        if not (pa.types.is_floating(arr.type) or pa.types.is_integer(arr.type)
                or pa.types.is_boolean(arr.type) or pa.types.is_null(arr.type)):
            try:
                arr = arr.cast(pa.float64())
            except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
                for i, v in enumerate(arr.to_pylist()):  # error path only: find the row
                    try:
                        float(v if v is not None else "nan")
                    except (TypeError, ValueError):
                        raise DataError(f"{self.layout.path}: row {row + i + 1}, column "
                                        f"{col.name!r}: {v!r} is not a number; fix the value "
                                        "or remove the row") from None
                raise DataError(f"{self.layout.path}: column {col.name!r} of type {arr.type} "
                                "is not numeric; give a numeric column") from None
        return _to_float(arr)

    def _time(self, arr: pa.Array, row: int, n: int) -> np.ndarray:
        """The time column as read: int64 [ns] for timestamps, else a new float64 array."""
        lay = self.layout
        if lay.time_kind == "timestamp":
            if pa.types.is_timestamp(arr.type):
                if isinstance(arr, pa.ChunkedArray):
                    arr = arr.combine_chunks()
                ns = arr.cast(pa.timestamp("ns", tz=arr.type.tz)).cast(pa.int64())
                if ns.null_count:
                    i = int(np.flatnonzero(_numbers(ns.is_null().cast(pa.int64()), np.int64))[0])
                    raise DataError(f"{lay.path}: line {lay.skip_rows + row + i + 1}: empty "
                                    "timestamp; remove the row or fill in the time")
                return _numbers(ns, np.int64)
            raise DataError(f"{lay.path}: time column is not ISO-8601 throughout")
        if lay.time_kind == "index":
            return _to_float(arr) / lay.rate
        factor = lay.column("time").factor
        values = _scaled(arr, factor)  # always a new array: the caller shifts it in place
        return values if values is not None else _to_float(arr) * factor

    def _check_time(self, time: np.ndarray, row: int, last: float | None) -> None:
        """Refuse an empty time or one that repeats or goes back, naming the line."""
        lay = self.layout
        first_ok = last is None or time[0] > last
        if first_ok and not np.isnan(time[0]) and bool((time[1:] > time[:-1]).all()):
            return  # the common case: one comparison pass (a NaN fails it)
        d = np.diff(time)
        if np.isnan(time).any():
            i = int(np.flatnonzero(np.isnan(time))[0])
            raise DataError(f"{lay.path}: line {lay.skip_rows + row + i + 1}: empty time value; "
                            "remove the row or fill in the time")
        if last is not None:
            d = np.concatenate(([time[0] - last], d))
            base = row - 1
        else:
            base = row
        bad = np.flatnonzero(d <= 0)
        if bad.size:
            i = int(bad[0])
            what = "repeats the previous time" if d[i] == 0 else "goes backwards in time"
            raise DataError(f"{lay.path}: line {lay.skip_rows + base + i + 2}: timestamp {what}; "
                            "sort the rows by time and remove duplicates")

    def _groups(self, wanted: list[Column]) -> Iterator[pa.Table]:
        """pyarrow's blocks regrouped into tables of exactly ``block_rows`` rows (the last
        may be shorter); blocks longer than a chunk are cut with zero-copy slices."""
        group: list[pa.RecordBatch] = []
        rows = 0
        for batch in self._batches(wanted):
            at = 0
            while at < batch.num_rows:
                take = min(batch.num_rows - at, self.block_rows - rows)
                group.append(batch.slice(at, take))
                rows += take
                at += take
                if rows >= self.block_rows:
                    yield pa.Table.from_batches(group)
                    group, rows = [], 0
        if group:
            yield pa.Table.from_batches(group)

    def _grouped(self, wanted: list[Column]) -> Iterator[pa.Table]:
        """Chunks of ``block_rows`` rows, read one chunk ahead unless ``read_ahead`` is off.

        A background thread parses the next chunk (pyarrow releases the GIL while it
        parses) while the caller computes on this one; the queue holds at most two
        chunks, so memory stays bounded by the chunk size.
        """
        if not self.read_ahead:
            yield from self._groups(wanted)
            return
        q: queue.Queue = queue.Queue(maxsize=2)
        stop = threading.Event()

        def produce() -> None:
            try:
                for table in self._groups(wanted):
                    if stop.is_set():
                        return
                    q.put(table)
                q.put(None)
            except BaseException as exc:  # noqa: BLE001 - handed to the consumer
                q.put(exc)

        worker = threading.Thread(target=produce, daemon=True)
        worker.start()
        try:
            while True:
                item = q.get()
                if item is None:
                    return
                if isinstance(item, BaseException):
                    raise item
                yield item
        finally:
            stop.set()
            while worker.is_alive():  # let the producer finish its last put
                try:
                    q.get_nowait()
                except queue.Empty:
                    worker.join(0.01)

    def _batches(self, wanted: list[Column]) -> Iterator[pa.RecordBatch]:
        """pyarrow record batches of the wanted columns, read as the file's kind asks."""
        kind = self.layout.kind
        if kind == "parquet":
            yield from self._parquet_batches(wanted)
        elif kind in ("mdf4", "hdf5"):
            yield from self._mdf_hdf_batches(wanted)
        else:
            yield from self._csv_batches(wanted)

    def _parquet_batches(self, wanted: list[Column]) -> Iterator[pa.RecordBatch]:
        """Batches of a Parquet file; an unreadable file is refused in a sentence."""
        import pyarrow.parquet as pq

        lay = self.layout
        try:
            pf = pq.ParquetFile(lay.path)
            yield from pf.iter_batches(batch_size=min(self.block_rows, 65536),
                                       columns=[c.name for c in wanted])
        except (OSError, ValueError, pa.ArrowException) as exc:  # pyarrow's own types
            raise DataError(f"{lay.path}: not a readable Parquet file ("
                            f"{_first_line(exc)}); check that the file is complete") \
                from None

    def _mdf_hdf_batches(self, wanted: list[Column]) -> Iterator[pa.RecordBatch]:
        """Batches of an MDF4 or HDF5 file, from their own readers."""
        from torqlog.io.read_hdf import iter_hdf_batches
        from torqlog.io.read_mdf import iter_mdf_batches

        lay = self.layout
        read = iter_mdf_batches if lay.kind == "mdf4" else iter_hdf_batches
        for batch in read(lay, [c.name for c in wanted]):
            self._rows_read += batch.num_rows
            yield batch

    def _csv_batches(self, wanted: list[Column]) -> Iterator[pa.RecordBatch]:
        """Batches of a CSV or CSV.gz, streamed; pyarrow's errors become sentences."""
        lay = self.layout
        read, parse, conv = _csv_options(lay, wanted)
        try:
            self._raw = pa.OSFile(lay.path, "rb")
            reader = pacsv.open_csv(self._raw if not lay.path.lower().endswith(
                ".gz") else pa.CompressedInputStream(self._raw, "gzip"),
                read_options=read, parse_options=parse, convert_options=conv)
            yield from reader
        except pa.ArrowInvalid as exc:
            raise _explain_arrow_error(lay, wanted, exc) from None
        except (OSError, EOFError, pa.ArrowException) as exc:
            gz = lay.path.lower().endswith(".gz")
            raise DataError(f"{lay.path}: cannot be read {'as gzip ' if gz else ''}to the end "
                            f"({_first_line(exc)}); the file is damaged or was cut short: "
                            "export or copy it again") from None


def _csv_options(lay: Layout, wanted: list[Column]) -> tuple[
        pacsv.ReadOptions, pacsv.ParseOptions, pacsv.ConvertOptions]:
    """pyarrow's read, parse and convert options for a sniffed CSV layout."""
    names = [c.name for c in lay.columns]
    types: dict[str, pa.DataType] = {}
    for c in wanted:
        if c.role == "time" and lay.time_kind == "timestamp":
            types[c.name] = pa.timestamp("ns", tz="UTC" if lay.timestamp_tz else None)
        else:
            types[c.name] = pa.float64()
    # pyarrow reads several blocks ahead and keeps them: small blocks bound memory
    # (1 MiB blocks measured fastest and smallest on a 10 M-row log)
    read = pacsv.ReadOptions(skip_rows=lay.skip_rows, column_names=names,
                             block_size=1 << 20,
                             encoding=lay.encoding, use_threads=True)
    parse = pacsv.ParseOptions(delimiter=lay.delimiter)
    conv = pacsv.ConvertOptions(column_types=types, include_columns=[c.name for c in wanted],
                                decimal_point=lay.decimal,
                                null_values=["", "NaN", "nan", "NA", "null", "-nan", "#N/A"],
                                strings_can_be_null=True)
    return read, parse, conv


def _first_line(exc: BaseException) -> str:
    """First line of an exception's message, at most 120 characters."""
    text = (str(exc).strip().splitlines() or [type(exc).__name__])[0]
    return text if len(text) <= 120 else text[:117] + "..."


def _numbers(arr: pa.Array | pa.ChunkedArray, dtype: type = np.float64) -> np.ndarray:
    """A numeric pyarrow column as a numpy array, read from its data buffer.

    ``Array.to_numpy`` would do, but in this pyarrow it imports pandas (~0.3 s of
    start-up) the first time; the buffer view does not.
    """
    if isinstance(arr, pa.ChunkedArray):
        arr = arr.combine_chunks()
    target = pa.float64() if dtype is np.float64 else pa.int64()
    if arr.type != target:
        arr = arr.cast(target)
    if arr.null_count:
        arr = arr.fill_null(math.nan if dtype is np.float64 else 0)
    item = np.dtype(dtype).itemsize
    return np.frombuffer(arr.buffers()[1], dtype=dtype, count=len(arr),
                         offset=arr.offset * item)


def _to_float(arr: pa.Array | pa.ChunkedArray) -> np.ndarray:
    return _numbers(arr, np.float64)


def _scaled(arr: pa.Array | pa.ChunkedArray, factor: float) -> np.ndarray | None:
    """``arr × factor`` as a new float64 array, written piece by piece (no combined copy
    first); None unless ``arr`` is a float64 column, for the general path to handle."""
    if arr.type != pa.float64():
        return None
    pieces = arr.chunks if isinstance(arr, pa.ChunkedArray) else [arr]
    out = np.empty(len(arr), dtype=np.float64)
    at = 0
    for piece in pieces:
        k = len(piece)
        np.multiply(_numbers(piece), factor, out=out[at:at + k])
        at += k
    return out


def _explain_arrow_error(lay: Layout, wanted: list[Column], exc: Exception) -> DataError:
    """Turn a pyarrow conversion error into a sentence naming line and column."""
    msg = str(exc)
    m = re.search(r"CSV column #(\d+).*?invalid value '([^']*)'", msg)
    if "Expected" in msg and "columns" in msg:
        m2 = re.search(r"Expected (\d+) columns, got (\d+): (.*)", msg)
        if m2:
            return DataError(f"{lay.path}: a row has {m2.group(2)} fields where the header has "
                             f"{m2.group(1)}: {_show(m2.group(3))}; fix or remove that row")
    if m:
        col = lay.columns[int(m.group(1))] if int(m.group(1)) < len(lay.columns) else None
        bad = m.group(2)
        line = _find_line(lay, col, bad) if col is not None else None
        where = f"line {line}, " if line else ""
        cname = col.name if col else f"#{m.group(1)}"
        if "\x00" in bad:
            return DataError(f"{lay.path}: {where}column {cname!r}: the value holds "
                             f"{bad.count(chr(0))} NUL byte(s), binary data inside the text; "
                             "the file is damaged: export or copy it again")
        if col is not None and col.role == "time" and lay.time_kind == "timestamp":
            return DataError(f"{lay.path}: {where}column {cname!r}: {_show(bad)} is not an "
                             "ISO-8601 timestamp; fix the value or remove the row")
        return DataError(f"{lay.path}: {where}column {cname!r}: {_show(bad)} is not a number; "
                         "fix the value or remove the row")
    return DataError(f"{lay.path}: cannot parse the file ({msg.splitlines()[0]})")


def _show(value: str, width: int = 40) -> str:
    """A bad value for a message: quoted, runs of NUL bytes counted, at most ``width``
    characters of it."""
    text = re.sub(r"\x00+", lambda m: f"<{len(m.group())} NUL>", value)
    return repr(text if len(text) <= width else text[:width] + "...")


def _find_line(lay: Layout, col: Column, bad: str) -> int | None:
    """Slow search for the line holding a bad value (error path only)."""
    idx = [c.name for c in lay.columns].index(col.name)
    opener = gzip.open if lay.path.lower().endswith(".gz") else open
    enc = {"utf8": "utf-8", "utf-16": "utf-16"}.get(lay.encoding, "latin-1")
    try:
        with opener(lay.path, "rt", encoding=enc, errors="replace") as fh:
            for n, line in enumerate(fh, start=1):
                if n <= lay.skip_rows:
                    continue
                f = split_fields(line.rstrip("\r\n"), lay.delimiter)
                if idx < len(f) and f[idx] == bad:
                    return n
    except (OSError, EOFError, zlib.error):  # a damaged file: the caller still names the value
        return None
    return None


def read_log(path: str | Path, **options: Any) -> Record:
    """Read a whole log into a :class:`Record` (built on the chunked reader).

    Parameters
    ----------
    path : str or Path
        CSV, CSV.gz or Parquet logger export.
    **options
        ``roles``, ``units``, ``rate`` [Hz], ``start`` as for :func:`sniff_layout`;
        ``block_rows`` for the chunk size.

    Returns
    -------
    Record
        Time [s] and channels in SI.
    """
    reader = LogReader(path, **options)
    times, chans = [], {}
    for ch in reader:
        times.append(ch.time)
        for k, v in ch.channels.items():
            chans.setdefault(k, []).append(v)
    return Record(np.concatenate(times), {k: np.concatenate(v) for k, v in chans.items()},
                  reader.layout)
