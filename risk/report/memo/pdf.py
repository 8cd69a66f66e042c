"""The memo's PDF (WeasyPrint): :func:`render_pdf`, and :func:`pdf_alongside` which lays out
the pages while the figures are still being drawn in another process.

The page given to WeasyPrint refers to each figure by name (``risk-figure:<name>``, served
from memory by :func:`_fetcher`) rather than carrying it as a base64 data URI, so the HTML
parser does not wade through a megabyte of base64. Anything else but a data URI is refused:
the memo loads no external resource.
"""

from __future__ import annotations

import struct
import zlib
from collections.abc import Mapping
from typing import Any, Final

from risk.report.heap import settled

#: How the PDF's page refers to a figure: this prefix and the figure's name.
FIGURE_SCHEME: Final = "risk-figure:"


def _fetcher(images: Mapping[str, bytes]) -> Any:
    """WeasyPrint's URL fetcher for the memo: figures by name from ``images``, data URIs, and
    nothing else (a ValueError, which WeasyPrint reports and skips)."""

    def _figure(url: str) -> bytes:
        name = url[len(FIGURE_SCHEME):]
        if name not in images:
            raise ValueError(f"no figure named {name!r}")
        return images[name]

    try:  # WeasyPrint >= 66: a fetcher object that can refuse protocols
        from weasyprint import URLFetcher
        from weasyprint.urls import URLFetcherResponse

        class _Memo(URLFetcher):
            def fetch(self, url: str, headers: Any = None) -> Any:
                if url.startswith(FIGURE_SCHEME):
                    return URLFetcherResponse(url, body=_figure(url),
                                              headers={"Content-Type": "image/png"})
                return super().fetch(url, headers)

        return _Memo(allowed_protocols=("data",))
    except ImportError:  # pragma: no cover - older WeasyPrint: a fetcher function
        from weasyprint import default_url_fetcher

        def fetcher(url: str, *args: Any, **kwargs: Any) -> Any:
            if url.startswith(FIGURE_SCHEME):
                return {"string": _figure(url), "mime_type": "image/png"}
            if not url.startswith("data:"):
                raise ValueError(f"the memo loads no external resource ({url[:60]!r})")
            return default_url_fetcher(url, *args, **kwargs)

        return fetcher



@settled()
def render_pdf(html: str, *, images: Mapping[str, bytes] | None = None) -> bytes:
    """The PDF of a memo page (WeasyPrint; A4, page numbers in the footer).

    Parameters
    ----------
    html : str
        The page; figures as data URIs, or as ``risk-figure:<name>`` given in ``images``.
    images : mapping of str to bytes, optional
        PNG bytes by figure name, for the ``risk-figure:`` references.
    """
    from weasyprint import HTML

    cache: dict[str, Any] = {}
    document = HTML(string=html, url_fetcher=_fetcher(images or {})).render(cache=cache)
    for name, png in (images or {}).items():
        _embed_as_drawn(cache.get(FIGURE_SCHEME + name), png)
    pdf = document.write_pdf()
    return bytes(pdf) if pdf is not None else b""


def png_image_data(png: bytes) -> bytes | None:
    """The image data of an 8-bit RGB, non-interlaced PNG: its IDAT chunks joined (a zlib
    stream of filtered scanlines, PNG specification sec. 10-11), or None for any other PNG.

    A PDF image with ``/FlateDecode`` and ``/DecodeParms << /Predictor 15 /Colors 3
    /BitsPerComponent 8 /Columns width >>`` holds exactly this data (ISO 32000-1:2008,
    sec. 7.4.4.4, PNG predictors), which is how WeasyPrint embeds a PNG: it decodes the file
    and encodes it again at zlib's default level only to take these chunks out."""
    if png[:8] != b"\x89PNG\r\n\x1a\n" or png[12:16] != b"IHDR":
        return None
    # IHDR: width, height, bit depth 8, colour type 2 (RGB), compression 0, filter 0,
    # interlace 0 (none)
    if png[24:29] != b"\x08\x02\x00\x00\x00":
        return None
    parts = []
    pos = 8
    while pos + 8 <= len(png):
        (length,) = struct.unpack(">I", png[pos:pos + 4])
        kind = png[pos + 4:pos + 8]
        if kind == b"IDAT":
            parts.append(png[pos + 8:pos + 8 + length])
        elif kind == b"IEND":
            return b"".join(parts) or None
        pos += 12 + length
    return None


def _embed_as_drawn(image: Any, png: bytes) -> bool:
    """Let WeasyPrint embed this figure's PNG data as it is (:func:`png_image_data`) instead
    of decoding and re-encoding it (0.1-0.2 s a memo; the same pixels, a PDF a little larger
    as the figures are compressed at level 1). True where done; False (WeasyPrint's own path
    kept) where the image is not the 8-bit RGB PNG of that size, or this WeasyPrint builds
    its image streams otherwise (``RasterImage._get_png_data`` of WeasyPrint 70)."""
    data = png_image_data(png)
    if (data is None or image is None or getattr(image, "format", None) != "PNG"
            or getattr(image, "mode", None) != "RGB"
            or (getattr(image, "width", None), getattr(image, "height", None)) != _size(png)
            or not callable(getattr(image, "_get_png_data", None))):
        return False
    image._get_png_data = lambda _pillow_image: data
    return True


def _size(png: bytes) -> tuple[int, int]:
    """Width and height [px] of a PNG (its IHDR chunk: PNG specification, sec. 11.2.2)."""
    return int.from_bytes(png[16:20], "big"), int.from_bytes(png[20:24], "big")


def blank_png(width: int, height: int) -> bytes:
    """A white 8-bit RGB PNG of this size [px]: what the page is laid out around while the
    figure of that size is drawn (its pixels never reach the PDF). Written directly (PNG
    specification sec. 5 and 11: signature, IHDR, one IDAT of zlib-compressed scanlines of
    filter type 0, IEND; each chunk with its CRC-32), in a third of Pillow's time."""
    def chunk(kind: bytes, data: bytes) -> bytes:
        return (struct.pack(">I", len(data)) + kind + data
                + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF))

    rows = (b"\0" + b"\xff" * (3 * width)) * height
    return (b"\x89PNG\r\n\x1a\n"
            + chunk(b"IHDR", struct.pack(">IIBBBBB", width, height, 8, 2, 0, 0, 0))
            + chunk(b"IDAT", zlib.compress(rows, 1)) + chunk(b"IEND", b""))


@settled()
def pdf_alongside(html: str, blanks: Mapping[str, bytes],
                  figures: Any) -> tuple[bytes, dict[str, bytes]] | None:
    """The PDF of ``html`` (figures as ``risk-figure:`` references), laid out around the
    ``blanks`` (:func:`blank_png` by name) while the figures are drawn elsewhere; ``figures()``
    then returns the real PNGs (or None), whose pixels replace the blank ones before the PDF
    is written. The PDF equals :func:`render_pdf` of the same page and figures (same layout,
    same image references). None where a figure is missing or of another size, or this
    WeasyPrint keeps its images otherwise than expected (the caller renders afresh)."""
    from weasyprint import HTML

    sizes = {name: _size(png) for name, png in blanks.items()}
    cache: dict[str, Any] = {}
    document = HTML(string=html, url_fetcher=_fetcher(blanks)).render(cache=cache)
    pngs = figures()
    if pngs is None or set(pngs) != set(sizes):
        return None
    images = {}
    for name, png in pngs.items():
        image = cache.get(FIGURE_SCHEME + name)
        if (image is None or getattr(image, "format", None) != "PNG"
                or getattr(image, "mode", None) != "RGB"
                or (getattr(image, "width", None), getattr(image, "height", None))
                != sizes[name] or png[:8] != b"\x89PNG\r\n\x1a\n"
                or _size(png) != sizes[name]
                or png[24:26] != b"\x08\x02"  # 8-bit, RGB (PNG specification, IHDR)
                or not hasattr(image, "cache_image_data")):
            return None
        images[name] = (image, png)
    for image, png in images.values():
        image.image_data = image.cache_image_data(png)
        _embed_as_drawn(image, png)
    pdf = document.write_pdf()
    return (bytes(pdf) if pdf is not None else b""), pngs
