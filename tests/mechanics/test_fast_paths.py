"""The fast paths of the single-interval run's mechanics against their numpy reference paths:
the compiled wall compaction bit for bit on blocks of the examples' samples (the same
operations in the same order), the closed-form tunnel rotation to rounding."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pytest

from risk.limit_states import evaluate_compaction
from risk.mechanics import root
from risk.scenario import load_scenario
from risk.uncertainty import UnitSampler, build_joint, input_columns, to_inputs

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"


def _block(name: str, n: int = 384) -> tuple[dict[str, np.ndarray], object]:
    sc = load_scenario(EXAMPLES / name)
    names = list(sc.inputs)
    joint = build_joint(names, [sc.inputs[k] for k in names], [list(p) for p in sc.correlation])
    x, _ = to_inputs(joint, UnitSampler(sc.sampling, joint.d, np.random.default_rng(7)).draw(n))
    return input_columns(joint, x), sc


@pytest.mark.parametrize("name", ["ravenmoor_g3_depleting_gas.toml",
                                  "ravenmoor_r7_openhole.toml"])
@pytest.mark.parametrize(("cap", "p_star_factor"), [("modified-cam-clay", 3.0),
                                                   ("mean-stress", 1.0)])
def test_compiled_wall_cap_equals_numpy_reference_path(name: str, cap: str,
                                                       p_star_factor: float) -> None:
    # the fused wall kernel against the numpy reference path (generalized Kirsch wall
    # stresses, Fjaer et al. 2008, eqs. 4.81-4.86, and the modified Cam clay excess, Roscoe &
    # Burland 1968, on 48 wall angles per frame): bit for bit, including the root found by
    # bracketing on it and the wall state at the largest drawdown of each stage
    cols, sc = _block(name)
    sc = dataclasses.replace(sc, compaction_cap=cap)
    # the examples' rock compacts at every wall on the cap already at p0: a stronger rock
    # (P* x 3 on the cap) puts the walls' critical pressures inside (0, p0), where they are
    # solved for
    cols = dict(cols)
    cols["pore_collapse_pressure"] = cols["pore_collapse_pressure"] * p_star_factor
    ref = evaluate_compaction(cols, sc, wall_path="numpy")
    got = evaluate_compaction(cols, sc)
    assert ref.wall_at_max_drawdown is not None and got.wall_at_max_drawdown is not None
    assert np.array_equal(got.wall, ref.wall)
    assert np.array_equal(got.far_field, ref.far_field)
    assert np.array_equal(got.wall_at_max_drawdown, ref.wall_at_max_drawdown)
    # the check can fail: the block has compacting and intact walls at the largest drawdown,
    # and critical pressures found by the root solve (strictly inside (0, p0))
    assert np.any(ref.wall_at_max_drawdown >= 0.0) and np.any(ref.wall_at_max_drawdown < 0.0)
    assert ref.initial is not None
    assert np.any((ref.wall > 0.0) & (ref.wall < ref.initial))


def test_wall_path_refuses_unknown_names() -> None:
    cols, sc = _block("ravenmoor_r7_openhole.toml", 16)
    with pytest.raises(ValueError, match="wall_path"):
        evaluate_compaction(cols, sc, wall_path="fortran")


def test_tunnel_in_plane_equals_stacked_products_reference() -> None:
    # S' = G C G^T (Fjaer et al. 2008, sec. 4.4) written out for the in-plane components
    # against root.tunnel_local (the reference path: stacked 3 x 3 matrix products) on random
    # wellbore fields and random proper rotations (QR of Gaussian matrices, Mezzadri 2007,
    # Notices AMS 54, 592; from memory), to 1e-12 of the field's size
    rng = np.random.default_rng(11)
    field = root.WellboreField(*(rng.normal(30.0, 12.0, (50, 7, 3)) for _ in range(6)))
    q, r = np.linalg.qr(rng.standard_normal((7, 3, 3)))
    q = q * np.sign(np.diagonal(r, axis1=-2, axis2=-1))[:, None, :]
    rot = q[None, :, None]  # (1, 7, 1, 3, 3), as the tunnel-root check broadcasts them
    ref = root.tunnel_local(field, rot)
    got = root.tunnel_in_plane(field, rot)
    scale = float(np.max(np.abs(np.stack(field))))
    for name in ("sxx", "syy", "sxy"):
        np.testing.assert_allclose(getattr(got, name), getattr(ref, name), rtol=0,
                                   atol=1e-12 * scale)
    assert np.all(np.isnan(got.szz)) and np.all(np.isnan(got.sxz)) and np.all(np.isnan(got.syz))
    # not vacuous: the rotations mix the components (sxx is not the radial stress)
    assert float(np.std(got.sxx - field.rr)) > 1.0


def test_collapse_margin_equals_full_state_reference() -> None:
    # the tunnel-collapse search's margin (wall-pressure invariants kept, only the terms the
    # margin reads) against the reference composition margin(full cavity state) of
    # risk.mechanics.cavity, bit for bit, on elastic, yielded, beyond-drainage-radius and
    # seepage-unstable walls (the closed-form Mohr-Coulomb cavity with seepage of the module
    # docstring; Risnes, Bratli & Horsrud 1982 for the seepage force)
    from risk.mechanics import cavity
    from risk.mechanics.criteria import passive_coefficient

    rng = np.random.default_rng(5)
    n = 20_000
    p_r = rng.uniform(10.0, 30.0, n)
    p_w = p_r * rng.uniform(0.0, 1.0, n)
    sigma0 = p_r + rng.uniform(5.0, 40.0, n)
    r_w = rng.uniform(0.005, 0.01, n)
    r_e = np.where(rng.uniform(size=n) < 0.3, r_w * rng.uniform(1.5, 4.0, n),
                   rng.uniform(10.0, 200.0, n))
    ucs = rng.uniform(5.0, 40.0, n)
    q = passive_coefficient(np.radians(rng.uniform(25.0, 40.0, n)))
    psi = np.radians(rng.uniform(0.0, 15.0, n))
    m = (1.0 + np.sin(psi)) / (1.0 - np.sin(psi))
    e_mod, nu = rng.uniform(2e3, 2e4, n), rng.uniform(0.15, 0.35, n)
    biot, crit = rng.uniform(0.6, 1.0, n), rng.uniform(0.005, 0.03, n)
    full = cavity._mc_state(sigma0, p_r, p_w, r_w, r_e, ucs, q, m, e_mod, nu, biot)
    ref = cavity._margin(full, ucs, e_mod, nu, crit)
    args = (sigma0, p_r, r_w, r_e, ucs, q, m, e_mod, nu, biot, crit)
    inv = cavity._mc_invariants(sigma0, p_r, r_w, r_e, ucs, q, m, nu, biot)
    assert np.array_equal(cavity._margin_mc(p_w, *args, *inv), ref)
    assert np.array_equal(cavity._margin_mc(p_w, *args), ref)
    # every kind of wall is in the sample (the check is not vacuous)
    assert np.any(~full.yielded) and np.any(full.unstable) and np.any(full.beyond)
    assert np.any(full.yielded & ~full.unstable & ~full.beyond)
