"""Interval sanding probability and the selective-perforation plan.

The perforated interval sands if any perforated depth sands, so its probability is taken
from the joint samples: ``P = mean over samples of max over perforated depths of
1[D_c(z, i) <= drawdown]`` (never a product of per-depth probabilities, which would assume
independent depths).

The plan: the interval is cut into zones of a fixed thickness (the plan's unit). A zone is
weak when its own sanding probability at the planned drawdown, at any stage, exceeds the
accepted risk; zones closer than the stand-off to a weak zone are not perforated, and nor are
zones holding unassessed depths. Among the remaining zones, the plan is the set of largest
total length whose probability that the interval sands at the planned drawdown at some stage
of depletion is at most the accepted risk, with every perforated run (consecutive perforated
zones) at least the minimum interval long. It is found by a depth-first search over the
zones in depth order with two exact prunings (a set over the risk makes every superset over
it, since the probability of a union only grows; a branch that cannot beat the best length is
dropped), so it is the optimum unless the node budget runs out, which the result says.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Final

import numpy as np
from numpy.typing import NDArray

from risk import probability

__all__ = ["failing", "interval_probability", "independent_probability", "zones_of",
           "Plan", "plan_perforations", "plan_limit", "NODE_BUDGET", "zones_by_breaks", "plan_for"]

Array = NDArray[np.float64]
NODE_BUDGET: Final = 2_000_000


def failing(dc: NDArray[np.floating], drawdown: float) -> NDArray[np.bool_]:
    """Which (depth, sample) fail at or below ``drawdown`` [MPa], for one stage (d, n)."""
    return np.asarray(dc <= drawdown)


def interval_probability(fail: NDArray[np.bool_], mask: NDArray[np.bool_] | None = None
                         ) -> float:
    """P(any depth of ``mask`` fails) from joint samples ``fail`` (d, n) [-]."""
    f = fail if mask is None else fail[np.asarray(mask, dtype=bool)]
    if f.shape[0] == 0:
        return 0.0
    return float(np.mean(np.any(f, axis=0)))


def independent_probability(fail: NDArray[np.bool_]) -> float:
    """1 - prod(1 - p_i) of the per-depth probabilities: the interval probability if depths
    were independent [-]."""
    p = np.mean(fail, axis=1)
    return float(1.0 - np.prod(1.0 - p))


def zones_of(depth: Array, thickness: float) -> NDArray[np.int64]:
    """Zone index of each depth: ``floor((z - z_top)/thickness)``, renumbered 0, 1, ..."""
    z = np.asarray(depth, dtype=float)
    raw = np.floor((z - z[0]) / thickness + 1e-9).astype(np.int64)
    _, idx = np.unique(raw, return_inverse=True)
    return np.asarray(idx, dtype=np.int64)


def zones_by_breaks(values: Array, depth: Array, *, threshold: float, thickness: float
                    ) -> NDArray[np.int64]:
    """Zone index of each depth: a new zone starts where ``values`` differ from the zone's
    first value by more than ``threshold`` (relative) or the zone reaches ``thickness`` [m]."""
    v = np.asarray(values, dtype=float)
    z = np.asarray(depth, dtype=float)
    out = np.zeros(z.size, dtype=np.int64)
    j, start = 0, 0
    for i in range(1, z.size):
        if (abs(v[i] - v[start]) > threshold * abs(v[start])
                or z[i] - z[start] >= thickness - 1e-9):
            j, start = j + 1, i
        out[i] = j
    return out


@dataclass(frozen=True)
class Plan:
    """A selective-perforation plan.

    perforated : (n_zones,) bool; zone_top, zone_base : (n_zones,) [m]
    weak, excluded : (n_zones,) bool (own risk over the accepted one; not a candidate)
    length : perforated length [m]; probability : worst-stage interval probability [-]
    optimal : whether the search finished (else the best plan found within the budget)
    """

    perforated: NDArray[np.bool_]
    zone_top: Array
    zone_base: Array
    weak: NDArray[np.bool_]
    excluded: NDArray[np.bool_]
    length: float
    probability: float
    optimal: bool
    nodes: int


def _bits(rows: NDArray[np.bool_]) -> int:
    return int.from_bytes(np.packbits(rows.astype(np.uint8), bitorder="little").tobytes(),
                          "little")


def plan_perforations(*, zone_fail: NDArray[np.bool_], zone_length: Array,
                      candidate: NDArray[np.bool_], accepted_risk: float, min_interval: float,
                      budget: int = NODE_BUDGET) -> tuple[NDArray[np.bool_], int, bool, int]:
    """The longest set of candidate zones with interval probability <= accepted risk.

    Parameters
    ----------
    zone_fail : (z, n) bool
        Whether any depth of the zone fails in sample ``i`` (stages already combined: a sample
        counts as failing if it fails at any stage) [-].
    zone_length : (z,) [m]; candidate : (z,) bool
    accepted_risk : (0, 1); min_interval : shortest perforated run [m]
    budget : most search nodes

    Returns
    -------
    chosen (z,) bool, failing-sample count of the choice, whether the search finished, nodes
    """
    zf = np.asarray(zone_fail, dtype=bool)
    nz, n = zf.shape
    lengths = [float(v) for v in zone_length]
    cand = [bool(v) for v in candidate]
    allowed = math.floor(accepted_risk * n + 1e-9)
    masks = [_bits(zf[j]) for j in range(nz)]
    rest = [0.0] * (nz + 1)
    for j in range(nz - 1, -1, -1):
        rest[j] = rest[j + 1] + (lengths[j] if cand[j] else 0.0)
    tol = 1e-9
    best_len = 0.0
    best: list[bool] = [False] * nz
    best_count = 0
    chosen = [False] * nz
    nodes = 0
    finished = True

    def dfs(j: int, cur: int, cur_len: float, run: float) -> None:
        nonlocal best_len, best, best_count, nodes, finished
        nodes += 1
        if nodes > budget:
            finished = False
            return
        if j == nz:
            if 0.0 < run < min_interval - tol:
                return
            if cur_len > best_len + tol:
                best_len, best, best_count = cur_len, chosen.copy(), cur.bit_count()
            return
        if cur_len + rest[j] <= best_len + tol:
            return
        if cand[j]:
            new = cur | masks[j]
            if new.bit_count() <= allowed:
                chosen[j] = True
                dfs(j + 1, new, cur_len + lengths[j], run + lengths[j])
                chosen[j] = False
        if run == 0.0 or run >= min_interval - tol:
            dfs(j + 1, cur, cur_len, 0.0)

    import sys

    limit = sys.getrecursionlimit()
    sys.setrecursionlimit(max(limit, nz + 100))
    try:
        dfs(0, 0, 0.0, 0.0)
    finally:
        sys.setrecursionlimit(limit)
    return np.asarray(best, dtype=bool), best_count, finished, nodes


def plan_limit(sand: NDArray[np.floating], mask: NDArray[np.bool_], accepted_risk: float
               ) -> list[float]:
    """Sand-free drawdown limit [MPa] of a perforated set, per stage: the accepted-risk
    quantile over samples of the smallest critical drawdown over the perforated depths."""
    m = np.asarray(mask, dtype=bool)
    if not m.any():
        return [math.inf] * sand.shape[2]
    worst = np.min(sand[m], axis=0)  # (n, k)
    return [probability.drawdown_limit(np.asarray(worst[:, k], dtype=float), accepted_risk)[0]
            for k in range(sand.shape[2])]


def plan_for(*, depth: Array, sand: NDArray[np.floating], drawdown: float,
             accepted_risk: float, zone_thickness: float, min_interval: float,
             standoff: float, assessed: Sequence[bool] | None = None,
             zone: NDArray[np.int64] | None = None) -> Plan:
    """The plan of a depth result (see the module docstring); ``zone`` gives each depth's
    zone (default :func:`zones_of` with ``zone_thickness``)."""
    z = np.asarray(depth, dtype=float)
    fail_any = np.any(np.asarray(sand) <= drawdown, axis=2)  # (d, n): fails at any stage
    if zone is None:
        zone = zones_of(z, zone_thickness)
    nz = int(zone.max()) + 1
    step = float(np.median(np.diff(z))) if z.size > 1 else zone_thickness
    top = np.array([z[zone == j].min() for j in range(nz)])
    base = np.array([z[zone == j].max() + step for j in range(nz)])
    zf = np.array([np.any(fail_any[zone == j], axis=0) for j in range(nz)])
    own = np.array([[np.mean(np.any(np.asarray(sand)[zone == j, :, k] <= drawdown, axis=0))
                     for k in range(sand.shape[2])] for j in range(nz)])
    weak = np.max(own, axis=1) > accepted_risk
    excluded = weak.copy()
    for j in np.nonzero(weak)[0]:
        near = (base > top[j] - standoff + 1e-9) & (top < base[j] + standoff - 1e-9)
        excluded |= near
    if assessed is not None:
        ok = np.asarray(assessed, dtype=bool)
        excluded |= np.array([not np.all(ok[zone == j]) for j in range(nz)])
    chosen, count, finished, nodes = plan_perforations(
        zone_fail=zf, zone_length=base - top, candidate=~excluded, accepted_risk=accepted_risk,
        min_interval=min_interval)
    n = fail_any.shape[1]
    return Plan(chosen, top, base, weak, excluded, float(np.sum((base - top)[chosen])),
                count / n, finished, nodes)
