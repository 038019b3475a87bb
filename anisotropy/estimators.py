"""Variogram estimators computed from accumulated pair sums.

Every estimator reads the channel axis (the last axis) of an array of sums
in the order of :data:`anisotropy.constants.CHANNELS` (count, dist, sq, abs,
sqrt, head, tail, head2, tail2, cross, rel, rel_n, dx, dy, dz), with
delta = head - tail for each pair (head = tail + canonical lag vector). With
N the pair count of a bin:

``semivariogram`` (Matheron 1963)
    gamma = sum(delta^2) / (2 N).
``correlogram`` (Srivastava & Parker 1989), shown as 1 - rho
    rho = (sum(h t)/N - m_h m_t) / (s_h s_t) with the bin's own head and tail
    means m and (population) standard deviations s; this equals
    ``numpy.corrcoef(head, tail)[0, 1]``. NaN (with a warning) where the
    head or tail values of a bin do not vary.
``pairwise_relative`` (Srivastava & Parker 1989)
    sum(delta^2 / ((h + t)/2)^2) / (2 N_rel), over the pairs with h + t != 0.
``madogram``
    ``sum(|delta|) / (2 N)``.
``robust`` (Cressie & Hawkins 1980)
    ``gamma = [(sum(|delta|^(1/2)) / N)^4 / (0.457 + 0.494 / N)] / 2``.

Bins without pairs give NaN.
"""

from __future__ import annotations

import warnings

import numpy as np

from .constants import CHANNEL_INDEX as _C
from .errors import InputError

__all__ = ["ESTIMATORS", "check_estimator", "estimate", "mean_distance", "ROBUST_A", "ROBUST_B"]

ESTIMATORS = ("semivariogram", "correlogram", "pairwise_relative", "madogram", "robust")

# Cressie & Hawkins (1980) bias-correction constants (values recalled from
# memory of Cressie & Hawkins 1980 and Cressie 1993, sec. 2.4.3). Their origin:
# for Gaussian increments delta ~ N(0, 2 gamma), E|delta|^(1/2) = (2 gamma)^(1/4) nu
# with nu = E|Z|^(1/2) = 2^(1/4) Gamma(3/4) / sqrt(pi), so nu^4 = 0.4569...;
# a second-order expansion of E[(mean |delta|^(1/2))^4] adds
# 6 nu^2 (E|Z| - nu^2) / N = 0.4945... / N. tests/test_estimators.py derives
# both from scipy.special.gamma and checks unbiasedness by Monte Carlo.
ROBUST_A = 0.457
ROBUST_B = 0.494


def check_estimator(estimator) -> str:
    """``estimator`` if it is one of :data:`ESTIMATORS`, else an InputError naming them."""
    if not isinstance(estimator, str) or estimator not in ESTIMATORS:
        raise InputError(
            f"unknown estimator {estimator!r}; choose one of {', '.join(ESTIMATORS)}."
        )
    return estimator


def _ch(s, name):
    return s[..., _C[name]]


def mean_distance(sums) -> np.ndarray:
    """Mean pair distance per bin (NaN where there are no pairs)."""
    s = np.asarray(sums, dtype=np.float64)
    n = _ch(s, "count")
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(n > 0, _ch(s, "dist") / np.where(n > 0, n, 1.0), np.nan)


def estimate(sums, estimator="semivariogram") -> np.ndarray:
    """Estimator values from pair sums.

    Parameters
    ----------
    sums : array_like (..., n_ch)
        Channel sums, channels last (see the module docstring).
    estimator : str
        One of :data:`ESTIMATORS`.

    Returns
    -------
    ndarray (...)
        NaN where a bin has no pairs (and, for the correlogram, where head or
        tail values do not vary; a ``RuntimeWarning`` says how many bins).
    """
    check_estimator(estimator)
    s = np.asarray(sums, dtype=np.float64)
    if s.shape[-1] != len(_C):
        raise InputError(f"sums must have {len(_C)} channels on the last axis; got {s.shape}.")
    n = _ch(s, "count")
    has = n > 0
    nn = np.where(has, n, 1.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        if estimator == "semivariogram":
            out = _ch(s, "sq") / (2.0 * nn)
        elif estimator == "madogram":
            out = _ch(s, "abs") / (2.0 * nn)
        elif estimator == "robust":
            m = _ch(s, "sqrt") / nn
            out = (m ** 4 / (ROBUST_A + ROBUST_B / nn)) / 2.0
        elif estimator == "pairwise_relative":
            rn = _ch(s, "rel_n")
            out = np.where(rn > 0, _ch(s, "rel") / (2.0 * np.where(rn > 0, rn, 1.0)), np.nan)
        else:  # correlogram
            mh = _ch(s, "head") / nn
            mt = _ch(s, "tail") / nn
            vh = _ch(s, "head2") / nn - mh * mh
            vt = _ch(s, "tail2") / nn - mt * mt
            cov = _ch(s, "cross") / nn - mh * mt
            # "no variation": below the rounding level of the one-pass formula
            eps = 1e-12
            flat_h = vh <= eps * np.maximum(_ch(s, "head2") / nn, np.finfo(float).tiny)
            flat_t = vt <= eps * np.maximum(_ch(s, "tail2") / nn, np.finfo(float).tiny)
            flat = has & (flat_h | flat_t)
            rho = cov / np.sqrt(np.where(flat, 1.0, vh * vt))
            out = np.where(flat, np.nan, 1.0 - rho)
            nflat = int(np.count_nonzero(flat))
            if nflat:
                warnings.warn(
                    f"correlogram undefined in {nflat} lag bin(s): the head or tail values of "
                    "their pairs do not vary (zero variance); those bins are NaN.",
                    RuntimeWarning,
                    stacklevel=2,
                )
    out = np.where(has, out, np.nan)
    return out
