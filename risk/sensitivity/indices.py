"""Sobol' indices from the coefficients of an expansion in independent variables (Sudret 2008),
grouped inputs, and percentile intervals.

References
----------
Sobol', I.M. (1993, 2001); Sudret, B. (2008): see :mod:`risk.sensitivity`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import numpy as np
from numpy.typing import ArrayLike

from risk.sensitivity.common import Array, IntArray, bad_argument

# ---------------------------------------------------------------------------------------------
# Indices from coefficients: independent variables
# ---------------------------------------------------------------------------------------------


def independent_indices(
    indices: IntArray, coefficients: ArrayLike, groups: Sequence[Sequence[int]] = ()
) -> dict[str, Array]:
    """Sobol and Shapley indices of independent variables from an orthonormal expansion.

    With ``D = sum_{a != 0} c_a^2`` (Sudret 2008, eqs. 38-41):
    first order ``S_j = sum_{supp a = {j}} c_a^2 / D``; total ``S_Tj = sum_{a_j > 0} c_a^2 / D``;
    Shapley effect ``Sh_j = sum_{a_j > 0} c_a^2 / (|supp a| D)`` (Owen 2014, interactions
    shared equally); for a group ``g``: closed first order ``sum_{supp a subset g}``, total
    ``sum_{supp a meets g}``.

    Parameters
    ----------
    indices : multi-indices (m, d) [1]
    coefficients : (m,) or (m, r) for r coefficient sets at once [unit of y]
    groups : lists of variable positions

    Returns
    -------
    dict with ``first``, ``total``, ``shapley`` (d,) or (d, r) and ``group_first``,
    ``group_total``, ``group_shapley`` (g,) or (g, r), ``variance`` () or (r,)
    [1; variance in unit of y squared]
    """
    c = np.asarray(coefficients, dtype=float)
    sq = c * c
    nz = indices > 0
    size = nz.sum(axis=1)
    keep = size > 0
    sq2 = sq.reshape(sq.shape[0], -1)[keep]
    nzk = nz[keep].astype(float)
    sizek = size[keep].astype(float)
    var = sq2.sum(axis=0)
    with np.errstate(divide="ignore", invalid="ignore"):
        inv = np.where(var > 0, 1.0 / var, np.nan)
    single = nzk * (sizek == 1)[:, None]
    first = (single.T @ sq2) * inv
    total = (nzk.T @ sq2) * inv
    shap = ((nzk / sizek[:, None]).T @ sq2) * inv
    gf, gt, gs = [], [], []
    for g in groups:
        inside = nzk[:, list(g)].sum(axis=1)
        gf.append(((inside == sizek).astype(float) @ sq2) * inv)
        gt.append(((inside > 0).astype(float) @ sq2) * inv)
        gs.append(shap[list(g)].sum(axis=0))
    shape = sq.shape[1:]
    ng = len(groups)
    return {
        "first": first.reshape(-1, *shape),
        "total": total.reshape(-1, *shape),
        "shapley": shap.reshape(-1, *shape),
        "group_first": np.array(gf).reshape(ng, *shape),
        "group_total": np.array(gt).reshape(ng, *shape),
        "group_shapley": np.array(gs).reshape(ng, *shape),
        "variance": var.reshape(shape),
    }



def _group_positions(groups: Mapping[str, Sequence[int | str]] | None,
                     names: Sequence[str]) -> tuple[tuple[str, ...], list[list[int]]]:
    if not groups:
        return (), []
    pos = {n: i for i, n in enumerate(names)}
    out: list[list[int]] = []
    for gname, members in groups.items():
        idx = []
        for m in members:
            if isinstance(m, str):
                if m not in pos:
                    raise bad_argument(f"sensitivity.groups.{gname}", m,
                                               f"one of the inputs {list(names)}")
                idx.append(pos[m])
            elif isinstance(m, int | np.integer) and 0 <= int(m) < len(names):
                idx.append(int(m))
            else:
                raise bad_argument(f"sensitivity.groups.{gname}", m,
                                           f"an input name or a position 0..{len(names) - 1}")
        if len(set(idx)) != len(idx) or not idx:
            raise bad_argument(f"sensitivity.groups.{gname}", list(members),
                                       "distinct inputs, at least one")
        out.append(idx)
    return tuple(groups), out


def _interval(samples: Array, confidence: float) -> tuple[Array, Array]:
    alpha = (1.0 - confidence) / 2.0
    if samples.shape[-1] == 0:
        nan = np.full(samples.shape[:-1], np.nan)
        return nan, nan
    lo, hi = np.quantile(samples, [alpha, 1.0 - alpha], axis=-1)
    return lo, hi


def surrogate_bounds(low: ArrayLike, high: ArrayLike, error: float) -> tuple[Array, Array]:
    """Widen index bounds by what a surrogate error of relative mean square ``error`` can move
    the index (docs/derivations.md, sec. 13).

    An index ``S = ||P Y||^2 / Var(Y)`` with ``P`` a projection-type map (first order:
    ``Y -> E[Y|x_j] - E[Y]``; total: ``Y -> Y - E[Y|x_-j]``) has a square root that is a seminorm
    of ``Y`` over the standard deviation, so for a surrogate ``Yh`` with
    ``E[(Y - Yh)^2] = error Var(Y)`` (Minkowski's inequality, twice):
    ``sqrt(S_Yh)(1 - r) - r <= sqrt(S_Y) <= sqrt(S_Yh)(1 + r) + r``, ``r = sqrt(error)``.
    Applied to the ends of a sampling interval of the surrogate's index.

    Parameters
    ----------
    low, high : interval ends of the surrogate's index [1]
    error : relative mean-square error of the surrogate [1], >= 0 (NaN: no widening known,
        bounds become NaN)

    Returns
    -------
    widened (low, high) in [0, 1] [1]
    """
    r = math.sqrt(error) if error >= 0 else math.nan
    lo = np.sqrt(np.clip(np.asarray(low, dtype=float), 0.0, 1.0))
    hi = np.sqrt(np.clip(np.asarray(high, dtype=float), 0.0, 1.0))
    return (np.maximum(lo * (1.0 - r) - r, 0.0) ** 2,
            np.minimum((hi * (1.0 + r) + r) ** 2, 1.0))
