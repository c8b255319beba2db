"""Statistics kept in bounded memory while a log streams past.

* :class:`RunningMoments` — mean and standard deviation of arrays (one value per angle
  bin of the mean cycle), updated a block of cycles at a time by Welford's method in
  the pairwise form of Chan, Golub & LeVeque.
* :class:`RelativeErrorSketch` — a quantile sketch with logarithmic buckets (DDSketch):
  every quantile it returns lies within a stated relative error α of the exact one,
  in memory set by the spread of the values, not their number.
* :class:`QuantileKeeper` — exact quantiles (numpy, linear interpolation) while the
  values fit a budget, the sketch beyond it; it says which one answered.

References
----------
.. [1] B. P. Welford, "Note on a method for calculating corrected sums of squares and
   products", *Technometrics* 4(3), 419–420, 1962.
.. [2] T. F. Chan, G. H. Golub and R. J. LeVeque, "Algorithms for computing the sample
   variance: analysis and recommendations", *The American Statistician* 37(3),
   242–247, 1983 (combining the sums of two blocks).
.. [3] C. Masson, J. E. Rim and H. K. Lee, "DDSketch: a fast and fully-mergeable
   quantile sketch with relative-error guarantees", *Proc. VLDB Endowment* 12(12),
   2195–2205, 2019.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

#: Values held exactly per figure before a sketch takes over (a shift at 600 rpm is
#: ~290 000 cycles: exact).
DEFAULT_QUANTILE_BUDGET = 500_000
#: Relative error α of the quantile sketch.
DEFAULT_SKETCH_ERROR = 1e-4
#: Buckets per sign before the lowest are merged (about a 10^5 spread of values at α=1e-4).
MAX_SKETCH_BUCKETS = 1 << 16


class RunningMoments:
    """Mean and population standard deviation of equal-shaped rows, block by block.

    Each :meth:`add` takes a block of rows (n, m) and folds its mean and sum of squared
    deviations into the running ones with the pairwise update of [2]_; nothing per row is
    kept, and no sum of squares of raw values is formed (no cancellation).

    References
    ----------
    .. [1] Welford (1962). .. [2] Chan, Golub & LeVeque (1983), eq. 2.1.

    Examples
    --------
    >>> rm = RunningMoments()
    >>> rm.add(np.array([[1.0, 10.0], [3.0, 10.0]]))
    >>> rm.add(np.array([[5.0, 13.0]]))
    >>> rm.mean.tolist(), np.round(rm.std(), 6).tolist()
    ([3.0, 11.0], [1.632993, 1.414214])
    """

    def __init__(self) -> None:
        self.n = 0
        self.mean: np.ndarray | None = None
        self.m2: np.ndarray | None = None

    def add(self, rows: np.ndarray) -> None:
        """Fold in a block of rows (n, m) [any unit]."""
        rows = np.asarray(rows, dtype=np.float64)
        nb = rows.shape[0]
        if nb == 0:
            return
        mb = rows.mean(axis=0)
        m2b = ((rows - mb) ** 2).sum(axis=0)
        if self.mean is None:
            self.n, self.mean, self.m2 = nb, mb, m2b
            return
        n = self.n + nb
        delta = mb - self.mean
        self.mean = self.mean + delta * (nb / n)
        self.m2 = self.m2 + m2b + delta * delta * (self.n * nb / n)
        self.n = n

    def std(self) -> np.ndarray:
        """Population standard deviation [unit of the rows] (NaN before any row)."""
        if self.mean is None or self.m2 is None:
            return np.array([np.nan])
        return np.sqrt(np.maximum(self.m2 / self.n, 0.0))


class _LogBuckets:
    """Counts of positive values in buckets (γ^(i−1), γ^i]; the lowest merge past a cap."""

    def __init__(self, gamma: float, max_buckets: int) -> None:
        self.log_gamma = math.log(gamma)
        self.gamma = gamma
        self.max_buckets = max_buckets
        self.offset = 0
        self.counts = np.zeros(0, dtype=np.int64)
        self.collapsed = False

    def add(self, x: np.ndarray) -> None:
        if x.size == 0:
            return
        keys = np.ceil(np.log(x) / self.log_gamma).astype(np.int64)
        lo, hi = int(keys.min()), int(keys.max())
        if self.counts.size == 0:
            self.offset = lo
            self.counts = np.zeros(hi - lo + 1, dtype=np.int64)
        else:
            new_lo = min(lo, self.offset)
            new_hi = max(hi, self.offset + self.counts.size - 1)
            if new_lo < self.offset or new_hi >= self.offset + self.counts.size:
                grown = np.zeros(new_hi - new_lo + 1, dtype=np.int64)
                start = self.offset - new_lo
                grown[start:start + self.counts.size] = self.counts
                self.counts, self.offset = grown, new_lo
        self.counts += np.bincount(keys - self.offset, minlength=self.counts.size)
        if self.counts.size > self.max_buckets:  # merge the lowest buckets into one
            cut = self.counts.size - self.max_buckets
            self.counts[cut] += self.counts[:cut].sum()
            self.counts = self.counts[cut:].copy()
            self.offset += cut
            self.collapsed = True

    def values(self) -> np.ndarray:
        """Representative value of each bucket, 2γ^i/(γ+1) [3]_ (within α of any member)."""
        i = self.offset + np.arange(self.counts.size)
        return 2.0 * np.exp(i * self.log_gamma) / (self.gamma + 1.0)


class RelativeErrorSketch:
    """Quantiles of a stream with relative error at most α, in bounded memory (DDSketch).

    Positive values go to buckets (γ^(i−1), γ^i] with γ = (1+α)/(1−α); negative values to
    a mirrored set; zeros are counted. A quantile is read at the bucket holding its rank
    and answered with the bucket's representative value, which lies within α·|x| of every
    value in the bucket [3]_. Memory grows with log(max/min) of the values, not with their
    number; past :data:`MAX_SKETCH_BUCKETS` buckets per sign the lowest are merged and the
    bound no longer holds for the smallest values (``collapsed`` says so).

    Parameters
    ----------
    relative_error : float
        α, the bound on |estimate − exact| / |exact| [–].

    Examples
    --------
    >>> s = RelativeErrorSketch(0.01)
    >>> s.add(np.arange(1.0, 1001.0))
    >>> abs(s.quantile(0.5) - 500.5) / 500.5 <= 0.01
    True
    """

    def __init__(self, relative_error: float = DEFAULT_SKETCH_ERROR,
                 max_buckets: int = MAX_SKETCH_BUCKETS) -> None:
        if not 0.0 < relative_error < 1.0:
            raise ValueError(f"relative error must lie in (0, 1), got {relative_error}")
        self.alpha = float(relative_error)
        gamma = (1.0 + self.alpha) / (1.0 - self.alpha)
        self.pos = _LogBuckets(gamma, max_buckets)
        self.neg = _LogBuckets(gamma, max_buckets)
        self.zeros = 0
        self.n = 0
        self.min = math.inf
        self.max = -math.inf

    @property
    def collapsed(self) -> bool:
        """True when buckets were merged (the bound then fails for the smallest |x|)."""
        return self.pos.collapsed or self.neg.collapsed

    def add(self, x: np.ndarray) -> None:
        """Add finite values [any unit] (NaN must be removed first)."""
        x = np.asarray(x, dtype=np.float64)
        if x.size == 0:
            return
        self.n += x.size
        self.min = min(self.min, float(x.min()))
        self.max = max(self.max, float(x.max()))
        self.pos.add(x[x > 0])
        self.neg.add(-x[x < 0])
        self.zeros += int(np.count_nonzero(x == 0))

    def _sorted(self) -> tuple[np.ndarray, np.ndarray]:
        """Bucket values in ascending order and their cumulative counts."""
        vals = np.concatenate((-self.neg.values()[::-1], [0.0], self.pos.values()))
        counts = np.concatenate((self.neg.counts[::-1], [self.zeros], self.pos.counts))
        return vals, np.cumsum(counts)

    def quantile(self, q: float) -> float:
        """The q-quantile with numpy's default (linear) interpolation between order
        statistics; each order statistic within α of the exact one [–]."""
        if self.n == 0:
            return math.nan
        vals, cum = self._sorted()
        r = q * (self.n - 1)
        k = math.floor(r)
        ks = np.array([k, min(k + 1, self.n - 1)])
        at = np.clip(vals[np.searchsorted(cum, ks, side="right")], self.min, self.max)
        return float(at[0] + (r - k) * (at[1] - at[0]))

    def histogram(self, bins: int, value_range: tuple[float, float] | None = None
                  ) -> tuple[np.ndarray, np.ndarray]:
        """Counts [–] and edges of ``bins`` equal bins, each bucket counted at its value."""
        vals, cum = self._sorted()
        counts = np.diff(np.concatenate(([0], cum)))
        rng = value_range or (self.min, self.max)
        return np.histogram(np.clip(vals, self.min, self.max), bins=bins, range=rng,
                            weights=counts)


class QuantileKeeper:
    """Quantiles of one figure: exact while at most ``budget`` values came, else a sketch.

    The values are held in a growing float64 buffer (8 bytes each); when the next block
    would pass the budget they are poured into a :class:`RelativeErrorSketch` and the
    buffer is dropped. The maximum and the count are always exact.

    Parameters
    ----------
    budget : int
        Values held exactly [count].
    relative_error : float
        α of the sketch [–].
    """

    def __init__(self, budget: int = DEFAULT_QUANTILE_BUDGET,
                 relative_error: float = DEFAULT_SKETCH_ERROR) -> None:
        self.budget = int(budget)
        self.relative_error = float(relative_error)
        self._buf = np.empty(0, dtype=np.float64)
        self.n = 0
        self.sketch: RelativeErrorSketch | None = None

    @property
    def method(self) -> str:
        """``"exact"`` or ``"sketch"``."""
        return "exact" if self.sketch is None else "sketch"

    def add(self, x: np.ndarray) -> None:
        """Add values [any unit]; NaN are left out."""
        x = np.asarray(x, dtype=np.float64)
        x = x[~np.isnan(x)]
        if x.size == 0:
            return
        if self.sketch is None and self.n + x.size > self.budget:
            self.sketch = RelativeErrorSketch(self.relative_error)
            self.sketch.add(self._buf[: self.n])
            self._buf = np.empty(0, dtype=np.float64)
        if self.sketch is not None:
            self.sketch.add(x)
        else:
            if self.n + x.size > self._buf.size:
                grown = np.empty(max(2 * self._buf.size, self.n + x.size, 1024))
                grown[: self.n] = self._buf[: self.n]
                self._buf = grown
            self._buf[self.n: self.n + x.size] = x
        self.n += x.size

    @property
    def values(self) -> np.ndarray | None:
        """The values held exactly (a view), or None once the sketch took over."""
        return self._buf[: self.n] if self.sketch is None else None

    def quantile(self, q: float) -> float | None:
        """The q-quantile (linear interpolation), None without values."""
        if self.n == 0:
            return None
        if self.sketch is not None:
            return self.sketch.quantile(q)
        return float(np.quantile(self._buf[: self.n], q))

    def median(self) -> float | None:
        """The median (numpy's, exact below the budget), None without values."""
        if self.n == 0:
            return None
        if self.sketch is not None:
            return self.sketch.quantile(0.5)
        return float(np.median(self._buf[: self.n]))

    def max(self) -> float | None:
        """The exact maximum, None without values."""
        if self.n == 0:
            return None
        if self.sketch is not None:
            return self.sketch.max
        return float(self._buf[: self.n].max())

    def histogram(self, bins: int) -> tuple[np.ndarray, np.ndarray]:
        """Counts [–] and edges of ``bins`` equal-width bins over the values' range."""
        if self.sketch is not None:
            return self.sketch.histogram(bins)
        return np.histogram(self._buf[: self.n], bins=bins)

    def describe(self) -> dict[str, Any]:
        """How the quantiles were found, for a result's record."""
        d: dict[str, Any] = {"method": self.method, "values": self.n}
        if self.sketch is not None:
            d["relative_error_bound"] = self.relative_error
            d["bound_holds"] = not self.sketch.collapsed
        return d
