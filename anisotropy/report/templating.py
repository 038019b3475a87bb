"""The Jinja2 templates of the HTML pages, rendered with autoescape on.

The markup of the report (``report.html.j2``), the batch index
(``index.html.j2``) and the page frame they share (``base.html.j2``, with
the inline style sheet and the Content-Security-Policy) lives in
``anisotropy/report/templates``, shipped as package data. Python code
hands the templates plain values; Jinja2 escapes every one of them, so a
string that came from the input (file, column and domain names, warnings
that quote them) is shown as text and never read as markup.

The one value marked safe is the figure data URI of :func:`png_data_uri`,
for the reason given there.
"""

from __future__ import annotations

import base64
from functools import lru_cache
from typing import Any

import jinja2
from markupsafe import Markup

__all__ = ["environment", "render", "png_data_uri"]


def _blank_none(value: Any) -> Any:
    """``None`` prints as nothing (not as the word "None")."""
    return "" if value is None else value


@lru_cache(maxsize=1)
def environment() -> jinja2.Environment:
    """The package's Jinja2 environment: package templates, autoescape on.

    Returns
    -------
    jinja2.Environment
        Loads from ``anisotropy/report/templates`` (so it works from a
        non-editable install), escapes every ``{{ value }}``, prints ``None``
        as nothing and refuses an undefined name instead of printing nothing.
    """
    return jinja2.Environment(
        loader=jinja2.PackageLoader("anisotropy.report", "templates"),
        autoescape=True,
        undefined=jinja2.StrictUndefined,
        finalize=_blank_none,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
    )


def render(template: str, **context: Any) -> str:
    """Render one of the package's templates.

    Parameters
    ----------
    template : str
        File name in ``anisotropy/report/templates`` (``report.html.j2``,
        ``index.html.j2``).
    **context
        Plain values for the template; every one is escaped where it is
        placed.

    Returns
    -------
    str
        The complete HTML document.
    """
    return environment().get_template(template).render(**context)


def png_data_uri(data: bytes) -> Markup:
    """A ``data:image/png;base64,...`` URI for an ``<img src>``, marked safe.

    Parameters
    ----------
    data : bytes
        A PNG image drawn by the report itself.

    Returns
    -------
    markupsafe.Markup
        The URI, not escaped again by the templates.

    Notes
    -----
    This is the only place the package marks a value as safe HTML. It is
    trusted because it is built here, from bytes the report drew, and
    nothing else: the base64 alphabet (``A-Z a-z 0-9 + / =``) holds no
    character that HTML escaping would change, so escaping it would only
    cost time on a string of some hundred kilobytes.
    """
    return Markup("data:image/png;base64," + base64.b64encode(data).decode("ascii"))
