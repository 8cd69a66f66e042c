"""The memo's PDF (WeasyPrint): :func:`render_pdf`, and :func:`pdf_alongside` which lays out
the pages while the figures are still being drawn in another process.

The page given to WeasyPrint refers to each figure by name (``risk-figure:<name>``, served
from memory by :func:`_fetcher`) rather than carrying it as a base64 data URI, so the HTML
parser does not wade through a megabyte of base64. Anything else but a data URI is refused:
the memo loads no external resource.
"""

from __future__ import annotations

import io
from collections.abc import Mapping
from typing import Any, Final

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

    pdf = HTML(string=html, url_fetcher=_fetcher(images or {})).write_pdf()
    return bytes(pdf) if pdf is not None else b""


def _size(png: bytes) -> tuple[int, int]:
    """Width and height [px] of a PNG (its IHDR chunk: PNG specification, sec. 11.2.2)."""
    return int.from_bytes(png[16:20], "big"), int.from_bytes(png[20:24], "big")


def blank_png(width: int, height: int) -> bytes:
    """A white RGB PNG of this size [px]: what the page is laid out around while the figure
    of that size is drawn (its pixels never reach the PDF)."""
    from PIL import Image

    out = io.BytesIO()
    Image.new("RGB", (width, height), (255, 255, 255)).save(out, format="png",
                                                             compress_level=1)
    return out.getvalue()


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
    pdf = document.write_pdf()
    return (bytes(pdf) if pdf is not None else b""), pngs
