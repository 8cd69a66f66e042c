"""Figures of a run, drawn from the results dict alone (the parsed ``results.json``).

Every plotting function takes the results dict and, optionally, the matplotlib ``Figure`` (for
small multiples) or ``Axes`` (for single panels) to draw into; it returns what it drew on, or
``None`` when the results hold nothing for that figure (an open hole has no shot directions; a
run without a sensitivity study has no tornado). :func:`render_all` turns every figure that
applies into PNG bytes. Nothing here reads or writes files or touches pyplot's global state:
figures are plain :class:`matplotlib.figure.Figure` objects drawn under a fixed style
(:func:`style`), so the same results give byte-identical PNGs.

Colours come from seaborn's colour-blind-safe ``"colorblind"`` palette (mechanisms, stages) and
perceptually uniform sequential/diverging maps (probability bands, correlations). Every axis label
carries its unit in brackets, in the run's pressure unit (``results["units"]["pressure"]``).
Percentile keys follow :mod:`risk.conventions` and :mod:`risk.report.results`.

Layout (every public name is importable from this package):

- ``common``      page geometry, palette, mechanism colours, :func:`style`, new figures, and
                  the small readers of the results dict every figure uses;
- ``curves``      failure probability, operating envelope, sand-free limit, tunnel collapse,
                  pore collapse;
- ``directions``  shot-direction dials;
- ``sensitivity`` Sobol/Shapley bars and the tornado;
- ``inputs``      input histograms and rank correlation;
- ``render``      the :data:`FIGURES` registry, PNG provenance and :func:`render_all`;
- ``background``  figures drawn in a forked process while the memo's PDF is laid out around
                  their sizes, known from the results (used by the memo; not re-exported here).

Text formatting (:func:`format_value`, :func:`input_label`, :func:`output_name`) lives in
:mod:`risk.report.formatting`, shared with the memo; it is re-exported here.
"""

from risk.report.figures.common import DPI, MAX_HEIGHT, PAGE_WIDTH, PALETTE, mechanism_color, style
from risk.report.figures.curves import (
    plot_envelope,
    plot_failure_probability,
    plot_pore_collapse,
    plot_sand_free,
    plot_tunnel_collapse,
)
from risk.report.figures.directions import plot_shot_directions
from risk.report.figures.inputs import plot_input_correlation, plot_input_histograms
from risk.report.figures.render import FIGURES, provenance_text, render_all
from risk.report.figures.sensitivity import TORNADO_ROWS, plot_sensitivity, plot_tornado
from risk.report.formatting import INPUT_LABELS, format_value, input_label, output_name

__all__ = [
    "DPI",
    "FIGURES",
    "INPUT_LABELS",
    "MAX_HEIGHT",
    "PAGE_WIDTH",
    "PALETTE",
    "TORNADO_ROWS",
    "format_value",
    "input_label",
    "mechanism_color",
    "output_name",
    "plot_envelope",
    "plot_failure_probability",
    "plot_input_correlation",
    "plot_input_histograms",
    "plot_pore_collapse",
    "plot_sand_free",
    "plot_sensitivity",
    "plot_shot_directions",
    "plot_tornado",
    "plot_tunnel_collapse",
    "provenance_text",
    "render_all",
    "style",
]
