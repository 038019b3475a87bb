"""Is there any spatial continuity to model?  A permutation test.

Before a continuity model is proposed, the data must show that nearby
samples are more alike than samples drawn at random.  Otherwise every fit
(ellipsoid, nested model, likelihood) still returns an answer, confident in
form but empty in content: on samples with no spatial correlation at all the
chain would otherwise report ranges and axes that the data contradict.

The statistic is Geary's contiguity ratio (Geary 1954, The Incorporated
Statistician 5(3)) over a fixed set of sample pairs:

    C = (n - 1) * sum_P (y_i - y_j)^2 / (2 n_P * sum_i (y_i - ybar)^2)

with ``n_P`` the number of pairs in the set ``P``.  It is about 1 when values
are exchangeable over the locations and below 1 when close samples are alike.  Its null distribution is obtained by
permuting the values over the locations (randomisation inference; Cliff &
Ord 1981, *Spatial Processes*, ch. 2), with the pair set held fixed, so no
distributional assumption is made.  Two pair sets are tested:

* ``nearest``: each sample with its ``k`` nearest neighbours (the shortest
  distances the sampling offers: along the holes for drill-hole strings);
* ``first_lag``: the pairs of the first lag class of the variogram, (lag/2,
  3 lag/2], in direction classes and all together: continuity is
  directional (across a thin lode the first lag may show none while along it
  every pair is alike), yet where it runs every way one ratio over all pairs
  sees it with fewer pairs; each member is standardised by its exact null
  mean and standard deviation and the smallest is tested against the
  permutation distribution of that minimum (:func:`directional_test`).
  Continuity seen at the nearest pairs but not here means every structure is
  shorter than the first lag in every direction: the nugget seen by the
  variogram cannot be separated from such structures, and no range or
  direction at the lag scale is resolved.

A sample's pair set is chosen from the locations only, never from the values,
so the test is exact under the permutation null whatever the layout.

The ratio's mean (1) and variance under randomisation are exact, from the
pair counts and the moments of the values (:func:`randomisation_sd`), so
every member is standardised by its exact null standard deviation.  On large
data with clear continuity the observed ratios stand so many standard
deviations below 1 that Cantelli's one-sided inequality,
``P(Z <= -t) <= 1 / (1 + t^2)`` for any distribution with unit variance,
summed over the members, already bounds the exact permutation p-value below
the significance level: the permutations are then skipped and the bound is
reported as the p-value (``method`` "tail_bound").  The bound holds for the
exact permutation distribution, so it only spares the Monte Carlo work in
cases the permutations would also call significant (up to their own
Monte Carlo error).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numba import njit, prange
from scipy.spatial import cKDTree as _KDTree  # private: not part of this module's API

from anisotropy.geometry import fibonacci_hemisphere, vector_to_line

__all__ = ["ContinuityTest", "ContinuityCheck", "geary_ratio", "randomisation_sd",
           "tail_bound", "continuity_test", "directional_test", "direction_classes",
           "check_continuity"]

#: Default number of permutations: the smallest attainable p-value is
#: 1 / (permutations + 1) = 0.001.
DEFAULT_PERMUTATIONS = 999
#: Default significance level.  Strict on purpose: a run on data with no
#: spatial correlation must almost never be let through to a confident
#: orientation, and any structure worth modelling gives p-values far below it
#: (hundreds of pairs at a correlation of 0.3 put the observed ratio several
#: standard deviations below the permutations).
DEFAULT_ALPHA = 0.002
#: Pair sets are subsampled at random (independently of the values) to at
#: most this many pairs, which bounds the cost of the permutations.
MAX_PAIRS = 200_000


@dataclass(frozen=True)
class ContinuityTest:
    """One permutation test of Geary's ratio over a fixed pair set.

    Attributes
    ----------
    pairs : str
        Which pair set ("nearest" or "first_lag").
    ratio : float
        Observed Geary ratio (1: no correlation; below 1: continuity).
    p_value : float
        One-sided permutation p-value, ``(1 + #{C_perm <= C_obs}) / (1 + B)``;
        with ``method`` "tail_bound" an upper bound on the exact permutation
        p-value (:func:`tail_bound`).
    permutations : int
        Random permutations drawn (0 when the tail bound decided).
    n_pairs : int
        Pairs used (after any random subsampling).
    distance : tuple of float
        Median and maximum pair distance (m).
    alpha : float
    direction : tuple or None
        Trend and plunge (degrees) of the direction class the statistic came
        from (directional tests; None where all the pairs together stood out
        most).
    method : str
        "permutation" (Monte Carlo permutations) or "tail_bound" (Cantelli's
        bound on the exact permutation p-value was already below ``alpha``).
    """

    pairs: str
    ratio: float
    p_value: float
    permutations: int
    n_pairs: int
    distance: tuple
    alpha: float
    direction: tuple | None = None
    method: str = "permutation"

    @property
    def significant(self) -> bool:
        """True when close samples are significantly more alike than random ones."""
        return bool(self.n_pairs > 0 and self.p_value <= self.alpha)

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {"pairs": self.pairs, "ratio": float(self.ratio),
                "p_value": float(self.p_value), "permutations": int(self.permutations),
                "n_pairs": int(self.n_pairs),
                "median_distance": float(self.distance[0]),
                "max_distance": float(self.distance[1]),
                "alpha": float(self.alpha), "significant": self.significant,
                "direction": None if self.direction is None else list(self.direction),
                "method": self.method}


@dataclass(frozen=True)
class ContinuityCheck:
    """Both tests, and what they mean for the model.

    Attributes
    ----------
    nearest, first_lag : ContinuityTest
    verdict : str
        "resolved" (continuity at the lag scale), "shorter_than_first_lag"
        (only the nearest pairs are alike) or "none" (no continuity at all).
    text : str
        The verdict in words, empty when resolved.
    """

    nearest: ContinuityTest
    first_lag: ContinuityTest
    verdict: str
    text: str

    @property
    def resolved(self) -> bool:
        """True when continuity is seen at the variogram's lag scale."""
        return self.verdict == "resolved"

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {"verdict": self.verdict, "text": self.text,
                "nearest": self.nearest.to_dict(), "first_lag": self.first_lag.to_dict()}


def geary_ratio(values, pairs) -> float:
    """Geary's contiguity ratio of ``values`` over unordered ``pairs``.

    Parameters
    ----------
    values : ndarray (n,)
    pairs : ndarray (P, 2) int
        Each unordered pair once (binary, symmetric weights).

    Returns
    -------
    float
        ``(n - 1) sum_P (y_i - y_j)^2 / (2 P sum (y - ybar)^2)``; NaN with no
        pairs or no variance.
    """
    y = np.asarray(values, float)
    p = np.asarray(pairs, np.int64).reshape(-1, 2)
    ss = float(np.sum((y - y.mean()) ** 2))
    if len(p) == 0 or ss <= 0:
        return float("nan")
    d2 = float(np.sum((y[p[:, 0]] - y[p[:, 1]]) ** 2))
    return (len(y) - 1) * d2 / (2.0 * len(p) * ss)


def _difference_moments(y):
    """Moments of squared differences of distinct values drawn without replacement.

    For centred values ``x`` with power sums ``s2``, ``s4``, returns
    ``mu = E[(x_a - x_b)^2]`` and the second moments ``E[(x_a - x_b)^4]``,
    ``E[(x_a - x_b)^2 (x_a - x_c)^2]`` and ``E[(x_a - x_b)^2 (x_c - x_d)^2]``
    over distinct indices, from sums over all index tuples less their
    coincident terms (``sum_b (x_a - x_b)^2 = n x_a^2 + s2``).
    """
    x = np.asarray(y, float) - np.mean(y)
    n = float(len(x))
    s2, s4 = float(np.sum(x * x)), float(np.sum(x ** 4))
    t1 = 2 * n * s4 + 6 * s2 * s2                       # sum over a != b
    t2 = n * n * s4 + 3 * n * s2 * s2 - t1              # a, b, c distinct
    t3 = 4 * n * n * s2 * s2 - 4 * t2 - 2 * t1          # a, b, c, d distinct
    m1 = t1 / (n * (n - 1))
    m2 = t2 / (n * (n - 1) * (n - 2))
    m3 = t3 / (n * (n - 1) * (n - 2) * (n - 3))
    return 2 * s2 / (n - 1), m1, m2, m3, s2


def randomisation_sd(values, pairs, classes=None, n_classes=1):
    """Exact standard deviation of Geary's ratio under random permutation of the values.

    The mean is 1 exactly.  The variance of the pair sum ``S = sum_P (y_i -
    y_j)^2`` is ``P v1 + K1 v2 + K0 v3``: each pair's own variance, the
    covariances of the ``K1 = sum_i d_i (d_i - 1)`` ordered pairs of pairs
    sharing one sample (``d_i`` its pairs) and of the ``K0`` disjoint ones,
    from the moments of squared differences of distinct values
    (randomisation moments as in Cliff & Ord 1981, *Spatial Processes*,
    ch. 2, derived here from the pair counts directly).

    Parameters
    ----------
    values : ndarray (n,), n >= 4
    pairs : ndarray (P, 2) int
        Distinct unordered pairs of distinct samples.
    classes : ndarray (P,) int, optional
        Group of each pair; without it all pairs are one group.
    n_classes : int

    Returns
    -------
    ndarray (n_classes + 1,)
        Each group's standard deviation and, last, that of all pairs
        together (NaN for a group without pairs).
    """
    y = np.asarray(values, float)
    p = np.asarray(pairs, np.int64).reshape(-1, 2)
    n = len(y)
    g = np.zeros(len(p), np.int64) if classes is None else np.asarray(classes, np.int64)
    mu, m1, m2, m3, ss = _difference_moments(y)
    deg = np.bincount(np.r_[g * n + p[:, 0], g * n + p[:, 1]],
                      minlength=n_classes * n).reshape(n_classes, n).astype(float)
    deg = np.vstack([deg, deg.sum(axis=0)])
    P = 0.5 * deg.sum(axis=1)
    k1 = np.sum(deg * (deg - 1), axis=1)
    k0 = P * P - P - k1
    var = P * (m1 - mu * mu) + k1 * (m2 - mu * mu) + k0 * (m3 - mu * mu)
    with np.errstate(invalid="ignore", divide="ignore"):
        sd = (n - 1) * np.sqrt(np.maximum(var, 0.0)) / (2.0 * P * ss)
    return np.where(P > 0, sd, np.nan)


def tail_bound(z, members=None) -> float:
    """Upper bound on ``P(min_m Z_m <= z)`` for standardised null statistics.

    Cantelli's one-sided inequality gives ``P(Z <= -t) <= 1 / (1 + t^2)``
    for any statistic of mean 0 and variance 1 and ``t > 0``; the union over
    ``members`` statistics multiplies it by their number (Bonferroni).

    Parameters
    ----------
    z : float
        Observed smallest standardised statistic.
    members : int, optional
        Statistics the minimum was taken over (default 1).

    Returns
    -------
    float
        The bound, at most 1 (1 for ``z >= 0``).
    """
    t = -float(z)
    if not np.isfinite(t) or t <= 0:
        return 1.0
    return min(1.0, float(members or 1) / (1.0 + t * t))


#: The permutations run in this many independent chunks (in parallel), chunk ``c``
#: drawing its shuffles from NumPy's legacy generator seeded with ``seed + c``.  The
#: count is fixed, not the number of threads, so a seed gives the same permutations
#: on any machine.
PERMUTATION_CHUNKS = 8


@njit(cache=True, inline="always")
def _chunk_range(c, n_perm):
    """Permutations ``[b0, b1)`` of chunk ``c``: consecutive runs of ceil(n_perm / chunks)."""
    size = (n_perm + PERMUTATION_CHUNKS - 1) // PERMUTATION_CHUNKS
    return min(c * size, n_perm), min((c + 1) * size, n_perm)


def _permuted_sums(y, i, j, n_perm, seed):
    """Sum of squared pair differences for ``n_perm`` random permutations of ``y``.

    The one-group case of :func:`_permuted_group_ratios` (same permutations):
    with the scale ``2 P`` for ``P`` pairs the group's ratio is the sum itself.
    """
    one = np.zeros(len(i), np.int64)
    return _permuted_group_ratios(y, i, j, one, 1, 2.0 * len(i), int(n_perm), int(seed))[:, 0]


def continuity_test(values, pairs, *, name="nearest", permutations=DEFAULT_PERMUTATIONS,
                    alpha=DEFAULT_ALPHA, seed=0, distances=None) -> ContinuityTest:
    """Permutation test of Geary's ratio over a fixed set of pairs.

    Parameters
    ----------
    values : ndarray (n,)
    pairs : ndarray (P, 2) int
        Unordered pairs, chosen from the locations only.
    name : str
        Label of the pair set.
    permutations : int
    alpha : float
        Significance level.
    seed : int
    distances : ndarray (P,), optional
        Pair distances, for the record.

    Returns
    -------
    ContinuityTest
    """
    y = np.asarray(values, float)
    p = np.asarray(pairs, np.int64).reshape(-1, 2)
    dist = (float("nan"), float("nan"))
    if distances is not None and len(distances):
        dist = (float(np.median(distances)), float(np.max(distances)))
    ratio = geary_ratio(y, p)
    if not np.isfinite(ratio):
        return ContinuityTest(name, ratio, 1.0, 0, len(p), dist, alpha)
    if len(y) >= 4:
        bound = tail_bound((ratio - 1.0) / randomisation_sd(y, p)[-1])
        if bound <= alpha:
            return ContinuityTest(name, float(ratio), bound, 0, len(p), dist, float(alpha),
                                  method="tail_bound")
    obs = float(np.sum((y[p[:, 0]] - y[p[:, 1]]) ** 2))
    sums = _permuted_sums(y, np.ascontiguousarray(p[:, 0]), np.ascontiguousarray(p[:, 1]),
                          int(permutations), int(seed) % (2 ** 31))
    # a small relative slack so that ties from rounding count against continuity
    below = int(np.sum(sums <= obs * (1 + 1e-12)))
    p_value = (1 + below) / (1 + int(permutations))
    return ContinuityTest(name, float(ratio), float(p_value), int(permutations), len(p),
                          dist, float(alpha))


@njit(cache=True)
def _group_ratios(y, i, j, g, n_groups, scale):
    """Geary ratio of each group of pairs (NaN for a group without pairs)."""
    s = np.zeros(n_groups)
    c = np.zeros(n_groups)
    for k in range(i.shape[0]):
        d = y[i[k]] - y[j[k]]
        s[g[k]] += d * d
        c[g[k]] += 1.0
    out = np.full(n_groups, np.nan)
    for q in range(n_groups):
        if c[q] > 0:
            out[q] = scale * s[q] / (2.0 * c[q])
    return out


@njit(cache=True, parallel=True)
def _permuted_group_ratios(y, i, j, g, n_groups, scale, n_perm, seed):
    """Each group's ratio and, in the last column, the ratio of all pairs, per permutation.

    Chunk ``c`` of :data:`PERMUTATION_CHUNKS` (in parallel) seeds NumPy's legacy
    generator with ``seed + c`` and shuffles one copy of ``y`` again for each
    of its permutations (:func:`_chunk_range`). The pooled ratio
    is the pair-weighted mean of the group ratios (the counts do not change
    under permutation).
    """
    counts = np.zeros(n_groups)
    for k in range(g.shape[0]):
        counts[g[k]] += 1.0
    total = counts.sum()
    out = np.empty((n_perm, n_groups + 1))
    for c in prange(PERMUTATION_CHUNKS):
        b0, b1 = _chunk_range(c, n_perm)
        np.random.seed(seed + c)
        yp = y.copy()
        for b in range(b0, b1):
            np.random.shuffle(yp)
            r = _group_ratios(yp, i, j, g, n_groups, scale)
            pooled = 0.0
            for q in range(n_groups):
                out[b, q] = r[q]
                if counts[q] > 0:
                    pooled += r[q] * counts[q]
            out[b, n_groups] = pooled / total
    return out


#: Direction classes of the first-lag test (a Fibonacci lattice on the lower
#: hemisphere, about 30 degrees apart) and the fewest pairs a class needs.
DIRECTION_CLASSES = 16
MIN_CLASS_PAIRS = 30


def direction_classes(coords, pairs, n_classes=DIRECTION_CLASSES):
    """The nearest of ``n_classes`` lattice directions to each pair's lag (undirected)."""
    X = np.asarray(coords, float)
    v = X[pairs[:, 1]] - X[pairs[:, 0]]
    v = v / np.maximum(np.linalg.norm(v, axis=1, keepdims=True), 1e-12)
    U = fibonacci_hemisphere(int(n_classes))
    return np.argmax(np.abs(v @ U.T), axis=1).astype(np.int64), U


def directional_test(values, pairs, classes, directions, *, name="first_lag",
                     permutations=DEFAULT_PERMUTATIONS, alpha=DEFAULT_ALPHA, seed=0,
                     distances=None, min_pairs=MIN_CLASS_PAIRS) -> ContinuityTest:
    """Permutation test of Geary's ratio in each direction class and over all of them.

    Continuity is directional: across a thin lode the first lag may show none
    while along it every pair is alike, and one ratio over all directions
    averages the two; but where continuity runs in every direction, one ratio
    over all the pairs sees it with far fewer pairs than any one class. So the
    family tested is the direction classes holding at least ``min_pairs``
    pairs plus all the pairs together. Each member's ratio is standardised by
    its exact mean and standard deviation under permutation
    (:func:`randomisation_sd`), and the statistic is the smallest
    standardised ratio, tested against the permutation distribution of that
    same minimum (the single-step max-T adjustment with standardised
    statistics, Westfall & Young 1993, *Resampling-Based Multiple Testing*,
    ch. 2), so testing many members costs no false alarms and a member with
    few pairs does not dominate by its spread alone. Where Cantelli's bound summed over the members
    (:func:`tail_bound`) is already below ``alpha`` no permutation is drawn.

    Parameters
    ----------
    values : ndarray (n,)
    pairs : ndarray (P, 2) int
    classes : ndarray (P,) int
        Direction class of each pair (see :func:`direction_classes`).
    directions : ndarray (C, 3)
        The classes' directions (for the record).
    name, permutations, alpha, seed, distances :
        As for :func:`continuity_test`.
    min_pairs : int

    Returns
    -------
    ContinuityTest
        ``ratio`` is the ratio of the member that stands out most and
        ``direction`` its class's trend and plunge (None for all pairs).
    """
    y = np.asarray(values, float)
    p = np.asarray(pairs, np.int64).reshape(-1, 2)
    g = np.asarray(classes, np.int64)
    C = len(directions)
    dist = (float("nan"), float("nan"))
    if distances is not None and len(distances):
        dist = (float(np.median(distances)), float(np.max(distances)))
    ss = float(np.sum((y - y.mean()) ** 2))
    valid = np.r_[np.bincount(g, minlength=C) >= min_pairs, len(p) >= min_pairs]
    if not valid.any() or ss <= 0:
        return ContinuityTest(name, float("nan"), 1.0, 0, len(p), dist, alpha)
    scale = (len(y) - 1) / ss
    i, j = np.ascontiguousarray(p[:, 0]), np.ascontiguousarray(p[:, 1])
    r = np.r_[_group_ratios(y, i, j, g, C, scale), geary_ratio(y, p)][valid]
    sd = _member_sd(y, p, g, C, valid)
    z = (r - 1.0) / sd
    q = int(np.argmin(z))
    member = int(np.flatnonzero(valid)[q])
    direction = None
    if member < C:
        t, pl = vector_to_line(directions[member])
        direction = (float(t), float(pl))
    bound = tail_bound(z[q], int(valid.sum()))
    if bound <= alpha:
        return ContinuityTest(name, float(r[q]), bound, 0, len(p), dist, float(alpha),
                              direction=direction, method="tail_bound")
    perm = _permuted_group_ratios(y, i, j, g, C, scale, int(permutations),
                                  int(seed) % (2 ** 31))[:, valid]
    mins = np.min((perm - 1.0) / sd, axis=1)
    below = int(np.sum(mins <= z[q] + 1e-12 * abs(z[q])))
    return ContinuityTest(name, float(r[q]), (1 + below) / (1 + int(permutations)),
                          int(permutations), len(p), dist, float(alpha), direction=direction)


def _member_sd(y, p, g, n_classes, valid):
    """Exact null standard deviation of each tested member (inf where it cannot vary)."""
    if len(y) < 4:  # the exact moments need four distinct samples
        return np.full(int(valid.sum()), np.inf)
    sd = randomisation_sd(y, p, g, n_classes)[valid]
    return np.where(sd > 0, sd, np.inf)            # a member that cannot vary never stands out


def nearest_pairs(coords, k=6):
    """Each sample with its ``k`` nearest others, as unordered pairs (each once)."""
    X = np.asarray(coords, float)
    k = int(min(k, len(X) - 1))
    if k < 1:
        return np.empty((0, 2), np.int64), np.empty(0)
    d, idx = _KDTree(X).query(X, k=k + 1)
    n = len(X)
    a = np.repeat(np.arange(n, dtype=np.int64), k)
    b = idx[:, 1:].ravel().astype(np.int64)
    # each unordered pair once, as the code lo * n + hi (sorted as the pairs would be)
    code = np.unique(np.minimum(a, b) * n + np.maximum(a, b))
    pairs = np.column_stack([code // n, code % n])
    pairs = pairs[pairs[:, 0] != pairs[:, 1]]  # coincident samples can list themselves
    dist = np.linalg.norm(X[pairs[:, 0]] - X[pairs[:, 1]], axis=1)
    return pairs.astype(np.int64), dist


def band_pairs(coords, lo, hi):
    """Unordered pairs whose distance lies in ``(lo, hi]``."""
    X = np.asarray(coords, float)
    tree = _KDTree(X)
    pairs = tree.query_pairs(float(hi), output_type="ndarray").astype(np.int64)
    if len(pairs) == 0:
        return pairs.reshape(0, 2), np.empty(0)
    dist = np.linalg.norm(X[pairs[:, 0]] - X[pairs[:, 1]], axis=1)
    keep = dist > lo
    return pairs[keep], dist[keep]


def _cap(pairs, dist, rng, max_pairs):
    if len(pairs) <= max_pairs:
        return pairs, dist
    keep = np.sort(rng.choice(len(pairs), size=int(max_pairs), replace=False))
    return pairs[keep], dist[keep]


def check_continuity(coords, values, *, lag, k=6, permutations=DEFAULT_PERMUTATIONS,
                     alpha=DEFAULT_ALPHA, seed=0, max_pairs=MAX_PAIRS,
                     shortest_downhole=None, holes=None) -> ContinuityCheck:
    """Test for continuity at the nearest pairs and at the first lag.

    Parameters
    ----------
    coords : ndarray (n, 3)
    values : ndarray (n,)
        The analysed variable (after any transform).
    lag : float
        Unit lag of the variogram (m); the first lag class is (lag/2, 3 lag/2].
    k : int
        Nearest neighbours per sample for the ``nearest`` pair set.
    permutations, alpha, seed :
        See :func:`continuity_test`.
    max_pairs : int
        Each pair set is subsampled at random (from the locations only) to at
        most this many pairs.
    shortest_downhole : float, optional
        Composite spacing along the holes (m), named in the text.
    holes : array_like (n,), optional
        Drill-hole labels.  The first-lag pairs are then taken between
        different holes only: along a hole the first lag class holds
        down-hole pairs, which on a lode drilled across would show only the
        short minor range and hide the continuity the variogram is fitted for.
        Down-hole continuity is what the ``nearest`` pairs test.

    Returns
    -------
    ContinuityCheck
    """
    X = np.asarray(coords, float)
    y = np.asarray(values, float)
    rng = np.random.default_rng(seed)
    pn, dn = _cap(*nearest_pairs(X, k), rng, max_pairs)
    pl, dl = band_pairs(X, 0.5 * lag, 1.5 * lag)
    if holes is not None:
        h = np.asarray(holes)
        across = h[pl[:, 0]] != h[pl[:, 1]]
        pl, dl = pl[across], dl[across]
    pl, dl = _cap(pl, dl, rng, max_pairs)
    tn = continuity_test(y, pn, name="nearest", permutations=permutations, alpha=alpha,
                         seed=int(rng.integers(2 ** 31)), distances=dn)
    cls, dirs = direction_classes(X, pl)
    tl = directional_test(y, pl, cls, dirs, name="first_lag", permutations=permutations,
                          alpha=alpha, seed=int(rng.integers(2 ** 31)), distances=dl)
    verdict, text = _verdict(tn, tl, lag, shortest_downhole, holes is not None)
    return ContinuityCheck(tn, tl, verdict, text)


def _verdict(tn, tl, lag, shortest_downhole, across_holes=False):
    """The verdict of the two tests, and its words for the record."""
    if tl.significant:
        return "resolved", ""
    where = (f"the shortest down-hole lag ({shortest_downhole:.3g} m)" if shortest_downhole
             else f"the nearest sample pairs (median {tn.distance[0]:.3g} m)")
    where_l = ("all directions together" if tl.direction is None else
               f"the direction {tl.direction[0]:03.0f}/{tl.direction[1]:02.0f}")
    first = (f"the first lag ({lag:.3g} m: Geary ratio {tl.ratio:.2f} in {where_l}, the "
             f"member that stands out most, permutation p = {tl.p_value:.3g} over "
             f"{tl.n_pairs:,} pairs)")
    if not np.isfinite(tl.ratio):
        first = (f"the first lag ({lag:.3g} m), which holds too few pairs"
                 + (" between different holes" if across_holes else "") + " to test")
    if not tn.significant:
        return "none", (
            "no spatial continuity is resolved: samples close together are no more alike "
            f"than samples drawn at random, neither at {where} (Geary ratio {tn.ratio:.2f}, "
            f"p = {tn.p_value:.3g}) nor at {first}. The values behave as pure nugget at "
            "every distance the sampling offers; no axis, range or structure is resolved, "
            "and the fitted model is not supported by the data")
    return "shorter_than_first_lag", (
        f"continuity is seen at {where} (Geary ratio {tn.ratio:.2f}, "
        f"{_p_text(tn)}) but not shown at {first}: if every structure is shorter than "
        "the first lag, the nugget cannot be separated from such short structures and the "
        "ranges at the lag scale rest on the fit alone; check the experimental variograms "
        "at the first lags")


def _p_text(test):
    """The p-value in words: a bound where the tail bound decided."""
    if test.method == "tail_bound":
        return f"p <= {test.p_value:.2g} by Cantelli's bound"
    return f"p = {test.p_value:.3g}"
