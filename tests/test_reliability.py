"""Tests of risk.reliability: FORM (iHL-RF), SORM (Breitung) and importance sampling.

Exact answers: linear limit states (Hasofer & Lind 1974; Cornell 1969), a paraboloid (exact
probability by one-dimensional quadrature, scipy.integrate.quad) and a ball not containing the
origin (noncentral chi-square, scipy.stats.ncx2).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, stats

from risk.reliability import LimitState, compare, form, importance_sampling, sorm_breitung
from risk.uncertainty import Marginal, build_joint, normals_to_inputs


class Counted:
    """Limit state that counts the rows it is given (independent of the module's count)."""

    def __init__(self, g: LimitState) -> None:
        self.g, self.rows, self.calls = g, 0, 0

    def __call__(self, u: np.ndarray) -> np.ndarray:
        self.rows += u.shape[0]
        self.calls += 1
        return self.g(u)


def paraboloid(beta: float, kappa: float) -> LimitState:
    """g = beta + kappa/2 sum_{i<d} u_i^2 - u_d; curvatures all kappa at u* = (0, ..., beta)."""
    def g(u: np.ndarray) -> np.ndarray:
        return beta + 0.5 * kappa * np.sum(u[:, :-1] ** 2, axis=1) - u[:, -1]
    return g


def paraboloid_exact(beta: float, kappa: float, d: int) -> float:
    """P(u_d >= beta + kappa T / 2), T ~ chi2(d - 1): integral of Phi(-(beta + kappa t/2)) times
    the chi-square density (derived; scipy.integrate.quad)."""
    def integrand(t: float) -> float:
        return float(stats.norm.sf(beta + 0.5 * kappa * t) * stats.chi2.pdf(t, d - 1))

    val, _ = integrate.quad(integrand, 0, np.inf, epsabs=0, epsrel=1e-10, limit=200)
    return float(val)


def breitung_tolerance(beta: float, kappas: np.ndarray) -> float:
    """Allowed relative error of Breitung's formula (derived).

    Breitung (1984) replaces Phi(-beta - x)/Phi(-beta) by exp(-beta x); the Mills-ratio
    expansion of the normal tail gives a relative error of leading order
    sum_i kappa_i / (2 beta); the tolerance is twice that, sum_i |kappa_i| / beta.
    """
    return float(np.sum(np.abs(kappas)) / beta)


@pytest.mark.parametrize("a0,a", [(3.0, [1.0, -2.0, 0.5]), (-1.0, [0.3, 0.4]), (5.0, [2.0])])
def test_form_linear_exact(a0: float, a: list[float]) -> None:
    # Hasofer & Lind (1974): g = a0 + a.u has beta = a0/|a|, u* = -beta a/|a|, pf = Phi(-beta)
    # exactly; a negative beta when the origin fails.
    av = np.array(a)
    g = Counted(lambda u: a0 + u @ av)
    res = form(g, av.size)
    beta = a0 / np.linalg.norm(av)
    assert res.converged
    assert res.beta == pytest.approx(beta, abs=1e-9)
    assert res.pf == pytest.approx(stats.norm.sf(beta), rel=1e-8)
    np.testing.assert_allclose(res.design_point, -beta * av / np.linalg.norm(av), atol=1e-9)
    np.testing.assert_allclose(res.importance, av**2 / np.sum(av**2), atol=1e-12)
    assert res.n_evals == g.rows and res.n_calls == g.calls
    sorm = sorm_breitung(lambda u: a0 + u @ av, res)
    assert sorm.pf == pytest.approx(res.pf, rel=1e-6)  # zero curvature: SORM = FORM
    if av.size > 1:
        np.testing.assert_allclose(sorm.curvatures, 0.0, atol=1e-8)


def test_form_through_the_copula_cornell() -> None:
    # Correlated normal capacity R and demand S, g = R - S: beta = (mR - mS) /
    # sqrt(sR^2 + sS^2 - 2 rho sR sS) (Cornell 1969), rho the Pearson correlation
    # = 2 sin(pi rho_S / 6) for normal marginals (Pearson 1907 / Kruskal 1958 — from memory).
    mr, sr, ms, ss, rho_s = 30.0, 3.0, 20.0, 2.0, 0.4
    joint = build_joint(["R", "S"],
                        [Marginal("normal", (("mean", mr), ("sd", sr))),
                         Marginal("normal", (("mean", ms), ("sd", ss)))],
                        [["R", "S", rho_s]])

    def g(u: np.ndarray) -> np.ndarray:
        x = normals_to_inputs(joint, u)
        return x[:, 0] - x[:, 1]

    rho = 2 * math.sin(math.pi * rho_s / 6)
    beta = (mr - ms) / math.sqrt(sr**2 + ss**2 - 2 * rho * sr * ss)
    res = form(g, 2)
    assert res.converged and res.beta == pytest.approx(beta, rel=1e-7)


def test_form_lognormal_ratio() -> None:
    # Independent lognormal R and S, g = ln R - ln S is linear in standard-normal space:
    # beta = ln(medR/medS)/sqrt(sR^2 + sS^2), s = sqrt(ln(1 + cov^2)) (derived).
    joint = build_joint(["R", "S"],
                        [Marginal("lognormal", (("median", 40.0), ("cov", 0.3))),
                         Marginal("lognormal", (("median", 15.0), ("cov", 0.2)))])

    def g(u: np.ndarray) -> np.ndarray:
        x = normals_to_inputs(joint, u)
        return np.log(x[:, 0]) - np.log(x[:, 1])

    s2 = math.log1p(0.09) + math.log1p(0.04)
    res = form(g, 2)
    assert res.beta == pytest.approx(math.log(40 / 15) / math.sqrt(s2), rel=1e-7)


@pytest.mark.parametrize("d,beta,kappa", [(2, 3.0, 0.2), (4, 3.0, 0.1), (6, 2.5, -0.05)])
def test_paraboloid_form_sorm_is(d: int, beta: float, kappa: float) -> None:
    g = paraboloid(beta, kappa)
    exact = paraboloid_exact(beta, kappa, d)
    res = form(g, d)
    assert res.converged and res.beta == pytest.approx(beta, abs=1e-7)  # derived: u* = (0,..,beta)
    np.testing.assert_allclose(res.design_point[:-1], 0.0, atol=1e-7)
    sorm = sorm_breitung(g, res)
    np.testing.assert_allclose(sorm.curvatures, kappa, atol=1e-5)  # derived
    assert abs(sorm.pf / exact - 1) <= breitung_tolerance(beta, sorm.curvatures)
    assert sorm.n_evals == 2 * (d - 1) ** 2 + 1
    # Importance sampling: unbiased; within 4 of its own standard errors.
    pf_is, cov = importance_sampling(g, res.design_point, 2000, np.random.default_rng(d))
    assert abs(pf_is - exact) <= 4 * cov * pf_is
    assert cov < 0.1  # a single design point: IS efficient (docs/derivations.md sec. 7: < 500 runs)


def test_breitung_asymptotic_in_beta() -> None:
    # Breitung (1984): the relative error vanishes as beta -> inf at fixed curvature.
    errors = [abs(sorm_breitung(paraboloid(b, 0.2), form(paraboloid(b, 0.2), 3)).pf
                  / paraboloid_exact(b, 0.2, 3) - 1) for b in (2.0, 4.0, 8.0)]
    assert errors[0] > errors[1] > errors[2]


def test_ball_noncentral_chi_square() -> None:
    # Failure inside a ball of radius r centred at distance m from the origin:
    # Pf = P(chi2'(d, m^2) <= r^2) (scipy.stats.ncx2, reference library); beta = m - r,
    # curvatures 1/r (derived).
    d, m, r = 2, 6.0, 3.0
    centre = np.zeros(d)
    centre[0] = m

    def g(u: np.ndarray) -> np.ndarray:
        return np.sum((u - centre) ** 2, axis=1) - r * r

    exact = stats.ncx2.cdf(r * r, d, m * m)
    res = form(g, d)
    assert res.converged and res.beta == pytest.approx(m - r, abs=1e-6)
    sorm = sorm_breitung(g, res)
    np.testing.assert_allclose(sorm.curvatures, 1 / r, rtol=1e-4)
    assert abs(sorm.pf / exact - 1) <= breitung_tolerance(res.beta, sorm.curvatures)
    pf_is, cov = importance_sampling(g, res.design_point, 4000, np.random.default_rng(1))
    assert abs(pf_is - exact) <= 4 * cov * pf_is


def test_compare_quiet_when_consistent_and_loud_otherwise() -> None:
    # Linear: all three agree -> None.
    def lin(u: np.ndarray) -> np.ndarray:
        return 3.0 - u[:, 0] - u[:, 1]

    res = form(lin, 2)
    pf_is, cov = importance_sampling(lin, res.design_point, 2000, np.random.default_rng(0))
    assert compare(res, sorm_breitung(lin, res).pf, pf_is, cov) is None
    # Sphere centred on the origin, g = 9 - |u|^2: Pf = chi2.sf(9, 2) = exp(-4.5) exactly, but
    # every point of the circle is a design point (derived): Breitung's factor 1 + beta kappa
    # is 0 and IS around one point misses most of the failure domain.
    def sphere(u: np.ndarray) -> np.ndarray:
        return 9.0 - np.sum(u**2, axis=1)

    assert form(sphere, 2).message.startswith("zero gradient")
    res = form(sphere, 2, u0=np.array([0.1, 0.05]))
    assert res.converged and res.beta == pytest.approx(3.0, abs=1e-6)
    sorm = sorm_breitung(sphere, res)
    assert math.isnan(sorm.pf)
    pf_is, cov = importance_sampling(sphere, res.design_point, 2000, np.random.default_rng(0))
    text = compare(res, sorm.pf, pf_is, cov)
    assert text is not None and "SORM (Breitung) does not apply" in text
    # Curved paraboloid: FORM off by more than the IS band -> flagged, SORM not.
    g = paraboloid(3.0, 0.3)
    res = form(g, 4)
    pf_is, cov = importance_sampling(g, res.design_point, 4000, np.random.default_rng(0))
    text = compare(res, sorm_breitung(g, res).pf, pf_is, cov)
    assert text is not None and "FORM gives" in text and "SORM gives" not in text


def test_form_not_converged_reported() -> None:
    res = form(paraboloid(3.0, 0.1), 3, max_iter=1, u0=np.array([2.0, -1.0, 0.0]))
    assert not res.converged and "no convergence" in res.message
    nan_res = form(lambda u: np.full(u.shape[0], np.nan), 2)
    assert not nan_res.converged and "not finite" in nan_res.message


def test_sorm_never_returns_a_probability_above_one() -> None:
    # A parabolic limit state g = beta - u2 + (c/2) u1^2 has its design point at (0, beta), a
    # unit gradient there and the curvature c = g''/|grad g| that sorm_breitung computes
    # (derived). With c just above -1/beta, Breitung's factor 1 + beta c is 1e-5 and
    # Phi(-beta) (1e-5)^(-1/2) = 50 for beta = 1: the asymptotic formula has broken down, and
    # the result must say so (NaN), never a "probability" above 1.
    beta = 1.0

    def parabola(c: float):  # noqa: ANN202 - a limit state
        return lambda u: beta - u[:, 1] + 0.5 * c * u[:, 0] ** 2

    c = -1.0 / beta + 1e-5
    res = form(parabola(c), 2, u0=np.array([0.0, 0.5]))
    assert res.converged and res.beta == pytest.approx(beta, abs=1e-6)
    sorm = sorm_breitung(parabola(c), res)
    assert sorm.curvatures[0] == pytest.approx(c, abs=1e-6)
    assert math.isnan(sorm.pf)
    # the same surface gently curved: Breitung (1984, eq. 21) holds and stays a probability
    c = -0.2
    res = form(parabola(c), 2, u0=np.array([0.0, 0.5]))
    expected = stats.norm.cdf(-beta) / math.sqrt(1.0 + beta * c)
    assert sorm_breitung(parabola(c), res).pf == pytest.approx(expected, rel=1e-6)
