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
"""

from __future__ import annotations

import io
import math
import textwrap
import warnings
from collections.abc import Callable, Iterator, Mapping, Sequence
from contextlib import contextmanager
from typing import Any, Final

import matplotlib as mpl
import numpy as np
import seaborn as sns
from cycler import cycler
from matplotlib.axes import Axes
from matplotlib.figure import Figure
from matplotlib.layout_engine import ConstrainedLayoutEngine
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

__all__ = [
    "DPI",
    "FIGURES",
    "MAX_HEIGHT",
    "format_value",
    "input_label",
    "mechanism_color",
    "output_name",
    "plot_envelope",
    "plot_failure_probability",
    "plot_input_correlation",
    "plot_input_histograms",
    "plot_pore_collapse",
    "plot_sensitivity",
    "plot_shot_directions",
    "plot_tornado",
    "plot_tunnel_collapse",
    "render_all",
    "style",
]

DPI: Final = 150
PAGE_WIDTH: Final = 7.0  # [in] printable width of an A4 page with 2 cm margins, rounded
#: [in] tallest figure: the memo prints figures at most 6.53 in wide (0.93 of the design size)
#: on a 10.1 in tall printable A4 area that also holds the caption (derived from memo.css).
MAX_HEIGHT: Final = 9.0
#: Probability axes run a little past [0, 1] so that a curve at 0 or 1 is not hidden under
#: the frame.
_P_LIMITS: Final = (-0.02, 1.02)

PALETTE: Final[list[tuple[float, float, float]]] = [
    (float(c[0]), float(c[1]), float(c[2])) for c in sns.color_palette("colorblind", 10)
]
#: Fixed colour per mechanism key, so a mechanism keeps its colour in every figure.
_MECHANISM_ORDER: Final = ("yield_onset", "effective_strength_onset", "tunnel_collapse",
                           "pore_collapse")

#: Short labels for inputs in axes and tables (names from :data:`risk.scenario.INPUTS`).
INPUT_LABELS: Final[dict[str, str]] = {
    "sv": "Sv", "sv_gradient": "Sv gradient", "shmax": "SHmax",
    "shmax_gradient": "SHmax gradient", "shmin": "Shmin", "shmin_gradient": "Shmin gradient",
    "pp": "initial pore pressure", "pp_gradient": "pore-pressure gradient",
    "shmax_azimuth": "SHmax azimuth", "depletion_path": "depletion path dSh/dPp",
    "ucs": "UCS", "friction_angle": "friction angle", "tensile_strength": "tensile strength",
    "poisson_ratio": "Poisson's ratio", "biot": "Biot coefficient", "hb_mi": "Hoek-Brown mi",
    "gsi": "GSI", "twc": "TWC", "twc_ratio": "TWC/UCS", "twc_factor": "strength factor k",
    "young_modulus": "Young's modulus", "dilation_angle": "dilation angle",
    "critical_plastic_strain": "critical plastic strain",
    "pore_collapse_pressure": "pore-collapse pressure P*", "drainage_radius": "drainage radius",
}

#: Decimals shown for a pressure in each unit (finer than any input is known).
_PRESSURE_DECIMALS: Final[dict[str, int]] = {"psi": 0, "kPa": 0, "bar": 1, "MPa": 2}

_QUANTILE_KEYS: Final = ("p01", "p05", "p10", "p25", "p50", "p75", "p90")
PR: Final = r"$p_r$"  # reservoir pressure, in mathtext
PWF: Final = r"$p_{wf}$"  # flowing wall pressure


# --------------------------------------------------------------------------- helpers

def input_label(name: str) -> str:
    """A short human label for an input name (``ucs`` -> ``UCS``)."""
    return INPUT_LABELS.get(name, name.replace("_", " "))


def format_value(v: float | None, unit: str = "", *, none: str = "never") -> str:
    """A number for people: pressures to a fixed number of decimals per unit, anything else to
    four significant digits; thousands separated; the unit appended (``-`` = dimensionless is
    left off). ``None`` (never fails within the available drawdown) gives ``none``."""
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return none
    x = float(v)
    if unit in _PRESSURE_DECIMALS:
        text = f"{x:,.{_PRESSURE_DECIMALS[unit]}f}"
    elif x != 0 and (abs(x) >= 1e7 or abs(x) < 1e-3):
        text = f"{x:.3e}"
    elif abs(x) >= 1e4:
        text = f"{x:,.0f}"
    else:
        text = f"{x:,.4g}"
    if text.startswith("-") and float(text.replace(",", "")) == 0:
        text = text[1:]
    return f"{text} {unit}" if unit and unit != "-" else text


def mechanism_color(key: str, keys: Sequence[str] = ()) -> tuple[float, float, float]:
    """The fixed colour of a mechanism (known keys first, then in order of ``keys``)."""
    if key in _MECHANISM_ORDER:
        return PALETTE[_MECHANISM_ORDER.index(key)]
    extra = [k for k in keys if k not in _MECHANISM_ORDER]
    i = len(_MECHANISM_ORDER) + (extra.index(key) if key in extra else 0)
    return PALETTE[i % len(PALETTE)]


def _unit(results: Mapping[str, Any], kind: str = "pressure") -> str:
    return str(results.get("units", {}).get(kind, ""))


def _f(v: Any) -> float:
    """A JSON number as float; ``None`` as NaN."""
    return math.nan if v is None else float(v)


def _arr(values: Sequence[Any]) -> np.ndarray:
    return np.array([_f(v) for v in values], dtype=float)


def _drawdown_mechanisms(results: Mapping[str, Any]) -> list[tuple[str, Mapping[str, Any]]]:
    """Mechanisms whose stages carry failure-probability curves (not pore collapse)."""
    out = []
    for key, mech in results.get("mechanisms", {}).items():
        stages = mech.get("stages") or []
        if stages and all("failure_probability" in s for s in stages):
            out.append((key, mech))
    return out


def _stage_pressures(results: Mapping[str, Any]) -> list[float]:
    mechs = _drawdown_mechanisms(results)
    if not mechs:
        return []
    return [_f(s["reservoir_pressure"]) for s in mechs[0][1]["stages"]]


def _grid(n: int, max_cols: int) -> tuple[int, int]:
    ncols = min(n, max_cols)
    if n == 4 and max_cols >= 2:
        ncols = 2
    return math.ceil(n / ncols), ncols


def _thousands(*axes: Any) -> None:
    """Tick labels with thousands separators (2,000 not 2000) on pressure axes."""
    for axis in axes:
        axis.set_major_formatter(mpl.ticker.FuncFormatter(lambda v, _pos: f"{v:,.6g}"))


def _hide_unused(axes: np.ndarray, used: int) -> None:
    for ax in axes.flat[used:]:
        ax.set_visible(False)


def style() -> dict[str, Any]:
    """The rc settings every figure is drawn under (seaborn's "whitegrid" and "paper"
    context, a bundled font so text renders the same on every machine)."""
    rc: dict[str, Any] = dict(sns.axes_style("whitegrid"))
    rc.update(sns.plotting_context("paper", font_scale=1.0))
    rc.update({
        "font.family": "DejaVu Sans",
        "font.sans-serif": ["DejaVu Sans"],
        "mathtext.fontset": "dejavusans",
        "axes.prop_cycle": cycler(color=PALETTE),
        "axes.titlesize": 9,
        "axes.labelsize": 8.5,
        "xtick.labelsize": 7.5,
        "ytick.labelsize": 7.5,
        "legend.fontsize": 7.5,
        "legend.title_fontsize": 8,
        "figure.dpi": DPI,
        "savefig.dpi": DPI,
        "savefig.facecolor": "white",
        "axes.unicode_minus": True,
        "svg.hashsalt": "risk",
        "image.cmap": "viridis",
    })
    return rc


@contextmanager
def _styled() -> Iterator[None]:
    with mpl.rc_context(style()):  # type: ignore[arg-type]
        yield


def _new_figure(height: float, width: float = PAGE_WIDTH) -> Figure:
    return Figure(figsize=(width, height), layout="constrained")


# --------------------------------------------------------------------------- 1. failure curves

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


# --------------------------------------------------------------------------- 2. envelope

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


# --------------------------------------------------------------------------- 3. shot directions

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


# --------------------------------------------------------------------------- 4. sensitivity

def _mech_name(results: Mapping[str, Any], key: str) -> str:
    return str(results.get("mechanisms", {}).get(key, {}).get("name", key))


def output_name(key: str) -> str:
    """What the sensitivity of a mechanism is computed on: the critical drawdown, or for pore
    collapse the critical reservoir pressure."""
    return "critical reservoir pressure" if key == "pore_collapse" else "critical drawdown"


def _input_units(results: Mapping[str, Any]) -> dict[str, str]:
    return {str(i["name"]): str(i.get("unit") or "") for i in results.get("inputs") or []}


def _rank_value(row: Mapping[str, Any]) -> float:
    """What ranks an input (as in the memo's tables): the Shapley effect, else the total index,
    else the first-order index; -1 when the row has none."""
    for k in ("rank_value", "shapley", "total", "first"):
        v = _f(row.get(k))
        if math.isfinite(v):
            return v
    return -1.0


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
                best[name] = max(best.get(name, -1.0), _rank_value(r))
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


# --------------------------------------------------------------------------- 5. inputs

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


# --------------------------------------------------------------------------- 6. tunnel collapse

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
        ax.set_ylim(*_P_LIMITS)
        ax.set_xlabel(f"reservoir pressure {PR} [{unit}]")
        ax.set_ylabel("probability of pore collapse [-]")
        ax.set_title(str(pc.get("name", "pore collapse")))
        _thousands(ax.xaxis)
        ax.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), frameon=False)
    return ax


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


# --------------------------------------------------------------------------- rendering

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
