"""Small readers of the results dict (results.json) that the figures, the memo and the
console share, so that each question about the results has one answer."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

__all__ = ["drawdown_mechanisms", "rank_value"]


def drawdown_mechanisms(results: Mapping[str, Any]) -> list[tuple[str, Mapping[str, Any]]]:
    """Mechanisms whose stages carry failure-probability curves over drawdown (every mechanism
    but pore collapse), as (key, block) in the order of results.json."""
    out = []
    for key, mech in (results.get("mechanisms") or {}).items():
        stages = mech.get("stages") or []
        if stages and all("failure_probability" in s for s in stages):
            out.append((key, mech))
    return out


def rank_value(row: Mapping[str, Any]) -> float | None:
    """What ranks an input in a sensitivity row: the row's ``rank_value``, else its Shapley
    effect, else its total index, else its first-order index (the first finite one); None when
    the row has none (an association-only row ranks nothing)."""
    for k in ("rank_value", "shapley", "total", "first"):
        v = row.get(k)
        if v is None:
            continue
        f = float(v)
        if math.isfinite(f):
            return f
    return None
