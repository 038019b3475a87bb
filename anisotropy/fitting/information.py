"""How sharply the likelihood fixes the frame: cones from its observed information.

At the maximum of the nearest-neighbour likelihood the observed information
``H`` (the Hessian of the negative log-likelihood) gives the large-sample
covariance of the estimates, ``H^-1`` (the Wald approximation; Pawitan 2001,
*In All Likelihood*, ch. 9).  Its block for the frame's rotation vector is
the covariance of the frame with the ranges and sill shares estimated too
(the profile information).  Rotation vectors drawn from that normal
distribution turn each axis of the frame; the angle within which a share
``confidence`` of the turned axes falls is the axis's cone.  (No range
intervals are taken from it: their Wald form under-covered,
``benchmarks/RESULTS.md``, *Range intervals*.)  Its block at the share
logits, carried through the shares' softmax (the delta method, a
first-order expansion; the reference to Pawitan 2001 for it is recalled
from memory, and the tests check the derivative against central
differences), gives Wald intervals of the nugget and sill shares on the
logit scale.  A range beyond the variogram fit's range limit, along which
the likelihood is flat, is held and the rest conditioned on it.

Here ``H`` is the central difference of the compiled analytic gradient
(:func:`anisotropy.fitting.likelihood.vecchia_negloglik_grad`), one pair of
gradient calls per parameter.  Where ``H`` is not positive definite (a flat
or saddle direction, a share at its bound) no cone is given.

These cones speak for the likelihood's own approximation only: its
conditioning sets and subsample are fixed, and a rival frame elsewhere on
the likelihood surface is not seen (that is :mod:`anisotropy.fitting.frames`'
job).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.spatial.transform import Rotation

from anisotropy.constants import AXES
from anisotropy.fitting.likelihood import vecchia_negloglik_grad

__all__ = ["InformationCones", "ReportedInformation", "observed_information",
           "information_cones", "share_logit_sd", "axis_cones", "drawn_frames"]

#: Central-difference step of the gradient (radians of rotation, log ranges,
#: share logits).
STEP = 1e-4
#: Rotation vectors drawn from the Wald distribution to measure the cones.
DRAWS = 4000


@dataclass(frozen=True)
class InformationCones:
    """Cones of the frame's axes from the likelihood's observed information.

    Attributes
    ----------
    cones : dict or None
        Half-angle (degrees) per axis of the frame's columns (major,
        semi-major, minor); None where the information is not positive
        definite.
    confidence : float
    rotation_sd : ndarray (3,) or None
        Standard deviations (degrees) of the rotation vector's components.
    note : str
        Why no cone is given, or empty.
    frames : ndarray (draws, 3, 3) or None
        The frames drawn from the Wald distribution (columns as the fit's),
        for trend and plunge intervals; not in :meth:`to_dict`.
    logit_share_sd : ndarray (K + 1,) or None
        Standard deviations of the logits of the nugget share and of each
        structure's share of the sill (:func:`share_logit_sd`).
    """

    cones: dict | None
    confidence: float
    rotation_sd: np.ndarray | None = None
    note: str = ""
    frames: np.ndarray | None = None
    logit_share_sd: np.ndarray | None = None

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {"cones_deg": None if self.cones is None else
                {k: float(v) for k, v in self.cones.items()},
                "confidence": float(self.confidence),
                "rotation_sd_deg": None if self.rotation_sd is None else
                [float(x) for x in self.rotation_sd], "note": self.note,
                "logit_share_sd": None if self.logit_share_sd is None else
                np.asarray(self.logit_share_sd, float).tolist()}


@dataclass(frozen=True)
class ReportedInformation:
    """The likelihood's information in the reported model's terms.

    Attributes
    ----------
    cones : dict
        Cone half-angle (degrees) per reported axis name.
    axes : ndarray (draws, 3, 3) or None
        Frames drawn from the Wald distribution, columns matched to the
        reported axes (trend and plunge intervals are read from them).
    logit_share_sd : dict or None
        Standard deviations of the logits of the shares of the total sill:
        ``"nugget"``, ``"sill0"``, ``"sill1"``, ...; None where the reported
        nugget and sills are not the likelihood's shares.
    likelihood_logit_share_sd : dict or None
        The same for the likelihood's own shares (named as above, in the
        likelihood's structures), given whether or not they are reported:
        where the fit holds the down-hole nugget, the likelihood's nugget is
        a second estimate, and this is its spread.
    """

    cones: dict
    axes: np.ndarray | None = None
    logit_share_sd: dict | None = None
    likelihood_logit_share_sd: dict | None = None


def observed_information(p, args, step=STEP):
    """Symmetrised central-difference Jacobian of the analytic gradient at ``p``.

    Parameters
    ----------
    p : ndarray
        Parameter vector of :func:`~anisotropy.fitting.likelihood.vecchia_negloglik`.
    args : tuple
        ``(Y, y, nbr, kinds)`` of the same function.
    step : float

    Returns
    -------
    ndarray (len(p), len(p))
    """
    p = np.asarray(p, float)
    H = np.empty((len(p), len(p)))
    for j in range(len(p)):
        e = np.zeros_like(p)
        e[j] = step
        H[:, j] = (vecchia_negloglik_grad(p + e, *args)[1]
                   - vecchia_negloglik_grad(p - e, *args)[1]) / (2.0 * step)
    return 0.5 * (H + H.T)


def information_cones(fit, setup, confidence=0.9, seed=0,
                      range_limit=None) -> InformationCones:
    """Cones of ``fit``'s axes from the observed information at its maximum.

    Parameters
    ----------
    fit : anisotropy.fitting.likelihood.LikelihoodFit
        A converged likelihood search (its parameter vector and kinds).
    setup : anisotropy.fitting.likelihood.VecchiaSetup
        The conditioning setup it was searched on.
    confidence : float
    seed : int
        Seed of the rotation draws.
    range_limit : float, optional
        The longest range the variogram fit allows: the fit's ranges beyond
        it are held (:func:`_held`). None: none held.

    Returns
    -------
    InformationCones
    """
    p = fit.parameters()
    args = (setup.coords, setup.values, setup.neighbours, tuple(fit.kinds))
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        H = observed_information(p, args)
    if not np.all(np.isfinite(H)):
        return InformationCones(None, confidence, note="the information is not finite")
    C = _covariance_given_held(H, _held(fit, len(p), range_limit))
    if C is None:
        return InformationCones(None, confidence, note=(
            "the observed information is not positive definite (a flat or saddle "
            "direction, or a sill share at its bound): no cone from it"))
    rot = C[:3, :3]
    M = drawn_frames(p[:3], rot, seed)
    q = _cone_quantiles(M, p[:3], confidence)
    K = len(fit.kinds)
    shares = np.r_[fit.nugget_share, np.asarray(fit.shares, float)]
    return InformationCones({a: float(q[i]) for i, a in enumerate(AXES)}, confidence,
                            rotation_sd=np.degrees(np.sqrt(np.diag(rot))), frames=M,
                            logit_share_sd=share_logit_sd(C[3 + 3 * K:, 3 + 3 * K:], shares))


def _held(fit, n_params, range_limit):
    """(n_params,) bool: the log ranges beyond ``range_limit`` (None: none).

    The likelihood is flat along a range longer than the samples can
    resolve (a search can run it out to millions of metres, the information
    then singular in that direction), so such a range carries no
    information of its own: the other parameters' spread is taken with it
    held, the conditional covariance.
    """
    held = np.zeros(n_params, bool)
    if range_limit is not None:
        lim = np.asarray(fit.ranges, float).ravel() >= float(range_limit)
        held[3:3 + lim.size] = lim
    return held


def _covariance_given_held(H, held):
    """The inverse of the information of the free parameters, zero for the held ones;
    None where that information is not positive definite."""
    free = ~np.asarray(held, bool)
    w, V = np.linalg.eigh(H[np.ix_(free, free)])
    if w[0] <= 1e-9 * max(w[-1], 1e-300):
        return None
    C = np.zeros_like(H)
    C[np.ix_(free, free)] = (V / w) @ V.T
    return C


def share_logit_sd(covariance, shares):
    """Standard deviations of ``logit(f_i)`` for shares ``f = softmax(z, 0)`` (delta method).

    The likelihood's shares of the sill (nugget first, then the structures)
    are the softmax of its free logits ``z`` (one per share but the last)
    with the last logit fixed at 0. By the chain rule
    ``d logit(f_i) / d z_j = (delta_ij - f_j) / (1 - f_i)``; the variance of
    ``logit(f_i)`` is ``g_i^T covariance g_i`` (the delta method).

    Parameters
    ----------
    covariance : ndarray (K, K)
        Covariance of the free logits.
    shares : ndarray (K + 1,)
        The shares, summing to one.

    Returns
    -------
    ndarray (K + 1,)
    """
    f = np.asarray(shares, float)
    K = len(f) - 1
    G = (np.eye(K + 1)[:, :K] - f[None, :K]) / np.maximum(1.0 - f, 1e-300)[:, None]
    var = np.einsum("ij,jk,ik->i", G, np.asarray(covariance, float).reshape(K, K), G)
    return np.sqrt(np.maximum(var, 0.0))


def drawn_frames(rotvec, covariance, seed=0, draws=DRAWS):
    """Frames ``R(v)`` for rotation vectors ``v`` drawn from ``N(rotvec, covariance)``.

    Returns
    -------
    ndarray (draws, 3, 3)
    """
    rng = np.random.default_rng(seed)
    d = rng.multivariate_normal(np.zeros(3), np.asarray(covariance, float), size=int(draws),
                                method="cholesky")
    return Rotation.from_rotvec(np.asarray(rotvec, float) + d).as_matrix()


def _cone_quantiles(M, rotvec, confidence):
    """Each column's ``confidence`` quantile of its angle to ``R(rotvec)`` (degrees)."""
    F = Rotation.from_rotvec(np.asarray(rotvec, float)).as_matrix()
    cos = np.abs(np.einsum("dki,ki->di", M, F))
    return np.quantile(np.degrees(np.arccos(np.clip(cos, 0.0, 1.0))), confidence, axis=0)


def axis_cones(rotvec, covariance, confidence=0.9, seed=0, draws=DRAWS):
    """Cone half-angles (degrees) of the columns of ``R(rotvec)`` under a normal rotation vector.

    Rotation vectors are drawn from ``N(rotvec, covariance)``; each column's
    angle to its place in ``R(rotvec)`` (undirected) is measured, and the
    ``confidence`` quantile over the draws is its cone.

    Parameters
    ----------
    rotvec : ndarray (3,)
    covariance : ndarray (3, 3)
        Covariance of the rotation vector (radians squared).
    confidence : float
    seed : int
    draws : int

    Returns
    -------
    ndarray (3,)
    """
    return _cone_quantiles(drawn_frames(rotvec, covariance, seed, draws), rotvec, confidence)
