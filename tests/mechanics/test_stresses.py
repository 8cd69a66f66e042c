"""Far-field tensor, frames and the generalized Kirsch wall stresses.

Sources: Kirsch (1898) as given in Jaeger, Cook & Zimmerman (2007) *Fundamentals of Rock
Mechanics*, sec. 8.4, and Zoback (2007) *Reservoir Geomechanics*, eq. 6.1-6.3 (vertical well:
hoop stress 3 Sh - SH - dP at the SHmax azimuth and 3 SH - Sh - dP at 90 degrees from it);
Fjaer et al. (2008) *Petroleum Related Rock Mechanics*, sec. 4.4 (inclined wells).
"""

from __future__ import annotations

import numpy as np
import pytest

from risk.mechanics import stresses as st

RNG = np.random.default_rng(20261201)


def test_frame_is_orthonormal_right_handed():
    # derived: rows of a rotation matrix are orthonormal with x cross y = z
    inc = RNG.uniform(0, np.pi, 50)
    az = RNG.uniform(-np.pi, np.pi, 50)
    r = st.cavity_frame(inc, az)
    np.testing.assert_allclose(r @ np.swapaxes(r, -1, -2), np.broadcast_to(np.eye(3), r.shape),
                               atol=1e-14)
    np.testing.assert_allclose(np.cross(r[:, 0], r[:, 1]), r[:, 2], atol=1e-14)


def test_vertical_frame_points_x_along_azimuth():
    # conventions: vertical well, x is the `azimuth` direction, y 90 degrees clockwise from above
    r = st.cavity_frame(0.0, np.radians(30.0))
    np.testing.assert_allclose(r[0], [np.cos(np.radians(30)), np.sin(np.radians(30)), 0],
                               atol=1e-15)
    np.testing.assert_allclose(r[2], [0, 0, 1], atol=1e-15)


def test_high_side_points_up_for_deviated_well():
    # derived: the high side of an inclined well has a negative (upward) down-component
    r = st.cavity_frame(np.radians(35.0), np.radians(120.0))
    assert r[0, 2] < 0
    assert r[2, 2] == pytest.approx(np.cos(np.radians(35.0)))


def test_far_field_tensor_eigen():
    # derived: the Andersonian tensor has eigenvalues SH, Sh, Sv with e_H at the SHmax azimuth
    s = st.far_field_tensor(shmax=60.0, shmin=45.0, sv=70.0, shmax_azimuth=np.radians(40.0))
    w, v = np.linalg.eigh(s)
    np.testing.assert_allclose(w, [45.0, 60.0, 70.0])
    e_h = np.array([np.cos(np.radians(40)), np.sin(np.radians(40)), 0.0])
    assert abs(v[:, 1] @ e_h) == pytest.approx(1.0)


def test_kirsch_vertical_well_extremes():
    # Zoback (2007) eq. 6.1-6.3 / Jaeger et al. (2007) sec. 8.4: min hoop 3Sh - SH - p_w at the
    # SHmax azimuth, max 3SH - Sh - p_w at 90 degrees (no inflow term: A = 0)
    sh_max, sh_min, pw = 60.0, 45.0, 20.0
    loc = st.local_stress(
        st.far_field_tensor(shmax=sh_max, shmin=sh_min, sv=70.0, shmax_azimuth=0.5),
        st.cavity_frame(0.0, 0.5))
    w = st.wall_stresses(loc, theta=np.array([0.0, np.pi / 2]), wall_pressure=pw,
                         reservoir_pressure=30.0, poro_coefficient=0.0, poisson_ratio=0.25)
    np.testing.assert_allclose(w.hoop, [3 * sh_min - sh_max - pw, 3 * sh_max - sh_min - pw])
    # axial: Sv - 2 nu (SH - Sh) cos 2t (Jaeger et al. 2007, eq. 8.90 with plane strain)
    np.testing.assert_allclose(w.axial, [70 - 0.5 * 15, 70 + 0.5 * 15])
    np.testing.assert_allclose(w.shear_hoop_axial, 0.0, atol=1e-12)


def test_inflow_term_sign():
    # Willson et al. (2002), SPE 78168 / Bellarby (2009) ch. 3: drawdown raises the hoop stress
    # by (2 - A) per unit fall of the wall pressure; the inflow term lowers it by A(p_r - p_w)
    loc = st.local_stress(st.far_field_tensor(shmax=60., shmin=45., sv=70., shmax_azimuth=0.),
                          st.cavity_frame(0.0, 0.0))
    kw = dict(theta=np.pi / 2, reservoir_pressure=30.0, poro_coefficient=0.6,
              poisson_ratio=0.25)
    h1 = st.wall_stresses(loc, wall_pressure=30.0, **kw).hoop
    h2 = st.wall_stresses(loc, wall_pressure=20.0, **kw).hoop
    assert h2 - h1 == pytest.approx(10.0 * (1.0 - 0.6))  # total stress: -dp_w + A dp_w
    # effective hoop stress rises by (2 - A) per unit drawdown
    assert (h2 - 20.0) - (h1 - 30.0) == pytest.approx(10.0 * (2.0 - 0.6))


def test_general_wall_stress_equals_rotated_plane_solution():
    # Independent check: at the wall of a cavity whose axis is a principal direction the
    # generalized solution must reduce to Kirsch in that plane; rotate a vertical-well problem
    # to a horizontal tunnel along SH with Sv and Sh in its plane (derived).
    s = st.far_field_tensor(shmax=60.0, shmin=45.0, sv=70.0, shmax_azimuth=0.0)
    frame = st.cavity_frame(np.pi / 2, 0.0)  # horizontal axis toward north = SH direction
    loc = st.local_stress(s, frame)
    # x is up (-Sv direction), y is east (Sh)
    np.testing.assert_allclose([loc.sxx, loc.syy, loc.szz], [70.0, 45.0, 60.0], atol=1e-12)
    w = st.wall_stresses(loc, theta=np.array([0.0, np.pi / 2]), wall_pressure=0.0,
                         reservoir_pressure=0.0, poro_coefficient=0.0, poisson_ratio=0.2)
    np.testing.assert_allclose(w.hoop, [3 * 45 - 70, 3 * 70 - 45], atol=1e-12)


def test_tunnel_frames_reverse_for_opposite_shots():
    # derived: shots at w and w + 180 degrees have opposite axes
    f = st.tunnel_frame(well_inclination=0.6, well_azimuth=1.1,
                        shot_angle=np.radians([20.0, 200.0]))
    np.testing.assert_allclose(f[0, 2], -f[1, 2], atol=1e-14)


def test_depletion_and_uniaxial_path():
    # Zoback (2007) eq. 3.5 ff. (uniaxial strain): gamma = alpha (1 - 2 nu)/(1 - nu)
    g = st.uniaxial_strain_path(biot=1.0, poisson_ratio=0.25)
    assert g == pytest.approx(2.0 / 3.0)
    assert st.depleted_stress(initial=50.0, initial_pore_pressure=30.0, reservoir_pressure=20.0,
                              path=g) == pytest.approx(50.0 - 20.0 / 3.0)


def test_in_plane_principal():
    loc = st.LocalStress(*(np.array(v) for v in (50.0, 30.0, 0.0, 10.0, 0.0, 0.0)))
    hi, lo = st.in_plane_principal(loc)
    np.testing.assert_allclose(sorted(np.linalg.eigvalsh([[50., 10.], [10., 30.]])), [lo, hi])


def _fma_exact(a: float, b: float, c: float) -> float:
    """a * b + c with one rounding (IEEE 754-2008 fusedMultiplyAdd), computed exactly in
    rational arithmetic (Python's fractions) and rounded to the nearest double."""
    from fractions import Fraction

    return float(Fraction(a) * Fraction(b) + Fraction(c))


def test_rotation_is_the_fused_product_and_numpys_to_rounding():
    # Reference 1: the definition S' = R S R^T entry by entry, each a fused multiply-add
    # chain fma(a2, b2, fma(a1, b1, a0 b0)) evaluated exactly with fractions (IEEE 754-2008
    # sec. 5.4.1): every entry bit for bit. Reference 2: numpy's matmul, to rounding.
    # Reference 3: the trace and the Frobenius norm are invariant under a rotation (any
    # linear-algebra text, e.g. Fjaer et al. 2008 sec. 1.3 for the stress invariants).
    rng = np.random.default_rng(7)
    m = rng.normal(size=(40, 3, 3)) * 30.0
    s = m + np.swapaxes(m, -1, -2)
    r, _ = np.linalg.qr(rng.normal(size=(40, 3, 3)))
    got = st.rotate_to_frame(s, r)
    for p in range(0, 40, 7):
        a = [[_fma_exact(r[p, i, 2], s[p, 2, k], _fma_exact(r[p, i, 1], s[p, 1, k],
                                                           r[p, i, 0] * s[p, 0, k]))
              for k in range(3)] for i in range(3)]
        for i in range(3):
            for j in range(3):
                want = _fma_exact(a[i][2], r[p, j, 2], _fma_exact(a[i][1], r[p, j, 1],
                                                                  a[i][0] * r[p, j, 0]))
                assert got[p, i, j] == want
    np.testing.assert_allclose(got, r @ s @ np.swapaxes(r, -1, -2), rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(np.trace(got, axis1=-2, axis2=-1),
                               np.trace(s, axis1=-2, axis2=-1), rtol=1e-12, atol=1e-11)
    np.testing.assert_allclose(np.linalg.norm(got, axis=(-2, -1)),
                               np.linalg.norm(s, axis=(-2, -1)), rtol=1e-12)


def test_rotation_broadcasts_and_is_the_same_for_a_case_in_any_stack():
    # One tensor per sample against one frame per shot: every (sample, shot) pair equals the
    # pair rotated alone (the gufunc broadcasts like numpy's matmul; derived).
    rng = np.random.default_rng(3)
    t = st.far_field_tensor(shmax=rng.uniform(50, 60, (5, 2)), shmin=rng.uniform(40, 50, (5, 2)),
                            sv=60.0, shmax_azimuth=0.4)  # (5, 2, 3, 3): samples x stages
    frames = st.tunnel_frame(well_inclination=0.6, well_azimuth=1.0,
                             shot_angle=np.radians([0.0, 90.0, 200.0]))  # (3, 3, 3)
    many = st.rotate_to_frame(t[:, None], frames[None, :, None])
    assert many.shape == (5, 3, 2, 3, 3)
    for i in range(5):
        for j in range(3):
            for k in range(2):
                one = st.rotate_to_frame(t[i, k], frames[j])
                assert np.array_equal(many[i, j, k], one)
    with pytest.raises(ValueError, match="3 x 3"):
        st.rotate_to_frame(np.eye(2), np.eye(3))
