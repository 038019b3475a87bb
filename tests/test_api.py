"""The public API in anisotropy/__init__.py: every listed name resolves, and
the two functions that share their module's name stay functions however the
submodules were imported."""

import importlib
import inspect
import subprocess
import sys

import anisotropy


def test_every_public_name_resolves():
    for name in anisotropy.__all__:
        assert getattr(anisotropy, name) is not None, name


def test_functions_named_like_their_modules_stay_functions():
    # import the submodules first, the way other modules and users do
    importlib.import_module("anisotropy.discover")
    importlib.import_module("anisotropy.explore")
    import anisotropy.check  # noqa: F401  (imports discover internally)

    assert inspect.isfunction(anisotropy.discover)
    assert inspect.isfunction(anisotropy.explore)
    assert anisotropy.discover is importlib.import_module("anisotropy.discover").discover


def test_importing_the_package_does_not_compile_kernels():
    # lazy API: a bare import must not pull in numba (checked in a clean interpreter)
    code = "import sys, anisotropy; print('numba' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"
