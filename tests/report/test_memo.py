"""The memo: sections, the limits table against results.json, embedded figures, no external
resource, escaping, absent sections, and the PDF (pages and text)."""

from __future__ import annotations

import base64
import copy
import dataclasses
import json
import re
import zlib
from html.parser import HTMLParser
from typing import Any

import pytest

from risk.report import figures, memo

PDF_MAGIC = b"%PDF-"  # ISO 32000-1:2008, section 7.5.2 (file header)


class _Collector(HTMLParser):
    """Headings, tagged table cells, image sources and every attribute of an HTML page."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.h2: list[str] = []
        self.cells: list[tuple[dict[str, str | None], str]] = []
        self.imgs: list[dict[str, str | None]] = []
        self.attrs: list[tuple[str, str, str | None]] = []
        self.tags: list[str] = []
        self._h2: list[str] | None = None
        self._cell: tuple[dict[str, str | None], list[str]] | None = None

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        a = dict(attrs)
        self.tags.append(tag)
        self.attrs += [(tag, k, v) for k, v in attrs]
        if tag == "h2":
            self._h2 = []
        if tag in ("td", "th") and "data-field" in a:
            self._cell = (a, [])
        if tag == "img":
            self.imgs.append(a)

    def handle_endtag(self, tag: str) -> None:
        if tag == "h2" and self._h2 is not None:
            self.h2.append(" ".join("".join(self._h2).split()))
            self._h2 = None
        if tag in ("td", "th") and self._cell is not None:
            self.cells.append((self._cell[0], "".join(self._cell[1]).strip()))
            self._cell = None

    def handle_data(self, data: str) -> None:
        if self._h2 is not None:
            self._h2.append(data)
        if self._cell is not None:
            self._cell[1].append(data)


def _parse(html: str) -> _Collector:
    c = _Collector()
    c.feed(html)
    return c


def test_every_section_heading_in_order(perforated_memo):
    h2 = _parse(perforated_memo.html).h2
    found = [next(i for i, h in enumerate(h2) if title in h) for title in memo.SECTIONS]
    assert found == sorted(found) and len(found) == 7


def test_limits_table_equals_results(perforated, perforated_memo):
    unit = perforated["units"]["pressure"]
    cells = [(a, text) for a, text in _parse(perforated_memo.html).cells
             if a.get("data-mechanism")]
    expected = {(key, k, field): st[field]
                for key, mech in perforated["mechanisms"].items()
                if "failure_probability" in (mech.get("stages") or [{}])[0]
                for k, st in enumerate(mech["stages"])
                for field in ("drawdown_limit", "drawdown_limit_lower")}
    seen = {}
    for a, text in cells:
        key = (a["data-mechanism"], int(a["data-stage"] or -1), a["data-field"])
        value = json.loads(a["data-value"] or "")
        seen[key] = value
        assert value == expected[key], key
        shown = figures.format_value(value, unit, none="not resolved")
        assert text.startswith(shown), (key, text, shown)
    assert seen.keys() == expected.keys()


def test_every_figure_embedded_as_data_uri(perforated_memo):
    imgs = _parse(perforated_memo.html).imgs
    by_payload = {base64.b64decode(i["src"].split(",", 1)[1]) for i in imgs
                  if (i["src"] or "").startswith("data:image/png;base64,")}
    assert len(imgs) == len(perforated_memo.figures)
    for name, png in perforated_memo.figures.items():
        assert png in by_payload, name


def test_no_external_resource(perforated_memo):
    html = perforated_memo.html
    c = _parse(html)
    text = re.sub(r"data:image/png;base64,[A-Za-z0-9+/=]+", "", html)
    assert "http:" not in text and "https:" not in text and "//" not in text
    for tag, attr, value in c.attrs:
        if attr in ("src", "href", "srcset", "poster", "data"):
            assert (value or "").startswith("data:"), (tag, attr, (value or "")[:40])
    assert "link" not in c.tags and "script" not in c.tags and "iframe" not in c.tags
    assert "@import" not in html and not re.search(r"url\((?!data:)", html)


def test_text_from_results_is_escaped(perforated, perforated_memo):
    # the fixture title holds "<well> & co"
    assert "<well>" not in perforated_memo.html
    assert "&lt;well&gt; &amp; co" in perforated_memo.html
    hostile = copy.deepcopy(perforated)
    hostile["mechanisms"]["yield_onset"]["stages"][0]["convergence_warning"] = "<b>bold</b>"
    hostile["mechanisms"]["yield_onset"]["name"] = "<i>name</i>"
    hostile["inputs"][0]["source"] = "<script>x</script>"
    html = memo.render_html(hostile, {})
    for raw in ("<b>bold</b>", "<i>name</i>", "<script>"):
        assert raw not in html
    for escaped in ("&lt;b&gt;bold&lt;/b&gt;", "&lt;i&gt;name&lt;/i&gt;", "&lt;script&gt;"):
        assert escaped in html


# the C0 and C1 controls, DEL and the bidirectional overrides (U+202A-U+202E), as bytes a
# terminal or a page would act on (derived from the Unicode tables); tab, CR and LF are only
# white space in HTML
_CONTROL = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f\u2028\u2029\u202a-\u202e"
                      "\u2066-\u2069]")


def test_control_characters_from_results_are_shown_visibly(perforated):
    # a results file written by hand, or a scenario file name holding an ESC byte
    hostile = copy.deepcopy(perforated)
    hostile["title"] = "Well \x1b[2J A"
    hostile["scenario_file"] = "/tmp/x\x1b]0;title\x07.toml"
    hostile["inputs"][0]["source"] = "core \x9b31m plugs \u202eksir on"
    hostile["warnings"] = ["rock.gsi: given \x1b[5m"]
    html = memo.render_html(hostile, {})
    assert not _CONTROL.findall(html)
    for shown in ("Well \\x1b[2J A", "x\\x1b]0;title\\x07.toml", "core \\x9b31m plugs",
                  "\\u202eksir on", "rock.gsi: given \\x1b[5m"):
        assert shown in html, shown


def test_input_warnings_listed_under_assumptions(perforated):
    assert perforated["warnings"] == []  # control: the fixture's scenario has none
    assert "Input warnings" not in memo.render_html(perforated, {})
    warned = copy.deepcopy(perforated)
    warned["warnings"] = ["rock.hb_mi: given, but unused <b>", "production.max_drawdown: high"]
    html = memo.render_html(warned, {})
    section = html[html.index('<section id="assumptions">'):html.index('<section id="cautions">')]
    assert "Input warnings" in section
    assert "<li>rock.hb_mi: given, but unused &lt;b&gt;</li>" in section
    assert "<li>production.max_drawdown: high</li>" in section


def test_results_without_warnings_key_still_render(legacy):
    older = {k: v for k, v in legacy.items() if k != "warnings"}  # runs before the key existed
    html = memo.render_html(older, {})
    assert '<section id="assumptions">' in html and "Input warnings" not in html


def test_convergence_warnings_shown_prominently(perforated, perforated_memo):
    n_warn = sum(1 for m in perforated["mechanisms"].values() for s in m.get("stages") or []
                 if s.get("convergence_warning"))
    assert n_warn > 0  # the 128-sample fixture cannot resolve a 5% risk (derived: n p = 6.4)
    assert perforated_memo.html.count('<div class="warning" role="alert">') == len(
        [m for m in perforated["mechanisms"].values()
         if any(s.get("convergence_warning") for s in m.get("stages") or [])])


def test_recommendation_names_the_largest_total_index(perforated, perforated_memo):
    rows = perforated["sensitivity"]["yield_onset"]
    top = max(rows, key=lambda r: r["total"])
    assert (f"measure {figures.input_label(top['input'])} next"
            in perforated_memo.html)


def test_safety_and_assumptions_stated(perforated_memo):
    text = " ".join(perforated_memo.html.split())
    for phrase in ("Terzaghi", "unbounded medium", "far-field", "Willson et al. 2002",
                   "Yeow et al. 2004", "Palmer et al. 2003", "Bellarby (2009)", "McNally 1987",
                   "Chang, Zoback &amp; Khaksar 2006", "strain softening", "thermal",
                   "screening tool", "licensed professional", "local sanding history",
                   "loss of containment", "Ramp rates up slowly", "Monitor sand production",
                   "Common practice"):
        assert phrase in text, phrase


def test_reproducibility_section(perforated, perforated_memo):
    html = perforated_memo.html
    for value in (perforated["scenario_sha256"], str(perforated["seed"]),
                  perforated["sampling"], perforated["criterion"], perforated["version"],
                  perforated["run_date"]):
        assert value in html


def test_rendering_is_pure_and_repeatable(perforated, perforated_figures, perforated_memo):
    assert memo.render_html(perforated, perforated_figures) == perforated_memo.html
    no_date = {k: v for k, v in perforated.items() if k != "run_date"}
    html = memo.render_html(no_date, {})
    assert perforated["run_date"] not in html and "date of the run" not in html


@pytest.mark.slow
def test_oldest_results_shape_renders_with_notes(legacy):
    m = memo.build_memo(legacy)
    assert dataclasses.is_dataclass(m)
    with pytest.raises(dataclasses.FrozenInstanceError):
        m.html = ""  # type: ignore[misc]
    assert set(m.figures) == {"failure_probability", "envelope"}
    assert m.pdf.startswith(PDF_MAGIC)
    for note in ("do not list the inputs", "Open hole: there are no perforation directions",
                 "No tunnel-collapse profile", "Pore collapse was not assessed",
                 "No sensitivity study"):
        assert note in m.html, note
    assert [h for h in _parse(m.html).h2 if any(s in h for s in memo.SECTIONS)]


# --------------------------------------------------------------------------- PDF

def _pdf_page_objects(pdf: bytes) -> int:
    """Count /Type /Page objects, looking inside Flate-compressed object streams too
    (ISO 32000-1:2008, sections 7.5.7 and 7.7.3.3) — an independent check of the page count."""
    pattern = re.compile(rb"/Type\s*/Page(?![A-Za-z])")
    n = len(pattern.findall(pdf))
    for m in re.finditer(rb"stream\r?\n(.*?)\r?\nendstream", pdf, re.S):
        try:
            # a stream's data may itself end in a CR byte, which the pattern takes as part of
            # the end-of-line marker (sec. 7.3.8.1): decompress without requiring the last
            # bytes (the Adler-32 trailer), so such a stream is still read
            n += len(pattern.findall(zlib.decompressobj().decompress(m.group(1))))
        except zlib.error:
            continue
    return n


def _page_texts(html: str) -> list[str]:
    from weasyprint import HTML

    def walk(box: Any) -> Any:
        yield box
        for child in getattr(box, "children", None) or []:
            yield from walk(child)

    doc = HTML(string=html).render()
    return [" ".join("".join(b.text for b in walk(p._page_box) if type(b).__name__ == "TextBox")
                     .split()) for p in doc.pages]


@pytest.fixture(scope="module")
def pages(perforated_memo) -> list[str]:
    return _page_texts(perforated_memo.html)


@pytest.mark.slow
def test_pdf_header_and_page_count(perforated_memo, pages):
    assert perforated_memo.pdf.startswith(PDF_MAGIC)
    assert _pdf_page_objects(perforated_memo.pdf) == len(pages)
    # the layout puts the summary on page 1 and starts "Assumptions" on a new page
    # (CSS break-before), after the results and sensitivity pages (derived from the template)
    first = [i for i, t in enumerate(pages) if "5 Assumptions and limitations" in t][0]
    assert pages[first].startswith("5 Assumptions and limitations")
    assert 6 <= len(pages) <= 30


def test_pdf_text_contains_the_limits(perforated, pages):
    unit = perforated["units"]["pressure"]
    assert "1 Summary" in pages[0]
    # page 1 opens with the sand-free limit (issue 12); the per-mechanism table follows it
    for st in perforated["sand_free"]["stages"]:
        assert figures.format_value(st["drawdown_limit"], unit) in pages[0]
    # the per-mechanism table starts on the page that names it and may run onto the next
    start = next(i for i, t in enumerate(pages) if "Drawdown limits per mechanism" in t)
    first = "".join(pages[start:start + 2])
    for key, mech in perforated["mechanisms"].items():
        if "failure_probability" not in (mech.get("stages") or [{}])[0]:
            continue
        assert mech["name"].split()[0] in first, key
        for st in mech["stages"]:
            assert figures.format_value(st["drawdown_limit"], unit) in first
            assert figures.format_value(st["reservoir_pressure"], unit) in first


def test_pdf_sections_in_order(pages):
    where = []
    for k, title in enumerate(memo.SECTIONS, start=1):
        where.append(next(i for i, t in enumerate(pages) if f"{k} {title}" in t))
    assert where == sorted(where)


def test_pdf_refuses_external_resources(tmp_path, perforated_figures):
    """The PDF renderer loads nothing but data URIs: a figure linked as a local file is not
    embedded, the same figure as a data URI is."""
    png = perforated_figures["failure_probability"]
    path = tmp_path / "figure.png"
    path.write_bytes(png)
    uri = "data:image/png;base64," + base64.b64encode(png).decode()
    linked = memo.render_pdf(f'<html><body><img src="{path.as_uri()}"></body></html>')
    embedded = memo.render_pdf(f'<html><body><img src="{uri}"></body></html>')
    assert len(embedded) - len(linked) > len(png) // 4


def test_scenario_settings_once_each_with_units(openhole):
    """Each setting appears once (the stage row was duplicated), numbers carry their unit and
    thousands separators and no spurious ".0" (common practice for engineering tables; the
    depth is the fixture's 7850 ft)."""
    settings = memo.memo_context(openhole, {})["scenario"]["settings"]
    labels = [re.sub(r"\s*\[.*\]$", "", k) for k, _ in settings]
    assert len(labels) == len(set(labels)), labels
    values = {k: str(v) for k, v in settings}
    assert values["true vertical depth"] == "7,850 ft"
    assert values["reservoir pressure stages"] == "3,450 psi, 3,000 psi, 2,500 psi"
    for k, v in values.items():
        assert not re.search(r"(?<![\d.])\d+\.0(?!\d)", v), (k, v)


def test_distribution_text_keeps_units_whole():
    # derived: a no-break space ties a number to its unit, a word joiner (U+2060) forbids a
    # break after the slash of psi/ft (Unicode UAX #14, class WJ)
    text = memo.sections._distribution(
        "lognormal(median 2600 psi, cov 0.2), normal(mean 0.98 psi/ft)")
    assert "2,600\u00a0psi" in text and "psi/\u2060ft" in text and "0.2)" in text


@pytest.mark.slow
def test_pdf_laid_out_while_figures_are_drawn_is_the_same(legacy):
    """The PDF laid out around blank images while the figures are drawn in another process
    (build_memo on a machine with an idle core) is byte for byte the one rendered after them;
    figures reused from an earlier rendering are kept, and the HTML is the same."""
    one = memo.build_memo(legacy, workers=1)
    two = memo.build_memo(legacy, workers=2)
    assert two == one
    name = next(iter(one.figures))
    kept = memo.build_memo(legacy, workers=2, reuse={name: one.figures[name]})
    assert kept == one


def test_pdf_page_refers_to_figures_by_name(perforated, perforated_figures):
    """The PDF's page names each figure (no base64 to parse); the renderer serves the figures
    it is given and no others: left without them, the PDF holds no figure."""
    html = memo.render_html(perforated, perforated_figures, linked=True)
    assert "data:image/png" not in html
    assert all(f'src="risk-figure:{name}"' in html for name in perforated_figures)
    served = memo.render_pdf(html, images=perforated_figures)
    missing = memo.render_pdf(html, images={})
    assert len(served) - len(missing) > sum(map(len, perforated_figures.values())) // 4


@pytest.mark.slow
def test_pdf_of_an_unchanged_memo_is_kept(legacy):
    """`risk memo` with nothing changed: every figure reused and the same page, so the PDF
    written before is kept as it is; a page that differs (another run date) is laid out."""
    one = memo.build_memo(legacy, workers=1)
    kept = memo.build_memo(legacy, reuse=one.figures, previous=(one.html, b"%PDF- before"))
    assert kept.pdf == b"%PDF- before" and kept.html == one.html
    later = {**legacy, "run_date": "2031-01-01 00:00 UTC"}
    redone = memo.build_memo(later, reuse=one.figures, previous=(one.html, b"%PDF- before"))
    assert redone.pdf.startswith(PDF_MAGIC) and redone.html != one.html


def _pdf_images(pdf: bytes) -> list[tuple[dict[str, int], bytes]]:
    """Every image XObject of a PDF: its /Width, /Height, /BitsPerComponent, /Predictor,
    /Colors and /Columns, and its stream data (read by /Length; ISO 32000-1:2008, sec. 7.3.8
    and 8.9.5)."""
    out = []
    for m in re.finditer(rb"<<(/Type\s*/XObject\s*/Subtype\s*/Image.*?)>>\s*stream\r?\n",
                         pdf, re.S):
        head = m.group(1)
        keys = {k.decode(): int(v) for k, v in re.findall(
            rb"/(Width|Height|BitsPerComponent|Predictor|Colors|Columns|Length)\s+(\d+)", head)}
        out.append((keys, pdf[m.end():m.end() + keys["Length"]]))
    return out


def test_pdf_embeds_the_figures_pixels_as_drawn(perforated, perforated_figures):
    """The PDF holds each figure's PNG image data as it is (no re-encoding): a PNG-predicted
    Flate stream of 8-bit RGB scanlines (ISO 32000-1:2008, sec. 7.4.4.4) equal to the PNG's
    IDAT data. Decoded as the PDF describes it (the stream wrapped in a PNG of the dictionary's
    width, height and colour type, PNG specification sec. 11.2), Pillow reads the figure's
    pixels back."""
    import io
    import struct

    import numpy as np
    from PIL import Image

    def chunk(kind: bytes, data: bytes) -> bytes:
        return (struct.pack(">I", len(data)) + kind + data
                + struct.pack(">I", zlib.crc32(kind + data)))

    page = memo.render_html(perforated, perforated_figures, linked=True)
    embedded = _pdf_images(memo.render_pdf(page, images=perforated_figures))
    assert len(embedded) == len(perforated_figures)
    by_data = {memo.pdf.png_image_data(png): png for png in perforated_figures.values()}
    for keys, data in embedded:
        png = by_data[data]  # the figure's own bytes, not a re-encoding of them
        assert (keys["BitsPerComponent"], keys["Colors"], keys["Predictor"]) == (8, 3, 15)
        assert keys["Columns"] == keys["Width"]
        ihdr = struct.pack(">IIBBBBB", keys["Width"], keys["Height"], 8, 2, 0, 0, 0)
        as_described = (b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", ihdr) + chunk(b"IDAT", data)
                        + chunk(b"IEND", b""))
        assert np.array_equal(np.asarray(Image.open(io.BytesIO(as_described))),
                              np.asarray(Image.open(io.BytesIO(png)).convert("RGB")))


def test_png_image_data_only_for_8_bit_rgb():
    """RGBA, grey or palette PNGs (not what the figures are) are left to WeasyPrint."""
    import io

    from PIL import Image

    def png(mode: str) -> bytes:
        out = io.BytesIO()
        Image.new(mode, (3, 2)).save(out, format="png")
        return out.getvalue()

    assert memo.pdf.png_image_data(png("RGB"))
    for mode in ("RGBA", "L", "P"):
        assert memo.pdf.png_image_data(png(mode)) is None, mode
    assert memo.pdf.png_image_data(b"GIF89a") is None


@pytest.mark.slow
def test_memo_of_changed_results_is_laid_out_while_drawing(legacy, monkeypatch):
    """`risk memo` whose figures were drawn for other results: none is kept, so the memo takes
    the usual path (the PDF laid out while the figures are drawn, where a core is idle) and
    equals the memo rendered afresh; with the figures of these very results and the same page,
    the PDF written before is kept as it was."""
    from risk.report.memo import render as mr

    one = memo.build_memo(legacy, workers=1)
    later = {**legacy, "run_date": "2031-01-01 00:00 UTC", "seed": 7}
    started = []
    real = mr.draw_in_background

    def spy(results: Any, **kwargs: Any) -> Any:
        started.append(True)
        return real(results, **kwargs)

    monkeypatch.setattr(mr, "draw_in_background", spy)
    redone = memo.build_memo(later, reuse=one.figures, previous=(one.html, one.pdf), workers=2)
    assert started and redone == memo.build_memo(later, workers=1)
    started.clear()
    kept = memo.build_memo(legacy, reuse=one.figures, previous=(one.html, b"%PDF- before"),
                           workers=2)
    assert not started and kept.pdf == b"%PDF- before"
