"""Fit bins: one experimental point per (lag class, direction cell).

The pair engine accumulates, per distance class and per direction cell, the
sums every estimator needs (``anisotropy.pairs.CHANNELS``).  A *fit bin* is
one (lag class, cell) with enough pairs: its mean canonical lag vector
(``dx, dy, dz`` channel sums divided by the count), its mean distance, the
estimator's value and the pair count.  The joint nested fit works on all fit
bins at once, so the orientation comes from the whole lag-vector volume and
not from one direction at a time.

Excluded, and counted in :attr:`FitBins.excluded`:

* class 0 (the shortest pairs, including coincident points): its mean lag is
  not representative of a class and the nugget is taken from classes >= 1;
* bins with fewer than ``min_pairs`` pairs (common practice: 30 pairs per
  experimental point; the default here is lower because a bin is one cell of
  a 3D volume, and the Cressie weights already give thin bins little say);
* bins where the estimator is undefined (NaN), e.g. a correlogram of a
  constant head set.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

# the pair engine's channel order, from the one place it is written
from anisotropy.constants import CHANNEL_INDEX
from anisotropy.constants import CHANNELS as _CHANNELS
from anisotropy.estimators import estimate

__all__ = ["FitBins", "bins_from_sums", "CHANNEL_INDEX", "DEFAULT_MIN_PAIRS"]

DEFAULT_MIN_PAIRS = 10


@dataclass
class FitBins:
    """Experimental points of the lag-vector volume used by the joint fit.

    Attributes
    ----------
    lags : ndarray (m, 3)
        Mean canonical lag vector of the bin's pairs (east, north, up).
    distance : ndarray (m,)
        Mean pair distance.
    gamma : ndarray (m,)
        Estimator value (variogram-like: 0 at the origin, rising to the sill).
    pairs : ndarray (m,)
        Pair count.
    direction_index : ndarray (m,) int
        Direction cell of the bin (index into the ``directions`` given).
    lag_index : ndarray (m,) int
        Distance class (1..n_lags).
    weight : ndarray (m,)
        Information weight used in place of the raw pair count by the fit
        (equal to ``pairs`` unless a caller caps it, see
        :func:`anisotropy.fitting.cap_weights`).
    excluded : dict
        What was left out and how many bins, by reason.
    """

    lags: np.ndarray
    distance: np.ndarray
    gamma: np.ndarray
    pairs: np.ndarray
    direction_index: np.ndarray
    lag_index: np.ndarray
    weight: np.ndarray = None
    excluded: dict = field(default_factory=dict)

    def __post_init__(self):
        if self.weight is None:
            self.weight = np.asarray(self.pairs, dtype=float).copy()

    @property
    def n(self) -> int:
        """Number of bins."""
        return int(self.gamma.shape[0])

    def subset(self, mask) -> "FitBins":
        """The bins where ``mask`` is true."""
        mask = np.asarray(mask)
        return FitBins(self.lags[mask], self.distance[mask], self.gamma[mask],
                       self.pairs[mask], self.direction_index[mask], self.lag_index[mask],
                       self.weight[mask], dict(self.excluded))

    def to_dict(self) -> dict:
        """Summary counts (JSON-ready)."""
        return {"bins": self.n, "pairs": int(np.sum(self.pairs)),
                "excluded": {k: int(v) for k, v in self.excluded.items()}}


def _estimate(sums, estimator):
    if estimator == "semivariogram":
        # Matheron (1963): gamma = sum (dz)^2 / (2 N); computed here directly so
        # that the hot bootstrap path does not go through the dispatcher.
        n = sums[..., CHANNEL_INDEX["count"]]
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(n > 0, sums[..., CHANNEL_INDEX["sq"]] / (2.0 * n), np.nan)

    return np.asarray(estimate(sums, estimator), dtype=float)


def bins_from_sums(sums, directions=None, *, estimator="semivariogram",
                   min_pairs=DEFAULT_MIN_PAIRS, keep_class0=False) -> FitBins:
    """Turn coarse-direction sums into fit bins.

    Parameters
    ----------
    sums : ndarray (n_lags + 1, n_dir, n_channels)
        Sums per distance class and direction cell, e.g.
        ``LagVolume.coarse_sums(block_weights)``; channels in the order of
        ``anisotropy.pairs.CHANNELS``.  Counts may be fractional (re-weighted
        blocks).
    directions : ndarray (n_dir, 3), optional
        The cell directions (strongly advised: used where a cell's mean lag
        vector has cancelled, see the notes in the code).
    estimator : str
        One of ``anisotropy.estimators.ESTIMATORS``.
    min_pairs : float
        Bins with fewer pairs are left out (counted in ``excluded``).
    keep_class0 : bool
        Keep distance class 0 (default: fold it out, see module notes).

    Returns
    -------
    FitBins
    """
    sums = np.asarray(sums, dtype=float)
    if sums.ndim != 3 or sums.shape[2] < len(_CHANNELS):
        raise ValueError(f"sums must be (n_lags+1, n_dir, {len(_CHANNELS)}); got {sums.shape}")
    if directions is not None and np.asarray(directions).shape[0] != sums.shape[1]:
        raise ValueError("directions and sums disagree on the number of direction cells")
    count = sums[..., CHANNEL_INDEX["count"]]
    # Estimate only the bins the fit may use: a bin of one or two pairs has no
    # head/tail variance, and the correlogram's warning about it would be noise
    # for bins that are left out below anyway (they come out NaN, as empty bins do).
    usable = (count >= min_pairs)[..., None]
    gamma = _estimate(np.where(usable, sums, 0.0), estimator)
    lag_index, dir_index = np.meshgrid(np.arange(sums.shape[0]), np.arange(sums.shape[1]),
                                       indexing="ij")
    excluded = {}
    keep = count > 0
    if not keep_class0:
        c0 = keep & (lag_index == 0)
        excluded["class 0 (shortest pairs; nugget taken from classes >= 1)"] = int(c0.sum())
        keep &= lag_index > 0
    thin = keep & (count < min_pairs)
    excluded[f"fewer than {min_pairs:g} pairs"] = int(thin.sum())
    keep &= count >= min_pairs
    bad = keep & ~np.isfinite(gamma)
    excluded["estimator undefined"] = int(bad.sum())
    keep &= np.isfinite(gamma)
    n = count[keep]
    lags = np.stack([sums[..., CHANNEL_INDEX[c]][keep] / n for c in ("dx", "dy", "dz")], axis=1)
    distance = sums[..., CHANNEL_INDEX["dist"]][keep] / n
    # The mean lag vector is shorter than the mean distance when the cell's
    # pairs point different ways; at the rim of the hemisphere a cell holds
    # near-horizontal lags of both senses (canonical orientation keeps z <= 0),
    # which cancel.  The bin's lag is the mean vector's direction at the mean
    # distance, or the cell direction where the mean vector has shrunk below
    # 90 % of the distance (counted in ``rim_bins``).
    norm = np.linalg.norm(lags, axis=1)
    shrunk = norm < 0.9 * distance
    rim = 0
    if directions is not None:
        cell = np.asarray(directions, float)[dir_index[keep]]
        lags = np.where(shrunk[:, None], cell * distance[:, None],
                        lags * (distance / np.maximum(norm, 1e-300))[:, None])
        rim = int(shrunk.sum())
    else:
        lags = lags * (distance / np.maximum(norm, 1e-300))[:, None]
    out = FitBins(lags=lags, distance=distance, gamma=gamma[keep], pairs=n.copy(),
                  direction_index=dir_index[keep].astype(int),
                  lag_index=lag_index[keep].astype(int), excluded=excluded)
    out.rim_bins = rim
    return out
