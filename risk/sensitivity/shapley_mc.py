"""Shapley effects of correlated inputs by Monte Carlo on the model itself.

When the expansion cannot be trusted (plateaus and kinks of the critical drawdown) and the
model can be rerun, the effects are estimated from model runs, not from the run's sample alone:
a given-data index measures association (an input that is only correlated with an influential
one scores high), the Shapley effect measures the input's own contribution.

Estimator (stated once)
-----------------------
Shapley effect of input ``j`` with the cost ``c(J) = E[Var(Y | x_-J)]`` (Song, Nelson & Staum
2016, who show it gives the same effects as ``Var(E[Y | x_J])``):
``Sh_j = E_pi[c(P_j(pi) + j) - c(P_j(pi))] / Var(Y)``, ``P_j(pi)`` the inputs before ``j`` in a
uniformly random ordering ``pi`` (Castro, Gomez & Tejada 2009).

One replicate draws one ordering ``pi`` and two independent standard-normal vectors ``a``, ``b``.
With the Gaussian copula, ordering the inputs as ``sigma = reversed(pi)`` and taking the
Cholesky factor ``L_sigma`` of the permuted correlation matrix, ``z_sigma = L_sigma eta`` with
``eta ~ N(0, I)`` makes the leading inputs of ``sigma`` functions of the leading ``eta`` only;
replacing the last ``k`` components of ``a`` by those of ``b`` therefore redraws the inputs
``J_k = {pi_1 .. pi_k}`` from their distribution conditional on all the others. With
``f_k`` the output at that point (``f_0 = f(a)``, ``f_d = f(b)``),
``(f_0 - f_k)^2 / 2`` is an unbiased estimate of ``c(J_k)`` (the pair estimator of Jansen
1999, applied to a conditional redraw), and the increment ``phi_{pi_k} = ((f_0 - f_k)^2 -
(f_0 - f_{k-1})^2) / 2`` of the replicate belongs to input ``pi_k``. The increments add up to
``(f_0 - f_d)^2 / 2``, an unbiased estimate of ``Var(Y)``; the effects are the ratio of the
means over replicates, so they add up to exactly one. Each replicate costs ``d + 1`` runs.
Orderings cycle through every ordered (first, last) pair of inputs in a seeded random order
(the middle shuffled), so each input comes first and last equally often and the full
first-order index ``E[(f_0 - mean) (f_{d-1} - f_d)] / Var(Y)`` (replicates with ``j`` last, where
``f_{d-1}`` shares only ``x_j`` with ``f_0``; the form of Saltelli et al. 2010) and the
independent total index ``c({j}) / Var(Y)`` (``j`` first) come from the same runs (Mara,
Tarantola & Annoni 2015 for the pair of indices), from a ``1/d`` share of the replicates each:
they are noisier than the effects.

Estimates of effects near zero can come out slightly negative from sampling noise; they are
reported as estimated (not clipped), with their intervals. Replicates are independent, so the
intervals are normal intervals with the delta-method
standard error of a ratio of means (no bootstrap needed, and nominal coverage as the replicate
count grows).

References
----------
Castro, J., Gomez, D., Tejada, J. (2009); Jansen, M.J.W. (1999); Mara, Tarantola & Annoni
(2015); Saltelli et al. (2010); Song, E., Nelson, B.L., Staum, J. (2016): see
:mod:`risk.sensitivity`.
Iooss, B., Prieur, C. (2019). Shapley effects for sensitivity analysis with correlated inputs:
    comparisons with Sobol' indices, numerical estimation and applications. International
    Journal for Uncertainty Quantification 9, 493-514 (the estimator compared with
    Song et al.'s, the Gaussian linear closed forms). From memory.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence

import numpy as np
import scipy.special
from numpy.typing import ArrayLike

from risk.sensitivity.common import Array, IntArray, bad_argument
from risk.sensitivity.indices import _group_positions
from risk.sensitivity.result import SensitivityResult, _frozen
from risk.sensitivity.shapley import _check_corr

METHOD = "shapley-mc"


def _orderings(d: int, m: int, rng: np.random.Generator) -> IntArray:
    """``m`` orderings (m, d) [1] cycling through every ordered (first, last) pair of inputs."""
    pairs = np.array([(i, j) for i in range(d) for j in range(d) if i != j], dtype=np.int64)
    cycles = -(-m // len(pairs))
    chosen = np.concatenate([pairs[rng.permutation(len(pairs))] for _ in range(cycles)])[:m]
    out = np.empty((m, d), dtype=np.int64)
    for r, (first, last) in enumerate(chosen):
        middle = np.array([k for k in range(d) if k != first and k != last], dtype=np.int64)
        out[r] = np.concatenate([[first], rng.permutation(middle), [last]])
    return out


def _ratio_interval(num: Array, den: Array, z: float) -> tuple[Array, Array, Array]:
    """Ratio of means ``mean(num) / mean(den)`` over replicates (axis 0) and its normal
    interval from the delta method (``Var(num - R den) / (m mean(den)^2)``)."""
    m = num.shape[0]
    dbar = np.mean(den, axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        ratio = np.mean(num, axis=0) / dbar
        resid = num - ratio * den
        se = np.std(resid, axis=0, ddof=1) / (math.sqrt(m) * np.abs(dbar))
    return ratio, ratio - z * se, ratio + z * se


def mc_shapley(
    model: Callable[[Array], ArrayLike],
    *,
    corr: ArrayLike,
    names: Sequence[str],
    replicates: int,
    rng: np.random.Generator,
    groups: Mapping[str, Sequence[int | str]] | None = None,
    confidence: float = 0.95,
    loo_error: float = math.nan,
) -> list[SensitivityResult]:
    """Shapley effects, full first-order and independent total indices of correlated inputs
    by random orderings and conditional redraws on the model (see the module docstring).

    Parameters
    ----------
    model : maps copula-correlated standard normals z (N, d) [1] to outputs (N,) or (N, k)
        [unit of y]; finite outputs (cap "never" values first)
    corr : normal-space correlation matrix C (d, d) [1]
    names : input names (d)
    replicates : independent replicates [1], >= 2; the model runs ``replicates (d + 1)``
        times in one vectorised call
    rng : seeded generator (orderings and normal draws)
    groups : named blocks of inputs (names or positions); a group's Shapley effect is the sum
        of its members' (group first-order and total indices are not estimated: NaN)
    confidence : two-sided level of the normal intervals [1]
    loo_error : the surrogate's leave-one-out error that led here, recorded [1]

    Returns
    -------
    one :class:`SensitivityResult` per output column, ``method="shapley-mc"``

    References
    ----------
    Song, Nelson & Staum (2016); Castro, Gomez & Tejada (2009); Jansen (1999); Iooss & Prieur
    (2019): see the module docstring.
    """
    d = len(names)
    if d < 2:
        raise bad_argument("sensitivity.names", list(names), "at least 2 input names")
    c_mat = _check_corr(corr, d)
    if replicates < 2:
        raise bad_argument("sensitivity.replicates", replicates, "an integer >= 2")
    if not 0.0 < confidence < 1.0:
        raise bad_argument("sensitivity.confidence", confidence, "a level in (0, 1)")
    group_names, group_pos = _group_positions(groups, names)
    m = int(replicates)
    order = _orderings(d, m, rng)                      # pi, (m, d)
    sigma = order[:, ::-1]                             # pi reversed
    perm_corr = c_mat[sigma[:, :, None], sigma[:, None, :]]
    chol = np.linalg.cholesky(perm_corr)               # (m, d, d)
    a = rng.standard_normal((m, d))
    b = rng.standard_normal((m, d))
    # eta^(k): a with its last k components (in sigma order) taken from b, k = 0..d
    tail = np.arange(d)[None, :] >= (d - np.arange(d + 1))[:, None]   # (d+1, d)
    eta = np.where(tail[None], b[:, None, :], a[:, None, :])         # (m, d+1, d)
    z_sigma = np.einsum("rij,rkj->rki", chol, eta)
    z = np.empty_like(z_sigma)
    np.put_along_axis(z, np.broadcast_to(sigma[:, None, :], z.shape), z_sigma, axis=2)
    out = np.asarray(model(z.reshape(m * (d + 1), d)), dtype=float)
    if out.ndim == 1:
        out = out[:, None]
    if out.shape[0] != m * (d + 1):
        raise ValueError(f"model returned {out.shape[0]} rows for {m * (d + 1)} inputs")
    if not np.all(np.isfinite(out)):
        raise ValueError("model outputs must be finite (cap 'never' values first)")
    f = out.reshape(m, d + 1, -1)
    cost = 0.5 * (f[:, :1, :] - f) ** 2                # c(J_k) estimates, (m, d+1, k)
    var_terms = cost[:, d, :]                          # (m, k)
    phi = np.zeros((m, d, f.shape[2]))
    rows = np.arange(m)[:, None]
    phi[rows, order, :] = np.diff(cost, axis=1)        # increment of pi_k at position k
    zq = float(scipy.special.ndtri(0.5 + confidence / 2.0))
    shap, s_lo, s_hi = _ratio_interval(phi, var_terms[:, None, :], zq)
    first = np.full((d, f.shape[2]), np.nan)
    f_lo, f_hi, total, t_lo, t_hi = (first.copy() for _ in range(5))
    v_all = np.mean(var_terms, axis=0)
    # centring f_0 leaves E[f_0 (f_{d-1} - f_d)] unchanged and removes the mean's large
    # contribution to the estimator's variance
    mean = 0.5 * (np.mean(f[:, 0, :], axis=0) + np.mean(f[:, d, :], axis=0))
    for j in range(d):
        last = order[:, -1] == j
        head = order[:, 0] == j
        if last.sum() >= 2:
            # f_{d-1} shares only x_j with f_0, f_d shares nothing: Var(E[Y|x_j]) =
            # E[f_0 (f_{d-1} - f_d)] (the form of Saltelli et al. 2010, Table 2 (b))
            v_j = (f[last, 0, :] - mean) * (f[last, d - 1, :] - f[last, d, :])
            se = np.std(v_j, axis=0, ddof=1) / math.sqrt(int(last.sum())) / v_all
            first[j] = np.mean(v_j, axis=0) / v_all
            f_lo[j], f_hi[j] = first[j] - zq * se, first[j] + zq * se
        if head.sum() >= 2:
            c_j = cost[head, 1, :]
            se = np.std(c_j, axis=0, ddof=1) / math.sqrt(int(head.sum())) / v_all
            total[j] = np.mean(c_j, axis=0) / v_all
            t_lo[j], t_hi[j] = total[j] - zq * se, total[j] + zq * se
    g_nan = np.full(len(group_pos), np.nan)
    results = []
    for k in range(f.shape[2]):
        g_shap = np.array([float(np.sum(shap[list(pos), k])) for pos in group_pos])
        results.append(SensitivityResult(
            names=tuple(names), first=_frozen(first[:, k]), total=_frozen(total[:, k]),
            first_low=_frozen(f_lo[:, k]), first_high=_frozen(f_hi[:, k]),
            total_low=_frozen(t_lo[:, k]), total_high=_frozen(t_hi[:, k]),
            shapley=_frozen(shap[:, k]), shapley_low=_frozen(s_lo[:, k]),
            shapley_high=_frozen(s_hi[:, k]),
            full_first=_frozen(first[:, k]), independent_total=_frozen(total[:, k]),
            loo_error=loo_error, method=METHOD, n_runs=m * (d + 1), output=k,
            mean=float(mean[k]), variance=float(v_all[k]), confidence=confidence,
            n_bootstrap=0, correlated=True, group_names=group_names,
            group_first=_frozen(g_nan), group_total=_frozen(g_nan),
            group_shapley=_frozen(g_shap)))
    return results
