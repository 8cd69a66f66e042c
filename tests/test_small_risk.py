"""Small accepted risks (risk.small_risk, and the estimators behind it in risk.reliability)
against exact answers, over repeated seeds.

Test responses are critical drawdowns written directly in the independent standard-normal
space ``u`` (what the pipeline builds from the copula), with the plateaus the mechanics have:
0 ("fails with no drawdown") and p_r ("never", the cap).

- linear: ``D_c = mu - s (a . u)``, Gaussian: ``P(D_c <= D) = Phi((D - mu)/s)`` and the
  p-quantile ``mu + s Phi^-1(p)`` (closed form; FORM is exact on it, Hasofer & Lind 1974);
- curved: ``D_c = mu - s t - k Q``, ``t = a . u ~ N(0,1)``, ``Q = |u - t a|^2 ~ chi2(d-1)``
  independent of t, so ``P(D_c <= D) = E_Q[Phi(-(mu - D - k Q)/s)]``, a one-dimensional
  integral computed by scipy.integrate.quad against the chi-square density (independent
  numerical solution).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, optimize, stats

from risk.rare_events import importance_sampling_cv, subset_simulation
from risk.reliability import form
from risk.small_risk import N_RESOLVE, form_starts, robust_form, small_risk_limit

SEEDS = range(40)
D = 4
A = np.ones(D) / math.sqrt(D)


def _linear(mu: float, s: float, p_r: float, a: np.ndarray = A):
    def resp(u: np.ndarray) -> np.ndarray:
        return np.clip(mu - s * (np.atleast_2d(u) @ a), 0.0, p_r)
    return resp


def _curved(mu: float, s: float, k: float, p_r: float, a: np.ndarray = A):
    def resp(u: np.ndarray) -> np.ndarray:
        u = np.atleast_2d(u)
        t = u @ a
        q = np.sum((u - np.outer(t, a)) ** 2, axis=1)
        return np.clip(mu - s * t - k * q, 0.0, p_r)
    return resp


def _curved_pf(mu: float, s: float, k: float, dd: float, d: int = D) -> float:
    """P(D_c <= dd) of the curved response by quadrature over Q ~ chi2(d - 1)."""
    def f(q: float) -> float:
        return float(stats.chi2.pdf(q, d - 1) * stats.norm.cdf(-(mu - dd - k * q) / s))
    return float(integrate.quad(f, 0.0, np.inf, limit=200, epsabs=1e-14, epsrel=1e-10)[0])


def _run(resp, *, p_r: float, risk: float, n: int, seed: int) -> dict:
    """What the pipeline does for one mechanism and stage: a sampling run of n, then the
    small-risk methods."""
    rng = np.random.default_rng(seed)
    xi = rng.standard_normal((n, D))
    dc = resp(xi)
    lim = float(np.quantile(dc, risk, method="inverted_cdf"))
    return small_risk_limit(
        resp, tuple(f"x{j}" for j in range(D)), reservoir_pressure=p_r, accepted_risk=risk,
        sampled_limit=min(lim, p_r), n_samples=n,
        sampled_fraction=lambda dd: float(np.mean(dc <= dd)), xi_head=xi, dc_head=dc,
        rng=np.random.default_rng([seed, 99]))


# ------------------------------------------------------------------ FORM from a plateau ----

def test_form_from_plateau_start_recovers_the_exact_design_point() -> None:
    # D_c = clip(30 - 8 a.u, 0, 25): the median point lies on the "never" plateau (capped at
    # p_r = 25) and every u with a.u >= 3.75 on the "fails with no drawdown" plateau; both have
    # zero gradient. At D* = 5 the limit state is linear between them: beta = 25/8 exactly
    # (Hasofer & Lind 1974).
    p_r, d_star, beta = 25.0, 5.0, 25.0 / 8.0
    resp = _linear(30.0, 8.0, p_r)

    def g(u: np.ndarray) -> np.ndarray:
        return resp(u) - d_star

    # the failure the issue describes: FORM from a plateau point has no direction
    assert "zero gradient" in form(g, D).message
    assert "zero gradient" in form(g, D, u0=4.0 * A).message
    for seed in SEEDS:
        xi = np.random.default_rng(seed).standard_normal((20_000, D))
        # make sure the sample holds plateau points that fail and are most probable
        xi[:3] = [4.0 * A, 3.9 * A, 3.8 * A]
        dc = resp(xi)
        starts = form_starts(xi, dc, drawdown=d_star, reservoir_pressure=p_r)
        first = resp(starts[0][None, :])[0]
        assert 0.0 < first <= d_star  # a failing sample off the plateau
        fr, runs, tried = robust_form(g, D, starts)
        assert fr is not None and fr.converged
        assert fr.beta == pytest.approx(beta, abs=2e-3)
        assert runs == fr.n_evals and tried == 1


def test_multi_start_when_the_first_start_fails() -> None:
    # a start on the "never" plateau fails (zero gradient); the next start converges
    p_r = 25.0
    resp = _linear(30.0, 8.0, p_r)

    def g(u: np.ndarray) -> np.ndarray:
        return resp(u) - 5.0

    fr, runs, tried = robust_form(g, D, [np.zeros(D), 3.0 * A])
    assert fr is not None and tried == 2 and fr.beta == pytest.approx(25.0 / 8.0, abs=2e-3)


# ------------------------------------------------------- the limit at a small risk ----

@pytest.mark.parametrize("risk", [1e-3, 1e-4])
def test_small_risk_limit_exact_on_linear_gaussian(risk: float) -> None:
    # The p-quantile of D_c ~ N(12, 3) is 12 + 3 Phi^-1(p) (closed form, Pf = Phi(-beta)).
    # 2,000 samples put 2 (or 0.2) below it, far fewer than N_RESOLVE: the limit is solved.
    # FORM and importance sampling with the FORM control variate are exact on a linear limit
    # state, so every seed must agree to rounding.
    p_r, mu, s = 25.0, 12.0, 3.0
    exact = mu + s * stats.norm.ppf(risk)
    assert 2000 * risk < N_RESOLVE
    for seed in SEEDS:
        r = _run(_linear(mu, s, p_r), p_r=p_r, risk=risk, n=2000, seed=seed)
        assert r["limit_method"] == "importance sampling"
        assert r["limit"] == pytest.approx(exact, rel=1e-6)
        assert r["form_limit"] == pytest.approx(exact, rel=1e-3)
        assert r["is_p"] == pytest.approx(risk, rel=1e-6)
        assert r["model_runs"] == sum(r["runs"].values()) <= 500


def test_limit_when_the_sampled_quantile_is_zero() -> None:
    # The case of the issue: P(D_c <= 0) = Phi(-3.76) = 8.5e-5 below the accepted 1e-4, yet the
    # sampled quantile lands on 0 (17 of 200,000 samples fail with no drawdown, which sampling
    # cannot tell from 20). The exact limit is mu + s Phi^-1(1e-4) > 0 (closed form).
    p_r, s = 25.0, 3.0
    mu = 3.76 * s
    exact = mu + s * stats.norm.ppf(1e-4)
    resp = _linear(mu, s, p_r)
    xi = np.random.default_rng(0).standard_normal((2000, D))
    dc = resp(xi)
    r = small_risk_limit(resp, ("a", "b", "c", "d"), reservoir_pressure=p_r, accepted_risk=1e-4,
                         sampled_limit=0.0, n_samples=200_000,
                         sampled_fraction=lambda dd: 17 / 200_000 if dd <= 0 else 1e-4,
                         xi_head=xi, dc_head=dc, rng=np.random.default_rng(1))
    assert r["limit_method"] == "importance sampling"
    assert r["limit"] == pytest.approx(exact, rel=1e-5)
    # where sampling shows P(no drawdown) far above the risk (100 of 10,000 at risk 1e-3), the
    # zero limit stands with no model run
    r0 = small_risk_limit(resp, ("a", "b", "c", "d"), reservoir_pressure=p_r, accepted_risk=1e-3,
                          sampled_limit=0.0, n_samples=10_000,
                          sampled_fraction=lambda dd: 0.01, xi_head=xi, dc_head=dc,
                          rng=np.random.default_rng(1))
    assert r0["limit"] == 0.0 and r0["limit_method"] == "sampling" and r0["model_runs"] == 0


@pytest.mark.slow
@pytest.mark.parametrize("k, budget", [(-0.05, 500), (-0.2, 1000), (0.15, 1000)])
def test_small_risk_limit_rmse_goal_on_curved_cases(k: float, budget: int) -> None:
    # Goal of the issue: P(failure) at the reported limit within 10% relative RMSE of the
    # accepted 1e-3, in <= 500 model runs beyond the sampling run when near-linear, <= 1000
    # when curved. The true P at each reported limit comes from the quadrature (module
    # docstring). 40 seeds estimate the RMSE to about 1/sqrt(2 x 40) = 11% of itself.
    p_r, mu, s, risk = 25.0, 12.0, 3.0, 1e-3
    errs, runs = [], []
    for seed in SEEDS:
        r = _run(_curved(mu, s, k, p_r), p_r=p_r, risk=risk, n=2000, seed=seed)
        errs.append(_curved_pf(mu, s, k, r["limit"]) / risk - 1.0)
        runs.append(r["model_runs"])
    rmse = math.sqrt(float(np.mean(np.square(errs))))
    assert rmse <= 0.10
    assert float(np.mean(runs)) <= budget


# ----------------------------------------------------------------- the estimators ----

def test_importance_sampling_cv_is_unbiased_and_counts_runs() -> None:
    # Curved case at a fixed D (exact P by quadrature): over 40 seeds the mean estimate lies
    # within 3 standard errors of the exact value, the reported c.o.v. matches the spread
    # (factor 1.5), and the runs reported are the rows passed to g.
    mu, s, k, dd = 12.0, 3.0, -0.2, 2.7
    resp = _curved(mu, s, k, 25.0)
    exact = _curved_pf(mu, s, k, dd)
    calls = {"rows": 0}

    def g(u: np.ndarray) -> np.ndarray:
        calls["rows"] += np.atleast_2d(u).shape[0]
        return resp(u) - dd

    fr = form(g, D, u0=3.0 * A)
    est, covs = [], []
    for seed in SEEDS:
        calls["rows"] = 0
        r = importance_sampling_cv(g, fr, np.random.default_rng(seed), cov_target=0.1)
        assert r.n_evals == calls["rows"] == r.points.shape[0]
        est.append(r.pf)
        covs.append(r.cov)
    est_a = np.array(est)
    se = est_a.std(ddof=1) / math.sqrt(len(est_a))
    assert abs(est_a.mean() - exact) <= 3.0 * se
    spread = est_a.std(ddof=1) / exact
    assert 1 / 1.5 <= spread / float(np.mean(covs)) <= 1.5


def test_importance_sampling_cv_exact_and_stops_early_on_linear() -> None:
    # linear limit state: the control variate removes all variance (Owen & Zhou 2000), so the
    # stopping rule ends after the first batch
    def g(u: np.ndarray) -> np.ndarray:
        return 3.0 - np.atleast_2d(u) @ A

    fr = form(g, D)
    r = importance_sampling_cv(g, fr, np.random.default_rng(0), first=100)
    assert r.n_evals == 100 and r.converged
    assert r.pf == pytest.approx(stats.norm.sf(3.0), rel=1e-9)


def test_subset_simulation_two_design_points() -> None:
    # g = min(3 - u1, 3 + u1): two design points, P = 2 Phi(-3) = 2.70e-3 exactly (closed
    # form); one design point would give half. Over 40 seeds the mean lies within 3 standard
    # errors of the exact value, and the level quantile at 1e-3 is the Phi^-1 closed form.
    def g(u: np.ndarray) -> np.ndarray:
        u = np.atleast_2d(u)
        return np.minimum(3.0 - u[:, 0], 3.0 + u[:, 0])

    exact = 2.0 * stats.norm.sf(3.0)
    res = [subset_simulation(g, D, np.random.default_rng(seed), n=500) for seed in SEEDS]
    est = np.array([r.pf for r in res])
    assert abs(est.mean() - exact) <= 3.0 * est.std(ddof=1) / math.sqrt(est.size)
    assert all(r.n_evals == 500 + 450 * (len(r.thresholds) - 1) for r in res)
    # P(g <= y) = 2 Phi(-(3 - y)) for y < 3: the 1e-3 quantile
    q_exact = 3.0 - stats.norm.isf(0.5e-3)
    qs = np.array([subset_simulation(g, D, np.random.default_rng(seed), n=500,
                                     stop_p=1e-3).quantile(1e-3) for seed in range(10)])
    assert abs(qs.mean() - q_exact) <= 0.1


def test_curved_reference_is_right() -> None:
    # the quadrature against plain Monte Carlo at a moderate probability (10^6 samples,
    # binomial standard error)
    mu, s, k, dd = 12.0, 3.0, -0.2, 7.0
    p = _curved_pf(mu, s, k, dd)
    u = np.random.default_rng(3).standard_normal((1_000_000, D))
    mc = float(np.mean(_curved(mu, s, k, 25.0)(u) <= dd))
    assert abs(mc - p) <= 4.0 * math.sqrt(p * (1 - p) / 1e6)
    # and the linear case against its closed form
    assert _curved_pf(mu, s, 0.0, dd) == pytest.approx(stats.norm.cdf((dd - mu) / s), rel=1e-8)
    assert optimize.brentq(lambda x: _curved_pf(mu, s, 0.0, x) - 1e-3, 0.0, 12.0) == (
        pytest.approx(mu + s * stats.norm.ppf(1e-3), rel=1e-6))


def test_form_and_sorm_agree_with_openturns_from_the_robust_start() -> None:
    # Curved response capped at p_r = 10 below its median value 12: the median point lies on
    # the "never" plateau. OpenTURNS (test-only reference: ot.FORM and ot.SORM with the
    # Abdo-Rackwitz optimiser) started at our first start finds the same design point; its
    # Breitung probability matches ours.
    ot = pytest.importorskip("openturns")
    from risk.reliability import sorm_breitung

    mu, s, k, dd, p_r = 12.0, 3.0, -0.2, 2.7, 10.0
    resp = _curved(mu, s, k, p_r)

    def g(u: np.ndarray) -> np.ndarray:
        return resp(u) - dd

    xi = np.random.default_rng(0).standard_normal((20_000, D))
    starts = form_starts(xi, resp(xi), drawdown=dd, reservoir_pressure=p_r)
    ours, _, _ = robust_form(g, D, starts)
    assert ours is not None
    assert "zero gradient" in form(g, D).message  # the median point is on the plateau
    f = ot.PythonFunction(D, 1, func_sample=lambda x: [[v] for v in g(np.asarray(x))])
    event = ot.ThresholdEvent(ot.CompositeRandomVector(f, ot.RandomVector(ot.Normal(D))),
                              ot.LessOrEqual(), 0.0)
    fo = ot.FORM(ot.AbdoRackwitz(), event, ot.Point(starts[0]))
    fo.run()
    assert ours.beta == pytest.approx(fo.getResult().getHasoferReliabilityIndex(), abs=2e-3)
    so = ot.SORM(ot.AbdoRackwitz(), event, ot.Point(starts[0]))
    so.run()
    assert sorm_breitung(g, ours).pf == pytest.approx(
        so.getResult().getEventProbabilityBreitung(), rel=1e-2)
