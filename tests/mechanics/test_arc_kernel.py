"""The half-circle kernel (risk.mechanics._arc_kernel, Drucker-Prager) and the Hoek-Brown
path through the Mohr-Coulomb kernel (risk.mechanics.yield_onset._compiled_hoek_brown).

Checks against things outside these paths:
- the compiled envelope iteration (risk.mechanics._onset_kernel: grid and Brent's minimiser
  over the whole circle, bracketed roots; a different algorithm, itself checked against the
  numpy reference and the scipy brute force in test_onset_kernel.py) on 80,000 wide-range
  cases per criterion, to 1e-9 MPa;
- the derivation of docs/derivations.md, sec. 15.1 (the worst angle lies on a half circle)
  against a dense scan of the criterion formulas of risk.mechanics.criteria over the whole
  circle (Drucker & Prager 1952; Hoek, Carranza-Torres & Corkum 2002, eq. 1);
- the published Mogi-Coulomb formula (Al-Ajmi & Zimmerman 2005, IJRMMS 42, 431, eqs. 13-15):
  its excess falls as the shear rises near equal hoop and axial stresses, the reason the
  kernel does not take Mogi-Coulomb;
- Hoek-Brown with s3 = 0 (Hoek et al. 2002, eq. 1) against Mohr-Coulomb with
  UCS = sigma_ci s^a (Jaeger, Cook & Zimmerman 2007, eq. 4.13) on walls compressive all round
  (derivations, sec. 15.2);
- a case found in review (an angle failing with no drawdown but not at full drawdown) against
  the scipy brute force of test_yield_onset.py.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest

from risk.mechanics import stresses as st
from risk.mechanics.criteria import CRITERIA, StrengthParameters
from risk.mechanics.yield_onset import (
    _compiled_general,
    _folded_views,
    critical_wall_pressure,
    wall_excess,
)
from tests.mechanics.test_onset_kernel import _corpus
from tests.mechanics.test_yield_onset import _brute

FAST = ["drucker-prager-circumscribed", "drucker-prager-middle", "drucker-prager-inscribed",
        "hoek-brown"]


def _envelope(arrays, shape, criterion):
    """The compiled envelope iteration itself (the path these criteria took before)."""
    from risk.mechanics._onset_kernel import CODES, onset

    sxx, syy, szz, sxy, sxz, syz, p_r, big_a, nu, t0 = arrays[:10]
    views, out, _ = _folded_views(
        [sxx + syy, sxx - syy, sxy, szz, sxz, syz, p_r, big_a, nu, t0, *arrays[10:15]], shape)
    p, psi = np.empty(int(np.prod(out))), np.empty(int(np.prod(out)))
    onset(*views, CODES[criterion], 24, p, psi)
    return p, psi


@pytest.mark.parametrize("criterion", FAST)
def test_equals_the_envelope_iteration_on_many_wide_cases(criterion):
    # Reference: the compiled envelope iteration over the whole circle (a different
    # algorithm). 4 x 20,000 cases of the wide-range corpus: vertical and deviated wells,
    # tunnels, A = 1, friction angles to 75 degrees, tension cut-offs 0-20 MPa or none.
    for seed in range(4):
        loc, a, nu, p_r, s, t0 = _corpus(1000 + seed, 20000)
        arrays = [np.asarray(v, dtype=float) for v in (*loc, p_r, a, nu, t0, *s)]
        got = _compiled_general(arrays, p_r.shape, criterion, 24)
        ref, psi = _envelope(arrays, p_r.shape, criterion)
        np.testing.assert_array_equal(np.isneginf(got.wall_pressure), np.isneginf(ref))
        np.testing.assert_array_equal(got.wall_pressure == p_r, ref == p_r)
        finite = np.isfinite(ref)
        np.testing.assert_allclose(got.wall_pressure[finite], ref[finite], rtol=0, atol=1e-9)
        inside = finite & (ref > 1e-6) & (ref < p_r - 1e-6)
        assert inside.sum() > 300  # the interesting outcome occurs
        d = np.abs(got.theta[inside] - np.mod(psi[inside], 2 * np.pi) / 2)
        d = np.minimum(d, np.pi - d)
        # the same worst angle, but where two angles tie (symmetric walls: either is the
        # answer) the criterion is reached at the angle reported, at the answer
        other = np.nonzero(inside)[0][d >= 1e-4]
        assert other.size <= 0.02 * inside.sum()
        one = st.LocalStress(*(np.asarray(c)[other] for c in loc))
        f = wall_excess(got.wall_pressure[other], got.theta[other], one,
                        reservoir_pressure=p_r[other], poro_coefficient=a[other],
                        poisson_ratio=nu[other], criterion=criterion,
                        strength=StrengthParameters(*(np.asarray(v)[other] for v in s)))
        assert np.all(np.abs(f) < 1e-7)


def _half_circle_and_full_maxima(criterion, rng, n):
    """Largest excess over a dense scan of the whole circle and of the half circle of
    derivations sec. 15.1, at a random wall pressure in [0, p_r], per case."""
    loc, a, nu, p_r, s, t0 = _corpus(int(rng.integers(1 << 30)), n)
    full, half = np.empty(n), np.empty(n)
    theta = np.linspace(0.0, np.pi, 4001)
    x = np.linspace(0.0, np.pi, 2001)  # offsets in psi = 2 theta
    for i in range(n):
        one = st.LocalStress(*(float(np.asarray(c)[i]) for c in loc))
        prm = StrengthParameters(*(float(np.asarray(v)[i]) for v in s))
        p = rng.uniform(0.0, p_r[i])
        kw = dict(reservoir_pressure=p_r[i], poro_coefficient=a[i], poisson_ratio=nu[i],
                  strength=prm, criterion=criterion)
        full[i] = wall_excess(p, theta, one, **kw).max()
        # the largest-u direction (u = -dev, dev = 2 diff cos psi + 4 sxy sin psi) and the
        # largest-w direction (t = 2 (syz cos theta - sxz sin theta))
        psi_u = np.arctan2(-4.0 * one.sxy, -2.0 * (one.sxx - one.syy))
        yy, xx = 2.0 * one.syz, 2.0 * one.sxz
        psi_w = np.arctan2(-xx * yy, 0.5 * (yy * yy - xx * xx))
        sg = 1.0 if np.sin(psi_w - psi_u) >= 0.0 else -1.0
        half[i] = wall_excess(p, 0.5 * (psi_u + sg * x), one, **kw).max()
    return full, half


@pytest.mark.parametrize("criterion", FAST)
def test_worst_angle_lies_on_the_half_circle(criterion):
    # docs/derivations.md, sec. 15.1: every maximum over the wall of a convex isotropic
    # excess lies on the half circle from the largest-u towards the largest-w direction;
    # checked by dense scans of the criterion formulas (the half circle sampled twice as
    # densely, so its maximum may only exceed the whole circle's by the scan's resolution)
    full, half = _half_circle_and_full_maxima(criterion, np.random.default_rng(7), 300)
    scale = 1.0 + np.abs(full)
    if criterion == "hoek-brown":
        # F itself is not convex where m_b s3/sigma_ci + s < 0 (the power's kink), but its
        # elastic domain is: the failure decision, F >= 0 somewhere, is the half circle's
        full = np.minimum(full, 0.0)
    assert np.all(half >= full - 1e-5 * scale)


def test_mogi_coulomb_falls_as_the_shear_rises_near_equal_stresses():
    # Al-Ajmi & Zimmerman (2005), eqs. 13-15: with the radial stress 0 and equal hoop and
    # axial stresses m, a hoop-axial shear t gives principal stresses (m + t, m - t, 0), and
    # tau_oct - b (s1 + s3)/2 falls at first (derivations sec. 15.1): the failure set does
    # not grow with the shear, so the half circle does not hold for this criterion
    prm = StrengthParameters(30.0, np.radians(30.0))
    m, t = 20.0, np.array([0.0, 0.5, 1.0, 2.0])
    f = CRITERIA["mogi-coulomb"](m + t, m - t, np.zeros_like(t), prm)
    assert np.all(np.diff(f) < 0.0)
    # while Drucker-Prager (convex in the stress, even in t) only rises
    g = CRITERIA["drucker-prager-middle"](m + t, m - t, np.zeros_like(t), prm)
    assert np.all(np.diff(g) > 0.0)


def test_hoek_brown_is_the_mohr_coulomb_branch_on_compressive_walls():
    # Hoek et al. (2002) eq. 1 with s3 = 0: s1 = sigma_ci s^a; Mohr-Coulomb (Jaeger et al.
    # 2007, eq. 4.13) with s3 = 0: s1 = UCS. The same criterion wherever s3 = 0
    # (derivations, sec. 15.2), whatever the friction angle Mohr-Coulomb is given
    rng = np.random.default_rng(3)
    s1 = rng.uniform(0.0, 200.0, 500)
    s2 = s1 * rng.uniform(0.0, 1.0, 500)
    s3 = np.zeros(500)
    sci, mb, s, a = (rng.uniform(10, 150, 500), rng.uniform(0.5, 30, 500),
                     rng.uniform(0.001, 1, 500), rng.uniform(0.5, 0.65, 500))
    hb = CRITERIA["hoek-brown"](s1, s2, s3, StrengthParameters(sci, 0.5, mb, s, a))
    mc = CRITERIA["mohr-coulomb"](s1, s2, s3,
                                  StrengthParameters(sci * s ** a, rng.uniform(0.1, 1.2, 500)))
    # Hoek-Brown's tension branch -s3 - s sigma_ci/m_b is -s sigma_ci/m_b < 0 here: it only
    # lifts the excess of safe states, so the failure decisions are equal
    np.testing.assert_allclose(hb, np.maximum(mc, -s * sci / mb), rtol=1e-13, atol=1e-12)
    np.testing.assert_array_equal(hb >= 0.0, mc >= 0.0)


def test_sector_failing_with_no_drawdown_only():
    # Found in review: at some angles this wall fails with no drawdown but not at full
    # drawdown, in a sector narrower than the value's grid; everywhere else it never fails.
    # Reference: the brute force of test_yield_onset.py (eigvalsh, dense scan, brentq).
    loc = st.LocalStress(81.082077, 39.733975, 42.300186, 0.0, 10.300872, 0.0)
    kw = dict(p_r=19.606303, A=0.502073, nu=0.28922,
              strength=StrengthParameters(53.924222, 1.26064), t0=16.924597,
              criterion="drucker-prager-circumscribed")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        ref = _brute(loc, **kw)
    got = critical_wall_pressure(loc, reservoir_pressure=kw["p_r"], poro_coefficient=kw["A"],
                                 poisson_ratio=kw["nu"], strength=kw["strength"],
                                 tensile_strength=kw["t0"], criterion=kw["criterion"])
    assert ref == kw["p_r"] and float(got.wall_pressure) == ref
