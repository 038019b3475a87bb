"""Variogram structures, anisotropic distance and nested models.

A nested model is a nugget plus one or more structures. Each structure has
a kind, a sill (its contribution to the total variance) and three ranges
along the axes of a frame (major, semi-major, minor). The frame is a
right-handed rotation matrix whose columns are the axes (see
:mod:`anisotropy.geometry`); the structures share the model's frame unless
a structure carries its own.

Correlation functions ``rho(h)`` take the *scaled* distance ``h``: the lag
vector expressed in the frame, each component divided by the range along
that axis, and the Euclidean length taken (geometric anisotropy)::

    h = || (lag @ frame) / (range_major, range_semi, range_minor) ||

Range conventions (stated once here and in :func:`correlation`):

* spherical and cubic: the range is where the structure reaches its sill
  (compact support);
* exponential and Gaussian: the **practical range**, where 95 % of the sill
  is reached: ``rho = exp(-3 h)`` and ``rho = exp(-3 h^2)``.

All covariances here are permissible in three dimensions (Chiles &
Delfiner 2012, ch. 2).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Sequence

import numpy as np

from anisotropy.errors import InputError
from anisotropy.geometry import angles_from_frame, is_rotation
from anisotropy.geometry import frame_from_angles

__all__ = [
    "STRUCTURE_KINDS",
    "NUGGET",
    "correlation",
    "correlation_slope",
    "anisotropic_distance",
    "scaled_coordinates",
    "Structure",
    "NestedModel",
]

STRUCTURE_KINDS = ("spherical", "exponential", "gaussian", "cubic")
NUGGET = "nugget"


def _check_kind(kind) -> str:
    k = str(kind).strip().lower()
    if k not in STRUCTURE_KINDS and k != NUGGET:
        raise InputError(
            f"unknown variogram structure {kind!r}; use one of "
            f"{', '.join(STRUCTURE_KINDS)} (the nugget is given separately)."
        )
    return k


def correlation(kind: str, h) -> np.ndarray:
    """Correlation ``rho(h)`` of a unit-sill structure at scaled distance ``h``.

    ``h`` is the (anisotropic) distance divided by the range. The
    variogram of the structure is ``sill * (1 - rho)``, its covariance
    ``sill * rho``.

    * ``"spherical"``: ``1 - 1.5 h + 0.5 h^3`` for ``h < 1``, else 0
      (Journel & Huijbregts 1978, ch. II; range = where the sill is reached).
    * ``"exponential"``: ``exp(-3 h)`` (practical range: 95 % of the sill at
      ``h = 1``).
    * ``"gaussian"``: ``exp(-3 h^2)`` (practical range).
    * ``"cubic"``: ``1 - (7 h^2 - 35/4 h^3 + 7/2 h^5 - 3/4 h^7)`` for
      ``h < 1``, else 0 (Chiles & Delfiner 2012, ch. 2; range = where the
      sill is reached; parabolic at the origin).
    * ``"nugget"``: 1 at ``h == 0`` exactly, else 0.

    Parameters
    ----------
    kind : str
    h : array_like
        Non-negative scaled distances.

    Returns
    -------
    ndarray
        Same shape as ``h``.
    """
    k = _check_kind(kind)
    h = np.asarray(h, dtype=float)
    if k == "spherical":
        hc = np.minimum(h, 1.0)
        return np.where(h < 1.0, 1.0 - 1.5 * hc + 0.5 * hc**3, 0.0)
    if k == "exponential":
        return np.exp(-3.0 * h)
    if k == "gaussian":
        return np.exp(-3.0 * h * h)
    if k == "cubic":
        # Written from the published cubic model (Chiles & Delfiner 2012,
        # ch. 2), coefficients recalled from memory; the tests check the
        # properties that pin them (sill and zero slope at h = 1,
        # permissibility in 3D).
        hc = np.minimum(h, 1.0)
        h2 = hc * hc
        g = h2 * (7.0 - hc * (35.0 / 4.0 - h2 * (7.0 / 2.0 - 3.0 / 4.0 * h2)))
        return np.where(h < 1.0, 1.0 - g, 0.0)
    return np.where(h == 0.0, 1.0, 0.0)


def correlation_slope(kind: str, h) -> np.ndarray:
    """Derivative ``d rho / d h`` of :func:`correlation` (structure kinds only).

    Differentiated term by term from the formulas above: spherical
    ``-1.5 + 1.5 h^2``, exponential ``-3 exp(-3 h)``, Gaussian
    ``-6 h exp(-3 h^2)``, cubic ``-(14 h - 105/4 h^2 + 35/2 h^4 - 21/4 h^6)``,
    the bounded ones 0 from ``h = 1`` on. Arguments and result as for
    :func:`correlation`; the nugget has no slope (ValueError).
    """
    k = _check_kind(kind)
    h = np.asarray(h, dtype=float)
    hc = np.minimum(h, 1.0)
    if k == "spherical":
        return np.where(h < 1.0, -1.5 + 1.5 * hc * hc, 0.0)
    if k == "exponential":
        return -3.0 * np.exp(-3.0 * h)
    if k == "gaussian":
        return -6.0 * h * np.exp(-3.0 * h * h)
    if k == "cubic":
        h2 = hc * hc
        d = hc * (14.0 - hc * (105.0 / 4.0 - h2 * (35.0 / 2.0 - 21.0 / 4.0 * h2)))
        return np.where(h < 1.0, -d, 0.0)
    raise ValueError("the nugget has no slope")


def _check_ranges(ranges, where="structure") -> tuple[float, float, float]:
    r = np.asarray(ranges, dtype=float).ravel()
    if r.size == 1:
        r = np.repeat(r, 3)
    if r.size != 3:
        raise InputError(
            f"{where}: ranges must be three numbers (major, semi-major, minor) or one "
            f"number for an isotropic structure; got {list(np.ravel(ranges))}."
        )
    if not np.all(np.isfinite(r)) or np.any(r <= 0):
        raise InputError(
            f"{where}: every range must be a positive distance in metres; got "
            f"{[float(x) for x in r]}. A zero range means the structure is pure nugget: "
            "add its sill to the nugget instead."
        )
    return (float(r[0]), float(r[1]), float(r[2]))


def _check_frame(frame, where="model") -> np.ndarray:
    R = np.asarray(frame, dtype=float)
    if R.shape != (3, 3) or not is_rotation(R):
        raise InputError(
            f"{where}: the frame must be a 3x3 right-handed rotation matrix with columns "
            "major, semi-major, minor (build it with anisotropy.geometry.frame_from_angles)."
        )
    return R


def scaled_coordinates(coords, frame, ranges) -> np.ndarray:
    """Coordinates expressed in the frame and divided by the ranges.

    The anisotropic distance between two points equals the Euclidean
    distance between their scaled coordinates, which is how covariance
    matrices and spectral simulations are computed without forming lag
    vectors.

    Parameters
    ----------
    coords : array_like, shape (..., 3)
    frame : array_like, shape (3, 3)
    ranges : sequence of 3 floats

    Returns
    -------
    ndarray, shape (..., 3)
    """
    c = np.asarray(coords, dtype=float)
    return (c @ np.asarray(frame, dtype=float)) / np.asarray(ranges, dtype=float)


def anisotropic_distance(lags, frame, ranges) -> np.ndarray:
    """Scaled anisotropic length of lag vectors.

    ``|| (lag @ frame) / ranges ||``: the lag's components along the major,
    semi-major and minor axes, each divided by the range on that axis. A
    lag of one range along any axis has length 1.

    Parameters
    ----------
    lags : array_like, shape (..., 3)
        Lag vectors (east, north, up), metres.
    frame : array_like, shape (3, 3)
        Rotation matrix, columns major, semi-major, minor.
    ranges : sequence of 3 floats
        Ranges along major, semi-major and minor axes, metres.

    Returns
    -------
    ndarray, shape (...)
    """
    lags = np.asarray(lags, dtype=float)
    if lags.shape[-1:] != (3,):
        raise InputError(f"lag vectors must have 3 components; got shape {lags.shape}.")
    return np.linalg.norm(scaled_coordinates(lags, frame, ranges), axis=-1)


@dataclass(eq=False)
class Structure:
    """One nested structure.

    Parameters
    ----------
    kind : str
        One of :data:`STRUCTURE_KINDS`.
    sill : float
        Contribution to the total sill, >= 0.
    ranges : (float, float, float) or float
        Ranges along the major, semi-major and minor axes, metres (> 0). A
        single number means isotropic. For exponential and Gaussian these
        are practical ranges (95 % of the sill).
    frame : ndarray (3, 3), optional
        The structure's own frame; ``None`` means it uses the model's.
    """

    kind: str
    sill: float
    ranges: tuple = (1.0, 1.0, 1.0)
    frame: Any = None

    def __post_init__(self):
        self.kind = _check_kind(self.kind)
        if self.kind == NUGGET:
            raise InputError("the nugget is not a structure: give it as NestedModel(nugget=...).")
        try:
            sill = float(self.sill)
        except (TypeError, ValueError):
            raise InputError(f"{self.kind} structure: sill must be a number; got {self.sill!r}.") from None
        if not math.isfinite(sill) or sill < 0:
            raise InputError(
                f"{self.kind} structure: the sill must be zero or positive; got {self.sill}. "
                "A variogram sill is a variance contribution and cannot be negative."
            )
        self.sill = sill
        self.ranges = _check_ranges(self.ranges, f"{self.kind} structure")
        if self.frame is not None:
            self.frame = _check_frame(self.frame, f"{self.kind} structure")

    def correlation(self, lags, frame) -> np.ndarray:
        """Correlation at lag vectors, using ``frame`` unless the structure has its own."""
        F = self.frame if self.frame is not None else frame
        return correlation(self.kind, anisotropic_distance(lags, F, self.ranges))

    def range_along(self, direction, frame) -> float | np.ndarray:
        """Range of this structure along a direction (unit-length lag reaching h = 1)."""
        F = self.frame if self.frame is not None else frame
        u = np.asarray(direction, dtype=float)
        u = u / np.linalg.norm(u, axis=-1, keepdims=True)
        return 1.0 / anisotropic_distance(u, F, self.ranges)

    def __eq__(self, other):
        return isinstance(other, Structure) and self.to_dict() == other.to_dict()

    def to_dict(self) -> dict:
        """JSON-ready description: ``{type, sill, ranges{major, semi_major, minor}, frame?}``."""
        d = {
            "type": self.kind,
            "sill": float(self.sill),
            "ranges": {"major": self.ranges[0], "semi_major": self.ranges[1], "minor": self.ranges[2]},
        }
        if self.frame is not None:
            d["frame"] = [[float(x) for x in row] for row in self.frame]
        return d

    @classmethod
    def from_dict(cls, d: dict) -> "Structure":
        """Rebuild from :meth:`to_dict` output (``kind`` accepted for ``type``; ranges as a mapping or a list)."""
        if not isinstance(d, dict):
            raise InputError(f"a structure must be a mapping with type, sill and ranges; got {d!r}.")
        kind = d.get("type", d.get("kind"))
        if kind is None or "sill" not in d or "ranges" not in d:
            raise InputError(
                f"a structure needs 'type', 'sill' and 'ranges'; got keys {sorted(d)}."
            )
        r = d["ranges"]
        if isinstance(r, dict):
            try:
                r = (r["major"], r["semi_major"], r["minor"])
            except KeyError:
                raise InputError(
                    "structure ranges need the keys 'major', 'semi_major' and 'minor'; "
                    f"got {sorted(r)}."
                ) from None
        return cls(kind, d["sill"], r, d.get("frame"))


@dataclass(eq=False)
class NestedModel:
    """Nugget plus nested structures sharing (by default) one frame.

    Parameters
    ----------
    nugget : float
        Nugget effect, >= 0; it acts only at exactly zero lag.
    structures : sequence of Structure (or dicts accepted by
        :meth:`Structure.from_dict`)
    frame : ndarray (3, 3), optional
        Shared frame (columns major, semi-major, minor); identity
        (major = east, semi-major = north, minor = up) when omitted.
    """

    nugget: float = 0.0
    structures: Sequence[Structure] = field(default_factory=list)
    frame: Any = None

    def __post_init__(self):
        try:
            nug = float(self.nugget)
        except (TypeError, ValueError):
            raise InputError(f"the nugget must be a number; got {self.nugget!r}.") from None
        if not math.isfinite(nug) or nug < 0:
            raise InputError(f"the nugget must be zero or positive; got {self.nugget}.")
        self.nugget = nug
        if isinstance(self.structures, (Structure, dict)):
            self.structures = [self.structures]
        st = []
        for s in self.structures:
            if isinstance(s, dict):
                s = Structure.from_dict(s)
            if not isinstance(s, Structure):
                raise InputError(f"structures must be Structure objects or dicts; got {s!r}.")
            st.append(s)
        self.structures = st
        self.frame = np.eye(3) if self.frame is None else _check_frame(self.frame, "model")

    # -- basic quantities ----------------------------------------------------

    @property
    def total_sill(self) -> float:
        """Nugget plus the sum of the structure sills (= C(0))."""
        return float(self.nugget + sum(s.sill for s in self.structures))

    def _frame_of(self, s: Structure) -> np.ndarray:
        return s.frame if s.frame is not None else self.frame

    def covariance(self, lags) -> np.ndarray:
        """Covariance at lag vectors (..., 3): ``C(0)`` = total sill.

        The nugget contributes only where the lag vector is exactly zero.
        """
        lags = np.asarray(lags, dtype=float)
        if lags.shape[-1:] != (3,):
            raise InputError(f"lag vectors must have 3 components; got shape {lags.shape}.")
        c = np.where(np.all(lags == 0.0, axis=-1), self.nugget, 0.0)
        for s in self.structures:
            c = c + s.sill * s.correlation(lags, self.frame)
        return c

    def variogram(self, lags) -> np.ndarray:
        """Semivariogram at lag vectors (..., 3): ``total_sill - covariance``."""
        return self.total_sill - self.covariance(lags)

    def variogram_along(self, direction, distances) -> np.ndarray:
        """Semivariogram along a direction at given distances.

        Parameters
        ----------
        direction : array_like, shape (3,) or (k, 3)
            Direction vector(s), normalised here.
        distances : array_like, shape (m,)
            Distances, metres.

        Returns
        -------
        ndarray, shape (m,) or (k, m)
        """
        u = np.asarray(direction, dtype=float)
        if u.shape[-1:] != (3,):
            raise InputError(f"direction must have 3 components; got shape {u.shape}.")
        n = np.linalg.norm(u, axis=-1, keepdims=True)
        if np.any(n == 0):
            raise InputError("direction has zero length.")
        u = u / n
        d = np.asarray(distances, dtype=float)
        lags = d[..., :, None] * u[..., None, :]
        return self.variogram(lags)

    def range_along(self, direction):
        """Range along a direction of the structure that reaches furthest there.

        For each structure the range along unit vector ``u`` is the
        distance at which its scaled distance reaches 1,
        ``1 / || (u @ frame) / ranges ||`` (the sill for spherical and
        cubic, the practical range for exponential and Gaussian); the
        largest over structures with a positive sill is returned (0 for a
        pure-nugget model).

        Parameters
        ----------
        direction : array_like, shape (3,) or (..., 3)

        Returns
        -------
        float or ndarray
        """
        u = np.asarray(direction, dtype=float)
        if u.shape[-1:] != (3,) or np.any(np.linalg.norm(u, axis=-1) == 0):
            raise InputError("direction must be a non-zero 3-component vector.")
        out = np.zeros(u.shape[:-1])
        for s in self.structures:
            if s.sill > 0:
                out = np.maximum(out, s.range_along(u, self.frame))
        return float(out) if out.ndim == 0 else out

    def covariance_matrix(self, coords, other=None) -> np.ndarray:
        """Covariance between point sets without forming lag vectors.

        Parameters
        ----------
        coords : array_like, shape (n, 3)
        other : array_like, shape (m, 3), optional
            Defaults to ``coords``.

        Returns
        -------
        ndarray, shape (n, m)
            The nugget is added where two points coincide exactly.
        """
        from scipy.spatial.distance import cdist

        a = np.asarray(coords, dtype=float)
        b = a if other is None else np.asarray(other, dtype=float)
        if a.ndim != 2 or a.shape[1] != 3 or b.ndim != 2 or b.shape[1] != 3:
            raise InputError("coordinates must be arrays of shape (n, 3).")
        C = np.zeros((a.shape[0], b.shape[0]))
        if self.nugget > 0:
            C += self.nugget * (cdist(a, b, "sqeuclidean") == 0.0)
        for s in self.structures:
            F = self._frame_of(s)
            h = cdist(scaled_coordinates(a, F, s.ranges), scaled_coordinates(b, F, s.ranges))
            C += s.sill * correlation(s.kind, h)
        if other is None:
            np.fill_diagonal(C, self.total_sill)
        return C

    # -- serialisation -------------------------------------------------------

    def __eq__(self, other):
        return isinstance(other, NestedModel) and self.to_dict() == other.to_dict()

    def to_dict(self) -> dict:
        """JSON-ready description (plain floats and lists)."""
        az, pl, rot = angles_from_frame(self.frame)
        return {
            "nugget": float(self.nugget),
            "structures": [s.to_dict() for s in self.structures],
            "total_sill": self.total_sill,
            "frame": [[float(x) for x in row] for row in self.frame],
            "angles": {"azimuth": float(az), "plunge": float(pl), "rotation": float(rot)},
        }

    @classmethod
    def from_dict(cls, d: dict) -> "NestedModel":
        """Rebuild from :meth:`to_dict` output (``total_sill`` and ``angles`` are derived and ignored)."""
        if not isinstance(d, dict) or "structures" not in d:
            raise InputError("a model needs at least 'nugget' and 'structures' keys.")
        frame = d.get("frame")
        if frame is None and "angles" in d:

            a = d["angles"]
            frame = frame_from_angles(a["azimuth"], a["plunge"], a["rotation"])
        return cls(d.get("nugget", 0.0), [Structure.from_dict(s) for s in d["structures"]], frame)
