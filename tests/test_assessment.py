"""The orchestrator end to end on small scenarios."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from risk import probability
from risk.assessment import assess
from risk.conventions import PSI_TO_MPA
from risk.mechanics import stresses as st
from risk.scenario import load_scenario

OPENHOLE_SI = """
title = "vertical open hole, only UCS uncertain"
units = "si"
[well]
depth = 2500
inclination = 0
azimuth = 0
completion = "openhole"
[stress]
sv = 45
shmax = 48
shmin = 40
shmax_azimuth = 20
pp = 25
depletion_path = 0.5
[rock]
ucs = { dist = "normal", mean = 70, sd = 6 }
friction_angle = 30
tensile_strength = 3
poisson_ratio = 0.25
biot = 0.8
[production]
reservoir_pressure = [25, 20]
max_drawdown = 20
accepted_risk = 0.1
[analysis]
samples = 4096
seed = 5
"""


def test_field_and_si_give_the_same_answer(write, field_doc):
    # The same physical scenario written in both unit systems (NIST SP 811 factors).
    field = load_scenario(write(field_doc, "f.toml"))
    psi_ft = 6.894757293168 / 0.3048  # kPa/m per psi/ft
    si_doc = (field_doc.replace('units = "field"', 'units = "si"')
              .replace("depth = 9200", f"depth = {9200 * 0.3048!r}")
              .replace("sv_gradient = 1.0", f"sv_gradient = {1.0 * psi_ft!r}")
              .replace("shmax_gradient = 0.88", f"shmax_gradient = {0.88 * psi_ft!r}")
              .replace("shmin_gradient = 0.74", f"shmin_gradient = {0.74 * psi_ft!r}")
              .replace("pp_gradient = 0.45", f"pp_gradient = {0.45 * psi_ft!r}")
              .replace("ucs = 9000", f"ucs = {9000 * PSI_TO_MPA!r}")
              .replace("tensile_strength = 800", f"tensile_strength = {800 * PSI_TO_MPA!r}")
              .replace("[4140, 3800, 3400]",
                       "[" + ", ".join(repr(v * PSI_TO_MPA) for v in (4140, 3800, 3400)) + "]")
              .replace("max_drawdown = 2500", f"max_drawdown = {2500 * PSI_TO_MPA!r}")
              .replace("tunnel_diameter = 0.5", "tunnel_diameter = 12.7"))
    si = load_scenario(write(si_doc, "s.toml"))
    a, b = assess(field), assess(si)
    assert a.deterministic and a.samples == 1
    np.testing.assert_allclose(a.mechanisms["yield_onset"].by_direction,
                               b.mechanisms["yield_onset"].by_direction, rtol=1e-9, atol=1e-9)


def test_same_seed_identical_other_seed_differs(write):
    sc = load_scenario(write(OPENHOLE_SI))
    a = assess(sc, samples=512)
    b = assess(sc, samples=512)
    c = assess(sc, samples=512, seed=6)
    assert np.array_equal(a.mechanisms["yield_onset"].well, b.mechanisms["yield_onset"].well)
    assert not np.array_equal(a.inputs["ucs"], c.inputs["ucs"])


def test_openhole_ucs_normal_gives_normal_critical_drawdown(write):
    # With only UCS ~ N(70, 6) the closed form (docs/derivations.md sec. 3, vertical well, MC)
    # makes D_c = p_r - (3 SH - Sh - UCS - A p_r)/(2 - A) normal with sd 6/(2 - A): the whole
    # failure curve is known. Tolerance: the 99.9% simultaneous band of the empirical CDF
    # (Dvoretzky-Kiefer-Wolfowitz inequality, Massart 1990): eps = sqrt(ln(2/0.001)/(2n)).
    sc = load_scenario(write(OPENHOLE_SI))
    a = assess(sc)
    A = float(st.poroelastic_coefficient(biot=0.8, poisson_ratio=0.25))
    for k, p_r in enumerate((25.0, 20.0)):
        sh_max = 48 - 0.5 * (25 - p_r)
        sh_min = 40 - 0.5 * (25 - p_r)
        mean = p_r - (3 * sh_max - sh_min - 70 - A * p_r) / (2 - A)
        sd = 6 / (2 - A)
        dc = a.mechanisms["yield_onset"].well[:, k]
        grid = np.linspace(0.0, p_r, 41)
        p, _, _ = probability.failure_curve(dc, grid)
        exact = stats.norm.cdf(grid, mean, sd)
        eps = np.sqrt(np.log(2 / 0.001) / (2 * dc.size))
        assert np.max(np.abs(p - exact)) < eps


def test_small_risk_form_exact_on_linear_case(write):
    # Only UCS ~ N(70, 6) and a vertical well: D_c is linear in UCS (docs/derivations.md
    # sec. 3), so the limit state is linear in the standard normal and FORM is exact
    # (Hasofer & Lind 1974):
    # P(D_c <= D*) = Phi((D* - mean)/sd). Importance sampling must agree within 4 of its cov.
    doc = OPENHOLE_SI.replace("accepted_risk = 0.1", "accepted_risk = 0.005")
    sc = load_scenario(write(doc))
    a = assess(sc, samples=8192)
    A = float(st.poroelastic_coefficient(biot=0.8, poisson_ratio=0.25))
    p_r = 25.0
    mean = p_r - (3 * 48 - 40 - 70 - A * p_r) / (2 - A)
    sd = 6 / (2 - A)
    rel = a.reliability[("yield_onset", 0)]
    d_star = float(rel["drawdown"])
    exact = stats.norm.cdf(d_star, mean, sd)
    assert float(rel["form_p"]) == pytest.approx(exact, rel=1e-4)
    # the control variate makes importance sampling exact on a linear limit state (its cov is
    # then ~1e-17): allow floating-point rounding beside 4 standard errors
    assert abs(float(rel["is_p"]) - exact) < 4 * float(rel["is_cov"]) * exact + 1e-9 * exact
    assert rel["diagnostic"] is None or "differ" not in str(rel["diagnostic"])
    assert set(rel["importance"]) == {"ucs"}
    # 8192 x 0.005 = 41 samples below the quantile (< 100): the limit is solved by importance
    # sampling and equals the exact 0.5% quantile mean + sd Phi^-1(0.005) (closed form)
    assert rel["limit_method"] == "importance sampling"
    q = mean + sd * stats.norm.ppf(0.005)
    assert float(rel["limit"]) == pytest.approx(q, rel=1e-5)
    from risk.result import summarize
    row = summarize(a).mechanisms["yield_onset"].stages[0]
    assert row.drawdown_limit == pytest.approx(q, rel=1e-5)
    assert row.limit_method == "importance sampling"


def test_sensitivity_linear_case_matches_analytic(write):
    # Vertical open hole, Mohr-Coulomb, interior critical drawdowns: D_c = p_r - (3 SH - Sh -
    # UCS - A p_r)/(2 - A) is linear in UCS and SH (docs/derivations.md sec. 3), so with independent
    # normal inputs S_UCS = s_u^2 / (s_u^2 + 9 s_H^2) exactly (linear model; Saltelli et al.
    # 2008, sec. 1.2.5). Tolerance: 0.02, several bootstrap widths at 1024 runs.
    doc = (OPENHOLE_SI.replace("shmax = 48", 'shmax = { dist = "normal", mean = 48, sd = 1.0 }')
           .replace("ucs = { dist = \"normal\", mean = 70, sd = 6 }",
                    "ucs = { dist = \"normal\", mean = 70, sd = 2 }"))
    sc = load_scenario(write(doc))
    a = assess(sc, samples=2048)
    r = a.sensitivity[("yield_onset", 0)]
    s_u = 2.0**2 / (2.0**2 + 9 * 1.0**2)
    got = dict(zip(r.names, r.first, strict=True))
    assert got["ucs"] == pytest.approx(s_u, abs=0.02)
    assert got["shmax"] == pytest.approx(1 - s_u, abs=0.02)
    # tornado of a linear model: swing = 3/(2 - A) * (P90 - P10) of SH
    A = float(st.poroelastic_coefficient(biot=0.8, poisson_ratio=0.25))
    lo, hi, y_lo, y_hi = a.tornado["yield_onset"]["shmax"]
    assert y_lo - y_hi == pytest.approx(3 / (2 - A) * (hi - lo), rel=1e-9)


COLLAPSE = OPENHOLE_SI.replace("biot = 0.8", """biot = 0.8
young_modulus = 8000
critical_plastic_strain = CRIT
dilation_angle = 5""").replace('[production]', '[production]\ndrainage_radius = 1.0').replace(
    'completion = "openhole"', 'completion = "openhole"\nhole_diameter = 216')


def test_tunnel_collapse_never_before_yield_and_meets_it_at_zero_strain(write):
    # Derived (docs/derivations.md, sec. 5): collapse never comes before yield onset; a vanishing
    # critical strain makes collapse coincide with yield onset (vertical hole, hoop stress the
    # major principal stress, so the Mohr-Coulomb onset is the hoop-only one; derived).
    a = assess(load_scenario(write(COLLAPSE.replace("CRIT", "0.02"))), samples=512)
    tc = a.mechanisms["tunnel_collapse"].by_direction
    yo = a.mechanisms["yield_onset"].by_direction
    assert np.all(tc >= yo - 1e-9)
    assert np.any(tc > yo + 0.1)  # the plastic reserve is real
    b = assess(load_scenario(write(COLLAPSE.replace("CRIT", "1e-12"))), samples=512)
    np.testing.assert_allclose(b.mechanisms["tunnel_collapse"].by_direction,
                               b.mechanisms["yield_onset"].by_direction, atol=1e-6)
    prof = a.collapse_profile[0]
    assert prof["plastic_radius_ratio"].shape == (256, 21)
    # the plastic zone and the strain only grow with drawdown (monotonic loading)
    assert np.all(np.diff(prof["plastic_radius_ratio"], axis=1) >= -1e-12)
    assert np.all(np.diff(prof["wall_plastic_strain"], axis=1) >= -1e-15)


def test_tunnel_collapse_needs_radius_below_drainage(write):
    from risk.errors import ScenarioError

    doc = COLLAPSE.replace("CRIT", "0.02").replace("drainage_radius = 1.0",
                                                   "drainage_radius = 0.05")
    with pytest.raises(ScenarioError, match="production.drainage_radius"):
        load_scenario(write(doc))
    doc = COLLAPSE.replace("CRIT", "0.02").replace("hole_diameter = 216\n", "")
    with pytest.raises(ScenarioError, match="well.hole_diameter"):
        load_scenario(write(doc))


def test_worst_wall_angle_is_a_circular_mean(write):
    # Kirsch: the hoop stress peaks 90 degrees from SHmax (Zoback 2007, sec. 6.1). With SHmax
    # at 90 +- 8 degrees the worst angle is near 0 = 180 degrees; a plain median of angles
    # wrapped to [0, 180) would land near 90 (the least critical direction).
    from risk.report.results import summarize

    doc = OPENHOLE_SI.replace("shmax_azimuth = 20",
                              'shmax_azimuth = { dist = "normal", mean = 90, sd = 8 }')
    s = summarize(assess(load_scenario(write(doc)), samples=512))
    angle = s["mechanisms"]["yield_onset"]["stages"][0]["worst_wall_angle"]
    assert min(angle, 180.0 - angle) < 3.0


def test_identical_shots_give_no_preference(write, field_doc):
    # a vertical well with equal horizontal stresses: every shot direction is the same
    # (derived from the symmetry), so no best or worst direction may be named
    from risk.report.results import summarize

    doc = (field_doc.replace("inclination = 35", "inclination = 0")
           .replace("shmax_gradient = 0.88", "shmax_gradient = 0.74"))
    s = summarize(assess(load_scenario(write(doc))))
    st0 = s["mechanisms"]["yield_onset"]["stages"][0]
    assert st0["best_shot_angle"] is None and st0["worst_shot_angle"] is None
    assert "no preference" in st0["shot_note"]


@pytest.mark.slow
def test_correlated_inputs_never_get_cholesky_variable_indices():
    # With correlated inputs the Monte-Carlo pick-freeze fallback would index the hidden
    # independent variables; the run must use the surrogate or Shapley effects on the model
    # (never the given-data indices, which measure association).
    from pathlib import Path

    ex = Path(__file__).resolve().parents[1] / "examples" / "ravenmoor_r7_openhole.toml"
    a = assess(load_scenario(ex), samples=2048)
    assert a.sensitivity
    for r in a.sensitivity.values():
        assert r.method in ("pce", "shapley-mc")
        assert r.correlated and np.all(np.isfinite(r.shapley))
    # R-7 effective-strength onset does not use the friction angle (derived: the Willson et
    # al. 2002 onset depends on TWC and the stresses only); it is rank-correlated with UCS.
    # Redrawing it alone given the others changes nothing, so its independent total is
    # exactly 0 and its Shapley effect (the share it gets through UCS) ranks it below UCS.
    r = a.sensitivity[("effective_strength_onset", 0)]
    j = r.names.index("friction_angle")
    assert r.total[j] == 0.0
    assert r.ranking.index("friction_angle") > r.ranking.index("ucs")


def test_pore_collapse_sensitivity_output_is_clipped_to_p0():
    from risk.assessment import CompactionResult, _outputs

    sc_stub = type("S", (), {"reservoir_pressure": ()})()
    comp = CompactionResult(np.array([-np.inf, 10.0, 40.0]), np.zeros(3),
                            np.array([30.0, 30.0, 30.0]))
    keys, y = _outputs(sc_stub, {}, comp)  # type: ignore[arg-type]
    assert keys == [("pore_collapse", 0)]
    np.testing.assert_array_equal(y[:, 0], [0.0, 10.0, 30.0])


def test_separate_shmax_depletion_path(write):
    # Vertical well, Mohr-Coulomb, hoop major: SH and Sh follow their own paths, so at a
    # depleted stage the closed form (docs/derivations.md sec. 3) uses SH - gH dp and Sh - gh dp.
    doc = OPENHOLE_SI.replace("depletion_path = 0.5",
                              "depletion_path = 0.5\ndepletion_path_shmax = 0.8")
    a = assess(load_scenario(write(doc)), samples=64)
    A = float(st.poroelastic_coefficient(biot=0.8, poisson_ratio=0.25))
    ucs = a.inputs["ucs"]
    p_r = 20.0
    sh_max, sh_min = 48 - 0.8 * 5.0, 40 - 0.5 * 5.0
    expected = p_r - (3 * sh_max - sh_min - ucs - A * p_r) / (2 - A)
    got = a.mechanisms["yield_onset"].well[:, 1]
    inside = (expected > 0) & (expected < p_r)
    np.testing.assert_allclose(got[inside], expected[inside], atol=1e-9)
    assert inside.any()


def test_lhs_run_is_independent_of_the_chunk_size(write, monkeypatch):
    # The reproducibility promise: the same scenario, samples and seed give the same numbers
    # whatever the internal chunk size (the issue found 1,702 of 3,591 values changing between
    # chunks of 1,000 and 12,288 under LHS). Also a Latin hypercube of the whole run: one UCS
    # per stratum of its normal distribution (McKay, Beckman & Conover 1979).
    import risk.assessment as asm

    sc = load_scenario(write(OPENHOLE_SI.replace("seed = 5", 'seed = 5\nsampling = "lhs"')))
    runs = []
    for chunk in (1000, 12288):
        monkeypatch.setattr(asm, "CHUNK", chunk)
        runs.append(assess(sc, samples=3591).mechanisms["yield_onset"].well)
    np.testing.assert_array_equal(runs[0], runs[1])
    a = assess(sc, samples=3591)
    strata = np.floor(stats.norm.cdf(np.asarray(a.inputs["ucs"]), 70, 6) * 3591)
    np.testing.assert_array_equal(np.sort(strata), np.arange(3591))
