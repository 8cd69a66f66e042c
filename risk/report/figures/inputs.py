"""The sampled inputs: histograms with P10/P50/P90, and their rank correlation as a heatmap."""

from __future__ import annotations

import math
import warnings
from collections.abc import Mapping
from typing import Any

import matplotlib as mpl
import numpy as np
import seaborn as sns
from matplotlib.axes import Axes
from matplotlib.figure import Figure
from matplotlib.lines import Line2D

from risk.report.figures.common import (
    PAGE_WIDTH,
    PALETTE,
    _arr,
    _f,
    _hide_unused,
    _new_figure,
    _styled,
    _thousands,
)
from risk.report.formatting import format_value, input_label


def _sampled_inputs(results: Mapping[str, Any]) -> list[Mapping[str, Any]]:
    return [i for i in results.get("inputs") or []
            if not i.get("fixed") and (i.get("histogram") or {}).get("counts")]


def plot_input_histograms(results: Mapping[str, Any], *, fig: Figure | None = None
                          ) -> Figure | None:
    """Histograms of the sampled inputs (display units) with P10, P50 and P90 marked."""
    items = _sampled_inputs(results)
    if not items:
        return None
    with _styled():
        ncols = min(len(items), 4)
        nrows = math.ceil(len(items) / ncols)
        fig = fig or _new_figure(1.75 * nrows + 0.5, min(PAGE_WIDTH, 1.75 * ncols + 0.35))
        axes = fig.subplots(nrows, ncols, squeeze=False)
        for ax, item in zip(axes.flat, items, strict=False):
            h = item["histogram"]
            edges, counts = _arr(h["edges"]), _arr(h["counts"])
            ax.stairs(counts, edges, fill=True, color=PALETTE[0], alpha=0.55)
            ax.stairs(counts, edges, color=PALETTE[0], lw=0.8)
            for q, ls in (("p10", "--"), ("p50", "-"), ("p90", "--")):
                if item.get(q) is not None:
                    ax.axvline(float(item[q]), color="0.1", ls=ls, lw=0.9)
            u = str(item.get("unit") or "-")
            ax.set_xlabel(f"{input_label(str(item['name']))} [{u}]")
            _thousands(ax.xaxis)
            ax.set_yticks([])
            ax.grid(axis="y", visible=False)
            ax.xaxis.set_major_locator(mpl.ticker.MaxNLocator(4))
        for r in range(nrows):
            axes[r, 0].set_ylabel("relative frequency [-]")
        _hide_unused(axes, len(items))
        fig.legend(handles=[Line2D([], [], color="0.1", ls="-", label="P50"),
                            Line2D([], [], color="0.1", ls="--", label="P10 and P90")],
                   loc="outside lower center", ncol=2, frameon=False)
    return fig


def plot_input_correlation(results: Mapping[str, Any], *, ax: Axes | None = None
                           ) -> Axes | None:
    """Heatmap of the sampled Spearman rank correlation between inputs [-]."""
    rc = results.get("input_rank_correlation") or {}
    names, matrix = rc.get("names") or [], rc.get("matrix") or []
    if len(names) < 2 or len(matrix) != len(names):
        return None
    with _styled():
        if ax is None:
            n = len(names)
            side = min(PAGE_WIDTH * 0.8, 2.4 + 0.5 * n)
            ax = _new_figure(side * 0.85, side).subplots()
        m = np.array([[_f(v) for v in row] for row in matrix])
        labels = [input_label(str(x)) for x in names]
        text = np.array([[format_value(v + 0.0, "-", none="") if np.isfinite(v) else ""
                          for v in np.round(row, 2)] for row in m])
        with warnings.catch_warnings():  # seaborn 0.13 calls a colormap method matplotlib
            warnings.simplefilter("ignore", PendingDeprecationWarning)  # plans to deprecate
            sns.heatmap(m, ax=ax, vmin=-1.0, vmax=1.0, center=0.0, cmap="RdBu_r", annot=text,
                        fmt="", annot_kws={"fontsize": 7}, square=True, linewidths=0.5,
                        linecolor="white", xticklabels=labels, yticklabels=labels,
                        cbar_kws={"label": "Spearman rank correlation [-]", "shrink": 0.8})
        ax.tick_params(axis="x", labelrotation=45)
        ax.tick_params(axis="y", labelrotation=0)
        for t in ax.get_xticklabels():
            t.set_horizontalalignment("right")
            t.set_rotation_mode("anchor")
    return ax
