"""Tests of risk.mechanics._collapse_kernel: the compiled tunnel collapse (Mohr-Coulomb) and the
compiled tunnel-root onset against their numpy reference paths.

Independent references used here:
- scipy.special.wrightomega (reference library) for the real Wright omega function;
- the numpy reference paths (``path="numpy"`` of cavity.collapse_wall_pressure,
  ``cavity_path="numpy"`` of limit_states.evaluate), themselves checked in test_cavity.py and
  test_root.py against ODE integrations, published closed forms and brute-force scans;
- a brute-force scan of the wall pressure (cavity.mohr_coulomb_cavity on a dense grid) for the
  compiled collapse pressure on wide random inputs;
- the first-yield closed form of docs/derivations.md sec. 3 (Kirsch with inflow; Fjaer et al.
  2008, sec. 4.4) for a zero critical strain.
"""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path

import numpy as np
import pytest
from scipy.special import wrightomega

from risk.limit_states import _root_onset, evaluate
from risk.mechanics import cavity
from risk.mechanics import stresses as st
from risk.mechanics._collapse_kernel import wright_omega
from risk.scenario import load_scenario
from risk.uncertainty import UnitSampler, build_joint, input_columns, to_inputs

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"


def _wide_mc(k: int, seed: int) -> dict[str, object]:
    """Wide random Mohr-Coulomb collapse inputs (weak to strong rock, short to long drainage,
    dilatant or not, zero critical strain included)."""
    rng = np.random.default_rng(seed)
    phi = rng.uniform(0.2, 0.8, k)
    crit = rng.uniform(0.0, 0.06, k)
    crit[: k // 20] = 0.0
    return dict(criterion="mohr-coulomb", critical_plastic_strain=crit,
                sigma0=rng.uniform(10, 120, k), p_r=rng.uniform(2, 50, k),
                r_w=rng.uniform(0.004, 0.1, k), r_e=rng.uniform(0.12, 3.0, k),
                dilation_angle=phi * rng.uniform(0, 1, k),
                young_modulus=rng.lognormal(np.log(8e3), 0.8, k),
                poisson_ratio=rng.uniform(0.0, 0.45, k), biot=rng.uniform(0.3, 1.0, k),
                ucs=rng.lognormal(np.log(15.0), 0.9, k), friction_angle=phi)


def test_wright_omega_matches_scipy():
    # reference library: scipy.special.wrightomega (Lawrence, Corless & Jeffrey 2012)
    xs = np.concatenate([np.linspace(-60.0, 5.0, 1301), np.geomspace(5.0, 1e25, 300),
                         [-2.0, -2.0 - 1e-15, 1.0, 1.0 - 1e-16, -50.0, 0.0]])
    got = np.array([wright_omega(float(x)) for x in xs])
    np.testing.assert_allclose(got, wrightomega(xs), rtol=4e-16, atol=0.0)
    assert math.isnan(wright_omega(math.nan))


def test_compiled_collapse_equals_the_numpy_path_on_wide_inputs():
    # reference: the numpy path (the same margin, scipy's Chandrupatla root to 1e-9 MPa)
    kw = _wide_mc(60_000, 11)
    ref = cavity.collapse_wall_pressure(**kw, path="numpy")  # type: ignore[arg-type]
    got = cavity.collapse_wall_pressure(**kw)  # type: ignore[arg-type]
    np.testing.assert_array_equal(np.isneginf(got), np.isneginf(ref))
    assert np.all(np.isfinite(got) | np.isneginf(got))
    fin = np.isfinite(ref)
    p_r = np.asarray(kw["p_r"])
    live = fin & (ref > 0.0) & (ref < p_r)
    assert live.sum() > 5_000                       # the root search is well exercised
    assert np.max(np.abs(got[fin] - ref[fin])) <= 1e-9
    # the outcome classes are the same: collapsed with no drawdown, at p_seep, never
    np.testing.assert_array_equal(got == p_r, ref == p_r)


def test_compiled_collapse_against_a_brute_force_scan():
    # independent: the highest wall pressure on a 5e-4 MPa grid where the wall plastic strain
    # of the cavity response reaches the critical one or the wall is seepage-unstable
    kw = _wide_mc(25, 3)
    got = cavity.collapse_wall_pressure(**kw)  # type: ignore[arg-type]
    checked = 0
    for i in range(25):
        one = {k: (v[i] if isinstance(v, np.ndarray) else v) for k, v in kw.items()}
        p_r = float(one["p_r"])  # type: ignore[arg-type]
        grid = np.linspace(0.0, p_r, int(p_r / 5e-4) + 1)
        resp = cavity.mohr_coulomb_cavity(
            sigma0=one["sigma0"], p_r=p_r, p_w=grid, r_w=one["r_w"], r_e=one["r_e"],
            ucs=one["ucs"], friction_angle=one["friction_angle"],
            dilation_angle=one["dilation_angle"], young_modulus=one["young_modulus"],
            poisson_ratio=one["poisson_ratio"], biot=one["biot"])
        failed = resp.seepage_unstable | (resp.yielded & (
            resp.wall_plastic_strain >= one["critical_plastic_strain"]))
        if not failed.any():
            assert got[i] == -np.inf
            continue
        expected = grid[failed].max()
        assert got[i] >= expected - 1e-9            # the scan lands on or below the root
        assert got[i] <= expected + grid[1] + 1e-9
        checked += 1
    assert checked >= 8


def test_compiled_zero_critical_strain_is_first_yield():
    # docs/derivations.md sec. 3: p_y = p_r - (UCS - 2 (sigma0 - p_r))/(2 - A)
    kw = _wide_mc(2_000, 5)
    kw["critical_plastic_strain"] = 0.0
    got = cavity.collapse_wall_pressure(**kw)  # type: ignore[arg-type]
    s0, p_r, ucs = (np.asarray(kw[k]) for k in ("sigma0", "p_r", "ucs"))
    nu, b = np.asarray(kw["poisson_ratio"]), np.asarray(kw["biot"])
    big_a = b * (1 - 2 * nu) / (1 - nu)
    p_y = p_r - (ucs - 2 * (s0 - p_r)) / (2 - big_a)
    p_seep = p_r - ucs * np.log(np.asarray(kw["r_e"]) / np.asarray(kw["r_w"]))
    ok = (p_y > 0) & (p_y < p_r) & (p_seep < p_y - 1e-6)
    assert ok.sum() > 100
    np.testing.assert_allclose(got[ok], p_y[ok], atol=2e-9, rtol=0)


def test_bad_path_is_refused():
    kw = _wide_mc(3, 1)
    with pytest.raises(ValueError, match="path"):
        cavity.collapse_wall_pressure(**kw, path="fortran")  # type: ignore[arg-type]


def _cols(sc, n: int, seed: int) -> dict[str, np.ndarray]:
    names = list(sc.inputs)
    joint = build_joint(names, [sc.inputs[k] for k in names], [list(p) for p in sc.correlation])
    x, _ = to_inputs(joint, UnitSampler("sobol", joint.d, np.random.default_rng(seed)).draw(n))
    return input_columns(joint, x)


@pytest.mark.parametrize("example", ["ravenmoor_g3_depleting_gas",
                                     "ravenmoor_r12_deviated_perforated"])
def test_evaluate_compiled_equals_the_numpy_path(example):
    # reference: evaluate(cavity_path="numpy") on the examples' own sampled inputs, with the
    # root governing so that its angles are compared too
    sc = load_scenario(EXAMPLES / f"{example}.toml")
    sc = dataclasses.replace(sc, tunnel_stress="root-and-far-field")
    cols = _cols(sc, 1024, 2)
    ref = evaluate(cols, sc, parts=True, cavity_path="numpy")
    got = evaluate(cols, sc, parts=True)
    assert set(got) == set(ref)
    for key in ref:
        a, b = ref[key].by_direction, got[key].by_direction
        np.testing.assert_array_equal(np.isfinite(a), np.isfinite(b))
        np.testing.assert_allclose(b, a, atol=1e-9, rtol=0)
        np.testing.assert_allclose(got[key].theta, ref[key].theta, atol=1e-9, rtol=0)
        for part, arr in ref[key].parts.items():
            np.testing.assert_allclose(got[key].parts[part], arr, atol=1e-9, rtol=0)
    with pytest.raises(ValueError, match="cavity_path"):
        evaluate(cols, sc, cavity_path="c")


def test_compiled_root_onset_equals_the_numpy_path_on_wide_inputs():
    # reference: the numpy path of limit_states._root_onset (root.wellbore_field,
    # root.tunnel_in_plane, root.onset_wall_pressure), on random stress states, strengths and
    # well orientations, 7 shots, 4 stages
    sc = load_scenario(EXAMPLES / "ravenmoor_r12_deviated_perforated.toml")
    rng = np.random.default_rng(7)
    n, k = 3_000, 4
    for inc, azi in ((0.0, 0.0), (0.5, 1.1), (1.3, 4.0), (math.pi / 2, 2.5)):
        well = dataclasses.replace(sc.well, inclination=inc, azimuth=azi,
                                   shot_angles=tuple(np.radians([0, 45, 90, 135, 200, 270, 315])))
        scn = dataclasses.replace(sc, well=well)
        sh = rng.uniform(10, 60, n)
        tensor = st.far_field_tensor(shmax=(sh + rng.uniform(0, 30, n))[:, None],
                                     shmin=sh[:, None], sv=rng.uniform(20, 90, n)[:, None],
                                     shmax_azimuth=rng.uniform(0, np.pi, n)[:, None])
        tensor = np.broadcast_to(tensor * rng.uniform(0.6, 1.2, (1, k))[..., None, None],
                                 (n, k, 3, 3))
        nu = rng.uniform(0.1, 0.45, n)
        u = rng.uniform(5, 150, (n, 1, 1))
        p_r = rng.uniform(3, 40, (1, 1, k))
        big_a = rng.uniform(0.0, 0.7, (n, 1, 1))
        ref_dc, ref_th = _root_onset(tensor, nu, u, p_r, big_a, scn, "numpy")
        got_dc, got_th = _root_onset(tensor, nu, u, p_r, big_a, scn)
        assert got_dc.shape == ref_dc.shape == (n, 7, k)
        np.testing.assert_array_equal(np.isfinite(got_dc), np.isfinite(ref_dc))
        live = np.isfinite(ref_dc) & (ref_dc > 0)
        assert live.mean() > 0.05
        np.testing.assert_allclose(got_dc, ref_dc, atol=1e-9, rtol=0)
        np.testing.assert_array_equal(np.isnan(got_th), np.isnan(ref_th))
        d = np.abs(np.nan_to_num(got_th) - np.nan_to_num(ref_th))
        assert np.all(np.minimum(d, np.pi - d) <= 1e-9)   # angles modulo pi
