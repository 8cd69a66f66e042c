"""The entry points that pick the method: :func:`sobol_pce` (the expansion) and
:func:`sensitivity` (expansion, or Monte Carlo when its leave-one-out error is high)."""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Mapping, Sequence
from typing import Any

import numpy as np
import scipy.linalg
from numpy.typing import ArrayLike, NDArray

from risk.sensitivity.common import LOO_THRESHOLD, Array, Method, bad_argument, blas_single_thread
from risk.sensitivity.families import stieltjes_family
from risk.sensitivity.indices import (
    _group_positions,
    _interval,
    independent_indices,
    surrogate_bounds,
)
from risk.sensitivity.montecarlo import mc_sobol
from risk.sensitivity.pce import (
    Family,
    _bootstrap_coefficients,
    _check_xy,
    _fit,
    _products,
    basis_table,
)
from risk.sensitivity.result import SensitivityResult, _frozen
from risk.sensitivity.shapley import _blocks_of, _check_corr, correlated_indices
from risk.sensitivity.shapley_mc import mc_shapley


def families_for(kinds: Sequence[str], corr: ArrayLike | None = None, *,
                 ppfs: Sequence[Callable[[Array], ArrayLike]] | None = None
                 ) -> tuple[Family, ...]:
    """The polynomial family of each input, after the Askey scheme.

    Legendre for an independent uniform input: it is an affine function of ``2 Phi(xi) - 1``,
    so an output polynomial in the input is a finite Legendre expansion, where its Hermite
    expansion in ``xi`` is infinite (Xiu & Karniadakis 2002, Table 4.1). With ``ppfs``, an
    independent bounded triangular, beta-PERT or truncated-normal input gets the orthonormal
    polynomials of its own law (:func:`stieltjes_family`; Wan & Karniadakis 2006). Hermite in
    the underlying normal otherwise: normal and lognormal inputs (a lognormal input's own
    polynomials converge poorly; its normal's converge), and inputs coupled by the copula (the
    correlated scheme, :func:`correlated_indices`, re-expresses the expansion in rotated
    normal variables).

    Parameters
    ----------
    kinds : distribution kind of each input (``"uniform"``, ``"normal"``, ``"pert"``, ...)
    corr : normal-space correlation matrix (d, d) [1]; None = independent
    ppfs : quantile function of each input, probability [1] -> value [unit of the input];
        None = Legendre and Hermite only

    References
    ----------
    Xiu, D., Karniadakis, G.E. (2002). The Wiener-Askey polynomial chaos for stochastic
        differential equations. SIAM Journal on Scientific Computing 24, 619-644.
    Wan & Karniadakis (2006): see :mod:`risk.sensitivity.families`.
    """
    c_mat = _check_corr(corr, len(kinds))
    if ppfs is not None and len(ppfs) != len(kinds):
        raise bad_argument("sensitivity.ppfs", len(ppfs), f"{len(kinds)} quantile functions")
    coupled = {int(j) for blk in _blocks_of(c_mat) for j in blk}
    out: list[Family] = []
    for j, kind in enumerate(kinds):
        if j in coupled:
            out.append("hermite")
        elif kind == "uniform":
            out.append("legendre")
        elif ppfs is not None and kind in _OWN_FAMILY and _bounded(ppfs[j]):
            out.append(stieltjes_family(ppfs[j], name=kind))
        else:
            out.append("hermite")
    return tuple(out)


#: bounded marginals that get polynomials of their own law (with finite bounds)
_OWN_FAMILY = ("triangular", "pert", "truncnormal")


def _bounded(ppf: Callable[[Array], ArrayLike]) -> bool:
    ends = np.asarray(ppf(np.array([0.0, 1.0])), dtype=float)
    return bool(np.all(np.isfinite(ends)) and ends[1] > ends[0])


# ---------------------------------------------------------------------------------------------
# Public PCE entry point
# ---------------------------------------------------------------------------------------------


def sobol_pce(
    z: ArrayLike,
    y: ArrayLike,
    *,
    names: Sequence[str],
    rng: np.random.Generator,
    corr: ArrayLike | None = None,
    groups: Mapping[str, Sequence[int | str]] | None = None,
    max_degree: int | None = None,
    q: float = 1.0,
    method: Method = "omp",
    families: Sequence[Family] | None = None,
    n_bootstrap: int = 200,
    confidence: float = 0.95,
    holdout: tuple[ArrayLike, ArrayLike] | None = None,
    widen: bool = True,
    truncations: Sequence[tuple[float, int | None]] | None = None,
) -> list[SensitivityResult]:
    """Sobol indices, Shapley effects and their intervals from a polynomial chaos expansion.

    The outputs are expanded in the independent variables ``xi = L^-1 z`` (:func:`fit_pce`); the
    indices come from the squared coefficients (Sudret 2008) for independent inputs
    (:func:`independent_indices`) and from exact conditional variances for correlated ones
    (:func:`correlated_indices`). Bootstrap: the chosen basis of each output is refitted on
    ``n_bootstrap`` resamples of the rows and every index recomputed, the percentiles at
    ``confidence`` taken; that shows sampling noise only, so both ends are then widened by what
    the surrogate's own error can move an index (:func:`surrogate_bounds`,
    docs/derivations.md, sec. 13), with the relative mean-square error measured on the held-out
    runs ``holdout`` when given (an unbiased check: those runs took no part in the fit), else
    the corrected leave-one-out error (optimistic after a sparse selection). Needs no model
    runs beyond ``y`` and ``holdout``.

    Parameters
    ----------
    z : correlated standard normals of the inputs (n, d) [1] (= xi when corr is None)
    y : model outputs (n,) or (n, k) [unit of y]; finite (cap "never" values first)
    names : input names (d)
    rng : seeded generator for the bootstrap
    corr : normal-space correlation matrix C (d, d) [1]; None = independent
    groups : named blocks of inputs (names or positions), e.g. ``{"stresses": ["SH", "Sh"]}``
    max_degree : highest total degree [1] (default from the sample size, see :func:`fit_pce`)
    q : hyperbolic truncation exponent [1]
    method : ``"omp"`` (sparse, default) or ``"ols"`` (full basis, degree chosen by LOO)
    families : per input ``"hermite"`` (default) or ``"legendre"`` (a uniform marginal: the
        output is then polynomial in the input itself); Legendre only for inputs not
        correlated with any other
    n_bootstrap : bootstrap refits [1] (0 = no intervals)
    confidence : two-sided level of the percentile intervals [1]
    holdout : runs not used in the fit, ``(z_ho (n_ho, d) [1], y_ho (n_ho,) or (n_ho, k)
        [unit of y])``, for the validation error; None = use the leave-one-out error
    widen : False = the bootstrap percentile intervals alone (sampling noise only, no
        allowance for the surrogate's error)
    truncations : candidate ``(q, max_degree)`` pairs (replacing ``q`` and ``max_degree``),
        e.g. ``[(1.0, None), (0.5, 14)]``: each output keeps the expansion with the least
        error on the held-out runs (else the least corrected leave-one-out error). On the
        10-input Sobol G function at 2,048 runs the hold-out chose the hyperbolic set
        (q = 0.5) with index errors <= 0.005 where the leave-one-out error preferred the
        total-degree set with errors up to 0.02 (measured while building the tool)

    Returns
    -------
    one :class:`SensitivityResult` per output column
    """
    z_arr, y2 = _check_xy(z, y)
    ho = _check_xy(*holdout) if holdout is not None else None
    if ho is not None and (ho[0].shape[1] != z_arr.shape[1] or ho[1].shape[1] != y2.shape[1]
                           or ho[0].shape[0] < 2):
        raise bad_argument("sensitivity.holdout", (ho[0].shape, ho[1].shape),
                           f"(n, {z_arr.shape[1]}) inputs and (n, {y2.shape[1]}) outputs, "
                           "n >= 2")
    n, d = z_arr.shape
    if len(names) != d:
        raise bad_argument("sensitivity.names", list(names), f"{d} input names")
    group_names, group_pos = _group_positions(groups, names)
    c_mat = _check_corr(corr, d)
    correlated = not np.array_equal(c_mat, np.eye(d))
    lmat = np.linalg.cholesky(c_mat)
    xi = scipy.linalg.solve_triangular(lmat, z_arr.T, lower=True).T if correlated else z_arr
    if families is not None:
        coupled = {int(j) for blk in _blocks_of(c_mat) for j in blk}
        bad = [names[j] for j, f in enumerate(families) if f != "hermite" and j in coupled]
        if bad:
            raise bad_argument("sensitivity.families", bad,
                                       "Hermite polynomials for correlated inputs")
    xi_ho = None
    if ho is not None:
        xi_ho = (scipy.linalg.solve_triangular(lmat, ho[0].T, lower=True).T if correlated
                 else ho[0])

    tables: dict[int, Array] = {}  # the held-out runs' one-dimensional polynomials, by degree
    checked: dict[tuple[int, int], float] = {}

    def validation_error(k: int, col: int) -> float:
        """Relative mean-square error of candidate ``k``'s expansion of output ``col`` on the
        held-out runs (each computed once; the basis of those runs evaluated once per degree)."""
        if ho is None or xi_ho is None:
            return math.nan
        if (k, col) not in checked:
            exp = candidates[k][0][col]
            top = int(exp.indices.max()) if exp.indices.size else 0
            if top not in tables:
                tables[top] = basis_table(xi_ho, top, families)
            var_ho = float(np.var(ho[1][:, col], ddof=1))
            resid = ho[1][:, col] - _products(tables[top], exp.indices) @ exp.coefficients
            checked[(k, col)] = (float(np.mean(resid**2)) / var_ho if var_ho > 0
                                 else math.inf)
        return checked[(k, col)]

    cuts = list(truncations) if truncations else [(q, max_degree)]
    results = []
    with blas_single_thread():
        # one design matrix per truncation, for every output's fit and bootstrap
        candidates = [_fit(xi, y2, max_degree=deg, q=qq, method=method, max_terms=None,
                           families=families) for qq, deg in cuts]
        chosen = []
        for col in range(y2.shape[1]):
            # the truncation with the least error on the held-out runs (else the least
            # corrected leave-one-out error, which favours large bases after a selection)
            scored = [(validation_error(k, col) if ho is not None else c[0][col].loo_error,
                       k) for k, c in enumerate(candidates)]
            chosen.append(min(scored, key=lambda t: (not t[0] <= math.inf, t[0], t[1]))[1])
        for col, best in enumerate(chosen):
            exp = candidates[best][0][col]
            coef = exp.coefficients[:, None]
            if n_bootstrap > 0:
                psi = np.ascontiguousarray(candidates[best][2][:, candidates[best][1][col]])
                boot = _bootstrap_coefficients(psi, y2[:, col], rng, n_bootstrap)
                coef = np.concatenate([coef, boot], axis=1)
            if correlated:
                ind = correlated_indices(exp, c_mat, coefficients=coef, groups=group_pos,
                                         rng=rng)
                first, total = ind["full_first"], ind["independent_total"]
            else:
                ind = independent_indices(exp.indices, coef, group_pos)
                first, total = ind["first"], ind["total"]
            shap = ind["shapley"]
            validation = validation_error(best, col)
            error = (validation if ho is not None else exp.loo_error) if widen else 0.0
            f_lo, f_hi = surrogate_bounds(*_interval(first[:, 1:], confidence), error)
            t_lo, t_hi = surrogate_bounds(*_interval(total[:, 1:], confidence), error)
            s_lo, s_hi = surrogate_bounds(*_interval(shap[:, 1:], confidence), error)
            results.append(SensitivityResult(
                names=tuple(names),
                first=_frozen(first[:, 0]), total=_frozen(total[:, 0]),
                first_low=_frozen(f_lo), first_high=_frozen(f_hi),
                total_low=_frozen(t_lo), total_high=_frozen(t_hi),
                shapley=_frozen(shap[:, 0]),
                shapley_low=_frozen(s_lo), shapley_high=_frozen(s_hi),
                full_first=_frozen(first[:, 0]), independent_total=_frozen(total[:, 0]),
                loo_error=exp.loo_error, validation_error=validation, method="pce",
                n_runs=n, output=col,
                mean=exp.mean, variance=exp.variance, confidence=confidence,
                n_bootstrap=n_bootstrap, n_terms=len(exp.indices), degree=exp.degree,
                correlated=correlated, group_names=group_names,
                group_first=_frozen(ind["group_first"][:, 0].reshape(-1)),
                group_total=_frozen(ind["group_total"][:, 0].reshape(-1)),
                group_shapley=_frozen(ind["group_shapley"][:, 0].reshape(-1)),
            ))
    return results


def sensitivity(
    z: ArrayLike,
    y: ArrayLike,
    *,
    names: Sequence[str],
    rng: np.random.Generator,
    model: Callable[..., ArrayLike] | None = None,
    corr: ArrayLike | None = None,
    groups: Mapping[str, Sequence[int | str]] | None = None,
    loo_threshold: float = LOO_THRESHOLD,
    mc_n: int = 1024,
    shapley_replicates: int | None = None,
    partial_model: bool = False,
    **pce_options: Any,
) -> list[SensitivityResult]:
    """Indices per output: the expansion when it fits, Monte Carlo on the model when not.

    Each output whose surrogate error (:attr:`SensitivityResult.surrogate_error`: on the
    held-out runs when ``holdout`` is passed, else the corrected leave-one-out error) exceeds
    ``loo_threshold``
    (:data:`LOO_THRESHOLD`, see there for the bound it implies) is recomputed by
    :func:`mc_sobol` with ``mc_n (d + 2)`` runs of ``model`` (which maps ``xi`` to all outputs),
    or, with correlated inputs, by :func:`mc_shapley` with ``mc_n`` replicates (``mc_n (d + 1)``
    runs: Shapley effects, full first-order and independent total indices of the inputs
    themselves); without a model the expansion's result is kept and its ``loo_error`` says how
    far to trust it.

    Parameters
    ----------
    z, y, names, rng, corr, groups : as for :func:`sobol_pce`
    model : maps independent standard normals xi (N, d) [1] to outputs (N,) or (N, k); with
        ``partial_model``, ``model(xi, outputs)`` returns only the output columns listed in
        ``outputs`` (N, len(outputs)), so that a costly model computes only what falls back
    loo_threshold : relative surrogate error above which to fall back [1]
    mc_n : base sample of the Monte-Carlo fallback for independent inputs [1]
    shapley_replicates : replicates of the Shapley fallback for correlated inputs [1]
        (default ``mc_n``; ``replicates (d + 1)`` model runs)
    partial_model : whether ``model`` takes the list of output columns wanted
    pce_options : passed to :func:`sobol_pce`

    Returns
    -------
    one :class:`SensitivityResult` per output column
    """
    res = sobol_pce(z, y, names=names, rng=rng, corr=corr, groups=groups, **pce_options)
    bad = [r.output for r in res if not r.surrogate_error <= loo_threshold]
    if not bad or model is None:
        return res
    if partial_model:
        def model_xi(xi_: Array) -> ArrayLike:
            return model(xi_, bad)
        place = {c: k for k, c in enumerate(bad)}  # column of the fallback's outputs
    else:
        model_xi = model
        place = {c: c for c in bad}
    if res[0].correlated:
        c_mat = _check_corr(corr, len(names))
        lmat = np.linalg.cholesky(c_mat)

        def model_z(z_: Array) -> ArrayLike:
            return model_xi(scipy.linalg.solve_triangular(lmat, z_.T, lower=True).T)

        mc = mc_shapley(model_z, corr=c_mat, names=names,
                        replicates=mc_n if shapley_replicates is None else shapley_replicates,
                        rng=rng, groups=groups, confidence=pce_options.get("confidence", 0.95))
    else:
        mc = mc_sobol(model_xi, len(names), mc_n, rng, names=names,
                      n_bootstrap=pce_options.get("n_bootstrap", 200),
                      confidence=pce_options.get("confidence", 0.95))
    # the fallback keeps the expansion's errors: they say why it fell back
    return [dataclasses.replace(mc[place[r.output]], output=r.output, loo_error=r.loo_error,
                                validation_error=r.validation_error)
            if r.output in bad else r for r in res]


def has_spread(y: ArrayLike, *, min_fraction: float = 0.02, min_count: int = 20
               ) -> NDArray[np.bool_]:
    """Output columns whose samples leave their most common value often enough for indices to
    mean anything (a plateau such as "fails with no drawdown" holds most samples otherwise).

    Parameters
    ----------
    y : outputs (n, k) [unit of y]
    min_fraction : least share of samples off the most common value [1]
    min_count : least number of samples off it [1]

    Returns
    -------
    boolean array (k,)
    """
    y2 = np.asarray(y, dtype=float)
    if y2.ndim != 2:
        raise bad_argument("sensitivity.y", y2.shape, "a 2-D array (n, k)")
    out = np.zeros(y2.shape[1], dtype=bool)
    for c in range(y2.shape[1]):
        _, counts = np.unique(y2[:, c], return_counts=True)
        off = y2.shape[0] - int(counts.max())
        out[c] = off >= max(min_count, min_fraction * y2.shape[0])
    return out
