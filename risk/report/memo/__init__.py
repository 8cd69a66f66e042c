"""The risk memo: a self-contained HTML page and its PDF, rendered from the results dict alone.

Everything here takes the parsed ``results.json`` (see the README's table and
:mod:`risk.report.results`), so ``risk memo DIR`` can re-render a memo without recomputing.
Sections that a results file does not carry (an older run, an open hole, a run without a
sensitivity study) are skipped with a short note. The HTML embeds its figures as base64 data
URIs and its CSS inline: it loads nothing from anywhere. Nothing here reads or writes files
(apart from the package's own templates) or reads the clock: the run date is printed only when
the results carry a ``run_date``, so the same results give the same memo.

Templates are Jinja2 with autoescaping on; every text that reaches them from the results
(titles, sources, warnings) is escaped, and control characters in it (a results file written by
hand, a scenario file name) are printed as visible escapes such as ``\\x1b``
(:func:`risk.errors.visible`; tab and line breaks stay, they are only white space in HTML).

Layout (the public names are importable from this package):

- ``texts``     fixed texts: section headings, figure captions, assumptions, cautions;
- ``common``    numbers and probabilities as text, typesetting, small readers of the results;
- ``opening``   the opening answer (sand-free limit, life-of-well gun, options) and summary;
- ``sections``  scenario, results per mechanism, pore collapse, operating points,
                sensitivity, reproducibility;
- ``render``    the template context, HTML and :func:`build_memo`;
- ``pdf``       the PDF (WeasyPrint): figures served by name, and the pages laid out while the
                figures are drawn in another process.

The Jinja2 templates stay in ``risk/report/templates/``.
"""

from risk.report.memo.render import (
    TEMPLATES,
    Memo,
    build_memo,
    memo_context,
    render_html,
    render_pdf,
)
from risk.report.memo.texts import ASSUMPTIONS, CAPTIONS, CAUTIONS, SECTIONS

__all__ = ["ASSUMPTIONS", "CAPTIONS", "CAUTIONS", "Memo", "SECTIONS", "TEMPLATES", "build_memo",
           "memo_context", "render_html", "render_pdf"]
