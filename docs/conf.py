"""Sphinx configuration for the anisotropy documentation.

Build from the repository root:

    python -m sphinx -W --keep-going -b html docs docs/_build/html
"""

from __future__ import annotations

import os
import sys
import types

# Document the package in this checkout, not an installed copy elsewhere.
sys.path.insert(0, os.path.abspath(".."))
os.environ.setdefault("MPLBACKEND", "Agg")

# ``python -m anisotropy`` runs the command line when anisotropy/__main__.py
# is imported; the recursive API listing would import it, so it gets an empty
# stand-in (it has nothing to document).
sys.modules.setdefault("anisotropy.__main__", types.ModuleType("anisotropy.__main__"))

import anisotropy  # noqa: E402


def _public_names() -> str:
    """The autosummary lines of every name ``import anisotropy`` exports.

    Read from ``anisotropy.__all__`` and each object's ``__module__`` at build
    time, so the list follows the package when names or modules change.
    """
    lines = []
    for name in anisotropy.__all__:
        if name.startswith("__"):
            continue
        obj = getattr(anisotropy, name)
        lines.append(f"   {obj.__module__}.{name}")
    lines.sort(key=lambda line: (_FLOW.get(line.split(".")[1], 99), line))
    return "\n".join(lines) + "\n"


# modules in the order of the data flow (design.md); others go last
_FLOW = {name: i for i, name in enumerate(
    ["errors", "samples", "exploration", "transform", "geometry", "models",
     "simulate", "pairs", "estimators", "directional", "fitting", "uncertainty",
     "discovery", "pipeline", "check", "batch", "report", "cli"])}

with open(os.path.join(os.path.dirname(__file__), "_public_names.inc"), "w") as fh:
    fh.write(".. autosummary::\n\n" + _public_names())

project = "anisotropy"
author = "the anisotropy contributors"
copyright = "the anisotropy contributors, BSD-3-Clause"
release = anisotropy.__version__
version = release

extensions = [
    "sphinx.ext.autodoc",
    "sphinx.ext.autosummary",
    "numpydoc",
    "myst_parser",
]

source_suffix = {".rst": "restructuredtext", ".md": "markdown"}
root_doc = "index"
exclude_patterns = ["_build", "Thumbs.db", ".DS_Store"]
templates_path = ["_templates"]

# Markdown pages: headings get anchors so that pages can link to sections.
# No maths extension: formulas are written as text, so the pages need no
# script from outside to read offline.
myst_heading_anchors = 3

# API reference: one page per module, generated at build time (nothing
# generated is committed; docs/_build and docs/api/generated are ignored).
autosummary_generate = True
autosummary_imported_members = False
# members defined in each module only: a module's __all__ may re-export names
# documented on the page of the module that defines them
autodoc_default_options = {"members": True, "show-inheritance": False,
                           "ignore-module-all": True}
autodoc_typehints = "none"          # numpydoc's Parameters sections carry the types
autodoc_member_order = "bysource"

# numpydoc: the class pages list their members through autodoc, so numpydoc
# must not add a second autosummary table of them.
numpydoc_show_class_members = False
numpydoc_class_members_toctree = False
numpydoc_xref_param_type = False

# index.md lists "methods" and the model-file page (docs/model-file.md) through
# one glob, ``m*``: Sphinx warns about a glob that matches nothing and that
# warning cannot be suppressed, so the glob must always match "methods"; the
# build then passes with or without the model-file page.

html_theme = "alabaster"
html_title = f"anisotropy {release}"
html_static_path = []
html_show_sphinx = False
html_theme_options = {"show_powered_by": False}
