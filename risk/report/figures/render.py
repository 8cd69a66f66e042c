"""Every figure that applies to a run as PNG bytes: the :data:`FIGURES` registry (memo order),
the provenance stored in each PNG and :func:`render_all`.
"""

from __future__ import annotations

import io
from collections.abc import Callable, Mapping
from typing import Any, Final

from matplotlib.figure import Figure

from risk.report.figures.calibration import plot_calibration, plot_value_of_information
from risk.report.figures.common import DPI, _styled
from risk.report.figures.curves import (
    plot_envelope,
    plot_failure_probability,
    plot_pore_collapse,
    plot_sand_free,
    plot_tunnel_collapse,
)
from risk.report.figures.directions import plot_shot_directions
from risk.report.figures.extensions import plot_tunnel_root, plot_water_weakening
from risk.report.figures.inputs import plot_input_correlation, plot_input_histograms
from risk.report.figures.sensitivity import plot_sensitivity, plot_tornado

#: Figure name -> plotting function, in the order they appear in the memo.
FIGURES: Final[dict[str, Callable[..., Any]]] = {
    "sand_free": plot_sand_free,
    "failure_probability": plot_failure_probability,
    "envelope": plot_envelope,
    "shot_directions": plot_shot_directions,
    "tunnel_root": plot_tunnel_root,
    "water_weakening": plot_water_weakening,
    "tunnel_collapse": plot_tunnel_collapse,
    "pore_collapse": plot_pore_collapse,
    "sensitivity": plot_sensitivity,
    "tornado": plot_tornado,
    "input_histograms": plot_input_histograms,
    "input_correlation": plot_input_correlation,
    "calibration": plot_calibration,
    "value_of_information": plot_value_of_information,
}


def provenance_text(results: Mapping[str, Any]) -> str:
    """Tool version, scenario hash, seed and sample count, stored in every PNG (tEXt chunk)."""
    return (f"risk {results.get('version')}; scenario sha256 {results.get('scenario_sha256')}; "
            f"seed {results.get('seed')}; samples {results.get('samples')}; "
            f"sampling {results.get('sampling')}")


def _png(fig: Figure, description: str = "") -> bytes:
    buf = io.BytesIO()
    meta: dict[str, Any] = {"Software": None}
    if description:
        meta["Description"] = description
    with _styled():
        fig.savefig(buf, format="png", dpi=DPI, metadata=meta)
    return buf.getvalue()


def render_all(results: Mapping[str, Any]) -> dict[str, bytes]:
    """PNG bytes (150 dpi) of every figure that applies to these results, by name
    (:data:`FIGURES` order); figures whose sections are absent are left out."""
    out: dict[str, bytes] = {}
    for name, plot in FIGURES.items():
        drawn = plot(results)
        if drawn is None:
            continue
        fig = drawn if isinstance(drawn, Figure) else drawn.get_figure(root=True)
        out[name] = _png(fig, provenance_text(results))
    return out
