"""Sensitivity: Sobol indices and Shapley effects as bars, and the one-at-a-time tornado."""

from __future__ import annotations

import math
import textwrap
from collections.abc import Mapping
from typing import Any, Final

import matplotlib as mpl
import numpy as np
from matplotlib.figure import Figure
from matplotlib.layout_engine import ConstrainedLayoutEngine
from matplotlib.patches import Patch

from risk.report.figures.common import (
    MAX_HEIGHT,
    PALETTE,
    PR,
    _arr,
    _f,
    _hide_unused,
    _new_figure,
    _styled,
    _thousands,
    _unit,
)
from risk.report.formatting import format_value, input_label, output_name
from risk.report.reading import drawdown_mechanisms as _drawdown_mechanisms
from risk.report.reading import rank_value


def _mech_name(results: Mapping[str, Any], key: str) -> str:
    return str(results.get("mechanisms", {}).get(key, {}).get("name", key))


def _input_units(results: Mapping[str, Any]) -> dict[str, str]:
    return {str(i["name"]): str(i.get("unit") or "") for i in results.get("inputs") or []}


def _sort_value(row: Mapping[str, Any]) -> float:
    """The memo's ranking value of a row (:func:`risk.report.reading.rank_value`); -1 when the
    row has none, so that it sorts last."""
    v = rank_value(row)
    return -1.0 if v is None else v


def plot_sensitivity(results: Mapping[str, Any], *, fig: Figure | None = None) -> Figure | None:
    """Sobol first-order and total indices at the first stage, with their intervals as
    whiskers, Shapley effects as diamonds; one panel per mechanism (output: the critical
    drawdown, for pore collapse the critical reservoir pressure). Inputs are sorted by their
    ranking value (Shapley effect, else total, else first-order index; the largest over the
    mechanisms), largest on top; a series none of whose values exists is neither drawn nor in
    the legend."""
    sens = {k: v for k, v in (results.get("sensitivity") or {}).items() if v}
    if not sens:
        return None
    with _styled():
        n = len(sens)
        # one shared input axis, ranked by the largest ranking value over the mechanisms
        best: dict[str, float] = {}
        for rows in sens.values():
            for r in rows:
                name = str(r["input"])
                best[name] = max(best.get(name, -1.0), _sort_value(r))
        order = sorted(best, key=lambda k: -best[k])
        y = np.arange(len(order))
        fig = fig or _new_figure(min(len(order) * 0.34 + 1.6, MAX_HEIGHT))
        axes = fig.subplots(1, n, sharey=True, squeeze=False)[0]
        present = [(field, color, label) for field, color, label in
                   (("first", PALETTE[0], "first order"), ("total", PALETTE[1], "total"))
                   if any(r.get(field) is not None for rows in sens.values() for r in rows)]
        h = 0.76 / max(len(present), 1)
        handles: dict[str, Any] = {}
        for ax, (key, rows) in zip(axes, sens.items(), strict=True):
            by = {str(r["input"]): r for r in rows}
            for j, (field, color, label) in enumerate(present):
                off = (j - (len(present) - 1) / 2) * h
                v = np.nan_to_num(_arr([by.get(k, {}).get(field) for k in order]), nan=0.0)
                lo = _arr([by.get(k, {}).get(f"{field}_low") for k in order])
                hi = _arr([by.get(k, {}).get(f"{field}_high") for k in order])
                err = np.vstack([np.nan_to_num(np.maximum(v - lo, 0.0), nan=0.0),
                                 np.nan_to_num(np.maximum(hi - v, 0.0), nan=0.0)])
                handles[label] = ax.barh(
                    y + off, v, height=h, color=color, label=label, xerr=err,
                    error_kw={"elinewidth": 0.9, "capsize": 2, "ecolor": "0.2"})
            sh = _arr([by.get(k, {}).get("shapley") for k in order])
            if np.isfinite(sh).any():
                handles["Shapley effect"] = ax.plot(sh, y, "D", color="black", ms=3.5,
                                                    ls="none", label="Shapley effect")[0]
            ax.set_xlim(0.0, 1.0)
            ax.set_xlabel(f"Sobol index of the\n{output_name(key)} [-]")
            ax.set_title(textwrap.fill(_mech_name(results, key), 26 if n > 2 else 40))
            ax.grid(axis="y", visible=False)
        axes[0].set_yticks(y)
        axes[0].set_yticklabels([input_label(k) for k in order])
        axes[0].invert_yaxis()
        fig.legend(list(handles.values()), list(handles), loc="outside lower center",
                   ncol=3, frameon=False)
    return fig


def _tornado_cap(results: Mapping[str, Any], key: str) -> float:
    """The cap of a tornado's output [pressure unit]: the first stage's reservoir pressure
    (critical drawdowns are capped at it; for pore collapse the critical reservoir pressure is
    at most the initial pressure)."""
    stages = ((results.get("mechanisms") or {}).get(key) or {}).get("stages") or []
    if not stages:
        stages = next((m["stages"] for _k, m in _drawdown_mechanisms(results)), [])
    return _f(stages[0].get("reservoir_pressure")) if stages else math.nan


#: At most this many inputs a tornado panel (the largest swings; the memo's table lists all).
TORNADO_ROWS: Final = 8


def plot_tornado(results: Mapping[str, Any], *, fig: Figure | None = None) -> Figure | None:
    """Tornado chart: the output (critical drawdown; for pore collapse the critical reservoir
    pressure) with one input at a time moved to its P10 and P90 (the others at their base
    values), largest swing on top; one panel per mechanism, two panels a row. Only inputs that
    visibly move the output (a swing of at least 0.5% of the largest) are drawn, at most
    :data:`TORNADO_ROWS`; the others are named under the panel. The axis ends at the reservoir
    pressure the output is capped at; a bar that reaches the cap is hatched and marked with an
    arrow (the true value lies beyond)."""
    torn = {k: v for k, v in (results.get("tornado") or {}).items() if v and v.get("rows")}
    if not torn:
        return None
    with _styled():
        unit = _unit(results)
        units = _input_units(results)
        n = len(torn)
        ncols = 1 if n == 1 else 2

        def swing(r: Mapping[str, Any]) -> float:
            a, b = _f(r.get("output_low")), _f(r.get("output_high"))
            return float(np.nan_to_num(abs(a - b), nan=math.inf))

        shown: dict[str, list[Mapping[str, Any]]] = {}
        hidden: dict[str, list[Mapping[str, Any]]] = {}
        for key, t in torn.items():
            rows = sorted(t["rows"], key=lambda r: -swing(r))
            top = swing(rows[0]) if rows else 0.0  # a swing below 0.5% of it cannot be seen
            moving = [r for r in rows if swing(r) > 0.0 and swing(r) >= 0.005 * top]
            shown[key] = moving[:TORNADO_ROWS]
            hidden[key] = [r for r in rows if r not in shown[key]]
        keys = list(torn)
        grid_rows = [keys[i:i + ncols] for i in range(0, n, ncols)]
        heights = [max(len(shown[k]) for k in row) * 0.36 + 1.5 for row in grid_rows]
        fig = fig or _new_figure(min(sum(heights) + 0.35, MAX_HEIGHT))
        axes = fig.subplots(len(grid_rows), ncols, squeeze=False,
                            gridspec_kw={"height_ratios": heights})
        engine = fig.get_layout_engine()
        if isinstance(engine, ConstrainedLayoutEngine):
            engine.set(w_pad=0.1)  # [in] room for the ▶ marks at the cap
        capped_any = False
        for i, key in enumerate(keys):
            t = torn[key]
            ax = axes.flat[i]
            base = _f(t.get("base"))
            cap = _tornado_cap(results, key)
            rows = shown[key]
            y = np.arange(len(rows))
            for field, color, label in (("output_low", PALETTE[0], "input at its P10"),
                                        ("output_high", PALETTE[1], "input at its P90")):
                out = _arr([r.get(field) for r in rows])
                at_cap = np.isfinite(out) & (out >= cap * (1.0 - 1e-9)) if math.isfinite(
                    cap) else np.zeros(out.size, bool)
                bars = ax.barh(y, np.nan_to_num(out - base, nan=0.0), left=base, height=0.6,
                               color=color, alpha=0.9, label=label, edgecolor="white",
                               linewidth=0.5)
                for bar, capped in zip(bars, at_cap, strict=True):
                    if capped:
                        bar.set_hatch("////")
                if at_cap.any():
                    capped_any = True
                    ax.plot(np.full(int(at_cap.sum()), cap), y[at_cap], marker=">", ms=6,
                            ls="none", color="black", clip_on=False, zorder=6)
            ax.axvline(base, color="black", lw=1.0)
            labels = []
            for r in rows:
                u = str(r.get("unit") or units.get(str(r["input"]), ""))
                lo = format_value(r.get("low_value"), "", none="?")
                hi = format_value(r.get("high_value"), "", none="?")
                values = f"{lo} / {hi}" + (f" {u}" if u and u != "-" else "")
                labels.append(f"{input_label(str(r['input']))}\n{values}")
            ax.set_yticks(y)
            ax.set_yticklabels(labels, fontsize=6.5)
            ax.invert_yaxis()
            if not rows:
                ax.set_yticks([])
                ax.text(0.5, 0.5, f"no input moves the output\n(all at {format_value(base, unit)})",
                        transform=ax.transAxes, ha="center", va="center", fontsize=7)
            if math.isfinite(cap) and cap > 0.0:
                left = max(0.0, min(ax.get_xlim()[0], base))
                ax.set_xlim(left if left < cap else 0.0, cap)
            xlabel = (f"{output_name(key)} [{unit}]\n(base {format_value(base, unit)}; "
                      f"axis ends at {PR} = {format_value(cap, unit)})")
            if hidden[key] and rows:
                names = ", ".join(input_label(str(r["input"])) for r in hidden[key])
                xlabel += "\n" + textwrap.fill(f"not drawn (smaller or no effect): {names}",
                                                 44 if ncols > 1 else 100)
            ax.set_xlabel(xlabel, fontsize=7)
            ax.set_title(textwrap.fill(_mech_name(results, key), 34 if ncols > 1 else 60))
            ax.xaxis.set_major_locator(mpl.ticker.MaxNLocator(4))
            _thousands(ax.xaxis)
            ax.grid(axis="y", visible=False)
        _hide_unused(axes, n)
        handles = [Patch(facecolor=PALETTE[0], label="input at its P10"),
                   Patch(facecolor=PALETTE[1], label="input at its P90")]
        if capped_any:
            handles.append(Patch(facecolor="white", edgecolor="0.2", hatch="////",
                                 label=f"reaches the cap {PR} (▶: the value lies beyond)"))
        fig.legend(handles=handles, loc="outside lower center", ncol=3, frameon=False)
    return fig
