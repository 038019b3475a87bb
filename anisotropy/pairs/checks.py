"""Validation at the pair engine's edge: coordinates and values, lag classes, directions,
angular tolerance and bandwidth."""

from __future__ import annotations

import math

import numpy as np

from .. import geometry
from ..errors import DataError, InputError


def _check_coords_values(coords, values, what="samples"):
    c = np.asarray(coords, dtype=np.float64)
    if c.ndim != 2 or c.shape[1] not in (2, 3):
        raise InputError(f"coordinates must be an (n, 3) array of x, y, z; got shape {c.shape}.")
    if c.shape[1] == 2:
        c = np.column_stack([c, np.zeros(len(c))])
    v = np.asarray(values, dtype=np.float64).ravel()
    if len(v) != len(c):
        raise InputError(
            f"{len(c)} coordinate rows but {len(v)} values: give one value per sample."
        )
    bad = np.flatnonzero(~np.all(np.isfinite(c), axis=1))
    if len(bad):
        rows = ", ".join(str(int(r)) for r in bad[:10]) + (" ..." if len(bad) > 10 else "")
        raise DataError(
            f"{len(bad)} {what} have missing (NaN) or infinite coordinates, at rows {rows} "
            "(0-based). Remove or fix those rows before computing variograms."
        )
    badv = np.flatnonzero(~np.isfinite(v))
    if len(badv):
        rows = ", ".join(str(int(r)) for r in badv[:10]) + (" ..." if len(badv) > 10 else "")
        raise DataError(
            f"{len(badv)} {what} have missing (NaN) or infinite values, at rows {rows} "
            "(0-based). Remove them or set a missing-value policy when reading the samples."
        )
    return np.ascontiguousarray(c), np.ascontiguousarray(v)


def _check_lag(lag, n_lags):
    try:
        lag = float(lag)
    except (TypeError, ValueError):
        raise InputError(f"lag must be a positive distance in metres; got {lag!r}.") from None
    if not (lag > 0) or not math.isfinite(lag):
        raise InputError(f"lag must be a positive distance in metres; got {lag}.")
    if isinstance(n_lags, bool) or int(n_lags) != n_lags or int(n_lags) < 1:
        raise InputError(f"n_lags must be a whole number >= 1; got {n_lags!r}.")
    return lag, int(n_lags)


def direction_vector(direction) -> np.ndarray:
    """Unit vector of a direction given as (trend, plunge) degrees or a 3-vector.

    Returned in the canonical (lower-hemisphere) orientation.
    """
    d = np.asarray(direction, dtype=float).ravel()
    if d.shape == (2,):
        if not np.all(np.isfinite(d)) or not (-1e-9 <= d[1] <= 90 + 1e-9):
            raise InputError(
                f"direction (trend, plunge) must have plunge in [0, 90] degrees; got {tuple(d)}."
            )
        u = geometry.line_to_vector(d[0], d[1])
    elif d.shape == (3,):
        n = float(np.linalg.norm(d))
        if not (n > 0) or not math.isfinite(n):
            raise InputError(f"direction vector must be non-zero and finite; got {tuple(d)}.")
        u = d / n
    else:
        raise InputError(
            "direction must be (trend, plunge) in degrees or an (east, north, up) vector; "
            f"got {direction!r}."
        )
    return geometry.to_lower_hemisphere(np.asarray(u, dtype=float).reshape(3))



def check_angular_tolerance(angular_tolerance) -> float:
    """Angular tolerance as a float in (0, 90] degrees, or an InputError."""
    try:
        a = float(angular_tolerance)
    except (TypeError, ValueError):
        raise InputError(f"angular tolerance must be degrees in (0, 90]; got {angular_tolerance!r}.") from None
    if not (0.0 < a <= 90.0):
        raise InputError(f"angular tolerance must be degrees in (0, 90]; got {a}.")
    return a


def check_bandwidth(bandwidth):
    """Bandwidth as a positive float in metres, None kept, or an InputError."""
    if bandwidth is None:
        return None
    b = float(bandwidth)
    if not (b > 0) or not math.isfinite(b):
        raise InputError(f"bandwidth must be a positive distance in metres or None; got {bandwidth!r}.")
    return b
