"""Follow a CSV log while a logger appends to it: cycles, ΔE, Cs and shape anomalies live.

:class:`TailReader` is a :class:`torqlog.io.ingest.LogReader` whose row source follows the
file: it parses only complete lines (a partial last line waits for its end), waits out
pauses, and notices when the file is replaced (a smaller size or a new inode, as a logger
does at midnight). :func:`watch_log` feeds the chunks to the same streaming cycle engine
as ``torqlog cycles`` and hands every completed cycle to a callback, with its anomaly
score. Memory stays bounded over days: finished cycle rows are handed out and dropped,
and only a bounded window of per-cycle flags is kept for the run analysis.
"""

from __future__ import annotations

import io
import math
import os
import time as _time
from collections.abc import Callable, Iterator
from dataclasses import asdict, dataclass
from itertools import chain
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.csv as pacsv

from torqlog.errors import DataError
from torqlog.io.ingest import Chunk, LogReader, _explain_arrow_error
from torqlog.signal import anomaly as an
from torqlog.signal import cycles as cy

#: Per-cycle flags kept for the run analysis of a long watch.
KEEP_FLAGS = 10_000


class Rotated(Exception):
    """The followed file was replaced by a new one."""


class TailReader(LogReader):
    """A LogReader over a file that is still being written (CSV text only).

    Parameters
    ----------
    path : str or Path
    poll : float [s]
        Wait between looks at the file.
    idle_exit : float [s] or None
        Stop after the file has not grown for this long (None: follow until stopped).
    should_stop : callable, optional
        Polled between looks; True ends the stream.
    **sniff_options
        As for :class:`LogReader`.
    """

    def __init__(self, path: str | Path, *, poll: float = 0.5, idle_exit: float | None = None,
                 should_stop: Callable[[], bool] | None = None, **sniff_options: Any) -> None:
        super().__init__(path, block_rows=1 << 30, read_ahead=False, **sniff_options)
        if self.layout.kind != "csv" or self.layout.path.lower().endswith(".gz"):
            raise DataError(f"{path}: watch follows plain CSV text only; this is "
                            f"{self.layout.kind}")
        self.poll = poll
        self.idle_exit = idle_exit
        self.should_stop = should_stop or (lambda: False)
        self.rotated = False

    def _grouped(self, wanted: list[Any]) -> Iterator[pa.Table]:
        lay = self.layout
        names = [c.name for c in lay.columns]
        types = {c.name: pa.float64() for c in wanted}
        if lay.time_kind == "timestamp":
            tcol = lay.column("time")
            types[tcol.name] = pa.timestamp("ns", tz="UTC" if lay.timestamp_tz else None)
        read = pacsv.ReadOptions(column_names=names, encoding=lay.encoding)
        parse = pacsv.ParseOptions(delimiter=lay.delimiter)
        conv = pacsv.ConvertOptions(column_types=types, include_columns=[c.name for c in wanted],
                                    decimal_point=lay.decimal,
                                    null_values=["", "NaN", "nan", "NA", "null", "-nan", "#N/A"],
                                    strings_can_be_null=True)
        path = lay.path
        fh = open(path, "rb")  # noqa: SIM115 - held open while following
        try:
            ino = os.fstat(fh.fileno()).st_ino
            for _ in range(lay.skip_rows):
                fh.readline()
            tail = b""
            idle_since = _time.monotonic()
            while True:
                if self.should_stop():
                    return
                data = fh.read(1 << 20)
                if data:
                    idle_since = _time.monotonic()
                    buf = tail + data
                    cut = buf.rfind(b"\n")
                    if cut < 0:
                        tail = buf
                        continue
                    tail = buf[cut + 1:]
                    lines = buf[: cut + 1]
                    if lines.strip():
                        try:
                            table = pacsv.read_csv(io.BytesIO(lines), read_options=read,
                                                   parse_options=parse, convert_options=conv)
                        except pa.ArrowInvalid as exc:
                            raise _explain_arrow_error(lay, wanted, exc) from None
                        yield table
                    continue
                try:
                    st = os.stat(path)
                    if st.st_ino != ino or st.st_size < fh.tell():
                        self.rotated = True
                        return
                except FileNotFoundError:  # between the old file's removal and the new one
                    pass
                if self.idle_exit is not None and \
                        _time.monotonic() - idle_since > self.idle_exit:
                    return
                _time.sleep(self.poll)
        finally:
            fh.close()


@dataclass(frozen=True)
class WatchSummary:
    """What a watch saw.

    Attributes
    ----------
    files : list of str
        The files followed (more than one after a rotation).
    cycles : int
        Cycles emitted.
    abnormal : int
        Abnormal cycles.
    anomaly : dict or None
        :meth:`AnomalyResult.to_dict` of the last file's stream (runs, worst cycles).
    model : dict
        The shape model's figures and where it came from.
    """

    files: list[str]
    cycles: int
    abnormal: int
    anomaly: dict[str, Any] | None
    model: dict[str, Any]

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready."""
        return asdict(self)


def _wait_for_layout(path: str, poll: float, idle_exit: float | None,
                     should_stop: Callable[[], bool], **read: Any
                     ) -> tuple[TailReader | None, Exception | None]:
    """A TailReader once the file exists and its head can be sniffed.

    Returns ``(reader, None)``, or ``(None, last_error)`` when the wait ends first
    (``last_error`` is None if the file never appeared).
    """
    t0 = _time.monotonic()
    last: Exception | None = None
    while True:
        try:
            return TailReader(path, poll=poll, idle_exit=idle_exit, should_stop=should_stop,
                              **read), None
        except FileNotFoundError:
            last = None
        except DataError as exc:
            last = exc if os.path.exists(path) else None
        if should_stop() or (idle_exit is not None and _time.monotonic() - t0 > idle_exit):
            return None, last
        _time.sleep(poll)


def _never_read(path: str, idle_exit: float | None, last: Exception | None) -> DataError:
    """The error for a watch that ended before the file could be read at all."""
    waited = f" in {idle_exit:g} s of watching" if idle_exit is not None else ""
    if last is None:
        return DataError(f"{path}: the file never appeared{waited}")
    return DataError(f"{path}: the file held no data{waited} ({last})")


def watch_log(path: str | Path, on_cycles: Callable[[dict[str, np.ndarray]], None],
              options: cy.CycleOptions | None = None, *,
              anomaly: an.AnomalyOptions | None = None, model: an.ShapeModel | None = None,
              poll: float = 0.5, idle_exit: float | None = None,
              should_stop: Callable[[], bool] | None = None, **read: Any) -> WatchSummary:
    """Follow a log and call ``on_cycles`` with each batch of completed cycles.

    Parameters
    ----------
    path : str or Path
        The CSV log being written.
    on_cycles : callable
        Receives a dict of per-cycle columns (:data:`torqlog.signal.cycles.COLUMNS`) each time
        cycles complete (with a delay of the speed filter's look-ahead, two cycles at the
        default cut-off;
        without a reference model, the first ``learn_cycles`` clean cycles are held until
        the model is learned from them).
    options : CycleOptions, optional
    anomaly : AnomalyOptions, optional
    model : ShapeModel, optional
        A reference model; otherwise one is learned from the first clean cycles and kept
        across file rotations.
    poll : float [s]
    idle_exit : float [s], optional
        Stop when the file has not grown for this long.
    should_stop : callable, optional
        True ends the watch (after the cycles complete so far are emitted).
    **read
        Reading options, as for :func:`torqlog.signal.cycles.analyse_cycles`.

    Returns
    -------
    WatchSummary

    Raises
    ------
    DataError
        When the watch ends (``idle_exit``) before the file appeared or held a data row.
    """
    if str(path).lower().endswith((".gz", ".parquet", ".h5", ".hdf5", ".mf4", ".mdf")):
        raise DataError(f"{path}: watch follows plain CSV text only (a file a logger appends "
                        "lines to); use `torqlog cycles` for a finished file")
    o = options or cy.CycleOptions()
    ao = anomaly or an.AnomalyOptions()
    stop = should_stop or (lambda: False)
    files: list[str] = []
    n_cycles = n_bad = 0
    last: dict[str, Any] | None = None
    while True:
        reader, why = _wait_for_layout(str(path), poll, idle_exit, stop, **read)
        if reader is None:
            if not files and not stop():
                raise _never_read(str(path), idle_exit, why)
            break
        files.append(reader.layout.path)
        monitor, st = _follow(reader, o, ao, model, on_cycles)
        model = monitor.model or model
        res = monitor.result()
        n_cycles += st.cycle_no
        n_bad += res.flagged
        last = res.to_dict()
        if not reader.rotated:
            break
    return WatchSummary(files=files, cycles=n_cycles, abnormal=n_bad, anomaly=last,
                        model=model.summary() if model is not None else {})


def _follow(reader: TailReader, o: cy.CycleOptions, ao: an.AnomalyOptions,
            model: an.ShapeModel | None, on_cycles: Callable[[dict[str, np.ndarray]], None]
            ) -> tuple[an.ShapeMonitor, Any]:
    lay = reader.layout
    plan = cy._plan(lay, o)
    rows_it = iter(reader)
    first, rest = _first_chunk(rows_it, o.block_rows)
    it = chain(rest, rows_it)
    chans = set(plan.has) | ({"speed"} if plan.speed_from_angle else set())
    monitor = an.ShapeMonitor(ao, o.revs_per_cycle, chans, model)
    monitor.recent = {}
    if first is None:
        return monitor, _Empty()
    tracker, _, _ = cy._tracker_for(plan.source, o, first, lay.path)
    st = plan.stream(o, tracker)

    def sink(cycles: np.ndarray, t_start: np.ndarray, duration: np.ndarray,
             curves: dict[str, np.ndarray]) -> None:
        st.shape_scores += monitor.push(cycles, t_start, duration, curves)

    st.shape_sink = sink
    pending: Chunk = first
    try:
        for chunk in it:
            st.feed(pending, final=False)
            pending = chunk
            _drain(st, monitor, lay, o, on_cycles)
        st.feed(pending, final=True)
    finally:
        st.shape_scores += monitor.finish()
        if monitor.model is None and st.rows:  # too few cycles for a model: emit unscored
            cols = cy._columns(st, lay, o)
            st.rows = []
            on_cycles(cols)
        _drain(st, monitor, lay, o, on_cycles)
    return monitor, st


def _first_chunk(it: Iterator[Chunk], rows: int) -> tuple[Chunk | None, list[Chunk]]:
    """The first ``rows`` rows as one chunk (or all there are when the stream ends).

    The cycle engine takes its sample step and spike scale from the first chunk; taking
    the same first rows as ``torqlog cycles`` (its ``block_rows``) gives the same figures.
    """
    parts: list[Chunk] = []
    n = 0
    for c in it:
        parts.append(c)
        n += len(c)
        if n >= rows:
            break
    if not parts:
        return None, []
    time = np.concatenate([c.time for c in parts])
    chans = {k: np.concatenate([c.channels[k] for c in parts]) for k in parts[0].channels}
    if n <= rows:
        return Chunk(parts[0].row0, time, chans), []
    # the rows beyond the first chunk follow as a chunk of their own
    rest = Chunk(parts[0].row0 + rows, time[rows:], {k: v[rows:] for k, v in chans.items()})
    return Chunk(parts[0].row0, time[:rows], {k: v[:rows] for k, v in chans.items()}), [rest]


class _Empty:
    cycle_no = 0


def _drain(st: Any, monitor: an.ShapeMonitor, lay: Any, o: cy.CycleOptions,
           on_cycles: Callable[[dict[str, np.ndarray]], None]) -> None:
    if not st.rows or monitor.model is None:
        return
    cols = cy._columns(st, lay, o)
    st.rows = []
    st.shape_scores = []
    recent = monitor.recent or {}
    cols["anomaly_where"] = np.array([recent.get(int(c), "") for c in cols["cycle"]],
                                     dtype=object)
    monitor.recent = {}
    on_cycles(cols)
    monitor.forget(KEEP_FLAGS)


def nan_to_none(x: Any) -> Any:
    """JSON-safe number."""
    return None if isinstance(x, float) and math.isnan(x) else x
