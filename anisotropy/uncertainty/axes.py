"""Orientation statistics of undirected axes: mean axis, cones, frame matching, trend and plunge.

The mean axis is the principal eigenvector of the orientation tensor
``T = sum u u^T / n`` (Scheidegger 1965; Fisher, Lewis & Embleton 1987,
ch. 3); a cone is the confidence quantile of the replicate-to-reference
angles; replicate frames are matched to the reference by the permutation of
their axes that maximises the summed absolute cosines (Hungarian assignment,
:func:`scipy.optimize.linear_sum_assignment`).
"""

from __future__ import annotations

import math

import numpy as np
from scipy.optimize import linear_sum_assignment

from anisotropy.errors import InputError, InsufficientDataError
from anisotropy.geometry import axis_angle, to_lower_hemisphere, vector_to_line
from anisotropy.uncertainty.intervals import percentile_interval


def _unit(v):
    v = np.asarray(v, dtype=float)
    n = np.linalg.norm(v, axis=-1, keepdims=True)
    return v / np.where(n > 0, n, 1.0)


def _axis_angle(u, v):
    """Angle in degrees [0, 90] between undirected axes (broadcasts); geometry.axis_angle."""
    return np.asarray(axis_angle(u, v), dtype=float)


def _lower(v):
    """Lower-hemisphere orientation of axis vectors (geometry.to_lower_hemisphere)."""
    return np.asarray(to_lower_hemisphere(np.asarray(v, dtype=float)), dtype=float)


def _trend_plunge(v):
    """Trend and plunge (degrees) of undirected axes (geometry.vector_to_line)."""
    t, p = vector_to_line(v)
    return np.asarray(t, dtype=float), np.asarray(p, dtype=float)


def orientation_tensor(axes):
    """Orientation tensor ``T = sum u u^T / n`` of unit axes (Scheidegger 1965).

    Parameters
    ----------
    axes : array_like, shape (n, 3)

    Returns
    -------
    ndarray, shape (3, 3)
        Symmetric, trace 1; insensitive to the sign of each axis.
    """
    u = _unit(np.asarray(axes, dtype=float).reshape(-1, 3))
    u = u[np.all(np.isfinite(u), axis=1)]
    if len(u) == 0:
        raise InsufficientDataError("no replicate axes to summarise")
    return u.T @ u / len(u)


def mean_axis(axes):
    """Mean of undirected axes: the principal eigenvector of the orientation tensor.

    Parameters
    ----------
    axes : array_like, shape (n, 3)

    Returns
    -------
    axis : ndarray, shape (3,)
        Lower-hemisphere unit vector.
    eigenvalues : ndarray, shape (3,)
        Largest first; a largest eigenvalue near 1 means tightly clustered
        axes (Fisher, Lewis & Embleton 1987, ch. 3.4).
    """
    w, v = np.linalg.eigh(orientation_tensor(axes))
    order = np.argsort(w)[::-1]
    return _lower(v[:, order[0]]), w[order]


def axis_cone(axes, reference, confidence=0.9):
    """Mean axis and the cone around the reported axis holding a fraction of the axes.

    Parameters
    ----------
    axes : array_like, shape (n, 3)
        Replicate axes (undirected).
    reference : array_like, shape (3,)
        The reported axis (the main fit); the cone is centred on it.
    confidence : float
        Fraction of replicate axes the cone must hold.

    Returns
    -------
    mean : ndarray, shape (3,)
        Orientation-tensor mean of the replicate axes (see :func:`mean_axis`).
    cone_deg : float
        The ``confidence`` quantile of the angles between the replicate axes
        and ``reference`` (degrees, in [0, 90]).
    """
    conf = float(confidence)
    if not 0.0 < conf < 1.0:
        raise InputError(f"confidence must lie strictly between 0 and 1 (got {conf})")
    a = np.asarray(axes, dtype=float).reshape(-1, 3)
    a = a[np.all(np.isfinite(a), axis=1)]
    m, _ = mean_axis(a)
    ang = _axis_angle(a, np.asarray(reference, dtype=float)[None, :])
    return m, float(np.quantile(ang, conf))


def match_frame(reference, frame):
    """Match a replicate frame's axes to the reference axes.

    Parameters
    ----------
    reference, frame : array_like, shape (3, 3)
        Columns are the major, semi-major and minor unit vectors.

    Returns
    -------
    matched : ndarray, shape (3, 3)
        ``frame``'s columns reordered so that column i is the replicate axis
        assigned to reference axis i, each signed to point the same way as
        the reference axis (positive dot product).
    perm : ndarray of int, shape (3,)
        ``perm[i]`` is the replicate column assigned to reference axis i; the
        assignment maximises the summed ``|cos|`` (Hungarian algorithm on
        ``|R_ref^T R|``).
    """
    ref = np.asarray(reference, dtype=float)
    fr = np.asarray(frame, dtype=float)
    score = np.abs(ref.T @ fr)
    rows, cols = linear_sum_assignment(score, maximize=True)
    perm = np.empty(3, dtype=int)
    perm[rows] = cols
    matched = fr[:, perm].copy()
    sign = np.sign(np.sum(matched * ref, axis=0))
    sign[sign == 0] = 1.0
    return matched * sign[None, :], perm


def match_frames(reference, frames):
    """:func:`match_frame` for a stack of frames: ``(matched (n,3,3), perms (n,3))``."""
    frames = np.asarray(frames, dtype=float).reshape(-1, 3, 3)
    out = np.empty_like(frames)
    perms = np.empty((len(frames), 3), dtype=int)
    for k, f in enumerate(frames):
        out[k], perms[k] = match_frame(reference, f)
    return out, perms


def cone_extents(reference, cone_deg):
    """Trend and plunge half-widths of every axis within ``cone_deg`` of a reference axis.

    The axes within angle ``c`` of an axis of plunge ``p`` fill a small
    circle on the sphere; its plunges span ``[p - c, p + c]`` (clipped to
    [0, 90]) and, while ``p + c < 90``, its trends span the reference trend
    plus or minus ``asin(sin c / cos p)`` (the great circle through the
    vertical tangent to the small circle; spherical trigonometry, e.g.
    Fisher, Lewis & Embleton 1987, sec. 2.2).

    Parameters
    ----------
    reference : array_like, shape (3,)
    cone_deg : float

    Returns
    -------
    trend_half : float or None
        Degrees; None where the cone reaches the vertical (every trend).
    plunge : [lo, hi]
    """
    ref_l = _lower(_unit(np.asarray(reference, dtype=float)))
    _, p = _trend_plunge(ref_l)
    p, c = float(p), float(cone_deg)
    plunge = [max(0.0, p - c), min(90.0, p + c)]
    if p + c >= 90.0:
        return None, plunge
    half = math.degrees(math.asin(min(1.0, math.sin(math.radians(c))
                                      / math.cos(math.radians(p)))))
    return half, plunge


def trend_plunge_intervals(axes, reference, confidence=0.9, *, cone_deg=None, reach=False):
    """Trend and plunge intervals of replicate axes around a reported axis.

    Each replicate axis is first signed to point the same way as the
    reported axis, so a near-horizontal axis that tips slightly upward keeps
    a trend close to the reported trend instead of jumping by 180 degrees.
    Trends are measured as signed differences from the reported trend in
    (-180, 180], so an interval may wrap through north: it is then returned
    with ``lo > hi`` (read it clockwise from ``lo`` to ``hi``, e.g. [350, 10]).
    Plunges are of the lower-hemisphere axes, in [0, 90].

    The trend of a (near-)vertical axis is undefined: when the reported
    plunge plus the cone radius reaches 90 degrees the trend interval is
    returned as None.

    Parameters
    ----------
    axes : array_like, shape (n, 3)
    reference : array_like, shape (3,)
    confidence : float
    cone_deg : float, optional
        Cone radius, computed with :func:`axis_cone` when not given.
    reach : bool
        The intervals also hold every axis inside the cone
        (:func:`cone_extents`): for a cone widened beyond the replicates'
        spread, so that the intervals say no less than the cone.

    Returns
    -------
    trend : [lo, hi] or None
    plunge : [lo, hi]
    note : str or None
        Why the trend interval is missing, when it is.
    """
    a = np.asarray(axes, dtype=float).reshape(-1, 3)
    a = _unit(a[np.all(np.isfinite(a), axis=1)])
    ref = _unit(np.asarray(reference, dtype=float))
    ref_l = _lower(ref)
    if cone_deg is None:
        _, cone_deg = axis_cone(a, ref, confidence)
    s = np.sign(a @ ref_l)
    s[s == 0] = 1.0
    a = a * s[:, None]
    _, ref_plunge = _trend_plunge(ref_l)
    _, plunges = _trend_plunge(a)
    plo, phi = percentile_interval(plunges, confidence)
    half, (clo, chi) = cone_extents(ref, cone_deg) if reach else (0.0, (plo, phi))
    plo, phi = min(plo, clo), max(phi, chi)
    if ref_plunge + cone_deg >= 90.0:
        note = (f"trend undefined: the axis plunges {ref_plunge:.0f} deg and its "
                f"{cone_deg:.0f} deg cone reaches the vertical")
        return None, [float(plo), float(phi)], note
    ref_trend = math.degrees(math.atan2(ref_l[0], ref_l[1])) % 360.0
    trends = np.degrees(np.arctan2(a[:, 0], a[:, 1]))
    diff = (trends - ref_trend + 180.0) % 360.0 - 180.0
    dlo, dhi = percentile_interval(diff, confidence)
    dlo, dhi = min(dlo, -half), max(dhi, half)
    return [float((ref_trend + dlo) % 360.0), float((ref_trend + dhi) % 360.0)], \
        [float(plo), float(phi)], None
