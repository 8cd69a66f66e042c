"""Compaction cap (risk.mechanics.cap).

Sources beside each check: modified Cam clay, Roscoe & Burland (1968) and Wood (1990) *Soil
Behaviour and Critical State Soil Mechanics* (yield locus q = M sqrt(p' (P* - p')), the
triaxial-compression slope M = 6 sin(phi)/(3 - sin(phi)), from memory); the mean-stress
far-field formula of risk.mechanics.compaction (derived from the depletion path, checked in
tests/mechanics/test_sanding.py); an independent brute-force scan of the stress path.
"""

from __future__ import annotations

import numpy as np
import pytest

from risk.mechanics import cap, compaction


def test_q_zero_is_the_mean_stress_criterion():
    # E = p' - P* at q = 0 (the cap meets the p' axis at P*), for any M
    p = np.linspace(0.0, 60.0, 121)
    for m in (0.6, 1.2, 1.8):
        e = cap.cap_excess(p, 0.0, collapse_pressure=30.0, m=m)
        np.testing.assert_allclose(e, p - 30.0, atol=1e-12)


def test_far_field_with_no_shear_equals_mean_stress_formula():
    # isotropic initial stresses and a zero depletion path keep q = 0 on the whole path, so
    # the cap onset is the mean-stress one (risk.mechanics.compaction)
    rng = np.random.default_rng(4)
    s = rng.uniform(40, 70, 50)
    p0 = rng.uniform(20, 35, 50)
    pstar = rng.uniform(15, 60, 50)
    got = cap.far_field_cap_pressure(sv=s, shmax0=s, shmin0=s, p0=p0, path=0.0,
                                     path_shmax=0.0, collapse_pressure=pstar, m=1.2)
    ref = compaction.far_field_collapse_pressure(sv=s, shmax0=s, shmin0=s, p0=p0, path=0.0,
                                                 collapse_pressure=pstar)
    want = np.where(ref < 0.0, -np.inf, np.minimum(ref, p0))
    np.testing.assert_allclose(got, want, atol=1e-9)


@pytest.mark.parametrize("phi_deg", [25.0, 30.0, 35.0])
def test_triaxial_path_against_modified_cam_clay_closed_form(phi_deg):
    # conventional triaxial compression at a confining effective stress s3: q = s1 - s3,
    # p' = s3 + q/3; the locus q = M sqrt(p' (P* - p')) (Roscoe & Burland 1968) gives the
    # deviator at cap yield in closed form: q^2 = M^2 (s3 + q/3)(P* - s3 - q/3)
    m = float(cap.critical_state_slope(np.radians(phi_deg)))
    # Wood (1990): M = 6 sin(phi)/(3 - sin(phi)); phi = 30 deg gives M = 1.2 (from memory)
    if phi_deg == 30.0:
        assert m == pytest.approx(1.2, rel=1e-12)
    pstar, s3 = 40.0, 25.0
    # quadratic in q: q^2 (1 + M^2/9) + q M^2 (2 s3 - P*)/3 - M^2 s3 (P* - s3) = 0
    a2 = 1 + m * m / 9
    a1 = m * m * (2 * s3 - pstar) / 3
    a0 = -m * m * s3 * (pstar - s3)
    q_closed = (-a1 + np.sqrt(a1 * a1 - 4 * a2 * a0)) / (2 * a2)
    q = np.linspace(0.0, 40.0, 400_001)
    e = cap.cap_excess(s3 + q / 3, q, collapse_pressure=pstar, m=m)
    q_scan = q[np.argmax(e >= 0)]
    assert q_scan == pytest.approx(q_closed, abs=2e-4)
    assert float(cap.yield_function(s3 + q_closed / 3, q_closed, collapse_pressure=pstar,
                                    m=m)) == pytest.approx(0.0, abs=1e-9)


def test_far_field_onset_against_brute_force_scan_of_the_path():
    # the closed form (highest candidate of a quadratic) against a dense scan of the
    # depletion path p_r in [0, p0] (the same state, evaluated point by point)
    rng = np.random.default_rng(9)
    n = 120
    sv = rng.uniform(50, 80, n)
    big = rng.uniform(35, 75, n)
    small = big - rng.uniform(0, 20, n)
    p0 = rng.uniform(20, 40, n)
    g = rng.uniform(0.3, 0.9, n)
    gb = rng.uniform(0.3, 0.9, n)
    pstar = rng.uniform(20, 90, n)
    m = rng.uniform(0.8, 1.6, n)
    got = cap.far_field_cap_pressure(sv=sv, shmax0=big, shmin0=small, p0=p0, path=g,
                                     path_shmax=gb, collapse_pressure=pstar, m=m)
    pr = np.linspace(0.0, 1.0, 20_001)[:, None] * p0
    x = np.stack([sv - pr, big - gb * (p0 - pr) - pr, small - g * (p0 - pr) - pr])
    p = x.mean(axis=0)
    q = cap.deviator_stress(x[0], x[1], x[2])
    inside = cap.cap_excess(p, q, collapse_pressure=pstar, m=m) >= 0
    for j in range(n):
        hits = np.nonzero(inside[:, j])[0]
        if hits.size == 0:
            assert got[j] == -np.inf
        else:
            assert got[j] == pytest.approx(pr[hits.max(), j], abs=1e-4 * p0[j] + 1e-9)


def test_shear_moves_onset_to_a_higher_reservoir_pressure():
    # shear-enhanced compaction (Wong, David & Zhu 1997): with deviatoric stress the cap is
    # reached earlier on depletion than the mean-stress criterion says, never later
    rng = np.random.default_rng(12)
    n = 500
    sv = rng.uniform(50, 80, n)
    big = rng.uniform(35, 75, n)
    small = big - rng.uniform(0, 20, n)
    p0 = rng.uniform(20, 40, n)
    pstar = rng.uniform(20, 90, n)
    got = cap.far_field_cap_pressure(sv=sv, shmax0=big, shmin0=small, p0=p0, path=0.6,
                                     path_shmax=0.6, collapse_pressure=pstar, m=1.1)
    ref = compaction.far_field_collapse_pressure(sv=sv, shmax0=big, shmin0=small, p0=p0,
                                                 path=0.6, collapse_pressure=pstar)
    ref = np.where(ref < 0.0, -np.inf, np.minimum(ref, p0))
    assert np.all(got >= ref - 1e-9)


def test_wall_excess_uses_the_principal_stresses():
    # q from the 2x2 hoop-axial block with radial 0 equals sqrt(3 J2) of the principal values
    rng = np.random.default_rng(2)
    st_, sz, t = rng.uniform(0, 50, 20), rng.uniform(0, 50, 20), rng.uniform(-10, 10, 20)
    e = cap.wall_cap_excess(hoop=st_, axial=sz, shear=t, collapse_pressure=40.0, m=1.1)
    for i in range(20):
        lam = np.linalg.eigvalsh(np.array([[0, 0, 0], [0, st_[i], t[i]], [0, t[i], sz[i]]]))
        q = cap.deviator_stress(*lam)
        want = cap.cap_excess(lam.mean(), q, collapse_pressure=40.0, m=1.1)
        assert e[i] == pytest.approx(float(want), abs=1e-9)
