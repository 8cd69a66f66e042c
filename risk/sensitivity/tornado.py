"""One-at-a-time swings between P10 and P90 values (tornado)."""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from numpy.typing import ArrayLike

from risk.sensitivity.common import Array

# ---------------------------------------------------------------------------------------------
# Tornado
# ---------------------------------------------------------------------------------------------


def tornado(model: Callable[[Array], ArrayLike], low: ArrayLike, mid: ArrayLike,
            high: ArrayLike) -> Array:
    """One-at-a-time swings: the output with input j at its low and at its high value.

    All other inputs stay at ``mid``; the 2 d cases run in one vectorised model call. The
    caller passes P10/P50/P90 values in physical units; sort by ``abs(high - low)`` to draw
    the tornado (common practice).

    Parameters
    ----------
    model : maps x (N, d) [physical units] to (N,) [unit of y]
    low, mid, high : input values (d,) [physical units of each input]

    Returns
    -------
    array (d, 2): ``(y_low, y_high)`` per input [unit of y]
    """
    lo, md, hi = (np.asarray(v, dtype=float).ravel() for v in (low, mid, high))
    d = md.size
    if lo.size != d or hi.size != d:
        raise ValueError(f"low, mid, high must have the same length, got "
                         f"{lo.size}, {d}, {hi.size}")
    x = np.tile(md, (2 * d, 1))
    x[np.arange(d), np.arange(d)] = lo
    x[d + np.arange(d), np.arange(d)] = hi
    out = np.asarray(model(x), dtype=float).ravel()
    if out.size != 2 * d:
        raise ValueError(f"model must return one value per row ({2 * d}), got {out.size}")
    return np.stack([out[:d], out[d:]], axis=1)
