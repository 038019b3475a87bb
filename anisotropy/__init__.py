"""anisotropy: discover 3D grade-continuity anisotropy in domained sample data.

The public API is listed here and nowhere else. Names are imported lazily
so that ``import anisotropy`` stays fast and does not compile the Numba
kernels until they are used.
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"

# public name -> module that defines it
_PUBLIC = {
    # errors
    "AnisotropyError": "errors",
    "InputError": "errors",
    "ColumnError": "errors",
    "DataError": "errors",
    "InsufficientDataError": "errors",
    "InterpretationError": "errors",
    "FitError": "errors",
    # samples
    "read_table": "samples",
    "read_samples": "samples",
    "samples_from_frame": "samples",
    "SampleSet": "samples",
    # exploration
    "explore": "exploration",
    "Exploration": "exploration",
    "cell_declustering": "exploration",
    "nominal_spacing": "exploration",
    "topcut_candidates": "exploration",
    "trend_check": "exploration",
    # transforms
    "NormalScore": "transform",
    "apply_transform": "transform",
    # models and simulation
    "Structure": "models",
    "NestedModel": "models",
    "simulate_field": "simulate",
    # pair engine and experimental variograms
    "LagVolume": "pairs",
    "build_volume": "pairs",
    "experimental_variogram": "directional",
    "variogram_fan": "directional",
    "variogram_map": "directional",
    # discovery, uncertainty, checking, batch
    "discover": "pipeline",
    "Discovery": "discovery",
    "DiscoverParams": "discovery",
    "check_interpretation": "check",
    "CheckResult": "check",
    "run_batch": "batch",
    # the plain model export and the model in grade units
    "write_model_files": "modelfile",
    "grade_model": "hermite",
}

__all__ = sorted(_PUBLIC) + ["__version__"]


def __getattr__(name: str):
    try:
        module = _PUBLIC[name]
    except KeyError:
        raise AttributeError(f"module 'anisotropy' has no attribute {name!r}") from None
    value = getattr(importlib.import_module(f"anisotropy.{module}"), name)
    globals()[name] = value
    return value


def __dir__():
    return __all__
