"""The algebra that cuts the sensitivity step's fixed cost, each against a straightforward
computation of the same thing.

Reference values:
- Bootstrap of pairs (Efron & Tibshirani 1993, An Introduction to the Bootstrap, ch. 9): each
  resample refits least squares on n rows drawn with replacement; the reference forms the
  resampled design ``Psi[rows]`` row by row and solves with numpy.linalg.lstsq (LAPACK gelsd,
  an independent solver), and its Gram matrix as ``Psi[rows]^T Psi[rows]``.
- Least squares and leave-one-out by brute force: numpy.linalg.lstsq on the pursuit's chosen
  columns, and the n refits each leaving one row out; the correction factor
  ``n / (n - p) (1 + tr((Psi^T Psi)^-1))`` of Blatman & Sudret (2010, eqs. 18-21 -- from
  memory; Chapelle, Vapnik & Bengio 2002) from numpy.linalg.inv.
- The closure of a multi-index set under rotations inside blocks, by its definition: every
  multi-index of total degree <= the set's top whose components outside the blocks and whose
  degree in each block equal those of some index of the set, from a brute-force enumeration.
- Gaussian conditioning (Anderson 2003, An Introduction to Multivariate Statistical Analysis,
  3rd ed., Theorem 2.5.1 -- from memory): for z ~ N(0, C) and Y = b . z,
  ``Var(Y | z_u) = b_v^T (C_vv - C_vu C_uu^-1 C_uv) b_v`` (v the other inputs), so
  ``V_u = Var(E[Y | z_u]) = b^T C b - Var(Y | z_u)``; Shapley effects from all subsets by
  their definition (Shapley 1953; Owen 2014).
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import scipy.linalg
import scipy.linalg.blas
import scipy.stats

from risk.sensitivity.pce import (
    _DGKS,
    PolynomialChaos,
    _bootstrap_coefficients,
    _omp,
    _resampled_gram,
    design_matrix,
    multi_indices,
)
from risk.sensitivity.shapley import (
    _Closure,
    _givens,
    _plane_maps,
    _rotation_plan,
    _rotation_plan_of,
    correlated_indices,
)


def _basis(n: int, d: int, degree: int, seed: int) -> np.ndarray:
    xi = np.random.default_rng(seed).standard_normal((n, d))
    return design_matrix(xi, multi_indices(d, degree))


def test_resampled_gram_equals_the_gram_of_the_resampled_rows() -> None:
    psi = _basis(400, 4, 3, seed=1)  # 35 Hermite products
    syrk = scipy.linalg.blas.get_blas_funcs("syrk", (psi,))
    rng = np.random.default_rng(2)
    iu = np.triu_indices(psi.shape[1])
    for draws in (rng.integers(0, 400, 400), rng.integers(0, 20, 400)):  # also few rows drawn
        counts = np.bincount(draws, minlength=400).astype(float)
        got = _resampled_gram(syrk, psi, counts)
        # Efron & Tibshirani 1993: the resample's design, its rows repeated as drawn
        ref = psi[draws].T @ psi[draws]
        scale = np.abs(ref).max()
        np.testing.assert_allclose(got[iu], ref[iu], rtol=0, atol=1e-13 * scale)


def test_bootstrap_coefficients_equal_least_squares_on_the_resampled_rows() -> None:
    n, n_boot = 1024, 6
    psi = _basis(n, 5, 4, seed=3)  # 126 columns: n s^2 above the batched path's bound
    assert n * psi.shape[1] ** 2 > 4_000_000
    y = psi @ np.random.default_rng(4).standard_normal(psi.shape[1]) \
        + 0.1 * np.random.default_rng(5).standard_normal(n)
    got = _bootstrap_coefficients(psi, y, np.random.default_rng(6), n_boot)
    rows = np.random.default_rng(6).integers(0, n, size=(n_boot, n))  # the same draws
    for b in range(n_boot):
        # Efron & Tibshirani 1993, bootstrap of pairs; numpy.linalg.lstsq as the solver
        ref = np.linalg.lstsq(psi[rows[b]], y[rows[b]], rcond=None)[0]
        np.testing.assert_allclose(got[:, b], ref, rtol=0, atol=1e-10)


def test_rotation_plans_are_computed_once_and_equal_a_fresh_computation() -> None:
    for seed, b, top in ((7, 3, 4), (8, 4, 5)):
        rmat = scipy.stats.ortho_group.rvs(b, random_state=seed)
        plan, signs = _rotation_plan(rmat, top)
        assert _rotation_plan(rmat.copy(), top)[0] is plan  # cached by the rotation's bits
        rots, fresh_signs = _givens(rmat)
        assert np.array_equal(signs, fresh_signs) and not signs.flags.writeable
        assert len(plan) == len(rots)
        for (i, j, maps), (fi, fj, g) in zip(plan, rots, strict=True):
            assert (i, j) == (fi, fj)
            for cached, fresh in zip(maps, _plane_maps(g.T, top), strict=True):
                assert np.array_equal(cached, fresh) and not cached.flags.writeable
                # a rotation maps the orthonormal products of each degree orthogonally
                np.testing.assert_allclose(cached @ cached.T, np.eye(len(cached)), atol=1e-12)


def test_pursuit_coefficients_and_loo_error_equal_brute_force_least_squares() -> None:
    n = 120
    rng = np.random.default_rng(9)
    base = _basis(n, 3, 3, seed=10)  # 20 orthonormal products
    # mix the columns strongly so that Gram-Schmidt often needs its second pass
    mix = np.triu(rng.uniform(0.5, 1.5, (20, 20)))
    mix[0] = 0.0
    mix[0, 0] = 1.0  # keep the constant column
    psi = base @ mix
    y = base @ rng.uniform(0.5, 1.0, 20) + 0.05 * rng.standard_normal(n)
    active, coef, err = _omp(psi, y, 30, 10)
    x = psi[:, active]
    # the second pass was needed somewhere along this path
    leave = [np.linalg.norm(x[:, k] - x[:, :k] @ np.linalg.lstsq(x[:, :k], x[:, k],
                                                                 rcond=None)[0])
             / np.linalg.norm(x[:, k]) for k in range(1, len(active))]
    assert min(leave) < _DGKS
    # numpy.linalg.lstsq on the chosen columns
    np.testing.assert_allclose(coef, np.linalg.lstsq(x, y, rcond=None)[0], rtol=0, atol=1e-9)
    # leave-one-out residuals by n refits, and the correction factor from the inverse Gram
    loo = np.empty(n)
    for i in range(n):
        keep = np.arange(n) != i
        loo[i] = y[i] - x[i] @ np.linalg.lstsq(x[keep], y[keep], rcond=None)[0]
    p = len(active)
    factor = n / (n - p) * (1.0 + np.trace(np.linalg.inv(x.T @ x)))
    ref = np.mean(loo**2) / np.var(y, ddof=1) * factor
    assert math.isclose(err, ref, rel_tol=1e-9)


def _gaussian_linear_shapley(b: np.ndarray, c: np.ndarray) -> tuple[np.ndarray, ...]:
    """Full first-order, independent total and Shapley indices of Y = b . z, z ~ N(0, C),
    from the conditional variances of every subset (Anderson 2003; Shapley 1953)."""
    d = len(b)
    total = float(b @ c @ b)

    def v(u: tuple[int, ...]) -> float:
        rest = [j for j in range(d) if j not in u]
        if not u:
            return 0.0
        if not rest:
            return total
        cuu = c[np.ix_(u, u)]
        cvv = c[np.ix_(rest, rest)] - c[np.ix_(rest, u)] @ np.linalg.solve(cuu, c[np.ix_(u, rest)])
        return total - float(b[rest] @ cvv @ b[rest])

    shap = np.zeros(d)
    for j in range(d):
        others = [k for k in range(d) if k != j]
        for size in range(d):
            for u in itertools.combinations(others, size):
                w = math.factorial(size) * math.factorial(d - size - 1) / math.factorial(d)
                shap[j] += w * (v(tuple(sorted((*u, j)))) - v(u))
    first = np.array([v((j,)) for j in range(d)])
    indep = np.array([total - v(tuple(k for k in range(d) if k != j)) for j in range(d)])
    return first / total, indep / total, shap / total


def test_correlated_indices_of_a_gaussian_linear_model_cold_and_cached() -> None:
    # four inputs in one correlated block and one independent input
    c = np.eye(5)
    c[np.ix_([0, 1, 2, 3], [0, 1, 2, 3])] = [[1.0, 0.5, -0.3, 0.2], [0.5, 1.0, 0.1, 0.4],
                                             [-0.3, 0.1, 1.0, -0.25], [0.2, 0.4, -0.25, 1.0]]
    b = np.array([1.0, -2.0, 0.7, 1.5, 0.9])
    lmat = np.linalg.cholesky(c)
    indices = multi_indices(5, 1)
    exp = PolynomialChaos(indices, np.concatenate([[0.3], lmat.T @ b]), 0.0, 100)
    _rotation_plan_of.cache_clear()
    first = correlated_indices(exp, c)
    again = correlated_indices(exp, c)  # every rotation now from the cache
    for key in ("full_first", "independent_total", "shapley"):
        assert np.array_equal(first[key], again[key])
    ref_first, ref_indep, ref_shap = _gaussian_linear_shapley(b, c)
    np.testing.assert_allclose(first["full_first"], ref_first, atol=1e-12)
    np.testing.assert_allclose(first["independent_total"], ref_indep, atol=1e-12)
    np.testing.assert_allclose(first["shapley"], ref_shap, atol=1e-12)
    assert math.isclose(float(first["shapley"].sum()), 1.0, abs_tol=1e-12)


def test_closure_rows_and_pair_tables_follow_their_definition() -> None:
    rng = np.random.default_rng(11)
    d = 6
    blocks = [np.array([0, 2]), np.array([3, 4, 5])]
    indices = multi_indices(d, 4)
    indices = indices[rng.random(len(indices)) < 0.3]
    clos = _Closure(indices, blocks)

    def profile(row: tuple[int, ...]) -> tuple[int, ...]:
        return (row[1], sum(row[j] for j in (0, 2)), sum(row[j] for j in (3, 4, 5)))

    wanted = {profile(tuple(int(v) for v in r)) for r in indices}
    brute = {r for r in itertools.product(range(clos.top + 1), repeat=d)
             if sum(r) <= clos.top and profile(r) in wanted}
    rows = [tuple(int(v) for v in r) for r in clos.indices]
    assert len(rows) == len(set(rows)) and set(rows) == brute
    assert all(clos.position[r] == k for k, r in enumerate(rows))
    for i, j in ((0, 2), (3, 5), (4, 5)):
        for n, tab in enumerate(clos.pair_table(i, j)):
            if n == 0:
                continue
            # each group: the terms with a_i + a_j = n, a_i = 0..n, all else the same
            assert tab.shape[0] == len({tuple(np.delete(r, [i, j]))
                                                          for r in clos.indices
                                                          if r[i] + r[j] == n})
            for group in tab:
                terms = clos.indices[group]
                assert np.array_equal(terms[:, i], np.arange(n + 1))
                assert np.all(terms[:, j] == n - terms[:, i])
                assert np.all(np.delete(terms, [i, j], axis=1) == np.delete(terms[0], [i, j]))
