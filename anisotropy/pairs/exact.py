"""The exact directional pass: every pair tested on its own lag vector against the
lag-class, angle and bandwidth rules, summed per distance class."""

from __future__ import annotations

import math

import numpy as np

from ..constants import CHANNELS
from ..errors import InputError
from . import _cells, _kernels
from .channels import resolve_channels
from .checks import (_check_coords_values, _check_lag, check_angular_tolerance,
                     check_bandwidth, direction_vector)
from .planning import _n_chunks, _plan_batches


def exact_sums(coords, values, *, lag, n_lags, direction=None, angular_tolerance=22.5,
               lag_tolerance=None, bandwidth=None, channels=None) -> np.ndarray:
    """Exact channel sums (n_lags + 1, n_ch) of a directional variogram (row 0 unused).

    The exact directional pass: every pair closer than ``n_lags lag + tol``
    is visited once and tested against the lag-class, angle and bandwidth
    rules on its own lag vector (the rules are spelled out in
    :func:`anisotropy.directional.experimental_variogram`, which reads its
    values from these sums). ``channels``
    (see :func:`anisotropy.pairs.resolve_channels`): None keeps all 15; an
    estimator name keeps count, dist and what that estimator reads (not the
    lag-vector sums dx, dy, dz, which no variogram value needs, unless they
    are named), and the pass does no work for the others, which are NaN.
    """
    c, v = _check_coords_values(coords, values)
    lag, n_lags = _check_lag(lag, n_lags)
    tol = 0.5 * lag if lag_tolerance is None else float(lag_tolerance)
    if not (tol > 0) or not math.isfinite(tol):
        raise InputError(f"lag tolerance must be a positive distance in metres; got {lag_tolerance!r}.")
    ang = check_angular_tolerance(angular_tolerance)
    band = check_bandwidth(bandwidth)
    omni = direction is None
    u = np.zeros(3) if omni else direction_vector(direction)
    kept = resolve_channels(channels)
    asked = {channels} if isinstance(channels, str) else set(channels or ())
    if kept != CHANNELS and not asked & {"dx", "dy", "dz"}:
        # a variogram value needs no mean lag vector unless it was asked for by name
        kept = tuple(name for name in kept if name not in ("dx", "dy", "dz"))
    need = np.array([name in kept for name in ("abs", "sqrt", "head", "rel", "dx")], dtype=np.int64)
    n_chunks = _n_chunks()
    acc = np.zeros((n_chunks, (n_lags + 1) * len(CHANNELS)))
    stats = np.zeros((n_chunks, 2), dtype=np.int64)
    if len(c) >= 2:
        radius = n_lags * lag + tol
        cl = c - c.min(axis=0)
        grid = _cells.make_grid(cl, radius)
        off = _cells.half_stencil(grid.cell, radius, grid.dims)
        work = _kernels.cell_work(grid.start, grid.dims, grid.occupied, off)
        o = grid.order
        x, y, z, vv = (np.ascontiguousarray(a) for a in (cl[o, 0], cl[o, 1], cl[o, 2], v[o]))
        # 90 degrees: every direction (-1 so that perpendicular lags are not lost to rounding)
        cos_tol = math.cos(math.radians(ang)) if ang < 90.0 else -1.0
        maxd2 = (radius * (1 + 1e-12)) ** 2
        # class bounds of the rule k lag - tol < d <= k lag + tol, as the rule computes them
        k = np.arange(n_lags + 3)
        lo = k * lag - tol
        hi = k * lag + tol
        pad = (k == 0) | (k > n_lags)  # never match (the kernel also reads index -1)
        lo[pad] = np.inf
        hi[pad] = -np.inf
        narrow = bool(tol <= 0.5 * lag)
        lean_omni = omni and narrow and not need.any()  # the semivariogram, every direction
        for q0, q1 in _plan_batches(work, 4e8):
            if lean_omni:
                _kernels.omni_pass(x, y, z, vv, grid.start, grid.dims, grid.occupied, off, q0, q1,
                                   n_chunks, maxd2, 1.0 / lag, lo, hi, n_lags, acc, stats)
                continue
            _kernels.exact_pass(x, y, z, vv, grid.start, grid.dims, grid.occupied, off, q0, q1,
                                n_chunks, maxd2, 1.0 / lag, tol, lo, hi, narrow, n_lags, omni,
                                u[0], u[1], u[2], cos_tol, band is not None,
                                0.0 if band is None else band * band, need, acc, stats)
    out = acc.sum(axis=0).reshape(n_lags + 1, len(CHANNELS))
    out[:, [CHANNELS.index(name) for name in CHANNELS if name not in kept]] = np.nan
    return out
