"""The memo of every shipped example, as printed: each figure lies inside the printable area of
its page, and no table cell breaks a word in the middle."""

from __future__ import annotations

import re
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from pypdf import PdfReader
from pypdf.generic import ContentStream

from tests.report.conftest import EXAMPLES

MM = 72.0 / 25.4  # [pt] per mm (PDF user space unit 1/72 in: ISO 32000-1:2008, 8.3.2.3)
# page margins of risk/report/templates/memo.css (@page margin: 20mm 18mm 20mm 18mm)
MARGIN_X, MARGIN_Y = 18.0 * MM, 20.0 * MM
TOL = 0.5  # [pt] rounding of the layout engine


def _mul(a: list[float], b: list[float]) -> list[float]:
    """The matrix product a x b of two PDF transformation matrices [a b c d e f]
    (ISO 32000-1:2008, 8.3.4: a CTM change `cm` premultiplies the current matrix)."""
    return [a[0] * b[0] + a[1] * b[2], a[0] * b[1] + a[1] * b[3],
            a[2] * b[0] + a[3] * b[2], a[2] * b[1] + a[3] * b[3],
            a[4] * b[0] + a[5] * b[2] + b[4], a[4] * b[1] + a[5] * b[3] + b[5]]


def _image_boxes(reader: PdfReader, content: Any, resources: Any, ctm: list[float]
                 ) -> Iterator[tuple[float, float, float, float]]:
    """Page-space boxes (x0, y0, x1, y1) [pt] of every image painted by a content stream: an
    image fills the unit square of its CTM (ISO 32000-1:2008, 8.9.5 and 8.3.3); form XObjects
    are followed with their /Matrix (8.10.1)."""
    xobjects = resources.get("/XObject") if resources is not None else None
    xobjects = xobjects.get_object() if xobjects is not None else {}
    stack: list[list[float]] = []
    for operands, op in ContentStream(content, reader).operations:
        if op == b"q":
            stack.append(ctm)
        elif op == b"Q":
            ctm = stack.pop()
        elif op == b"cm":
            ctm = _mul([float(v) for v in operands], ctm)
        elif op == b"Do":
            x = xobjects[operands[0]].get_object()
            if x["/Subtype"] == "/Image":
                pts = [(ctm[0] * u + ctm[2] * v + ctm[4], ctm[1] * u + ctm[3] * v + ctm[5])
                       for u in (0, 1) for v in (0, 1)]
                xs, ys = [p[0] for p in pts], [p[1] for p in pts]
                yield min(xs), min(ys), max(xs), max(ys)
            elif x["/Subtype"] == "/Form":
                m = [float(v) for v in x.get("/Matrix", [1, 0, 0, 1, 0, 0])]
                yield from _image_boxes(reader, x, x.get("/Resources", resources), _mul(m, ctm))


@pytest.mark.slow
@pytest.mark.parametrize("name", [p.stem for p in EXAMPLES])
def test_every_figure_inside_the_printable_area(example_runs, name):
    folder: Path = example_runs[name]
    reader = PdfReader(folder / "memo.pdf")
    placed = 0
    for number, page in enumerate(reader.pages, start=1):
        x0, y0, x1, y1 = (float(v) for v in page.mediabox)
        for box in _image_boxes(reader, page.get_contents(), page["/Resources"],
                                [1.0, 0.0, 0.0, 1.0, 0.0, 0.0]):
            placed += 1
            assert box[0] >= x0 + MARGIN_X - TOL and box[2] <= x1 - MARGIN_X + TOL, (number, box)
            assert box[1] >= y0 + MARGIN_Y - TOL and box[3] <= y1 - MARGIN_Y + TOL, (number, box)
    # every figure PNG of the run is placed once (none lost off the page)
    assert placed == len(list((folder / "figures").glob("*.png")))


def _walk(box: Any) -> Iterator[Any]:
    yield box
    for child in getattr(box, "children", None) or []:
        yield from _walk(child)


def _source_text(element: Any) -> str:
    """A cell's text with a space for each <br> (a forced break is not a broken word)."""
    parts = [element.text or ""]
    for child in element:
        parts.append(" " if child.tag == "br" else _source_text(child))
        parts.append(child.tail or "")
    return "".join(parts)


def _code_only(element: Any) -> bool:
    code = element.find("code")
    if code is None:
        return False
    return not "".join(element.itertext()).replace("".join(code.itertext()), "").strip()


@pytest.mark.slow
@pytest.mark.parametrize("name", [p.stem for p in EXAMPLES])
def test_no_word_broken_in_table_cells(example_runs, name):
    """A line break inside a table cell falls at a space or after a hyphen, never inside a
    word or a unit such as psi/ft (derived: the text of two consecutive lines, joined without a
    space, must not occur in the cell's text unless the first ends in a hyphen)."""
    from weasyprint import HTML

    doc = HTML(filename=str(example_runs[name] / "memo.html")).render()
    broken = []
    for number, page in enumerate(doc.pages, start=1):
        for box in _walk(page._page_box):
            if type(box).__name__ != "TableCellBox" or _code_only(box.element):
                continue  # a hash or a path alone in a cell may break anywhere
            text = " ".join(_source_text(box.element).split()).replace("\u2060", "")
            lines = ["".join(t.text for t in _walk(line) if type(t).__name__ == "TextBox")
                     .replace("\u2060", "").strip()
                     for line in _walk(box) if type(line).__name__ == "LineBox"]
            for a, b in zip(lines, lines[1:], strict=False):
                if a and b and not re.search(r"[-\u2010\u2013]$", a) and (a + b) in text \
                        and f"{a} {b}" not in text:
                    broken.append((number, a[-20:], b[:20]))
    assert not broken
