"""Bootstrap intervals of a scalar: percentile, BCa, carried to an estimate, bounded by the lags.

Percentile intervals (Efron & Tibshirani 1993, ch. 13) and BCa intervals
(ibid., ch. 14.3; acceleration from the delete-one jackknife, eq. 14.15, or
from empirical influence values regressed on the block counts, Davison &
Hinkley 1997, sec. 2.7.4); the rules every reported interval obeys (it holds
its estimate, a bound beyond the longest lag is unbounded, a value held
fixed has none); and the carrying of a replicate interval to an estimate of
another estimator.
"""

from __future__ import annotations

import math
import warnings as _warnings

import numpy as np
from scipy.special import ndtr, ndtri

from anisotropy.errors import InputError


def _alpha(confidence):
    confidence = float(confidence)
    if not 0.0 < confidence < 1.0:
        raise InputError(f"confidence must lie strictly between 0 and 1 (got {confidence}); "
                         "use for example 0.9 for 90 % bands")
    return (1.0 - confidence) / 2.0


def percentile_interval(replicates, confidence=0.9, axis=0):
    """Equal-tailed percentile interval of bootstrap replicates.

    Parameters
    ----------
    replicates : array_like
        Bootstrap replicates of a statistic (NaN replicates are ignored).
    confidence : float
        Two-sided coverage, e.g. 0.9.
    axis : int
        Axis along which the replicates run.

    Returns
    -------
    lo, hi : ndarray
        The ``(1 - confidence)/2`` and ``(1 + confidence)/2`` quantiles
        (linear interpolation, as :func:`numpy.quantile`); Efron &
        Tibshirani (1993), ch. 13.3.
    """
    a = _alpha(confidence)
    r = np.asarray(replicates, dtype=float)
    with _warnings.catch_warnings():  # all-NaN columns (lags without pairs) stay NaN
        _warnings.simplefilter("ignore", RuntimeWarning)
        lo, hi = np.nanquantile(r, [a, 1.0 - a], axis=axis)
    return lo, hi


def jackknife_acceleration(jackknife_values):
    """BCa acceleration from delete-one jackknife values (Efron & Tibshirani 1993, eq. 14.15).

    Parameters
    ----------
    jackknife_values : array_like, shape (n, ...)
        The statistic recomputed with each unit (sample or block) left out.

    Returns
    -------
    float or ndarray
        ``sum(d^3) / (6 * sum(d^2)^1.5)`` with ``d = mean - value_i``.
    """
    t = np.asarray(jackknife_values, dtype=float)
    d = np.nanmean(t, axis=0) - t
    num = np.nansum(d ** 3, axis=0)
    den = np.nansum(d ** 2, axis=0) ** 1.5
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(den > 0, num / (6.0 * den), 0.0)


def influence_acceleration(replicates, counts):
    """BCa acceleration from empirical influence values estimated by regression.

    The replicates are regressed (least squares, with intercept) on the
    resampling counts; the centred coefficients are the empirical influence
    values ``l_b`` of the units (Davison & Hinkley 1997, sec. 2.7.4), and the
    acceleration is ``sum(l^3) / (6 * sum(l^2)^1.5)`` (Efron & Tibshirani
    1993, eq. 14.15 with the jackknife differences replaced by ``l``).

    Parameters
    ----------
    replicates : array_like, shape (n_rep,)
    counts : array_like, shape (n_rep, n_units)
        How many times each unit was drawn in each replicate.

    Returns
    -------
    float
        The acceleration, or 0.0 when there are fewer than two replicates
        per unit (the regression would be too noisy to be worth using).
    """
    y = np.asarray(replicates, dtype=float)
    f = np.asarray(counts, dtype=float)
    ok = np.isfinite(y)
    y, f = y[ok], f[ok]
    n_rep, n_units = f.shape
    if n_rep < 2 * n_units or n_units < 3:
        return 0.0
    # counts sum to n_units in every row, so drop the last column (collinear
    # with the intercept) and set its influence so that the l_b sum to zero.
    X = np.column_stack([np.ones(n_rep), f[:, :-1] - 1.0])
    coef, *_ = np.linalg.lstsq(X, y, rcond=None)
    beta = np.append(coef[1:], 0.0)
    l = beta - beta.mean()
    den = np.sum(l ** 2) ** 1.5
    return float(np.sum(l ** 3) / (6.0 * den)) if den > 0 else 0.0


def bca_interval(replicates, estimate, confidence=0.9, *, acceleration=0.0):
    """Bias-corrected and accelerated (BCa) bootstrap interval.

    Efron & Tibshirani (1993), ch. 14.3: ``z0 = Phi^-1(share of replicates
    below the estimate)`` (ties counted half, as SciPy does), and the interval
    is read at the replicate quantiles
    ``Phi(z0 + (z0 + z_a) / (1 - acc (z0 + z_a)))`` for ``z_a`` at
    ``(1 -+ confidence)/2``.

    Parameters
    ----------
    replicates : array_like, shape (n_rep,)
    estimate : float
        The statistic on the original data.
    confidence : float
    acceleration : float
        See :func:`jackknife_acceleration` and :func:`influence_acceleration`.

    Returns
    -------
    lo, hi : float
        NaN when the bias correction is infinite (every replicate on one
        side of the estimate); fall back to :func:`percentile_interval`.
    """
    a = _alpha(confidence)
    r = np.asarray(replicates, dtype=float)
    r = r[np.isfinite(r)]
    if r.size == 0:
        return math.nan, math.nan
    share = (np.count_nonzero(r < estimate) + np.count_nonzero(r <= estimate)) / (2.0 * r.size)
    if share <= 0.0 or share >= 1.0:
        return math.nan, math.nan
    z0 = ndtri(share)
    out = []
    for q in (a, 1.0 - a):
        zq = ndtri(q)
        num = z0 + zq
        den = 1.0 - acceleration * num
        if den <= 0:
            return math.nan, math.nan
        out.append(float(np.quantile(r, ndtr(z0 + num / den))))
    return out[0], out[1]


def held_fixed(replicates, estimate=None) -> bool:
    """True when every finite replicate equals the estimate (the value was held in the refits).

    A parameter the replicate fits do not re-estimate (a nugget pinned by the
    down-hole variogram, a total sill of 1 for normal scores) has no sampling
    spread to report: its interval would have zero width.
    """
    r = np.asarray(replicates, dtype=float)
    r = r[np.isfinite(r)]
    if r.size < 2:
        return False
    ref = float(estimate) if estimate is not None and np.isfinite(estimate) else float(r[0])
    return bool(np.max(np.abs(r - ref)) <= 1e-9 * max(1.0, abs(ref)))


def holding_estimate(interval, estimate):
    """The interval widened, where needed, so that it holds its own estimate.

    A percentile or BCa interval of skewed replicates can exclude the point
    estimate (replicates of a range fitted near the longest lag drift long);
    an interval that does not hold the value it qualifies is not reported.
    """
    lo, hi = interval
    if estimate is None or not np.isfinite(estimate) or not np.isfinite(lo) \
            or not np.isfinite(hi):
        return [lo, hi], False
    e = float(estimate)
    widened = bool(e < lo or e > hi)
    return [float(min(lo, e)), float(max(hi, e))], widened


def bounded_by_lags(interval, longest_lag):
    """Bounds beyond the longest lag become None (unbounded: the lags cannot tell).

    Returns
    -------
    interval : list
        ``[lo or None, hi or None]``.
    note : str or None
        "> L m" wording when a bound was dropped.
    """
    lo, hi = interval
    if longest_lag is None or not np.isfinite(longest_lag):
        return [lo, hi], None
    L = float(longest_lag)
    out = [None if (lo is None or not lo <= L) else lo,
           None if (hi is None or not hi <= L) else hi]
    if out == [lo, hi]:
        return out, None
    if out[0] is None:
        return out, f"the whole interval lies beyond the longest lag (> {L:.4g} m)"
    return out, f"unbounded above: the upper bound lies beyond the longest lag (> {L:.4g} m)"


def _scalar_interval(replicates, estimate, confidence, counts=None, *, prefer_bca=True):
    """(lo, hi, method) for one scalar, BCa where it is meaningful, else percentile."""
    r = np.asarray(replicates, dtype=float)
    r = r[np.isfinite(r)]
    if r.size < 2:
        return [math.nan, math.nan], "none"
    lo, hi = percentile_interval(r, confidence)
    method = "percentile"
    spread = float(np.ptp(r))
    if prefer_bca and estimate is not None and np.isfinite(estimate) and spread > 0:
        acc = 0.0
        if counts is not None:
            c = np.asarray(counts)[np.isfinite(np.asarray(replicates, dtype=float))]
            acc = influence_acceleration(r, c)
        blo, bhi = bca_interval(r, float(estimate), confidence, acceleration=acc)
        if np.isfinite(blo) and np.isfinite(bhi):
            lo, hi, method = blo, bhi, "bca"
    return [float(lo), float(hi)], method


def carried_interval(replicates, estimate, confidence):
    """A percentile interval of positive replicates carried to an estimate from elsewhere.

    ``estimate * q / median``, with ``q`` the replicates' equal-tailed
    percentiles and ``median`` their median: the replicates' spread about
    their own centre, on the log scale, placed about the estimate (the
    estimate is then always inside). Plain percentiles where the estimate or
    the median is not positive.

    Returns
    -------
    interval : list of float
    method : str
    """
    r = np.asarray(replicates, dtype=float)
    r = r[np.isfinite(r)]
    if r.size < 2:
        return [math.nan, math.nan], "none"
    if estimate is None or not np.isfinite(estimate) or not estimate > 0 \
            or not np.median(r) > 0:
        return [float(x) for x in percentile_interval(r, confidence)], "percentile"
    lo, hi = _carried(r, estimate, confidence)
    return [float(lo), float(hi)], "percentile, carried to the estimate"


def _carried(replicates, estimate, confidence, axis=0):
    """``estimate * quantile / median`` of the replicates along ``axis`` (NaN ignored).

    Where the median or the estimate is not positive the plain percentiles
    are kept.
    """
    lo, hi = percentile_interval(replicates, confidence, axis=axis)
    with np.errstate(invalid="ignore", divide="ignore"), _warnings.catch_warnings():
        _warnings.simplefilter("ignore", RuntimeWarning)   # all-NaN columns stay NaN
        med = np.nanmedian(np.asarray(replicates, dtype=float), axis=axis)
        scale = np.where((med > 0) & (np.asarray(estimate) > 0), estimate / med, 1.0)
    return lo * scale, hi * scale


def range_text(interval, longest_lag=None) -> str:
    """A range interval in words: "120-260 m", "> 261 m" for unbounded bounds."""
    lo, hi = interval
    L = "" if longest_lag is None else f"{longest_lag:.4g} m"
    if lo is None:
        return f"> {L}" if L else "beyond the longest lag"
    if hi is None:
        return f"{lo:.4g} m to > {L}" if L else f"> {lo:.4g} m"
    return f"{lo:.4g}-{hi:.4g} m"
