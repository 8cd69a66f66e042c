"""The depth-track figure of a log run: depth down the page, one track per quantity (input
logs, UCS with its P10-P90 band, the sand-free critical drawdown band per stage, P(sanding) at
the planned drawdown, the perforation plan), in the style of a log plot."""

from __future__ import annotations

import io
from collections.abc import Mapping
from typing import Any

import numpy as np
from matplotlib.figure import Figure
from matplotlib.patches import Patch

from risk.report.figures.common import DPI, MAX_HEIGHT, PAGE_WIDTH, PALETTE, _styled

__all__ = ["plot_depth_tracks", "depth_png"]


def _a(table: Mapping[str, Any], key: str) -> np.ndarray:
    return np.array([np.nan if v is None else float(v) for v in table[key]], dtype=float)


def _find(table: Mapping[str, Any], prefix: str) -> str | None:
    return next((k for k in table if k.startswith(prefix)), None)


def plot_depth_tracks(s: Mapping[str, Any]) -> Figure:
    """The depth tracks of a log-run summary (:func:`risk.logs.summary.summarize_depth`)."""
    t = s["table"]
    lu, pu = s["units"]["length"], s["units"]["pressure"]
    z = _a(t, f"depth [{lu}]")
    n_st = len(s["stages"])
    has_sand = s.get("plan") is not None
    tracks = 6 if has_sand else 3
    fig = Figure(figsize=(PAGE_WIDTH, min(MAX_HEIGHT, 8.0)), layout="constrained")
    axes = fig.subplots(1, tracks, sharey=True,
                        gridspec_kw={"width_ratios": [0.8, 0.8, 1.1, 1.3, 1.0, 0.5][:tracks]})
    ax = axes[0]
    gr = _find(t, "gr [")
    if gr:
        ax.plot(_a(t, gr), z, color=PALETTE[2], lw=0.8)
        ax.set_xlabel(gr)
    ax.set_ylabel(f"depth [{lu}]")
    ax.invert_yaxis()
    ax = axes[1]
    dt = _find(t, "dt [")
    if dt:
        ax.plot(_a(t, dt), z, color=PALETTE[0], lw=0.8)
        ax.set_xlabel(dt)
        ax.invert_xaxis()
    ax = axes[2]
    lo, mid, hi = (_a(t, f"ucs P{q} [{pu}]") for q in (10, 50, 90))
    ax.fill_betweenx(z, lo, hi, color=PALETTE[1], alpha=0.3, lw=0, label="P10-P90")
    ax.plot(mid, z, color=PALETTE[1], lw=0.9, label="P50")
    ax.set_xlabel(f"UCS [{pu}]")
    ax.legend(loc="lower right", fontsize=6)
    if has_sand:
        ax = axes[3]
        top = float(s.get("max_drawdown") or 2.0 * s["planned_drawdown"])
        for k in range(n_st):
            c = PALETTE[(3 + k) % len(PALETTE)]
            # "never within [0, p_r]" (None) is drawn at the right edge of the track
            lo = np.nan_to_num(_a(t, f"sand stage {k + 1} dc P10 [{pu}]"), nan=top)
            mid = np.nan_to_num(_a(t, f"sand stage {k + 1} dc P50 [{pu}]"), nan=top)
            lo, mid = np.minimum(lo, top), np.minimum(mid, top)
            ax.fill_betweenx(z, lo, mid, color=c, alpha=0.25, lw=0)
            ax.plot(lo, z, color=c, lw=0.8, label=f"stage {k + 1}: P10")
        ax.axvline(s["planned_drawdown"], color="k", ls="--", lw=0.8, label="planned")
        ax.set_xlabel(f"sand-free drawdown\nP10-P50 [{pu}]")
        ax.set_xlim(0, top)
        ax.legend(loc="lower right", fontsize=6)
        ax = axes[4]
        for k in range(n_st):
            ax.plot(_a(t, f"P(sanding) stage {k + 1} [-]"), z, lw=0.9,
                    color=PALETTE[(3 + k) % len(PALETTE)], label=f"stage {k + 1}")
            pc = t.get(f"P(pore collapse) stage {k + 1} [-]")
            if pc is not None:
                ax.plot(np.array(pc, dtype=float), z, lw=0.8, ls="--",
                        color=PALETTE[(3 + k) % len(PALETTE)], label=f"collapse {k + 1}")
        ax.axvline(s["accepted_risk"], color="k", ls=":", lw=0.8, label="accepted risk")
        ax.set_xlim(-0.02, 1.02)
        ax.set_xlabel("P(sanding) at the\nplanned drawdown [-]"
                      + ("\n(dashed: P(pore collapse))" if "P(pore collapse) stage 1 [-]" in t
                         else ""))
        ax.legend(loc="lower right", fontsize=6)
        ax = axes[5]
        perf = np.array(t["perforated [-]"], dtype=bool)
        weak = np.array(t["weak zone [-]"], dtype=bool)
        step = float(np.median(np.diff(z))) if z.size > 1 else 1.0
        for flag, color in ((weak, (0.8, 0.2, 0.2)), (perf, (0.1, 0.1, 0.1))):
            for i in np.nonzero(flag)[0]:
                x0 = 0.0 if color[0] < 0.5 else 0.5
                ax.fill_between([x0, x0 + 0.5], z[i] - step / 2, z[i] + step / 2,
                                color=color, lw=0)
        ax.set_xticks([0.25, 0.75], ["perf.", "weak"])
        ax.set_xlim(0, 1)
        ax.legend(handles=[Patch(color=(0.1, 0.1, 0.1), label="perforate"),
                           Patch(color=(0.8, 0.2, 0.2), label="weak")], fontsize=6,
                  loc="lower right")
    fig.suptitle(f"{s['title']}: logs, strength and sanding risk over depth", fontsize=9)
    return fig


def depth_png(s: Mapping[str, Any]) -> bytes:
    """The figure as PNG bytes (150 dpi)."""
    with _styled():
        fig = plot_depth_tracks(s)
        buf = io.BytesIO()
        fig.savefig(buf, format="png", dpi=DPI, metadata={"Software": None})
    return buf.getvalue()
