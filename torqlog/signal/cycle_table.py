"""The per-cycle table while it grows: compact typed columns and a running summary.

The cycle stage hands over its cycles a block at a time (the cycles finished in one
chunk of the log). :class:`SummaryStream` folds each block into the summary over clean
cycles with state that stops growing (running sums, exact quantiles up to a budget and a
relative-error sketch beyond it, see :mod:`torqlog.signal.streamstats`). :class:`ColumnStore`
keeps the block's rows, when a caller wants every row, as typed numpy columns — no Python
object per cycle: flags as small integer codes into their few distinct texts, numbers
as float64. (float32 would save 8 bytes a cycle on the two crank-angle columns, but the
rows are kept only where every cycle is needed, and float32 would print other digits
than the streamed outputs; the same rows must give the same text either way.)
:class:`ScoredBlocks` holds blocks back until their cycle-shape scores are known, so the
rows can be written out as they complete with the shape check on.
"""

from __future__ import annotations

import pickle
import tempfile
from collections import Counter
from collections.abc import Callable
from typing import IO, Any

import numpy as np

from torqlog.signal.streamstats import DEFAULT_QUANTILE_BUDGET, DEFAULT_SKETCH_ERROR, QuantileKeeper

#: Summary figures with quantiles: name in the summary → (column, quantiles asked).
_QUANTILE_FIGURES = ("energy_swing_J", "cs", "torque_peak_Nm", "duration_s")
_MEAN_FIGURES = ("speed_mean_rpm", "work_J", "torque_mean_Nm")


class SummaryStream:
    """Summary over the clean cycles of a per-cycle table fed in blocks.

    Parameters
    ----------
    quantile_budget : int
        Clean cycles whose values are held for exact quantiles [count]; beyond it a
        relative-error sketch answers (the summary's ``quantiles`` says which).
    sketch_error : float
        Relative error bound α of the sketch [–].
    """

    def __init__(self, quantile_budget: int = DEFAULT_QUANTILE_BUDGET,
                 sketch_error: float = DEFAULT_SKETCH_ERROR) -> None:
        self.total = 0
        self.clean = 0
        self.flags: Counter[str] = Counter()
        self.keepers = {k: QuantileKeeper(quantile_budget, sketch_error)
                        for k in _QUANTILE_FIGURES}
        self.sums = dict.fromkeys(_MEAN_FIGURES, 0.0)
        self.counts = dict.fromkeys(_MEAN_FIGURES, 0)
        self.sketch_error = sketch_error
        self.quantile_budget = quantile_budget

    def add(self, block: Any) -> None:
        """Fold in a block of rows (a mapping of column name to array, :data:`COLUMNS`)."""
        flag = np.asarray(block["flag"]).astype(str)
        ok = flag == ""
        self.total += flag.size
        self.clean += int(ok.sum())
        for f in flag[~ok]:
            self.flags.update(f.split("+"))
        for k in _QUANTILE_FIGURES:
            self.keepers[k].add(np.asarray(block[k], dtype=np.float64)[ok])
        for k in _MEAN_FIGURES:
            x = np.asarray(block[k], dtype=np.float64)[ok]
            x = x[~np.isnan(x)]
            self.sums[k] += float(np.sum(x))
            self.counts[k] += x.size

    def _stats(self, name: str) -> dict[str, float | None]:
        q = self.keepers[name]
        return {"median": q.median(), "p95": q.quantile(0.95), "max": q.max()}

    def _mean(self, name: str) -> float | None:
        return self.sums[name] / self.counts[name] if self.counts[name] else None

    def result(self, **extra: Any) -> dict[str, Any]:
        """The summary (keys as :func:`torqlog.signal.cycles.summarise` documents)."""
        dur = self.keepers["duration_s"].median()
        methods = {k.method for k in self.keepers.values()}
        sketched = [k for k, v in self.keepers.items() if v.method == "sketch"]
        bound_holds = all(self.keepers[k].describe().get("bound_holds", True) for k in sketched)
        out: dict[str, Any] = {
            "cycles": self.clean,
            "cycles_total": self.total,
            "flagged": self.total - self.clean,
            "cycle_rate_per_min": 60.0 / dur if self.clean and dur else None,
            "energy_swing_J": self._stats("energy_swing_J"),
            "cs": self._stats("cs"),
            "torque_peak_Nm_p99": self.keepers["torque_peak_Nm"].quantile(0.99),
            "speed_mean_rpm": self._mean("speed_mean_rpm"),
            "work_J_mean": self._mean("work_J"),
            "torque_mean_Nm": self._mean("torque_mean_Nm"),
            "flags": dict(self.flags.most_common()),
            "quantiles": {
                "method": "sketch" if "sketch" in methods else "exact",
                "exact_budget_cycles": self.quantile_budget,
                "relative_error_bound": self.sketch_error if sketched else None,
                "bound_holds": bound_holds if sketched else None,
            },
        }
        out.update(extra)
        return out

    def histogram(self, name: str, bins: int) -> tuple[np.ndarray, np.ndarray] | None:
        """Counts and edges of a clean-cycle figure (``energy_swing_J``, ``cs``,
        ``torque_peak_Nm``, ``duration_s``) in ``bins`` equal bins; None without values."""
        q = self.keepers[name]
        return q.histogram(bins) if q.n else None


class ColumnStore:
    """Per-cycle columns appended block by block into typed, doubling numpy buffers.

    ``flag`` texts are stored as integer codes into the list of distinct texts seen;
    :meth:`columns` gives the columns trimmed to the rows stored (views, no copy) with
    ``flag`` as an object array sharing one Python string per distinct text.
    """

    def __init__(self) -> None:
        self.n = 0
        self._bufs: dict[str, np.ndarray] = {}
        self._levels: dict[str, int] = {"": 0}

    @staticmethod
    def _dtype(x: np.ndarray) -> np.dtype:
        return x.dtype if x.dtype.kind in "iub" else np.dtype(np.float64)

    def add(self, block: dict[str, np.ndarray]) -> None:
        """Append a block of rows (columns of equal length)."""
        flag = np.asarray(block["flag"]).astype(str)
        nb = flag.size
        if nb == 0:
            return
        codes = np.zeros(nb, dtype=np.uint16)
        for text in np.unique(flag):
            if text:
                code = self._levels.setdefault(str(text), len(self._levels))
                codes[flag == text] = code
        cols = {k: np.asarray(v) for k, v in block.items() if k != "flag"}
        cols["flag"] = codes
        need = self.n + nb
        for k, v in cols.items():
            buf = self._bufs.get(k)
            if buf is None or buf.size < need:
                grown = np.empty(max(need, 2 * (0 if buf is None else buf.size), 256),
                                 dtype=np.uint16 if k == "flag" else self._dtype(v))
                if buf is not None:
                    grown[: self.n] = buf[: self.n]
                self._bufs[k] = buf = grown
            buf[self.n: need] = v
        self.n = need

    def columns(self) -> dict[str, np.ndarray]:
        """The stored columns, trimmed (``flag`` decoded to strings)."""
        out = {k: v[: self.n] for k, v in self._bufs.items() if k != "flag"}
        levels = np.empty(len(self._levels), dtype=object)
        for text, code in self._levels.items():
            levels[code] = text
        out["flag"] = levels[self._bufs["flag"][: self.n]] if self.n else \
            np.empty(0, dtype=object)
        return out

    @property
    def nbytes(self) -> int:
        """Bytes held by the buffers."""
        return sum(b.nbytes for b in self._bufs.values())


#: Held rows kept in memory before :class:`ScoredBlocks` moves them to a temporary file.
HELD_ROWS_IN_MEMORY = 20_000


class ScoredBlocks:
    """Blocks of finished cycles held until their cycle-shape scores are known.

    The shape model (:class:`torqlog.signal.anomaly.ShapeMonitor`) learns from the first
    ``learn_cycles`` clean cycles of a log (a bounded reference set) and scores them, and
    every later clean cycle, as soon as it has them. Until then the blocks of finished
    cycles wait here; each block is handed to ``release`` — in cycle order, once every
    clean cycle in it has its score (``anomaly_score``, ``anomaly`` filled in). Scores
    arrive in cycle order, so a block is complete when its last clean cycle is at or
    before the last cycle scored. After the model is learned a block waits only for its
    own scores (the same chunk); when no score will come (check off, or the model could
    not be learned) blocks pass at once with ``anomaly`` False and ``anomaly_score`` NaN.

    Memory is bounded: beyond ``memory_rows`` held rows the held blocks go to a temporary
    file (a log whose first ``learn_cycles`` clean cycles come late, after many flagged
    ones); the scores waiting for their block are at most the reference set and one chunk.

    Parameters
    ----------
    release : callable
        Takes each block (mapping of column name to array, columns
        :data:`torqlog.signal.cycles.COLUMNS`) once it is complete.
    waiting : bool
        Whether scores are to come (False: every block passes at once).
    memory_rows : int
        Held rows kept in memory before spilling [count].
    """

    def __init__(self, release: Callable[[dict[str, Any]], None], waiting: bool = True,
                 memory_rows: int | None = None) -> None:
        self.release = release
        self.waiting = waiting
        self.memory_rows = HELD_ROWS_IN_MEMORY if memory_rows is None else int(memory_rows)
        # held blocks, oldest first: (last clean cycle or -1, block or None when spilled)
        self.held: list[tuple[int, dict[str, Any] | None]] = []
        self.rows_in_memory = 0
        self.spill: IO[bytes] | None = None
        self.read_at = 0
        self.scored_through = -1
        self.pending: list[tuple[np.ndarray, np.ndarray]] = []
        self.scored = 0
        self.abnormal = 0
        self.spilled_blocks = 0

    def add(self, block: dict[str, Any]) -> None:
        """Hold a block of finished cycles (release it at once when it is complete)."""
        clean = np.flatnonzero(np.asarray(block["flag"]).astype(str) == "")
        last = int(np.asarray(block["cycle"])[clean[-1]]) if clean.size else -1
        self.held.append((last, block))
        self.rows_in_memory += len(block["cycle"])
        self._drain()
        if self.rows_in_memory > self.memory_rows:
            self._spill_all()

    def add_scores(self, scored: list[tuple[np.ndarray, np.ndarray]]) -> None:
        """Scores of clean cycles, as (cycle numbers, scores) pairs in cycle order."""
        for cyc, sc in scored:
            cyc = np.asarray(cyc, dtype=np.int64)
            sc = np.asarray(sc, dtype=np.float64)
            if not cyc.size:
                continue
            self.pending.append((cyc, sc))
            self.scored += int(np.isfinite(sc).sum())
            self.abnormal += int((sc > 1.0).sum())
            self.scored_through = max(self.scored_through, int(cyc.max()))
        self._drain()

    def stop_waiting(self) -> None:
        """No more scores will come: release what is held."""
        self.waiting = False
        self._drain()

    def close(self) -> None:
        """Release every block still held (the end of the log) and drop the spill."""
        self.stop_waiting()
        if self.spill is not None:
            self.spill.close()
            self.spill = None

    # -- inside
    def _drain(self) -> None:
        while self.held:
            last, block = self.held[0]
            if self.waiting and last > self.scored_through:
                return
            self.held.pop(0)
            if block is None:
                block = self._read_spilled()
            else:
                self.rows_in_memory -= len(block["cycle"])
            self.release(self._fill(block))
        if self.spill is not None:  # all released: start the file afresh
            self.spill.seek(0)
            self.spill.truncate()
            self.read_at = 0

    def _fill(self, block: dict[str, Any]) -> dict[str, Any]:
        """Put the scores of the block's cycles into its ``anomaly`` columns."""
        if not self.pending:
            return block
        first, last = int(block["cycle"][0]), int(block["cycle"][-1])
        cyc = np.concatenate([c for c, _ in self.pending])
        sc = np.concatenate([s for _, s in self.pending])
        n = int(np.searchsorted(cyc, last, side="right"))
        rest = (cyc[n:], sc[n:])
        self.pending = [rest] if rest[0].size else []
        c, s = cyc[:n], sc[:n]
        inside = c >= first  # earlier cycles' scores were applied already
        if inside.any():
            score = np.array(block["anomaly_score"], dtype=np.float64)
            score[c[inside] - first] = s[inside]
            block = {**block, "anomaly_score": score, "anomaly": score > 1.0}
        return block

    def _spill_all(self) -> None:
        """Move the held blocks in memory to the temporary file (order kept)."""
        if self.spill is None:
            self.spill = tempfile.TemporaryFile(prefix="torqlog-held-")
        self.spill.seek(0, 2)
        for i, (last, block) in enumerate(self.held):
            if block is not None:
                pickle.dump(block, self.spill, protocol=pickle.HIGHEST_PROTOCOL)
                self.held[i] = (last, None)
                self.spilled_blocks += 1
        self.rows_in_memory = 0

    def _read_spilled(self) -> dict[str, Any]:
        assert self.spill is not None
        self.spill.seek(self.read_at)
        block = pickle.load(self.spill)
        self.read_at = self.spill.tell()
        return block
