"""Figures drawn in forked processes while the caller lays out the memo's PDF
(:func:`draw_in_background`).

The PDF's page layout needs only each figure's pixel size, which follows from the results
alone (:func:`~risk.report.figures.render.figure_size`, a few milliseconds for all of them);
the drawing proper (plotting, matplotlib's layout engine, rasterising, PNG encoding) is the
whole of a figure's cost. So the children draw the figures, taking them one by one from a
shared counter, while the caller lays out the pages around images of the sizes known at once;
when its layout is done, the caller draws the figures no child has taken yet, then puts the
real pixels in. A thread of the caller reads the children's PNGs as they come, so that no child
waits on a full pipe while the caller is busy laying out.
"""

from __future__ import annotations

import multiprocessing
import threading
import traceback
from collections.abc import Mapping
from multiprocessing.connection import Connection, wait
from typing import Any

from risk.report.figures.render import FIGURES, _render_one, figure_key, figure_size, png_key


def _take(counter: Any, names: list[str]) -> str | None:
    """The next figure no process has taken yet (and take it), or None."""
    with counter.get_lock():
        i = int(counter.value)
        if i >= len(names):
            return None
        counter.value = i + 1
    return names[i]


def _child(conn: Connection, results: Mapping[str, Any], names: list[str], key: str,
           counter: Any) -> None:
    """Draw figures taken from ``counter`` until none is left, sending ("png", name, bytes or
    None) for each; ("error", text) on a failure."""
    try:
        while (name := _take(counter, names)) is not None:
            conn.send(("png", name, _render_one(name, results, key)))
    except BaseException:  # noqa: BLE001 - reported to the parent, which draws again itself
        conn.send(("error", traceback.format_exc()))
    finally:
        conn.close()


class Drawing:
    """Figures being drawn in child processes: :attr:`sizes` [px] of every figure to come
    (kept ones included), :meth:`result` and :meth:`close`."""

    def __init__(self, children: list[Any], receivers: list[Connection],
                 results: Mapping[str, Any], names: list[str], key: str, counter: Any,
                 kept: dict[str, bytes]) -> None:
        self._children = children
        self._results = results
        self._names = names
        self._key = key
        self._counter = counter
        self.kept = kept
        self._drawn: dict[str, bytes | None] = {}
        self._failed = False
        self._reading = True
        self._ready = threading.Condition()
        self._reader = threading.Thread(target=self._read, args=(receivers,), daemon=True,
                                        name="risk-figures")
        self._reader.start()
        self.sizes: dict[str, tuple[int, int]] = {
            name: (int.from_bytes(png[16:20], "big"), int.from_bytes(png[20:24], "big"))
            for name, png in kept.items()}
        self.ok = True
        try:
            for name in names:
                size = figure_size(name, results)
                if size is not None:
                    self.sizes[name] = size
        except Exception:  # noqa: BLE001 - the caller draws in turn, which raises it again
            self.ok = False
            self.close()

    def _read(self, receivers: list[Connection]) -> None:
        """Collect the children's messages until every child has closed its pipe."""
        pending = list(receivers)
        try:
            while pending:
                for conn in wait(pending):
                    assert isinstance(conn, Connection)
                    try:
                        message = conn.recv()
                    except (EOFError, OSError):
                        pending.remove(conn)
                        conn.close()
                        continue
                    with self._ready:
                        if message[0] == "png":
                            self._drawn[message[1]] = message[2]
                        else:
                            self._failed = True
                        self._ready.notify_all()
        finally:
            for conn in pending:
                conn.close()
            with self._ready:
                self._reading = False
                self._ready.notify_all()

    def wait_sizes(self) -> bool:
        """Whether :attr:`sizes` holds the size of every figure to come (known at once, from
        the results: :func:`~risk.report.figures.render.figure_size`); False (and the
        children stopped) where that failed."""
        return self.ok

    def result(self) -> dict[str, bytes] | None:
        """Every PNG by name (:data:`FIGURES` order), or None where a child failed. Figures no
        child has taken yet are drawn in this process."""
        try:
            if not self.ok:
                return None
            mine = {}
            while not self._failed and (name := _take(self._counter, self._names)) is not None:
                mine[name] = _render_one(name, self._results, self._key)
            with self._ready:
                self._ready.wait_for(lambda: self._failed or not self._reading
                                     or len(self._drawn) + len(mine) >= len(self._names))
                drawn = {**self._drawn, **mine}
                if self._failed or set(drawn) != set(self._names):
                    return None
            out = {**self.kept, **{n: png for n, png in drawn.items() if png is not None}}
            return {name: out[name] for name in FIGURES if name in out}
        finally:
            self.close()

    def close(self) -> None:
        """Stop the children (if still running) and the reader."""
        for child in self._children:
            child.join(timeout=0.5)
            if child.is_alive():
                child.kill()
                child.join()
        self._reader.join()


def draw_in_background(results: Mapping[str, Any], *, reuse: Mapping[str, bytes] | None = None,
                       processes: int = 1) -> Drawing | None:
    """Start drawing the figures of these results in ``processes`` forked processes and return
    at once (:attr:`Drawing.sizes` holds every figure's size, :meth:`Drawing.result` the
    PNGs); None where fork is unavailable. Where a child fails, the caller draws in this
    process (:func:`~risk.report.figures.render.render_all`, which raises what went wrong).
    ``reuse`` as in ``render_all``: matching PNGs are kept, not drawn."""
    if "fork" not in multiprocessing.get_all_start_methods():  # pragma: no cover - not POSIX
        return None
    if processes < 1:
        raise ValueError(f"processes must be at least 1, got {processes}")
    key = figure_key(results)
    kept = {name: png for name, png in (reuse or {}).items()
            if name in FIGURES and png_key(png) == key}
    names = [name for name in FIGURES if name not in kept]
    ctx = multiprocessing.get_context("fork")
    counter = ctx.Value("i", 0)
    children: list[Any] = []
    receivers: list[Connection] = []
    for _ in range(processes):
        # each child its own pipe, created just before it: a child holds no other's sending end
        receive, send = ctx.Pipe(duplex=False)
        child = ctx.Process(target=_child, args=(send, results, names, key, counter),
                            daemon=True)
        try:
            child.start()
        except (AssertionError, OSError):  # a daemonic process (no children allowed), no memory
            receive.close()
            send.close()
            break
        send.close()
        children.append(child)
        receivers.append(receive)
    if not children:
        return None
    return Drawing(children, receivers, results, names, key, counter, kept)
