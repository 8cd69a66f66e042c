"""Every figure that applies to a run as PNG bytes: the :data:`FIGURES` registry (memo order),
the provenance stored in each PNG and :func:`render_all`.

Each PNG also carries a key (:func:`figure_key`: a digest of the results and of the code that
draws figures), so that re-drawing a memo (`risk memo`) can keep the figures that would come
out the same (``reuse`` of :func:`render_all`).
"""

from __future__ import annotations

import functools
import hashlib
import io
import json
import multiprocessing
import os
import struct
import zlib
from collections.abc import Callable, Mapping
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path
from typing import Any, Final

from matplotlib.axes import Axes
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.layout_engine import PlaceHolderLayoutEngine
from PIL import Image
from PIL.PngImagePlugin import PngInfo

from risk._cores import _idle_cores
from risk.report.figures.calibration import plot_calibration, plot_value_of_information
from risk.report.figures.common import _SIZE_ONLY, DPI, _Sized, _styled
from risk.report.figures.curves import (
    plot_envelope,
    plot_failure_probability,
    plot_pore_collapse,
    plot_sand_free,
    plot_tunnel_collapse,
)
from risk.report.figures.directions import plot_shot_directions
from risk.report.figures.extensions import plot_tunnel_root, plot_water_weakening
from risk.report.figures.inputs import plot_input_correlation, plot_input_histograms
from risk.report.figures.sensitivity import plot_sensitivity, plot_tornado
from risk.report.heap import settled

#: Figure name -> plotting function, in the order they appear in the memo.
FIGURES: Final[dict[str, Callable[..., Any]]] = {
    "sand_free": plot_sand_free,
    "failure_probability": plot_failure_probability,
    "envelope": plot_envelope,
    "shot_directions": plot_shot_directions,
    "tunnel_root": plot_tunnel_root,
    "water_weakening": plot_water_weakening,
    "tunnel_collapse": plot_tunnel_collapse,
    "pore_collapse": plot_pore_collapse,
    "sensitivity": plot_sensitivity,
    "tornado": plot_tornado,
    "input_histograms": plot_input_histograms,
    "input_correlation": plot_input_correlation,
    "calibration": plot_calibration,
    "value_of_information": plot_value_of_information,
}


def provenance_text(results: Mapping[str, Any]) -> str:
    """Tool version, scenario hash, seed and sample count, stored in every PNG (tEXt chunk)."""
    return (f"risk {results.get('version')}; scenario sha256 {results.get('scenario_sha256')}; "
            f"seed {results.get('seed')}; samples {results.get('samples')}; "
            f"sampling {results.get('sampling')}")


#: The PNG text keyword of :func:`figure_key`.
KEY_CHUNK: Final = "risk-figure-key"


@functools.lru_cache(maxsize=1)
def _code_digest() -> str:
    """Digest of what draws the figures: this package's sources, the shared formatting, and
    the versions of the tool and of matplotlib and seaborn."""
    import matplotlib
    import seaborn

    from risk import __version__

    here = Path(__file__).resolve().parent
    h = hashlib.sha256(f"{__version__} {matplotlib.__version__} {seaborn.__version__}".encode())
    for path in (*sorted(here.glob("*.py")), here.parent / "formatting.py"):
        h.update(path.name.encode() + b"\0" + path.read_bytes())
    return h.hexdigest()


def figure_key(results: Mapping[str, Any]) -> str:
    """The key stored in every PNG of these results: sha256 of the results (canonical JSON)
    and of the drawing code (:func:`_code_digest`). Equal keys give equal figures."""
    text = json.dumps(results, sort_keys=True, separators=(",", ":"), default=str)
    return hashlib.sha256(f"{_code_digest()}\n{text}".encode()).hexdigest()


def png_key(png: bytes) -> str | None:
    """The :data:`KEY_CHUNK` text of a PNG (None if absent or not a PNG)."""
    if png[:8] != b"\x89PNG\r\n\x1a\n":
        return None
    pos = 8
    while pos + 8 <= len(png):
        (length,) = struct.unpack(">I", png[pos:pos + 4])
        kind = png[pos + 4:pos + 8]
        data = png[pos + 8:pos + 8 + length]
        if kind == b"tEXt" and b"\0" in data:
            word, _, text = data.partition(b"\0")
            if word == KEY_CHUNK.encode("latin-1"):
                return text.decode("latin-1")
        elif kind == b"zTXt" and b"\0" in data:
            word, _, rest = data.partition(b"\0")
            if word == KEY_CHUNK.encode("latin-1"):
                try:
                    return zlib.decompress(rest[1:]).decode("latin-1")
                except zlib.error:
                    return None
        elif kind == b"IDAT":
            return None  # text chunks written before the image data only
        pos += 12 + length
    return None


#: zlib level of the figures' PNGs: level 1 encodes in about two thirds of the time of
#: matplotlib's default (6), and as RGB the files come out 5-12 % smaller than matplotlib's RGBA
#: ones (flat-coloured line art; the demo's figures, benchmarks/README.md); same pixels.
PNG_COMPRESSION: Final = 1


def pixel_size(fig: Figure) -> tuple[int, int]:
    """Width and height [px] of the figure drawn at :data:`DPI`: its size in inches times DPI,
    truncated as matplotlib's canvas does (``FigureCanvasBase.get_width_height``: whole pixels,
    a size within 1e-8 px below a whole number counting as that number)."""
    return (int(fig.get_figwidth() * DPI + 1e-8), int(fig.get_figheight() * DPI + 1e-8))


def figure_size(name: str, results: Mapping[str, Any]) -> tuple[int, int] | None:
    """Width and height [px] of figure ``name`` of these results as :func:`render_all` draws
    it (:func:`pixel_size`), or None where it does not apply, without drawing it: its plotting
    function runs up to the point where it creates its figure (every figure's size follows
    from the results alone, before anything is plotted), a few milliseconds."""
    token = _SIZE_ONLY.set(True)
    try:
        drawn = FIGURES[name](results)
    except _Sized as sized:
        return pixel_size(sized.figure)
    finally:
        _SIZE_ONLY.reset(token)
    if drawn is None:
        return None
    # a figure created otherwise than by _new_figure: built whole, then measured
    return pixel_size(drawn if isinstance(drawn, Figure) else drawn.get_figure(root=True))


def _fixed_titles(fig: Figure) -> list[Axes]:
    """The axes whose title matplotlib would not move, fixed at the top of the axes
    (``Axes._autotitlepos`` off) so that it stops working that out; returned.

    matplotlib moves a title up only above x tick labels or an x label at the top of the
    axes, or above the y axis' offset text where the two overlap
    (``Axes._update_title_position``); otherwise it leaves it at the top of the axes, yet
    measures the tick labels of both axes to find that out on every tight-box query and
    draw (constrained layout's two passes and the draw: about a tenth of the figures' CPU).
    Fixed: Cartesian axes with their x labels at the bottom (polar axes keep matplotlib's
    placement: their angle labels sit above the circle). One whose y axis turns out to carry
    an offset text is given back before the draw (:func:`_release_titles`); its layout then
    saw the title unmoved (no figure of the memo has one: its axes format their own ticks).
    Where this matplotlib has no such switch, nothing is fixed."""
    fixed = []
    for ax in fig.axes:
        if (getattr(ax, "_autotitlepos", None) is True and ax.name == "rectilinear"
                and ax.xaxis.get_label_position() == "bottom"
                and not ax.xaxis.majorTicks[0].label2.get_visible()
                and not ax.xaxis.minorTicks[0].label2.get_visible()):
            setattr(ax, "_autotitlepos", False)  # noqa: B010 - a private switch, checked above
            fixed.append(ax)
    return fixed


def _release_titles(fixed: list[Axes]) -> None:
    """Give the titles of :func:`_fixed_titles` back to matplotlib where it might move them
    after all: axes whose y axis carries an offset text (known once the layout has set the
    ticks)."""
    for ax in fixed:
        if ax.yaxis.offsetText.get_text():
            setattr(ax, "_autotitlepos", True)  # noqa: B010


def _draw_once(fig: Figure) -> None:
    """Lay the figure out by hand so that ``savefig`` draws it once, on the canvas and
    renderer the layout measured text with.

    ``savefig`` on a figure with a layout engine draws it twice, the first time with drawing
    disabled only for the engine to run, on a renderer of its own when the figure has no
    Agg canvas (the text measured and the mathtext parsed again for the real draw). Here the
    figure gets its Agg canvas first (which keeps one renderer per size and dpi), the engine
    runs once and is taken off, and ``savefig`` draws once on that renderer: the same layout
    and the same pixels as ``savefig`` alone (tested); with :func:`_fixed_titles`, about 0.8
    of the figures' CPU time (benchmarks/README.md)."""
    if not isinstance(fig.canvas, FigureCanvasAgg):
        FigureCanvasAgg(fig)  # sets itself as the figure's canvas
    fixed = _fixed_titles(fig)
    engine = fig.get_layout_engine()
    if engine is not None and not isinstance(engine, PlaceHolderLayoutEngine):
        engine.execute(fig)
        fig.set_layout_engine(None)
        if fig.get_layout_engine() is not None:  # pragma: no cover - rc asks for a layout
            fig.set_layout_engine(engine)  # savefig then runs it again, as before
    _release_titles(fixed)


def _png(fig: Figure, description: str = "", key: str = "") -> bytes:
    """The figure as an 8-bit RGB PNG at :data:`DPI` (text chunks: ``Description``, the
    :data:`KEY_CHUNK`, and the resolution; no software stamp).

    Drawn by matplotlib's Agg renderer with the pixels of ``savefig`` (layout engine
    included; laid out by :func:`_draw_once` so that it is drawn once), then written without
    the alpha channel: every figure is drawn on an opaque white face, so the alpha is 255
    everywhere and dropping it changes no pixel, while the PDF then embeds the image as it is
    instead of splitting off an alpha mask."""
    buf = io.BytesIO()
    with _styled():
        if fig.get_dpi() == DPI:  # the layout's renderer is the drawing's
            _draw_once(fig)
        fig.savefig(buf, format="raw", dpi=DPI)
        width, height = pixel_size(fig)
    raw = buf.getvalue()
    if len(raw) != 4 * width * height:  # pragma: no cover - a size matplotlib rounded otherwise
        raise RuntimeError(f"unexpected raster size {len(raw)} for {width} x {height} px")
    image = Image.frombuffer("RGBA", (width, height), raw, "raw", "RGBA", 0, 1)
    info = PngInfo()
    if description:
        info.add_text("Description", description)
    if key:
        info.add_text(KEY_CHUNK, key)
    out = io.BytesIO()
    image.convert("RGB").save(out, format="png", pnginfo=info, dpi=(DPI, DPI),
                              compress_level=PNG_COMPRESSION)
    return out.getvalue()


def _render_one(name: str, results: Mapping[str, Any], key: str = "") -> bytes | None:
    """PNG bytes of one figure, or None where it does not apply to these results."""
    drawn = FIGURES[name](results)
    if drawn is None:
        return None
    fig = drawn if isinstance(drawn, Figure) else drawn.get_figure(root=True)
    return _png(fig, provenance_text(results), key)


def _workers() -> int:
    """Processes for drawing: 2 when this process may use two cores and about two are idle
    while it waits (so that it and a second process each get one), else 1.

    The one-minute load average counts this run itself (near 1 after a run of a minute), so
    it only rules a second process out (load >= cores: every core busy); where it leaves room,
    the idle cores are measured over 0.1 s (:func:`_idle_cores`, at least 1.5 of them). Measured:
    on two busy cores a second process only adds its start-up and colder caches (0.87-0.91x);
    the figures' CPU time splits about evenly over two (benchmarks/README.md)."""
    try:
        cores = len(os.sched_getaffinity(0))
        load = os.getloadavg()[0]
    except (AttributeError, OSError):  # pragma: no cover - not on Linux
        return 1
    if cores < 2 or load >= cores:
        return 1
    idle = _idle_cores()
    if idle is None:  # pragma: no cover - no /proc/stat: the load average alone
        return 2 if load < cores - 1 else 1
    return 2 if idle >= 1.5 else 1


@settled()
def render_all(results: Mapping[str, Any], *, workers: int | None = None,
               reuse: Mapping[str, bytes] | None = None) -> dict[str, bytes]:
    """PNG bytes (150 dpi) of every figure that applies to these results, by name
    (:data:`FIGURES` order); figures whose sections are absent are left out.

    With ``workers`` > 1 (default: 2 where a second core is idle, see :func:`_workers`) the
    figures are drawn in that many forked processes (figures are independent and drawn under a
    fixed style, so the bytes are the same as drawn one after the other; where fork is
    unavailable, one process).
    ``reuse``: PNGs drawn before, by name; one whose key (:func:`png_key`) equals
    :func:`figure_key` of these results is returned as it is instead of being drawn again.
    """
    key = figure_key(results)
    kept = {name: png for name, png in (reuse or {}).items()
            if name in FIGURES and png_key(png) == key}
    names = [name for name in FIGURES if name not in kept]
    n = min(_workers() if workers is None else int(workers), len(names))
    if n > 1 and "fork" in multiprocessing.get_all_start_methods():
        ctx = multiprocessing.get_context("fork")
        with ProcessPoolExecutor(max_workers=n, mp_context=ctx) as pool:
            pngs = list(pool.map(_render_one, names, [results] * len(names),
                                 [key] * len(names)))
    else:
        pngs = [_render_one(name, results, key) for name in names]
    drawn = dict(zip(names, pngs, strict=True))
    out: dict[str, bytes] = {}
    for name in FIGURES:
        png = kept.get(name, drawn.get(name))
        if png is not None:
            out[name] = png
    return out
