"""Direction lattices and the per-pair direction lookup of the pair engine.

A pair's lag vector is first put in the canonical orientation of
:func:`anisotropy.geometry.to_lower_hemisphere` (z < 0; if z == 0 then
x > 0; if also x == 0 then y > 0). Its unit vector ``(x, y, z)`` then has
stereographic coordinates (projection from the zenith onto the horizontal
plane through the centre of the sphere)

    (X, Y) = (x, y) / (1 - z),      X^2 + Y^2 = (1 + z) / (1 - z) <= 1,

a unit disc (the rim holds the horizontal lags, the centre the vertical
one). For a lag vector ``v`` of length ``d`` that is ``v_xy / (d - v_z)``:
one divide and no square root, which is why the engine uses this projection
rather than an equal-area one (the square root per pair was a measurable
share of the pass; see benchmarks/RESULTS.md). The projection is only an
index into a lookup table: the engine precomputes, on a square ``T x T`` grid
of pixels covering the disc, the index of the lattice direction nearest (as
an undirected axis) to the unit vector at each pixel centre, and per pair
reads the cell with one divide, two floors and one table read (see
``_kernels.py``). The inverse used for the pixel centres is
``u = (2X, 2Y, X^2 + Y^2 - 1) / (1 + X^2 + Y^2)``.

Rim: a horizontal lag ``v`` and ``-v`` are the same axis but land on
opposite points of the rim. The table is built with the undirected nearest
axis (a nearest-neighbour search over the lattice *and* its antipodes), so
both rim points carry the same answer whenever that axis is the nearest, and
pixels just outside the disc (reached only through rounding) are pulled back
onto the rim before the search.

Accuracy of the lookup: the answer is exact for the pixel centre; a pair can
only get a different cell than the true nearest axis when it lies within
half a pixel diagonal of the boundary between two lattice cells, and then the
axis it gets is at most one pixel's angular diameter (:func:`pixel_angle`)
farther from it than the nearest one. The stereographic scale is
``d theta / d rho = 2 / (1 + rho^2)``: 2 radians per unit at the centre, 1 at
the rim, so a pixel of side ``p`` spans at most ``2 sqrt(2) p`` radians along
its diagonal. With the default lattice (5,954 directions, 986 x 986 table)
that bound is 0.33 degrees; cells are at most about 1.6 degrees in radius.
"""

from __future__ import annotations

import functools
import math

import numpy as np
from scipy.spatial import cKDTree

from .. import geometry
from ..errors import InputError

__all__ = [
    "DEFAULT_FINE_SPACING",
    "DEFAULT_COARSE_SPACING",
    "lattice",
    "direction_table",
    "plane_coordinates",
    "nearest_axis",
    "pixel_angle",
]

#: Default spacing (degrees) of the fine lattice on which the volume is binned.
DEFAULT_FINE_SPACING = 2.0
#: Default spacing (degrees) of the coarse lattice used by the fit and the blocks.
DEFAULT_COARSE_SPACING = 10.0

_SQRT2 = math.sqrt(2.0)


def lattice(spec, default_spacing: float) -> np.ndarray:
    """Return a lower-hemisphere direction lattice as unit vectors.

    Parameters
    ----------
    spec : None, float, int or array_like (n, 3)
        None: the Fibonacci fan of :func:`anisotropy.geometry.fan_for_spacing`
        for ``default_spacing``; a number in (0, 90]: that spacing in
        degrees; an int > 90: that many Fibonacci directions; an array: the
        directions themselves (normalised and put in the canonical
        orientation, order kept).
    default_spacing : float
        Spacing in degrees used when ``spec`` is None.

    Returns
    -------
    ndarray, shape (n, 3)
    """
    if spec is None:
        dirs = geometry.fan_for_spacing(default_spacing)
    elif np.isscalar(spec):
        if isinstance(spec, (int, np.integer)) and spec > 90:
            dirs = geometry.fibonacci_hemisphere(int(spec))
        else:
            dirs = geometry.fan_for_spacing(float(spec))
    else:
        dirs = np.asarray(spec, dtype=float)
        if dirs.ndim != 2 or dirs.shape[1] != 3 or len(dirs) == 0:
            raise InputError(
                f"direction lattice must be an (n, 3) array of vectors; got shape {dirs.shape}."
            )
        norm = np.linalg.norm(dirs, axis=1)
        if not np.all(np.isfinite(norm)) or np.any(norm == 0):
            raise InputError("direction lattice holds a zero-length or non-finite vector.")
        dirs = dirs / norm[:, None]
    dirs = geometry.to_lower_hemisphere(np.asarray(dirs, dtype=float))
    return np.ascontiguousarray(dirs)


def nearest_axis(vectors, directions) -> np.ndarray:
    """Index of the nearest undirected axis of ``directions`` for each vector.

    Exact (brute force through a k-d tree on the lattice and its antipodes).

    Parameters
    ----------
    vectors : array_like (m, 3)
        Non-zero vectors (need not be unit).
    directions : array_like (n, 3)
        Unit lattice vectors.

    Returns
    -------
    ndarray of int64, shape (m,)
    """
    v = np.asarray(vectors, dtype=float)
    v = v / np.linalg.norm(v, axis=1, keepdims=True)
    d = np.asarray(directions, dtype=float)
    tree = cKDTree(np.vstack([d, -d]))
    _, idx = tree.query(v)
    return (np.asarray(idx) % len(d)).astype(np.int64)


def plane_coordinates(vectors) -> np.ndarray:
    """Stereographic coordinates (X, Y) of canonical lag vectors, in the unit disc.

    Same formula as the compiled kernel: ``v_xy / (d - v_z)`` with ``v`` in
    the canonical orientation and ``d = |v|``.
    """
    v = geometry.to_lower_hemisphere(np.asarray(vectors, dtype=float))
    d = np.sqrt(v[:, 0] * v[:, 0] + v[:, 1] * v[:, 1] + v[:, 2] * v[:, 2])
    r = 1.0 / (d - v[:, 2])
    return np.stack([v[:, 0] * r, v[:, 1] * r], axis=1)


def table_size_for(directions) -> int:
    """Pixels per side of the lookup table for a lattice.

    About 8 pixels across the lattice spacing where the projection is
    coarsest (the centre, 2 radians per unit), between 256 and 2048.
    """
    n = len(directions)
    spacing = math.sqrt(2.0 * math.pi / max(n, 1))  # radians, rough
    pix = 0.5 * spacing / 8.0
    t = int(math.ceil(2.0 / pix))
    return int(min(2048, max(256, t)))


def pixel_angle(table_size: int) -> float:
    """Upper bound (degrees) of the angular diameter of one lookup pixel.

    The stereographic map stretches angles by at most 2 (at the centre of the
    disc), so a pixel of side ``p = 2 / T`` spans at most ``2 sqrt(2) p``
    radians along its diagonal.
    """
    p = 2.0 / table_size
    return math.degrees(2.0 * _SQRT2 * p)


@functools.lru_cache(maxsize=8)
def _table_cached(key: bytes, n: int, table_size: int) -> np.ndarray:
    directions = np.frombuffer(key, dtype=np.float64).reshape(n, 3)
    t = table_size
    pix = 2.0 / t
    c = -1.0 + (np.arange(t) + 0.5) * pix
    X, Y = np.meshgrid(c, c, indexing="ij")
    r2 = X * X + Y * Y
    # pull pixels outside the disc back to the rim (horizontal lags)
    scale = np.where(r2 > 1.0, 1.0 / np.sqrt(np.maximum(r2, 1e-300)), 1.0)
    X = X * scale
    Y = Y * scale
    r2 = np.minimum(r2, 1.0)
    den = 1.0 + r2
    vec = np.stack([(2.0 * X / den).ravel(), (2.0 * Y / den).ravel(), ((r2 - 1.0) / den).ravel()],
                   axis=1)
    # a pixel at the exact centre has (0, 0, -1): fine
    idx = nearest_axis(vec, directions)
    dtype = np.int16 if n < 32000 else np.int32
    out = idx.reshape(t, t).astype(dtype)
    out.setflags(write=False)
    return out


def direction_table(directions, table_size: int | None = None) -> np.ndarray:
    """Lookup table pixel -> nearest lattice axis, shape (T, T).

    Row index from X, column index from Y, pixel ``i`` covering
    ``[-1 + i p, -1 + (i + 1) p)`` with ``p = 2 / T``. Cached per lattice.
    """
    d = np.ascontiguousarray(directions, dtype=np.float64)
    if table_size is None:
        table_size = table_size_for(d)
    return _table_cached(d.tobytes(), len(d), int(table_size))


def lookup(vectors, table) -> np.ndarray:
    """Cell of each vector through the table (the kernel's rule, in NumPy)."""
    t = table.shape[0]
    inv_pix = t / 2.0
    XY = plane_coordinates(vectors)
    i = np.clip(np.floor((XY[:, 0] + 1.0) * inv_pix), 0, t - 1).astype(np.int64)
    j = np.clip(np.floor((XY[:, 1] + 1.0) * inv_pix), 0, t - 1).astype(np.int64)
    return table[i, j].astype(np.int64)


def _morton2(i, j, bits=12):
    code = np.zeros_like(i, dtype=np.int64)
    for b in range(bits):
        code |= ((i >> b) & 1) << (2 * b + 1)
        code |= ((j >> b) & 1) << (2 * b)
    return code


def spatial_order(directions) -> np.ndarray:
    """Permutation that numbers lattice directions along a Z-order curve of
    their plane (stereographic) coordinates, so that neighbouring directions have nearby
    indices (and nearby accumulator memory). The Fibonacci numbering puts
    consecutive indices a golden angle apart, which scatters the bins a
    group of similar lag vectors touches; renumbering keeps them in cache.
    """
    XY = plane_coordinates(directions)
    q = np.clip(((XY + 1.0) / 2.0 * 4096).astype(np.int64), 0, 4095)
    return np.argsort(_morton2(q[:, 0], q[:, 1]), kind="stable")
