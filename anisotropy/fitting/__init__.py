"""Pure fitting: arrays in, parameters out (see issue 4).

Imports models, geometry and estimators only (and Numba for the likelihood's
loop); knows nothing of the pair engine, the bootstrap or the discovery chain.

* :mod:`~anisotropy.fitting.bins` - fit bins from coarse-direction sums;
* :mod:`~anisotropy.fitting.ranges` - one range per direction under a shared
  nugget and sill, with reliability and "thin" flags;
* :mod:`~anisotropy.fitting.ellipsoid` - robust ellipsoid fit to ranges, the
  linear baseline, the inertia axes of the low-variability region;
* :mod:`~anisotropy.fitting.nested` - the joint nested-model fit (Cressie
  1985 weights, rotation vector, log-ranges, robust loss);
* :mod:`~anisotropy.fitting.selection` - the number of structures;
* :mod:`~anisotropy.fitting.likelihood` - the frame refined by a
  nearest-neighbour Gaussian likelihood (Vecchia 1988) of the samples.
"""

from anisotropy.fitting.bins import FitBins, bins_from_sums
from anisotropy.fitting.ellipsoid import (EllipsoidFit, ellipsoid_range, fit_ellipsoid,
                                          inertia_frame, linear_ellipsoid, order_frame)
from anisotropy.fitting.likelihood import (LikelihoodFit, refine_frame_likelihood,
                                           vecchia_negloglik, vecchia_neighbours)
from anisotropy.fitting.nested import NestedFit, fit_nested, model_gamma, rho
from anisotropy.fitting.ranges import DirectionRanges, direction_ranges
from anisotropy.fitting.selection import Selection, bic, select_structures

__all__ = ["FitBins", "bins_from_sums", "DirectionRanges", "direction_ranges", "EllipsoidFit",
           "fit_ellipsoid", "linear_ellipsoid", "ellipsoid_range", "inertia_frame",
           "order_frame", "NestedFit", "fit_nested", "model_gamma", "rho", "Selection",
           "select_structures", "bic", "LikelihoodFit", "refine_frame_likelihood",
           "vecchia_negloglik", "vecchia_neighbours"]
