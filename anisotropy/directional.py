"""Directional variograms, fans and variogram maps.

Two routes:

* :func:`experimental_variogram` is exact: it reads
  :func:`anisotropy.pairs.exact_sums`, a compiled pass over every pair that
  applies the lag-class, angle and bandwidth rules of design.md to the
  pair's own lag vector;
* :func:`variogram_fan`, :func:`cone_variogram`, :func:`variogram_map` and
  :func:`map_volume` read a :class:`anisotropy.pairs.LagVolume` and never
  touch the pairs again. They
  are cell-resolution approximations: a fan direction gathers the fine cells
  whose lattice axis is within the tolerance, head and tail turned round in
  the cells whose pairs point against the direction (so the pair set differs from
  the exact one only for pairs whose angle to the direction is within one
  cell radius of the tolerance), its bandwidth is applied at class centres,
  and a map pixel holds the pairs whose lag rounds to that map cell.

:func:`model_over_pairs` and :func:`volume_model_view` give a fitted model
as a directional variogram's own pairs see it (see "The model over a
cone's pairs" below), so that points and model are compared like for like.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

from . import geometry
from .constants import CHANNEL_INDEX, CHANNELS
from .errors import InputError
from .estimators import check_estimator, estimate, mean_distance
from .pairs import (LagVolume, check_angular_tolerance, check_bandwidth, direction_vector,
                    exact_sums)
from .pairs.channels import against_cells, turn_round

__all__ = [
    "experimental_variogram",
    "variogram_fan",
    "variogram_map",
    "map_volume",
    "cone_variogram",
    "model_over_pairs",
    "volume_model_view",
    "Fan",
    "ConeVariogram",
    "MapSlice",
    "MapVolume",
]

_NCH = len(CHANNELS)


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
    check_estimator(estimator)
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
    check_estimator(estimator)
    ang = check_angular_tolerance(angular_tolerance)
    band = check_bandwidth(bandwidth)
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


# ------------------------------------------------ the model over a cone's pairs
# The fitted model as seen by the pairs of a directional variogram.
#
# A directional experimental variogram pools every pair inside an angular
# cone. With strong anisotropy those pairs are not "along the axis": a pair
# 15 degrees off a 124 m major axis at 30 m has about 8 m along a 10 m minor
# axis, so its variogram is far higher than the model evaluated exactly along
# the axis. Comparing the points with the along-axis curve then suggests a bad
# fit where the joint fit (which uses each bin's mean lag vector) is right.
#
# :func:`model_over_pairs` gives the like-for-like comparison: for each lag
# class, the pair-weighted mean of the model evaluated at the mean lag vector
# of each fine bin the cone takes. A bin's lag is the mean lag vector's
# direction at the bin's mean distance, with the same rim rule as
# :func:`anisotropy.fitting.bins_from_sums` (the cell direction where the mean
# vector has shrunk below 90 % of the mean distance), so it is what the fit
# itself sees. Inside one fine bin (one lag class, about 2 degrees of
# direction) the model is taken as constant at that lag: the value is exact
# when every bin holds pairs with one lag vector, and otherwise off by at most
# the model's change across a bin.

#: mean vector shorter than this fraction of the mean distance: use the cell
#: direction (the rim rule of anisotropy.fitting.bins_from_sums)
RIM_FRACTION = 0.9


def model_over_pairs(sums, directions, mask, variogram):
    """Pair-weighted mean of a model over the fine bins a direction takes.

    Parameters
    ----------
    sums : ndarray, shape (n_lags + 1, n_fine, n_channels)
        Fine sums of a :class:`anisotropy.pairs.LagVolume` (channels in
        ``anisotropy.constants.CHANNELS`` order; ``count``, ``dist``, ``dx``,
        ``dy``, ``dz`` are used).
    directions : ndarray, shape (n_fine, 3)
        Axes of the fine cells (``LagVolume.directions``).
    mask : ndarray of bool, shape (n_lags + 1, n_fine)
        Bins that count for the direction (``LagVolume.cell_mask``).
    variogram : callable or model
        Either an object with a ``variogram(lags)`` method (a
        :class:`anisotropy.NestedModel`) or a callable mapping lag vectors
        (m, 3) to values (m,).

    Returns
    -------
    ndarray, shape (n_lags + 1,)
        Per lag class, ``sum_b n_b gamma(h_b) / sum_b n_b`` over the masked
        bins ``b`` with pairs; NaN where the class has no pairs.
    """
    sums = np.asarray(sums, dtype=float)
    dirs = np.asarray(directions, dtype=float)
    mask = np.asarray(mask, dtype=bool)
    if sums.ndim != 3 or dirs.shape != (sums.shape[1], 3) or mask.shape != sums.shape[:2]:
        raise InputError(
            f"model view needs sums (n_lags+1, n_fine, n_ch), directions (n_fine, 3) and a "
            f"mask (n_lags+1, n_fine); got {sums.shape}, {dirs.shape}, {mask.shape}."
        )
    gamma = variogram.variogram if hasattr(variogram, "variogram") else variogram
    count = sums[..., CHANNEL_INDEX["count"]]
    use = mask & (count > 0)
    k_idx, f_idx = np.nonzero(use)
    out = np.full(sums.shape[0], np.nan)
    if k_idx.size == 0:
        return out
    n = count[k_idx, f_idx]
    sel = sums[k_idx, f_idx]
    mean_vec = np.stack([sel[:, CHANNEL_INDEX[c]] for c in ("dx", "dy", "dz")], axis=1) / n[:, None]
    dist = sel[:, CHANNEL_INDEX["dist"]] / n
    norm = np.linalg.norm(mean_vec, axis=1)
    shrunk = norm < RIM_FRACTION * dist
    lags = np.where(shrunk[:, None], dirs[f_idx] * dist[:, None],
                    mean_vec * (dist / np.maximum(norm, 1e-300))[:, None])
    g = np.asarray(gamma(lags), dtype=float).reshape(-1)
    num = np.bincount(k_idx, weights=n * g, minlength=sums.shape[0])
    den = np.bincount(k_idx, weights=n, minlength=sums.shape[0])
    with np.errstate(invalid="ignore", divide="ignore"):
        out = np.where(den > 0, num / np.where(den > 0, den, 1.0), np.nan)
    return out


def volume_model_view(volume, model, direction, angular_tolerance, bandwidth=None):
    """:func:`model_over_pairs` for the cone ``LagVolume.aggregate`` takes.

    Parameters
    ----------
    volume : anisotropy.pairs.LagVolume
    model : NestedModel or callable (m, 3) -> (m,)
    direction : (trend, plunge) or vector
    angular_tolerance : float, degrees
    bandwidth : float or None, metres

    Returns
    -------
    ndarray, shape (n_lags + 1,)
    """
    mask = volume.cell_mask(direction, angular_tolerance, bandwidth)
    return model_over_pairs(volume.sums, volume.directions, mask, model)


@dataclass
class ConeVariogram:
    """One directional variogram read from a lag volume, with the model over its pairs.

    Attributes
    ----------
    direction : ndarray (3,)
        Unit vector (canonical orientation).
    trend, plunge : float
        The direction in degrees.
    distance : ndarray (n_lags + 1,)
        Mean pair distance per class, class 0 included (NaN where empty).
    value : ndarray (n_lags + 1,)
        Estimator value per class (NaN where empty).
    pairs : ndarray (n_lags + 1,)
        The count channel of the sums (whole numbers for a volume's own sums).
    model_over_pairs : ndarray (n_lags + 1,) or None
        :func:`model_over_pairs` of the model given, per class.
    angular_tolerance : float
    bandwidth : float or None
    estimator : str
    """

    direction: np.ndarray
    trend: float
    plunge: float
    distance: np.ndarray
    value: np.ndarray
    pairs: np.ndarray
    model_over_pairs: np.ndarray | None
    angular_tolerance: float
    bandwidth: float | None
    estimator: str

    def to_dict(self) -> dict:
        return {
            "direction": [float(x) for x in self.direction],
            "trend": float(self.trend), "plunge": float(self.plunge),
            "angular_tolerance": float(self.angular_tolerance),
            "bandwidth": None if self.bandwidth is None else float(self.bandwidth),
            "estimator": self.estimator,
            "distance": _rows([self.distance])[0], "value": _rows([self.value])[0],
            "pairs": _rows([self.pairs])[0],
            "model_over_pairs": (None if self.model_over_pairs is None
                                 else _rows([self.model_over_pairs])[0]),
        }

    def to_frame(self) -> pd.DataFrame:
        """One row per lag class (class 0 included)."""
        n = len(self.value)
        return pd.DataFrame({
            "lag_index": np.arange(n), "distance": self.distance, "pairs": self.pairs,
            "value": self.value,
            "model_over_pairs": (np.full(n, np.nan) if self.model_over_pairs is None
                                 else self.model_over_pairs),
        })


def cone_variogram(volume: LagVolume, direction, *, angular_tolerance, bandwidth=None,
                   estimator="semivariogram", model=None) -> ConeVariogram:
    """The directional variogram of one cone, and the model averaged over the cone's pairs.

    The cone is that of :meth:`anisotropy.pairs.LagVolume.aggregate` (fine
    cells whose axis is within the tolerance; the bandwidth at class
    centres), so the values are a cell-resolution approximation of
    :func:`experimental_variogram` (see the module docstring).

    Parameters
    ----------
    volume : LagVolume
    direction : (trend, plunge) degrees or (3,) vector
    angular_tolerance : float
        Degrees in (0, 90].
    bandwidth : float or None
        Metres.
    estimator : str
        One of :data:`anisotropy.estimators.ESTIMATORS`.
    model : NestedModel or callable, optional
        When given, :func:`volume_model_view` of the same cone is returned
        as ``model_over_pairs``.

    Returns
    -------
    ConeVariogram
        Classes 0..n_lags.
    """
    check_estimator(estimator)
    ang = check_angular_tolerance(angular_tolerance)
    band = check_bandwidth(bandwidth)
    u = direction_vector(direction)
    sums = volume.aggregate(u, ang, band) if band is not None else volume.aggregate(u, ang)
    n = sums[:, CHANNEL_INDEX["count"]]
    with np.errstate(invalid="ignore", divide="ignore"):
        dist = np.where(n > 0, sums[:, CHANNEL_INDEX["dist"]] / np.maximum(n, 1), np.nan)
    seen = None if model is None else volume_model_view(volume, model, u, ang, band)
    trend, plunge = geometry.vector_to_line(u)
    return ConeVariogram(direction=u, trend=float(trend), plunge=float(plunge), distance=dist,
                         value=np.asarray(estimate(sums, estimator), float), pairs=n,
                         model_over_pairs=seen, angular_tolerance=ang, bandwidth=band,
                         estimator=estimator)


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
    check_estimator(estimator)
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
    check_estimator(estimator)
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
