"""Tunnel root in the wellbore's generalized Kirsch field (risk.mechanics.root).

Sources beside each check: Kirsch (1898) and the generalized field of Hiramatsu & Oka (1962)
and Fairhurst (1968) as given in Fjaer et al. (2008) sec. 4.4 and Jaeger, Cook & Zimmerman
(2007) sec. 8.11; equilibrium and boundary conditions of linear elasticity (any elasticity
text, e.g. Timoshenko & Goodier 1970, ch. 1) checked by finite differences; the
effective-strength rule of Willson et al. (2002) SPE 78168.
"""

from __future__ import annotations

import numpy as np
import pytest

from risk.mechanics import root, sanding
from risk.mechanics import stresses as st


def _random_local(rng: np.random.Generator) -> st.LocalStress:
    a = rng.normal(size=(3, 3)) * 8.0
    t = 0.5 * (a + a.T) + 50.0 * np.eye(3)
    return st.LocalStress(t[0, 0], t[1, 1], t[2, 2], t[0, 1], t[0, 2], t[1, 2])


def test_wall_values_are_the_generalized_kirsch_wall_stresses():
    # Fjaer et al. (2008) eqs. 4.81-4.86 (the existing wall form, without the inflow term)
    rng = np.random.default_rng(1)
    for _ in range(20):
        loc = _random_local(rng)
        t = rng.uniform(0, 2 * np.pi)
        f = root.wellbore_field(loc, theta=t, radius_ratio=1.0, wall_pressure=12.0,
                                poisson_ratio=0.27)
        w = st.wall_stresses(loc, theta=t, wall_pressure=12.0, reservoir_pressure=12.0,
                             poro_coefficient=0.0, poisson_ratio=0.27)
        assert float(f.rr) == pytest.approx(12.0)
        assert float(f.tt) == pytest.approx(float(w.hoop), rel=1e-12)
        assert float(f.zz) == pytest.approx(float(w.axial), rel=1e-12)
        assert float(f.tz) == pytest.approx(float(w.shear_hoop_axial), abs=1e-12)
        assert abs(float(f.rt)) < 1e-12 and abs(float(f.rz)) < 1e-12


def test_field_is_in_equilibrium_and_tends_to_the_far_field():
    # div(sigma) = 0 everywhere (plane strain, no z dependence), by central differences of the
    # Cartesian tensor; far from the hole the far field (Kirsch 1898)
    rng = np.random.default_rng(2)
    loc = _random_local(rng)
    h = 1e-5

    def cart(x: float, y: float) -> np.ndarray:
        r, t = np.hypot(x, y), np.arctan2(y, x)
        f = root.wellbore_field(loc, theta=t, radius_ratio=r, wall_pressure=7.0,
                                poisson_ratio=0.3)
        return root.field_tensor(f, t)

    for x, y in [(1.3, 0.4), (-0.9, 1.1), (0.2, -2.0), (1.8, 1.8)]:
        div = (cart(x + h, y)[:, 0] - cart(x - h, y)[:, 0]
               + cart(x, y + h)[:, 1] - cart(x, y - h)[:, 1]) / (2 * h)
        assert np.max(np.abs(div)) < 1e-5 * 60
    far = cart(3e4, 1e4)
    want = np.array([[loc.sxx, loc.sxy, loc.sxz], [loc.sxy, loc.syy, loc.syz],
                     [loc.sxz, loc.syz, loc.szz]])
    np.testing.assert_allclose(far, want, atol=1e-6)


def test_no_wellbore_concentration_reduces_to_todays_tunnel():
    # far-field-equivalent set-up: a tunnel point far from the well sees the far field, and
    # the root onset solver equals the cylinder formula of Willson et al. (2002)
    rng = np.random.default_rng(3)
    frame_w = st.cavity_frame(0.7, 1.1)
    for _ in range(10):
        a = rng.normal(size=(3, 3)) * 8.0
        t_ned = 0.5 * (a + a.T) + 50.0 * np.eye(3)
        shot = rng.uniform(0, 2 * np.pi)
        far_pt = root.root_stress(t_ned, well_frame=frame_w, shot_angle=shot,
                                  radius_ratio=1e6, wall_pressure=20.0, poisson_ratio=0.25)
        np.testing.assert_allclose(far_pt, t_ned, atol=1e-9)
        frame_t = st.tunnel_frame(well_inclination=0.7, well_azimuth=1.1, shot_angle=shot)
        loc = st.local_stress(t_ned, frame_t)
        zero = st.LocalStress(*(np.zeros(()) for _ in range(6)))
        pw, _ = root.onset_wall_pressure(loc, zero, strength=60.0, reservoir_pressure=30.0,
                                         poro_coefficient=0.5)
        s1, s3 = st.in_plane_principal(loc)
        ref = sanding.cylinder_onset_wall_pressure(sigma_1=s1, sigma_3=s3, strength=60.0,
                                                   reservoir_pressure=30.0,
                                                   poro_coefficient=0.5)
        ref = float(ref)
        want = 30.0 if ref >= 30.0 else (-np.inf if ref < 0 else ref)
        assert float(pw) == pytest.approx(want, abs=1e-9)


@pytest.mark.parametrize("s_h,sv", [(40.0, 60.0), (45.0, 50.0), (35.0, 30.0)])
def test_vertical_well_isotropic_stress_against_hand_superposition(s_h, sv):
    # vertical well, S_H = S_h = S: at the root (Kirsch 1898) s_t = 2 S - p_w, s_r = p_w,
    # s_z = S_v; a horizontal tunnel there has in-plane stresses 2 S - p_w and S_v, so by hand
    # 3 s1 - s3 - p_w - A (p_r - p_w) - p_w = U with s1, s3 the larger and smaller of the two
    big_a, p_r, u = 0.5, 25.0, 150.0
    frame_w = st.cavity_frame(0.0, 0.0)
    t_ned = np.diag([s_h, s_h, sv])
    shot = 0.6
    rot = (st.tunnel_frame(well_inclination=0.0, well_azimuth=0.0, shot_angle=shot)
           @ frame_w.T @ root.cylindrical_basis(shot).T)
    f0 = root.wellbore_field(root.well_local(t_ned, frame_w), theta=shot, radius_ratio=1.0,
                             wall_pressure=0.0, poisson_ratio=0.25)
    zero = st.LocalStress(*(np.zeros(()) for _ in range(6)))
    f1 = root.wellbore_field(zero, theta=shot, radius_ratio=1.0, wall_pressure=1.0,
                             poisson_ratio=0.25)
    pw, _ = root.onset_wall_pressure(root.tunnel_local(f0, rot), root.tunnel_local(f1, rot),
                                     strength=u, reservoir_pressure=p_r,
                                     poro_coefficient=big_a)
    grid = np.linspace(0.0, p_r, 250_001)
    hoop = 2 * s_h - grid
    s1, s3 = np.maximum(hoop, sv), np.minimum(hoop, sv)
    excess = 3 * s1 - s3 - grid - big_a * (p_r - grid) - grid - u
    if excess[-1] >= 0:
        assert float(pw) == p_r
    elif excess[0] < 0:
        assert float(pw) == -np.inf
    else:
        hand = grid[np.argmax(excess < 0)]
        assert float(pw) == pytest.approx(hand, abs=2e-4)


def test_onset_against_brute_force_scan():
    # the closed form (quadratic root of a convex excess) against a dense scan of p_w
    rng = np.random.default_rng(5)
    n = 200
    loc0 = st.LocalStress(*(rng.normal(60, 15, n) for _ in range(2)),
                          rng.normal(50, 10, n), *(rng.normal(0, 10, n) for _ in range(3)))
    loc1 = st.LocalStress(*(rng.normal(0, 0.7, n) for _ in range(6)))
    u = rng.uniform(80, 200, n)
    p_r = 30.0
    pw, _ = root.onset_wall_pressure(loc0, loc1, strength=u, reservoir_pressure=p_r,
                                     poro_coefficient=0.45)
    grid = np.linspace(0.0, p_r, 30_001)[:, None]
    sxx, syy, sxy = (c0 + grid * c1 for c0, c1 in
                     ((loc0.sxx, loc1.sxx), (loc0.syy, loc1.syy), (loc0.sxy, loc1.sxy)))
    s1 = 0.5 * (sxx + syy) + np.hypot(0.5 * (sxx - syy), sxy)
    s3 = 0.5 * (sxx + syy) - np.hypot(0.5 * (sxx - syy), sxy)
    f = 3 * s1 - s3 - 1.55 * grid - 0.45 * p_r - u
    for j in range(n):
        if f[-1, j] >= 0:
            assert pw[j] == p_r
        elif f[0, j] < 0:
            assert pw[j] == -np.inf
        else:
            first = grid[np.argmax(f[:, j] < 0), 0]
            assert pw[j] == pytest.approx(first, abs=2e-3)
