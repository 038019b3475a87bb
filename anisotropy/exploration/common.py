"""Small helpers and the thresholds the exploration's parts share."""

from __future__ import annotations

import math

import numpy as np

from anisotropy.errors import DataError, InputError


DEFAULT_QUANTILES = (0.01, 0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95, 0.975, 0.99, 0.995)
#: CV above which the data are called strongly skewed (common practice)
STRONG_SKEW_CV = 2.0
#: R^2 above which a trend is called material (a judgement; common practice)
TREND_R2_THRESHOLD = 0.1
#: top-cut quantiles offered as candidates
TOPCUT_QUANTILES = (0.975, 0.99, 0.995)
#: share of metal above which a cap is called aggressive (common practice)
AGGRESSIVE_METAL_PCT = 10.0
MIN_SAMPLES = 3
#: The unit lag's bounds in lags out to half the domain extent (common practice:
#: at least about a dozen lags to see the shape; about 20 automatic lags keep the
#: fit bins few enough for a fast fit).
MIN_LAGS, MAX_LAGS_AUTO = 12, 20


def _f(x):
    """Plain float, or None for missing/NaN/inf (JSON-ready)."""
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _qkey(p: float) -> str:
    return f"{float(p):g}"


def _round_sig(x: float, sig: int = 2) -> float:
    if not x or not math.isfinite(x):
        return x
    return float(round(x, sig - 1 - int(math.floor(math.log10(abs(x))))))


def _coords_values(coords, values):
    c = np.asarray(coords, dtype=float)
    if c.ndim != 2 or c.shape[1] not in (2, 3):
        raise InputError(f"coords must be an (n, 3) array of x, y, z; got shape {c.shape}.")
    if c.shape[1] == 2:
        c = np.column_stack([c, np.zeros(len(c))])
    v = np.asarray(values, dtype=float).ravel()
    if len(v) != len(c):
        raise InputError(f"{len(c)} coordinates but {len(v)} values; give one value per sample.")
    bad = ~(np.isfinite(v) & np.all(np.isfinite(c), axis=1))
    if bad.any():
        raise DataError(f"{int(bad.sum())} samples have blank/NaN coordinates or values "
                        f"(first positions {np.flatnonzero(bad)[:5].tolist()}); read the table "
                        "with anisotropy.read_samples, which drops and counts them.")
    return c, v


def _wmean_std(v, w):
    m = float(np.sum(w * v))
    return m, float(np.sqrt(np.sum(w * (v - m) ** 2)))
