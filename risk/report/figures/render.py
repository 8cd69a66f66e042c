"""Every figure that applies to a run as PNG bytes: the :data:`FIGURES` registry (memo order),
the provenance stored in each PNG and :func:`render_all`.
"""

from __future__ import annotations

import io
import multiprocessing
import os
from collections.abc import Callable, Mapping
from concurrent.futures import ProcessPoolExecutor
from typing import Any, Final

from matplotlib.figure import Figure

from risk.report.figures.common import DPI, _styled
from risk.report.figures.curves import (
    plot_envelope,
    plot_failure_probability,
    plot_pore_collapse,
    plot_sand_free,
    plot_tunnel_collapse,
)
from risk.report.figures.directions import plot_shot_directions
from risk.report.figures.inputs import plot_input_correlation, plot_input_histograms
from risk.report.figures.sensitivity import plot_sensitivity, plot_tornado

#: Figure name -> plotting function, in the order they appear in the memo.
FIGURES: Final[dict[str, Callable[..., Any]]] = {
    "sand_free": plot_sand_free,
    "failure_probability": plot_failure_probability,
    "envelope": plot_envelope,
    "shot_directions": plot_shot_directions,
    "tunnel_collapse": plot_tunnel_collapse,
    "pore_collapse": plot_pore_collapse,
    "sensitivity": plot_sensitivity,
    "tornado": plot_tornado,
    "input_histograms": plot_input_histograms,
    "input_correlation": plot_input_correlation,
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


def _render_one(name: str, results: Mapping[str, Any]) -> bytes | None:
    """PNG bytes of one figure, or None where it does not apply to these results."""
    drawn = FIGURES[name](results)
    if drawn is None:
        return None
    fig = drawn if isinstance(drawn, Figure) else drawn.get_figure(root=True)
    return _png(fig, provenance_text(results))


def _workers() -> int:
    """Processes for drawing: the cores this process may use, at most 2 (the memo has about
    ten figures of 0.2-1 s each; more processes cost more to start than they save)."""
    try:
        cores = len(os.sched_getaffinity(0))
    except AttributeError:  # pragma: no cover - not on Linux
        cores = os.cpu_count() or 1
    return max(1, min(2, cores))


def render_all(results: Mapping[str, Any], *, workers: int | None = None) -> dict[str, bytes]:
    """PNG bytes (150 dpi) of every figure that applies to these results, by name
    (:data:`FIGURES` order); figures whose sections are absent are left out.

    With ``workers`` > 1 (default: the usable cores, at most 2) the figures are drawn in that
    many forked processes (figures are independent and drawn under a fixed style, so the bytes
    are the same as drawn one after the other; where fork is unavailable, one process).
    """
    n = _workers() if workers is None else int(workers)
    names = list(FIGURES)
    if n > 1 and "fork" in multiprocessing.get_all_start_methods():
        ctx = multiprocessing.get_context("fork")
        with ProcessPoolExecutor(max_workers=n, mp_context=ctx) as pool:
            pngs = list(pool.map(_render_one, names, [results] * len(names)))
    else:
        pngs = [_render_one(name, results) for name in names]
    return {name: png for name, png in zip(names, pngs, strict=True) if png is not None}
