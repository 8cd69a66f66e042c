"""Figures drawn in forked processes while the memo's PDF is laid out: each figure's size known
from the results before it is drawn, and the same PNG bytes and PDF whichever process draws."""

from __future__ import annotations

import json
import os
from pathlib import Path
from typing import Any

import pytest

from risk.report import figures, memo
from risk.report.figures import background
from risk.report.figures.render import FIGURES, figure_size
from tests.report.conftest import EXAMPLES


def _ihdr_size(png: bytes) -> tuple[int, int]:
    # width and height from the PNG's IHDR chunk (PNG specification, sec. 11.2.2)
    assert png[:8] == b"\x89PNG\r\n\x1a\n" and png[12:16] == b"IHDR"
    return int.from_bytes(png[16:20], "big"), int.from_bytes(png[20:24], "big")


def test_sizes_known_in_advance_are_the_drawn_sizes(perforated, perforated_figures):
    # the figures of the perforated run, drawn once for the session (every example's figure
    # kinds: the slow test below); None where it draws none
    assert len(perforated_figures) >= 8
    assert {name: figure_size(name, perforated) for name in FIGURES} == {
        name: (_ihdr_size(perforated_figures[name]) if name in perforated_figures else None)
        for name in FIGURES}


@pytest.mark.slow
@pytest.mark.parametrize("name", [p.stem for p in EXAMPLES])
def test_sizes_known_in_advance_are_those_of_every_example(example_runs, name):
    """For each shipped example, the size of every figure kind known before drawing is the
    size of the PNG `risk run` wrote, and None exactly where it wrote none."""
    folder: Path = example_runs[name]
    results = json.loads((folder / "results.json").read_text(encoding="utf-8"))
    written = {p.stem: _ihdr_size(p.read_bytes()) for p in (folder / "figures").glob("*.png")}
    assert written
    assert {n: figure_size(n, results) for n in FIGURES} == {n: written.get(n) for n in FIGURES}


def test_two_children_draw_the_same_bytes(legacy):
    drawing = background.draw_in_background(legacy, processes=2)
    assert drawing is not None and drawing.wait_sizes()
    sizes = dict(drawing.sizes)
    pngs = drawing.result()
    assert pngs == figures.render_all(legacy, workers=1)
    assert sizes == {name: _ihdr_size(png) for name, png in pngs.items()}


def test_figures_no_child_took_are_drawn_by_the_caller(legacy, monkeypatch):
    """A child slow to start leaves figures to the caller, which draws them itself once its
    own work is done: the same bytes, each figure drawn once."""
    parent = os.getpid()
    real = background._render_one
    mine: list[str] = []

    def slow_child(name: str, *args: Any) -> bytes | None:
        if os.getpid() != parent:
            import time

            time.sleep(0.5)  # long enough for the caller to take every figure left
        else:
            mine.append(name)
        return real(name, *args)

    monkeypatch.setattr(background, "_render_one", slow_child)
    drawing = background.draw_in_background(legacy)
    assert drawing is not None
    pngs = drawing.result()
    assert pngs == figures.render_all(legacy, workers=1)
    assert mine and len(mine) == len(set(mine))


def test_a_failing_child_leaves_the_drawing_to_the_caller(legacy, monkeypatch):
    parent = os.getpid()
    real = background._render_one

    def failing_child(name: str, *args: Any) -> bytes | None:
        if os.getpid() != parent:
            raise RuntimeError("broken in the child")
        return real(name, *args)

    monkeypatch.setattr(background, "_render_one", failing_child)
    drawing = background.draw_in_background(legacy)
    assert drawing is not None and drawing.result() is None


def test_blank_png_is_a_white_rgb_image_of_that_size():
    # decoded by Pillow, an independent PNG reader
    import io

    from PIL import Image

    from risk.report.memo.pdf import blank_png

    image = Image.open(io.BytesIO(blank_png(37, 11)))
    image.load()
    assert image.mode == "RGB" and image.size == (37, 11)
    assert image.getextrema() == ((255, 255), (255, 255), (255, 255))


@pytest.mark.slow
def test_pdf_laid_out_while_two_children_draw_is_the_same(legacy, monkeypatch):
    one = memo.build_memo(legacy, workers=1)
    real = background.draw_in_background
    from risk.report.memo import render as mr

    monkeypatch.setattr(mr, "draw_in_background",
                        lambda results, reuse=None: real(results, reuse=reuse, processes=2))
    assert memo.build_memo(legacy, workers=2) == one
