"""Effective-strength onset and pore collapse.

Sources: Willson et al. (2002) SPE 78168 and Bellarby (2009) ch. 3 (cylinder formula,
docs/derivations.md, sec. 4); the spherical tip form is derived from Lame's thick sphere
(Timoshenko & Goodier 1970, sec. 141: hoop stress at the wall (3 s - p_w)/2 for a cavity in an
infinite body); pore collapse derived from the depletion path (docs/derivations.md,
sec. 2; risk/mechanics/compaction.py).
"""

from __future__ import annotations

import numpy as np
import pytest

from risk.mechanics import compaction, sanding
from risk.mechanics import stresses as st
from risk.mechanics.criteria import StrengthParameters
from risk.mechanics.yield_onset import critical_wall_pressure


def test_reduces_to_mohr_coulomb_onset_when_u_equals_ucs():
    # issue check: U = UCS gives the Mohr-Coulomb yield onset of a vertical well whose hoop
    # stress is the major principal stress (Sv = Sh keeps the axial stress below it)
    loc = st.local_stress(st.far_field_tensor(shmax=55.0, shmin=42.0, sv=42.0,
                                              shmax_azimuth=0.4), st.cavity_frame(0.0, 0.0))
    for ucs in (60.0, 75.0, 90.0):
        mc = critical_wall_pressure(loc, reservoir_pressure=30.0, poro_coefficient=0.55,
                                    poisson_ratio=0.25, strength=StrengthParameters(ucs, 0.5),
                                    tensile_strength=np.inf)
        s1, s3 = st.in_plane_principal(loc)
        es = sanding.cylinder_onset_wall_pressure(sigma_1=s1, sigma_3=s3, strength=ucs,
                                                  reservoir_pressure=30.0, poro_coefficient=0.55)
        expected = float(sanding.classify_wall_pressure(es, 30.0))
        got = 30.0 - float(mc.wall_pressure)
        assert got == pytest.approx(expected, abs=1e-9)


def test_cylinder_formula_hand_value():
    # (3*60 - 40 - 90 - 0.6*30)/(2 - 0.6) = 32/1.4 (docs/derivations.md sec. 4; by hand)
    pw = sanding.cylinder_onset_wall_pressure(sigma_1=60.0, sigma_3=40.0, strength=90.0,
                                              reservoir_pressure=30.0, poro_coefficient=0.6)
    assert pw == pytest.approx(32.0 / 1.4)


def test_tip_formula_matches_lame_sphere():
    # Lame sphere: s_t = (3 s - p_w)/2 total at the wall; effective hoop with the inflow
    # term A (p_r - p_w) must equal U at the returned pressure (derived, independent check).
    s, u, p_r, a = 50.0, 40.0, 30.0, 0.5
    pw = sanding.tip_onset_wall_pressure(sigma=s, strength=u, reservoir_pressure=p_r,
                                         poro_coefficient=a)
    hoop_eff = (3 * s - pw) / 2 - a * (p_r - pw) - pw
    assert hoop_eff == pytest.approx(u)


def test_classify():
    d = sanding.classify_wall_pressure(np.array([35.0, 10.0, -1.0]), 30.0)
    np.testing.assert_array_equal(d, [0.0, 20.0, np.inf])


def test_far_field_pore_collapse_pressure():
    # derived: at p_rc the mean effective stress on the depletion path equals P*
    kw = dict(sv=70.0, shmax0=60.0, shmin0=50.0, p0=35.0, path=0.6)
    prc = compaction.far_field_collapse_pressure(collapse_pressure=40.0, **kw)
    m = compaction.far_field_mean_effective(reservoir_pressure=prc, **kw)
    assert m == pytest.approx(40.0)
    # hand value at p_r = p0: (70 + 60 + 50)/3 - 35 = 25 MPa
    assert compaction.far_field_mean_effective(reservoir_pressure=35.0, **kw) == 25.0


def test_wall_mean_effective_equals_scan():
    # independent: scan the wall stresses of stresses.wall_stresses at zero drawdown
    loc = st.local_stress(st.far_field_tensor(shmax=62., shmin=45., sv=70., shmax_azimuth=0.3),
                          st.tunnel_frame(well_inclination=0.5, well_azimuth=1.0,
                                          shot_angle=0.7))
    theta = np.linspace(0, np.pi, 200001)
    w = st.wall_stresses(loc, theta=theta, wall_pressure=30.0, reservoir_pressure=30.0,
                         poro_coefficient=0.5, poisson_ratio=0.25)
    scan = ((w.hoop - 30.0) + (w.axial - 30.0)).max() / 3.0
    assert float(compaction.wall_mean_effective(loc, reservoir_pressure=30.0,
                                                poisson_ratio=0.25)) == pytest.approx(scan,
                                                                                      abs=1e-8)


def test_far_field_pore_collapse_with_two_paths():
    # derived: with dSH/dp = gH and dSh/dp = gh the mean effective stress on the path is
    # (Sv + SH0 + Sh0 - (gH + gh)(p0 - p_r))/3 - p_r; at p_rc it equals P*
    kw = dict(sv=70.0, shmax0=60.0, shmin0=50.0, p0=35.0, path=0.5)
    prc = compaction.far_field_collapse_pressure(collapse_pressure=40.0, path_shmax=0.8, **kw)
    mean = (70.0 + 60.0 + 50.0 - (0.8 + 0.5) * (35.0 - prc)) / 3.0 - prc
    assert mean == pytest.approx(40.0)
