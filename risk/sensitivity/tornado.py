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
            high: ArrayLike, *, base: bool = False) -> Array | tuple[Array, Array]:
    """One-at-a-time swings: the output with input j at its low and at its high value.

    All other inputs stay at ``mid``; the 2 d cases (and the base case when asked) run in one
    vectorised model call. The caller passes P10/P50/P90 values in physical units; sort by
    ``abs(high - low)`` to draw the tornado (common practice).

    Parameters
    ----------
    model : maps x (N, d) [physical units] to (N,) or (N, k) [unit of y]
    low, mid, high : input values (d,) [physical units of each input]
    base : also return the output with every input at ``mid``

    Returns
    -------
    array (d, 2) for one output, (d, 2, k) for k outputs: ``(y_low, y_high)`` per input [unit
    of y]; with ``base``, the tuple ``(swings, y_mid)`` where ``y_mid`` is a float array of
    shape () or (k,)
    """
    lo, md, hi = (np.asarray(v, dtype=float).ravel() for v in (low, mid, high))
    d = md.size
    if lo.size != d or hi.size != d:
        raise ValueError(f"low, mid, high must have the same length, got "
                         f"{lo.size}, {d}, {hi.size}")
    rows = 2 * d + (1 if base else 0)
    x = np.tile(md, (rows, 1))
    x[np.arange(d), np.arange(d)] = lo
    x[d + np.arange(d), np.arange(d)] = hi
    out = np.asarray(model(x), dtype=float)
    if out.shape[:1] != (rows,) or out.ndim > 2:
        raise ValueError(f"model must return one value (or one row) per case ({rows}), got "
                         f"shape {out.shape}")
    swings = np.stack([out[:d], out[d:2 * d]], axis=1)
    return (swings, out[2 * d]) if base else swings
