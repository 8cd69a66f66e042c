"""The memo rendered: the template's context (:func:`memo_context`), the HTML page, its PDF and
:func:`build_memo` (figures, HTML and PDF from a results dict)."""

from __future__ import annotations

import base64
import functools
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Final

from jinja2 import Environment, FileSystemLoader, StrictUndefined
from markupsafe import Markup

from risk.errors import visible
from risk.report.figures import DPI, render_all
from risk.report.figures import render as figure_render
from risk.report.figures.background import draw_in_background
from risk.report.heap import settled
from risk.report.memo.calibration import CALIBRATION_ASSUMPTION, calibration_context
from risk.report.memo.common import _angle_reference, _punit
from risk.report.memo.opening import _answer, _summary
from risk.report.memo.pdf import FIGURE_SCHEME, blank_png, pdf_alongside, render_pdf
from risk.report.memo.sections import (
    _mechanism_sections,
    _operating_points,
    _pore_section,
    _reproducibility,
    _root_section,
    _scenario,
    _sensitivity,
    _water_section,
)
from risk.report.memo.texts import ASSUMPTIONS, CAPTIONS, CAUTIONS, SECTIONS

TEMPLATES: Final = Path(__file__).resolve().parent.parent / "templates"

#: Where each figure sits in the memo (numbering follows this order).
_FIGURE_ORDER: Final = ("sand_free", "input_histograms", "input_correlation", "failure_probability",
                        "envelope", "shot_directions", "tunnel_root", "water_weakening",
                        "tunnel_collapse", "pore_collapse",
                        "value_of_information", "sensitivity", "tornado", "calibration")


@dataclass(frozen=True)
class Memo:
    """A rendered memo: the HTML page, its PDF and the figures' PNG bytes by name."""

    html: str
    pdf: bytes
    figures: dict[str, bytes]


def _data_uri(png: bytes) -> str:
    return "data:image/png;base64," + base64.b64encode(png).decode("ascii")


def _png_width_in(png: bytes) -> str:
    """The printed width [in] of a PNG drawn at :data:`~risk.report.figures.DPI`, so every
    figure keeps its design size (and its fonts their point size) in the memo."""
    if png[:8] != b"\x89PNG\r\n\x1a\n" or len(png) < 24:
        return "100%"
    return f"{int.from_bytes(png[16:20], 'big') / DPI:.3f}in"


def memo_context(results: Mapping[str, Any], figures: Mapping[str, bytes], *,
                 linked: bool = False) -> dict[str, Any]:
    """The template's view of the results: every number formatted with its unit (figures as
    data URIs, or with ``linked`` as ``risk-figure:<name>`` references for the PDF)."""
    numbered: dict[str, dict[str, Any]] = {}
    for name in [*_FIGURE_ORDER, *(n for n in figures if n not in _FIGURE_ORDER)]:
        if name in figures:
            caption = CAPTIONS.get(name, name.replace("_", " ")).replace(
                "{angles}", _angle_reference(results))
            if name == "envelope" and results.get("operating_points"):
                caption += " Crosses are the planned operating points."
            numbered[name] = {"number": len(numbered) + 1, "uri": (FIGURE_SCHEME + name if linked
                                                           else _data_uri(figures[name])),
                              "caption": caption,
                              "name": name, "width": _png_width_in(figures[name])}
    scenario = _scenario(results)
    assumptions = list(ASSUMPTIONS)
    calibration = calibration_context(results)
    if results.get("calibration"):
        assumptions.append(CALIBRATION_ASSUMPTION)
    if scenario["log_based"]:
        assumptions.append("In this scenario these inputs rest at least partly on log "
                           "correlations, with the scatter stated above: "
                           + "; ".join(scenario["log_based"]) + ".")
    for key in ("tunnel_root", "compaction_cap", "water_weakening"):
        block = results.get(key)
        if isinstance(block, Mapping) and block.get("assumption"):
            text = str(block["assumption"])
            assumptions.append("In this run, " + text)
    if _solved_limits(results):
        assumptions.append(
            "Small accepted risk: where fewer than 100 samples lie at or below the accepted-risk "
            "quantile, the drawdown limit is the drawdown at which the reliability estimate of "
            "P(failure) equals the accepted risk (importance sampling around the FORM design "
            "point, stopped at a coefficient of variation of 0.08; SORM or FORM where it did "
            "not converge). This assumes one dominant failure region near the design point; "
            "the small-risk tables name the method, its model runs and any disagreement. The "
            "gun-phasing choice and the completion options still use the sampled quantile.")
    return {
        "angle_reference": _angle_reference(results),
        "root": _root_section(results),
        "water": _water_section(results),
        "title": str(results.get("title") or "Untitled scenario"),
        "unit": _punit(results),
        "sections": SECTIONS,
        "summary": _summary(results),
        "answer": _answer(results),
        "scenario": scenario,
        "mechanisms": _mechanism_sections(results),
        "pore": _pore_section(results),
        "operating_points": _operating_points(results),
        "has_profile": bool(((results.get("mechanisms") or {}).get("tunnel_collapse") or {})
                            .get("profile")),
        "sensitivity": _sensitivity(results),
        "calibration": calibration,
        "assumptions": assumptions,
        "input_warnings": [str(w) for w in results.get("warnings") or ()],
        "cautions": CAUTIONS,
        "reproducibility": _reproducibility(results),
        "figures": numbered,
        "run_date": str(results["run_date"]) if results.get("run_date") else None,
        "samples": (f"{int(results['samples']):,}" if results.get("samples") is not None
                    else "–"),
        "deterministic": bool(results.get("deterministic")),
    }


def _shown(value: Any) -> Any:
    """Every expression a template prints: texts with their control characters made visible
    (markup built here keeps its type; the replacement holds no HTML special character)."""
    if isinstance(value, str):
        text = visible(value, keep="\t\n\r")
        return Markup(text) if isinstance(value, Markup) else text
    return value


@functools.lru_cache(maxsize=1)
def _environment() -> Environment:
    """The memo's template environment, made once (making it and compiling the template cost
    ~0.06 s, twice a memo); Jinja reloads a template whose file has changed."""
    return Environment(loader=FileSystemLoader(str(TEMPLATES)), autoescape=True,
                       undefined=StrictUndefined, trim_blocks=True, lstrip_blocks=True,
                       finalize=_shown)


def render_html(results: Mapping[str, Any], figures: Mapping[str, bytes], *,
                linked: bool = False) -> str:
    """The memo as one self-contained HTML page (figures as data URIs, CSS inline; with
    ``linked``, figures as ``risk-figure:<name>`` references, the page given to
    :func:`render_pdf` with ``images``).

    Parameters
    ----------
    results : mapping
        The parsed ``results.json`` of a run.
    figures : mapping of str to bytes
        PNG bytes by figure name (:func:`risk.report.figures.render_all`); figures missing
        here are left out of the memo.
    """
    return _environment().get_template("memo.html.j2").render(
        memo_context(results, figures, linked=linked))


@settled()
def build_memo(results: Mapping[str, Any], *, reuse: Mapping[str, bytes] | None = None,
               workers: int | None = None, previous: tuple[str, bytes] | None = None
               ) -> Memo:
    """Figures, HTML and PDF of a run's memo, from its results dict alone (``reuse``: figures
    drawn before, kept where they would come out the same: :func:`render_all`).

    With ``workers`` > 1 (default: 2 where a second core is idle, as for
    :func:`~risk.report.figures.render_all`) the figures are drawn in a forked process while
    this one lays out the PDF's pages around images of their sizes (known from the results at
    once: :func:`~risk.report.figures.render.figure_size`;
    :func:`~risk.report.memo.pdf.pdf_alongside`), then draws those the child has not taken
    yet; the memo is the same as drawn one step after the other.

    ``previous``: the HTML and PDF of a memo rendered before (`risk memo` on a folder whose
    files are as the tool wrote them). Where every figure is reused and the page comes out
    the same (the same text, numbers and figure bytes), its PDF is returned as it is instead
    of being laid out again (a memo re-rendered with nothing changed costs the HTML alone);
    where no figure can be kept, as without ``previous``."""
    # figures drawn for other results (or by other code) are all redrawn: then the usual path
    # below, which lays out the PDF while they are drawn where a core is idle
    if previous is not None and reuse and _keeps_figures(results, reuse):
        figures = render_all(results, reuse=reuse, workers=1)
        html = render_html(results, figures)
        if html == previous[0] and all(reuse.get(n) == png for n, png in figures.items()):
            return Memo(html=html, pdf=previous[1], figures=dict(figures))
        return Memo(html=html, pdf=render_pdf(render_html(results, figures, linked=True),
                                              images=figures), figures=dict(figures))
    n = figure_render._workers() if workers is None else int(workers)
    if n > 1:
        drawing = draw_in_background(results, reuse=reuse)
        if drawing is not None:
            import weasyprint  # noqa: F401 - loaded (where not yet) while the child draws

            done = None
            try:
                if drawing.wait_sizes():
                    blanks = {name: blank_png(w, h) for name, (w, h) in drawing.sizes.items()}
                    done = pdf_alongside(render_html(results, blanks, linked=True), blanks,
                                         drawing.result)
            finally:
                drawing.close()
            if done is not None:
                pdf, figures = done
                return Memo(html=render_html(results, figures), pdf=pdf, figures=figures)
    figures = render_all(results, reuse=reuse, workers=1)
    return Memo(html=render_html(results, figures),
                pdf=render_pdf(render_html(results, figures, linked=True), images=figures),
                figures=dict(figures))


def _keeps_figures(results: Mapping[str, Any], reuse: Mapping[str, bytes]) -> bool:
    """Whether some figure drawn before is kept for these results (its stored key matches)."""
    key = figure_render.figure_key(results)
    return any(figure_render.png_key(png) == key for png in reuse.values())


def _solved_limits(results: Mapping[str, Any]) -> bool:
    """Whether some limit of the run was solved by a reliability method (risk.small_risk)."""
    for mech in (results.get("mechanisms") or {}).values():
        for st in (mech.get("stages") or []) if isinstance(mech, Mapping) else []:
            if st.get("drawdown_limit_method") not in (None, "sampling"):
                return True
    return False
