"""Figures drawn in a forked process while the caller lays out the memo's PDF
(:func:`draw_in_background`).

The PDF's page layout needs only each figure's pixel size, known as soon as the figure is
built (:func:`~risk.report.figures.render.pixel_size`); the drawing proper
(matplotlib's layout engine, rasterising, PNG encoding) is most of a figure's cost. So the
child process builds every figure, announces the sizes, then draws them, while the parent lays
out the pages around images of those sizes and puts the real pixels in when they arrive.
"""

from __future__ import annotations

import multiprocessing
import traceback
from collections.abc import Mapping
from multiprocessing.connection import Connection
from typing import Any

from matplotlib.figure import Figure

from risk.report.figures.render import (
    FIGURES,
    _png,
    figure_key,
    pixel_size,
    png_key,
    provenance_text,
)


def _child(conn: Connection, results: Mapping[str, Any], names: list[str], key: str) -> None:
    """Build every figure and send ("size", name, (w, h) or None) for each, then draw and send
    ("png", name, bytes) for each drawn one, then ("done",); ("error", text) on a failure."""
    try:
        built: dict[str, Figure] = {}
        for name in names:
            drawn = FIGURES[name](results)
            fig = (None if drawn is None
                   else drawn if isinstance(drawn, Figure) else drawn.get_figure(root=True))
            if fig is not None:
                built[name] = fig
            conn.send(("size", name, None if fig is None else pixel_size(fig)))
        text = provenance_text(results)
        for name, fig in built.items():
            conn.send(("png", name, _png(fig, text, key)))
        conn.send(("done",))
    except BaseException:  # noqa: BLE001 - reported to the parent, which draws again itself
        conn.send(("error", traceback.format_exc()))
    finally:
        conn.close()


class Drawing:
    """Figures being drawn in a child process: :attr:`sizes` [px] of every figure to come
    (kept ones included), :meth:`result` and :meth:`close`."""

    def __init__(self, child: Any, receive: Connection, names: list[str],
                 kept: dict[str, bytes]) -> None:
        self._child = child
        self._receive = receive
        self._names = names
        self.kept = kept
        self.sizes: dict[str, tuple[int, int]] = {
            name: (int.from_bytes(png[16:20], "big"), int.from_bytes(png[20:24], "big"))
            for name, png in kept.items()}
        self.ok = True

    def wait_sizes(self) -> bool:
        """Wait until the child has built every figure and announced its size (:attr:`sizes`);
        False (and the child stopped) where it failed."""
        try:
            for _ in self._names:
                message = self._receive.recv()
                if message[0] != "size":
                    self.ok = False
                    break
                if message[2] is not None:
                    self.sizes[message[1]] = (int(message[2][0]), int(message[2][1]))
        except (EOFError, OSError):
            self.ok = False
        if not self.ok:
            self.close()
        return self.ok

    def result(self) -> dict[str, bytes] | None:
        """Every PNG by name (:data:`FIGURES` order), or None where the child failed."""
        drawn: dict[str, bytes] = {}
        try:
            while self.ok:
                message = self._receive.recv()
                if message[0] == "png":
                    drawn[message[1]] = message[2]
                elif message[0] == "done" and set(drawn) == set(self.sizes) - set(self.kept):
                    return {name: self.kept.get(name) or drawn[name] for name in FIGURES
                            if name in self.sizes}
                else:
                    break
        except (EOFError, OSError):
            pass
        finally:
            self.close()
        return None

    def close(self) -> None:
        """Stop the child (if still running) and release the pipe."""
        self._receive.close()
        self._child.join(timeout=0.5)
        if self._child.is_alive():
            self._child.kill()
            self._child.join()


def draw_in_background(results: Mapping[str, Any], *,
                       reuse: Mapping[str, bytes] | None = None) -> Drawing | None:
    """Start drawing the figures of these results in a forked process and return at once
    (:meth:`Drawing.wait_sizes` then waits for their sizes); None where fork is unavailable.
    Where the child fails, the caller draws in this process
    (:func:`~risk.report.figures.render.render_all`, which raises what went wrong).
    ``reuse`` as in ``render_all``: matching PNGs are kept, not drawn."""
    if "fork" not in multiprocessing.get_all_start_methods():  # pragma: no cover - not POSIX
        return None
    key = figure_key(results)
    kept = {name: png for name, png in (reuse or {}).items()
            if name in FIGURES and png_key(png) == key}
    names = [name for name in FIGURES if name not in kept]
    ctx = multiprocessing.get_context("fork")
    receive, send = ctx.Pipe(duplex=False)
    child = ctx.Process(target=_child, args=(send, results, names, key), daemon=True)
    try:
        child.start()
    except (AssertionError, OSError):  # a daemonic process (no children allowed), no memory
        receive.close()
        send.close()
        return None
    send.close()
    return Drawing(child, receive, names, kept)
