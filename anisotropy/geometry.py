"""Angle conventions, frames and rotations, direction fans and projections.

Conventions (see ``design.md``):

* Coordinates are (east, north, up), right-handed, metres.
* A line (an axis) has a **trend** (azimuth, degrees clockwise from north,
  [0, 360)) and a **plunge** (degrees below horizontal, [0, 90]). Its unit
  vector is ``(sin t cos p, cos t cos p, -sin p)``.
* Axes are undirected and are reported in the **lower hemisphere**: the
  vector is flipped so that z < 0; when z == 0, so that x > 0; when also
  x == 0, so that y > 0. Horizontal lines therefore get trends in [0, 180).
  The pair engine uses the same canonical orientation for lag vectors.
* A plane is given by its **dip direction** (azimuth of steepest descent)
  and **dip** [0, 90]; **strike** = dip direction - 90 (right-hand rule).
* The **pitch** of a line in a plane is the angle inside the plane from the
  strike direction to the line, [0, 180), positive towards the dip
  direction.
* The ellipsoid **frame** is the right-handed rotation matrix whose columns
  are the major, semi-major and minor unit vectors. Its three angles are
  given in :func:`frame_from_angles`.

Functions broadcast over leading dimensions wherever that is natural: a
vector argument may be ``(3,)`` or ``(..., 3)``; angle arguments may be
scalars or arrays. Scalar inputs give Python floats back.
"""

from __future__ import annotations

import math

import numpy as np

from anisotropy.errors import InputError, InterpretationError

__all__ = [
    "line_to_vector",
    "vector_to_line",
    "to_lower_hemisphere",
    "plane_to_pole",
    "pole_to_plane",
    "strike_of",
    "pitch_of",
    "line_from_pitch",
    "frame_from_angles",
    "angles_from_frame",
    "frame_from_zxz",
    "zxz_from_frame",
    "rotation_sequences",
    "frame_from_axes",
    "canonical_frame",
    "is_rotation",
    "axis_angle",
    "rotation_vector_jacobian",
    "fibonacci_hemisphere",
    "fan_for_spacing",
    "equal_area",
]

_GOLDEN = (1.0 + math.sqrt(5.0)) / 2.0


#: Step of the central difference in :func:`rotation_vector_jacobian`
#: (truncation error ~1e-12, rounding ~1e-10).
ROTVEC_STEP = 1e-6


def rotation_vector_jacobian(rotvec) -> np.ndarray:
    """Derivatives ``dR / d rotvec_i`` of the rotation matrix of a rotation vector.

    A central difference (step :data:`ROTVEC_STEP`) of SciPy's
    ``Rotation.from_rotvec(...).as_matrix()``: the last link of the chain
    rule of fits parametrised by a rotation vector.

    Parameters
    ----------
    rotvec : array_like (3,)

    Returns
    -------
    ndarray (3, 3, 3)
        ``[i]`` is the derivative of the 3 x 3 matrix along component ``i``.
    """
    from scipy.spatial.transform import Rotation

    steps = ROTVEC_STEP * np.vstack([np.eye(3), -np.eye(3)])
    M = Rotation.from_rotvec(np.asarray(rotvec, float)[None, :] + steps).as_matrix()
    return (M[:3] - M[3:]) / (2.0 * ROTVEC_STEP)


# ---------------------------------------------------------------------------
# helpers
# ---------------------------------------------------------------------------

def _out(a):
    """Return a Python float for 0-d results, the array otherwise."""
    a = np.asarray(a)
    return float(a) if a.ndim == 0 else a


def _as_vectors(v, name="vector") -> np.ndarray:
    v = np.asarray(v, dtype=float)
    if v.ndim == 0 or v.shape[-1] != 3:
        raise InputError(
            f"{name} must have 3 components (east, north, up) in its last dimension; "
            f"got shape {v.shape}."
        )
    if not np.all(np.isfinite(v)):
        raise InputError(f"{name} contains NaN or infinite components; remove or fix them.")
    return v


def _unit(v, name="vector") -> np.ndarray:
    v = _as_vectors(v, name)
    n = np.linalg.norm(v, axis=-1, keepdims=True)
    if np.any(n == 0):
        raise InputError(f"{name} has zero length; a direction needs a non-zero vector.")
    return v / n


def _wrap360(a):
    a = np.mod(a, 360.0)
    return np.where(a >= 360.0, a - 360.0, a)


# ---------------------------------------------------------------------------
# lines
# ---------------------------------------------------------------------------

def line_to_vector(trend, plunge) -> np.ndarray:
    """Unit vector of a line given by trend and plunge.

    Parameters
    ----------
    trend, plunge : float or array_like
        Degrees; trend clockwise from north, plunge positive downwards.
        Broadcast against each other.

    Returns
    -------
    ndarray, shape (..., 3)
        ``(sin t cos p, cos t cos p, -sin p)`` in (east, north, up). The
        vector is returned as given (a negative plunge points up); use
        :func:`to_lower_hemisphere` to report it as an axis.
    """
    t = np.radians(np.asarray(trend, dtype=float))
    p = np.radians(np.asarray(plunge, dtype=float))
    t, p = np.broadcast_arrays(t, p)
    cp = np.cos(p)
    return np.stack([np.sin(t) * cp, np.cos(t) * cp, -np.sin(p)], axis=-1)


def to_lower_hemisphere(v) -> np.ndarray:
    """Orient undirected axes into the lower hemisphere.

    The vector is flipped so that z < 0; if z == 0, so that x > 0; if also
    x == 0, so that y > 0. The comparisons are exact (no tolerance), so the
    result is a deterministic function of the input bits; the pair engine
    uses the same rule for lag vectors.

    Parameters
    ----------
    v : array_like, shape (..., 3)

    Returns
    -------
    ndarray, shape (..., 3)
        Same length as the input, possibly negated.
    """
    v = _as_vectors(v)
    x, y, z = v[..., 0], v[..., 1], v[..., 2]
    flip = (z > 0) | ((z == 0) & ((x < 0) | ((x == 0) & (y < 0))))
    return np.where(flip[..., None], -v, v)


def vector_to_line(v):
    """Trend and plunge of an undirected axis.

    Parameters
    ----------
    v : array_like, shape (..., 3)
        Any non-zero vector; it is normalised and put in the lower
        hemisphere first.

    Returns
    -------
    trend, plunge : float or ndarray
        Trend in [0, 360) (horizontal lines in [0, 180)), plunge in [0, 90].
    """
    u = to_lower_hemisphere(_unit(v))
    # "+ 0.0" turns -0.0 into 0.0 so that a vertical axis always gets trend 0
    x, y, z = u[..., 0] + 0.0, u[..., 1] + 0.0, u[..., 2]
    trend = _wrap360(np.degrees(np.arctan2(x, y)))
    # a horizontal axis with x a rounding error above 0 can round to 180
    trend = np.where((z == 0) & (trend >= 180.0), trend - 180.0, trend)
    plunge = np.degrees(np.arctan2(-z, np.hypot(x, y))) + 0.0  # no -0.0
    return _out(trend), _out(plunge)


# ---------------------------------------------------------------------------
# planes
# ---------------------------------------------------------------------------

def strike_of(dip_direction):
    """Strike by the right-hand rule: dip direction - 90, in [0, 360)."""
    return _out(_wrap360(np.asarray(dip_direction, dtype=float) - 90.0))


def plane_to_pole(dip_direction, dip) -> np.ndarray:
    """Lower-hemisphere pole (unit normal) of a plane.

    The pole of a plane dipping ``dip`` towards ``dip_direction`` has trend
    ``dip_direction + 180`` and plunge ``90 - dip``.

    Parameters
    ----------
    dip_direction, dip : float or array_like
        Degrees.

    Returns
    -------
    ndarray, shape (..., 3)
    """
    dd = np.asarray(dip_direction, dtype=float)
    dip = np.asarray(dip, dtype=float)
    return to_lower_hemisphere(line_to_vector(dd + 180.0, 90.0 - dip))


def pole_to_plane(v):
    """Dip direction and dip of the plane whose pole (normal) is ``v``.

    Parameters
    ----------
    v : array_like, shape (..., 3)
        Normal of the plane, either sense.

    Returns
    -------
    dip_direction, dip : float or ndarray
        Dip direction in [0, 360), dip in [0, 90]. For a vertical plane
        (horizontal pole) the dip direction is the one of the two opposite
        choices that lies in [180, 360) (the canonical pole trend + 180); for
        a horizontal plane the dip direction is meaningless and comes from
        the pole's (arbitrary) trend.
    """
    trend, plunge = vector_to_line(v)
    dd = _wrap360(np.asarray(trend) + 180.0)
    return _out(dd), _out(90.0 - np.asarray(plunge))


def _plane_basis(dip_direction, dip):
    """Unit strike and dip vectors of a plane (broadcast)."""
    dd = np.asarray(dip_direction, dtype=float)
    dip = np.asarray(dip, dtype=float)
    s = line_to_vector(dd - 90.0, np.zeros_like(dd))
    d = line_to_vector(dd, dip)
    s, d = np.broadcast_arrays(s, d)
    return s, d


def pitch_of(line_vector, dip_direction, dip, *, max_off_plane=None):
    """Pitch (rake) of a line inside a plane.

    The line is projected onto the plane; the pitch is the angle from the
    strike direction (right-hand rule) to the projected line, measured
    inside the plane towards the dip direction, in [0, 180).

    Parameters
    ----------
    line_vector : array_like, shape (..., 3)
        The line (either sense).
    dip_direction, dip : float or array_like
        The plane, degrees.
    max_off_plane : float, optional
        If given, raise :class:`~anisotropy.errors.InterpretationError` when
        the line lies more than this many degrees out of the plane.

    Returns
    -------
    float or ndarray
        Pitch in degrees, [0, 180).
    """
    u = _unit(line_vector, "line vector")
    s, d = _plane_basis(dip_direction, dip)
    a = np.sum(u * s, axis=-1)
    b = np.sum(u * d, axis=-1)
    if max_off_plane is not None:
        n = np.cross(s, d)
        off = np.degrees(np.arcsin(np.clip(np.abs(np.sum(u * n, axis=-1)), 0.0, 1.0)))
        if np.any(off > max_off_plane):
            raise InterpretationError(
                f"the line lies up to {float(np.max(off)):.1f} degrees out of the plane "
                f"(allowed {max_off_plane} degrees); a pitch is only defined for a line "
                "inside the plane. Check the plane's dip direction/dip and the line."
            )
    if np.any(np.hypot(a, b) < 1e-12):
        raise InterpretationError(
            "the line is perpendicular to the plane, so it has no pitch in it; "
            "check that the line and the plane belong together."
        )
    p = np.mod(np.degrees(np.arctan2(b, a)), 180.0)
    p = np.where(p >= 180.0, p - 180.0, p)
    return _out(p)


def line_from_pitch(dip_direction, dip, pitch) -> np.ndarray:
    """Lower-hemisphere unit vector of the line with a given pitch in a plane.

    ``cos(pitch) * strike_vector + sin(pitch) * dip_vector``, put in the
    lower hemisphere.

    Parameters
    ----------
    dip_direction, dip, pitch : float or array_like
        Degrees.

    Returns
    -------
    ndarray, shape (..., 3)
    """
    r = np.radians(np.asarray(pitch, dtype=float))
    s, d = _plane_basis(dip_direction, dip)
    v = np.cos(r)[..., None] * s + np.sin(r)[..., None] * d
    return to_lower_hemisphere(v)


# ---------------------------------------------------------------------------
# frames
# ---------------------------------------------------------------------------

def frame_from_angles(azimuth, plunge, rotation) -> np.ndarray:
    """Ellipsoid frame from three angles.

    With ``a`` = azimuth (trend) of the major axis, ``p`` = its plunge and
    ``r`` = the rotation of the semi-major axis about the major axis, the
    columns of ``R`` are::

        major = ( sin a cos p,  cos a cos p, -sin p)
        s0    = ( cos a,       -sin a,        0    )   # horizontal, 90 deg
                                                       # clockwise of the major's trend
        m0    = major x s0 = (-sin a sin p, -cos a sin p, -cos p)
        semi  =  cos r * s0 + sin r * m0
        minor = -sin r * s0 + cos r * m0  ( = major x semi )

    So ``r = 0`` keeps the semi-major axis horizontal (trend a + 90), and a
    positive ``r`` turns it downwards (a right-handed rotation by ``r``
    about the major axis). Equivalently::

        R = Rz(-a) @ Rx(-p) @ Ry(r) @ R0,   R0 = [[0, 1, 0], [1, 0, 0], [0, 0, -1]]

    where ``R0`` maps (major, semi-major, minor) to (north, east, down) and
    ``Rx``, ``Ry``, ``Rz`` are right-handed (counter-clockwise seen from the
    positive axis) rotations about the east (x), north (y) and up (z) axes;
    in SciPy terms ``Rotation.from_euler("ZXY", [-a, -p, r], degrees=True)``
    composed with ``R0``.

    Parameters
    ----------
    azimuth, plunge, rotation : float or array_like
        Degrees.

    Returns
    -------
    ndarray, shape (..., 3, 3)
        Right-handed rotation matrix; columns major, semi-major, minor.
    """
    a = np.radians(np.asarray(azimuth, dtype=float))
    p = np.radians(np.asarray(plunge, dtype=float))
    r = np.radians(np.asarray(rotation, dtype=float))
    a, p, r = np.broadcast_arrays(a, p, r)
    sa, ca, sp, cp, sr, cr = np.sin(a), np.cos(a), np.sin(p), np.cos(p), np.sin(r), np.cos(r)
    major = np.stack([sa * cp, ca * cp, -sp], axis=-1)
    s0 = np.stack([ca, -sa, np.zeros_like(a)], axis=-1)
    m0 = np.stack([-sa * sp, -ca * sp, -cp], axis=-1)
    semi = cr[..., None] * s0 + sr[..., None] * m0
    minor = -sr[..., None] * s0 + cr[..., None] * m0
    return np.stack([major, semi, minor], axis=-1)


def is_rotation(R, tol: float = 1e-6) -> bool:
    """True when ``R`` (3x3) is orthonormal with determinant +1 within ``tol``."""
    R = np.asarray(R, dtype=float)
    if R.shape[-2:] != (3, 3) or not np.all(np.isfinite(R)):
        return False
    eye = np.eye(3)
    ortho = np.max(np.abs(np.swapaxes(R, -1, -2) @ R - eye)) <= tol
    return bool(ortho and np.all(np.linalg.det(R) > 0))


def angles_from_frame(R):
    """The three angles of a frame (inverse of :func:`frame_from_angles`).

    The major axis is first put in the lower hemisphere. The rotation is
    reported in (-90, 90]: the axes are undirected, so rotations differing
    by 180 degrees describe the same ellipsoid. When the major axis is
    vertical only ``azimuth + rotation`` is defined; the rotation is then
    reported as 0 and the azimuth is the semi-major trend - 90.

    Parameters
    ----------
    R : array_like, shape (..., 3, 3)
        Rotation matrix with columns major, semi-major, minor (the column
        signs do not matter).

    Returns
    -------
    azimuth, plunge, rotation : float or ndarray
        Degrees: azimuth in [0, 360) (horizontal major in [0, 180)),
        plunge in [0, 90], rotation in (-90, 90].
    """
    R = np.asarray(R, dtype=float)
    if R.shape[-2:] != (3, 3):
        raise InputError(f"frame must be 3x3; got shape {R.shape}.")
    major = to_lower_hemisphere(R[..., :, 0])
    semi = R[..., :, 1]
    az, pl = vector_to_line(major)
    az = np.asarray(az, dtype=float)
    pl = np.asarray(pl, dtype=float)
    vertical = np.hypot(major[..., 0], major[..., 1]) < 1e-12
    # with a vertical major, take the azimuth from the semi-major axis
    semi_h = to_lower_hemisphere(semi * np.array([1.0, 1.0, 0.0]))
    semi_tr = np.degrees(np.arctan2(semi_h[..., 0], semi_h[..., 1]))
    az = np.where(vertical, _wrap360(semi_tr - 90.0), az)
    ar = np.radians(az)
    pr = np.radians(pl)
    sa, ca, sp, cp = np.sin(ar), np.cos(ar), np.sin(pr), np.cos(pr)
    s0 = np.stack([ca, -sa, np.zeros_like(ar)], axis=-1)
    m0 = np.stack([-sa * sp, -ca * sp, -cp], axis=-1)
    rot = np.degrees(np.arctan2(np.sum(semi * m0, axis=-1), np.sum(semi * s0, axis=-1)))
    # fold to (-90, 90]
    rot = np.mod(rot + 90.0, 180.0) - 90.0
    rot = np.where(rot <= -90.0, rot + 180.0, rot)
    rot = np.where(vertical, 0.0, rot)
    return _out(az), _out(pl), _out(rot)


# ---------------------------------------------------------------------------
# a second rotation-angle sequence: intrinsic z-x'-z'' (proper Euler angles)
# ---------------------------------------------------------------------------

SEQUENCE_AZIMUTH_WORDS = (
    "sequence 1 (azimuth, plunge, rotation): start with the major axis pointing north, the "
    "semi-major axis east and the minor axis down; turn the triad about the vertical by the "
    "azimuth, clockwise seen from above (the major axis's trend); tilt the major axis down "
    "by the plunge, about the horizontal semi-major axis; then turn the triad about the "
    "major axis by the rotation, positive turning the semi-major axis downwards "
    "(right-handed about the major axis as it points). Matrix: Rz(-azimuth) Rx(-plunge) "
    "Ry(rotation) R0, R0 = [[0,1,0],[1,0,0],[0,0,-1]]; in SciPy "
    "Rotation.from_euler('ZXY', [-azimuth, -plunge, rotation], degrees=True).as_matrix() @ R0"
)

SEQUENCE_ZXZ_WORDS = (
    "sequence 2 (intrinsic z-x'-z'', angles alpha, beta, gamma): start with the major, "
    "semi-major and minor axes along east, north and up; turn the triad about its third axis "
    "(up) by alpha; then about its turned first axis by beta; then about its twice-turned "
    "third axis (now the minor axis) by gamma; each turn counter-clockwise seen from the "
    "positive end of the axis looking back at the origin (right-hand rule), so a positive "
    "alpha is anticlockwise on the map. Matrix: Rz(alpha) Rx(beta) Rz(gamma); in SciPy "
    "Rotation.from_euler('ZXZ', [alpha, beta, gamma], degrees=True).as_matrix(). With the "
    "minor axis pointing down, as written here, alpha = -(dip direction) and "
    "beta = 180 - dip"
)


def _rz(t):
    c, s = np.cos(t), np.sin(t)
    z, o = np.zeros_like(t), np.ones_like(t)
    return np.stack([np.stack([c, -s, z], -1), np.stack([s, c, z], -1),
                     np.stack([z, z, o], -1)], -2)


def _rx(t):
    c, s = np.cos(t), np.sin(t)
    z, o = np.zeros_like(t), np.ones_like(t)
    return np.stack([np.stack([o, z, z], -1), np.stack([z, c, -s], -1),
                     np.stack([z, s, c], -1)], -2)


def frame_from_zxz(alpha, beta, gamma) -> np.ndarray:
    """Frame from intrinsic z-x'-z'' angles (sequence 2 of the model file).

    ``R = Rz(alpha) @ Rx(beta) @ Rz(gamma)`` with ``Rx``, ``Rz`` right-handed
    (counter-clockwise seen from the positive axis) rotations about east (x)
    and up (z): the east/north/up triad is turned about up by ``alpha``,
    about the turned east axis by ``beta`` and about the twice-turned up axis
    by ``gamma``; the turned triad is (major, semi-major, minor).

    Parameters
    ----------
    alpha, beta, gamma : float or array_like
        Degrees.

    Returns
    -------
    ndarray, shape (..., 3, 3)
        Columns major, semi-major, minor.
    """
    a, b, c = np.broadcast_arrays(*(np.radians(np.asarray(v, dtype=float))
                                    for v in (alpha, beta, gamma)))
    return _rz(a) @ _rx(b) @ _rz(c)


def zxz_from_frame(R):
    """Intrinsic z-x'-z'' angles of a frame (inverse of :func:`frame_from_zxz`).

    The frame is used exactly as given (column signs matter). ``beta`` is
    in [0, 180]; ``alpha`` and ``gamma`` in [0, 360). When ``beta`` is 0 or
    180 (minor axis vertical) only ``alpha +- gamma`` is defined; ``gamma``
    is then reported as 0.

    Parameters
    ----------
    R : array_like, shape (3, 3)

    Returns
    -------
    alpha, beta, gamma : float
        Degrees.
    """
    R = np.asarray(R, dtype=float)
    if R.shape != (3, 3) or not is_rotation(R):
        raise InputError("the frame must be a 3x3 right-handed rotation matrix.")
    beta = math.degrees(math.acos(max(-1.0, min(1.0, R[2, 2]))))
    if math.hypot(R[0, 2], R[1, 2]) < 1e-12:
        gamma = 0.0
        alpha = math.degrees(math.atan2(R[1, 0], R[0, 0]))
    else:
        alpha = math.degrees(math.atan2(R[0, 2], -R[1, 2]))
        gamma = math.degrees(math.atan2(R[2, 0], R[2, 1]))
    return float(_wrap360(alpha) + 0.0), float(beta), float(_wrap360(gamma) + 0.0)


def rotation_sequences(R) -> dict:
    """Both documented rotation-angle sequences of a frame, with their definitions.

    Sequence 1 is :func:`frame_from_angles` (azimuth and plunge of the major
    axis, then the rotation about it); sequence 2 is :func:`frame_from_zxz`.
    Sequence 1 rebuilds the frame up to the signs of its columns (axes are
    undirected); sequence 2 rebuilds the matrix exactly as given.

    Parameters
    ----------
    R : array_like, shape (3, 3)

    Returns
    -------
    dict
        ``{"azimuth_plunge_rotation": {azimuth, plunge, rotation, definition},
        "zxz": {alpha, beta, gamma, definition}}``.
    """
    a, p, r = angles_from_frame(R)
    al, be, ga = zxz_from_frame(R)
    return {
        "azimuth_plunge_rotation": {"azimuth": float(a), "plunge": float(p),
                                    "rotation": float(r),
                                    "definition": SEQUENCE_AZIMUTH_WORDS},
        "zxz": {"alpha": al, "beta": be, "gamma": ga, "definition": SEQUENCE_ZXZ_WORDS},
    }


def canonical_frame(R) -> np.ndarray:
    """Put a frame's axes in the lower hemisphere, keeping it right-handed.

    The major and minor axes are oriented into the lower hemisphere with
    :func:`to_lower_hemisphere`; the semi-major axis is then
    ``minor x major``, so the determinant stays +1. The semi-major axis
    may therefore point upwards (it is the one axis whose sign is given
    up). This matches what :func:`frame_from_angles` returns for plunge in
    [0, 90] and rotation in (-90, 90).

    Parameters
    ----------
    R : array_like, shape (..., 3, 3)

    Returns
    -------
    ndarray, shape (..., 3, 3)
    """
    R = np.asarray(R, dtype=float)
    major = to_lower_hemisphere(R[..., :, 0])
    minor = to_lower_hemisphere(R[..., :, 2])
    semi = np.cross(minor, major)
    return np.stack([major, semi, minor], axis=-1)


def frame_from_axes(major, minor=None, semi=None) -> np.ndarray:
    """Right-handed, orthonormal frame from one or two axes.

    The major axis is kept as given (normalised). If ``minor`` is given it
    is made orthogonal to the major axis (Gram-Schmidt) and the semi-major
    axis is ``minor x major``. Otherwise, if ``semi`` is given, it is made
    orthogonal to the major axis and the minor axis is ``major x semi``.
    With neither, the semi-major axis is horizontal (rotation 0 in
    :func:`frame_from_angles`). When both are given, ``semi`` must agree
    with the one derived from ``major`` and ``minor`` within 1 degree.
    The result is passed through :func:`canonical_frame`.

    Parameters
    ----------
    major : array_like, shape (3,)
    minor, semi : array_like, shape (3,), optional

    Returns
    -------
    ndarray, shape (3, 3)

    Raises
    ------
    InterpretationError
        If the axes are (nearly) parallel or inconsistent.
    """
    e1 = _unit(major, "major axis")
    if e1.shape != (3,):
        raise InputError("frame_from_axes takes single axes of shape (3,).")
    if minor is not None:
        m = _unit(minor, "minor axis")
        m = m - np.dot(m, e1) * e1
        if np.linalg.norm(m) < 1e-6:
            raise InterpretationError("the minor axis is parallel to the major axis; "
                                      "give two different directions.")
        e3 = m / np.linalg.norm(m)
        e2 = np.cross(e3, e1)
        if semi is not None:
            ang = float(axis_angle(semi, e2))
            if ang > 1.0:
                raise InterpretationError(
                    f"the semi-major axis given is {ang:.1f} degrees from the one implied by the "
                    "major and minor axes; the three axes must be mutually perpendicular."
                )
    elif semi is not None:
        s = _unit(semi, "semi-major axis")
        s = s - np.dot(s, e1) * e1
        if np.linalg.norm(s) < 1e-6:
            raise InterpretationError("the semi-major axis is parallel to the major axis; "
                                      "give two different directions.")
        e2 = s / np.linalg.norm(s)
        e3 = np.cross(e1, e2)
    else:
        az, pl = vector_to_line(e1)
        R = frame_from_angles(az, pl, 0.0)
        return canonical_frame(R)
    return canonical_frame(np.stack([e1, e2, e3], axis=-1))


# ---------------------------------------------------------------------------
# angles between axes, direction fans, projection
# ---------------------------------------------------------------------------

def axis_angle(u, v):
    """Angle between undirected axes, degrees in [0, 90].

    Computed as ``atan2(|u x v|, |u . v|)``, accurate for small angles.
    Broadcasts over leading dimensions.
    """
    u = _as_vectors(u, "first axis")
    v = _as_vectors(v, "second axis")
    c = np.abs(np.sum(u * v, axis=-1))
    s = np.linalg.norm(np.cross(u, v), axis=-1)
    if np.any((c == 0) & (s == 0)):
        raise InputError("axis_angle got a zero-length vector.")
    return _out(np.degrees(np.arctan2(s, c)))


def fibonacci_hemisphere(n: int) -> np.ndarray:
    """Nearly uniform lower-hemisphere directions from a Fibonacci lattice.

    The lattice of Gonzalez (2010, Math. Geosci. 42) restricted to the
    lower hemisphere: point ``i = 0 .. n-1`` has ``z_i = -(i + 1/2) / n``
    (equal-area bands, since area on the sphere is uniform in z) and
    longitude ``2 pi i / phi`` (phi the golden ratio).

    Parameters
    ----------
    n : int
        Number of directions, >= 1.

    Returns
    -------
    ndarray, shape (n, 3)
        Unit vectors with z < 0.

    Notes
    -----
    As directed vectors the neighbours are evenly spaced. As undirected
    axes, a few near-horizontal points sit close to the antipode of another
    near-horizontal point (the hemisphere's rim wraps round), so the
    closest pair of axes can be about 0.6 times the typical spacing there.
    """
    n = int(n)
    if n < 1:
        raise InputError(f"the direction fan needs at least one direction; got n={n}.")
    i = np.arange(n, dtype=float)
    z = -(i + 0.5) / n
    lon = 2.0 * np.pi * np.mod(i / _GOLDEN, 1.0)
    rho = np.sqrt(np.maximum(0.0, 1.0 - z * z))
    return np.stack([rho * np.sin(lon), rho * np.cos(lon), z], axis=-1)


def fan_for_spacing(deg: float) -> np.ndarray:
    """A Fibonacci hemisphere fan with neighbours about ``deg`` degrees apart.

    The lower hemisphere (2 pi steradians) is shared out as a hexagonal
    lattice of spacing ``d`` (each point covering ``sqrt(3)/2 d^2``), so
    ``n = round(2 pi / (sqrt(3)/2 d^2))``.

    Parameters
    ----------
    deg : float
        Wanted spacing between neighbouring directions, degrees, in (0, 90].

    Returns
    -------
    ndarray, shape (n, 3)
    """
    deg = float(deg)
    if not (0.0 < deg <= 90.0) or not math.isfinite(deg):
        raise InputError(f"direction spacing must be in (0, 90] degrees; got {deg}.")
    d = math.radians(deg)
    n = max(1, int(round(2.0 * math.pi / (math.sqrt(3.0) / 2.0 * d * d))))
    return fibonacci_hemisphere(n)


def equal_area(v):
    """Lower-hemisphere Lambert (Schmidt) equal-area projection.

    A lower-hemisphere unit vector ``(x, y, z)`` maps to
    ``(x, y) / sqrt(1 - z)``: the radius is ``sqrt(2) sin(theta / 2)`` with
    ``theta`` the angle from the downward vertical, so horizontal lines
    fall on the unit circle and the vertical at the centre; east is to the
    right and north up.

    Parameters
    ----------
    v : array_like, shape (..., 3)
        Axes (either sense; put in the lower hemisphere first).

    Returns
    -------
    x, y : float or ndarray
    """
    u = to_lower_hemisphere(_unit(v))
    f = 1.0 / np.sqrt(1.0 - u[..., 2])
    return _out(u[..., 0] * f), _out(u[..., 1] * f)
