"""Figures of the issue-15 results: perforation tunnels at their root beside the far field,
and water weakening by stage."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from matplotlib.axes import Axes

from risk.report.figures.common import (
    PAGE_WIDTH,
    PR,
    _arr,
    _new_figure,
    _styled,
    _thousands,
    _unit,
    mechanism_color,
)


def plot_tunnel_root(results: Mapping[str, Any], *, ax: Axes | None = None) -> Axes | None:
    """Effective-strength drawdown limit per stage with the tunnel in the far field and at its
    root in the wellbore's field."""
    block = results.get("tunnel_root")
    if not isinstance(block, Mapping) or not block.get("stages"):
        return None
    with _styled():
        unit = _unit(results)
        if ax is None:
            ax = _new_figure(2.8, PAGE_WIDTH * 0.9).subplots()
        st = block["stages"]
        x = _arr([s["reservoir_pressure"] for s in st])
        c = mechanism_color("effective_strength_onset")
        far = _arr([(s.get("far_field") or {}).get("drawdown_limit") for s in st])
        root = _arr([(s.get("root") or {}).get("drawdown_limit") for s in st])
        gov = block.get("governing") == "root-and-far-field"
        ax.plot(x, far, "o-", color=c, lw=1.5, ms=4,
                label="far field" + ("" if gov else " (governs)"))
        ax.plot(x, root, "s--", color="0.25", lw=1.2, ms=3.5, mfc="white",
                label="root, first wellbore radii" + (" (worse governs)" if gov else ""))
        ax.set_xlabel(f"reservoir pressure {PR} [{unit}]")
        ax.set_ylabel(f"drawdown limit [{unit}]")
        ax.set_title("Effective-strength onset: tunnel root vs far field")
        ax.set_ylim(bottom=0.0)
        _thousands(ax.xaxis, ax.yaxis)
        ax.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), frameon=False)
    return ax


def plot_water_weakening(results: Mapping[str, Any], *, ax: Axes | None = None
                         ) -> Axes | None:
    """Strength factor (P10-P90 band and P50) and the water-saturation rise per stage."""
    block = results.get("water_weakening")
    if not isinstance(block, Mapping) or not block.get("stages"):
        return None
    with _styled():
        unit = _unit(results)
        if ax is None:
            ax = _new_figure(2.6, PAGE_WIDTH * 0.9).subplots()
        st = block["stages"]
        x = _arr([s["reservoir_pressure"] for s in st])
        f = [s.get("strength_factor") or {} for s in st]
        ax.fill_between(x, _arr([v.get("p10") for v in f]), _arr([v.get("p90") for v in f]),
                        step="mid", color="tab:blue", alpha=0.25, linewidth=0,
                        label="strength factor P10-P90")
        ax.step(x, _arr([v.get("p50") for v in f]), where="mid", color="tab:blue", lw=1.5,
                label="strength factor P50")
        ax.step(x, _arr([s.get("water_saturation") for s in st]), where="mid", color="0.3",
                ls="--", lw=1.0, label="water saturation rise")
        ax.set_ylim(-0.02, 1.02)
        ax.set_xlabel(f"reservoir pressure {PR} [{unit}]")
        ax.set_ylabel("fraction [-]")
        ax.set_title("Water weakening by depletion stage")
        _thousands(ax.xaxis)
        ax.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), frameon=False)
    return ax
