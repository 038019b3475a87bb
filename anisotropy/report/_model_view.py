"""The fitted model as seen by the pairs of a directional variogram.

A directional experimental variogram pools every pair inside an angular
cone. With strong anisotropy those pairs are not "along the axis": a pair
15 degrees off a 124 m major axis at 30 m has about 8 m along a 10 m minor
axis, so its variogram is far higher than the model evaluated exactly along
the axis. Comparing the points with the along-axis curve then suggests a bad
fit where the joint fit (which uses each bin's mean lag vector) is right.

:func:`model_over_pairs` gives the like-for-like comparison: for each lag
class, the pair-weighted mean of the model evaluated at the mean lag vector
of each fine bin the cone takes. A bin's lag is the mean lag vector's
direction at the bin's mean distance, with the same rim rule as
:func:`anisotropy.fitting.bins_from_sums` (the cell direction where the mean
vector has shrunk below 90 % of the mean distance), so it is what the fit
itself sees. Inside one fine bin (one lag class, about 2 degrees of
direction) the model is taken as constant at that lag: the value is exact
when every bin holds pairs with one lag vector, and otherwise off by at most
the model's change across a bin.
"""

from __future__ import annotations

import numpy as np

from anisotropy.errors import InputError

__all__ = ["model_over_pairs", "volume_model_view"]

#: mean vector shorter than this fraction of the mean distance: use the cell
#: direction (the rim rule of anisotropy.fitting.bins_from_sums)
RIM_FRACTION = 0.9


def _channel(name):
    from anisotropy.pairs import CHANNELS

    return CHANNELS.index(name)


def model_over_pairs(sums, directions, mask, variogram):
    """Pair-weighted mean of a model over the fine bins a direction takes.

    Parameters
    ----------
    sums : ndarray, shape (n_lags + 1, n_fine, n_channels)
        Fine sums of a :class:`anisotropy.pairs.LagVolume` (channels in
        ``anisotropy.pairs.CHANNELS`` order; ``count``, ``dist``, ``dx``,
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
    count = sums[..., _channel("count")]
    use = mask & (count > 0)
    k_idx, f_idx = np.nonzero(use)
    out = np.full(sums.shape[0], np.nan)
    if k_idx.size == 0:
        return out
    n = count[k_idx, f_idx]
    sel = sums[k_idx, f_idx]
    mean_vec = np.stack([sel[:, _channel(c)] for c in ("dx", "dy", "dz")], axis=1) / n[:, None]
    dist = sel[:, _channel("dist")] / n
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
