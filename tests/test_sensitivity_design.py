"""The shared work of the expansion fit: one basis for every output, the matching pursuits of
all outputs run side by side, and a design of fixed size whatever the run's sample count.

Reference values:
- Ishigami function, a = 7, inputs uniform on [-pi, pi], for b = 0.1 and b = 0: closed-form
  indices (Ishigami & Homma 1990; Sobol' & Levitan 1999; as listed in SALib's
  ``test_functions/Ishigami.py``).
- Sobol' G function, 10 inputs uniform on [0, 1]: ``V_i = 1 / (3 (1 + a_i)^2)``,
  ``S_i = V_i / V``, ``S_Ti = V_i prod_{j != i}(1 + V_j) / V``, ``V = prod(1 + V_i) - 1``
  (Saltelli et al. 2008, Global Sensitivity Analysis: The Primer, sec. 3.6 -- from memory).
- Orthonormal probabilists' Hermite and Legendre values from numpy.polynomial (hermite_e,
  legendre), an independent implementation; ``He_n`` has norm ``sqrt(n!)`` under the standard
  normal and ``P_n`` norm ``1 / sqrt(2n + 1)`` under the uniform law on [-1, 1]
  (Abramowitz & Stegun 1964, 22.2.15 and 22.2.10).
- The one-output-at-a-time matching pursuit (Pati, Rezaiifar & Krishnaprasad 1993), the
  algorithm the side-by-side pursuit must reproduce.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
import scipy.stats
from numpy.polynomial import hermite_e, legendre
from scipy.special import ndtr, ndtri
from scipy.stats import qmc

import risk.sensitivity as sa
from risk.sensitivity.pce import _fit, _omp, _omp_many, _products, basis_table

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


def ishigami_indices(a: float, b: float) -> tuple[np.ndarray, np.ndarray]:
    """First-order and total indices of the Ishigami function (closed forms)."""
    v = a**2 / 8 + b * math.pi**4 / 5 + b**2 * math.pi**8 / 18 + 0.5
    v1 = 0.5 * (1 + b * math.pi**4 / 5) ** 2
    v2 = a**2 / 8
    v13 = 8 * b**2 * math.pi**8 / 225
    return np.array([v1, v2, 0.0]) / v, np.array([v1 + v13, v2, v13]) / v


def ishigami(xi: np.ndarray, a: float, b: float) -> np.ndarray:
    x = math.pi * (2.0 * ndtr(xi[:, :3]) - 1.0)
    return np.sin(x[:, 0]) + a * np.sin(x[:, 1]) ** 2 + b * x[:, 2] ** 4 * np.sin(x[:, 0])


def g_indices(a: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    v = 1.0 / (3.0 * (1.0 + a) ** 2)
    total_var = np.prod(1 + v) - 1
    return v / total_var, v * np.prod(1 + v) / (1 + v) / total_var


def sobol_g(xi: np.ndarray, a: np.ndarray) -> np.ndarray:
    return np.prod((np.abs(4.0 * ndtr(xi) - 2.0) + a) / (1.0 + a), axis=1)


def sobol_normals(d: int, n: int, rng: np.random.Generator) -> np.ndarray:
    return ndtri(qmc.Sobol(d, scramble=True, seed=rng).random(n))


def test_basis_products_match_numpy_polynomials() -> None:
    rng = np.random.default_rng(3)
    xi = rng.standard_normal((700, 3))  # 700 rows: several row blocks of the product
    idx = sa.multi_indices(3, 5)
    psi = _products(basis_table(xi, 5, ("hermite", "legendre", "hermite")), idx)
    u = 2.0 * ndtr(xi[:, 1]) - 1.0
    ref = np.ones_like(psi)
    for k, a in enumerate(idx):
        for j, deg in enumerate(a):
            if j == 1:
                c = np.zeros(deg + 1)
                c[deg] = math.sqrt(2 * deg + 1)
                ref[:, k] *= legendre.legval(u, c)
            else:
                c = np.zeros(deg + 1)
                c[deg] = 1.0 / math.sqrt(math.factorial(deg))
                ref[:, k] *= hermite_e.hermeval(xi[:, j], c)
    np.testing.assert_allclose(psi, ref, rtol=1e-11, atol=1e-11)


def test_fit_design_columns_are_each_outputs_basis_bit_for_bit() -> None:
    # the bootstrap takes its basis from the fit's candidate matrix: the same numbers as
    # evaluating each expansion's basis afresh (here with a Legendre and a beta-PERT family)
    rng = np.random.default_rng(4)
    xi = rng.standard_normal((300, 3))
    pert = scipy.stats.beta(2.5, 3.5, loc=40.0, scale=80.0)  # beta-PERT(40, 70, 120), Vose 2008
    fams = sa.families_for(["normal", "uniform", "pert"],
                           ppfs=[scipy.stats.norm.ppf, scipy.stats.uniform.ppf, pert.ppf])
    y = np.column_stack([ishigami(xi, 7.0, 0.1), xi[:, 0] * np.exp(0.3 * xi[:, 2])])
    for method in ("omp", "ols"):
        exps, where, psi = _fit(xi, y, max_degree=4, q=1.0, method=method, max_terms=None,
                                families=fams)
        for exp, cols in zip(exps, where, strict=True):
            fresh = sa.design_matrix(xi, exp.indices, fams)
            assert np.array_equal(psi[:, cols], fresh)


def test_side_by_side_pursuits_equal_one_at_a_time() -> None:
    rng = np.random.default_rng(5)
    xi = sobol_normals(4, 512, rng)
    y = np.column_stack([ishigami(xi, 7.0, 0.1), ishigami(xi, 7.0, 0.0),
                         sobol_g(xi, np.array([0.0, 1.0, 4.5, 9.0])), xi @ [1.0, 2.0, 0, 0]])
    psi = sa.design_matrix(xi, sa.multi_indices(4, 6), ("legendre",) * 4)
    many = _omp_many(psi, y, 200, 20)
    for c, (active, coef, err) in enumerate(many):
        one = _omp(psi, y[:, c], 200, 20)
        assert np.array_equal(active, one[0])
        np.testing.assert_allclose(coef, one[1], rtol=1e-10, atol=1e-12)
        assert math.isclose(err, one[2], rel_tol=1e-9)


def test_several_outputs_in_one_fit_within_001_of_ishigami() -> None:
    # every index of both outputs within 0.01 at 256 runs, as the single-output check of
    # tests/test_sensitivity_validation.py states for Ishigami with Legendre polynomials
    fams = sa.families_for(["uniform"] * 3)
    refs = [ishigami_indices(7.0, 0.1), ishigami_indices(7.0, 0.0)]
    for seed in range(8):
        rng = np.random.default_rng(seed)
        xi = sobol_normals(3, 256, rng)
        y = np.column_stack([ishigami(xi, 7.0, 0.1), ishigami(xi, 7.0, 0.0)])
        res = sa.sobol_pce(xi, y, names=["x1", "x2", "x3"], rng=rng, families=fams,
                           n_bootstrap=20)
        for r, (first, total) in zip(res, refs, strict=True):
            assert np.abs(r.first - first).max() < 0.01, (seed, r.first, first)
            assert np.abs(r.total - total).max() < 0.01, (seed, r.total, total)


@pytest.mark.slow
def test_several_outputs_in_one_fit_within_001_of_the_g_function() -> None:
    # the G function with its importance order reversed is a second output of the same runs;
    # 2,048 runs, hyperbolic set q = 0.5 to degree 14 as in the single-output check
    a = np.array([0.0, 1.0, 4.5, 9.0, 99.0, 99.0, 99.0, 99.0, 99.0, 99.0])
    fams = sa.families_for(["uniform"] * 10)
    names = [f"x{j + 1}" for j in range(10)]
    rng = np.random.default_rng(1000)
    xi = sobol_normals(10, 2048, rng)
    y = np.column_stack([sobol_g(xi, a), sobol_g(xi, a[::-1])])
    with sa.blas_single_thread():
        res = sa.sobol_pce(xi, y, names=names, rng=rng, families=fams, q=0.5, max_degree=14,
                           n_bootstrap=10)
    for r, aa in zip(res, (a, a[::-1]), strict=True):
        first, total = g_indices(aa)
        assert np.abs(r.first - first).max() < 0.01
        assert np.abs(r.total - total).max() < 0.01


@pytest.mark.slow
def test_run_sensitivity_uses_a_fixed_design_whatever_the_sample_count() -> None:
    # the expansion is fitted on the run's first SENSITIVITY_RUNS points and checked on the
    # next HOLDOUT_RUNS: two runs that share those points give the same indices bit for bit,
    # however many samples each evaluates (nothing in the step grows with the sample count)
    from risk.assessment import HOLDOUT_RUNS, SENSITIVITY_RUNS, assess
    from risk.scenario import load_scenario

    scenario = load_scenario(EXAMPLES / "ravenmoor_r7_openhole.toml")
    assert scenario.sampling == "sobol"  # a prefix of the sequence is the same points
    n = SENSITIVITY_RUNS + HOLDOUT_RUNS
    small = assess(scenario, samples=n)
    large = assess(scenario, samples=2 * n)
    assert small.sensitivity.keys() == large.sensitivity.keys() and small.sensitivity
    for key, r in small.sensitivity.items():
        s = large.sensitivity[key]
        assert r.n_runs == s.n_runs and r.method == s.method
        for field in ("first", "total", "shapley", "total_low", "total_high", "shapley_low"):
            assert np.array_equal(getattr(r, field), getattr(s, field)), (key, field)
        assert r.validation_error == s.validation_error
