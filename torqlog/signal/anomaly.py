"""Cycle-shape anomalies: a PCA model of the normal cycle, Hotelling's T² and Q (SPE).

Each clean cycle's torque (and speed, when logged) on the cycle engine's angle grid,
averaged into coarser bins (:data:`BINS_PER_REV` per revolution), is one observation.
The normal shape is learned from a reference set by principal component analysis
(Jackson 1991): the first ``k`` components span the normal variation, the rest is
noise. A cycle is scored by Hotelling's T² in the model plane and by the squared
prediction error Q off it, each against its control limit at a stated false-alarm rate:

- T² limit for a new observation, ``k (n+1)(n−1) / (n (n−k)) · F(1−α; k, n−k)``
  (Tracy, Young & Mason 1992; MacGregor & Kourti 1995);
- Q limit by Jackson & Mudholkar (1979), from the sums θ₁, θ₂, θ₃ of the powers of the
  residual eigenvalues.

The two tests share the stated false-alarm rate ``fa`` by Šidák's split
(``α = 1 − √(1 − fa)`` each); a cycle is abnormal when ``max(T²/T²_lim, Q/Q_lim) > 1``,
and that ratio is its ``anomaly_score``. Where the residual is largest (contribution per
angle bin, Miller, Swanson & Heckler 1998) gives the angle window of the defect.

References
----------
.. [1] J. E. Jackson and G. S. Mudholkar, "Control procedures for residuals associated
   with principal component analysis", *Technometrics* 21(3), 341–349, 1979.
.. [2] N. D. Tracy, J. C. Young and R. L. Mason, "Multivariate control charts for
   individual observations", *J. Quality Technology* 24(2), 88–95, 1992.
.. [3] J. F. MacGregor and T. Kourti, "Statistical process control of multivariate
   processes", *Control Engineering Practice* 3(3), 403–414, 1995.
.. [4] J. E. Jackson, *A User's Guide to Principal Components*, Wiley, 1991, ch. 1–2.
.. [5] P. Miller, R. E. Swanson and C. E. Heckler, "Contribution plots: a missing link
   in multivariate quality control", *Appl. Math. and Comp. Sci.* 8(4), 775–792, 1998.
.. [6] Z. Šidák, "Rectangular confidence regions for the means of multivariate normal
   distributions", *J. Amer. Statist. Assoc.* 62, 626–633, 1967.
"""

from __future__ import annotations

import heapq
import json
import math
from dataclasses import asdict, dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from torqlog.errors import DataError, UsageError

#: Model bins per shaft revolution (10° each).
BINS_PER_REV = 36
#: Default overall false-alarm rate per healthy cycle (T² and Q together).
DEFAULT_FALSE_ALARM = 0.005
#: Default number of first clean cycles the model is learned from when no reference is given.
DEFAULT_LEARN_CYCLES = 300
#: Fewest reference cycles a model is fitted on.
MIN_REFERENCE_CYCLES = 40
#: Most principal components kept.
MAX_COMPONENTS = 8
#: Flagged cycles whose curves and findings are kept (the worst, by score).
KEEP_WORST = 20
#: Robust trim of the reference: distance to the median cycle beyond median + this × MAD-SD.
TRIM_SDS = 4.0
FORMAT = "torqlog-shape-model"
CHANNELS = ("torque", "speed")


@dataclass(frozen=True)
class AnomalyOptions:
    """Options of the shape model.

    Attributes
    ----------
    false_alarm : float
        Overall false-alarm rate per healthy cycle, split between T² and Q (Šidák).
    learn_cycles : int
        Clean cycles (from the start of the log) the model is learned from when no
        reference model is given.
    variance : float
        Share of the reference variance the model plane explains (at most
        :data:`MAX_COMPONENTS` components).
    bins_per_rev : int
        Model bins per shaft revolution.
    """

    false_alarm: float = DEFAULT_FALSE_ALARM
    learn_cycles: int = DEFAULT_LEARN_CYCLES
    variance: float = 0.90
    bins_per_rev: int = BINS_PER_REV

    def __post_init__(self) -> None:
        if not (0 < self.false_alarm < 0.5):
            raise UsageError(f"false-alarm rate must be between 0 and 0.5, got "
                             f"{self.false_alarm}")
        if self.learn_cycles < MIN_REFERENCE_CYCLES:
            raise UsageError(f"the shape model needs at least {MIN_REFERENCE_CYCLES} cycles to "
                             f"learn from, got {self.learn_cycles}")
        if not (0 < self.variance < 1):
            raise UsageError(f"explained variance must be between 0 and 1, got {self.variance}")
        if 360 % self.bins_per_rev:
            raise UsageError(f"bins per rev must divide 360, got {self.bins_per_rev}")


# ----------------------------------------------------------------------------- limits
def t2_limit(n_components: int, n_reference: int, alpha: float) -> float:
    """Upper control limit of Hotelling's T² for a new observation.

    Parameters
    ----------
    n_components : int
        Principal components in the model, ``k``.
    n_reference : int
        Observations the model was estimated from, ``n`` (``n > k``).
    alpha : float
        False-alarm probability of the T² test.

    Returns
    -------
    float
        ``k (n+1)(n−1) / (n (n−k)) · F(1−α; k, n−k)``.

    References
    ----------
    Tracy, Young & Mason (1992), eq. 6 (phase II, future observations); MacGregor &
    Kourti (1995), sec. 3.

    Examples
    --------
    >>> round(t2_limit(2, 100, 0.01), 3)
    9.853
    """
    # the F quantile by scipy.special (what scipy.stats.f.ppf calls, without loading
    # scipy.stats: ~0.5 s and ~50 MB on the cycles command)
    from scipy.special import fdtri

    k, n = int(n_components), int(n_reference)
    if not (0 < k < n):
        raise UsageError(f"T² limit needs 0 < k < n, got k={k}, n={n}")
    return float(k * (n + 1) * (n - 1) / (n * (n - k)) * fdtri(k, n - k, 1.0 - alpha))


def q_limit(residual_eigenvalues: np.ndarray, alpha: float) -> float:
    """Upper control limit of Q (squared prediction error), Jackson & Mudholkar (1979).

    Parameters
    ----------
    residual_eigenvalues : array
        Eigenvalues of the covariance not in the model plane (scaled units²).
    alpha : float
        False-alarm probability of the Q test.

    Returns
    -------
    float
        ``θ₁ [c_α √(2θ₂h₀²)/θ₁ + 1 + θ₂h₀(h₀−1)/θ₁²]^(1/h₀)``, with
        ``θᵢ = Σ λʲⁱ`` and ``h₀ = 1 − 2θ₁θ₃ / (3θ₂²)``.

    References
    ----------
    Jackson & Mudholkar (1979), eq. 3.4; Jackson (1991), sec. 2.7.

    Examples
    --------
    >>> round(q_limit(np.full(10, 1.0), 0.05), 2)   # ~ chi-square(10) 95 %: 18.31
    18.29
    """
    from scipy.special import ndtri  # the normal quantile (scipy.stats.norm.ppf's)

    lam = np.asarray(residual_eigenvalues, dtype=np.float64)
    lam = lam[lam > 0]
    if lam.size == 0:
        raise DataError("no residual variance left off the model plane: the Q limit is "
                        "undefined (too few bins or too many components)")
    th1, th2, th3 = (float(np.sum(lam**i)) for i in (1, 2, 3))
    h0 = 1.0 - 2.0 * th1 * th3 / (3.0 * th2 * th2)
    c = float(ndtri(1.0 - alpha))
    inner = c * math.sqrt(2.0 * th2 * h0 * h0) / th1 + 1.0 + th2 * h0 * (h0 - 1.0) / th1**2
    return float(th1 * inner ** (1.0 / h0))


def sidak_alpha(false_alarm: float, tests: int = 2) -> float:
    """Per-test α so that ``tests`` independent tests together alarm at ``false_alarm``.

    References
    ----------
    Šidák (1967).
    """
    return 1.0 - (1.0 - false_alarm) ** (1.0 / tests)


# ----------------------------------------------------------------------------- phase
#: Largest phase shift a cycle is aligned by [deg of the cycle].
MAX_SHIFT_DEG = 10.0


def phase_shift(curves: np.ndarray, template: np.ndarray, max_shift: int) -> np.ndarray:
    """Shift [bins] that best aligns each curve to the template (circular cross-correlation).

    The integer lag of the largest cross-correlation within ``±max_shift`` bins, refined by
    a parabola through it and its neighbours.

    Parameters
    ----------
    curves : ndarray (cycles, bins)
    template : ndarray (bins,)
    max_shift : int
        Largest lag searched [bins].

    Returns
    -------
    ndarray
        Per cycle, the lag ``d`` such that ``curve[i + d] ≈ template[i]``.
    """
    x = curves - curves.mean(axis=1, keepdims=True)
    tpl = template - template.mean()
    nb = x.shape[1]
    cc = np.fft.irfft(np.fft.rfft(x, axis=1) * np.conj(np.fft.rfft(tpl)), nb, axis=1)
    lags = np.arange(-max_shift, max_shift + 1)
    win = cc[:, lags % nb]
    j = np.argmax(win, axis=1)
    jj = np.clip(j, 1, win.shape[1] - 2)
    r = np.arange(len(x))
    y0, y1, y2 = win[r, jj - 1], win[r, jj], win[r, jj + 1]
    den = y0 - 2.0 * y1 + y2
    frac = np.where((j == jj) & (den < 0), 0.5 * (y0 - y2) / np.where(den < 0, den, -1.0), 0.0)
    return lags[jj] + frac


def shift_curves(curves: np.ndarray, shift: np.ndarray) -> np.ndarray:
    """Curves read ``shift`` bins later, around the cycle (linear interpolation)."""
    nb = curves.shape[1]
    pos = np.arange(nb)[None, :] + np.asarray(shift)[:, None]
    i0 = np.floor(pos).astype(np.int64)
    f = pos - i0
    a = np.take_along_axis(curves, i0 % nb, axis=1)
    b = np.take_along_axis(curves, (i0 + 1) % nb, axis=1)
    return a * (1.0 - f) + b * f


def align(curves: dict[str, np.ndarray], template: np.ndarray, revs_per_cycle: int
          ) -> tuple[dict[str, np.ndarray], np.ndarray]:
    """Align cycles to a template: the phase the cycle split puts them at is not shape.

    A cycle split from an integrated speed (or a nominal speed) wanders slowly in crank
    phase; a shift of a few degrees moves every steep edge of the torque and would be
    read as a change of shape. Each cycle is shifted (both channels alike, up to
    :data:`MAX_SHIFT_DEG`) by the lag that maximises its cross-correlation with the
    template (torque when logged, else speed).

    Returns
    -------
    aligned : dict of str to ndarray
    shift : ndarray [deg]
    """
    key = "torque" if "torque" in curves else "speed"
    x = np.asarray(curves[key], dtype=np.float64)
    nb = x.shape[1]
    per_deg = nb / (360.0 * revs_per_cycle)
    d = phase_shift(x, template, max(1, int(round(MAX_SHIFT_DEG * per_deg))))
    out = {k: shift_curves(np.asarray(v, dtype=np.float64), d) for k, v in curves.items()}
    return out, d / per_deg


# ----------------------------------------------------------------------------- model
@dataclass(frozen=True)
class ShapeModel:
    """The normal cycle shape and its control limits.

    Attributes
    ----------
    channels : tuple of str
        ``("torque",)`` or ``("torque", "speed")`` (or ``("speed",)``).
    bins : int
        Model bins per cycle per channel.
    revs_per_cycle : int
    mean : ndarray [SI]
        Mean reference cycle, channels one after the other (torque [N*m], speed [rad/s]).
    sd : ndarray [SI]
        SD of the reference per bin (for the normal band).
    scale : tuple of float [SI]
        Scale of each channel (RMS of its per-bin SDs); features are divided by it.
    components : ndarray
        Principal directions, shape (k, features).
    eigenvalues : ndarray
        Variance along each component (scaled units²).
    residual_eigenvalues : ndarray
        The remaining eigenvalues (for the Q limit).
    n_reference : int
        Cycles the model was fitted on (after the trim).
    trimmed : int
        Reference cycles left out as far from the median cycle.
    false_alarm : float
        Overall false-alarm rate the limits are set for.
    t2_limit, q_limit : float
        Control limits of T² and Q.
    duration : float [s]
        Median reference cycle duration.
    source : str
        Where the reference came from.
    template : ndarray
        The mean reference cycle on the cycle engine's fine grid (torque, else speed),
        which cycles are phase-aligned to (:func:`align`).
    """

    channels: tuple[str, ...]
    bins: int
    revs_per_cycle: int
    mean: np.ndarray
    sd: np.ndarray
    scale: tuple[float, ...]
    components: np.ndarray
    eigenvalues: np.ndarray
    residual_eigenvalues: np.ndarray
    n_reference: int
    trimmed: int
    false_alarm: float
    t2_limit: float
    q_limit: float
    duration: float
    source: str
    template: np.ndarray = field(default_factory=lambda: np.zeros(0))

    @property
    def k(self) -> int:
        """Number of principal components."""
        return int(self.components.shape[0])

    def _scales(self) -> np.ndarray:
        return np.repeat(np.asarray(self.scale), self.bins)

    def features(self, curves: dict[str, np.ndarray]) -> np.ndarray:
        """Stack per-channel curves (cycles, bins) into the model's feature rows."""
        missing = [c for c in self.channels if c not in curves]
        if missing:
            raise DataError(f"the shape model needs channel(s) {', '.join(missing)}, which "
                            "this log does not have")
        return np.hstack([np.asarray(curves[c], dtype=np.float64) for c in self.channels])

    def score(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """T², Q and the scaled residual of feature rows ``x`` (cycles, features).

        Returns
        -------
        t2, q : ndarray
            Per cycle.
        residual : ndarray
            Scaled residual off the model plane, shape of ``x``.
        """
        z = (np.atleast_2d(x) - self.mean) / self._scales()
        t = z @ self.components.T
        t2 = np.sum(t * t / self.eigenvalues, axis=1)
        e = z - t @ self.components
        q = np.sum(e * e, axis=1)
        return t2, q, e

    def check_compatible(self, channels: set[str], revs_per_cycle: int, bins: int,
                         duration: float | None = None, what: str = "this log") -> None:
        """Refuse a log the model cannot judge, naming the reason (DataError)."""
        if revs_per_cycle != self.revs_per_cycle or bins != self.bins:
            raise DataError(f"the reference shape model is of a machine with "
                            f"{self.revs_per_cycle} rev per cycle ({self.bins} bins); {what} has "
                            f"{revs_per_cycle} ({bins} bins): use a reference of the same "
                            "machine")
        missing = [c for c in self.channels if c not in channels]
        if missing:
            raise DataError(f"the reference shape model uses channel(s) {', '.join(missing)}, "
                            f"which {what} does not have: use a reference logged with the "
                            "same channels")
        if duration is not None and self.duration > 0 and not (
                0.75 < duration / self.duration < 1.0 / 0.75):
            raise DataError(f"reference cycles last {self.duration:.4g} s, {what}'s "
                            f"{duration:.4g} s: the reference is of another machine or "
                            "speed; use a reference of the same machine")

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready model (the saved model file)."""
        d = asdict(self)
        for k, v in d.items():
            if isinstance(v, np.ndarray):
                d[k] = v.tolist()
        d["channels"] = list(self.channels)
        d["scale"] = list(self.scale)
        return {"format": FORMAT, "version": 1, **d}

    def summary(self) -> dict[str, Any]:
        """The figures a result records (no arrays)."""
        return {"source": self.source, "channels": list(self.channels),
                "bins_per_cycle": self.bins, "components": self.k,
                "reference_cycles": self.n_reference, "reference_trimmed": self.trimmed,
                "false_alarm": self.false_alarm, "t2_limit": self.t2_limit,
                "q_limit": self.q_limit, "reference_cycle_duration_s": self.duration,
                "aligned": bool(self.template.size)}

    def save(self, path: str | Path) -> Path:
        """Write the model as JSON."""
        p = Path(path)
        p.write_text(json.dumps(self.to_dict()), encoding="utf-8")
        return p


def load_model(path: str | Path) -> ShapeModel:
    """Read a model file written by :meth:`ShapeModel.save` (DataError if it is not one)."""
    p = Path(path)
    try:
        d = json.loads(p.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise DataError(f"{p}: not a shape-model file ({exc.__class__.__name__}); write one "
                        "with `torqlog cycles --save-shape-model FILE`") from None
    if not isinstance(d, dict) or d.get("format") != FORMAT:
        raise DataError(f"{p}: not a shape-model file (no format {FORMAT!r}); write one with "
                        "`torqlog cycles --save-shape-model FILE`")
    d.pop("format")
    d.pop("version", None)
    arr = ("mean", "sd", "components", "eigenvalues", "residual_eigenvalues", "template")
    return ShapeModel(**{k: (np.asarray(v, dtype=np.float64) if k in arr else
                             tuple(v) if k in ("channels", "scale") else v)
                         for k, v in d.items()})


def fit_model(curves: dict[str, np.ndarray], *, revs_per_cycle: int = 1,
              false_alarm: float = DEFAULT_FALSE_ALARM, variance: float = 0.90,
              duration: float = 0.0, source: str = "", trim: bool = True,
              template: np.ndarray | None = None) -> ShapeModel:
    """Learn the normal cycle shape from reference cycles.

    Parameters
    ----------
    curves : dict of str to ndarray
        ``"torque"`` [N*m] and/or ``"speed"`` [rad/s], each (cycles, bins), on the same
        uniform angle grid.
    revs_per_cycle : int
    false_alarm : float
        Overall false-alarm rate (T² and Q each at the Šidák share).
    variance : float
        Share of the variance the model plane explains (≤ :data:`MAX_COMPONENTS`).
    duration : float [s]
        Median cycle duration of the reference (recorded for compatibility checks).
    source : str
        Description of the reference.
    trim : bool
        Leave out cycles far from the median cycle (robust reference from a log that may
        itself hold abnormal cycles): squared distance beyond median + 4 robust SDs.
    template : ndarray, optional
        Fine-grid mean cycle the curves were aligned to (stored in the model).

    Returns
    -------
    ShapeModel

    Raises
    ------
    DataError
        Fewer than :data:`MIN_REFERENCE_CYCLES` cycles, stating the count.

    References
    ----------
    Jackson (1991), ch. 1–2 (PCA); Jackson & Mudholkar (1979); Tracy, Young & Mason (1992).
    """
    channels = tuple(c for c in CHANNELS if c in curves)
    if not channels:
        raise DataError("no torque or speed curves to learn a shape model from")
    x = np.hstack([np.asarray(curves[c], dtype=np.float64) for c in channels])
    n, p = x.shape
    if n < MIN_REFERENCE_CYCLES:
        raise DataError(f"{n} clean cycles to learn the cycle shape from; the model needs at "
                        f"least {MIN_REFERENCE_CYCLES}: record a longer reference log")
    bins = p // len(channels)
    trimmed = 0
    if trim:
        med = np.median(x, axis=0)
        sd_ch = np.array([np.median(np.abs(x[:, i * bins:(i + 1) * bins]
                                           - med[i * bins:(i + 1) * bins]))
                          for i in range(len(channels))])
        sd_ch = np.where(sd_ch > 0, sd_ch, 1.0)
        d = np.sum(((x - med) / np.repeat(sd_ch, bins)) ** 2, axis=1)
        dm = np.median(d)
        mad = 1.4826 * np.median(np.abs(d - dm))
        keep = d <= dm + TRIM_SDS * max(mad, 1e-12 * dm)
        trimmed = int(n - keep.sum())
        x = x[keep]
        n = x.shape[0]
        if n < MIN_REFERENCE_CYCLES:
            raise DataError(f"{n} clean cycles left to learn the cycle shape from after "
                            f"leaving out {trimmed} far from the median cycle; the model needs "
                            f"at least {MIN_REFERENCE_CYCLES}: record a longer reference log")
    mean = x.mean(axis=0)
    sd = x.std(axis=0, ddof=1)
    scale = tuple(float(np.sqrt(np.mean(sd[i * bins:(i + 1) * bins] ** 2))) or 1.0
                  for i in range(len(channels)))
    z = (x - mean) / np.repeat(np.asarray(scale), bins)
    _, s, vt = np.linalg.svd(z, full_matrices=False)
    lam = s * s / (n - 1)
    if not lam.sum() > 0:
        raise DataError(f"the {n} reference cycles are identical: no variation to learn a "
                        "normal band from (a noise-free log?)")
    share = np.cumsum(lam) / lam.sum()
    k = int(np.searchsorted(share, variance) + 1)
    k = max(1, min(k, MAX_COMPONENTS, n - 2, p - 1, int((lam > 1e-12 * lam[0]).sum()) - 1))
    alpha = sidak_alpha(false_alarm)
    resid = lam[k:]
    if n >= 2 * MIN_REFERENCE_CYCLES:  # out-of-sample residual variance (split sample)
        resid = resid * (_residual_eigenvalues(z, k).sum() / resid.sum())
    return ShapeModel(channels=channels, bins=bins, revs_per_cycle=int(revs_per_cycle),
                      mean=mean, sd=sd, scale=scale, components=vt[:k].copy(),
                      eigenvalues=lam[:k].copy(), residual_eigenvalues=resid.copy(),
                      n_reference=int(n), trimmed=trimmed, false_alarm=float(false_alarm),
                      t2_limit=t2_limit(k, n, alpha), q_limit=q_limit(resid, alpha),
                      duration=float(duration), source=source,
                      template=np.zeros(0) if template is None else np.asarray(template))


def _residual_eigenvalues(z: np.ndarray, k: int) -> np.ndarray:
    """Residual eigenvalues of cycles the model plane was not fitted to.

    In-sample residuals are too small when the features are many for the cycles (the
    fitted plane takes up part of the noise: the smallest sample eigenvalues are biased
    low), so a Q limit from them alarms too often on new cycles. Here the plane is fitted
    on the first half of the reference and the residuals taken from the second half; the
    caller rescales the in-sample residual eigenvalues to their total (θ₁), keeping the
    in-sample spread for θ₂ and θ₃ (the half-sample spread is wider still).
    """
    half = z.shape[0] // 2
    a, b = z[:half], z[half:]
    ma = a.mean(axis=0)
    _, _, va = np.linalg.svd(a - ma, full_matrices=False)
    p = va[:k]
    e = (b - ma) - ((b - ma) @ p.T) @ p
    s = np.linalg.svd(e, compute_uv=False)
    return s * s / (b.shape[0] - 1)


# ----------------------------------------------------------------------------- where
def angle_window(contribution: np.ndarray, span_deg: float, share: float = 0.25
                 ) -> tuple[float, float, np.ndarray]:
    """The angle window where a cycle's contribution is concentrated.

    The bin of largest contribution, widened on both sides (around the cycle, which is
    circular) while the neighbours hold at least ``share`` of the peak.

    Parameters
    ----------
    contribution : array
        Contribution per angle bin (≥ 0).
    span_deg : float [deg]
        Angle of one cycle (360 × revs per cycle).
    share : float
        Fraction of the peak a bin needs to join the window.

    Returns
    -------
    start, end : float [deg]
        Window from ``start`` to ``end`` (``end`` may exceed ``span_deg`` when it wraps).
    bins : ndarray of int
        The bins in the window.
    """
    c = np.asarray(contribution, dtype=np.float64)
    nb = c.size
    i = int(np.argmax(c))
    lim = share * c[i]
    lo = hi = i
    while hi - lo + 1 < nb and c[(hi + 1) % nb] >= lim:
        hi += 1
    while hi - lo + 1 < nb and c[(lo - 1) % nb] >= lim:
        lo -= 1
    w = span_deg / nb
    start = (lo % nb) * w
    return start, start + (hi - lo + 1) * w, np.arange(lo, hi + 1) % nb


def describe_cycle(model: ShapeModel, x: np.ndarray, t2: float, q: float,
                   residual: np.ndarray) -> dict[str, Any]:
    """Where in the cycle an abnormal cycle departs from the normal shape, and how.

    Parameters
    ----------
    model : ShapeModel
    x : array [SI]
        The cycle's feature row.
    t2, q : float
        Its scores.
    residual : array
        Its scaled residual off the model plane.

    Returns
    -------
    dict
        ``channel``, ``window_deg`` [start, end], ``direction`` (low/high),
        ``deviation`` [N*m or rad/s] (mean of cycle − normal over the window),
        ``deviation_pct`` (of the normal peak torque, or of the mean speed), ``text``.

    References
    ----------
    Miller, Swanson & Heckler (1998) (contribution plots).
    """
    nb = model.bins
    dev = x - model.mean
    # contribution per bin: the Q residual when Q leads, else the scaled deviation
    if q / model.q_limit >= t2 / model.t2_limit:
        contrib = residual**2
    else:
        contrib = (dev / model._scales()) ** 2
    per = contrib.reshape(len(model.channels), nb)
    ci = int(np.argmax(per.sum(axis=1)))
    ch = model.channels[ci]
    span = 360.0 * model.revs_per_cycle
    a0, a1, bins = angle_window(per[ci], span)
    d = float(np.mean(dev[ci * nb + bins]))
    normal = model.mean[ci * nb:(ci + 1) * nb]
    ref = float(np.max(np.abs(normal))) if ch == "torque" else float(np.mean(normal))
    pct = 100.0 * abs(d) / ref if ref else float("nan")
    direction = "low" if d < 0 else "high"
    if ch == "torque":
        size = f"{abs(d) / 1e3:.3g} kN·m" if abs(d) >= 1e3 else f"{abs(d):.3g} N·m"
        text = (f"torque {pct:.2g} % low between {a0:.0f}° and {a1:.0f}° of the cycle "
                f"({size}; % of the normal peak torque)").replace(" low ", f" {direction} ")
    else:
        text = f"speed {pct:.2g} % {direction} between {a0:.0f}° and {a1:.0f}° of the cycle"
    return {"channel": ch, "window_deg": [a0, a1], "direction": direction,
            "deviation": d, "deviation_pct": pct, "text": text}


# ----------------------------------------------------------------------------- runs
def flag_runs(flagged: np.ndarray, cycles: np.ndarray, t_start: np.ndarray | None = None
              ) -> dict[str, Any]:
    """How flagged cycles are spread: none, isolated, recurring every Nth, or sustained.

    Parameters
    ----------
    flagged : array of bool
        Abnormal or not, per scored cycle.
    cycles : array of int
        Their cycle numbers.
    t_start : array [s], optional
        Their start times.

    Returns
    -------
    dict
        ``pattern`` (``none``, ``isolated``, ``recurring``, ``sustained``), ``every``
        (N for recurring), ``from_cycle``/``from_t_s`` (sustained), ``runs`` (longest
        runs of consecutive flagged cycles, first/last/length), ``text``.

    Notes
    -----
    Common practice, no published rule: recurring when at least 3 flags and one spacing
    N ≥ 2 between consecutive flags holds for ≥ 60 % of the spacings; sustained when from
    some flagged cycle on ≥ 80 % of at least 10 cycles are flagged.
    """
    f = np.asarray(flagged, dtype=bool)
    idx = np.flatnonzero(f)
    ts = None if t_start is None else np.asarray(t_start)[idx]
    return runs_of_flags(f.size, idx, np.asarray(cycles)[idx], ts)


def runs_of_flags(n_scored: int, positions: np.ndarray, cycles: np.ndarray,
                  t_start: np.ndarray | None = None) -> dict[str, Any]:
    """:func:`flag_runs` from the flagged cycles alone (what a long log keeps).

    Parameters
    ----------
    n_scored : int
        Cycles scored, in order.
    positions : array of int
        Position of each flagged cycle among the scored ones (ascending).
    cycles : array of int
        Their cycle numbers.
    t_start : array [s], optional
        Their start times.
    """
    idx = np.asarray(positions, dtype=np.int64)
    out: dict[str, Any] = {"pattern": "none", "every": None, "from_cycle": None,
                           "from_t_s": None, "runs": [], "text": "no abnormal cycles"}
    if idx.size == 0:
        return out
    fc = np.asarray(cycles)
    brk = np.flatnonzero(np.diff(fc) != 1) + 1
    starts = np.concatenate(([0], brk))
    ends = np.concatenate((brk, [fc.size]))
    runs = sorted(({"first": int(fc[s]), "last": int(fc[e - 1]), "length": int(e - s)}
                   for s, e in zip(starts, ends, strict=True)),
                  key=lambda r: -r["length"])[:10]
    out["runs"] = runs
    # sustained: share flagged from each flagged cycle to the end
    tail_n = n_scored - idx
    tail_flag = idx.size - np.arange(idx.size)
    ok = (tail_n >= 10) & (tail_flag >= 0.8 * tail_n)
    if ok.any():
        j = int(np.argmax(ok))
        out.update(pattern="sustained", from_cycle=int(fc[j]),
                   from_t_s=None if t_start is None else float(np.asarray(t_start)[j]))
        when = "" if out["from_t_s"] is None else f" (t = {out['from_t_s']:.1f} s)"
        out["text"] = f"sustained from cycle {fc[j]}{when}"
        return out
    if fc.size >= 3:
        gaps = np.diff(fc)
        vals, counts = np.unique(gaps, return_counts=True)
        g = int(vals[np.argmax(counts)])
        if g >= 2 and counts.max() >= 0.6 * gaps.size:
            out.update(pattern="recurring", every=g,
                       text=f"recurring every {g}th cycle")
            return out
    out.update(pattern="isolated", text="isolated" if fc.size > 1 else "one cycle")
    return out


# ----------------------------------------------------------------------------- streaming
@dataclass(frozen=True)
class AnomalyResult:
    """Shape anomalies found in one log.

    Attributes
    ----------
    model : dict
        The model's figures (:meth:`ShapeModel.summary`).
    scored : int
        Clean cycles scored.
    flagged : int
        Abnormal cycles among them.
    runs : dict
        :func:`flag_runs` of the flagged cycles.
    worst : list of dict
        The worst flagged cycles (at most :data:`KEEP_WORST`): cycle, t_start_s, score,
        t2, q and :func:`describe_cycle`.
    window_counts : dict
        How many flagged cycles had their window centred in each 30° sector.
    curves : dict
        ``cycle`` numbers and ``torque``/``speed`` model-grid curves of the worst flagged
        cycles, with the normal band (``angle_deg``, ``*_mean``, ``*_sd``), for figures.
    options : dict
        The options that produced this result.
    notes : list of str
    """

    model: dict[str, Any]
    scored: int
    flagged: int
    runs: dict[str, Any]
    worst: list[dict[str, Any]]
    window_counts: dict[str, int]
    curves: dict[str, Any]
    options: dict[str, Any]
    notes: list[str] = field(default_factory=list)

    @property
    def rate(self) -> float | None:
        """Share of the scored cycles flagged."""
        return self.flagged / self.scored if self.scored else None

    @property
    def sentence(self) -> str:
        """One sentence for a report's first page."""
        if not self.scored:
            return "cycle shape not checked: " + (self.notes[0] if self.notes else
                                                  "no model")
        if not self.flagged:
            return (f"no abnormal cycles: all {self.scored} clean cycles within the normal "
                    f"cycle shape (false-alarm rate {100 * self.model['false_alarm']:.2g} %)")
        w = self.worst[0]["where"]["text"] if self.worst else ""
        many = "cycle" if self.flagged == 1 else "cycles"
        return (f"{self.flagged} abnormal {many} of {self.scored} "
                f"({100 * self.flagged / self.scored:.2g} %), {self.runs['text']}; worst: {w}")

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready (no curves)."""
        return {"model": self.model, "scored": self.scored, "flagged": self.flagged,
                "rate": self.rate, "runs": self.runs, "worst": self.worst,
                "window_counts": self.window_counts, "options": self.options,
                "summary": self.sentence, "notes": self.notes}


def learn_model(fine: dict[str, np.ndarray], options: AnomalyOptions, revs_per_cycle: int,
                duration: float, source: str) -> ShapeModel:
    """Fit a :class:`ShapeModel` on reference cycles given on the cycle engine's fine grid.

    The cycles are aligned (:func:`align`) to their median cycle, then to the mean of the
    aligned set, averaged into the model bins and fitted by :func:`fit_model`.
    """
    chans = tuple(c for c in CHANNELS if c in fine)
    key = "torque" if "torque" in fine else "speed"
    n = len(fine[key])
    if n < MIN_REFERENCE_CYCLES:
        raise DataError(f"{n} clean cycles to learn the cycle shape from; the model needs at "
                        f"least {MIN_REFERENCE_CYCLES}: record a longer reference log")
    al, _ = align(fine, np.median(fine[key], axis=0), revs_per_cycle)
    template = al[key].mean(axis=0)
    al, _ = align(fine, template, revs_per_cycle)
    bins = options.bins_per_rev * revs_per_cycle
    coarse = {c: reduce_bins(al[c], bins) for c in chans}
    return fit_model(coarse, revs_per_cycle=revs_per_cycle, false_alarm=options.false_alarm,
                     variance=options.variance, duration=duration, source=source,
                     template=template)


def abnormal_effect(columns: dict[str, np.ndarray], quantile: float | str = 0.95
                    ) -> dict[str, Any] | None:
    """Whether the abnormal-shape cycles move the design energy swing.

    Abnormal cycles stay in the statistics (they are real running); this says how many
    there were and what the design energy swing would be without them.

    Parameters
    ----------
    columns : dict of str to ndarray
        Per-cycle columns (``flag``, ``energy_swing_J``, ``anomaly_score``).
    quantile : float or "max"
        The design quantile of the per-cycle energy swing.

    Returns
    -------
    dict or None
        ``abnormal`` (count), ``design_energy_swing_J`` with and ``..._without_J``
        without them, ``change`` (relative); None when no cycle was scored.
    """
    score = np.asarray(columns["anomaly_score"], dtype=np.float64)
    if not np.isfinite(score).any():
        return None
    clean = np.asarray(columns["flag"]).astype(str) == ""
    de = np.asarray(columns["energy_swing_J"], dtype=np.float64)
    ok = clean & np.isfinite(de)
    bad = score > 1.0

    def q(x: np.ndarray) -> float | None:
        if not x.size:
            return None
        return float(x.max() if quantile == "max" else np.quantile(x, float(quantile)))

    with_ = q(de[ok])
    without = q(de[ok & ~bad])
    change = (without - with_) / with_ if with_ and without is not None else None
    return {"abnormal": int((bad & clean).sum()), "design_energy_swing_J": with_,
            "design_energy_swing_without_J": without, "change": change}


def reduce_bins(curves: np.ndarray, bins: int) -> np.ndarray:
    """Average (cycles, nb) curves into (cycles, bins) coarser bins (``bins`` divides nb)."""
    a = np.asarray(curves, dtype=np.float64)
    f = a.shape[1] // bins
    if f * bins != a.shape[1]:
        raise UsageError(f"{a.shape[1]} angle bins cannot be averaged into {bins}")
    return a.reshape(a.shape[0], bins, f).mean(axis=2)


class ShapeMonitor:
    """Scores cycles as the cycle engine completes them (bounded memory).

    Without a model it first collects ``learn_cycles`` clean cycles (a bounded buffer),
    learns the model from them (robust trim) and scores them; later cycles are scored as
    they arrive. Call :meth:`push` per chunk and :meth:`finish` at the end.

    Parameters
    ----------
    options : AnomalyOptions
    revs_per_cycle : int
    channels : set of str
        Channels the log has ("torque", "speed").
    model : ShapeModel, optional
        A reference model (from ``--reference`` or a saved file).
    """

    def __init__(self, options: AnomalyOptions, revs_per_cycle: int, channels: set[str],
                 model: ShapeModel | None = None) -> None:
        self.o = options
        self.revs = revs_per_cycle
        self.bins = options.bins_per_rev * revs_per_cycle
        self.channels = tuple(c for c in CHANNELS if c in channels)
        self.model = model
        if model is not None:
            model.check_compatible(set(self.channels), revs_per_cycle, self.bins)
        self.buffer: list[tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]] = []
        self.buffered = 0
        self.scored = 0
        self.flagged = 0
        self.worst: list[tuple[float, int, dict[str, Any], np.ndarray]] = []
        self.sectors: dict[str, int] = {}
        # the flagged cycles alone (position among the scored, number, start [s]): what
        # the run analysis needs; a healthy log adds a few per thousand cycles
        self.flags_all: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []
        self.window_n = 0  # scored cycles the positions count from
        self.notes: list[str] = []
        self.checked_duration = model is None
        self.failed = False
        #: where-text of recently flagged cycles, by cycle (a live watch turns it on and
        #: empties it as it hands cycles out); None: not kept
        self.recent: dict[int, str] | None = None
        self.shift_n = 0
        self.shift_sum = 0.0
        self.shift_max = 0.0

    # -- input
    def push(self, cycles: np.ndarray, t_start: np.ndarray, duration: np.ndarray,
             curves: dict[str, np.ndarray]) -> list[tuple[np.ndarray, np.ndarray]]:
        """Take clean cycles (numbers, start [s], duration [s], curves on the engine's grid).

        Returns
        -------
        list of (cycles, scores)
            Cycles scored by this call (possibly buffered ones); score NaN never appears.
        """
        if not len(cycles):
            return []
        if self.failed:
            return []
        if self.model is None:
            self.buffer.append((np.asarray(cycles), np.asarray(t_start), np.asarray(duration),
                                {c: np.asarray(curves[c], dtype=np.float64)
                                 for c in self.channels}))
            self.buffered += len(cycles)
            if self.buffered < self.o.learn_cycles:
                return []
            return self._learn()
        if not self.checked_duration:
            self.model.check_compatible(set(self.channels), self.revs, self.bins,
                                        float(np.median(duration)))
            self.checked_duration = True
        return [self._score(np.asarray(cycles), np.asarray(t_start), self._features(curves))]

    def _features(self, curves: dict[str, np.ndarray]) -> np.ndarray:
        m = self.model
        assert m is not None
        if m.template.size:
            curves, shift = align({c: curves[c] for c in self.channels}, m.template,
                                  self.revs)
            a = np.abs(shift)
            self.shift_n += a.size
            self.shift_sum += float(a.sum())
            self.shift_max = max(self.shift_max, float(a.max()))
        return np.hstack([reduce_bins(curves[c], self.bins) for c in self.channels])

    def _learn(self) -> list[tuple[np.ndarray, np.ndarray]]:
        cyc = np.concatenate([b[0] for b in self.buffer])
        ts = np.concatenate([b[1] for b in self.buffer])
        dur = np.concatenate([b[2] for b in self.buffer])
        fine = {c: np.vstack([b[3][c] for b in self.buffer]) for c in self.channels}
        self.buffer = []
        n = min(len(cyc), self.o.learn_cycles)  # exactly the first N: chunking-independent
        try:
            self.model = learn_model({c: v[:n] for c, v in fine.items()}, self.o, self.revs,
                                     float(np.median(dur[:n])),
                                     f"first {n} clean cycles of this log (robust trim)")
        except DataError as exc:  # the figures go on; the check is reported as not done
            self.notes.append(str(exc))
            self.failed = True
            return []
        return [self._score(cyc, ts, self._features(fine))]

    def _score(self, cyc: np.ndarray, ts: np.ndarray, x: np.ndarray
               ) -> tuple[np.ndarray, np.ndarray]:
        m = self.model
        assert m is not None
        t2, q, e = m.score(x)
        score = np.maximum(t2 / m.t2_limit, q / m.q_limit)
        bad = score > 1.0
        self.scored += len(cyc)
        self.flagged += int(bad.sum())
        hit = np.flatnonzero(bad)
        if hit.size:
            self.flags_all.append((self.window_n + hit, cyc[hit], ts[hit]))
        self.window_n += len(cyc)
        for i in np.flatnonzero(bad):
            where = describe_cycle(m, x[i], float(t2[i]), float(q[i]), e[i])
            c = 0.5 * (where["window_deg"][0] + where["window_deg"][1])
            sec = int(c % (360.0 * self.revs) // 30) * 30
            if self.recent is not None:
                self.recent[int(cyc[i])] = where["text"]
            key = f"{where['channel']} {sec}-{sec + 30}°"
            self.sectors[key] = self.sectors.get(key, 0) + 1
            item = (float(score[i]), int(cyc[i]),
                    {"cycle": int(cyc[i]), "t_start_s": float(ts[i]),
                     "anomaly_score": float(score[i]), "t2": float(t2[i]), "q": float(q[i]),
                     "where": where}, x[i].copy())
            if len(self.worst) < KEEP_WORST:
                heapq.heappush(self.worst, item)
            elif item[0] > self.worst[0][0]:
                heapq.heapreplace(self.worst, item)
        return cyc, score

    def finish(self) -> list[tuple[np.ndarray, np.ndarray]]:
        """Learn from what was buffered if the log was shorter than ``learn_cycles``.

        Returns the cycles scored now; a log with too few clean cycles gets a note and
        no scores (the figures are kept; the check is reported as not done).
        """
        if self.model is None and self.buffer:
            return self._learn()
        elif self.model is None and not self.failed:
            self.notes.append("no clean cycles to learn the cycle shape from")
        return []

    def result(self, options: dict[str, Any] | None = None) -> AnomalyResult:
        """The :class:`AnomalyResult` so far."""
        m = self.model
        self.compact(0)
        pos, cyc, ts = self.flags_all[0] if self.flags_all else (np.zeros(0, np.int64),) * 3
        runs = runs_of_flags(self.window_n, pos, cyc, ts)
        worst = sorted(self.worst, key=lambda w: -w[0])
        curves: dict[str, Any] = {}
        if m is not None:
            nb = m.bins
            curves["angle_deg"] = (np.arange(nb) + 0.5) * 360.0 * m.revs_per_cycle / nb
            curves["cycle"] = [w[1] for w in worst]
            for i, c in enumerate(m.channels):
                sl = slice(i * nb, (i + 1) * nb)
                curves[c + "_mean"] = m.mean[sl]
                curves[c + "_sd"] = m.sd[sl]
                curves[c] = (np.vstack([w[3][sl] for w in worst]) if worst
                             else np.zeros((0, nb)))
        opts = {**asdict(self.o), **(options or {})}
        if self.shift_n:
            opts["phase_shift_deg_mean_abs"] = self.shift_sum / self.shift_n
            opts["phase_shift_deg_max_abs"] = self.shift_max
        return AnomalyResult(model=m.summary() if m is not None else {}, scored=self.scored,
                             flagged=self.flagged, runs=runs, worst=[w[2] for w in worst],
                             window_counts=dict(sorted(self.sectors.items(),
                                                       key=lambda kv: -kv[1])),
                             curves=curves, options=opts, notes=list(self.notes))

    def compact(self, most: int = 64) -> None:
        """Merge the stored flagged cycles into one set of arrays once there are more than
        ``most`` parts (call now and then on a long watch)."""
        if len(self.flags_all) > max(most, 1):
            self.flags_all = [tuple(np.concatenate([f[i] for f in self.flags_all])
                                    for i in range(3))]

    def forget(self, keep: int) -> None:
        """Keep the flags of only the last ``keep`` scored cycles (bounded watch)."""
        self.compact(0)
        drop = self.window_n - keep
        if drop <= 0:
            return
        self.window_n = keep
        if self.flags_all:
            pos, cyc, ts = self.flags_all[0]
            k = pos >= drop
            self.flags_all = [(pos[k] - drop, cyc[k], ts[k])]
