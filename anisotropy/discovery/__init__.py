"""The discovery chain as typed stages, and the ``Discovery`` result.

Each stage is a function returning a small frozen record that carries its
own ``choices`` and ``warnings``; :func:`anisotropy.discover` runs them in
the order of the data flow and times each.  The stages, in that order:

=========================  ==================================================
stage                      returns
=========================  ==================================================
``DiscoverParams``         the settings, checked once
``read``, ``prepare``      ``SampleSet``, ``Prepared``
``choose_transform``       ``TransformChoice``
``choose_sill``            ``SillChoice``
``choose_lags``            ``LagChoice``
``build_volume``           ``PairVolume`` (blocks when a block bootstrap follows)
``weighted_bins``          ``WeightedBins``
``fan_ranges``             ``FanRanges``
``starting_frames``        tuple of ``Start``
``search_orientation``     ``Search``
``choose_structures``      ``Refinement`` (selection, then
                           :func:`anisotropy.fitting.refine.refine_frame`)
``diagnose``               ``Diagnostics``
=========================  ==================================================

After the chain, :meth:`Discovery.grade_refit` refits the grades' own
semivariogram with the discovered frame held
(:func:`~anisotropy.discovery.grades.refit_grades`), for the model in grade
units where the Hermite route does not apply.
"""

from anisotropy.discovery.bins import WeightedBins, weighted_bins
from anisotropy.discovery.diagnose import Diagnostics, diagnose, with_bootstrap
from anisotropy.discovery.fan import FanRanges, fan_ranges
from anisotropy.discovery.grades import GradeRefit, refit_grades
from anisotropy.discovery.lags import LagChoice, PairVolume, build_volume, choose_lags
from anisotropy.discovery.params import DiscoverParams
from anisotropy.discovery.prepare import (Prepared, SillChoice, TransformChoice, choose_sill,
                                          choose_transform, prepare, read)
from anisotropy.discovery.result import (CAUTION, PLANAR_CAUTION, SCHEMA, Discovery,
                                         RefitState)
from anisotropy.discovery.search import (FitSettings, Search, Start, search_orientation,
                                         starting_frames)
from anisotropy.discovery.structures import Refinement, choose_structures, refinement_applies

__all__ = ["DiscoverParams", "read", "prepare", "Prepared", "choose_transform",
           "TransformChoice", "choose_sill", "SillChoice", "choose_lags", "LagChoice",
           "build_volume", "PairVolume", "weighted_bins", "WeightedBins", "fan_ranges",
           "FanRanges", "starting_frames", "Start", "FitSettings", "search_orientation",
           "Search", "choose_structures", "refinement_applies", "Refinement", "diagnose",
           "Diagnostics", "with_bootstrap", "Discovery", "RefitState", "SCHEMA", "CAUTION",
           "PLANAR_CAUTION", "GradeRefit", "refit_grades"]
