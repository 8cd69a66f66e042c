"""Issue 15 wired into the limit states: tunnel root, full tip, compaction cap, water
weakening, the Hoek-Brown scale warning, and their scenario keys.

Sources beside each check: Goodier (1933) for the tip (closed form in risk.mechanics.tip,
checked against a Papkovich-Neuber solution in tests/mechanics/test_tip.py); Willson et al.
(2002) SPE 78168 for the effective-strength rule; Roscoe & Burland (1968) for the cap; the
reductions to the former models are the "special case" checks the issue asks for.
"""

from __future__ import annotations

import dataclasses
import tomllib

import numpy as np
import pytest

from risk.errors import ScenarioError
from risk.limit_states import evaluate, evaluate_compaction, physical_inputs
from risk.mechanics import compaction, sanding, tip
from risk.mechanics import stresses as st
from risk.scenario import Scenario, parse_scenario
from risk.uncertainty import UnitSampler, build_joint, input_columns, to_inputs
from tests.conftest import FIELD_DOC

TWC = "biot = 0.9\ntwc = 14000\nyoung_modulus = 1.0e6\ncritical_plastic_strain = 0.02\n"
PROD = "accepted_risk = 0.10\ndrainage_radius = 1.0\n"
DOC = (FIELD_DOC.replace("biot = 0.9\n", TWC)
       .replace("accepted_risk = 0.10\n", PROD)
       .replace("ucs = 9000", 'ucs = { dist = "lognormal", median = 9000, cov = 0.25 }')
       .replace("shmax_gradient = 0.88",
                'shmax_gradient = { dist = "uniform", low = 0.8, high = 0.95 }'))


def _load(text: str) -> Scenario:
    return parse_scenario(tomllib.loads(text))


def _cols(sc: Scenario, n: int = 128) -> dict[str, np.ndarray]:
    names = list(sc.inputs)
    joint = build_joint(names, [sc.inputs[k] for k in names], [list(p) for p in sc.correlation])
    u = UnitSampler("sobol", joint.d, np.random.default_rng(1)).draw(n)
    x, _ = to_inputs(joint, u)
    return input_columns(joint, x)


def _problems(text: str) -> list[tuple[str, str]]:
    with pytest.raises(ScenarioError) as ei:
        _load(text)
    return [(p.key, str(p)) for p in ei.value.problems]


def test_root_reported_but_far_field_governs_by_default():
    sc = _load(DOC)
    assert sc.tunnel_stress == "far-field"
    cols = _cols(sc)
    plain = evaluate(cols, sc)["effective_strength_onset"]
    with_parts = evaluate(cols, sc, parts=True)["effective_strength_onset"]
    assert not plain.parts
    np.testing.assert_array_equal(plain.by_direction, with_parts.by_direction)
    np.testing.assert_array_equal(with_parts.parts["far_field"], plain.by_direction)
    worse = evaluate(cols, dataclasses.replace(sc, tunnel_stress="root-and-far-field"))
    np.testing.assert_array_equal(
        worse["effective_strength_onset"].by_direction,
        np.minimum(with_parts.parts["far_field"], with_parts.parts["root"]))
    # the wellbore concentration only adds stress at the root here: never later onset
    assert np.all(with_parts.parts["root"] <= with_parts.parts["far_field"] + 1e-9)


def test_tip_uses_the_full_spherical_concentration():
    # the tip mode takes the equivalent stress p + (2/3) 15 [(1 - nu) s1 - nu s3]/(7 - 5 nu)
    # of Goodier's (1933) solution; with the far-field eigenvalues computed here by hand
    sc = dataclasses.replace(_load(DOC), effective_strength_cavity="tip")
    cols = _cols(sc, 64)
    out = evaluate(cols, sc)["effective_strength_onset"].by_direction
    phys = physical_inputs(cols, sc)
    k = 1
    p_r = sc.reservoir_pressure[k]
    path = np.asarray(cols["depletion_path"])
    big = phys["shmax"] - path * (phys["pp"] - p_r)
    small = phys["shmin"] - path * (phys["pp"] - p_r)
    nu = np.asarray(cols["poisson_ratio"])
    eig = np.sort(np.stack([big, small, phys["sv"]]), axis=0)
    p = eig.mean(axis=0)
    eq = p + 2 / 3 * 15 * ((1 - nu) * (eig[2] - p) - nu * (eig[0] - p)) / (7 - 5 * nu)
    a = st.poroelastic_coefficient(biot=cols["biot"], poisson_ratio=nu)
    u = np.asarray(cols["twc"]) * 3.1
    pw = sanding.tip_onset_wall_pressure(sigma=eq, strength=u, reservoir_pressure=p_r,
                                         poro_coefficient=a)
    want = sanding.classify_wall_pressure(pw, p_r)
    for d in range(out.shape[1]):  # a sphere has no direction
        np.testing.assert_allclose(out[:, d, k], want, rtol=1e-10, atol=1e-10)
    # never less severe than the former mean-stress tip
    old = sanding.classify_wall_pressure(sanding.tip_onset_wall_pressure(
        sigma=p, strength=u, reservoir_pressure=p_r, poro_coefficient=a), p_r)
    assert np.all(out[:, 0, k] <= old + 1e-9)
    assert float(tip.equivalent_mean_stress(np.eye(3) * 5.0, poisson_ratio=0.3)) == (
        pytest.approx(5.0))


def test_zero_water_saturation_reproduces_todays_results():
    base = _load(DOC)
    wet = _load(DOC.replace("accepted_risk = 0.10\n",
                            "accepted_risk = 0.10\nwater_saturation = [0, 0, 0]\n")
                .replace("biot = 0.9\n", "biot = 0.9\nwet_strength_ratio = 0.6\n"))
    cols_b, cols_w = _cols(base), _cols(wet)
    a, b = evaluate(cols_b, base), evaluate(cols_w, wet)
    for key in a:
        np.testing.assert_array_equal(a[key].by_direction, b[key].by_direction)


def test_full_saturation_equals_weaker_rock():
    # S = 1 with ratio r is the rock with UCS, TWC and critical plastic strain times r
    r = 0.7
    wet = _load(DOC.replace("accepted_risk = 0.10\n",
                            "accepted_risk = 0.10\nwater_saturation = [0, 1, 1]\n")
                .replace("biot = 0.9\n", f"biot = 0.9\nwet_strength_ratio = {r}\n"))
    cols = _cols(wet, 128)
    out = evaluate(cols, wet)
    weaker = dict(cols)
    for name in ("ucs", "twc", "critical_plastic_strain"):
        weaker[name] = np.asarray(cols[name]) * r
    dry = dataclasses.replace(wet, water_saturation=())
    ref = evaluate(weaker, dry)
    plain = evaluate(cols, dry)
    for key in out:
        np.testing.assert_allclose(out[key].by_direction[..., 1:], ref[key].by_direction[..., 1:],
                                   rtol=1e-9, atol=1e-9)
        np.testing.assert_array_equal(out[key].by_direction[..., 0],
                                      plain[key].by_direction[..., 0])


def test_wet_strength_ratio_enters_the_sensitivity_ranking():
    from risk.assessment import assess

    sc = _load(DOC.replace("accepted_risk = 0.10\n",
                           "accepted_risk = 0.10\nwater_saturation = [0, 0, 1]\n")
               .replace("biot = 0.9\n", 'biot = 0.9\nwet_strength_ratio = { dist = "uniform", '
                        "low = 0.4, high = 0.9 }\n"))
    a = assess(sc, samples=512, seed=3)
    last = a.sensitivity[("effective_strength_onset", 2)]
    names = list(last.names)
    j = names.index("wet_strength_ratio")
    assert last.first[j] > 0.05  # water weakening matters once water has arrived
    for k in (0, 1):  # and not before (a stage with no spread has no indices at all)
        before = a.sensitivity.get(("effective_strength_onset", k))
        if before is not None:
            assert abs(before.first[j]) < 0.02


def test_mean_stress_option_reproduces_the_former_pore_collapse():
    doc = DOC.replace("biot = 0.9\n", "biot = 0.9\npore_collapse_pressure = 5000\n")
    sc = _load(doc.replace('criterion = "mohr-coulomb"',
                           'criterion = "mohr-coulomb"\ncompaction_cap = "mean-stress"'))
    cols = _cols(sc)
    res = evaluate_compaction(cols, sc)
    phys = physical_inputs(cols, sc)
    ref = compaction.far_field_collapse_pressure(
        sv=phys["sv"], shmax0=phys["shmax"], shmin0=phys["shmin"], p0=phys["pp"],
        path=cols["depletion_path"], collapse_pressure=cols["pore_collapse_pressure"])
    np.testing.assert_array_equal(res.far_field, np.where(ref < 0, -np.inf, ref))
    assert res.far_field_mean_stress is None
    capped = evaluate_compaction(cols, dataclasses.replace(sc, compaction_cap="modified-cam-clay"))
    # shear only brings compaction on earlier (Wong, David & Zhu 1997)
    assert np.all(capped.far_field >= np.minimum(res.far_field, phys["pp"]) - 1e-9)
    assert capped.wall_at_max_drawdown is not None
    assert capped.wall_at_max_drawdown.shape == (cols["ucs"].size, 3)


def test_scenario_keys_refused_with_one_clear_message():
    bad = DOC.replace('criterion = "mohr-coulomb"',
                      'criterion = "mohr-coulomb"\ntunnel_stress = "root"\n'
                      'compaction_cap = "cam-clay"')
    probs = dict(_problems(bad))
    assert "analysis.tunnel_stress" in probs and "root-and-far-field" in probs[
        "analysis.tunnel_stress"]
    assert "analysis.compaction_cap" in probs and "modified-cam-clay" in probs[
        "analysis.compaction_cap"]
    wrong = DOC.replace("accepted_risk = 0.10\n",
                        "accepted_risk = 0.10\nwater_saturation = [0, 0.5]\n")
    probs = dict(_problems(wrong))
    assert "production.water_saturation" in probs and "3 stages" in probs[
        "production.water_saturation"]
    assert "rock.wet_strength_ratio" in probs  # needed once water is given
    over = DOC.replace("accepted_risk = 0.10\n",
                       "accepted_risk = 0.10\nwater_saturation = [0, 0.5, 1.5]\n")
    assert "production.water_saturation" in dict(_problems(over))


def test_hoek_brown_gsi_below_100_warns_at_perforation_scale():
    hb = DOC.replace('criterion = "mohr-coulomb"', 'criterion = "hoek-brown"').replace(
        "biot = 0.9\n", "biot = 0.9\nhb_mi = 17\ngsi = 75\n")
    sc = _load(hb)
    assert any(w.startswith("rock.gsi:") and "perforation" in w for w in sc.warnings)
    intact = _load(hb.replace("gsi = 75", "gsi = 100"))
    assert not any(w.startswith("rock.gsi:") for w in intact.warnings)


def test_results_json_blocks_and_their_absence():
    # the new blocks appear exactly when their mechanics apply, each with its assumption
    from risk.assessment import assess
    from risk.report.results import summarize

    doc = DOC.replace("biot = 0.9\n", "biot = 0.9\npore_collapse_pressure = 5000\n")
    res = summarize(assess(_load(doc), samples=128, seed=2))
    root = res["tunnel_root"]
    assert root["governing"] == "far-field" and "Kirsch" in root["assumption"]
    assert len(root["stages"]) == 3
    for s in root["stages"]:
        assert set(s) >= {"far_field", "root", "root_worse_fraction"}
    assert res["compaction_cap"]["surface"] == "modified-cam-clay"
    pc = res["mechanisms"]["pore_collapse"]
    assert pc["surface"] == "modified-cam-clay"
    assert "mean_stress_critical_reservoir_pressure" in pc
    assert all("wall_probability_at_max_drawdown" in s for s in pc["stages"])
    assert "water_weakening" not in res
    hole = doc.replace('completion = "perforated"\nshot_angles = [0, 60, 120, 180, 240, 300]\n'
                       "tunnel_diameter = 0.5\n",
                       'completion = "openhole"\nhole_diameter = 8.5\n')
    res_hole = summarize(assess(_load(hole), samples=128, seed=2))
    assert "tunnel_root" not in res_hole
