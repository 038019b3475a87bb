"""The lags (from the nominal spacing) and the one pass of the pair engine."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from anisotropy.errors import InputError, InsufficientDataError
from anisotropy.exploration import MIN_LAGS, Spacing, discovery_lags
from anisotropy.geometry import fan_for_spacing
from anisotropy.pairs import DEFAULT_COARSE_SPACING, LagVolume, estimate_pair_count
from anisotropy.pairs import build_volume as _build_volume
from anisotropy.uncertainty import engine_block_side

from anisotropy.discovery.params import PAIR_BUDGET


@dataclass(frozen=True)
class LagChoice:
    """Unit lag, number of lags, tolerance and reach of the lag classes."""

    unit_lag: float
    n_lags: int
    pairs_estimated: float | None = None
    choices: tuple[dict, ...] = ()
    warnings: tuple[str, ...] = ()

    @property
    def lag_tolerance(self) -> float:
        return self.unit_lag / 2

    @property
    def max_distance(self) -> float:
        return (self.n_lags + 0.5) * self.unit_lag

    def record(self) -> dict:
        """``lags`` of the result record."""
        return {"unit_lag": self.unit_lag, "n_lags": self.n_lags,
                "lag_tolerance": self.lag_tolerance, "max_distance": self.max_distance}


def _requested(lag, n_lags, max_d, extent, choices):
    lag = float(lag)
    if not lag > 0:
        raise InputError(f"the lag must be positive; got {lag}")
    choices.append({"choice": "unit lag", "value": lag, "reason": "as requested"})
    if n_lags is None:
        n_lags = int(np.clip(round(max_d / lag), 4, 200))
        choices.append({"choice": "number of lags", "value": n_lags,
                        "reason": f"half the largest extent of the domain ({extent:.0f} m, "
                                  "common practice) divided by the lag"})
    else:
        choices.append({"choice": "number of lags", "value": int(n_lags),
                        "reason": "as requested"})
    return lag, int(n_lags)


def _within_budget(coords, lag, n_lags, budget, choices):
    """Shorten the reach (keeping the number of lags) until the estimated pairs fit the budget."""
    d0 = (n_lags + 0.5) * lag
    est = estimate_pair_count(coords, d0)
    d = d0
    for _ in range(4):
        if est <= budget:
            break
        d = d * (budget / est) ** (1.0 / 2.5)
        est = estimate_pair_count(coords, d)
    if d < d0:
        # fewer lags first (the unit lag stays at the spacing), then a shorter lag
        n_new = int(math.floor(d / lag - 0.5))
        if n_new >= MIN_LAGS:
            how = f"the number of lags becomes {n_new} (unit lag kept at {lag:.3g} m)"
            n_lags = n_new
        else:
            n_lags = min(MIN_LAGS, n_lags)
            lag = float(f"{d / (n_lags + 0.5):.3g}")
            how = (f"{n_lags} lags of {lag:.3g} m (shorter than the nominal spacing: "
                   "the first lags hold few pairs)")
        for row in choices:
            if row["choice"] == "unit lag":
                row["value"] = lag
            if row["choice"] == "number of lags":
                row["value"] = n_lags
        choices.append({"choice": "maximum distance", "value": (n_lags + 0.5) * lag,
                        "reason": f"shortened from {d0:.0f} m to keep the single pass "
                                  f"over pairs near {budget:.1e} pairs (about "
                                  f"{est:.2e} estimated at the new distance): {how}. "
                                  "Give --lag and --n-lags to override"})
    return lag, n_lags, est


def choose_lags(coords, spacing: Spacing, *, has_holes=False, lag=None, n_lags=None,
                pair_budget=None) -> LagChoice:
    """The unit lag and number of lags, from the spacing unless given.

    Parameters
    ----------
    coords : ndarray (n, 3)
        Sample coordinates (local origin).
    spacing : anisotropy.exploration.spacing.Spacing
        The nominal spacing (:func:`anisotropy.exploration.spacing.nominal_spacing`).
    has_holes : bool
        The samples carry hole ids.
    lag, n_lags : optional
        Asked for by the user (no pair budget then).
    pair_budget : float, optional
        With automatic lags, the reach is shortened until the estimated pair
        count is within this (default ``PAIR_BUDGET``).

    Raises
    ------
    InsufficientDataError
        All samples at one location.
    InputError
        A lag that is not positive.
    """
    budget = PAIR_BUDGET if pair_budget is None else float(pair_budget)
    c = np.asarray(coords, float)
    extent = float(np.max(c.max(axis=0) - c.min(axis=0)))
    if extent <= 0:
        raise InsufficientDataError("all samples sit at one location: no lag can be formed")
    max_d = 0.5 * extent
    holes = has_holes and getattr(spacing, "n_holes", None)
    choices: list[dict] = []
    est = None
    if lag is not None:
        lag, n_lags = _requested(lag, n_lags, max_d, extent, choices)
    else:
        lag, n_lags, rows = discovery_lags(spacing, has_holes=bool(holes), n_lags=n_lags)
        choices += rows
        lag, n_lags, est = _within_budget(c, lag, n_lags, budget, choices)
    choices.append({"choice": "lag tolerance", "value": lag / 2,
                    "reason": "half the lag (common practice; classes are contiguous)"})
    return LagChoice(unit_lag=lag, n_lags=n_lags, pairs_estimated=est, choices=tuple(choices))


# -- the pair engine ------------------------------------------------------------------------

@dataclass(frozen=True)
class PairVolume:
    """The lag-vector volume of the one pass over pairs, with its bootstrap blocks if kept.

    ``block_side`` is None when the pass kept no block sums (no block
    bootstrap was asked for).
    """

    volume: LagVolume
    block_side: float | None
    choices: tuple[dict, ...] = ()
    warnings: tuple[str, ...] = ()

    @property
    def has_blocks(self) -> bool:
        """True when the volume holds block sums for the block bootstrap."""
        return self.block_side is not None

    @property
    def n_pairs(self) -> int:
        return int(self.volume.n_pairs)

    @property
    def coarse_directions(self) -> np.ndarray:
        return np.asarray(self.volume.coarse_directions, float)


def build_volume(coords, values, lags: LagChoice, *, estimator="semivariogram",
                 coarse_spacing=None, progress=False, source="<table>",
                 blocks=True) -> PairVolume:
    """One pass over the pairs into the lag-vector volume.

    Only the chosen estimator's channels are kept: everything downstream (fits,
    fan, maps, the bootstrap's block sums, the report) reads that estimator.
    With ``blocks`` the pass also keeps block sums, the blocks sized for the
    block bootstrap (:func:`anisotropy.uncertainty.blocks.engine_block_side`).
    Blocks partition the pairs; they cost about as much as the fine sums
    themselves (half the pass on 89k blast holes, most of it on a domain of
    2,000 composites). ``discover`` leaves them out of the fit's pass and a
    bootstrap or check makes one more pass with them
    (``Discovery.volume_with_blocks``): a pass with blocks adds the fine sums
    in another order, and on drill holes that changed the answer.

    Raises
    ------
    InsufficientDataError
        Fewer than 100 pairs within the reach.
    """
    side = float(engine_block_side(coords, max_side=lags.max_distance)) if blocks else None
    choice = {"choice": "bootstrap blocks", "value": side,
              "reason": "block side giving about 100 occupied blocks, so that the block "
                        "bootstrap has room to resample "
                        "(anisotropy.uncertainty.blocks.engine_block_side)" if blocks else
                        "the fit's pass keeps no block sums: a bootstrap or check makes its "
                        "own pass with them, so that the answer does not depend on whether "
                        "one follows"}
    coarse = fan_for_spacing(DEFAULT_COARSE_SPACING if coarse_spacing is None
                             else coarse_spacing)
    volume = _build_volume(coords, values, lag=lags.unit_lag, n_lags=lags.n_lags,
                           coarse_directions=coarse, progress=progress, channels=estimator,
                           block_channels=estimator, map_channels=estimator,
                           blocks=side if blocks else False)
    if int(volume.n_pairs) < 100:
        raise InsufficientDataError(
            f"{source}: only {int(volume.n_pairs)} pairs of samples within "
            f"{lags.max_distance:.3g} m; a 3D variogram needs thousands. Use a longer "
            "lag (--lag) or more lags (--n-lags), or add samples.")
    return PairVolume(volume=volume, block_side=side, choices=(choice,))
