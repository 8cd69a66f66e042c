"""The figures' colours, style and correlation heatmap, written out so that drawing does not
import seaborn, checked against seaborn 0.13 itself (the reference library they came from:
Waskom 2021, J. Open Source Softw. 6(60), 3021)."""

from __future__ import annotations

import io
import warnings

import numpy as np
import pytest

from risk.report import figures
from risk.report.figures import common, curves, inputs, palettes

sns = pytest.importorskip("seaborn")


def test_colorblind_palette_is_seaborns():
    assert figures.PALETTE == [tuple(c) for c in sns.color_palette("colorblind", 10)]
    for n in (1, 3, 10, 13):  # seaborn cycles the palette past its 10 colours
        assert palettes.colorblind(n) == [tuple(c) for c in sns.color_palette("colorblind", n)]


def test_rocket_map_is_seaborns():
    # stored to 16 bits: within 1/65535 / 2 of seaborn's entries
    assert np.abs(palettes.rocket_lut() - np.asarray(sns.cm.rocket.colors)).max() < 8e-6


@pytest.mark.parametrize("n", [1, 2, 4, 7])
def test_band_colours_are_seaborns_sampling(n):
    got = np.array(curves._band_colors(n))
    want = np.array(sns.color_palette("rocket_r", n + 2)[1:n + 1])
    assert got.shape == want.shape and np.abs(got - want).max() < 8e-6


def test_style_is_seaborns_whitegrid_paper_but_for_the_memos_own_settings():
    ours = figures.style()
    own = {"font.family", "font.sans-serif", "axes.titlesize", "axes.labelsize",
           "xtick.labelsize", "ytick.labelsize", "legend.fontsize", "legend.title_fontsize",
           "image.cmap"}
    theirs = {**sns.axes_style("whitegrid"), **sns.plotting_context("paper", font_scale=1.0)}
    assert set(theirs) <= set(ours)
    for key, value in theirs.items():
        if key not in own:
            assert ours[key] == value, key
    assert set(common._WHITEGRID) == set(sns.axes_style("whitegrid"))


def _seaborn_heatmap(m, labels, text):
    """The memo's correlation heatmap as drawn with seaborn before (the reference)."""
    with common._styled():
        n = len(labels)
        side = min(figures.PAGE_WIDTH * 0.8, 2.4 + 0.5 * n)
        ax = common._new_figure(side * 0.85, side).subplots()
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", PendingDeprecationWarning)
            sns.heatmap(m, ax=ax, vmin=-1.0, vmax=1.0, center=0.0, cmap="RdBu_r", annot=text,
                        fmt="", annot_kws={"fontsize": 7}, square=True, linewidths=0.5,
                        linecolor="white", xticklabels=labels, yticklabels=labels,
                        cbar_kws={"label": "Spearman rank correlation [-]", "shrink": 0.8})
        ax.tick_params(axis="x", labelrotation=45)
        ax.tick_params(axis="y", labelrotation=0)
        for t in ax.get_xticklabels():
            t.set_horizontalalignment("right")
            t.set_rotation_mode("anchor")
    return ax.get_figure(root=True)


def _pixels(fig) -> np.ndarray:
    from PIL import Image

    png = figures.render._png(fig)
    return np.asarray(Image.open(io.BytesIO(png)).convert("RGB"))


def test_correlation_heatmap_has_seaborns_pixels(perforated):
    """The heatmap drawn without seaborn equals seaborn's heatmap pixel for pixel, on a run's
    matrix and on one with every shade from -1 to 1 (dark and light cells, both text colours)."""
    rc = perforated["input_rank_correlation"]
    names = list(rc["names"])
    ours = inputs.plot_input_correlation(perforated).get_figure(root=True)
    m = np.array(rc["matrix"], dtype=float)
    labels = [figures.input_label(str(x)) for x in names]
    text = np.array([[figures.format_value(v + 0.0, "-", none="") for v in np.round(row, 2)]
                     for row in m])
    assert np.array_equal(_pixels(ours), _pixels(_seaborn_heatmap(m, labels, text)))

    n = 5
    shades = np.linspace(-1.0, 1.0, n * n).reshape(n, n)
    text = np.array([[f"{v:.2f}" for v in row] for row in shades])
    with common._styled():
        ax = common._new_figure(4.3, 5.0).subplots()
        inputs._heatmap(ax, shades, [f"x{i}" for i in range(n)], text)
        ax.tick_params(axis="x", labelrotation=45)
        ax.tick_params(axis="y", labelrotation=0)
        for t in ax.get_xticklabels():
            t.set_horizontalalignment("right")
            t.set_rotation_mode("anchor")
    reference = _seaborn_heatmap(shades, [f"x{i}" for i in range(n)], text)
    # the reference figure's size follows the label count as the memo's does: compare at the
    # same size
    reference.set_size_inches(5.0, 4.3)
    assert np.array_equal(_pixels(ax.get_figure(root=True)), _pixels(reference))


def test_drawing_imports_no_seaborn():
    """Drawing a memo's figures imports neither seaborn nor pyplot (checked in a fresh
    interpreter: this test process has seaborn loaded)."""
    import subprocess
    import sys

    code = ("import sys, risk.report.figures.render, risk.report.figures.inputs;"
            "print('seaborn' in sys.modules, 'matplotlib.pyplot' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True)
    assert out.stdout.split() == ["False", "False"]
