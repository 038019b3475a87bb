"""What the geologist must know before variography.

:func:`explore` gathers, for one domain and one grade:

* descriptive statistics (count, mean, standard deviation, CV, min, max,
  skewness) and quantiles;
* the declustered mean and standard deviation by cell declustering
  (:func:`cell_declustering`; Journel 1983, Math. Geol. 15(3); Isaaks &
  Srivastava 1989, *An Introduction to Applied Geostatistics*, ch. 10);
* top-cut candidates with the method behind each and the metal each removes
  (:func:`topcut_candidates`), and a flag for strongly skewed data;
* the nominal sample spacing and a suggested unit lag per direction class
  (:func:`nominal_spacing`);
* a linear and quadratic trend check (:func:`trend_check`).

Standard deviations here are population values (divisor n, or weights
summing to one), consistent between the raw and the declustered figures and
with the variogram sill.

``explore`` takes an :class:`anisotropy.samples.record.SampleSet` (the usual route)
or, for scripts and tests, plain arrays: ``explore(coords, values,
holes=None)``.

The package's modules, each with one job: :mod:`~anisotropy.exploration.summary`
(:func:`explore` and its record), :mod:`~anisotropy.exploration.declustering`,
:mod:`~anisotropy.exploration.spacing`, :mod:`~anisotropy.exploration.topcut`,
:mod:`~anisotropy.exploration.trend`, and :mod:`~anisotropy.exploration.common`
(the thresholds and small helpers they share).
"""

from anisotropy.exploration.common import (DEFAULT_QUANTILES, MAX_LAGS_AUTO, MIN_LAGS,
                                           STRONG_SKEW_CV, TREND_R2_THRESHOLD)
from anisotropy.exploration.declustering import Declustering, cell_declustering
from anisotropy.exploration.spacing import (Spacing, discovery_lags, footprint_spacing,
                                            nominal_spacing)
from anisotropy.exploration.summary import Exploration, explore
from anisotropy.exploration.topcut import (detect_logprob_break, suggested_topcut,
                                           topcut_candidates)
from anisotropy.exploration.trend import TrendCheck, trend_check


__all__ = [
    "DEFAULT_QUANTILES",
    "STRONG_SKEW_CV",
    "TREND_R2_THRESHOLD",
    "explore",
    "Exploration",
    "cell_declustering",
    "Declustering",
    "nominal_spacing",
    "Spacing",
    "topcut_candidates",
    "footprint_spacing",
    "suggested_topcut",
    "detect_logprob_break",
    "trend_check",
    "TrendCheck",
    "MIN_LAGS",
    "MAX_LAGS_AUTO",
    "discovery_lags",
]
