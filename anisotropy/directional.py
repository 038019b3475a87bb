"""Directional variograms, fans and variogram maps.

Two routes:

* :func:`experimental_variogram` is exact: a compiled pass over every pair
  that applies the lag-class, angle and bandwidth rules of design.md to the
  pair's own lag vector;
* :func:`variogram_fan`, :func:`variogram_map` and :func:`map_volume` read a
  :class:`anisotropy.pairs.LagVolume` and never touch the pairs again. They
  are cell-resolution approximations: a fan direction gathers the fine cells
  whose lattice axis is within the tolerance, head and tail turned round in
  the cells whose pairs point against the direction (so the pair set differs from
  the exact one only for pairs whose angle to the direction is within one
  cell radius of the tolerance), its bandwidth is applied at class centres,
  and a map pixel holds the pairs whose lag rounds to that map cell.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

from . import geometry
from .errors import InputError
from .estimators import ESTIMATORS, estimate, mean_distance
from .pairs import (CHANNELS, LagVolume, _cells, _check_coords_values, _check_lag, _kernels,
                    _n_chunks, _plan_batches, against_cells, direction_vector, resolve_channels,
                    turn_round)

__all__ = [
    "experimental_variogram",
    "variogram_fan",
    "variogram_map",
    "map_volume",
    "Fan",
    "MapSlice",
    "MapVolume",
]

_NCH = len(CHANNELS)


def _check_estimator(estimator):
    if estimator not in ESTIMATORS:
        raise InputError(
            f"unknown estimator {estimator!r}; choose one of {', '.join(ESTIMATORS)}."
        )


def _check_tolerance(angular_tolerance):
    try:
        a = float(angular_tolerance)
    except (TypeError, ValueError):
        raise InputError(f"angular tolerance must be degrees in (0, 90]; got {angular_tolerance!r}.") from None
    if not (0.0 < a <= 90.0):
        raise InputError(f"angular tolerance must be degrees in (0, 90]; got {a}.")
    return a


def _check_bandwidth(bandwidth):
    if bandwidth is None:
        return None
    b = float(bandwidth)
    if not (b > 0) or not math.isfinite(b):
        raise InputError(f"bandwidth must be a positive distance in metres or None; got {bandwidth!r}.")
    return b


def exact_sums(coords, values, *, lag, n_lags, direction=None, angular_tolerance=22.5,
               lag_tolerance=None, bandwidth=None, channels=None) -> np.ndarray:
    """Exact channel sums (n_lags + 1, n_ch) of a directional variogram (row 0 unused).

    Same rules and parameters as :func:`experimental_variogram`. ``channels``
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
    ang = _check_tolerance(angular_tolerance)
    band = _check_bandwidth(bandwidth)
    omni = direction is None
    u = np.zeros(3) if omni else direction_vector(direction)
    kept = resolve_channels(channels)
    asked = {channels} if isinstance(channels, str) else set(channels or ())
    if kept != CHANNELS and not asked & {"dx", "dy", "dz"}:
        # a variogram value needs no mean lag vector unless it was asked for by name
        kept = tuple(name for name in kept if name not in ("dx", "dy", "dz"))
    need = np.array([name in kept for name in ("abs", "sqrt", "head", "rel", "dx")], dtype=np.int64)
    n_chunks = _n_chunks()
    acc = np.zeros((n_chunks, (n_lags + 1) * _NCH))
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
    out = acc.sum(axis=0).reshape(n_lags + 1, _NCH)
    out[:, [CHANNELS.index(name) for name in CHANNELS if name not in kept]] = np.nan
    return out


def experimental_variogram(coords, values, *, lag, n_lags, direction=None, angular_tolerance=22.5,
                           lag_tolerance=None, bandwidth=None, estimator="semivariogram"):
    """Exact experimental (directional) variogram.

    Rules (design.md): class k = 1..n_lags covers pair distances in
    (k lag - tol, k lag + tol], tol = lag/2 unless given; when tol > lag/2 the
    classes overlap and a pair counts in each class it falls in. A pair
    (i, j) counts for a direction u when the angle between +-(x_j - x_i) and u
    is <= ``angular_tolerance`` (tested as ``|v . u| >= |v| cos(tol)``) and,
    with a bandwidth b, its distance from the line through u is <= b (tested
    as ``|v|^2 - (v . u)^2 <= b^2``). Each unordered pair counts once.
    Coincident samples (zero lag) have no direction: they count only in the
    omnidirectional variogram, and only in a class whose interval holds 0.
    Head and tail: along a direction, the head is the sample further along it
    (so a cone crossing the horizontal does not mix the two ways round);
    omnidirectional, head = tail + lag vector in the canonical orientation of
    :func:`anisotropy.geometry.to_lower_hemisphere`.

    Parameters
    ----------
    coords : array_like (n, 3)
        (east, north, up) metres.
    values : array_like (n,)
    lag : float
        Lag spacing, metres.
    n_lags : int
    direction : None, (trend, plunge) in degrees, or (3,) vector
        None: omnidirectional.
    angular_tolerance : float
        Degrees in (0, 90].
    lag_tolerance : float or None
        Half-width of a class, metres (default lag / 2).
    bandwidth : float or None
        Maximum distance from the direction's line, metres.
    estimator : str
        One of :data:`anisotropy.estimators.ESTIMATORS`.

    Returns
    -------
    pandas.DataFrame
        Columns ``lag_index`` (1..n_lags), ``distance`` (mean pair distance,
        NaN if empty), ``pairs`` (int), ``value`` (NaN if empty).

    Raises
    ------
    DataError
        NaN or infinite coordinates or values (the rows are named).
    InputError
        Mismatched lengths, non-positive lag or tolerances, unknown estimator.
    """
    _check_estimator(estimator)
    sums = exact_sums(coords, values, lag=lag, n_lags=n_lags, direction=direction, channels=estimator,
                      angular_tolerance=angular_tolerance, lag_tolerance=lag_tolerance,
                      bandwidth=bandwidth)[1:]
    n_lags = int(n_lags)
    return pd.DataFrame({
        "lag_index": np.arange(1, n_lags + 1, dtype=np.int64),
        "distance": mean_distance(sums),
        "pairs": sums[:, 0].round().astype(np.int64),
        "value": estimate(sums, estimator),
    })


# -------------------------------------------------------------------- fans
def _rows(a):
    """A 2D array as nested lists of floats, NaN as None (JSON-ready)."""
    return [[None if not np.isfinite(x) else float(x) for x in row] for row in a]


@dataclass
class Fan:
    """Directional variograms read from a lag volume.

    Attributes
    ----------
    directions : ndarray (n_dir, 3)
    trend, plunge : ndarray (n_dir,)
    lag_index : ndarray (n_lags,)
        1..n_lags.
    distance, value : ndarray (n_dir, n_lags)
        Mean pair distance and estimator value (NaN where empty).
    pairs : ndarray (n_dir, n_lags) int64
    angular_tolerance : float
    bandwidth : float or None
    estimator : str
    """

    directions: np.ndarray
    trend: np.ndarray
    plunge: np.ndarray
    lag_index: np.ndarray
    distance: np.ndarray
    value: np.ndarray
    pairs: np.ndarray
    angular_tolerance: float
    bandwidth: float | None
    estimator: str

    def to_dict(self) -> dict:
        return {
            "estimator": self.estimator,
            "angular_tolerance": float(self.angular_tolerance),
            "bandwidth": None if self.bandwidth is None else float(self.bandwidth),
            "lag_index": [int(k) for k in self.lag_index],
            "directions": [[float(x) for x in d] for d in self.directions],
            "trend": [float(t) for t in self.trend],
            "plunge": [float(p) for p in self.plunge],
            "distance": _rows(self.distance),
            "value": _rows(self.value),
            "pairs": [[int(x) for x in row] for row in self.pairs],
        }

    def to_frame(self) -> pd.DataFrame:
        """Long table: one row per (direction, lag)."""
        nd, nl = self.value.shape
        return pd.DataFrame({
            "direction": np.repeat(np.arange(nd), nl),
            "trend": np.repeat(self.trend, nl),
            "plunge": np.repeat(self.plunge, nl),
            "lag_index": np.tile(self.lag_index, nd),
            "distance": self.distance.ravel(),
            "pairs": self.pairs.ravel(),
            "value": self.value.ravel(),
        })


def _directions_array(directions) -> np.ndarray:
    if np.isscalar(directions):
        return geometry.fan_for_spacing(float(directions))
    d = np.asarray(directions, dtype=float)
    if d.ndim == 1:
        d = d[None, :]
    if d.ndim != 2 or d.shape[1] not in (2, 3) or len(d) == 0:
        raise InputError(
            "directions must be an (n, 3) array of vectors, an (n, 2) array of (trend, plunge) "
            f"degrees, or a spacing in degrees; got shape {d.shape}."
        )
    return np.array([direction_vector(row) for row in d])


def variogram_fan(volume: LagVolume, directions, *, angular_tolerance, bandwidth=None,
                  estimator="semivariogram") -> Fan:
    """A fan of directional variograms in one call, read from the volume.

    Parameters
    ----------
    volume : LagVolume
    directions : (n, 3) vectors, (n, 2) (trend, plunge) degrees, or a spacing in degrees
        (a Fibonacci fan of about that spacing).
    angular_tolerance : float
        Degrees; a fine cell counts when its axis is within it. Tolerances
        below the lattice spacing select one cell or none.
    bandwidth : float or None
        Metres, applied at class centres and cell axes.
    estimator : str

    Returns
    -------
    Fan
        Classes 1..n_lags.
    """
    _check_estimator(estimator)
    ang = _check_tolerance(angular_tolerance)
    band = _check_bandwidth(bandwidth)
    U = _directions_array(directions)
    c = np.minimum(np.abs(U @ volume.directions.T), 1.0)  # (n_dir, n_fine)
    sel = c >= math.cos(math.radians(ang)) if ang < 90.0 else np.ones_like(c, dtype=bool)
    S = volume.sums[1:]
    against = against_cells(S, volume.directions, U)   # their pairs point the other way
    if band is None:
        sums = np.einsum("df,kfc->dkc", sel.astype(np.float64), S, optimize=True)
        turn_round(sums, sel & against, S, "df,kf->dk")   # head = further along (issue 17)
    else:
        sin = np.sqrt(np.maximum(0.0, 1.0 - c * c))
        centres = volume.class_centres[1:]
        sums = np.empty((len(U), volume.n_lags, _NCH))
        for k in range(volume.n_lags):
            m = sel & (centres[k] * sin <= band)
            sums[:, k] = m.astype(np.float64) @ S[k]
            turn_round(sums[:, k], m & against, S[k], "df,f->d")
    trend, plunge = geometry.vector_to_line(U)
    return Fan(
        directions=U, trend=np.atleast_1d(np.asarray(trend, dtype=float)),
        plunge=np.atleast_1d(np.asarray(plunge, dtype=float)),
        lag_index=np.arange(1, volume.n_lags + 1), distance=mean_distance(sums),
        value=estimate(sums, estimator), pairs=sums[..., 0].round().astype(np.int64),
        angular_tolerance=ang, bandwidth=band, estimator=estimator,
    )


# -------------------------------------------------------------------- maps
@dataclass
class MapSlice:
    """A variogram-map slice through the origin of lag space.

    Attributes
    ----------
    u, v : ndarray
        Pixel-centre coordinates (metres) along the in-plane axes ``e1``, ``e2``.
    value : ndarray (len(u), len(v))
        Estimator value (NaN where there are no pairs).
    pairs : ndarray (len(u), len(v)) int64
        Pairs per pixel; every pair counts at +lag and -lag.
    distance : ndarray
        Mean pair distance per pixel.
    e1, e2, normal : ndarray (3,)
        In-plane axes and normal: horizontal plane e1 = east, e2 = north;
        otherwise e1 = strike, e2 = down-dip.
    map_cell : float
    estimator : str
    """

    u: np.ndarray
    v: np.ndarray
    value: np.ndarray
    pairs: np.ndarray
    distance: np.ndarray
    e1: np.ndarray
    e2: np.ndarray
    normal: np.ndarray
    map_cell: float
    estimator: str

    def to_dict(self) -> dict:
        return {
            "estimator": self.estimator,
            "map_cell": float(self.map_cell),
            "e1": [float(x) for x in self.e1],
            "e2": [float(x) for x in self.e2],
            "normal": [float(x) for x in self.normal],
            "u": [float(x) for x in self.u],
            "v": [float(x) for x in self.v],
            "value": _rows(self.value),
            "distance": _rows(self.distance),
            "pairs": [[int(x) for x in row] for row in self.pairs],
        }


@dataclass
class MapVolume:
    """The symmetrised 3D variogram map.

    Attributes
    ----------
    centres : ndarray (n,)
        Cell-centre coordinates along x, y and z (metres).
    value, distance : ndarray (n, n, n)
    pairs : ndarray (n, n, n) int64
        Every pair counts at +lag and -lag (once in the centre cell).
    map_cell : float
    estimator : str
    """

    centres: np.ndarray
    value: np.ndarray
    pairs: np.ndarray
    distance: np.ndarray
    map_cell: float
    estimator: str

    def to_dict(self) -> dict:
        return {
            "estimator": self.estimator,
            "map_cell": float(self.map_cell),
            "centres": [float(x) for x in self.centres],
            "value": np.where(np.isfinite(self.value), self.value, np.nan).tolist(),
            "pairs": self.pairs.tolist(),
        }


def _require_map(volume):
    if volume.map_cell is None:
        raise InputError("this lag volume was built without a map (map_cell=False); rebuild it "
                         "with a map_cell to draw variogram maps.")


def map_volume(volume: LagVolume, *, estimator="semivariogram") -> MapVolume:
    """The whole Cartesian variogram volume, symmetrised (see :meth:`LagVolume.full_map`)."""
    _check_estimator(estimator)
    _require_map(volume)
    centres, full = volume.full_map()
    return MapVolume(centres=centres, value=estimate(full, estimator),
                     pairs=full[..., 0].round().astype(np.int64), distance=mean_distance(full),
                     map_cell=float(volume.map_cell), estimator=estimator)


def _plane_axes(plane, normal):
    if normal is not None:
        n = np.asarray(normal, dtype=float).ravel()
        if n.shape != (3,) or not np.all(np.isfinite(n)) or np.linalg.norm(n) == 0:
            raise InputError(f"normal must be a non-zero (east, north, up) vector; got {normal!r}.")
        n = geometry.to_lower_hemisphere(n / np.linalg.norm(n))
        if abs(n[2]) >= 1.0 - 1e-12:
            return np.array([1.0, 0, 0]), np.array([0, 1.0, 0]), np.array([0, 0, -1.0])
        dd, dip = geometry.pole_to_plane(n)
        plane = (float(dd), float(dip))
    if isinstance(plane, str):
        if plane != "horizontal":
            raise InputError(f"plane must be 'horizontal', (dip_direction, dip) or given by "
                             f"normal=vector; got {plane!r}.")
        return np.array([1.0, 0, 0]), np.array([0, 1.0, 0]), np.array([0, 0, -1.0])
    p = np.asarray(plane, dtype=float).ravel()
    if p.shape != (2,) or not np.all(np.isfinite(p)) or not (0 <= p[1] <= 90):
        raise InputError(f"plane must be (dip_direction, dip) in degrees with dip in [0, 90]; "
                         f"got {plane!r}.")
    if p[1] == 0:
        return np.array([1.0, 0, 0]), np.array([0, 1.0, 0]), np.array([0, 0, -1.0])
    e1 = geometry.line_to_vector(p[0] - 90.0, 0.0)
    e2 = geometry.line_to_vector(p[0], p[1])
    n = geometry.to_lower_hemisphere(np.cross(e1, e2))
    return np.asarray(e1, float), np.asarray(e2, float), n


def variogram_map(volume: LagVolume, *, plane="horizontal", normal=None,
                  estimator="semivariogram") -> MapSlice:
    """A variogram-map slice through the origin of lag space.

    The slice gathers the map cells that the plane passes through (cell
    centre within ``map_cell/2 * (|n_x| + |n_y| + |n_z|)`` of the plane, so
    the horizontal slice is exactly the layer of lags with
    ``round(v_z / map_cell) == 0``) and adds each one into the pixel nearest
    its centre's in-plane coordinates. Pixels are ``map_cell`` square.

    Parameters
    ----------
    volume : LagVolume
    plane : "horizontal" or (dip_direction, dip)
    normal : (3,) vector, optional
        The plane normal to this axis (overrides ``plane``).
    estimator : str

    Returns
    -------
    MapSlice
    """
    _check_estimator(estimator)
    _require_map(volume)
    e1, e2, n = _plane_axes(plane, normal)
    centres, full = volume.full_map()
    mc = float(volume.map_cell)
    m = (len(centres) - 1) // 2
    I, J, K = np.meshgrid(centres, centres, centres, indexing="ij")
    P = np.stack([I.ravel(), J.ravel(), K.ravel()], axis=1)
    half = 0.5 * mc * float(np.abs(n).sum())
    on = np.abs(P @ n) < half - 1e-9 * mc
    a = np.rint(P[on] @ e1 / mc).astype(np.int64)
    b = np.rint(P[on] @ e2 / mc).astype(np.int64)
    r = int(max(np.abs(a).max(initial=0), np.abs(b).max(initial=0), m))
    out = np.zeros((2 * r + 1, 2 * r + 1, _NCH))
    np.add.at(out, (a + r, b + r), full.reshape(-1, _NCH)[on])
    ax = np.arange(-r, r + 1) * mc
    return MapSlice(u=ax, v=ax.copy(), value=estimate(out, estimator),
                    pairs=out[..., 0].round().astype(np.int64), distance=mean_distance(out),
                    e1=e1, e2=e2, normal=n, map_cell=mc, estimator=estimator)
