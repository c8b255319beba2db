"""Control charts for a sequence of figures: individuals, EWMA and a run rule.

Pure statistics on arrays in time order (any unit): limits from baseline points,
the EWMA with its exact limits, and runs on one side of the centre line.

References
----------
.. [1] D. C. Montgomery, *Introduction to Statistical Quality Control*, 7th ed., Wiley,
   2013: sec. 6.4 (individuals chart, σ̂ = MR̄ / d2 with d2 = 1.128 for moving ranges of
   two), sec. 9.2 (EWMA chart, exact time-varying limits), sec. 5.3.6 (run rules).
.. [2] NIST/SEMATECH e-Handbook of Statistical Methods, 2012, sec. 6.3.2.4 (EWMA control
   charts, λ = 0.2 and L = 3 as a usual choice).
.. [3] Western Electric Co., *Statistical Quality Control Handbook*, 1956 (rule: eight
   successive points on one side of the centre line); L. S. Nelson, "The Shewhart control
   chart — tests for special causes", *J. Quality Technology* 16(4), 1984 (test 2 uses
   nine points).
.. [4] D. C. Montgomery, *Introduction to Statistical Quality Control*, 7th ed., Wiley,
   2013, sec. 7.2 (control chart for the fraction nonconforming, the p chart; variable
   sample size: limits p̄ ± 3·√(p̄(1 − p̄)/n_i) for each sample, sec. 7.2.2).
.. [5] J. A. Hanley and A. Lippman-Hand, "If nothing goes wrong, is everything all
   right? Interpreting zero numerators", *JAMA* 249(13), 1743–1745, 1983 (rule of three).
"""

from __future__ import annotations

import numpy as np

from torqlog.errors import DataError, UsageError

#: d2 for moving ranges of two consecutive points (Montgomery, Appendix Table VI).
D2_MR2 = 1.128
#: Run rules by name: points in a row on one side of the centre line.
RUN_RULES: dict[str, int] = {"western-electric-4": 8, "nelson-2": 9}


def individuals_limits(x: np.ndarray, k: float = 3.0) -> tuple[float, float, float, float]:
    """Centre line and limits of an individuals (X) chart from baseline points.

    Parameters
    ----------
    x : array
        Baseline values in time order (NaN skipped), any unit.
    k : float
        Limits at ``k`` sigma (3 by convention).

    Returns
    -------
    (centre, sigma, lcl, ucl)
        ``centre`` is the mean; ``sigma = MR̄ / d2`` with MR̄ the average moving range of
        two consecutive points and d2 = 1.128.

    References
    ----------
    Montgomery, *Introduction to Statistical Quality Control*, 7th ed., sec. 6.4,
    eq. 6.33 (individuals chart limits x̄ ± 3·MR̄/d2).
    """
    v = np.asarray(x, dtype=np.float64)
    v = v[np.isfinite(v)]
    if v.size < 2:
        raise DataError(f"a baseline needs at least 2 values to estimate the spread, got "
                        f"{v.size}; give more baseline groups (--baseline-shifts)")
    centre = float(v.mean())
    sigma = float(np.abs(np.diff(v)).mean() / D2_MR2)
    return centre, sigma, centre - k * sigma, centre + k * sigma


def ewma_chart(x: np.ndarray, centre: float, sigma: float, lam: float = 0.2,
               L: float = 3.0, centre_var: float = 0.0
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Exponentially weighted moving average and its exact (time-varying) limits.

    z_i = λ·x_i + (1 − λ)·z_{i−1}, z_0 = centre; limits
    centre ± L·σ·√(λ/(2 − λ)·[1 − (1 − λ)^{2i}] + c), where c = ``centre_var`` (0 for the
    textbook chart; 1/m when the centre is the mean of m baseline points, whose error
    the EWMA would otherwise read as a shift). NaN points are skipped (z carries over).

    Parameters
    ----------
    x : array
        Values in time order.
    centre, sigma : float
        In-control mean and standard deviation (from the baseline).
    lam : float
        Weight of the newest point, 0 < λ ≤ 1 (0.2 is the usual choice).
    L : float
        Width of the limits in sigma of the EWMA (3 with λ = 0.2).
    centre_var : float
        Variance of the centre estimate in units of σ² (see :func:`baseline_factors`).

    Returns
    -------
    (z, lcl, ucl)
        Arrays like ``x`` (NaN where ``x`` is NaN).

    References
    ----------
    Montgomery, *Introduction to Statistical Quality Control*, 7th ed., sec. 9.2,
    eqs. 9.22–9.25; NIST/SEMATECH e-Handbook of Statistical Methods, sec. 6.3.2.4.
    """
    from scipy.signal import lfilter

    if not 0.0 < lam <= 1.0:
        raise UsageError(f"EWMA λ must be in (0, 1], got {lam}")
    v = np.asarray(x, dtype=np.float64)
    ok = np.isfinite(v)
    z = np.full(v.shape, np.nan)
    lcl, ucl = z.copy(), z.copy()
    if ok.any():
        zz, _ = lfilter([lam], [1.0, lam - 1.0], v[ok], zi=[(1.0 - lam) * centre])
        i = np.arange(1, ok.sum() + 1)
        half = L * sigma * np.sqrt(lam / (2.0 - lam) * (1.0 - (1.0 - lam) ** (2 * i))
                                   + centre_var)
        z[ok], lcl[ok], ucl[ok] = zz, centre - half, centre + half
    return z, lcl, ucl


def mr_degrees_of_freedom(m: int) -> float:
    """Effective degrees of freedom of σ̂ = MR̄/d2 from ``m`` baseline points,
    ν ≈ 0.62·(m − 1) (the usual approximation, quoted from memory; it matches
    ν = 1 / (2·CV²) of MR̄ for normal data within 2 % for m = 9…50, checked by simulation).
    """
    return 0.62 * (m - 1)


def baseline_factors(k: float, L: float, m: int, method: str = "prediction"
                     ) -> tuple[float, float, float]:
    """Limit widths for charts whose centre and σ come from ``m`` baseline points.

    Parameters
    ----------
    k, L : float
        Nominal widths of the individuals and EWMA limits [σ] (3 and 3).
    m : int
        Baseline points.
    method : {"prediction", "classic"}
        ``classic``: the textbook limits, centre ± k·σ̂ and the EWMA limits with L, as if
        centre and σ were known (with m = 9 a new in-control point falls outside
        x̄ ± 3σ̂ about 2.7 % of the time, not 0.27 %; by simulation). ``prediction``:
        at most the false-alarm probability per point of ±k·σ with known parameters
        (0.27 % for k = 3), allowing for the estimates: the normal quantile is replaced
        by Student's t with the effective degrees of freedom of MR̄/d2, and the variance
        of the centre (σ²/m) is added — a prediction interval for a future point. Wider
        for short baselines (k = 3, m = 9 gives 5.84·σ̂) and conservative there (about
        0.11 % at m = 9, 0.21 % at m = 20, by simulation); tends to the classic limits as
        m grows.

    Returns
    -------
    (k_eff, L_eff, centre_var)
        Individuals limits at centre ± k_eff·σ̂; EWMA limits with L_eff and
        ``centre_var`` for :func:`ewma_chart`.

    References
    ----------
    G. J. Hahn and W. Q. Meeker, *Statistical Intervals*, Wiley, 1991
    (prediction interval for one future observation, x̄ ± t·s·√(1 + 1/m)); Montgomery,
    *Introduction to Statistical Quality Control*, 7th ed., sec. 6.4 and 9.2.
    """
    if method == "classic":
        return k, L, 0.0
    if method != "prediction":
        raise UsageError(f"unknown limits method {method!r}; valid: prediction, classic")
    from scipy import stats

    nu = mr_degrees_of_freedom(m)
    tk = float(stats.t.ppf(stats.norm.cdf(k), nu))
    tl = float(stats.t.ppf(stats.norm.cdf(L), nu))
    return tk * float(np.sqrt(1.0 + 1.0 / m)), tl, 1.0 / m


def run_rule(x: np.ndarray, centre: float, length: int = 8) -> tuple[np.ndarray, np.ndarray]:
    """Points that complete (or extend) a run of ``length`` in a row on one side of the
    centre line: Western Electric rule 4 with ``length = 8`` (Nelson's test 2 uses 9).

    A NaN point or a point on the centre line ends a run.

    Returns
    -------
    (high, low)
        Boolean arrays: the point is the ``length``-th or later of a run above / below.

    References
    ----------
    Western Electric Co., *Statistical Quality Control Handbook*, 1956; Montgomery,
    *Introduction to Statistical Quality Control*, 7th ed., sec. 5.3.6.
    """
    v = np.asarray(x, dtype=np.float64)
    side = np.sign(np.where(np.isfinite(v), v - centre, 0.0))
    n = side.size
    if n == 0:
        return np.zeros(0, bool), np.zeros(0, bool)
    change = np.ones(n, dtype=bool)
    change[1:] = side[1:] != side[:-1]
    run_start = np.maximum.accumulate(np.where(change, np.arange(n), 0))
    pos = np.arange(n) - run_start + 1
    long = pos >= length
    return long & (side > 0), long & (side < 0)


def p_chart_centre(defects: np.ndarray, n: np.ndarray) -> tuple[float, str]:
    """Centre line p̄ of a p chart from baseline counts.

    Parameters
    ----------
    defects : array of int
        Nonconforming items (here: cycles of abnormal shape) per baseline sample.
    n : array of int
        Items inspected (cycles scored) per baseline sample.

    Returns
    -------
    (p_bar, note)
        p̄ = Σ defects / Σ n, the pooled fraction (Montgomery sec. 7.2.2 for samples of
        different size). A baseline without a single defect gives p̄ = 0 and limits that
        any defect would cross; p̄ is then taken as 3 / Σ n, the rule-of-three upper 95 %
        bound of a rate seen zero times in Σ n (Hanley & Lippman-Hand 1983), and
        ``note`` says so (else "").

    References
    ----------
    Montgomery, *Introduction to Statistical Quality Control*, 7th ed., sec. 7.2;
    Hanley & Lippman-Hand, *JAMA* 249(13), 1983.
    """
    d = np.asarray(defects, dtype=np.float64)
    m = np.asarray(n, dtype=np.float64)
    ok = np.isfinite(d) & np.isfinite(m) & (m > 0)
    total = float(m[ok].sum())
    if total <= 0:
        raise DataError("a p chart needs baseline samples with items inspected (n > 0)")
    found = float(d[ok].sum())
    if found == 0:
        return 3.0 / total, (f"no abnormal cycle among the baseline's {int(total)} scored "
                             f"cycles: centre taken as 3/{int(total)} (rule of three)")
    return found / total, ""


def p_chart_limits(p_bar: float, n: np.ndarray, k: float = 3.0
                   ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Limits of a p chart for samples of size ``n_i``.

    σ_i = √(p̄(1 − p̄)/n_i); limits p̄ ± k·σ_i with the lower limit clipped at 0 (a
    fraction cannot be negative). NaN where n_i = 0.

    Parameters
    ----------
    p_bar : float
        Centre line, in-control fraction nonconforming [–].
    n : array
        Sample sizes (cycles scored per group) [count].
    k : float
        Width in σ_i (3 by convention).

    Returns
    -------
    (sigma, lcl, ucl)
        Arrays like ``n`` [–].

    References
    ----------
    Montgomery, *Introduction to Statistical Quality Control*, 7th ed., sec. 7.2.1–7.2.2
    (eq. 7.8 with variable sample size).

    Examples
    --------
    >>> sigma, lcl, ucl = p_chart_limits(0.1, np.array([100, 400]))
    >>> np.round(ucl, 4).tolist(), np.round(lcl, 4).tolist()
    ([0.19, 0.145], [0.01, 0.055])
    """
    m = np.asarray(n, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        sigma = np.where(m > 0, np.sqrt(p_bar * (1.0 - p_bar) / m), np.nan)
    return sigma, np.maximum(p_bar - k * sigma, 0.0), p_bar + k * sigma
