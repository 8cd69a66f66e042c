"""The compiled yield onset of every criterion (risk.mechanics._onset_kernel).

Checks against things outside the kernel:
- the numpy envelope iteration of risk.mechanics.yield_onset (the reference path: scipy's
  bracketed root, vectorised parabolic refinement; a different implementation of the same
  method), on the wide-range corpus of tests/mechanics/test_yield_onset.py, to 1e-9 MPa;
- the independent brute force of that file (numpy.linalg.eigvalsh of the full wall tensor, a
  3,601-point angle scan refined by scipy.optimize.minimize_scalar, scipy.optimize.brentq in
  the wall pressure), every criterion, answers inside (0, p_r) and at both ends;
- the Mohr-Coulomb kernel (closed form per angle, root of its slope: a different algorithm)
  against this kernel's Mohr-Coulomb branch;
- the Drucker-Prager crossing in closed form (docs/derivations.md, sec. 15) against scipy's
  brentq on the criterion of risk.mechanics.criteria.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from scipy.optimize import brentq

from risk.mechanics import stresses as st
from risk.mechanics.criteria import CRITERIA, StrengthParameters
from risk.mechanics.yield_onset import critical_wall_pressure, wall_excess
from tests.mechanics.test_yield_onset import _brute, _wide_cases

OTHERS = sorted(c for c in CRITERIA if c != "mohr-coulomb")


def _corpus(seed: int, n: int):
    """The wide-range corpus with Hoek-Brown constants drawn too (m_b 0.5-30, s 0.001-1,
    a 0.5-0.65: the ranges of Hoek, Carranza-Torres & Corkum 2002, eqs. 2-4, for GSI 10-100)."""
    rng = np.random.default_rng(seed)
    loc, inc, a, nu, p_r, ucs, phi, t0 = _wide_cases(rng, n, exact_edges=True)
    strength = StrengthParameters(ucs, phi, rng.uniform(0.5, 30.0, n),
                                  rng.uniform(0.001, 1.0, n), rng.uniform(0.5, 0.65, n))
    return loc, a, nu, p_r, strength, t0


def _both(criterion, loc, a, nu, p_r, strength, t0):
    kw = dict(reservoir_pressure=p_r, poro_coefficient=a, poisson_ratio=nu, strength=strength,
              tensile_strength=t0, criterion=criterion)
    return critical_wall_pressure(loc, **kw), critical_wall_pressure(loc, compiled=False, **kw)


def assert_matches_brute_force(got, cases, loc, a, nu, p_r, s, t0, criterion):
    """Each case of ``cases`` (indices) against the independent brute force of
    test_yield_onset.py (eigvalsh, dense scan + minimize_scalar, brentq) to 1e-7 MPa; the
    outcomes "at p_r" and "never" exactly."""
    for i in cases:
        one = st.LocalStress(*(np.asarray(c)[i] for c in loc))
        prm = StrengthParameters(*(float(np.asarray(v)[i]) for v in s))
        with warnings.catch_warnings():  # the brute force's scalar minimiser meets -inf
            warnings.simplefilter("ignore", RuntimeWarning)
            ref = _brute(one, p_r=p_r[i], A=a[i], nu=nu[i], strength=prm, t0=t0[i],
                         criterion=criterion)
        if np.isinf(ref):
            assert got[i] == ref, i
        else:
            assert got[i] == pytest.approx(ref, abs=1e-7), (i, got[i], ref)


def assert_matches_envelope(got, ref, psi, loc, a, nu, p_r, s, criterion):
    """A compiled onset ``got`` against the envelope iteration's wall pressures ``ref`` and
    directions ``psi`` (= 2 theta): the same outcomes, the same pressures to 1e-9 MPa, and the
    same worst angle to 1e-4 rad except where two angles tie (then the criterion is reached
    at the angle reported, at the answer)."""
    np.testing.assert_array_equal(np.isneginf(got.wall_pressure), np.isneginf(ref))
    np.testing.assert_array_equal(got.wall_pressure == p_r, ref == p_r)
    finite = np.isfinite(ref)
    np.testing.assert_allclose(got.wall_pressure[finite], ref[finite], rtol=0, atol=1e-9)
    inside = finite & (ref > 1e-6) & (ref < p_r - 1e-6)
    assert inside.sum() > 300  # the interesting outcome occurs
    d = np.abs(got.theta[inside] - np.mod(psi[inside], 2 * np.pi) / 2)
    d = np.minimum(d, np.pi - d)
    other = np.nonzero(inside)[0][d >= 1e-4]
    assert other.size <= 0.02 * inside.sum()
    one = st.LocalStress(*(np.asarray(c)[other] for c in loc))
    f = wall_excess(got.wall_pressure[other], got.theta[other], one,
                    reservoir_pressure=p_r[other], poro_coefficient=a[other],
                    poisson_ratio=nu[other], criterion=criterion,
                    strength=StrengthParameters(*(np.asarray(v)[other] for v in s)))
    assert np.all(np.abs(f) < 1e-7)


@pytest.mark.parametrize("criterion", OTHERS)
def test_compiled_equals_numpy_reference_wide_ranges(criterion):
    # Reference: the numpy envelope iteration (risk.mechanics.yield_onset, compiled=False).
    loc, a, nu, p_r, s, t0 = _corpus(19, 3000)
    fast, ref = _both(criterion, loc, a, nu, p_r, s, t0)
    np.testing.assert_array_equal(np.isneginf(fast.wall_pressure), np.isneginf(ref.wall_pressure))
    np.testing.assert_array_equal(fast.wall_pressure == p_r, ref.wall_pressure == p_r)
    finite = np.isfinite(ref.wall_pressure)
    np.testing.assert_allclose(fast.wall_pressure[finite], ref.wall_pressure[finite],
                               rtol=0, atol=1e-9)
    inside = finite & (ref.wall_pressure > 1e-6) & (ref.wall_pressure < p_r - 1e-6)
    assert inside.sum() >= 20  # the interesting outcome occurs
    d = np.abs(fast.theta[inside] - ref.theta[inside])
    assert np.all(np.minimum(d, np.pi - d) < 1e-4)
    # the worst angle of a case failing with no drawdown is one where it fails (a sector's
    # representative; the reference may pick another angle of the same sector)
    zero = np.nonzero(fast.wall_pressure == p_r)[0][:200]
    if zero.size:
        one = st.LocalStress(*(np.asarray(c)[zero] for c in loc))
        f = wall_excess(p_r[zero], fast.theta[zero], one, reservoir_pressure=p_r[zero],
                        poro_coefficient=a[zero], poisson_ratio=nu[zero],
                        strength=StrengthParameters(*(np.asarray(v)[zero] for v in s)),
                        criterion=criterion)
        lo_tension = np.isfinite(t0[zero])
        assert np.all((f >= -1e-9) | lo_tension)
    assert np.all((fast.theta[finite] >= 0) & (fast.theta[finite] < np.pi))
    assert np.all(np.isnan(fast.theta[~finite]))


@pytest.mark.slow
@pytest.mark.parametrize("criterion", OTHERS)
def test_compiled_against_brute_force_wide_ranges(criterion):
    # Reference: the independent brute force of test_yield_onset.py (eigvalsh, dense scan +
    # minimize_scalar, brentq), on the three outcomes.
    loc, a, nu, p_r, s, t0 = _corpus(2027, 3000)
    got = critical_wall_pressure(loc, reservoir_pressure=p_r, poro_coefficient=a,
                                 poisson_ratio=nu, strength=s, tensile_strength=t0,
                                 criterion=criterion).wall_pressure
    inside = np.nonzero((got > 0) & (got < p_r))[0][:10]
    zero = np.nonzero(got == p_r)[0][:4]
    never = np.nonzero(np.isneginf(got))[0][:4]
    assert len(inside) == 10 and len(zero) == 4
    assert_matches_brute_force(got, (*inside, *zero, *never), loc, a, nu, p_r, s, t0, criterion)


def test_mohr_coulomb_branch_equals_mohr_coulomb_kernel():
    # Two algorithms on the same criterion: the Mohr-Coulomb kernel (closed form per angle,
    # derived monotonicity, root of the slope) and this kernel's envelope iteration.
    from risk.mechanics.yield_onset import _compiled_general

    loc, a, nu, p_r, s, t0 = _corpus(5, 4000)
    mc = critical_wall_pressure(loc, reservoir_pressure=p_r, poro_coefficient=a,
                                poisson_ratio=nu, strength=s, tensile_strength=t0)
    arrays = [np.asarray(v, dtype=float) for v in (*loc, p_r, a, nu, t0, *s)]
    gen = _compiled_general(arrays, p_r.shape, "mohr-coulomb", 24)
    np.testing.assert_array_equal(np.isfinite(mc.wall_pressure), np.isfinite(gen.wall_pressure))
    finite = np.isfinite(mc.wall_pressure)
    np.testing.assert_allclose(gen.wall_pressure[finite], mc.wall_pressure[finite], atol=1e-9)


@pytest.mark.parametrize("match", ["circumscribed", "middle", "inscribed"])
def test_drucker_prager_crossing_closed_form(match):
    # docs/derivations.md, sec. 15 (the crossing at one angle is a root of a quadratic) against
    # scipy.optimize.brentq on the criterion function of risk.mechanics.criteria
    # (Drucker & Prager 1952), at the worst angle the kernel reports.
    loc, a, nu, p_r, s, t0 = _corpus(8, 3000)
    crit = f"drucker-prager-{match}"
    r = critical_wall_pressure(loc, reservoir_pressure=p_r, poro_coefficient=a,
                               poisson_ratio=nu, strength=s, tensile_strength=np.inf,
                               criterion=crit)
    idx = np.nonzero((r.wall_pressure > 1e-3) & (r.wall_pressure < p_r - 1e-3))[0][:25]
    assert idx.size == 25
    for i in idx:
        one = st.LocalStress(*(np.asarray(c)[i] for c in loc))
        prm = StrengthParameters(*(float(np.asarray(v)[i]) for v in s))

        def f(p, i=i, one=one, prm=prm):
            return float(wall_excess(p, r.theta[i], one, reservoir_pressure=p_r[i],
                                     poro_coefficient=a[i], poisson_ratio=nu[i],
                                     strength=prm, criterion=crit))

        # at the worst angle the crossing is the answer: F >= 0 below it, < 0 above
        root = brentq(f, 0.0, p_r[i], xtol=1e-14, rtol=1e-15)
        assert root == pytest.approx(r.wall_pressure[i], abs=1e-8)


@pytest.mark.parametrize("criterion", ["mogi-coulomb", "modified-lade",
                                       "drucker-prager-circumscribed", "drucker-prager-middle",
                                       "drucker-prager-inscribed", "hoek-brown"])
@pytest.mark.parametrize("half", [slice(0, 300), slice(300, 900)])
def test_same_inputs_same_answers_whatever_the_layout(criterion, half):
    # deterministic: each case is computed on its own (blocks only share the loop), so
    # chunking, broadcasting, thread count or running again cannot change a bit of the answer
    # (the envelope-iteration kernel and the half-circle kernel of _arc_kernel alike)
    loc, a, nu, p_r, s, t0 = _corpus(3, 1200)
    kw = dict(poro_coefficient=a, poisson_ratio=nu, tensile_strength=t0, criterion=criterion)
    whole = critical_wall_pressure(loc, reservoir_pressure=p_r, strength=s, **kw)
    again = critical_wall_pressure(loc, reservoir_pressure=p_r, strength=s, **kw)
    np.testing.assert_array_equal(whole.wall_pressure, again.wall_pressure)
    part = critical_wall_pressure(
        st.LocalStress(*(np.asarray(c)[half] for c in loc)), reservoir_pressure=p_r[half],
        strength=StrengthParameters(*(np.asarray(v)[half] for v in s)),
        **{k: (v[half] if isinstance(v, np.ndarray) else v) for k, v in kw.items()})
    np.testing.assert_array_equal(part.wall_pressure, whole.wall_pressure[half])
    np.testing.assert_array_equal(part.theta, whole.theta[half])


def test_bad_grid_is_a_value_error():
    with pytest.raises(ValueError, match="n_theta"):
        critical_wall_pressure(st.LocalStress(50.0, 40.0, 60.0, 0.0, 0.0, 0.0),
                               reservoir_pressure=20.0, poro_coefficient=0.5,
                               poisson_ratio=0.25, strength=StrengthParameters(30.0, 0.5),
                               tensile_strength=2.0, criterion="mogi-coulomb", n_theta=2)
