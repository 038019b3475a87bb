"""The public API in anisotropy/__init__.py: every listed name resolves, and
the public functions stay functions however the submodules were imported."""

import importlib
import inspect
import subprocess
import sys

import anisotropy


def test_every_public_name_resolves():
    # each listed name is a class or function defined in the package, and the package
    # hands out the very object its module defines (not a copy or a stand-in)
    for name in anisotropy.__all__:
        obj = getattr(anisotropy, name)
        if name == "__version__":
            continue
        assert inspect.isclass(obj) or inspect.isfunction(obj), name
        assert obj.__module__.startswith("anisotropy."), (name, obj.__module__)
        assert getattr(importlib.import_module(obj.__module__), name) is obj, name


def test_version_is_the_project_version():
    # the version in pyproject.toml (read with the standard library's TOML parser)
    try:
        import tomllib
    except ImportError:  # Python 3.10
        import tomli as tomllib
    from pathlib import Path

    project = tomllib.loads((Path(__file__).resolve().parents[1] / "pyproject.toml")
                            .read_text(encoding="utf-8"))["project"]
    assert anisotropy.__version__ == project["version"]


def test_public_functions_stay_functions_after_their_modules_are_imported():
    # import the submodules first, the way other modules and users do
    importlib.import_module("anisotropy.pipeline")
    importlib.import_module("anisotropy.exploration")
    import anisotropy.check  # noqa: F401  (imports discover internally)

    assert inspect.isfunction(anisotropy.discover)
    assert inspect.isfunction(anisotropy.explore)
    assert anisotropy.discover is importlib.import_module("anisotropy.pipeline").discover


def test_importing_the_package_does_not_compile_kernels():
    # lazy API: a bare import must not pull in numba (checked in a clean interpreter)
    code = "import sys, anisotropy; print('numba' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"
