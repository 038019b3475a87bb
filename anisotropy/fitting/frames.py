"""A global choice of the frame, and ambiguity said out loud.

A local search of the likelihood, started from the variogram fit's frame,
only turns that frame a few degrees.  It never asks whether another
assignment of the three axes explains the samples as well: on drill-hole
strings oblique to the plane of continuity, or running near the major axis,
the variogram fit can exchange the major and semi-major axes, and a local
turn keeps the exchange.  Here several candidate frames are each polished
by the same likelihood and compared globally:

* the variogram fit's frame;
* the same frame with the major and semi-major ranges exchanged, and with
  the semi-major and minor exchanged;
* the variogram frame turned (by the smallest rotation) so that its axis
  nearest a dominant hole direction runs along it, for each such direction;
* other good frames from the variogram search (the direction sweep's starts).

The candidate with the highest likelihood is kept.  A rival whose
log-likelihood lies within ``margin`` of the best, and whose axes point
elsewhere, means the samples cannot separate the two: both are reported and
the axes that differ are flagged.  The default margin is half the 90 %
quantile of a chi-square with three degrees of freedom (Wilks 1938, Ann.
Math. Stat. 9: the likelihood-ratio confidence region of the three rotation
parameters), so a rival inside it lies inside the frame's own 90 %
likelihood-ratio region.

This module is pure: the likelihood search is passed in as a callable, so
every candidate is polished by the same conditioning sets and the
log-likelihoods are comparable.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Callable, Sequence

import numpy as np
from scipy.spatial.transform import Rotation
from scipy.stats import chi2

from anisotropy.fitting.likelihood import refine_frame_likelihood, vecchia_setup
from anisotropy.fitting.resolution import hole_axes
from anisotropy.geometry import to_lower_hemisphere, vector_to_line

__all__ = ["FrameStart", "PolishedFrame", "FrameChoice", "frame_starts",
           "dominant_directions", "choose_frame", "likelihood_margin", "axis_swap_shares",
           "global_frame_choice", "ordered_axes", "decide_rivals", "AXIS_NAMES"]

AXIS_NAMES = ("major", "semi_major", "minor")
#: Axes of two frames that differ by more than this are "elsewhere" (degrees):
#: the direction sweep's default angular tolerance, the finest difference the
#: directional variograms themselves can show (common practice: 15-22.5).
DISTINCT_AXIS_DEGREES = 15.0
#: Iterations of each candidate's likelihood search in the global choice.  The
#: candidates are compared, not reported: the chosen one is searched again to
#: convergence.  From a start in the right basin the search moves the frame
#: by well under a degree after its first few dozen iterations (analytic
#: gradient; benchmarks/bench_likelihood.py shows 13-49 iterations to
#: convergence on 1,800-2,000 samples).
SCREEN_ITERATIONS = 40


@dataclass(frozen=True)
class FrameStart:
    """A candidate start: a frame and the ranges along its columns."""

    name: str
    frame: np.ndarray
    ranges: np.ndarray


@dataclass(frozen=True)
class PolishedFrame:
    """A candidate after the likelihood search.

    Attributes
    ----------
    name : str
    frame : ndarray (3, 3)
        Columns ordered major, semi-major, minor (by the longest structure's ranges).
    ranges : ndarray (K, 3)
        Ranges along those columns.
    negloglik : float
    fit : object
        What the search returned (kept for the caller).
    """

    name: str
    frame: np.ndarray
    ranges: np.ndarray
    negloglik: float
    fit: object = None

    def to_dict(self) -> dict:
        """Axes as trend/plunge with the log-likelihood."""
        axes = {}
        for i, a in enumerate(AXIS_NAMES):
            t, p = vector_to_line(self.frame[:, i])
            axes[a] = {"trend": float(t), "plunge": float(p)}
        return {"name": self.name, "axes": axes, "negloglik": float(self.negloglik),
                "ranges": np.asarray(self.ranges, float).tolist()}


@dataclass(frozen=True)
class FrameChoice:
    """The frames compared, the one kept and its rivals.

    Attributes
    ----------
    candidates : tuple of PolishedFrame
        In order of likelihood, best first.
    margin : float
        Log-likelihood margin inside which a rival cannot be told apart.
    rivals : tuple of int
        Indices (into ``candidates``) of rivals within the margin whose axes
        point elsewhere.
    ambiguous_axes : tuple of str
        Axes on which the best frame and a rival differ by more than
        ``DISTINCT_AXIS_DEGREES``.
    reported : ndarray (3, 3) or None
        The frame finally reported, when the rivals were judged against it
        (:meth:`relative_to`) rather than against the best candidate.
    pruned : tuple of (str, float)
        Candidates left out by a coarser screening before the candidates
        were compared (:func:`decide_rivals`): name and log-likelihood below
        the screening's best, on the screening's approximation.
    screening : FrameChoice or None
        That coarser screening (:func:`decide_rivals`). Its rivals stay
        rivals: a frame either comparison cannot separate from the reported
        one leaves its axes open (``ambiguous_axes`` and
        :meth:`rival_angles` hold both comparisons).
    """

    candidates: tuple
    margin: float
    rivals: tuple
    ambiguous_axes: tuple
    reported: np.ndarray | None = None
    pruned: tuple = ()
    screening: "FrameChoice | None" = None

    @property
    def best(self) -> PolishedFrame:
        return self.candidates[0]

    def relative_to(self, frame) -> "FrameChoice":
        """The rivals of ``frame`` (the frame finally reported) among the candidates.

        The candidates are searched as a screening; the chosen one is then
        searched again, and may move.  A rival is a candidate within the
        margin of the best log-likelihood whose axes lie more than
        ``DISTINCT_AXIS_DEGREES`` from ``frame``'s.
        """
        F = np.asarray(frame, float)
        best = self.candidates[0].negloglik
        rivals, axes = [], set()
        for k, c in enumerate(self.candidates):
            if c.negloglik - best > self.margin:
                break
            differ = _axis_angles(F, c.frame) > DISTINCT_AXIS_DEGREES
            if differ.any():
                rivals.append(k)
                axes |= {AXIS_NAMES[i] for i in np.flatnonzero(differ)}
        screening = None if self.screening is None else self.screening.relative_to(F)
        if screening is not None:
            axes |= set(screening.ambiguous_axes)
        return FrameChoice(self.candidates, self.margin, tuple(rivals),
                           tuple(a for a in AXIS_NAMES if a in axes), F, self.pruned,
                           screening)

    @property
    def ambiguous(self) -> bool:
        return bool(self.rivals) or (self.screening is not None and self.screening.ambiguous)

    def rival_frames(self) -> list:
        """``(candidate, log-likelihood below its comparison's best)`` of every rival,
        this comparison's first, then the screening's."""
        out = [(self.candidates[k], self.candidates[k].negloglik - self.best.negloglik)
               for k in self.rivals]
        return out + (self.screening.rival_frames() if self.screening is not None else [])

    def rival_angles(self) -> dict:
        """Largest angle (degrees) between each axis of the best frame and of any rival."""
        out = {a: 0.0 for a in AXIS_NAMES}
        ref = self.best.frame if self.reported is None else self.reported
        for c, _ in self.rival_frames():
            ang = _axis_angles(ref, c.frame)
            for i, a in enumerate(AXIS_NAMES):
                out[a] = max(out[a], float(ang[i]))
        return out

    def to_dict(self) -> dict:
        """JSON-ready record (``diagnostics.frame_candidates``)."""
        best = self.candidates[0].negloglik
        rows = []
        for k, c in enumerate(self.candidates):
            d = c.to_dict()
            d.update(loglik_below_best=float(c.negloglik - best), chosen=k == 0,
                     rival=k in self.rivals)
            rows.append(d)
        return {"candidates": rows, "margin": float(self.margin),
                "ambiguous_axes": list(self.ambiguous_axes),
                "rival_angles": self.rival_angles(),
                "pruned_at_screening": [{"name": n, "loglik_below_best": float(d)}
                                        for n, d in self.pruned],
                "screening": None if self.screening is None else self.screening.to_dict()}


def likelihood_margin(confidence=0.9, dof=3) -> float:
    """Half the chi-square quantile: the log-likelihood drop of a ``confidence`` region.

    Wilks (1938): twice the log-likelihood ratio is asymptotically chi-square
    with as many degrees of freedom as parameters fixed (here the three of a
    rotation).
    """
    return 0.5 * float(chi2.ppf(confidence, dof))


def _axis_angles(F, G):
    """Angle (degrees, 0-90) between matching columns of two frames (undirected axes)."""
    c = np.abs(np.sum(np.asarray(F, float) * np.asarray(G, float), axis=0))
    return np.degrees(np.arccos(np.clip(c, 0.0, 1.0)))


def _swapped(name, frame, ranges, a, b):
    r = np.array(ranges, float, copy=True)
    r[:, [a, b]] = r[:, [b, a]]
    return FrameStart(name, np.asarray(frame, float), r)


def _align_nearest_axis(frame, u):
    """The frame turned by the smallest rotation that lays its axis nearest ``u`` along ``u``."""
    F = np.asarray(frame, float)
    u = np.asarray(u, float) / np.linalg.norm(u)
    i = int(np.argmax(np.abs(F.T @ u)))
    v = F[:, i] * np.sign(F[:, i] @ u)
    axis = np.cross(v, u)
    s, c = np.linalg.norm(axis), float(np.clip(v @ u, -1.0, 1.0))
    if s < 1e-12:
        return F.copy(), i
    R = Rotation.from_rotvec(axis / s * np.arctan2(s, c)).as_matrix()
    return R @ F, i


def frame_starts(frame, ranges, *, hole_directions=(), other_frames=()) -> list:
    """The candidate starts of the global frame choice.

    Parameters
    ----------
    frame : (3, 3)
        The variogram fit's frame (columns major, semi-major, minor).
    ranges : (K, 3)
        Its ranges per structure.
    hole_directions : sequence of (3,) vectors
        Dominant hole directions (see :func:`dominant_directions`).
    other_frames : sequence of (name, (3, 3) frame)
        Other good frames of the variogram search; kept only when one of
        their axes lies more than ``DISTINCT_AXIS_DEGREES`` from the
        variogram frame's (and the ranges are carried over).

    Returns
    -------
    list of FrameStart
    """
    F = np.asarray(frame, float)
    R = np.atleast_2d(np.asarray(ranges, float))
    out = [FrameStart("variogram fit", F, R),
           _swapped("major and semi-major exchanged", F, R, 0, 1),
           _swapped("semi-major and minor exchanged", F, R, 1, 2)]
    for u in hole_directions:
        G, i = _align_nearest_axis(F, u)
        if _axis_angles(F, G).max() < 1.0:
            continue  # the frame already has an axis along the holes
        t, p = vector_to_line(u)
        out.append(FrameStart(f"{AXIS_NAMES[i].replace('_', '-')} axis along the holes "
                              f"({t:03.0f}/{p:02.0f})", G, R))
    for name, G in other_frames:
        G = np.asarray(G, float)
        if _axis_angles(F, G).max() > DISTINCT_AXIS_DEGREES:
            out.append(FrameStart(name, G, R))
    return out


def dominant_directions(directions, weights=None, *, within=DISTINCT_AXIS_DEGREES,
                        min_share=0.2, max_directions=2) -> list:
    """Directions shared by a good part of the holes (greedy clustering).

    Parameters
    ----------
    directions : (H, 3)
        One unit vector per hole (undirected).
    weights : (H,), optional
        Samples per hole (default 1 each).
    within : float
        Holes within this angle (degrees) of a cluster's first hole join it.
    min_share : float
        Least share of the weight a cluster must hold.
    max_directions : int

    Returns
    -------
    list of ndarray (3,)
        Weighted mean direction of each kept cluster, heaviest first.
    """
    U = to_lower_hemisphere(np.atleast_2d(np.asarray(directions, float)))
    w = np.ones(len(U)) if weights is None else np.asarray(weights, float)
    free = np.ones(len(U), bool)
    cos_w = np.cos(np.radians(within))
    out = []
    for i in np.argsort(-w, kind="stable"):
        if not free[i]:
            continue
        member = free & (np.abs(U @ U[i]) >= cos_w)
        free &= ~member
        if w[member].sum() < min_share * w.sum():
            continue
        S = (U[member] * w[member, None]).T @ U[member]  # orientation tensor of the cluster
        out.append((w[member].sum(), np.linalg.eigh(S)[1][:, -1]))
    out.sort(key=lambda t: -t[0])
    return [to_lower_hemisphere(v) for _, v in out[:max_directions]]


def ordered_axes(frame, ranges):
    """Columns (and ranges) reordered from the longest range (of the longest structure) to the shortest."""
    F = np.asarray(frame, float)
    R = np.atleast_2d(np.asarray(ranges, float))
    j = int(np.argmax(R.max(axis=1)))
    o = np.argsort(-R[j], kind="stable")
    F = F[:, o]
    if np.linalg.det(F) < 0:
        F[:, 2] *= -1
    return F, R[:, o]


def choose_frame(starts: Sequence[FrameStart], polish: Callable, *, margin=None,
                 confidence=0.9) -> FrameChoice:
    """Polish every start by the same likelihood and keep the best.

    Parameters
    ----------
    starts : sequence of FrameStart
    polish : callable
        ``polish(frame, ranges) -> fit`` with attributes ``frame``,
        ``ranges`` and ``negloglik`` (as
        :class:`~anisotropy.fitting.likelihood.LikelihoodFit`), the same
        samples and conditioning for every call.
    margin : float, optional
        Log-likelihood margin of a rival (default :func:`likelihood_margin`
        at ``confidence``).
    confidence : float

    Returns
    -------
    FrameChoice
    """
    margin = likelihood_margin(confidence) if margin is None else float(margin)
    done = []
    for s in starts:
        fit = polish(s.frame, s.ranges)
        F, R = ordered_axes(fit.frame, fit.ranges)
        done.append(PolishedFrame(s.name, F, R, float(fit.negloglik), fit))
    done.sort(key=lambda c: c.negloglik)
    best = done[0]
    rivals, axes = [], set()
    for k, c in enumerate(done[1:], 1):
        if c.negloglik - best.negloglik > margin:
            break
        differ = _axis_angles(best.frame, c.frame) > DISTINCT_AXIS_DEGREES
        if differ.any():
            rivals.append(k)
            axes |= {AXIS_NAMES[i] for i in np.flatnonzero(differ)}
    ambiguous = tuple(a for a in AXIS_NAMES if a in axes)
    return FrameChoice(tuple(done), margin, tuple(rivals), ambiguous)


def decide_rivals(choice: FrameChoice, polish: Callable, *, confidence=0.9) -> FrameChoice:
    """The screening's best frame and its rivals compared again on a finer likelihood.

    A coarse screening (few neighbours, a subsample) ranks every candidate
    cheaply, but among frames it cannot separate (its best and the rivals
    within its margin) the order may be set by the coarse approximation's
    own error rather than by the samples.  Those finalists are searched
    again with ``polish`` (a finer approximation: the refinement's own sizes)
    and compared there, with the same margin rule; the best there is kept.
    The other candidates are listed in ``pruned`` with their screening
    log-likelihoods, and the screening itself is kept: its rivals remain
    rivals (neither approximation is the exact likelihood, so a frame either
    cannot separate from the reported one is reported as a rival).

    Parameters
    ----------
    choice : FrameChoice
        The coarse screening.
    polish : callable
        As for :func:`choose_frame`, on the finer approximation.
    confidence : float

    Returns
    -------
    FrameChoice
        ``choice`` itself when it has no rivals.
    """
    if not choice.rivals:
        return choice
    keep = (0, *choice.rivals)
    best = choice.best.negloglik
    pruned = tuple((c.name, float(c.negloglik - best))
                   for k, c in enumerate(choice.candidates) if k not in keep)
    starts = [FrameStart(choice.candidates[k].name, choice.candidates[k].frame,
                         choice.candidates[k].ranges) for k in keep]
    fine = replace(choose_frame(starts, polish, confidence=confidence), pruned=pruned,
                   screening=choice)
    return fine.relative_to(fine.best.frame)  # the screening's rivals judged against it


def axis_swap_shares(frame, replicate_frames) -> dict:
    """Share of replicates in which an axis is matched to another axis of ``frame``.

    Each replicate axis ``i`` is compared with the three axes of ``frame``; it
    is "swapped" with axis ``j`` when it lies closer to ``j`` than to ``i``.

    Returns
    -------
    dict
        ``{"major-semi_major": share, "semi_major-minor": share,
        "major-minor": share}``.
    """
    F = np.asarray(frame, float)
    out = {}
    reps = [np.asarray(G, float) for G in replicate_frames]
    for a, b in ((0, 1), (1, 2), (0, 2)):
        if not reps:
            out[f"{AXIS_NAMES[a]}-{AXIS_NAMES[b]}"] = 0.0
            continue
        n = 0
        for G in reps:
            c = np.abs(F.T @ G)  # c[j, i]: |cos| between main axis j and replicate axis i
            n += bool(c[b, a] > c[a, a] or c[a, b] > c[b, b])
        out[f"{AXIS_NAMES[a]}-{AXIS_NAMES[b]}"] = n / len(reps)
    return out


def global_frame_choice(coords, values, frame, ranges, nugget, sills, kinds, *, holes=None,
                        other_frames=(), seed=0, n_neighbours=30, max_samples=2000,
                        confidence=0.9, ftol=1e-4, maxiter=SCREEN_ITERATIONS,
                        decide_neighbours=None, decide_max_samples=None) -> FrameChoice:
    """Every candidate start polished by one shared likelihood, and the best kept.

    The conditioning sets are built once, in the plain Euclidean metric
    (neutral between candidates that exchange axes: a metric taken from one
    candidate's ranges would reach along that candidate's major axis and
    favour it) and, on drill holes, with the across-hole rule of
    :func:`~anisotropy.fitting.likelihood.vecchia_neighbours`.  Every
    candidate is then searched on the same samples, order and neighbours, so
    their log-likelihoods are comparable.

    Parameters
    ----------
    coords, values : ndarray
        Samples and the analysed variable.
    frame, ranges, nugget, sills, kinds
        The variogram fit (columns major, semi-major, minor; ranges (K, 3)).
    holes : array_like (n,), optional
        Drill-hole labels: across-hole conditioning, and a candidate with an
        axis along each dominant hole direction.
    other_frames : sequence of (name, frame)
        Other good frames of the variogram search.
    seed, n_neighbours, max_samples :
        As for :func:`~anisotropy.fitting.likelihood.refine_frame_likelihood`.
    confidence : float
        Sets the rival margin (:func:`likelihood_margin`).
    ftol : float
        Stopping tolerance of each candidate's search.
    maxiter : int
        Iterations of each candidate's search (a screening: the chosen frame
        is searched again to convergence by the caller).
    decide_neighbours, decide_max_samples : int, optional
        When given, the best candidate and its rivals are compared again on
        conditioning sets of these sizes (:func:`decide_rivals`; same metric
        and rule, a second shared setup).

    Returns
    -------
    FrameChoice
    """
    dirs = []
    if holes is not None:
        ha = hole_axes(coords, holes)
        ok = np.all(np.isfinite(ha.directions), axis=1)
        if ok.any():
            dirs = dominant_directions(ha.directions[ok], ha.counts[ok])
    setup = vecchia_setup(coords, values, metric=np.eye(3), n_neighbours=n_neighbours,
                          max_samples=max_samples, seed=seed, holes=holes)
    starts = frame_starts(frame, ranges, hole_directions=dirs, other_frames=other_frames)

    def polisher(st, m, n):
        def polish(F, R):
            return refine_frame_likelihood(coords, values, F, R, nugget, sills, kinds,
                                           setup=st, ftol=ftol, seed=seed, maxiter=maxiter,
                                           n_neighbours=m, max_samples=n)
        return polish

    choice = choose_frame(starts, polisher(setup, n_neighbours, max_samples),
                          confidence=confidence)
    if decide_neighbours is None or not choice.rivals:
        return choice
    m, n = int(decide_neighbours), int(decide_max_samples or max_samples)
    fine = vecchia_setup(coords, values, metric=np.eye(3), n_neighbours=m, max_samples=n,
                         seed=seed, holes=holes)
    return decide_rivals(choice, polisher(fine, m, n), confidence=confidence)
