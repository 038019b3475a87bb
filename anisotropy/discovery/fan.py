"""The fan of directional variograms and a range per direction (the starting shape).

A range is read along every fan direction (about 5 degrees apart) under the
nugget and sill of an isotropic fit over all bins; directions too thin at the
stated tolerance are re-read at a wider one, and those still thin are marked
and not used.  The robust ellipsoid through the reliable ranges gives the
first starting frame and the starting ranges of every start.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from anisotropy.directional import Fan, variogram_fan
from anisotropy.fitting import (DirectionRanges, EllipsoidFit, FitBins, direction_ranges,
                                fit_ellipsoid, fit_nested)
from anisotropy.geometry import fan_for_spacing
from anisotropy.pairs import LagVolume

from anisotropy.discovery.params import DEFAULT_ANGULAR_TOLERANCE, WIDE_ANGULAR_TOLERANCE


@dataclass(frozen=True)
class FanRanges:
    """Directional variograms along the fan and one range per direction.

    Attributes
    ----------
    directions : ndarray (n_dir, 3)
    fan : anisotropy.directional.Fan
        The fan at the stated tolerance (thin directions as read there).
    distance, value, pairs : ndarray (n_dir, n_lags + 1)
        The fan's lags with thin directions re-read at the wide tolerance.
    ranges : DirectionRanges
        Under the isotropic fit's nugget and sill.
    tolerance : float
        The stated angular tolerance (degrees).
    widened : ndarray of bool (n_dir,)
        Directions re-read at ``WIDE_ANGULAR_TOLERANCE``.
    nugget, sill, iso_range : float
        The isotropic one-structure fit over all bins (the shared nugget and
        sill, and its mean range).
    kind : str
        The structure kind of the direction ranges.
    ellipsoid : EllipsoidFit or None
        The robust ellipsoid through the reliable ranges (None: too few).
    min_pairs : float
        Fewest pairs of a fan lag.
    """

    directions: np.ndarray
    fan: Fan
    distance: np.ndarray
    value: np.ndarray
    pairs: np.ndarray
    ranges: DirectionRanges
    tolerance: float
    widened: np.ndarray
    nugget: float
    sill: float
    iso_range: float
    kind: str
    ellipsoid: EllipsoidFit | None
    min_pairs: float
    choices: tuple[dict, ...] = ()
    warnings: tuple[str, ...] = ()

    @property
    def tolerances(self) -> np.ndarray:
        """The angular tolerance each direction was read at."""
        return np.where(self.widened, WIDE_ANGULAR_TOLERANCE, self.tolerance)


def isotropic_fit(bins: FitBins, total, kind, fixed_nugget=None):
    """Isotropic 1-structure fit over all bins: nugget, sill, range (for starts)."""
    a0 = float(np.median(bins.distance))
    start = (np.eye(3), 0.1 * (total or np.nanmax(bins.gamma)),
             [0.9 * (total or np.nanmax(bins.gamma))], [[a0, a0, a0]], (kind,))
    # isotropy: three equal ranges is reached by a fixed frame and a fit whose
    # anisotropy is free; we only need nugget and sill here
    return fit_nested(bins, start, fixed_frame=np.eye(3), fixed_nugget=fixed_nugget,
                      total_sill=total, make_model=False, max_nfev=200)


def _fan_choices(n_dir, fan_spacing, angular_tolerance, tol):
    return ({"choice": "direction fan", "value": f"{n_dir} directions",
             "reason": f"Fibonacci lattice on the lower hemisphere (Gonzalez 2010), "
                       f"about {fan_spacing:g} degrees apart"},
            {"choice": "angular tolerance", "value": tol,
             "reason": "as requested" if angular_tolerance is not None else
             "common practice (15-22.5 degrees); directions thin at this tolerance "
             f"are re-read at {WIDE_ANGULAR_TOLERANCE:g} degrees"})


def fan_ranges(volume: LagVolume, bins: FitBins, *, total, fixed_nugget=None,
               kind="spherical", fan_spacing=5.0, angular_tolerance=None, bandwidth=None,
               estimator="semivariogram", min_pairs=30.0, planar=False, seed=0) -> FanRanges:
    """Directional variograms along a fan and a range per direction.

    Parameters
    ----------
    volume : LagVolume
    bins : FitBins
        The weighted fit bins (for the isotropic nugget and sill).
    total : float or None
        Total sill constraint.
    fixed_nugget : float, optional
        Nugget held (down-hole).
    kind : str
        Structure kind of the direction ranges.
    fan_spacing : float
        Degrees between fan directions.
    angular_tolerance : float, optional
        Half-angle of the fan's cones (default 15, thin directions widened to 30).
    bandwidth : float, optional
    estimator : str
    min_pairs : float
        Fewest pairs of a fan lag.
    planar : bool
        Planar data (no warning about few usable directions).
    seed : int
        Seed of the ellipsoid fit's starts.
    """
    iso = isotropic_fit(bins, total, kind, fixed_nugget)
    nug0 = iso.nugget if fixed_nugget is None else fixed_nugget
    sill0 = float(np.sum(iso.sills))
    dirs = fan_for_spacing(fan_spacing)
    tol = DEFAULT_ANGULAR_TOLERANCE if angular_tolerance is None else float(angular_tolerance)
    fan = variogram_fan(volume, dirs, angular_tolerance=tol, bandwidth=bandwidth,
                        estimator=estimator)
    # copies: thin directions are re-read at a wider tolerance below, and ``fan`` must stay
    # the fan at the stated tolerance
    dist, gval, npairs = (np.array(fan.distance, float), np.array(fan.value, float),
                          np.array(fan.pairs, float))
    dr = direction_ranges(dirs, dist, gval, npairs, nugget=nug0, sill=sill0, kind=kind,
                          min_pairs=min_pairs)
    thin = np.zeros(len(dirs), bool)
    if angular_tolerance is None and dr.n_thin > 0:
        thin = np.array([f == "thin" for f in dr.flag])
        fan_w = variogram_fan(volume, dirs[thin], angular_tolerance=WIDE_ANGULAR_TOLERANCE,
                              bandwidth=bandwidth, estimator=estimator)
        dist[thin], gval[thin], npairs[thin] = fan_w.distance, fan_w.value, fan_w.pairs
        dr = direction_ranges(dirs, dist, gval, npairs, nugget=nug0, sill=sill0, kind=kind,
                              min_pairs=min_pairs)
    usable = dr.usable
    warnings = []
    if usable.sum() < 6 and not planar:
        warnings.append(f"only {int(usable.sum())} fan directions have enough pairs for a "
                        "range; the ellipsoid start is weak and the joint fit carries the "
                        "orientation alone")
    try:
        ell = fit_ellipsoid(dirs[usable], dr.range[usable], dr.reliability[usable],
                            seed=seed, n_starts=4)
    except ValueError:  # fewer than four usable directions
        ell = None
    return FanRanges(directions=dirs, fan=fan, distance=dist, value=gval, pairs=npairs,
                     ranges=dr, tolerance=tol, widened=thin, nugget=float(nug0),
                     sill=sill0, iso_range=float(np.asarray(iso.ranges)[0].mean()),
                     kind=kind, ellipsoid=ell, min_pairs=min_pairs,
                     choices=_fan_choices(len(dirs), fan_spacing, angular_tolerance, tol),
                     warnings=tuple(warnings))
