"""Tests of risk.probability: failure curves, bands, percentiles, drawdown limits, sample sizes.

Reference library: scipy.stats (binomtest proportion_ci, binom, norm); numpy.quantile.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from risk.probability import (
    convergence_warning,
    drawdown_limit,
    failure_curve,
    min_samples_for_bound,
    percentiles,
    samples_needed,
)

MU, SD = 10.0, 2.0  # critical drawdown of the open-hole case below [MPa]


def open_hole_dc(n: int, rng: np.random.Generator) -> np.ndarray:
    """Critical drawdown of a vertical open hole [MPa], derived.

    Isotropic horizontal stress Sh = 40 MPa, reservoir pressure p_r = 30 MPa, no poroelastic
    term: the wall hoop stress is 2 Sh - p_w (Kirsch 1898), the effective hoop stress
    2 Sh - 2 p_w, the effective radial stress 0; failure when it reaches UCS, so
    p_wc = Sh - UCS/2 and D_c = p_r - Sh + UCS/2. With UCS ~ normal(40, 4) MPa,
    D_c ~ normal(10, 2) MPa. Conventions (risk.conventions): D_c = 0 if p_wc >= p_r,
    +inf if p_wc < 0.
    """
    sh, pr = 40.0, 30.0
    ucs = rng.normal(40.0, 4.0, n)
    pwc = sh - ucs / 2.0
    return np.where(pwc >= pr, 0.0, np.where(pwc < 0.0, np.inf, pr - pwc))


def test_open_hole_curve_matches_normal_cdf() -> None:
    # Whole curve within the Dvoretzky–Kiefer–Wolfowitz band with Massart's (1990) constant:
    # P(sup |F_n - F| > eps) <= 2 exp(-2 n eps^2); eps for a 1e-3 false-alarm rate.
    n = 4000
    dc = open_hole_dc(n, np.random.default_rng(11))
    grid = np.linspace(0.0, 20.0, 401)
    p, low, high = failure_curve(dc, grid)
    eps = math.sqrt(math.log(2 / 1e-3) / (2 * n))
    truth = stats.norm.cdf(grid, MU, SD)
    assert np.max(np.abs(p - truth)) < eps
    assert (low <= p).all() and (p <= high).all()
    assert p[0] == 0.0 and p[-1] == 1.0  # P(D_c <= 0) = Phi(-5) ~ 3e-7: no sample expected


def _exact_coverage(n: int, p: float, method: str) -> float:
    """Exact coverage of scipy's interval at true proportion p (derived by enumeration)."""
    scipy_method = {"wilson": "wilson", "clopper-pearson": "exact"}[method]
    cov = 0.0
    for k in range(n + 1):
        ci = stats.binomtest(k, n).proportion_ci(0.95, method=scipy_method)
        if ci.low <= p <= ci.high:
            cov += stats.binom.pmf(k, n, p)
    return cov


@pytest.mark.parametrize("method", ["wilson", "clopper-pearson"])
def test_bands_against_scipy_binomtest(method: str) -> None:
    # Reference: scipy.stats.binomtest(k, n).proportion_ci (methods "wilson", "exact").
    n = 40
    dc = np.arange(1.0, n + 1.0)  # k samples fail at drawdown k
    grid = np.arange(0.0, n + 1.0) + 0.5
    grid[0] = 0.0
    for conf in (0.9, 0.95):
        p, low, high = failure_curve(dc, grid, confidence=conf, method=method)
        k = np.arange(n + 1)
        np.testing.assert_array_equal(p, k / n)
        for kk in k:
            ci = stats.binomtest(int(kk), n).proportion_ci(
                conf, method="wilson" if method == "wilson" else "exact")
            assert low[kk] == pytest.approx(ci.low, abs=1e-12)
            assert high[kk] == pytest.approx(ci.high, abs=1e-12)


@pytest.mark.parametrize("method", ["wilson", "clopper-pearson"])
def test_band_coverage_by_simulation(method: str) -> None:
    # 400 replicates of n = 100 open-hole samples; the band at D = mu - sd (true P = Phi(-1))
    # covers the truth with the exact probability computed by enumeration (derived), within 3
    # binomial standard errors of 400 replicates. Brown, Cai & DasGupta (2001): both near or
    # above nominal; Clopper–Pearson at or above nominal.
    n, reps, d_eval = 100, 400, MU - SD
    truth = stats.norm.cdf(-1.0)
    rng = np.random.default_rng(123)
    hits = 0
    for _ in range(reps):
        _, low, high = failure_curve(open_hole_dc(n, rng), [d_eval], method=method)
        hits += bool(low[0] <= truth <= high[0])
    exact = _exact_coverage(n, truth, method)
    se = math.sqrt(exact * (1 - exact) / reps)
    assert abs(hits / reps - exact) <= 3 * se, (hits / reps, exact)
    assert exact >= 0.93  # measured 93-99% at nominal 95% (docs/derivations.md, sec. 6)


def test_curve_vectorised_and_edge_values() -> None:
    dc = np.array([0.0, 0.0, 3.0, 5.0, np.inf])
    p, low, high = failure_curve(dc, np.array([[0.0, 2.9], [3.0, 1e9]]))
    np.testing.assert_array_equal(p, [[0.4, 0.4], [0.6, 0.8]])  # derived by counting
    assert p.shape == low.shape == high.shape == (2, 2)
    p, low, high = failure_curve([np.inf, np.inf], [-1.0, 100.0])
    np.testing.assert_array_equal(p, 0.0)
    np.testing.assert_array_equal(low, 0.0)
    with pytest.raises(ValueError):
        failure_curve([1.0, np.nan], [1.0])
    with pytest.raises(ValueError):
        failure_curve([1.0], [1.0], method="agresti")


def test_percentiles_match_numpy_and_curve() -> None:
    # Reference: numpy.quantile(method="inverted_cdf") (Hyndman & Fan 1996, definition 1)
    # at generic probabilities.
    rng = np.random.default_rng(5)
    for n in (7, 100, 999):
        dc = rng.normal(10, 2, n)
        qs = rng.random(300)
        np.testing.assert_array_equal(percentiles(dc, qs),
                                      np.quantile(dc, qs, method="inverted_cdf"))
        # Exactly consistent with the curve at every level k/n (where numpy may round q n
        # the other way): curve(x_q) >= q and just below x_q it is < q.
        levels = np.arange(0, n + 1) / n
        x = percentiles(dc, levels)
        p_at, _, _ = failure_curve(dc, x)
        p_below, _, _ = failure_curve(dc, np.nextafter(x, -np.inf))
        assert (p_at >= levels).all()
        assert (p_below[1:] < levels[1:]).all()


def test_percentiles_never() -> None:
    dc = np.array([1.0, 2.0, np.inf, np.inf])
    np.testing.assert_array_equal(percentiles(dc, [0.0, 0.25, 0.5, 0.51, 1.0]),
                                  [1.0, 1.0, 2.0, np.inf, np.inf])  # derived by counting
    assert percentiles(dc, 0.1).shape == ()
    with pytest.raises(ValueError):
        percentiles(dc, [1.2])


def test_min_samples_59_rule() -> None:
    # The smallest of 59 samples is a 95%-confidence lower bound of the 5% quantile:
    # 1 - 0.95^59 = 0.9515 >= 0.95 > 1 - 0.95^58 (Wilks 1941; common practice "59 rule").
    assert min_samples_for_bound(0.05, 0.95) == 59
    dc = np.arange(1.0, 59.0)  # 58 samples
    assert drawdown_limit(dc, 0.05)[1] == -math.inf
    dc59 = np.arange(1.0, 60.0)
    limit, lower = drawdown_limit(dc59, 0.05)
    assert lower == 1.0
    assert limit == 3.0  # ceil(0.05 * 59) = 3rd smallest (derived)


def test_drawdown_limit_index() -> None:
    # k = largest index with P(Bin(n, p) >= k) >= c; checked against scipy.stats.binom.
    n, p, c = 1000, 0.1, 0.95
    dc = np.arange(1.0, n + 1.0)
    _, lower = drawdown_limit(dc, p, c)
    k = int(lower)
    assert stats.binom.sf(k - 1, n, p) >= c > stats.binom.sf(k, n, p)


def test_drawdown_limit_coverage() -> None:
    # 400 seeds, n = 300 open-hole samples, accepted risk 5%: the lower bound falls at or
    # below the true 5% quantile (mu + sd Phi^-1(0.05)) with probability
    # P(Bin(n, p) >= k) >= 95% (David & Nagaraja 2003, sec. 7.1 — from memory). The observed
    # rate must be within 3 binomial standard errors of that exact rate (and hence not
    # below 95% minus that allowance).
    n, p, reps = 300, 0.05, 400
    true_q = MU + SD * stats.norm.ppf(p)
    dc0 = np.arange(1.0, n + 1.0)
    k = int(drawdown_limit(dc0, p)[1])
    exact = stats.binom.sf(k - 1, n, p)
    assert exact >= 0.95
    rng = np.random.default_rng(2024)
    below = 0
    for _ in range(reps):
        _, lower = drawdown_limit(open_hole_dc(n, rng), p)
        below += lower <= true_q
    se = math.sqrt(exact * (1 - exact) / reps)
    assert abs(below / reps - exact) <= 3 * se, (below / reps, exact)
    assert below / reps >= 0.95 - 3 * math.sqrt(0.95 * 0.05 / reps)


def test_samples_needed_binomial() -> None:
    # n = ceil((1 - p)/(p e^2)) (derived from the binomial relative standard error; checked
    # with scipy.stats.binom.std): the smallest n with relative standard error <= e.
    for p, e in ((0.023, 0.1), (0.00135, 0.1), (0.1, 0.05)):
        n = samples_needed(p, e)
        assert stats.binom.std(n, p) / (n * p) <= e * (1 + 1e-12)
        assert stats.binom.std(n - 1, p) / ((n - 1) * p) > e
    assert samples_needed(0.023) == 4248  # (0.977/0.023)/0.01 = 4247.8 (derived)


def test_convergence_warning() -> None:
    rng = np.random.default_rng(3)
    small = open_hole_dc(500, rng)
    text = convergence_warning(small, 0.01)
    assert text is not None and "9900" in text and "500" in text  # 0.99/(0.01 * 0.01)
    assert convergence_warning(open_hole_dc(10000, rng), 0.01) is None
    assert convergence_warning(small, 0.5) is None
