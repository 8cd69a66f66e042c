"""Shared, session-wide runs and renderings for the report tests (rendering is the slow part:
each figure set and memo is built once)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest

from risk.report import figures, memo
from tests.report.shapes import OPENHOLE_DOC, PERFORATED_DOC, augment, real_run, strip_optional


@pytest.fixture(scope="session")
def perforated(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    """A small real perforated run with every announced section."""
    results, a = real_run(tmp_path_factory.mktemp("perforated"), PERFORATED_DOC)
    return augment(results, a)


@pytest.fixture(scope="session")
def openhole(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    """A small real open-hole run with every announced section."""
    results, a = real_run(tmp_path_factory.mktemp("openhole"), OPENHOLE_DOC)
    return augment(results, a)


@pytest.fixture(scope="session")
def legacy(openhole: dict[str, Any]) -> dict[str, Any]:
    """The open-hole run in the oldest results shape (no optional section)."""
    return strip_optional(openhole)


@pytest.fixture(scope="session")
def perforated_figures(perforated: dict[str, Any]) -> dict[str, bytes]:
    return figures.render_all(perforated)


@pytest.fixture(scope="session")
def perforated_memo(perforated: dict[str, Any],
                    perforated_figures: dict[str, bytes]) -> memo.Memo:
    html = memo.render_html(perforated, perforated_figures)
    return memo.Memo(html=html, pdf=memo.render_pdf(html), figures=perforated_figures)


EXAMPLES = sorted((Path(__file__).resolve().parents[2] / "examples").glob("*.toml"))


@pytest.fixture(scope="session")
def example_runs(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    """Every shipped example run as ``risk run`` does (256 samples, to keep it quick), by file
    stem: the output folder with its memo.html and memo.pdf."""
    from risk.api import run_scenario

    out = {}
    for path in EXAMPLES:
        folder = tmp_path_factory.mktemp(path.stem) / "out"
        run_scenario(path, out=folder, samples=256)
        out[path.stem] = folder
    assert out, "no example scenario found"
    return out
