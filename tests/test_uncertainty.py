"""Tests of risk.uncertainty: marginals, scenario parsing, Gaussian copula, unit-cube sampling.

Reference library: scipy.stats (distribution functions, spearmanr, multivariate normal CDF).
"""

from __future__ import annotations

import math
import warnings
from typing import Any

import numpy as np
import pytest
from scipy import stats

from risk.conventions import PSI_TO_MPA
from risk.errors import ScenarioError
from risk.uncertainty import (
    U_MAX,
    U_MIN,
    Bounds,
    Marginal,
    UnitSampler,
    build_joint,
    correlated_normals,
    input_columns,
    normal_to_rank_corr,
    normals_to_inputs,
    parse_input,
    rank_to_normal_corr,
    to_inputs,
)

U = np.array([1e-12, 1e-6, 0.001, 0.02, 0.1, 0.25, 0.5, 0.6, 0.9, 0.975, 0.999, 1 - 1e-9])


def _m(kind: str, **params: float) -> Marginal:
    return Marginal(kind, tuple(params.items()))


# Each case: our marginal and the same distribution written in scipy.stats' parametrisation
# (reference library; parameter mapping from the scipy.stats documentation).
def _cases() -> list[tuple[str, Marginal, Any]]:
    s_ln = math.sqrt(math.log(1 + 0.3**2))
    a, m, b = 2.0, 3.0, 7.0
    return [
        ("normal", _m("normal", mean=30.0, sd=4.0), stats.norm(30.0, 4.0)),
        ("lognormal", _m("lognormal", median=20.0, cov=0.3), stats.lognorm(s_ln, scale=20.0)),
        ("uniform", _m("uniform", low=0.1, high=0.4), stats.uniform(0.1, 0.3)),
        ("triangular", _m("triangular", low=a, mode=m, high=b),
         stats.triang((m - a) / (b - a), loc=a, scale=b - a)),
        ("truncnormal", _m("truncnormal", mean=10.0, sd=3.0, low=5.0, high=20.0),
         stats.truncnorm((5.0 - 10.0) / 3.0, (20.0 - 10.0) / 3.0, loc=10.0, scale=3.0)),
        ("pert", _m("pert", low=a, mode=m, high=b),
         stats.beta(1 + 4 * (m - a) / (b - a), 1 + 4 * (b - m) / (b - a), loc=a, scale=b - a)),
    ]


# ---------------------------------------------------------------------------------------------
# Marginals
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize("name,marg,ref", _cases(), ids=[c[0] for c in _cases()])
def test_marginal_against_scipy_stats(name: str, marg: Marginal, ref: Any) -> None:
    # Reference: scipy.stats frozen distributions (ppf, cdf, moments, median).
    np.testing.assert_allclose(marg.ppf(U), ref.ppf(U), rtol=1e-9, atol=1e-12)
    x = ref.ppf(U)
    np.testing.assert_allclose(marg.cdf(x), ref.cdf(x), rtol=1e-9, atol=1e-15)
    assert marg.mean == pytest.approx(ref.mean(), rel=1e-10)
    assert marg.std == pytest.approx(ref.std(), rel=1e-9)
    assert marg.median == pytest.approx(ref.median(), rel=1e-10)
    assert marg.quantile(0.9) == pytest.approx(ref.ppf(0.9), rel=1e-10)
    assert not marg.is_fixed
    # scalar in, 0-d out; array shape kept
    assert np.shape(marg.ppf(0.3)) == ()
    assert marg.ppf(np.full((2, 3), 0.4)).shape == (2, 3)


def test_truncnormal_ppf_against_closed_form() -> None:
    # Derived: F^-1(u) = mu + sd Phi^-1(Phi(a) + u (Phi(b) - Phi(a))), central region.
    mu, sd, lo, hi = 10.0, 3.0, 5.0, 20.0
    a, b = (lo - mu) / sd, (hi - mu) / sd
    u = np.linspace(0.01, 0.99, 25)
    fa, fb = stats.norm.cdf(a), stats.norm.cdf(b)
    expected = mu + sd * stats.norm.ppf(fa + u * (fb - fa))
    np.testing.assert_allclose(_m("truncnormal", mean=mu, sd=sd, low=lo, high=hi).ppf(u), expected,
                               rtol=1e-10)


def test_fixed_marginal() -> None:
    m = Marginal.constant(2.5, source="log")
    assert m.is_fixed and m.value == 2.5 and m.std == 0.0 and m.mean == 2.5
    np.testing.assert_array_equal(m.ppf(np.array([0.0, 0.3, 1.0])), [2.5, 2.5, 2.5])
    assert m.describe(1.0, "MPa") == "2.5 MPa (fixed)"


def test_lognormal_forms_agree() -> None:
    # Derived (Johnson, Kotz & Balakrishnan 1994, ch. 14): median = mean / sqrt(1 + cov^2),
    # cov = sd / mean.
    mean, sd = 50.0, 20.0
    cov = sd / mean
    a = _m("lognormal", mean=mean, sd=sd)
    b = _m("lognormal", median=mean / math.sqrt(1 + cov**2), cov=cov)
    np.testing.assert_allclose(a.ppf(U), b.ppf(U), rtol=1e-12)
    assert a.mean == pytest.approx(mean, rel=1e-12)
    assert a.std == pytest.approx(sd, rel=1e-12)
    ref = stats.lognorm(math.sqrt(math.log1p(cov**2)), scale=mean / math.sqrt(1 + cov**2))
    assert ref.mean() == pytest.approx(mean, rel=1e-12)  # scipy.stats (reference library)


@pytest.mark.parametrize("a,m,b", [(2.0, 3.0, 7.0), (0.0, 0.0, 1.0), (-5.0, 4.0, 4.0)])
def test_pert_moments_published(a: float, m: float, b: float) -> None:
    # Beta-PERT, lambda = 4: mean (a + 4m + b)/6 (Malcolm et al. 1959);
    # variance (mean - a)(b - mean)/7 (Vose 2008, sec. 9.1.4 — from memory).
    p = _m("pert", low=a, mode=m, high=b)
    mean = (a + 4 * m + b) / 6
    assert p.mean == pytest.approx(mean, rel=1e-12, abs=1e-12)
    assert p.std == pytest.approx(math.sqrt((mean - a) * (b - mean) / 7), rel=1e-12)


def test_cdf_inverts_ppf_and_edges() -> None:
    for _, marg, _ in _cases():
        np.testing.assert_allclose(marg.cdf(marg.ppf(U[2:-1])), U[2:-1], rtol=1e-8)
        lo, hi = marg.support
        if math.isfinite(lo):
            assert float(marg.cdf(lo - 1.0)) == 0.0
        if math.isfinite(hi):
            assert float(marg.cdf(hi + 1.0)) == 1.0


def test_marginal_direct_construction_is_checked() -> None:
    with pytest.raises(ValueError, match="sd"):
        _m("normal", mean=1.0, sd=0.0)
    with pytest.raises(ValueError, match="needs parameters"):
        _m("normal", mean=1.0)
    with pytest.raises(ValueError, match="unknown distribution"):
        _m("gamma", k=1.0)


# ---------------------------------------------------------------------------------------------
# parse_input
# ---------------------------------------------------------------------------------------------

POS = Bounds.positive()


def test_parse_field_units_and_describe() -> None:
    raw = {"dist": "normal", "mean": 9000, "sd": 900, "source": "core tests"}
    m = parse_input("rock.ucs", raw, scale=PSI_TO_MPA, bounds=POS)
    assert m.kind == "normal" and m.source == "core tests"
    # NIST SP 811 factor (risk.conventions): 9000 psi = 62.05 MPa.
    assert m.mean == pytest.approx(9000 * 6.894757293168e-3, rel=1e-12)
    assert m.std == pytest.approx(900 * 6.894757293168e-3, rel=1e-12)
    assert m.describe(PSI_TO_MPA, "psi") == "normal(mean 9000 psi, sd 900 psi)"


def test_parse_plain_number_and_cov_not_scaled() -> None:
    depth = parse_input("well.depth", 3000, scale=0.3048, bounds=POS)
    assert depth.is_fixed and depth.value == pytest.approx(914.4, rel=1e-15)  # 0.3048 m/ft exact
    m = parse_input("rock.ucs", {"dist": "lognormal", "median": 40, "cov": 0.25},
                    scale=2.0, bounds=POS)
    assert dict(m.params) == {"median": 80.0, "cov": 0.25}
    assert m.describe(2.0, "MPa") == "lognormal(median 40 MPa, cov 0.25)"


def test_parse_truncnormal_inside_bounds_accepted() -> None:
    # normal(0.25, 0.1) puts 0.6% below 0 -> refused; truncated at 0 it is accepted.
    nu = Bounds(0.0, 0.5, lower_inclusive=True, upper_inclusive=False, text="in [0, 0.5)")
    m = parse_input("rock.poisson", {"dist": "truncnormal", "mean": 0.25, "sd": 0.1, "low": 0.0,
                                     "high": 0.45}, scale=1.0, bounds=nu)
    assert m.support == (0.0, 0.45)
    one_sided = parse_input("rock.ucs", {"dist": "truncnormal", "mean": 10, "sd": 6, "low": 1},
                            scale=1.0, bounds=POS)
    assert one_sided.support == (1.0, math.inf)
    assert one_sided.describe(1.0, "MPa") == "truncnormal(mean 10 MPa, sd 6 MPa, low 1 MPa)"


REFUSALS = [
    # (raw, key expected in message, value text, expectation text)
    ({"dist": "normall", "mean": 1, "sd": 1}, "rock.ucs.dist", "'normall'",
     "did you mean 'normal'"),
    ({"mean": 1, "sd": 1}, "rock.ucs.dist", "without 'dist'", "a 'dist' entry"),
    ("strong", "rock.ucs", "'strong'", "a number or a table"),
    (True, "rock.ucs", "True", "a number or a table"),
    ({"dist": "normal", "mean": 10}, "rock.ucs.sd", "nothing", "normal needs mean, sd"),
    ({"dist": "normal", "mena": 10, "sd": 1}, "rock.ucs.mena", "'mena'", "did you mean 'mean'"),
    ({"dist": "normal", "mean": "10", "sd": 1}, "rock.ucs.mean", "'10'", "a number"),
    ({"dist": "normal", "mean": True, "sd": 1}, "rock.ucs.mean", "True", "a number"),
    ({"dist": "normal", "mean": math.nan, "sd": 1}, "rock.ucs.mean", "nan", "a finite number"),
    ({"dist": "normal", "mean": 10, "sd": math.inf}, "rock.ucs.sd", "inf", "a finite number"),
    ({"dist": "normal", "mean": 10, "sd": 0}, "rock.ucs.sd", "found 0", "standard deviation > 0"),
    ({"dist": "normal", "mean": 10, "sd": -1}, "rock.ucs.sd", "found -1", "> 0"),
    ({"dist": "uniform", "low": 5, "high": 5}, "rock.ucs.high", "found 5", "high > low"),
    ({"dist": "triangular", "low": 1, "mode": 9, "high": 5}, "rock.ucs.mode", "found 9",
     "a mode in [low, high]"),
    ({"dist": "pert", "low": 1, "mode": 0.5, "high": 5}, "rock.ucs.mode", "found 0.5",
     "a mode in [low, high]"),
    ({"dist": "lognormal", "median": 10, "cov": 0.2, "sd": 1}, "rock.ucs",
     "parameters median, cov, sd", "exactly one pair"),
    ({"dist": "lognormal", "median": 10}, "rock.ucs.cov", "nothing", "median, cov"),
    ({"dist": "lognormal", "median": 10, "sd": 2}, "rock.ucs", "parameters median, sd",
     "median and cov, or mean and sd"),
    ({"dist": "lognormal", "mean": -3, "sd": 1}, "rock.ucs.mean", "found -3", "mean > 0"),
    ({"dist": "fixed", "value": -5}, "rock.ucs", "-5", "a value > 0"),
    (-5, "rock.ucs", "-5", "a value > 0"),
    ({"dist": "fixed", "value": 0}, "rock.ucs", "found 0", "a value > 0"),  # exclusive bound
    ({"dist": "normal", "mean": 10, "sd": 6}, "rock.ucs", "normal(mean 10 MPa, sd 6 MPa)",
     "truncnormal"),
    ({"dist": "uniform", "low": -1, "high": 5}, "rock.ucs", "below the physical range", "> 0"),
    ({"dist": "truncnormal", "mean": 10, "sd": 6, "low": -1}, "rock.ucs", "low -1 MPa", "> 0"),
    ({"dist": "truncnormal", "mean": 10, "sd": 1, "low": 30, "high": 40}, "rock.ucs.low",
     "found 30", "holding at least 1e-06"),
    ({"dist": "normal", "mean": 10, "sd": 1, "source": 3}, "rock.ucs.source", "3", "a text"),
]


@pytest.mark.parametrize("raw,key,found,expected", REFUSALS)
def test_parse_refusals(raw: object, key: str, found: str, expected: str) -> None:
    with pytest.raises(ScenarioError) as err:
        parse_input("rock.ucs", raw, scale=1.0, bounds=POS, unit="MPa")
    text = str(err.value)
    assert key + ":" in text or key + "." in text, text
    assert found in text, text
    assert expected in text, text


def test_parse_gathers_problems_of_one_table() -> None:
    raw = {"dist": "triangular", "low": "a", "mode": math.nan, "hihg": 3}
    with pytest.raises(ScenarioError) as err:
        parse_input("rock.ucs", raw, scale=1.0, bounds=POS)
    keys = {p.key for p in err.value.problems}
    assert {"rock.ucs.low", "rock.ucs.mode", "rock.ucs.hihg", "rock.ucs.high"} <= keys
    assert "did you mean 'high'" in str(err.value)


def test_bounds_tiny_tail_accepted() -> None:
    # normal(10, 2) puts Phi(-5) = 2.9e-7 below 0 (scipy.stats.norm) < 1e-6: accepted;
    # normal(10, 2.2) puts Phi(-4.545) = 2.7e-6 below 0: refused.
    assert stats.norm.cdf(-5) < 1e-6 < stats.norm.cdf(-10 / 2.2)
    parse_input("rock.ucs", {"dist": "normal", "mean": 10, "sd": 2}, scale=1.0, bounds=POS)
    with pytest.raises(ScenarioError):
        parse_input("rock.ucs", {"dist": "normal", "mean": 10, "sd": 2.2}, scale=1.0, bounds=POS)


def test_bounds_helpers() -> None:
    b = Bounds(0.0, 0.5, upper_inclusive=False)
    assert b.text == "in [0, 0.5)"
    np.testing.assert_array_equal(b.contains([0.0, 0.49, 0.5]), [True, True, False])
    assert Bounds().text == "any real number"
    with pytest.raises(ValueError):
        Bounds(1.0, 0.0)


# ---------------------------------------------------------------------------------------------
# Gaussian copula
# ---------------------------------------------------------------------------------------------


def _three() -> tuple[list[str], list[Marginal]]:
    names = ["ucs", "friction_angle", "poisson", "biot"]
    margs = [_m("lognormal", median=40.0, cov=0.3),
             _m("triangular", low=0.5, mode=0.6, high=0.7),
             _m("uniform", low=0.2, high=0.3),
             Marginal.constant(1.0)]
    return names, margs


def test_pearson_kruskal_conversion() -> None:
    # Pearson (1907) / Kruskal (1958), from memory: rho_S = (6/pi) asin(rho/2) for a bivariate
    # normal. Independent check: rho_S = 12 P(X' < X, Y' < Y) - 3 = 12 Phi2(0, 0; rho/2) - 3
    # (derived), with Phi2 from scipy.stats.multivariate_normal (reference library).
    for rho in (-0.9, -0.4, 0.0, 0.3, 0.75, 0.99):
        cdf = stats.multivariate_normal([0, 0], [[2.0, rho], [rho, 2.0]]).cdf([0.0, 0.0])
        assert float(normal_to_rank_corr(rho)) == pytest.approx(12 * cdf - 3, abs=2e-5)
        assert float(rank_to_normal_corr(normal_to_rank_corr(rho))) == pytest.approx(rho, abs=1e-14)
    assert float(rank_to_normal_corr(1.0)) == 1.0


def test_joint_structure() -> None:
    names, margs = _three()
    joint = build_joint(names, margs, [["ucs", "friction_angle", 0.5]])
    assert joint.names == ("ucs", "friction_angle", "poisson") and joint.d == 3
    assert joint.fixed == (("biot", 1.0),)
    assert joint.rank_corr[0, 1] == 0.5 and joint.rank_corr[1, 2] == 0.0
    assert joint.normal_corr[0, 1] == pytest.approx(2 * math.sin(math.pi * 0.5 / 6), rel=1e-15)
    np.testing.assert_allclose(joint.chol @ joint.chol.T, joint.normal_corr, atol=1e-15)
    np.testing.assert_array_equal(np.diag(joint.normal_corr), 1.0)


def test_sampled_rank_correlation_matches_request() -> None:
    # Fisher z of Spearman's rho has standard error sqrt(1.06/(n-3)) under bivariate normality
    # (Fieller, Hartley & Pearson 1957 — from memory); Spearman's rho is invariant under the
    # monotone marginal maps, so it applies to the sampled inputs. Tolerance: 4 standard errors.
    names, margs = _three()
    pairs = [["ucs", "friction_angle", 0.5], ["poisson", "ucs", -0.3]]
    joint = build_joint(names, margs, pairs)
    n = 2**16  # 4 SE = 0.016 in z: also catches using rho_S as the normal correlation
    x, xi = to_inputs(joint, UnitSampler("random", joint.d, np.random.default_rng(7)).draw(n))
    se = math.sqrt(1.06 / (n - 3))
    r = stats.spearmanr(x).statistic
    for (i, j), want in {(0, 1): 0.5, (0, 2): -0.3, (1, 2): 0.0}.items():
        assert abs(math.atanh(r[i, j]) - math.atanh(want)) < 4 * se, (i, j, r[i, j])
    # independent normals behind the sample, and z = xi L^T reproduces the copula
    z = correlated_normals(joint, xi)
    np.testing.assert_allclose(stats.norm.cdf(z[:, 0]), margs[0].cdf(x[:, 0]), rtol=1e-9)
    cols = input_columns(joint, x)
    assert set(cols) == set(names) and np.all(cols["biot"] == 1.0)


PAIR_REFUSALS = [
    ([["ucs", "friction_angel", 0.5]], "unknown input 'friction_angel'",
     "did you mean 'friction_angle'"),
    ([["ucs", "ucs", 0.5]], "paired with itself", "two different inputs"),
    ([["ucs", "poisson", 0.2], ["poisson", "ucs", 0.1]], "repeats pair 1", "at most once"),
    ([["ucs", "poisson", 1.0]], "correlation 1.0", "in (-1, 1)"),
    ([["ucs", "poisson", -1.2]], "correlation -1.2", "in (-1, 1)"),
    ([["ucs", "poisson", "high"]], "correlation 'high'", "a number"),
    ([["ucs", "biot", 0.3]], "'biot' is fixed", "uncertain inputs"),
    ([["ucs", 0.3]], "pair 1", "[name_a, name_b, rank_correlation]"),
]


@pytest.mark.parametrize("pairs,found,expected", PAIR_REFUSALS)
def test_pair_refusals(pairs: list[list[object]], found: str, expected: str) -> None:
    names, margs = _three()
    with pytest.raises(ScenarioError) as err:
        build_joint(names, margs, pairs)
    text = str(err.value)
    assert "correlation.pairs" in text and found in text and expected in text, text


def test_non_positive_definite_refused() -> None:
    # Derived: rank correlations 0.9, 0.9, -0.9 cannot hold together; the normal-space matrix
    # [[1, r, r], [r, 1, -r], [r, -r, 1]] with r = 2 sin(0.15 pi) has smallest eigenvalue 1 - 2r.
    names, margs = _three()
    pairs = [["ucs", "friction_angle", 0.9], ["friction_angle", "poisson", -0.9],
             ["ucs", "poisson", 0.9]]
    with pytest.raises(ScenarioError) as err:
        build_joint(names, margs, pairs)
    r = 2 * math.sin(0.15 * math.pi)
    text = str(err.value)
    assert "correlation.pairs" in text and "not positive definite" in text
    assert f"smallest eigenvalue {1 - 2 * r:.3g}" in text, text


# ---------------------------------------------------------------------------------------------
# Sampling
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize("rule", ["sobol", "lhs", "random"])
def test_same_seed_bit_identical(rule: str) -> None:
    names, margs = _three()
    joint = build_joint(names, margs, [["ucs", "friction_angle", 0.5]])
    runs = []
    for _ in range(2):
        u = UnitSampler(rule, joint.d, np.random.default_rng(2024)).draw(512)
        runs.append(to_inputs(joint, u))
    np.testing.assert_array_equal(runs[0][0], runs[1][0])
    np.testing.assert_array_equal(runs[0][1], runs[1][1])
    other = UnitSampler(rule, joint.d, np.random.default_rng(2025)).draw(512)
    same = UnitSampler(rule, joint.d, np.random.default_rng(2024)).draw(512)
    assert not np.array_equal(other, same)


@pytest.mark.parametrize("rule", ["sobol", "random"])
def test_chunked_equals_single_draw(rule: str) -> None:
    one = UnitSampler(rule, 5, np.random.default_rng(3)).draw(3072)
    s = UnitSampler(rule, 5, np.random.default_rng(3))
    chunks = np.vstack([s.draw(1024) for _ in range(3)])
    np.testing.assert_array_equal(chunks, one)
    assert s.n_drawn == 3072


def test_lhs_strata_are_per_call() -> None:
    # Each draw is its own Latin hypercube: one point per stratum [k/n, (k+1)/n) per column
    # (McKay, Beckman & Conover 1979).
    s = UnitSampler("lhs", 3, np.random.default_rng(5))
    for n in (64, 100):
        u = s.draw(n)
        for j in range(3):
            np.testing.assert_array_equal(np.sort(np.floor(u[:, j] * n)), np.arange(n))


def test_lhs_of_the_whole_run_is_independent_of_the_chunk_size() -> None:
    # With the total given, LHS is one Latin hypercube of the whole run (one point per stratum
    # [k/n, (k+1)/n) of every column: McKay, Beckman & Conover 1979), and chunked draws equal
    # one draw bit for bit: the chunk sizes of the issue, 1,000 and 12,288, for 3,591 points.
    n = 3591
    one = UnitSampler("lhs", 5, np.random.default_rng(3), total=n).draw(n)
    for chunk in (1000, 12288, 97, 4096):
        s = UnitSampler("lhs", 5, np.random.default_rng(3), total=n)
        parts = []
        while s.n_drawn < n:
            parts.append(s.draw(min(chunk, n - s.n_drawn)))
        np.testing.assert_array_equal(np.vstack(parts), one)
    for j in range(5):
        np.testing.assert_array_equal(np.sort(np.floor(one[:, j] * n)), np.arange(n))
    with pytest.raises(ValueError, match="3591 points"):
        s.draw(1)


def test_lhs_points_are_uniform_over_seeds() -> None:
    # Each point of a Latin hypercube is uniform on the cube (McKay et al. 1979): over 400
    # seeds the first, a middle and the last point of each column pass a Kolmogorov-Smirnov
    # test against U(0, 1) (scipy.stats.kstest) at the 0.1% level, and two columns of the same
    # point are uncorrelated (|r| below 4 / sqrt(400)).
    rows = np.array([UnitSampler("lhs", 3, np.random.default_rng(seed), total=1000).draw(1000)
                     [[0, 499, 999]] for seed in range(400)])
    for i in range(3):
        for j in range(3):
            assert stats.kstest(rows[:, i, j], "uniform").pvalue > 1e-3
    assert abs(np.corrcoef(rows[:, 0, 0], rows[:, 0, 1])[0, 1]) < 4 / math.sqrt(400)


def test_sobol_non_power_of_two_is_silent_and_flagged() -> None:
    s = UnitSampler("sobol", 2, np.random.default_rng(0))
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        s.draw(100)
    assert not s.balanced
    s.draw(28)
    assert s.balanced  # 128 points


def test_open_cube_and_clamping() -> None:
    names, margs = _three()
    joint = build_joint(names, margs)
    u = np.array([[0.0, 0.5, 1.0], [U_MIN, 0.5, U_MAX]])
    x, xi = to_inputs(joint, u)
    assert np.isfinite(x).all() and np.isfinite(xi).all()
    assert xi[0, 0] == pytest.approx(-38.4674, abs=1e-3)  # Phi^-1(5e-324), scipy.special.ndtri
    for rule in ("sobol", "lhs", "random"):
        d = UnitSampler(rule, 3, np.random.default_rng(1)).draw(256)
        assert d.shape == (256, 3) and (d > 0).all() and (d < 1).all()


def test_zero_dimension_and_bad_rule() -> None:
    joint = build_joint(["a"], [Marginal.constant(1.0)])
    u = UnitSampler("sobol", 0, np.random.default_rng(0)).draw(4)
    x, xi = to_inputs(joint, u)
    assert x.shape == (4, 0) and input_columns(joint, x)["a"].shape == (4,)
    with pytest.raises(ScenarioError, match="did you mean 'sobol'"):
        UnitSampler("sobel", 2, np.random.default_rng(0))
    with pytest.raises(ValueError):
        to_inputs(joint, np.zeros((3, 2)))


def test_scrambled_sobol_beats_monte_carlo() -> None:
    # Smooth integrand prod_j (pi/2) sin(pi u_j) over [0,1]^4 has integral 1 (derived).
    # MC root-mean-square error is sqrt(((pi^2/8)^4 - 1)/n) = 0.036 at n = 1024 (derived);
    # scrambled Sobol' has error o(n^-1/2) on smooth integrands (Owen 1997 — from memory).
    # Fixed seed set 0..19; checks RMSE_sobol < RMSE_MC / 4.
    def f(u: np.ndarray) -> np.ndarray:
        return np.prod(np.pi / 2 * np.sin(np.pi * u), axis=1)

    n = 1024
    err: dict[str, list[float]] = {"sobol": [], "random": []}
    for seed in range(20):
        for rule in err:
            u = UnitSampler(rule, 4, np.random.default_rng(seed)).draw(n)
            err[rule].append(f(u).mean() - 1)
    rmse = {k: math.sqrt(np.mean(np.square(v))) for k, v in err.items()}
    mc_theory = math.sqrt(((math.pi**2 / 8) ** 4 - 1) / n)
    assert 0.5 * mc_theory < rmse["random"] < 1.6 * mc_theory  # 20 replicates: chi-square spread
    assert rmse["sobol"] < rmse["random"] / 4, rmse


def test_normals_to_inputs_marginals() -> None:
    # Independent inputs: x_j = F_j^-1(Phi(xi_j)) (derived); compare with scipy.stats ppf.
    names, margs = _three()
    joint = build_joint(names, margs)
    xi = np.random.default_rng(9).standard_normal((50, 3))
    x = normals_to_inputs(joint, xi)
    ref = stats.lognorm(math.sqrt(math.log1p(0.09)), scale=40.0).ppf(stats.norm.cdf(xi[:, 0]))
    np.testing.assert_allclose(x[:, 0], ref, rtol=1e-10)


def test_named_random_streams_are_reproducible_and_distinct():
    # derived: SeedSequence entropy [seed, key, *index] differs per stream and index, so the
    # generators' first draws differ; the same arguments give the same draws
    from risk.uncertainty import STREAMS, rng_stream

    assert set(STREAMS) == {"reliability", "sensitivity", "logs", "calibration", "mcmc", "voi"}
    assert len(set(STREAMS.values())) == len(STREAMS)  # every key distinct
    a = rng_stream(7, "reliability", 0).random(4)
    assert np.array_equal(a, rng_stream(7, "reliability", 0).random(4))
    others = [rng_stream(7, "reliability", 1).random(4), rng_stream(7, "sensitivity").random(4),
              rng_stream(7, "calibration", 0).random(4), rng_stream(7, "voi", 0).random(4),
              np.random.default_rng(7).random(4), rng_stream(8, "reliability", 0).random(4)]
    assert all(not np.array_equal(a, b) for b in others)
    with pytest.raises(KeyError):
        rng_stream(7, "no-such-stream")
