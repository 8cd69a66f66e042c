"""What every figure shares: page geometry, the palette and a mechanism's fixed colour, the
style every figure is drawn under (:func:`style`), a new figure (:func:`_new_figure`) and the
small readers of the results dict (JSON numbers as floats, the mechanisms with failure curves).
"""

from __future__ import annotations

import contextvars
import functools
import math
from collections.abc import Iterator, Mapping, Sequence
from contextlib import contextmanager
from typing import Any, Final

import matplotlib as mpl
import numpy as np
import seaborn as sns
from cycler import cycler
from matplotlib.figure import Figure

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

_QUANTILE_KEYS: Final = ("p01", "p05", "p10", "p25", "p50", "p75", "p90")
PR: Final = r"$p_r$"  # reservoir pressure, in mathtext
PWF: Final = r"$p_{wf}$"  # flowing wall pressure


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
    context, a bundled font so text renders the same on every machine); a fresh copy of
    :func:`_style`, which is built once per process (every figure enters it several times)."""
    return dict(_style())


@functools.lru_cache(maxsize=1)
def _style() -> dict[str, Any]:
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
    with mpl.rc_context(_style()):  # type: ignore[arg-type]
        yield


class _Sized(Exception):  # noqa: N818 - a signal, not an error
    """Raised by :func:`_new_figure` while a figure's size is asked for
    (:func:`~risk.report.figures.render.figure_size`): the new, empty figure."""

    def __init__(self, figure: Figure) -> None:
        super().__init__("figure size")
        self.figure = figure


#: True while :func:`~risk.report.figures.render.figure_size` asks a plotting function for
#: its figure's size: :func:`_new_figure` then stops it with :class:`_Sized`.
_SIZE_ONLY: contextvars.ContextVar[bool] = contextvars.ContextVar("risk_figure_size_only",
                                                                  default=False)


def _new_figure(height: float, width: float = PAGE_WIDTH) -> Figure:
    fig = Figure(figsize=(width, height), layout="constrained")
    if _SIZE_ONLY.get():
        raise _Sized(fig)
    return fig
