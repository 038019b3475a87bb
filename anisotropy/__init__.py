"""anisotropy: discover 3D grade-continuity anisotropy in domained sample data.

The public API is listed here and nowhere else. Names are imported lazily
so that ``import anisotropy`` stays fast and does not compile the Numba
kernels until they are used.
"""

from __future__ import annotations

import importlib
import sys
import types

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
    "explore": "explore",
    "Exploration": "explore",
    "cell_declustering": "explore",
    "nominal_spacing": "explore",
    "topcut_candidates": "explore",
    "trend_check": "explore",
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
    "discover": "discover",
    "Discovery": "discover",
    "DiscoverParams": "discover",
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


# Two public functions share their module's name (``discover`` in
# discover.py, ``explore`` in explore.py). Importing such a submodule would
# normally bind the package attribute to the module and hide the function,
# so the package refuses that one binding: ``anisotropy.discover`` is always
# the function, and the module is reached with
# ``importlib.import_module("anisotropy.discover")`` or
# ``from anisotropy.discover import Discovery``.
_SHADOWED = frozenset(name for name, module in _PUBLIC.items() if name == module)


class _Package(types.ModuleType):
    def __setattr__(self, name, value):
        if name in _SHADOWED and isinstance(value, types.ModuleType):
            return
        super().__setattr__(name, value)


sys.modules[__name__].__class__ = _Package
