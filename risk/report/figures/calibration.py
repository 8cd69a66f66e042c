"""The field-history calibration (prior and posterior sand-free limits and curves, the
calibrated inputs) and the value-of-information bar chart."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np
from matplotlib.figure import Figure

from risk.report.figures.common import (
    PAGE_WIDTH,
    PALETTE,
    _arr,
    _new_figure,
    _styled,
    _thousands,
    _unit,
)
from risk.report.formatting import input_label


def plot_calibration(results: Mapping[str, Any], *, fig: Figure | None = None
                     ) -> Figure | None:
    """Prior and posterior: the sand-free limit over depletion, the first stage's failure
    curve of every mechanism, and each calibrated input's density."""
    cal = results.get("calibration")
    if not cal:
        return None
    with _styled():
        unit = _unit(results)
        n_in = len(cal["inputs"])
        fig = fig or _new_figure(2.6, PAGE_WIDTH)
        axes = fig.subplots(1, 2 + n_in, squeeze=False)[0]
        ax = axes[0]
        for block, color, label in ((cal["prior"], PALETTE[0], "prior"),
                                    (cal["posterior"], PALETTE[1], "posterior")):
            sf = block.get("sand_free") or []
            if sf:
                ax.plot(_arr([s["reservoir_pressure"] for s in sf]),
                        _arr([s["drawdown_limit"] for s in sf]), "o-", color=color, ms=3,
                        label=label)
        ax.set_xlabel(f"reservoir pressure [{unit}]")
        ax.set_ylabel(f"sand-free limit [{unit}]")
        ax.invert_xaxis()
        ax.legend(fontsize=7)
        _thousands(ax.xaxis)
        _thousands(ax.yaxis)
        ax = axes[1]
        for block, ls, label in ((cal["prior"], "-", "prior"), (cal["posterior"], "--",
                                                               "posterior")):
            for i, (key, stages) in enumerate(block["mechanisms"].items()):
                fp = stages[0]["failure_probability"]
                ax.plot(_arr([p["drawdown"] for p in fp]), _arr([p["p"] for p in fp]), ls,
                        color=PALETTE[i % len(PALETTE)], lw=1.2,
                        label=f"{key.replace('_', ' ')} ({label})")
        ax.set_xlabel(f"drawdown, first stage [{unit}]")
        ax.set_ylabel("P(failure) [-]")
        ax.legend(fontsize=5)
        _thousands(ax.xaxis)
        for ax, item in zip(axes[2:], cal["inputs"], strict=True):
            h = item["histogram"]
            edges = _arr(h["edges"])
            ax.stairs(np.nan_to_num(_arr(h["prior"])), edges, color=PALETTE[0], label="prior")
            ax.stairs(np.nan_to_num(_arr(h["posterior"])), edges, color=PALETTE[1],
                      fill=True, alpha=0.4, label="posterior")
            ax.set_xlabel(f"{input_label(str(item['name']))} [{item['unit']}]")
            ax.set_yticks([])
            _thousands(ax.xaxis)
        return fig


def plot_value_of_information(results: Mapping[str, Any], *, fig: Figure | None = None
                              ) -> Figure | None:
    """Expected gain of the sand-free limit per measurement and stage, with its Monte-Carlo
    error (two standard errors) [display pressure unit]."""
    voi = results.get("value_of_information")
    if not voi or not voi.get("rows"):
        return None
    with _styled():
        unit = _unit(results)
        rows = voi["rows"]
        n_stage = len(rows[0]["stages"])
        fig = fig or _new_figure(0.25 * len(rows) * max(n_stage, 2) / 2 + 1.2, PAGE_WIDTH * 0.9)
        ax = fig.subplots()
        y = np.arange(len(rows))
        height = 0.8 / n_stage
        for k in range(n_stage):
            vals = _arr([r["stages"][k]["gain"] for r in rows])
            errs = _arr([r["stages"][k]["mc_error"] for r in rows])
            p_r = rows[0]["stages"][k]["reservoir_pressure"]
            ax.barh(y + k * height, np.nan_to_num(vals), height, xerr=2 * np.nan_to_num(errs),
                    color=PALETTE[k % len(PALETTE)], label=f"p_r {p_r:,.4g} {unit}",
                    error_kw={"lw": 0.7, "capsize": 1.5})
        ax.set_yticks(y + 0.4 - height / 2)
        ax.set_yticklabels([str(r["name"]) for r in rows], fontsize=7)
        ax.invert_yaxis()
        ax.axvline(0.0, color="0.2", lw=0.8)
        ax.set_xlabel(f"expected gain of the sand-free limit [{unit}] (bars: 2 MC errors)")
        ax.legend(fontsize=7)
        _thousands(ax.xaxis)
        return fig
