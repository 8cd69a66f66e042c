"""Figures: PNG output, content drawn from results.json, units on axes, skipping absent sections,
byte-identical re-rendering."""

from __future__ import annotations

import copy
import io
import math
import re
from typing import Any

import matplotlib.image as mpimg
import numpy as np
import pytest
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.projections.polar import PolarAxes

from risk.report import figures

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"  # PNG specification (ISO/IEC 15948), section 5.2

ALL = set(figures.FIGURES)
#: figures of inputs the shared runs do not give: water weakening needs
#: production.water_saturation (drawn in test_water_weakening_figure); the calibration and
#: value-of-information figures need a field history or measurements in the scenario
#: (tests/report/test_calibration_report.py draws them)
OPTIONAL = {"water_weakening", "calibration", "value_of_information"}


def _pixels(png: bytes) -> np.ndarray:
    return np.asarray(mpimg.imread(io.BytesIO(png), format="png"))[..., :3]


def _assert_drawn(png: bytes) -> None:
    """A PNG that decodes to a picture with real content: not one flat colour, and a
    reasonable share of non-white pixels (lines, bars, text)."""
    assert png[:8] == PNG_MAGIC
    px = _pixels(png)
    assert px.shape[0] > 200 and px.shape[1] > 200
    assert float(px.std()) > 0.05
    non_white = float(np.mean((px < 0.9).any(axis=2)))
    assert 0.01 < non_white < 0.95


def _figure(drawn: Any) -> Figure:
    return drawn if isinstance(drawn, Figure) else drawn.get_figure(root=True)


def test_perforated_run_draws_every_figure(perforated_figures):
    assert set(perforated_figures) == ALL - OPTIONAL
    for png in perforated_figures.values():
        _assert_drawn(png)


def test_open_hole_has_no_shot_directions(openhole):
    assert figures.plot_shot_directions(openhole) is None
    # every other figure applies to an open hole with all sections present; the sand-free
    # figure exactly when a sand-production mechanism is enabled
    for name in ALL - {"shot_directions", "sand_free", "tunnel_root"} - OPTIONAL:
        assert figures.FIGURES[name](openhole) is not None, name
    assert figures.FIGURES["tunnel_root"](openhole) is None  # no tunnels to put in a root
    assert (figures.plot_sand_free(openhole) is None) == (openhole["sand_free"] is None)


def test_water_weakening_figure(perforated):
    res = copy.deepcopy(perforated)
    stages = [s["reservoir_pressure"] for s in res["sand_free"]["stages"]]
    res["water_weakening"] = {"assumption": "", "stages": [
        {"reservoir_pressure": p, "water_saturation": 0.5 * i,
         "strength_factor": {"p10": 1 - 0.3 * i, "p50": 1 - 0.2 * i, "p90": 1 - 0.1 * i}}
        for i, p in enumerate(stages)]}
    drawn = figures.render_all(res)
    assert "water_weakening" in drawn
    _assert_drawn(drawn["water_weakening"])


def test_oldest_results_shape_draws_only_what_applies(legacy):
    pngs = figures.render_all(legacy)
    assert set(pngs) == {"failure_probability", "envelope"}
    for png in pngs.values():
        _assert_drawn(png)


@pytest.mark.parametrize("results", [
    {},
    {"mechanisms": {}},
    {"mechanisms": {"yield_onset": {"name": "x", "stages": []}}, "inputs": [],
     "sensitivity": {}, "tornado": {}, "input_rank_correlation": None},
])
def test_absent_sections_are_skipped(results):
    assert figures.render_all(results) == {}


@pytest.mark.slow
def test_same_results_give_identical_png(perforated, perforated_figures):
    # regression check of determinism: a second rendering is byte-identical
    for name in ("failure_probability", "shot_directions", "input_correlation"):
        again = figures.render._png(_figure(figures.FIGURES[name](perforated)),
                                    figures.provenance_text(perforated),
                                    figures.render.figure_key(perforated))
        assert again == perforated_figures[name], name


def test_png_carries_no_software_stamp(perforated_figures):
    for png in perforated_figures.values():
        assert b"Matplotlib" not in png


def test_every_axis_label_has_a_unit(perforated):
    """Every labelled axis names its unit in brackets; polar panels name theirs in the legend
    title, the heatmap on its colour bar."""
    unit = re.compile(r"\[[^\]]+\]")
    for name, plot in figures.FIGURES.items():
        if name in OPTIONAL:
            continue
        fig = _figure(plot(perforated))
        labels = [lab for ax in fig.axes if ax.get_visible() and not isinstance(ax, PolarAxes)
                  for lab in (ax.get_xlabel(), ax.get_ylabel()) if lab]
        labels += [leg.get_title().get_text() for leg in fig.legends
                   if leg.get_title().get_text()]
        assert labels, name
        for lab in labels:
            assert unit.search(lab), (name, lab)
        if name == "shot_directions":
            unit_p = perforated["units"]["pressure"]
            assert f"[{unit_p}]" in labels[-1] and "[deg]" in labels[-1]


def _lines(fig: Figure, label: str) -> list[Any]:
    return [ln for ax in fig.axes for ln in ax.get_lines() if ln.get_label() == label]


def test_failure_curves_are_the_results_values(perforated):
    fig = figures.plot_failure_probability(perforated)
    assert fig is not None
    for key, mech in perforated["mechanisms"].items():
        if "stages" not in mech or "failure_probability" not in mech["stages"][0]:
            continue
        lines = _lines(fig, mech["name"])
        assert len(lines) == len(mech["stages"])
        for line, st in zip(lines, mech["stages"], strict=True):
            want = [r["p"] for r in st["failure_probability"]]
            np.testing.assert_array_equal(line.get_ydata(), want, err_msg=key)


def test_envelope_lines_are_the_results_values(perforated):
    fig = figures.plot_envelope(perforated)
    assert fig is not None
    lines = _lines(fig, "P50 critical wall pressure")
    stages = sorted(perforated["mechanisms"]["yield_onset"]["stages"],
                    key=lambda s: s["reservoir_pressure"])
    want = [s["critical_wall_pressure"]["p50"] or 0.0 for s in stages]
    np.testing.assert_array_equal(lines[0].get_xdata(), [s["reservoir_pressure"] for s in stages])
    np.testing.assert_array_equal(lines[0].get_ydata(), want)
    # zero-drawdown line p_wf = p_r (derived: D = p_r - p_wf = 0)
    zero = [ln for ax in fig.axes for ln in ax.get_lines() if "no drawdown" in ln.get_label()]
    np.testing.assert_array_equal(zero[0].get_xdata(), zero[0].get_ydata())


def test_best_shot_is_highlighted(perforated):
    fig = figures.plot_shot_directions(perforated)
    assert fig is not None
    stages = perforated["mechanisms"]["yield_onset"]["stages"]
    polar = [ax for ax in fig.axes if isinstance(ax, PolarAxes) and ax.get_visible()]
    for ax, st in zip(polar, stages, strict=False):
        bars = ax.patches
        assert len(bars) == len(st["shots"])
        for bar, shot in zip(bars, st["shots"], strict=True):
            highlighted = np.allclose(bar.get_facecolor()[:3], figures.PALETTE[2])
            assert highlighted == math.isclose(shot["angle"], st["best_shot_angle"])
            assert bar.get_height() == pytest.approx(shot["drawdown_limit"])


def test_format_value():
    # expected strings: common practice for engineering tables (derived from the unit rules)
    assert figures.format_value(549.985, "psi") == "550 psi"
    assert figures.format_value(8200.0, "psi") == "8,200 psi"
    assert figures.format_value(28.5, "MPa") == "28.50 MPa"
    assert figures.format_value(-0.001, "MPa") == "0.00 MPa"
    assert figures.format_value(None, "psi") == "never"
    assert figures.format_value(0.1, "-") == "0.1"
    assert figures.format_value(0.98, "psi/ft") == "0.98 psi/ft"
    assert figures.format_value(12345.0, "ft") == "12,345 ft"


def test_input_label():
    assert figures.input_label("ucs") == "UCS"
    assert figures.input_label("some_new_input") == "some new input"


# --------------------------------------------------------------------------- issue 12 defects

@pytest.mark.slow
def test_every_figure_fits_a_page(perforated, openhole):
    # derived: MAX_HEIGHT leaves room for the caption on the printable A4 area (memo.css)
    for results in (perforated, openhole):
        for name, plot in figures.FIGURES.items():
            drawn = plot(results)
            if drawn is not None:
                w, h = _figure(drawn).get_size_inches()
                assert h <= figures.MAX_HEIGHT + 1e-9 and w <= figures.PAGE_WIDTH, name


def test_probability_axes_show_a_curve_at_one(perforated):
    # derived: a curve at P = 1 drawn on the frame's edge is hidden under it
    for name in ("failure_probability", "pore_collapse"):
        fig = _figure(figures.FIGURES[name](perforated))
        for ax in fig.axes:
            if ax.get_visible() and "probability" in ax.get_ylabel():
                lo, hi = ax.get_ylim()
                assert lo < 0.0 and hi > 1.0, name


def _equal_limits(results: dict[str, Any], value: float) -> dict[str, Any]:
    """Every shot of every stage with the same drawdown limit; the stated best shot kept."""
    out = copy.deepcopy(results)
    for mech in out["mechanisms"].values():
        for st in mech.get("stages") or []:
            for sh in st.get("shots") or []:
                sh["drawdown_limit"] = value
    return out


@pytest.mark.parametrize("value", [0.0, 100.0])
def test_no_best_direction_where_no_direction_differs(perforated, value):
    fig = figures.plot_shot_directions(_equal_limits(perforated, value))
    assert fig is not None
    best = figures.PALETTE[2]
    for ax in fig.axes:
        if not isinstance(ax, PolarAxes) or not ax.get_visible():
            continue
        assert not any(np.allclose(b.get_facecolor()[:3], best) for b in ax.patches)
        assert not any(ln.get_color() == best for ln in ax.get_lines())
        assert any("every direction" in t.get_text() for t in ax.texts)


def _renderer(fig: Figure) -> Any:
    """The figure laid out and drawn (as when saved), and its renderer."""
    canvas = FigureCanvasAgg(fig)
    with figures.common._styled():
        canvas.draw()
    return canvas.get_renderer()


def _extents(fig: Figure, texts: list[Any]) -> list[Any]:
    renderer = _renderer(fig)
    return [t.get_window_extent(renderer) for t in texts
            if t.get_visible() and t.get_text().strip()]


@pytest.mark.slow
def test_polar_labels_do_not_overlap(perforated):
    # derived: labels whose boxes intersect print over each other
    fig = figures.plot_shot_directions(perforated)
    assert fig is not None
    for ax in fig.axes:
        if not isinstance(ax, PolarAxes) or not ax.get_visible():
            continue
        boxes = _extents(fig, [*ax.get_xticklabels(), *ax.get_yticklabels(),
                               *[t for t in ax.texts if t.get_gid() == "ring-label"]])
        for i, a in enumerate(boxes):
            for b in boxes[i + 1:]:
                assert not a.overlaps(b), (a, b)


def test_tunnel_collapse_legend_off_the_data(perforated):
    fig = figures.plot_tunnel_collapse(perforated)
    assert fig is not None
    renderer = _renderer(fig)
    legends = fig.legends + [ax.get_legend() for ax in fig.axes if ax.get_legend()]
    assert legends
    for leg in legends:
        box = leg.get_window_extent(renderer)
        for ax in fig.axes:
            assert not box.overlaps(ax.get_window_extent(renderer))
    # bands light enough to see the others through (derived: 5 stacked bands at 0.2 hide)
    for ax in fig.axes:
        for c in ax.collections:
            assert c.get_alpha() is not None and c.get_alpha() <= 0.1


def test_envelope_draws_the_accepted_risk_contour(perforated):
    results = copy.deepcopy(perforated)
    results["accepted_risk"] = 0.07  # not one of the 1/5/10/25/50/75/90% quantiles
    fig = figures.plot_envelope(results)
    assert fig is not None
    lines = [ln for ax in fig.axes for ln in ax.get_lines()
             if ln.get_label().startswith("accepted risk 0.07")]
    assert lines
    stages = sorted(results["mechanisms"]["yield_onset"]["stages"],
                    key=lambda s: s["reservoir_pressure"])
    # derived: the contour at the accepted risk is p_wf = p_r - drawdown limit
    want = [max(s["reservoir_pressure"] - s["drawdown_limit"], 0.0)
            if s["drawdown_limit"] is not None else 0.0
            for s in stages]
    np.testing.assert_allclose(lines[0].get_ydata(), want)
    assert any(t.get_text() == "accepted risk 0.07" for ax in fig.axes for t in ax.texts)


def test_sensitivity_sorted_and_legend_only_for_drawn_series(perforated):
    results = copy.deepcopy(perforated)
    for rows in results["sensitivity"].values():
        for r in rows:  # given-data indices: first order only, no total, no Shapley
            r.update(total=None, total_low=None, total_high=None, shapley=None)
            r.pop("rank_value", None)
    fig = figures.plot_sensitivity(results)
    assert fig is not None
    labels = [t.get_text() for leg in fig.legends for t in leg.get_texts()]
    assert labels == ["first order"]
    shown = [t.get_text() for t in fig.axes[0].get_yticklabels()]
    best: dict[str, float] = {}
    for rows in results["sensitivity"].values():
        for r in rows:
            best[figures.input_label(r["input"])] = max(
                best.get(figures.input_label(r["input"]), -1.0), r["first"])
    assert shown == sorted(best, key=lambda k: -best[k])  # largest on top (axis inverted)


def test_tornado_axis_ends_at_the_cap_and_marks_capped_bars(perforated):
    results = copy.deepcopy(perforated)
    key = "yield_onset"
    p_r = results["mechanisms"][key]["stages"][0]["reservoir_pressure"]
    row = results["tornado"][key]["rows"][0]
    row["output_high"] = p_r  # the capped outcome: no failure within the drawdown
    row["output_low"] = 0.5 * results["tornado"][key]["base"]
    fig = figures.plot_tornado(results)
    assert fig is not None
    ax = [a for a in fig.axes if a.get_title().startswith(
        results["mechanisms"][key]["name"][:20])][0]
    assert ax.get_xlim()[1] == pytest.approx(p_r)
    assert any(b.get_hatch() for b in ax.patches)
    arrows = [ln for ln in ax.get_lines() if ln.get_marker() == ">"]
    assert arrows and np.allclose(arrows[0].get_xdata(), p_r)


def test_figures_drawn_in_processes_are_the_same_bytes(legacy):
    # drawing in forked processes (render_all's default on a multi-core machine) must give
    # the bytes drawn one after the other (determinism: same results -> same PNGs)
    assert figures.render_all(legacy, workers=2) == figures.render_all(legacy, workers=1)


def test_figures_of_the_same_results_are_reused_not_drawn(legacy, monkeypatch):
    # `risk memo` keeps a figure whose stored key (results + drawing code) matches; anything
    # else is drawn again (derived design: equal keys give equal figures)
    from risk.report.figures import render as rn

    first = figures.render_all(legacy, workers=1)
    assert first and all(rn.png_key(p) == rn.figure_key(legacy) for p in first.values())
    drawn: list[str] = []
    real = rn._render_one

    def counting(name, results, key=""):
        png = real(name, results, key)
        if png is not None:  # figures that do not apply are asked again (cheap: no drawing)
            drawn.append(name)
        return png

    monkeypatch.setattr(rn, "_render_one", counting)
    assert figures.render_all(legacy, workers=1, reuse=first) == first
    assert drawn == []
    changed = {**legacy, "seed": 12345}  # another run: every figure is drawn again
    again = figures.render_all(changed, workers=1, reuse=first)
    assert sorted(drawn) == sorted(again) and again.keys() == first.keys()
    drawn.clear()
    stale = {name: png.replace(rn.figure_key(legacy).encode(), b"0" * 64)
             for name, png in first.items()}  # a key that does not match
    figures.render_all(legacy, workers=1, reuse=stale)
    assert sorted(drawn) == sorted(first)


@pytest.mark.parametrize("name", sorted(ALL - OPTIONAL))
def test_png_has_the_pixels_matplotlib_writes(perforated, name):
    # The figures' PNGs are laid out by hand and drawn once (render._draw_once: the layout
    # engine run before savefig, titles that matplotlib would not move fixed in place), then
    # written as 8-bit RGB (no alpha) at a low zlib level; the reference is matplotlib's own
    # PNG writer (savefig, RGBA, its layout engine run inside) on the same figure drawn
    # afresh: its alpha is opaque everywhere and its RGB pixels are the ones written here,
    # for every figure (Cartesian, polar, heatmap with colour bar, figure legends).
    drawn = figures.FIGURES[name](perforated)
    if drawn is None:
        pytest.skip(f"{name} does not apply to this run")
    png = figures.render._png(_figure(drawn))
    ref = io.BytesIO()
    with figures.render._styled():
        _figure(figures.FIGURES[name](perforated)).savefig(ref, format="png", dpi=figures.DPI)
    ours, theirs = mpimg.imread(io.BytesIO(png)), mpimg.imread(io.BytesIO(ref.getvalue()))
    assert png[24:26] == b"\x08\x02"  # bit depth 8, colour type 2: RGB (PNG spec, IHDR)
    assert ours.shape == theirs.shape[:2] + (3,)
    assert (theirs[..., 3] == 1.0).all() and np.array_equal(ours, theirs[..., :3])


def test_titles_are_fixed_only_where_matplotlib_would_not_move_them(perforated):
    # matplotlib places a title above x tick labels at the top of the axes
    # (Axes._update_title_position): such axes, and polar ones, keep its placement
    fig = Figure(figsize=(4, 3))
    plain, top, polar = (fig.add_subplot(1, 3, 1), fig.add_subplot(1, 3, 2),
                         fig.add_subplot(1, 3, 3, projection="polar"))
    top.xaxis.tick_top()
    top.xaxis.set_label_position("top")
    for ax in (plain, top, polar):
        ax.set_title("t")
    assert figures.render._fixed_titles(fig) == [plain]


def test_figure_sizes_announced_before_drawing_are_the_png_sizes(legacy):
    from risk.report.figures.background import draw_in_background

    drawing = draw_in_background(legacy)
    assert drawing is not None and drawing.wait_sizes()
    sizes = dict(drawing.sizes)
    pngs = drawing.result()
    assert pngs == figures.render_all(legacy, workers=1)
    # width and height from each PNG's IHDR chunk (PNG specification, sec. 11.2.2)
    assert sizes == {name: (int.from_bytes(p[16:20], "big"), int.from_bytes(p[20:24], "big"))
                     for name, p in pngs.items()}


def test_no_background_drawing_where_no_child_may_start(legacy, monkeypatch):
    # inside a daemonic process (a pool worker) multiprocessing refuses to start children
    # (AssertionError, Python's multiprocessing.process.BaseProcess.start): the caller is
    # told to draw in its own process instead of failing
    import multiprocessing.process

    from risk.report.figures.background import draw_in_background

    def refuse(self: Any) -> None:
        raise AssertionError("daemonic processes are not allowed to have children")

    monkeypatch.setattr(multiprocessing.process.BaseProcess, "start", refuse)
    assert draw_in_background(legacy) is None


def test_second_drawing_process_only_where_two_cores_are_idle(monkeypatch):
    """A second process only where this one and it each get an idle core: every core busy by
    the load average rules it out without waiting to measure; otherwise the measured idle
    cores decide (a run alone on the machine counts about 1 in its own load average)."""
    from risk.report.figures import render as rn

    monkeypatch.setattr(rn.os, "sched_getaffinity", lambda _pid: {0, 1})
    monkeypatch.setattr(rn.os, "getloadavg", lambda: (2.4, 2.0, 1.5))

    def not_measured() -> float:
        raise AssertionError("idle cores measured though every core is busy")

    monkeypatch.setattr(rn, "_idle_cores", not_measured)
    assert rn._workers() == 1
    monkeypatch.setattr(rn.os, "getloadavg", lambda: (1.1, 0.9, 0.5))
    monkeypatch.setattr(rn, "_idle_cores", lambda: 1.9)
    assert rn._workers() == 2
    monkeypatch.setattr(rn, "_idle_cores", lambda: 1.0)  # another process holds one core
    assert rn._workers() == 1


def test_idle_cores_are_within_the_machine():
    """Measured from the kernel's CPU time counters (proc(5), /proc/stat): between no core
    and every core of the machine."""
    import os

    from risk.report.figures import render as rn

    idle = rn._idle_cores(0.05)
    assert idle is None or 0.0 <= idle <= (os.cpu_count() or 1) + 1e-9
