"""The caution and domaining texts shown on the HTML pages.

The page frame itself (inline style sheet, no script, nothing fetched, and
a Content-Security-Policy that makes a browser refuse any script or remote
resource even if one were somehow injected) is the template
``templates/base.html.j2``; see :mod:`anisotropy.report.templating`.
"""

from __future__ import annotations

__all__ = ["CAUTION", "DOMAINING_NOTE"]

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
