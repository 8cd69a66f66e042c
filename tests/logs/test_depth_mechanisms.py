"""Risk over depth: pore collapse at every depth, local core calibration, and correlation
pairs of the depth-varying transform errors held at every depth."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from risk.assessment import assess
from risk.conventions import PSI_TO_MPA
from risk.logs.depth import assess_depth, core_factor, depth_scores
from risk.logs.scenario import load_log_scenario
from risk.logs.summary import summarize_depth
from risk.logs.transforms import mcnally_1987
from risk.scenario import load_scenario
from risk.uncertainty import Marginal, build_joint
from tests.logs.test_depth import BASE, _las, _logs_table

COLLAPSE = 'pore_collapse_pressure = { dist = "normal", mean = 4300, sd = 500 }\n'


def test_pore_collapse_constant_logs_equal_single_interval(tmp_path: Path) -> None:
    # constant logs, one transform error for the whole interval: every depth's pore-collapse
    # pressure equals the single-interval run's (independent check: the existing
    # single-interval path, risk.assessment.assess, on the same seed); the interval
    # probability of collapse then equals the single run's P at each stage
    dt = 100.0
    _las(tmp_path / "t.las", [dt] * 9)
    base = BASE.replace("[rock]\n", "[rock]\n" + COLLAPSE)
    (tmp_path / "logs.toml").write_text(base + _logs_table('"inf"'))
    median_psi = float(mcnally_1987(dt=dt)) / PSI_TO_MPA
    single = base.replace("[rock]\n", f"[rock]\nucs = {{ dist = \"lognormal\", median = "
                                      f"{median_psi!r}, cov = 0.3 }}\n")
    (tmp_path / "single.toml").write_text(single)
    res = assess_depth(load_log_scenario(tmp_path / "logs.toml"))
    ref = assess(load_scenario(tmp_path / "single.toml"))
    assert res.collapse_far is not None and res.collapse_wall is not None
    assert ref.compaction is not None
    for d in range(res.depth.size):
        np.testing.assert_allclose(res.collapse_far[d], ref.compaction.far_field, rtol=2e-6)
        np.testing.assert_allclose(res.collapse_wall[d], ref.compaction.wall, rtol=2e-6)
    s = summarize_depth(res)
    for k, p_r in enumerate(res.stages):
        p_single = float(np.mean(ref.compaction.far_field >= p_r))
        assert s["pore_collapse"]["probability_whole"][k] == pytest.approx(p_single, abs=1e-6)
        assert s["table"][f"P(pore collapse) stage {k + 1} [-]"][0] == pytest.approx(
            p_single, abs=1e-5)
    assert len(s["pore_collapse"]["probability_plan"]) == len(res.stages)


def test_pore_collapse_deeper_collapses_at_higher_datum_pressure(tmp_path: Path) -> None:
    # with gradients, a depth z below the datum has pore pressure pp_grad (z - z_datum) more
    # than the datum, and the far-field mean effective stress grows with depth: the datum
    # stage pressure of collapse must then rise with depth (monotone; a property of the
    # uniaxial-strain far field, Zoback 2007 sec. 9, common practice)
    _las(tmp_path / "t.las", [100.0] * 9)
    doc = (BASE.replace("[rock]\n", "[rock]\n" + COLLAPSE)
           .replace("sv = 7700\n", "sv_gradient = 1.0\n")
           .replace("shmax = 6900\n", "shmax_gradient = 0.9\n")
           .replace('shmin = { dist = "normal", mean = 5700, sd = 150 }\n',
                    "shmin_gradient = 0.75\n")
           .replace("pp = 3450\n", "pp_gradient = 0.44\n"))
    (tmp_path / "logs.toml").write_text(doc + _logs_table("2"))
    res = assess_depth(load_log_scenario(tmp_path / "logs.toml"), samples=128)
    assert res.collapse_far is not None
    far = np.where(np.isfinite(res.collapse_far), res.collapse_far, np.nan)
    med = np.nanmedian(far, axis=1)
    assert np.all(np.diff(med) > 0.0)


def test_core_factor_closed_forms() -> None:
    # an isolated core sets the transform to the core value at its depth and its log-ratio
    # decays as exp(-dz/D) (the kernel's definition); D = inf is one factor, the geometric
    # mean of the ratios (checked against scipy.stats.gmean, a reference library)
    z = np.linspace(0.0, 100.0, 201)
    c = core_factor(depth=z, core_depth=np.array([50.0]), ratio=np.array([2.0]),
                    influence=5.0)
    assert c[100] == pytest.approx(2.0, rel=1e-12)
    assert c[110] == pytest.approx(2.0 ** math.exp(-1.0), rel=1e-12)  # dz = 5 = D
    assert c[0] == pytest.approx(1.0, abs=1e-4)
    ratios = np.array([2.0, 0.5, 3.0])
    g = core_factor(depth=z, core_depth=np.array([10.0, 50.0, 90.0]), ratio=ratios,
                    influence=math.inf)
    np.testing.assert_allclose(g, stats.gmean(ratios), rtol=1e-12)


def test_local_core_calibration_in_a_run(tmp_path: Path) -> None:
    # a core at 7841 ft with an influence distance of 0.5 ft: the transform there equals the
    # core UCS; 3 ft away the factor is ratio^exp(-6) (within 0.3%), i.e. nearly the
    # uncalibrated McNally (1987) value (Chang et al. 2006, Table 1)
    _las(tmp_path / "t.las", [100.0] * 9)
    t_mpa = float(mcnally_1987(dt=100.0))
    doc = (BASE + _logs_table("2") + f"core = [[7841.0, {1.5 * t_mpa / PSI_TO_MPA!r}]]\n"
           "core_influence = 0.5\n")
    (tmp_path / "logs.toml").write_text(doc)
    res = assess_depth(load_log_scenario(tmp_path / "logs.toml"), samples=32)
    np.testing.assert_allclose(res.ucs_transform[2], 1.5 * t_mpa, rtol=1e-9)
    np.testing.assert_allclose(res.ucs_transform[8], t_mpa * 1.5 ** math.exp(-6.0), rtol=1e-9)
    s = summarize_depth(res)
    assert "local factors" in s["transform"]["core"]
    assert s["table"]["core calibration factor [-]"][2] == pytest.approx(1.5)


@pytest.mark.parametrize("length", [0.0, 1.0, math.inf])
def test_correlation_pairs_hold_at_every_depth(length: float) -> None:
    # the scenario's rank correlations involving the depth-varying errors (ucs, friction)
    # must hold at the last depth as at the first: Spearman's rho of the scores against the
    # copula's rank correlation (scipy.stats.spearmanr, a reference library), within 5
    # standard errors (~1/sqrt(n)); and each error's correlation between neighbouring depths
    # equals b C_KV + S r (conditional covariance of a Gaussian vector, Anderson 2003,
    # thm. 2.5.1, from memory), here with r = exp(-dz/L)
    names = ["ucs", "friction_angle", "twc_ratio"]
    marg = [Marginal("normal", (("mean", 0.0), ("sd", 1.0)))] * 3
    joint = build_joint(names, marg, [["ucs", "friction_angle", 0.5],
                                      ["ucs", "twc_ratio", 0.4]])
    n = 40_000
    rng = np.random.default_rng(3)
    z0 = rng.standard_normal((n, 3)) @ joint.chol.T
    depth = np.arange(0.0, 6.0, 0.5)
    sc = depth_scores(first=z0, corr=joint.normal_corr, vary=[0, 1], depth=depth,
                      length=length, rng=rng)
    tol = 5.0 / math.sqrt(n)
    last = sc[-1]
    assert stats.spearmanr(last[:, 0], last[:, 1])[0] == pytest.approx(0.5, abs=tol)
    assert stats.spearmanr(last[:, 0], z0[:, 2])[0] == pytest.approx(0.4, abs=tol)
    assert stats.spearmanr(last[:, 1], z0[:, 2])[0] == pytest.approx(0.0, abs=tol)
    np.testing.assert_allclose(np.std(last, axis=0), 1.0, atol=tol)
    c = joint.normal_corr
    r = 1.0 if math.isinf(length) else (0.0 if length == 0 else math.exp(-0.5 / length))
    b0 = c[0, 2] ** 2  # ucs explained by twc (unit variance)
    expect = b0 + (1.0 - b0) * r
    assert np.corrcoef(sc[4, :, 0], sc[5, :, 0])[0, 1] == pytest.approx(expect, abs=tol)
    np.testing.assert_array_equal(sc[0], z0[:, :2])


def _gradient_base() -> str:
    return (BASE.replace("sv = 7700\n", "sv_gradient = 1.0\n")
            .replace("shmax = 6900\n", "shmax_gradient = 0.9\n")
            .replace('shmin = { dist = "normal", mean = 5700, sd = 150 }\n',
                     "shmin_gradient = 0.75\n")
            .replace("pp = 3450\n", "pp_gradient = 0.44\n"))


def test_measured_depth_logs_use_tvd_from_the_survey(tmp_path: Path) -> None:
    # logs in MD along a straight hold at 30 deg from a station at MD 7000 ft, TVD 6500 ft:
    # TVD = 6500 + (MD - 7000) cos 30 deg (common practice); the pore pressure over depth is
    # then the gradient times TVD (Zoback 2007, sec. 1.2)
    from risk.errors import ScenarioError

    _las(tmp_path / "t.las", [100.0] * 9)
    table = (_logs_table("2") + 'depth_reference = "md"\n'
             "survey = [[7000, 30, 40], [8000, 30, 40]]\nsurvey_tvd = 6500\n")
    (tmp_path / "logs.toml").write_text(_gradient_base() + table)
    res = assess_depth(load_log_scenario(tmp_path / "logs.toml"), samples=16)
    md_ft = 7840.0 + 0.5 * np.arange(9)
    tvd_ft = 6500.0 + (md_ft - 7000.0) * math.cos(math.radians(30.0))
    assert res.tvd is not None
    np.testing.assert_allclose(res.tvd / 0.3048, tvd_ft, rtol=1e-12)
    np.testing.assert_allclose(res.profile["pp"], 0.44 * tvd_ft * PSI_TO_MPA, rtol=1e-9)
    s = summarize_depth(res)
    assert s["table"]["tvd [ft]"][0] == pytest.approx(tvd_ft[0], abs=1e-3)
    assert any("minimum curvature" in w for w in res.warnings)
    # a survey that does not reach the interval is one clear message naming the key
    (tmp_path / "bad.toml").write_text(_gradient_base() + table.replace("8000", "7842"))
    with pytest.raises(ScenarioError, match="logs.survey"):
        load_log_scenario(tmp_path / "bad.toml")


def test_eissa_kazi_check_points() -> None:
    # Eissa & Kazi (1988): E_static = 0.74 E_dynamic - 0.82 [GPa] (from memory)
    from risk.logs.transforms import eissa_kazi_1988

    np.testing.assert_allclose(eissa_kazi_1988(e_dynamic=[20.0, 10.0]), [13.98, 6.58],
                               rtol=1e-12)


def test_log_elastic_moduli_feed_the_poroelastic_stresses(tmp_path: Path) -> None:
    # Vp/Vs = sqrt(3) gives nu = 1/4 and E_dyn = 2.5 rho Vs^2 (isotropic elasticity, Mavko et
    # al. 2009, sec. 2.2); E_static by Eissa & Kazi (1988); then S_h = nu/(1-nu)(Sv - a Pp)
    # + a Pp + E/(1-nu^2)(eps_h + nu eps_H) (Blanton & Olson 1999, from memory)
    vs = 1500.0  # [m/s]
    dt_ft = 0.3048e6 / (vs * math.sqrt(3.0))
    dts_ft = 0.3048e6 / vs
    head = ("~VERSION INFORMATION\n VERS.   2.0 : CWLS LOG ASCII STANDARD - VERSION 2.0\n"
            " WRAP.   NO  : ONE LINE PER DEPTH STEP\n~WELL INFORMATION\n"
            " NULL.    -999.25 : NULL VALUE\n~CURVE INFORMATION\n DEPT.FT     : DEPTH\n"
            " DT  .US/FT  : SONIC\n DTS .US/FT  : SHEAR SONIC\n RHOB.G/CM3  : DENSITY\n~A\n")
    rows = "".join(f"{7840.0 + 0.5 * i} {dt_ft} {dts_ft} 2.2\n" for i in range(9))
    (tmp_path / "t.las").write_text(head + rows)
    doc = (BASE.replace("shmax = 6900\n", "").replace(
        'shmin = { dist = "normal", mean = 5700, sd = 150 }\n', "")
        + _logs_table("2") + 'horizontal = "poroelastic"\nelastic = "logs"\n'
        "strain_min = 0.0002\nstrain_max = 0.0006\n")
    (tmp_path / "logs.toml").write_text(doc)
    res = assess_depth(load_log_scenario(tmp_path / "logs.toml"), samples=16)
    nu = 0.25
    e_s = (0.74 * 2.5 * 2200.0 * vs**2 * 1e-9 - 0.82) * 1e3  # [MPa]
    sv, pp, a = 7700 * PSI_TO_MPA, 3450 * PSI_TO_MPA, 0.9
    base = nu / (1 - nu) * (sv - a * pp) + a * pp
    k = e_s / (1 - nu * nu)
    np.testing.assert_allclose(res.profile["shmin"], base + k * (2e-4 + nu * 6e-4), rtol=1e-9)
    np.testing.assert_allclose(res.profile["shmax"], base + k * (6e-4 + nu * 2e-4), rtol=1e-9)
    assert any("Eissa & Kazi" in w for w in res.warnings)
