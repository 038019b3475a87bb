"""Stand-ins for the uncertainty tests: a lag volume, a model and a refit, small and exact.

Not a test module (no ``test_`` prefix): the block, replicate and result tests
import it. The stand-in volume holds per-block sums of a noisy directional
signal of a known tensor; the stand-in refit reads the frame back by least
squares, so every replicate is cheap and its answer known.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.spatial.transform import Rotation

from anisotropy.geometry import fibonacci_hemisphere

@dataclass
class _Structure:
    kind: str
    sill: float
    ranges: tuple
    frame: object = None


class StandInModel:
    """Just enough of models.NestedModel: one spherical structure in a frame."""

    def __init__(self, nugget, sill, ranges, frame):
        self.nugget = float(nugget)
        self.structures = [_Structure("spherical", float(sill), tuple(map(float, ranges)))]
        self.frame = np.asarray(frame, dtype=float)

    @property
    def total_sill(self):
        return self.nugget + sum(s.sill for s in self.structures)

    def _scale(self, u):
        u = np.asarray(u, dtype=float)
        return np.linalg.norm((self.frame.T @ (u / np.linalg.norm(u))) /
                              np.asarray(self.structures[0].ranges))

    def range_along(self, u):
        return 1.0 / self._scale(u)

    def variogram_along(self, u, d):
        h = np.minimum(np.asarray(d, dtype=float) * self._scale(u), 1.0)
        return self.nugget + self.structures[0].sill * (1.5 * h - 0.5 * h ** 3)


DIRECTIONS = fibonacci_hemisphere(12)


class StandInVolume:
    """A LagVolume-like object: per-block sums of a noisy directional signal."""

    def __init__(self, shape, size, rng, true_tensor, noise=0.5):
        self.block_shape = tuple(shape)
        self.block_size = np.asarray(size, dtype=float)
        self.block_origin = np.zeros(3)
        nb = int(np.prod(shape))
        self.lag, self.n_lags = 10.0, 2
        self.coarse_directions = DIRECTIONS
        sig = np.einsum("ji,ik,jk->j", DIRECTIONS, true_tensor, DIRECTIONS)
        bs = np.zeros((nb, 3, len(DIRECTIONS), 15))
        cnt = rng.integers(5, 15, size=(nb, len(DIRECTIONS)))
        bs[:, 1, :, 0] = cnt
        bs[:, 1, :, 2] = cnt * sig * (1 + noise * rng.standard_normal((nb, len(DIRECTIONS))))
        self.block_sums = bs
        self.block_of_sample = np.arange(nb)

    def coarse_sums(self, block_weights=None):
        w = np.ones(len(self.block_sums)) if block_weights is None else block_weights
        return np.tensordot(w, self.block_sums, axes=(0, 0))


def stand_in_refit(sums, *, fixed_frame=None, start=None, block_weights=None):
    """Frame from a least-squares tensor through the directional mean squares."""
    g = sums[1, :, 2] / sums[1, :, 0]
    A = np.stack([np.outer(d, d)[np.triu_indices(3)] for d in DIRECTIONS])
    coef, *_ = np.linalg.lstsq(A, g, rcond=None)
    T = np.zeros((3, 3))
    T[np.triu_indices(3)] = coef
    T = (T + T.T) - np.diag(np.diag(T))
    w, v = np.linalg.eigh(T)
    order = np.argsort(w)[::-1]
    v = v[:, order]
    if np.linalg.det(v) < 0:
        v[:, 2] *= -1
    frame = fixed_frame if fixed_frame is not None else v
    ranges = 100.0 * np.sqrt(np.maximum(np.diag(frame.T @ T @ frame), 1e-6))
    resid = g - A @ coef
    return StandInModel(0.1, 0.9, ranges, frame), float(resid @ resid)


def truth():
    R = Rotation.from_euler("zyx", [30, 20, 10], degrees=True).as_matrix()
    return R @ np.diag([9.0, 4.0, 1.0]) @ R.T


def reference(vol):
    return stand_in_refit(vol.coarse_sums())[0]
