"""The cyclic garbage collector kept off the objects that outlive a memo (:func:`settled`).

Drawing the figures and laying out the PDF create hundreds of thousands of short-lived objects
(artists, boxes, styles), so CPython's collector runs often, and now and then a full
collection walks every object of the process: the imported libraries, the run's results, all
that was there before the memo. Measured on the demo's memo (benchmarks/README.md), one such
collection took 0.45 s of a 1.9 s PDF and 0.18 s of 2.1 s of figures, finding nothing to free
among those old objects. ``gc.freeze`` (Python >= 3.7) moves the objects that exist at that
moment out of the collector's sight until ``gc.unfreeze``; what the memo creates is collected
as usual. The output does not depend on when garbage is collected.
"""

from __future__ import annotations

import gc
import threading
from collections.abc import Iterator
from contextlib import contextmanager

_lock = threading.Lock()
_depth = 0
_ours = False


@contextmanager
def settled() -> Iterator[None]:
    """Within the block, the collector leaves alone the objects that existed when it began
    (``gc.freeze``), given back at its end (``gc.unfreeze``). Nested blocks freeze once; where
    the program has frozen objects itself, nothing is done (its freeze is not undone)."""
    global _depth, _ours
    with _lock:
        if _depth == 0:
            _ours = gc.get_freeze_count() == 0
            if _ours:
                gc.freeze()
        _depth += 1
    try:
        yield
    finally:
        with _lock:
            _depth -= 1
            if _depth == 0 and _ours:
                gc.unfreeze()
                _ours = False
