"""Curves of a run: failure probability vs drawdown, the operating envelope over depletion, the
sand-free limit over depletion, tunnel collapse (plastic radius and strain) and pore collapse.
"""

from __future__ import annotations

import math
import textwrap
from collections.abc import Mapping
from typing import Any

import numpy as np
import seaborn as sns
from matplotlib.axes import Axes
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from risk.report.figures.common import (
    _P_LIMITS,
    _QUANTILE_KEYS,
    PAGE_WIDTH,
    PALETTE,
    PR,
    PWF,
    _arr,
    _f,
    _grid,
    _hide_unused,
    _new_figure,
    _styled,
    _thousands,
    _unit,
    mechanism_color,
)
from risk.report.formatting import format_value
from risk.report.reading import drawdown_mechanisms as _drawdown_mechanisms

# --------------------------------------------------------------------------- failure probability


def plot_failure_probability(results: Mapping[str, Any], *, fig: Figure | None = None
                             ) -> Figure | None:
    """Probability of failure vs drawdown, one curve per mechanism with its 95% band, the
    accepted risk as a horizontal line and each drawdown limit marked (with its 95% lower
    confidence bound as a whisker); one panel per depletion stage."""
    mechs = _drawdown_mechanisms(results)
    if not mechs:
        return None
    with _styled():
        unit = _unit(results)
        risk = _f(results.get("accepted_risk"))
        d_max = _f(results.get("max_drawdown"))
        n = max(len(m["stages"]) for _, m in mechs)
        nrows, ncols = _grid(n, 3)
        fig = fig or _new_figure(2.3 * nrows + 0.7)
        axes = fig.subplots(nrows, ncols, sharex=True, sharey=True, squeeze=False)
        keys = [k for k, _ in mechs]
        handles: list[Any] = []
        for k in range(n):
            ax = axes.flat[k]
            p_r = None
            for key, mech in mechs:
                if k >= len(mech["stages"]):
                    continue
                st = mech["stages"][k]
                p_r = st.get("reservoir_pressure")
                c = mechanism_color(key, keys)
                fp = st["failure_probability"]
                d = _arr([r["drawdown"] for r in fp])
                if not results.get("deterministic"):  # one evaluation: no sampling band
                    ax.fill_between(d, _arr([r["low"] for r in fp]),
                                    _arr([r["high"] for r in fp]),
                                    color=c, alpha=0.22, linewidth=0)
                (line,) = ax.plot(d, _arr([r["p"] for r in fp]), color=c, lw=1.6,
                                  label=str(mech.get("name", key)))
                if k == 0:
                    handles.append(line)
                lim, low = st.get("drawdown_limit"), st.get("drawdown_limit_lower")
                if lim is not None and math.isfinite(risk) and (
                        not math.isfinite(d_max) or lim <= d_max):
                    xerr = [[max(0.0, lim - low)], [0.0]] if low is not None else None
                    bars = ax.errorbar([lim], [risk], xerr=xerr, fmt="o", ms=4.5, color=c,
                                       mec="white", mew=0.7, capsize=2.5, elinewidth=1.4,
                                       zorder=5)
                    for artist in bars.get_children():  # a limit of 0 sits on the frame
                        artist.set_clip_on(False)
            if math.isfinite(risk):
                ax.axhline(risk, color="0.15", ls="--", lw=0.9, zorder=1)
            ax.set_title(f"{PR} = {format_value(p_r, unit)}")
            ax.set_ylim(*_P_LIMITS)
            if math.isfinite(d_max):
                ax.set_xlim(0.0, d_max)
            _thousands(ax.xaxis)
        _hide_unused(axes, n)
        for k in range(n):
            if k + ncols >= n:  # no visible panel below: label the drawdown axis here
                axes.flat[k].xaxis.set_tick_params(labelbottom=True)
                axes.flat[k].set_xlabel(f"drawdown {PR} − {PWF} [{unit}]")
        for r in range(nrows):
            axes[r, 0].set_ylabel("probability of failure [-]")
        if not results.get("deterministic"):
            handles.append(Patch(color="0.6", alpha=0.4, label="95% confidence band"))
        handles += [
            Line2D([], [], color="0.15", ls="--", lw=0.9,
                   label=f"accepted risk {format_value(risk, '-')}"),
            Line2D([], [], color="0.3", marker="o", ls="-", ms=4.5,
                   label="drawdown limit (whisker: 95% lower bound)"),
        ]
        fig.legend(handles=handles, loc="outside lower center", ncol=2, frameon=False)
    return fig


# --------------------------------------------------------------------------- operating envelope

def _band_colors(n: int) -> list[tuple[float, float, float]]:
    return [(float(c[0]), float(c[1]), float(c[2]))
            for c in sns.color_palette("rocket_r", n + 2)[1:n + 1]]


def plot_envelope(results: Mapping[str, Any], *, fig: Figure | None = None) -> Figure | None:
    """Operating envelope: critical flowing wall pressure vs reservoir pressure, one panel per
    mechanism. Lines at P10/P50/P90, shaded bands between consecutive quantiles (p01, p05, p10,
    p25, p50, p75, p90 where present) labelled by the fraction of samples that fail, the line
    p_wf = p_r (zero drawdown), the largest allowed drawdown and the planned operating points.
    The contour at the accepted risk (``p_r`` minus each stage's drawdown limit) is always drawn
    and labelled, whether or not the accepted risk is one of the quantiles.

    A wall pressure of ``null`` (fewer than that fraction fail even at p_wf = 0) is drawn at 0,
    the edge of the domain."""
    mechs = [(k, m) for k, m in _drawdown_mechanisms(results)
             if all("critical_wall_pressure" in s for s in m["stages"])]
    if not mechs:
        return None
    with _styled():
        unit = _unit(results)
        d_max = _f(results.get("max_drawdown"))
        risk = _f(results.get("accepted_risk"))
        n = len(mechs)
        ncols = 1 if n == 1 else 2
        nrows = math.ceil(n / ncols)
        spare = nrows * ncols > n  # an empty slot takes the legend
        fig = fig or _new_figure(3.0 * nrows + (0.3 if spare else 1.3),
                                 PAGE_WIDTH if n > 1 else PAGE_WIDTH * 0.75)
        axes = fig.subplots(nrows, ncols, sharex=True, sharey=True, squeeze=False)
        points = results.get("operating_points") or []
        band_handles: dict[str, Any] = {}
        line_handles: dict[str, Any] = {}
        top = 0.0
        for i, (key, mech) in enumerate(mechs):
            ax = axes.flat[i]
            stages = sorted(mech["stages"], key=lambda s: _f(s["reservoir_pressure"]))
            x = _arr([s["reservoir_pressure"] for s in stages])
            if x.size == 1:  # one stage: draw a narrow strip so the bands remain visible
                x = np.array([x[0] * 0.985, x[0] * 1.015])
                stages = stages * 2
            top = max(top, float(np.nanmax(x)))
            present = [q for q in _QUANTILE_KEYS
                       if all(q in s["critical_wall_pressure"] for s in stages)]
            ys = {q: np.nan_to_num(_arr([s["critical_wall_pressure"][q] for s in stages]),
                                   nan=0.0) for q in present}
            colors = _band_colors(len(present))
            for j, (qa, qb) in enumerate(zip(present[:-1], present[1:], strict=True)):
                label = f"{int(qa[1:])}–{int(qb[1:])}% of samples fail"
                band_handles[label] = ax.fill_between(x, ys[qb], ys[qa], color=colors[j],
                                                      alpha=0.8, linewidth=0, label=label)
            if present:  # below the last line more than that share fails: the worst region
                last = present[-1]
                label = f"more than {int(last[1:])}% of samples fail"
                band_handles[label] = ax.fill_between(x, 0.0, ys[last], color=colors[-1],
                                                      alpha=0.95, linewidth=0, label=label)
            styles = {"p10": ("--", 1.1), "p50": ("-", 1.6), "p90": (":", 1.4)}
            for q, (ls, lw) in styles.items():
                if q in ys:
                    line_handles[q] = ax.plot(x, ys[q], color="0.05", ls=ls, lw=lw,
                                              label=f"{q.upper()} critical wall pressure")[0]
            if math.isfinite(risk):  # the accepted-risk contour: p_wf = p_r - drawdown limit
                lims = _arr([s.get("drawdown_limit") for s in stages])
                pr = _arr([s["reservoir_pressure"] for s in stages])
                y_risk = np.maximum(np.nan_to_num(pr - lims, nan=0.0), 0.0)
                text = f"accepted risk {format_value(risk, '-')}"
                line_handles["risk"] = ax.plot(
                    x, y_risk, color=PALETTE[4], lw=1.8, ls=(0, (5, 1.5)), zorder=4,
                    label=f"{text} ({format_value(100 * risk, '-')}% of samples fail; "
                          f"{PR} − drawdown limit)")[0]
                ax.annotate(text, (float(x[-1]), float(y_risk[-1])), xytext=(-3, 3),
                            textcoords="offset points", ha="right", va="bottom", fontsize=6.5,
                            color=PALETTE[4], zorder=7,
                            bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.8,
                                  "pad": 0.8})
            xx = np.array([x.min(), x.max()])
            line_handles["zero"] = ax.plot(xx, xx, color=PALETTE[0], lw=1.6,
                                           label=f"{PWF} = {PR} (no drawdown)")[0]
            if math.isfinite(d_max):
                line_handles["max"] = ax.plot(
                    xx, np.maximum(xx - d_max, 0.0), color=PALETTE[2], lw=1.3, ls="-.",
                    label=f"largest drawdown considered ({format_value(d_max, unit)})")[0]
            if points:
                px = _arr([p.get("reservoir_pressure") for p in points])
                py = _arr([p.get("wall_pressure") for p in points])
                line_handles["ops"] = ax.scatter(px, py, marker="X", s=40, color=PALETTE[3],
                                                 edgecolor="black", linewidth=0.5, zorder=6,
                                                 label="planned operating point")
            ax.set_title(textwrap.fill(str(mech.get("name", key)), 40))
            ax.set_xlabel(f"reservoir pressure {PR} [{unit}]")
            ax.xaxis.set_tick_params(labelbottom=True)
            _thousands(ax.xaxis, ax.yaxis)
        axes.flat[0].set_ylim(0.0, top * 1.04)
        lo = min(float(np.nanmin(_arr([s["reservoir_pressure"] for s in m["stages"]])))
                 for _, m in mechs)
        pad = 0.04 * max(top - lo, 0.05 * top)
        axes.flat[0].set_xlim(lo - pad, top + pad)
        _hide_unused(axes, n)
        for r in range(nrows):
            axes[r, 0].set_ylabel(f"critical flowing wall pressure {PWF} [{unit}]")
        handles = list(band_handles.values()) + list(line_handles.values())
        if spare:
            slot = axes.flat[n]
            slot.set_visible(True)
            slot.axis("off")
            slot.legend(handles=handles, loc="center", frameon=False)
        else:
            fig.legend(handles=handles, loc="outside lower center", ncol=2, frameon=False)
    return fig


# --------------------------------------------------------------------------- collapse

def plot_tunnel_collapse(results: Mapping[str, Any], *, fig: Figure | None = None
                         ) -> Figure | None:
    """Tunnel collapse: plastic radius ratio R_p/a [-] and wall plastic strain [%] vs drawdown,
    median lines with P10-P90 bands, one colour per depletion stage. Bands are light and carry
    their own dotted edges so that overlapping bands stay readable; the legend sits below the
    panels, off the data."""
    profile = ((results.get("mechanisms") or {}).get("tunnel_collapse") or {}).get("profile")
    if not profile:
        return None
    with _styled():
        unit = _unit(results)
        fig = fig or _new_figure(3.4)
        ax_r, ax_e = fig.subplots(1, 2, sharex=True)
        handles: list[Any] = []
        colors = [tuple(c) for c in sns.color_palette("colorblind", len(profile))]
        for c, st in zip(colors, profile, strict=True):
            d = _arr(st["drawdown"])
            label = f"median, {PR} = {format_value(st.get('reservoir_pressure'), unit)}"
            for ax, field, scale in ((ax_r, "plastic_radius_ratio", 1.0),
                                     (ax_e, "wall_plastic_strain", 100.0)):
                q = st.get(field) or {}
                if "p50" not in q:
                    continue
                if "p10" in q and "p90" in q:
                    lo, hi = _arr(q["p10"]) * scale, _arr(q["p90"]) * scale
                    ax.fill_between(d, lo, hi, color=c, alpha=0.08, linewidth=0)
                    for edge in (lo, hi):
                        ax.plot(d, edge, color=c, lw=0.8, ls=":")
                (line,) = ax.plot(d, _arr(q["p50"]) * scale, color=c, lw=1.6, label=label)
                if ax is ax_r:
                    handles.append(line)
        ax_r.set_ylabel(r"plastic radius ratio $R_p/a$ [-]")
        ax_e.set_ylabel("wall plastic strain [%]")
        for ax in (ax_r, ax_e):
            ax.set_xlabel(f"drawdown {PR} − {PWF} [{unit}]")
            ax.set_xlim(left=0.0)
        ax_r.set_ylim(bottom=1.0)
        ax_e.set_ylim(bottom=0.0)
        handles.append(Line2D([], [], color="0.3", lw=0.8, ls=":",
                              label="P10 and P90 (shaded between)"))
        fig.legend(handles=handles, loc="outside lower center", frameon=False,
                   ncol=min(len(handles), 3))
    return fig


def plot_pore_collapse(results: Mapping[str, Any], *, ax: Axes | None = None) -> Axes | None:
    """Probability of pore collapse vs reservoir pressure with its 95% band, the accepted risk
    and the P10/P50/P90 critical reservoir pressures."""
    pc = (results.get("mechanisms") or {}).get("pore_collapse")
    if not pc or not pc.get("stages"):
        return None
    with _styled():
        unit = _unit(results)
        if ax is None:
            ax = _new_figure(2.8, PAGE_WIDTH * 0.9).subplots()
        st = sorted(pc["stages"], key=lambda s: _f(s["reservoir_pressure"]))
        x = _arr([s["reservoir_pressure"] for s in st])
        p = _arr([s.get("probability") for s in st])
        lo, hi = _arr([s.get("low") for s in st]), _arr([s.get("high") for s in st])
        c = mechanism_color("pore_collapse")
        ax.fill_between(x, lo, hi, color=c, alpha=0.25, linewidth=0, label="95% band")
        ax.plot(x, p, "o-", color=c, lw=1.5, ms=4, label="probability, far field")
        if all(s.get("wall_probability") is not None for s in st):
            ax.plot(x, _arr([s["wall_probability"] for s in st]), "s--", color=c, lw=1.2, ms=3.5,
                    mfc="white", label="probability at the wall")
        if all(s.get("wall_probability_at_max_drawdown") is not None for s in st):
            ax.plot(x, _arr([s["wall_probability_at_max_drawdown"] for s in st]), "^:",
                    color=c, lw=1.0, ms=3.5, mfc="white",
                    label="at the wall, largest drawdown")
        risk = _f(results.get("accepted_risk"))
        if math.isfinite(risk):
            ax.axhline(risk, color="0.15", ls="--", lw=0.9,
                       label=f"accepted risk {format_value(risk, '-')}")
        crit = pc.get("critical_reservoir_pressure") or {}
        for q, ls in (("p10", ":"), ("p50", "-"), ("p90", ":")):
            if crit.get(q) is not None:
                ax.axvline(float(crit[q]), color="0.35", ls=ls, lw=0.9)
                ax.annotate(q.upper(), (float(crit[q]), 1.0), xytext=(2, -10),
                            textcoords="offset points", fontsize=7, color="0.25")
        ax.plot([], [], color="0.35", ls="-", lw=0.9,
                label="critical reservoir pressure\n(P10, P50, P90)")
        mean = (pc.get("mean_stress_critical_reservoir_pressure") or {}).get("p50")
        if mean is not None:
            ax.axvline(float(mean), color="0.6", ls="-.", lw=0.9,
                       label="P50, mean-stress criterion")
        ax.set_ylim(*_P_LIMITS)
        ax.set_xlabel(f"reservoir pressure {PR} [{unit}]")
        ax.set_ylabel("probability of pore collapse [-]")
        ax.set_title(str(pc.get("name", "pore collapse")))
        _thousands(ax.xaxis)
        ax.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), frameon=False)
    return ax


# --------------------------------------------------------------------------- sand-free limit

def plot_sand_free(results: Mapping[str, Any], *, ax: Axes | None = None) -> Axes | None:
    """The headline over depletion: the sand-free drawdown limit at every stage with its 95%
    lower bound, the life-of-well gun (perforated wells) and every completion option."""
    sf = results.get("sand_free")
    if not sf or not sf.get("stages"):
        return None
    with _styled():
        unit = _unit(results)
        if ax is None:
            ax = _new_figure(3.0, PAGE_WIDTH * 0.9).subplots()
        st = sf["stages"]
        x = _arr([s["reservoir_pressure"] for s in st])
        lim = _arr([s["drawdown_limit"] for s in st])
        low = _arr([s.get("drawdown_limit_lower") for s in st])
        planned = ("as planned (all shot directions)" if results.get("completion") == "perforated"
                   else "as planned")
        ax.fill_between(x, np.where(np.isfinite(low), low, 0.0), lim, color=PALETTE[0],
                        alpha=0.2, linewidth=0, label="95% lower bound to the limit")
        ax.plot(x, lim, "o-", color=PALETTE[0], lw=1.8, ms=4, label=planned, zorder=4)
        ch = results.get("completion_choice")
        if ch:
            chosen = ch["chosen"]
            angles = "/".join(f"{float(a):g}" for a in chosen.get("shot_angles") or [])
            ax.plot(x, _arr(chosen["drawdown_limits"]), "s--", color=PALETTE[2], lw=1.4, ms=4,
                    label=f"gun for the life of the well ({angles} deg)", zorder=3)
        markers = "^v<>Dph*"
        for i, o in enumerate(results.get("completion_options") or []):
            osf = o.get("sand_free") or {}
            if not osf.get("stages"):
                continue
            ax.plot(x, _arr([s["drawdown_limit"] for s in osf["stages"]]),
                    marker=markers[i % len(markers)], ls=":", lw=1.2, ms=4,
                    color=PALETTE[(3 + i) % len(PALETTE)], label=str(o["name"])[:40])
        ax.set_xlim(float(np.max(x)) + 0.03 * np.ptp(x) + 1e-9,
                    float(np.min(x)) - 0.03 * np.ptp(x) - 1e-9)  # depletion runs to the right
        ax.set_ylim(bottom=0.0)
        ax.set_xlabel(f"reservoir pressure {PR} [{unit}] (depletion to the right)")
        ax.set_ylabel(f"sand-free drawdown limit [{unit}]")
        ax.set_title(f"Sand-free drawdown limit at an accepted risk of "
                     f"{format_value(_f(results.get('accepted_risk')), '-')}")
        _thousands(ax.xaxis, ax.yaxis)
        ax.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), frameon=False)
    return ax
