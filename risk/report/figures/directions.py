"""Shot directions: one polar dial of drawdown limits per mechanism and depletion stage."""

from __future__ import annotations

import math
import textwrap
from collections.abc import Mapping
from typing import Any

import numpy as np
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from risk.report.figures.common import (
    MAX_HEIGHT,
    PAGE_WIDTH,
    PALETTE,
    PR,
    _arr,
    _f,
    _new_figure,
    _styled,
    _unit,
)
from risk.report.formatting import format_value
from risk.report.reading import drawdown_mechanisms as _drawdown_mechanisms


def _shot_mechanisms(results: Mapping[str, Any]) -> list[tuple[str, Mapping[str, Any]]]:
    return [(k, m) for k, m in _drawdown_mechanisms(results)
            if all(s.get("shots") for s in m["stages"])]


def _best_shot(stage: Mapping[str, Any]) -> float | None:
    """The ``best_shot_angle`` of the stage, else the shot with the lowest probability at the
    limit (ties: the larger median critical drawdown); None where the results state that no
    direction is preferred."""
    if stage.get("best_shot_angle") is not None:
        return float(stage["best_shot_angle"])
    if "best_shot_angle" in stage or stage.get("shot_note"):
        return None
    shots = stage.get("shots") or []
    if not shots:
        return None

    def key(s: Mapping[str, Any]) -> tuple[float, float]:
        p50 = s.get("critical_drawdown_p50")
        return (_f(s.get("probability_at_limit")), -math.inf if p50 is None else -float(p50))

    return float(min(shots, key=key)["angle"])


def _nice_rings(top: float) -> np.ndarray:
    """Ring radii for a dial: 1-2-2.5-5 steps, 2 to 4 rings, the outer one at or above ``top``."""
    top = top if math.isfinite(top) and top > 0 else 1.0
    mag = 10.0 ** math.floor(math.log10(top))
    for step in (0.1, 0.2, 0.25, 0.5, 1.0, 2.0, 2.5, 5.0, 10.0):
        k = math.ceil(top / (step * mag) - 1e-9)
        if k <= 4:
            return step * mag * np.arange(1, max(k, 2) + 1)
    return np.array([top / 2, top])  # pragma: no cover - the loop always returns


def _shot_layout(n_st: int, n_mech: int) -> tuple[int, float, float]:
    """Columns, dial size [in] and figure height [in] of the shot-direction figure: at most
    four stages a row while the figure fits :data:`MAX_HEIGHT`, more columns (and then smaller
    dials) when it would not."""
    ncols = min(n_st, 4)
    while True:
        size = PAGE_WIDTH / max(ncols, 3)  # one or two stages: keep the dials small
        nrows = math.ceil(n_st / ncols) * n_mech
        height = (size + 0.85) * nrows + 0.7
        if height <= MAX_HEIGHT or ncols >= min(n_st, 6):
            break
        ncols += 1
    if height > MAX_HEIGHT:
        size = max((MAX_HEIGHT - 0.7) / nrows - 0.85, 0.6)
        height = (size + 0.85) * nrows + 0.7
    return ncols, size, height


def plot_shot_directions(results: Mapping[str, Any], *, fig: Figure | None = None
                         ) -> Figure | None:
    """Risk per perforation direction: polar bars of the drawdown limit of a tunnel shot in each
    direction (at the accepted risk; longer is better), one row per mechanism and one column per
    depletion stage; the best direction highlighted where the limits differ between directions
    (where every direction has the same limit no direction is marked). Angles from the high
    side, clockwise (vertical well: from the ``azimuth`` reference, seen from above). Rings at
    round values, labelled inside the dial in the widest gap between bars. ``None`` for open
    hole."""
    mechs = _shot_mechanisms(results)
    if not mechs or results.get("completion") != "perforated":
        return None
    with _styled():
        n_st = max(len(m["stages"]) for _, m in mechs)
        ncols, size, height = _shot_layout(n_st, len(mechs))
        rows_per = math.ceil(n_st / ncols)
        nrows = rows_per * len(mechs)
        fig = fig or _new_figure(height, max(size * ncols, 4.8))
        unit = _unit(results)
        axes = fig.subplots(nrows, ncols, squeeze=False, subplot_kw={"projection": "polar"})

        def rings(mech: Mapping[str, Any]) -> np.ndarray:
            """Ring radii of one mechanism's row: its largest per-shot limit (else p_r)."""
            tops = [_f(sh.get("drawdown_limit")) for st in mech["stages"] for sh in st["shots"]]
            top = max((t for t in tops if np.isfinite(t)), default=0.0)
            if top <= 0.0:
                top = max((_f(st.get("reservoir_pressure")) for st in mech["stages"]),
                          default=1.0)
            return _nice_rings(float(np.nan_to_num(top, nan=1.0)))

        for m, (key, mech) in enumerate(mechs):
            ring = rings(mech)
            rmax = float(ring[-1])
            name = textwrap.wrap(str(mech.get("name", key)), 30)
            for k in range(rows_per * ncols):
                ax = axes[m * rows_per + k // ncols, k % ncols]
                if k >= len(mech["stages"]):
                    ax.set_visible(False)
                    continue
                st = mech["stages"][k]
                shots = st["shots"]
                ang = np.radians(_arr([s["angle"] for s in shots]))
                lim = np.nan_to_num(_arr([s.get("drawdown_limit") for s in shots]), nan=0.0)
                order = np.sort(np.mod(ang, 2 * np.pi))
                gaps = np.diff(np.concatenate([order, [order[0] + 2 * np.pi]]))
                width = 0.65 * float(gaps[gaps > 0].min()) if (gaps > 0).any() else 0.8
                # a best direction only where the drawn limits differ between directions
                differ = bool(np.ptp(lim) > 1e-9 * max(rmax, 1.0))
                best = _best_shot(st) if differ else None
                is_best = (np.isclose(np.degrees(ang), best) if best is not None
                           else np.zeros(ang.size, bool))
                colors = [PALETTE[2] if b else PALETTE[0] for b in is_best]
                ax.bar(ang, lim, width=width, color=colors, edgecolor="black", linewidth=0.5,
                       alpha=0.9)
                if not differ:
                    text = ("limit 0 in\nevery direction" if not np.any(lim > 0.0) else
                            f"same limit in\nevery direction:\n{format_value(lim[0], unit)}")
                    ax.text(0.5, 0.5, text, transform=ax.transAxes, ha="center", va="center",
                            fontsize=6.5, zorder=6,
                            bbox={"facecolor": "white", "edgecolor": "0.6", "pad": 2.0})
                ax.set_theta_zero_location("N")
                ax.set_theta_direction(-1)
                if best is not None:  # visible even when the best shot's limit is 0
                    ax.plot([np.radians(best)] * 2, [0.0, rmax], color=PALETTE[2], lw=1.0,
                            ls="--", zorder=4)
                    ax.plot([np.radians(best)], [rmax], marker="o", ms=5, color=PALETTE[2],
                            mec="black", mew=0.5, clip_on=False, zorder=5)
                ax.set_ylim(0.0, rmax)
                # a ring labelled inside the dial (an outer-ring label would meet the angle
                # labels; the title gives the outer ring), in the middle of the widest gap
                # between bars, on a white ground; none where a note fills the centre
                ax.set_rticks(list(ring))
                ax.set_yticklabels([])
                widest = int(np.argmax(gaps))
                mid = float(order[widest] + gaps[widest] / 2)
                # one inner ring labelled (two side by side collide on small dials)
                inner = ring[:-1][np.argmin(np.abs(ring[:-1] - rmax / 2))]
                for r in [inner] if differ else []:
                    ax.text(mid, float(r), format_value(r, unit), fontsize=6, ha="center",
                            va="center", zorder=6, gid="ring-label",
                            bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.8,
                                  "pad": 0.6})
                ax.set_xticks(np.radians(np.arange(0, 360, 60)))
                ax.set_xticklabels([f"{a}°" for a in range(0, 360, 60)], fontsize=7)
                ax.tick_params(pad=1)
                head = name if k % ncols == 0 else [""] * len(name)
                ax.set_title("\n".join(
                    [*head, f"{PR} = {format_value(st.get('reservoir_pressure'), unit)}",
                     f"outer ring {format_value(rmax, unit)}"]), fontsize=7)
        fig.legend(handles=[
            Line2D([], [], color=PALETTE[2], lw=1.0, ls="--", marker="o", mec="black", mew=0.5,
                   label="best direction (where the limits differ)"),
            Patch(facecolor=PALETTE[0], edgecolor="black", label="other shots"),
        ], loc="outside lower center", ncol=2, frameon=False,
            title=f"radius: drawdown limit of tunnels shot in that direction [{unit}]\n"
                  "angle: shot direction [deg], "
                  + str(results.get("angle_reference") or "from the high side"))
    return fig
