"""Failure criteria: each reduces to Mohr-Coulomb where its matching says it must.

Sources: Jaeger, Cook & Zimmerman (2007) sec. 4.3-4.8 (Mohr-Coulomb, Drucker-Prager matchings);
Al-Ajmi & Zimmerman (2005) IJRMMS 42, 431 (Mogi-Coulomb = Coulomb in triaxial compression and
extension); Ewy (1999) SPE DC 14(2) 85 (modified Lade = Coulomb in triaxial compression);
Hoek, Carranza-Torres & Corkum (2002) eqs. 1-4 (Hoek-Brown).
"""

from __future__ import annotations

import numpy as np
import pytest

from risk.mechanics import criteria as cr

RNG = np.random.default_rng(7)
UCS = RNG.uniform(2.0, 80.0, 200)
PHI = np.radians(RNG.uniform(10.0, 50.0, 200))
S3 = RNG.uniform(0.0, 40.0, 200)
P = cr.StrengthParameters(UCS, PHI)


def mc_sigma1(s3):
    return UCS + cr.passive_coefficient(PHI) * s3


def test_mohr_coulomb_line():
    # Jaeger et al. (2007) eq. 4.13: s1 = UCS + q s3 on the failure line
    np.testing.assert_allclose(cr.mohr_coulomb(mc_sigma1(S3), S3, S3, P), 0.0, atol=1e-12)


def test_cohesion_relation():
    # Jaeger et al. (2007) eq. 4.11: UCS = 2 c cos(phi)/(1 - sin(phi))
    c = cr.cohesion(ucs=UCS, friction_angle=PHI)
    np.testing.assert_allclose(2 * c * np.cos(PHI) / (1 - np.sin(PHI)), UCS)


@pytest.mark.parametrize("name", ["drucker-prager-circumscribed", "mogi-coulomb",
                                  "modified-lade"])
def test_triaxial_compression_matches_mc(name):
    # s2 = s3 on the Mohr-Coulomb line: F = 0 (matching of each criterion; sources above)
    s1 = mc_sigma1(S3)
    f = cr.CRITERIA[name](s1, S3, S3, P)
    np.testing.assert_allclose(f, 0.0, atol=1e-9 * np.max(s1))


@pytest.mark.parametrize("name", ["drucker-prager-middle", "mogi-coulomb"])
def test_triaxial_extension_matches_mc(name):
    # s1 = s2 on the Mohr-Coulomb line: F = 0 (middle DP; Mogi-Coulomb per Al-Ajmi & Zimmerman)
    s1 = mc_sigma1(S3)
    f = cr.CRITERIA[name](s1, s1, S3, P)
    np.testing.assert_allclose(f, 0.0, atol=1e-9 * np.max(s1))


def test_inscribed_dp_touches_mc_faces():
    # Derived, independent brute force: the inscribed cone's radius sqrt(J2) at a given mean
    # stress is the smallest deviatoric radius of the Mohr-Coulomb surface over Lode angles.
    ucs, phi = 20.0, np.radians(30.0)
    k, lam = cr.drucker_prager_constants(ucs=ucs, friction_angle=phi, match="inscribed")
    for i1 in (10.0, 60.0, 150.0):
        lode = np.linspace(0.0, np.pi / 3, 200001)
        # unit deviatoric direction for each Lode angle, then the radius reaching MC at I1
        d1 = np.sqrt(2 / 3) * np.cos(lode)
        d2 = np.sqrt(2 / 3) * np.cos(lode - 2 * np.pi / 3)
        d3 = np.sqrt(2 / 3) * np.cos(lode + 2 * np.pi / 3)
        d = np.sort(np.stack([d1, d2, d3]), axis=0)[::-1]
        m = i1 / 3
        q = cr.passive_coefficient(phi)
        # MC: (m + r d1) - ucs - q (m + r d3) = 0 -> r
        r = (ucs + q * m - m) / (d[0] - q * d[2])
        sqrt_j2 = r / np.sqrt(2)  # |dev| = r, sqrt(J2) = |dev|/sqrt(2)
        assert sqrt_j2.min() == pytest.approx(k + lam * i1, rel=1e-8)


def test_circumscribed_and_middle_constants_published():
    # Jaeger et al. (2007) sec. 4.8 (common practice): lambda = 2 sin(phi)/(sqrt3 (3 -/+ sin(phi)))
    k, lam = cr.drucker_prager_constants(ucs=10.0, friction_angle=np.radians(30), match="middle")
    assert lam == pytest.approx(2 * 0.5 / (np.sqrt(3) * 3.5))
    with pytest.raises(ValueError):
        cr.drucker_prager_constants(ucs=10.0, friction_angle=0.5, match="outer")


def test_hoek_brown_intact_reduces():
    # Hoek et al. (2002) eq. 1 with s = 1, a = 0.5: s1 = s3 + sci sqrt(mi s3/sci + 1);
    # at s3 = 0 this is the UCS.
    p = cr.StrengthParameters(UCS, PHI, 12.0, 1.0, 0.5)
    s1 = S3 + UCS * np.sqrt(12.0 * S3 / UCS + 1.0)
    np.testing.assert_allclose(cr.hoek_brown(s1, S3, S3, p), 0.0, atol=1e-9)
    np.testing.assert_allclose(cr.hoek_brown(UCS, 0 * UCS, 0 * UCS, p), 0.0, atol=1e-12)
    # beyond the Hoek-Brown tensile strength s sci/mb every state fails
    t = -UCS / 12.0 - 0.1
    assert np.all(cr.hoek_brown(t + 0.0, t, t, p) > 0)


def test_hoek_brown_rock_mass():
    # Hoek et al. (2002) eqs. 2-4: GSI = 100, D = 0 gives the intact constants
    mb, s, a = cr.hoek_brown_rock_mass(mi=17.0, gsi=100.0)
    assert (mb, s) == (pytest.approx(17.0), pytest.approx(1.0))
    assert a == pytest.approx(0.5 + (np.exp(-100 / 15) - np.exp(-20 / 3)) / 6)
    # GSI 50, mi 10: values from the same equations (derived, evaluated by hand)
    mb, s, a = cr.hoek_brown_rock_mass(mi=10.0, gsi=50.0)
    assert mb == pytest.approx(10 * np.exp(-50 / 28))
    assert s == pytest.approx(np.exp(-50 / 9))
    assert a == pytest.approx(0.50573, abs=1e-5)


def test_tensile_cutoff():
    assert cr.tensile_cutoff(-5.0, 3.0) == pytest.approx(2.0)
    assert cr.tensile_cutoff(1.0, 3.0) < 0


@pytest.mark.parametrize("name", sorted(cr.CRITERIA))
def test_safe_domain_convex_along_random_lines(name):
    # Property relied on by the solver (derived): along any straight stress path the safe
    # states form one interval, i.e. F never goes safe -> failed -> safe.
    p = cr.StrengthParameters(20.0, np.radians(30.0), 10.0, 1.0, 0.5)
    t = np.linspace(-3, 3, 4001)
    for _ in range(100):
        a = RNG.uniform(-10, 60, 3)
        b = RNG.normal(0, 30, 3)
        s = np.sort(a[:, None] + b[:, None] * t, axis=0)[::-1]
        safe = cr.CRITERIA[name](s[0], s[1], s[2], p) < 0
        changes = np.count_nonzero(np.diff(safe.astype(int)) != 0)
        assert changes <= 2
        if changes == 2:
            assert safe[np.argmax(safe)] and not safe[0] and not safe[-1]
