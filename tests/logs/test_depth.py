"""Risk over depth: constant logs equal the single-interval run; depth correlation of the
transform error; the perforation plan against a brute force."""

from __future__ import annotations

import itertools
import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from risk.assessment import assess
from risk.conventions import PSI_TO_MPA
from risk.errors import ScenarioError
from risk.logs.depth import ar1_normals, assess_depth
from risk.logs.interval import (
    failing,
    independent_probability,
    interval_probability,
    plan_perforations,
)
from risk.logs.scenario import load_log_scenario
from risk.logs.transforms import mcnally_1987
from risk.scenario import load_scenario

BASE = """
title = "Ravenmoor test well (fictional)"
units = "field"
[well]
depth = 7850
inclination = 0
azimuth = 0
completion = "perforated"
shot_angles = [0, 90]
tunnel_diameter = 0.5
[stress]
sv = 7700
shmax = 6900
shmin = { dist = "normal", mean = 5700, sd = 150 }
shmax_azimuth = 40
pp = 3450
[rock]
friction_angle = { dist = "normal", mean = 32, sd = 2 }
tensile_strength = 100
poisson_ratio = 0.25
biot = 0.9
twc_ratio = { dist = "uniform", low = 1.1, high = 1.7 }
[production]
reservoir_pressure = [3450, 2800]
max_drawdown = 2000
accepted_risk = 0.1
[analysis]
samples = 256
seed = 5
[correlation]
pairs = [["ucs", "friction_angle", 0.4]]
"""
LAS_HEAD = """~VERSION INFORMATION
 VERS.   2.0 : CWLS LOG ASCII STANDARD - VERSION 2.0
 WRAP.   NO  : ONE LINE PER DEPTH STEP
~WELL INFORMATION
 NULL.    -999.25 : NULL VALUE
 WELL.    RAVENMOOR T-1 : WELL
~CURVE INFORMATION
 DEPT.FT     : DEPTH
 DT  .US/FT  : SONIC
~A
"""


def _las(path: Path, dts: list[float]) -> None:
    rows = "".join(f"{7840.0 + 0.5 * i} {dt}\n" for i, dt in enumerate(dts))
    path.write_text(LAS_HEAD + rows)


def _logs_table(length: str) -> str:
    return f"""
[logs]
file = "t.las"
top = 7840
base = 7844
ucs_transform = "mcnally_1987"
ucs_cov = 0.3
correlation_length = {length}
planned_drawdown = 400
"""


def test_constant_logs_equal_single_interval(tmp_path: Path) -> None:
    # the same inputs at every depth, the transform error fully correlated: every depth must
    # reproduce the single-interval scenario run with UCS = lognormal(median = McNally(dt))
    # on the same seed (independent check: the existing single-interval path)
    dt = 100.0
    _las(tmp_path / "t.las", [dt] * 9)
    (tmp_path / "logs.toml").write_text(BASE + _logs_table('"inf"'))
    median_psi = float(mcnally_1987(dt=dt)) / PSI_TO_MPA
    single = BASE.replace("[rock]\n", f"[rock]\nucs = {{ dist = \"lognormal\", median = "
                                      f"{median_psi!r}, cov = 0.3 }}\n")
    (tmp_path / "single.toml").write_text(single)
    res = assess_depth(load_log_scenario(tmp_path / "logs.toml"))
    ref = assess(load_scenario(tmp_path / "single.toml"))
    assert res.depth.size == 9
    for key, mech in ref.mechanisms.items():
        for d in range(res.depth.size):
            np.testing.assert_allclose(res.dc[key][d], mech.well, rtol=2e-6, atol=1e-6)


def test_ar1_correlation() -> None:
    # exponential correlation exp(-dz/L) (Ornstein-Uhlenbeck on its grid): lag-one sample
    # correlation within 5 standard errors (1/sqrt(n)) of exp(-0.5/2)
    rng = np.random.default_rng(1)
    n = 20_000
    e = ar1_normals(first=rng.standard_normal(n), depth=np.arange(0.0, 5.0, 0.5), length=2.0,
                    rng=rng)
    r = np.corrcoef(e[3], e[4])[0, 1]
    assert abs(r - math.exp(-0.25)) < 5.0 / math.sqrt(n)
    assert abs(np.std(e[-1]) - 1.0) < 5.0 / math.sqrt(2 * n)
    same = ar1_normals(first=e[0], depth=np.arange(3.0), length=math.inf, rng=rng)
    assert np.array_equal(same[2], e[0])


@settings(max_examples=25, deadline=None)
@given(st.lists(st.floats(20.0, 60.0), min_size=3, max_size=12), st.floats(0.1, 0.6),
       st.floats(0.2, 20.0), st.integers(0, 2**31))
def test_interval_probability_property(strength: list[float], cov: float, length: float,
                                       seed: int) -> None:
    # UCS(z) = T(z) x lognormal error; a depth fails when UCS < 30 MPa. Fully correlated
    # error: the interval fails exactly when its weakest depth does (nested events).
    # Independent: 1 - prod(1 - p_i) (probability of a union of independent events), within
    # 5 binomial standard errors. In between: between the two.
    rng = np.random.default_rng(seed)
    t = np.asarray(strength)
    z = np.arange(t.size) * 0.5
    n = 4000
    s = math.sqrt(math.log1p(cov * cov))
    first = rng.standard_normal(n)

    def fail(ell: float) -> np.ndarray:
        e = ar1_normals(first=first, depth=z, length=ell, rng=rng)
        return failing(t[:, None] * np.exp(s * e), 30.0)

    full = fail(math.inf)
    assert interval_probability(full) == pytest.approx(float(np.max(full.mean(axis=1))))
    ind = fail(0.0)
    p_ind = interval_probability(ind)
    target = independent_probability(ind)
    assert abs(p_ind - target) <= 5.0 * math.sqrt(max(target * (1 - target), 1e-4) / n) + 0.01
    mid = interval_probability(fail(length))
    worst = float(np.max(full.mean(axis=1)))
    tol = 5.0 * math.sqrt(0.25 / n)
    assert worst - tol <= mid <= p_ind + tol


def _brute(zf: np.ndarray, lengths: np.ndarray, cand: np.ndarray, risk: float,
           min_run: float) -> float:
    nz, n = zf.shape
    best = 0.0
    for bits in itertools.product([False, True], repeat=nz):
        pick = np.array(bits)
        if np.any(pick & ~cand):
            continue
        if pick.any() and np.mean(np.any(zf[pick], axis=0)) > risk + 1e-12:
            continue
        run, ok = 0.0, True
        for j in range(nz + 1):
            if j < nz and pick[j]:
                run += lengths[j]
            else:
                if 0.0 < run < min_run - 1e-9:
                    ok = False
                run = 0.0
        if ok:
            best = max(best, float(np.sum(lengths[pick])))
    return best


@settings(max_examples=40, deadline=None)
@given(st.integers(1, 10), st.integers(0, 2**31), st.floats(0.02, 0.3),
       st.sampled_from([0.0, 1.0, 2.0, 3.5]))
def test_plan_equals_brute_force(nz: int, seed: int, risk: float, min_run: float) -> None:
    # independent check: enumeration of all 2^nz plans
    rng = np.random.default_rng(seed)
    n = 200
    zf = rng.random((nz, n)) < rng.uniform(0.0, 0.15, size=(nz, 1))
    lengths = rng.choice([0.5, 1.0, 1.5], size=nz)
    cand = rng.random(nz) < 0.85
    chosen, count, finished, _ = plan_perforations(
        zone_fail=zf, zone_length=lengths, candidate=cand, accepted_risk=risk,
        min_interval=min_run)
    assert finished
    assert float(np.sum(lengths[chosen])) == pytest.approx(_brute(zf, lengths, cand, risk,
                                                                  min_run))
    if chosen.any():
        assert np.mean(np.any(zf[chosen], axis=0)) <= risk + 1e-12
        assert count == int(np.sum(np.any(zf[chosen], axis=0)))
    assert not np.any(chosen & ~cand)


def test_ratio_stresses_core_calibration_and_resampling(tmp_path: Path) -> None:
    # S_h = k (Sv - Pp) + Pp (effective-stress ratio; Zoback 2007, sec. 1.2, common practice);
    # core calibration: one factor, the geometric mean of core/transform ratios (here both 2x);
    # resampling to 0.25 ft by linear interpolation of the logs.
    _las(tmp_path / "t.las", [90.0, 92.0, 94.0, 96.0, 98.0, 100.0, 102.0, 104.0, 106.0])
    t_mpa = float(mcnally_1987(dt=92.0))
    t2_mpa = float(mcnally_1987(dt=102.0))
    doc = (BASE.replace("shmax = 6900\n", "").replace(
        'shmin = { dist = "normal", mean = 5700, sd = 150 }\n', "")
        + _logs_table("2") + 'horizontal = "ratio"\nk_min = 0.6\nk_max = 0.8\nstep = 0.25\n'
        + f"core = [[7840.5, {2 * t_mpa / PSI_TO_MPA!r}], [7843.0, {2 * t2_mpa / PSI_TO_MPA!r}]]\n")
    (tmp_path / "logs.toml").write_text(doc)
    ls = load_log_scenario(tmp_path / "logs.toml")
    assert ls.logs.depth.size == 17
    np.testing.assert_allclose(ls.logs.curves["dt"][1] * 0.3048, 91.0)  # halfway 90 -> 92
    res = assess_depth(ls, samples=64)
    np.testing.assert_allclose(res.ucs_transform[2], 2 * t_mpa, rtol=1e-9)
    sv, pp = 7700 * PSI_TO_MPA, 3450 * PSI_TO_MPA
    np.testing.assert_allclose(res.profile["shmin"], 0.6 * (sv - pp) + pp, rtol=1e-12)
    np.testing.assert_allclose(res.profile["shmax"], 0.8 * (sv - pp) + pp, rtol=1e-12)
    assert any("ratio(s) 2.00 to 2.00" in w and "one factor" in w for w in res.warnings)


def test_depth_percentiles_match_probability_percentiles() -> None:
    # the per-depth quantiles use the definition of risk.probability.percentiles (inverted
    # empirical CDF, +inf kept); checked row by row against it
    from risk import probability
    from risk.logs.summary import depth_percentiles

    rng = np.random.default_rng(4)
    a = rng.gamma(2.0, 3.0, size=(7, 101))
    a[2, :30] = np.inf
    got = depth_percentiles(a, (0.1, 0.5, 0.9))
    for i in range(a.shape[0]):
        np.testing.assert_array_equal(got[i], probability.percentiles(a[i], [0.1, 0.5, 0.9]))


def test_range_warning_reaches_the_run(tmp_path: Path) -> None:
    # McNally (1987) is used here outside the 60-150 us/ft span written in its entry
    _las(tmp_path / "t.las", [100.0, 170.0, 100.0, 100.0, 100.0, 100.0, 100.0, 100.0, 100.0])
    (tmp_path / "logs.toml").write_text(BASE + _logs_table("2"))
    res = assess_depth(load_log_scenario(tmp_path / "logs.toml"), samples=16)
    assert any("outside its published range" in w and "7,840.5 ft" in w for w in res.warnings)


def test_friction_transform_over_depth(tmp_path: Path) -> None:
    # Weingarten & Perkins (1995): friction angle = 57.8 - 105 phi [deg] (from memory); the
    # rock.friction_angle of the scenario is then refused as given twice
    head = LAS_HEAD.replace(" DT  .US/FT  : SONIC\n", " DT  .US/FT  : SONIC\n NPHI.V/V : POR\n")
    rows = "".join(f"{7840.0 + 0.5 * i} 100 {0.15 + 0.01 * i}\n" for i in range(9))
    (tmp_path / "t.las").write_text(head + rows)
    doc = BASE.replace('friction_angle = { dist = "normal", mean = 32, sd = 2 }\n', "")
    doc = doc.replace('pairs = [["ucs", "friction_angle", 0.4]]', "pairs = []")
    (tmp_path / "logs.toml").write_text(doc + _logs_table("2")
                                        + 'friction_transform = "weingarten_perkins_1995"\n')
    res = assess_depth(load_log_scenario(tmp_path / "logs.toml"), samples=16)
    phi = 0.15 + 0.01 * np.arange(9)
    np.testing.assert_allclose(np.degrees(res.friction), 57.8 - 105.0 * phi, rtol=1e-12)
    (tmp_path / "twice.toml").write_text(BASE + _logs_table("2")
                                         + 'friction_transform = "weingarten_perkins_1995"\n')
    with pytest.raises(ScenarioError, match="rock.friction_angle"):
        load_log_scenario(tmp_path / "twice.toml")


SI = """
title = "Ravenmoor SI test well (fictional)"
units = "si"
[well]
depth = 2393
inclination = 0
azimuth = 0
completion = "openhole"
hole_diameter = 216
[stress]
sv_gradient = 22.6
shmax_gradient = 19.0
shmin_gradient = 16.3
shmax_azimuth = 40
pp_gradient = 10.0
[rock]
friction_angle = 32
tensile_strength = 1
poisson_ratio = 0.25
biot = 0.9
twc_ratio = 1.4
[production]
reservoir_pressure = [23.9]
max_drawdown = 14
accepted_risk = 0.1
[analysis]
samples = 64
seed = 2
[logs]
file = "si.las"
top = 2390
base = 2392
ucs_transform = "chang_2006_porosity"
ucs_cov = 0.3
correlation_length = 1
planned_drawdown = 3
zone_thickness = 0.5
"""


def test_si_units_through_the_summary(tmp_path: Path) -> None:
    # SI in, SI out: metres, kg/m3, v/v; Chang et al. (2006) porosity transform 277 exp(-10 phi)
    head = LAS_HEAD.replace("DEPT.FT", "DEPT.M").replace(" DT  .US/FT  : SONIC\n",
                                                           " PHIT.V/V : POR\n")
    rows = "".join(f"{2390.0 + 0.25 * i} 0.25\n" for i in range(9))
    (tmp_path / "si.las").write_text(head + rows)
    (tmp_path / "si.toml").write_text(SI)
    from risk.logs.summary import summarize_depth

    s = summarize_depth(assess_depth(load_log_scenario(tmp_path / "si.toml")))
    assert s["units"] == {"pressure": "MPa", "length": "m"}
    assert s["table"]["depth [m]"][0] == 2390.0
    assert s["table"]["ucs transform [MPa]"][0] == pytest.approx(277.0 * math.exp(-2.5),
                                                                 abs=0.01)
    assert s["plan"]["probability"] <= 0.1
