"""The half-circle kernel (risk.mechanics._arc_kernel, Drucker-Prager and modified Lade) and
the Hoek-Brown path through the Mohr-Coulomb kernel
(risk.mechanics.yield_onset._compiled_hoek_brown).

Checks against things outside these paths:
- the compiled envelope iteration (risk.mechanics._onset_kernel: grid and Brent's minimiser
  over the whole circle, bracketed roots; a different algorithm, itself checked against the
  numpy reference and the scipy brute force in test_onset_kernel.py) on 80,000 wide-range
  cases per criterion, to 1e-9 MPa;
- the derivation of docs/derivations.md, sec. 15.1 (the worst angle lies on a half circle)
  against a dense scan of the criterion formulas of risk.mechanics.criteria over the whole
  circle (Drucker & Prager 1952; Hoek, Carranza-Torres & Corkum 2002, eq. 1; Ewy 1999,
  SPE Drill. & Completion 14(2), 85, eqs. 4-7);
- modified Lade (sec. 15.3): the compiled answers and angles against the numpy reference path
  and the scipy brute force; the Halley crossing at one angle against scipy's brentq on the
  criterion formula of Ewy (1999), and its slope against central differences of brentq roots;
  the sign function G against that formula, tensile walls included;
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
from scipy.optimize import brentq

from risk.mechanics import stresses as st
from risk.mechanics.criteria import CRITERIA, StrengthParameters
from risk.mechanics.yield_onset import (
    _compiled_general,
    _folded_views,
    critical_wall_pressure,
    wall_excess,
)
from tests.mechanics.test_onset_kernel import (
    _corpus,
    assert_matches_brute_force,
    assert_matches_envelope,
)
from tests.mechanics.test_yield_onset import _brute

FAST = ["drucker-prager-circumscribed", "drucker-prager-middle", "drucker-prager-inscribed",
        "hoek-brown", "modified-lade"]


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
        assert_matches_envelope(got, ref, psi, loc, a, nu, p_r, s, criterion)


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
    if criterion in ("hoek-brown", "modified-lade"):
        # F itself is not convex where m_b s3/sigma_ci + s < 0 (the power's kink), nor
        # modified Lade's where a shifted principal stress is not positive (sec. 15.3), but
        # their elastic domains are: the failure decision, F >= 0 somewhere, is the half
        # circle's
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


LADE = "modified-lade"


def _lade_constants(s):
    """S = c/tan phi and K = 27 + eta of Ewy (1999), eqs. 4-7, from UCS and phi (the cohesion
    of Jaeger, Cook & Zimmerman 2007, eq. 4.11), written out here from the paper."""
    ucs, phi = np.asarray(s.ucs, dtype=float), np.asarray(s.friction_angle, dtype=float)
    coh = ucs * (1.0 - np.sin(phi)) / (2.0 * np.cos(phi))
    eta = 4.0 * np.tan(phi) ** 2 * (9.0 - 7.0 * np.sin(phi)) / (1.0 - np.sin(phi))
    return coh / np.tan(phi), 27.0 + eta


def _ewy_fails(s1, s2, s3, shift, k):
    """Ewy (1999): failed where (I1'')^3/I3'' >= 27 + eta with s'' = s + S, or where a shifted
    principal stress is not positive (the convention of risk.mechanics.criteria)."""
    a, b, d = s1 + shift, s2 + shift, s3 + shift
    positive = (a > 0) & (b > 0) & (d > 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = (a + b + d) ** 3 / (a * b * d)
    return ~positive | (ratio >= k)


def test_modified_lade_equals_numpy_reference_wide_ranges():
    # Reference: the numpy envelope iteration (risk.mechanics.yield_onset, compiled=False:
    # scipy's bracketed root, parabolic angle refinement over the whole circle), on two
    # corpora other than test_onset_kernel.py's: answers to 1e-9 MPa and worst angles
    for seed in (23, 24):
        loc, a, nu, p_r, s, t0 = _corpus(seed, 3000)
        kw = dict(reservoir_pressure=p_r, poro_coefficient=a, poisson_ratio=nu, strength=s,
                  tensile_strength=t0, criterion=LADE)
        got = critical_wall_pressure(loc, **kw)
        ref = critical_wall_pressure(loc, compiled=False, **kw)
        g, r = got.wall_pressure, ref.wall_pressure
        np.testing.assert_array_equal(np.isneginf(g), np.isneginf(r))
        np.testing.assert_array_equal(g == p_r, r == p_r)
        finite = np.isfinite(r)
        np.testing.assert_allclose(g[finite], r[finite], rtol=0, atol=1e-9)
        inside = finite & (r > 1e-6) & (r < p_r - 1e-6)
        assert inside.sum() >= 50  # the crossing occurs
        d = np.abs(got.theta[inside] - ref.theta[inside])
        assert np.all(np.minimum(d, np.pi - d) < 1e-4)


def test_modified_lade_against_brute_force():
    # Reference: the independent brute force of test_yield_onset.py (eigvalsh of the wall
    # tensor, a 3,601-point angle scan refined by scipy's minimize_scalar, scipy's brentq in
    # the wall pressure), on the three outcomes
    loc, a, nu, p_r, s, t0 = _corpus(31, 2000)
    got = critical_wall_pressure(loc, reservoir_pressure=p_r, poro_coefficient=a,
                                 poisson_ratio=nu, strength=s, tensile_strength=t0,
                                 criterion=LADE).wall_pressure
    inside = np.nonzero((got > 0) & (got < p_r))[0][:6]
    zero = np.nonzero(got == p_r)[0][:3]
    never = np.nonzero(np.isneginf(got))[0][:3]
    assert len(inside) == 6 and len(zero) == 3 and len(never) == 3
    assert_matches_brute_force(got, (*inside, *zero, *never), loc, a, nu, p_r, s, t0, LADE)


def _one_angle(loc, a, nu, p_r, s):
    """The kernel's per-case constants (risk.mechanics._arc_kernel._setup_block) for modified
    Lade: S in kk and K S in lam2."""
    from risk.mechanics._arc_kernel import _setup_block

    shift, k = _lade_constants(s)
    x = [np.ascontiguousarray(v, dtype=float) for v in (
        loc.sxx + loc.syy, loc.sxx - loc.syy, loc.sxy, loc.szz, loc.sxz, loc.syz, p_r, a, nu,
        shift, 0.5 * k * shift)]
    return _setup_block(*x)[:13], shift, k


def test_modified_lade_crossing_at_one_angle_against_brentq():
    # docs/derivations.md, sec. 15.3: at one wall angle the crossing is the root of a cubic,
    # taken by six bracketed Halley steps; against scipy.optimize.brentq on Ewy's (1999)
    # criterion (risk.mechanics.criteria.modified_lade via wall_excess) at random angles, and
    # its slope in psi against central differences of brentq roots
    from risk.mechanics._arc_kernel import _HALLEY_POLISH, _lade_dir

    loc, a, nu, p_r, s, _ = _corpus(41, 4000)
    consts, _, _ = _one_angle(loc, a, nu, p_r, s)
    rng = np.random.default_rng(5)
    psi = rng.uniform(0.0, 2.0 * np.pi, p_r.size)
    checked = 0
    for i in range(p_r.size):
        one = st.LocalStress(*(np.asarray(c)[i] for c in loc))
        prm = StrengthParameters(*(float(np.asarray(v)[i]) for v in s))

        def f(p, ps, i=i, one=one, prm=prm):
            return float(wall_excess(p, 0.5 * ps, one, reservoir_pressure=p_r[i],
                                     poro_coefficient=a[i], poisson_ratio=nu[i],
                                     strength=prm, criterion=LADE))

        k = [float(c[i]) for c in consts]
        v, g = _lade_dir(0.0, np.cos(psi[i]), np.sin(psi[i]), 1.0, *k, 0.0, _HALLEY_POLISH,
                         True)
        f0, fr = f(0.0, psi[i]), f(p_r[i], psi[i])
        if fr >= 0.0:
            assert v >= p_r[i]
        elif f0 < 0.0:
            assert v < 0.0
        else:
            root = brentq(f, 0.0, p_r[i], args=(psi[i],), xtol=1e-14, rtol=1e-15)
            assert v == pytest.approx(root, abs=1e-9 * (1.0 + root))
            if checked < 40 and 1e-3 < root < p_r[i] - 1e-3:
                h = 1e-5
                lo = brentq(f, 0.0, p_r[i], args=(psi[i] - h,), xtol=1e-14, rtol=1e-15)
                hi = brentq(f, 0.0, p_r[i], args=(psi[i] + h,), xtol=1e-14, rtol=1e-15)
                assert g == pytest.approx((hi - lo) / (2 * h), rel=1e-4, abs=1e-5)
            checked += 1
    assert checked >= 100  # the crossing occurs at many of the angles


def test_modified_lade_sign_function_against_the_formula():
    # docs/derivations.md, sec. 15.3: G has the sign of Ewy's (1999) criterion, on walls
    # compressive and tensile (a shifted principal stress at or below zero: failed), at
    # random hoop, axial and hoop-axial shear stresses of a wall (radial stress 0)
    from risk.mechanics._arc_kernel import _lade_at

    rng = np.random.default_rng(11)
    n = 20000
    s = StrengthParameters(rng.uniform(1.0, 200.0, n), rng.uniform(0.05, 1.3, n))
    shift, k = _lade_constants(s)
    scale = rng.choice([1.0, 5.0, 50.0], n)
    st_, sz_ = rng.uniform(-2.0, 1.0, n) * shift * scale, rng.uniform(-2.0, 1.0, n) * shift * scale
    tau = rng.normal(0.0, 1.0, n) * shift * rng.choice([0.0, 0.1, 1.0], n)
    m, h = 0.5 * (st_ + sz_), 0.5 * (st_ - sz_)
    r = np.sqrt(h * h + tau * tau)
    hi, lo = m + r, m - r
    s1, s3 = np.maximum(hi, 0.0), np.minimum(lo, 0.0)
    s2 = np.minimum(np.maximum(lo, 0.0), hi)
    fails = _ewy_fails(s1, s2, s3, shift, k)
    g = np.array([_lade_at(0.0, st_[i] + shift[i], sz_[i] + shift[i],
                           st_[i] + sz_[i] + 3.0 * shift[i], tau[i] ** 2, 0.0, 0.0, 0.0, 1.5,
                           0.5, shift[i], k[i] * shift[i])[0] for i in range(n)])
    # the same decision but within rounding of the surface
    f = CRITERIA[LADE](s1, s2, s3, s)
    clear = np.abs(f) > 1e-9 * (1.0 + np.abs(s1) + shift)
    np.testing.assert_array_equal((g >= 0.0)[clear], fails[clear])
    assert np.sum(~fails) > 1000 and np.sum(fails & (lo + shift <= 0.0)) > 1000


def test_tension_bound_over_the_angle_against_a_dense_scan():
    # docs/derivations.md, sec. 15.3: the bound of -lo - T0 over every wall angle from the
    # two ends of u = -dev; against a dense scan of the wall stresses of
    # risk.mechanics.stresses.wall_stresses (Kirsch's solution with steady inflow, sec. 1)
    from risk.mechanics._arc_kernel import _setup_block, _tension_bound_u

    loc, a, nu, p_r, s, t0 = _corpus(43, 400)
    x = [np.ascontiguousarray(v, dtype=float) for v in (
        loc.sxx + loc.syy, loc.sxx - loc.syy, loc.sxy, loc.szz, loc.sxz, loc.syz, p_r, a, nu,
        np.ones_like(p_r), np.ones_like(p_r))]
    c = _setup_block(*x)
    theta = np.linspace(0.0, np.pi, 20001)
    tight = 0
    for i in range(p_r.size):
        one = st.LocalStress(*(float(np.asarray(v)[i]) for v in loc))
        p = 0.5 * p_r[i]  # any wall pressure will do; the middle of [0, p_r]
        w = st.wall_stresses(one, theta=theta, wall_pressure=p, reservoir_pressure=p_r[i],
                             poro_coefficient=a[i], poisson_ratio=nu[i])
        ht, hz = w.hoop - p, w.axial - p
        lo = 0.5 * (ht + hz) - np.sqrt(0.25 * (ht - hz) ** 2 + w.shear_hoop_axial ** 2)
        t_cut = 0.0 if np.isinf(t0[i]) else t0[i]
        k = (*(float(v[i]) for v in c[:10]), p_r[i], t_cut)
        bound = _tension_bound_u(p, k)
        worst = np.max(-lo - t_cut)
        assert bound >= worst - 1e-9 * (1.0 + abs(worst))
        tight += bound < worst + 0.05 * (1.0 + abs(worst))
    assert tight > 40  # the bound is attained, to 5 %, in some cases
