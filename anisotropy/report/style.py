"""Shared page frame, style sheet and caution text of the HTML pages.

The pages are self-contained: the style sheet is inline, images are
embedded as data URIs, there is no script and nothing is fetched from the
network, so a report opens offline in any browser. The
Content-Security-Policy below makes a browser refuse any script or remote
resource even if one were somehow injected.
"""

from __future__ import annotations

from anisotropy import _safety as S

__all__ = ["CAUTION", "DOMAINING_NOTE", "PAGE_CSS", "page"]

CAUTION = (
    "Automated continuity suggestions support, and do not replace, the judgement of the "
    "competent or qualified person responsible for the estimate under the public reporting "
    "code that applies (JORC, NI 43-101, SAMREC, PERC or the local equivalent). Every "
    "result here depends on the domaining: samples from different geological populations "
    "mixed in one domain give a continuity that belongs to neither."
)

DOMAINING_NOTE = (
    "Results depend on the domaining and on the choices recorded above (transform, "
    "top-cut, lags, tolerances); review them before using the model."
)

PAGE_CSS = """
body{font-family:system-ui,-apple-system,'Segoe UI',Roboto,sans-serif;margin:1.5em auto;
max-width:1100px;padding:0 1em;color:#222;line-height:1.4}
h1{font-size:1.5em;border-bottom:3px solid #1b7837;padding-bottom:.2em}
h2{font-size:1.2em;margin-top:1.6em;border-bottom:1px solid #ccc}
table.grid{border-collapse:collapse;margin:.6em 0;font-size:.92em}
table.grid th,table.grid td{border:1px solid #bbb;padding:.25em .55em;text-align:left;vertical-align:top}
table.grid th{background:#f0f0f0}
tr.skip td{background:#fff7e6} tr.fail td{background:#fde8e8}
figure{margin:1em 0} figure img{max-width:100%;height:auto;border:1px solid #ddd}
figcaption{font-size:.88em;color:#444}
.meta{color:#555}
.warn{background:#fff4d6;border-left:4px solid #e08214;padding:.3em .6em}
.caution{background:#eef3fb;border-left:4px solid #5e3c99;padding:.5em .8em;margin-top:2em}
.verdict-consistent{color:#1b7837;font-weight:bold}
.verdict-uncertain{color:#b35806;font-weight:bold}
.verdict-contradicted{color:#b2182b;font-weight:bold}
.verdict-cannot-tell{color:#5e3c99;font-weight:bold}
code{background:#f4f4f4;padding:0 .2em}
"""


def page(title: str, body_html: str) -> str:
    """A complete HTML document around ``body_html`` (already safe HTML).

    Parameters
    ----------
    title : str
        Plain text (escaped here).
    body_html : str
        Markup built with escaped strings.

    Returns
    -------
    str
    """
    return (
        "<!DOCTYPE html>\n<html lang='en'>\n<head>\n<meta charset='utf-8'>\n"
        "<meta http-equiv='Content-Security-Policy' content=\"default-src 'none'; "
        "img-src data:; style-src 'unsafe-inline'\">\n"
        "<meta name='viewport' content='width=device-width, initial-scale=1'>\n"
        f"<title>{S.escape(title)}</title>\n<style>{PAGE_CSS}</style>\n</head>\n<body>\n"
        f"{body_html}\n</body>\n</html>\n"
    )
