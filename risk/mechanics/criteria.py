"""Failure criteria in principal effective stresses (compression positive) [MPa].

Each criterion is a function ``excess(s1, s2, s3, params) -> F`` with ``s1 >= s2 >= s3`` the
principal effective stresses [MPa] and ``F >= 0`` meaning the stress state has reached or
passed the criterion. The elastic (safe) domain ``F < 0`` of every criterion here is convex, which
the yield-onset solver relies on: along a straight stress path the safe states form one interval.

Parameters are passed as a :class:`StrengthParameters` tuple of arrays that broadcast with the
stresses, so one solver serves every criterion.

Common symbols: UCS (unconfined compressive strength) [MPa], friction angle phi [rad],
cohesion c = UCS (1 - sin phi) / (2 cos phi) [MPa], q = (1 + sin phi)/(1 - sin phi) [1].
"""

from __future__ import annotations

from collections.abc import Callable
from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

Array = NDArray[np.float64]

__all__ = [
    "StrengthParameters",
    "CRITERIA",
    "cohesion",
    "passive_coefficient",
    "mohr_coulomb",
    "drucker_prager",
    "drucker_prager_constants",
    "mogi_coulomb",
    "modified_lade",
    "hoek_brown",
    "hoek_brown_rock_mass",
    "tensile_cutoff",
]


class StrengthParameters(NamedTuple):
    """Strength parameters shared by the criteria (arrays broadcast with the stresses).

    ucs : unconfined compressive strength of the intact rock, sigma_ci for Hoek-Brown [MPa]
    friction_angle : internal friction angle [rad]
    hb_mb, hb_s, hb_a : Hoek-Brown constants m_b, s, a [1] (ignored by the other criteria)
    """

    ucs: ArrayLike
    friction_angle: ArrayLike
    hb_mb: ArrayLike = np.nan
    hb_s: ArrayLike = 1.0
    hb_a: ArrayLike = 0.5


def cohesion(*, ucs: ArrayLike, friction_angle: ArrayLike) -> Array:
    """Cohesion c = UCS (1 - sin phi) / (2 cos phi) [MPa].

    Jaeger, Cook & Zimmerman (2007) *Fundamentals of Rock Mechanics*, eq. 4.11.
    """
    phi = np.asarray(friction_angle, dtype=float)
    return np.asarray(ucs, dtype=float) * (1.0 - np.sin(phi)) / (2.0 * np.cos(phi))


def passive_coefficient(friction_angle: ArrayLike) -> Array:
    """q = (1 + sin phi)/(1 - sin phi) = tan^2(pi/4 + phi/2) [1]."""
    s = np.sin(np.asarray(friction_angle, dtype=float))
    return (1.0 + s) / (1.0 - s)


def mohr_coulomb(s1: Array, s2: Array, s3: Array, p: StrengthParameters) -> Array:
    """Mohr-Coulomb: F = s1 - UCS - q s3 [MPa].

    References
    ----------
    Jaeger, J.C., Cook, N.G.W. & Zimmerman, R.W. (2007) *Fundamentals of Rock Mechanics*,
    4th ed., eq. 4.13; Fjaer et al. (2008) eq. 2.22.
    """
    del s2
    return s1 - np.asarray(p.ucs) - passive_coefficient(p.friction_angle) * s3


def drucker_prager_constants(
    *, ucs: ArrayLike, friction_angle: ArrayLike, match: str
) -> tuple[Array, Array]:
    """Drucker-Prager constants (k [MPa], lambda [1]) of sqrt(J2) = k + lambda I1.

    ``match``: ``"circumscribed"`` (meets Mohr-Coulomb in triaxial compression),
    ``"middle"`` (meets it in triaxial extension), ``"inscribed"`` (tangent to the
    Mohr-Coulomb faces).

    References
    ----------
    Drucker, D.C. & Prager, W. (1952) Q. Appl. Math. 10, 157-165. Matchings as in
    Jaeger, Cook & Zimmerman (2007) sec. 4.8 and Al-Ajmi & Zimmerman (2005) IJRMMS 42, 431.
    """
    phi = np.asarray(friction_angle, dtype=float)
    c = cohesion(ucs=ucs, friction_angle=phi)
    s, co = np.sin(phi), np.cos(phi)
    if match == "circumscribed":
        den = np.sqrt(3.0) * (3.0 - s)
        return 6.0 * c * co / den, 2.0 * s / den
    if match == "middle":
        den = np.sqrt(3.0) * (3.0 + s)
        return 6.0 * c * co / den, 2.0 * s / den
    if match == "inscribed":
        den = np.sqrt(3.0 * (3.0 + s * s))
        return 3.0 * c * co / den, s / den
    raise ValueError(f"unknown Drucker-Prager match {match!r}")


def _sqrt_j2(s1: Array, s2: Array, s3: Array) -> Array:
    return np.sqrt(((s1 - s2) ** 2 + (s2 - s3) ** 2 + (s3 - s1) ** 2) / 6.0)


def drucker_prager(match: str) -> Callable[[Array, Array, Array, StrengthParameters], Array]:
    """Drucker-Prager: F = sqrt(J2) - k - lambda I1 [MPa], I1 = s1 + s2 + s3."""

    def excess(s1: Array, s2: Array, s3: Array, p: StrengthParameters) -> Array:
        k, lam = drucker_prager_constants(ucs=p.ucs, friction_angle=p.friction_angle,
                                          match=match)
        return _sqrt_j2(s1, s2, s3) - k - lam * (s1 + s2 + s3)

    excess.__name__ = f"drucker_prager_{match}"
    excess.__doc__ = drucker_prager.__doc__
    return excess


def mogi_coulomb(s1: Array, s2: Array, s3: Array, p: StrengthParameters) -> Array:
    """Mogi-Coulomb: F = tau_oct - a - b (s1 + s3)/2 [MPa].

    a = (2 sqrt 2 / 3) c cos phi, b = (2 sqrt 2 / 3) sin phi; reduces to Mohr-Coulomb when
    s2 = s3 (triaxial compression) or s2 = s1 (triaxial extension).

    References
    ----------
    Al-Ajmi, A.M. & Zimmerman, R.W. (2005) Relation between the Mogi and the Coulomb failure
    criteria, IJRMMS 42, 431-439, eqs. 13-15.
    """
    phi = np.asarray(p.friction_angle, dtype=float)
    c = cohesion(ucs=p.ucs, friction_angle=phi)
    f = 2.0 * np.sqrt(2.0) / 3.0
    tau_oct = np.sqrt((s1 - s2) ** 2 + (s2 - s3) ** 2 + (s3 - s1) ** 2) / 3.0
    return tau_oct - f * c * np.cos(phi) - f * np.sin(phi) * 0.5 * (s1 + s3)


def modified_lade(s1: Array, s2: Array, s3: Array, p: StrengthParameters) -> Array:
    """Modified Lade: failure when (I1'')^3 / I3'' = 27 + eta [written as MPa excess].

    s_i'' = s_i + S1 with S1 = c / tan phi; eta = 4 tan^2 phi (9 - 7 sin phi)/(1 - sin phi),
    which matches Mohr-Coulomb in triaxial compression. Returned as
    F = max(I1'' - cbrt((27 + eta) I3''), -s3'') so that F is in MPa and any state with a
    shifted principal stress at or below zero counts as failed.

    References
    ----------
    Ewy, R.T. (1999) Wellbore-stability predictions by use of a modified Lade criterion,
    SPE Drill. & Completion 14(2), 85-91, eqs. 4-7.
    """
    phi = np.asarray(p.friction_angle, dtype=float)
    c = cohesion(ucs=p.ucs, friction_angle=phi)
    shift = c / np.tan(phi)
    sin = np.sin(phi)
    eta = 4.0 * np.tan(phi) ** 2 * (9.0 - 7.0 * sin) / (1.0 - sin)
    a, b, d = s1 + shift, s2 + shift, s3 + shift
    lade = (a + b + d) - np.cbrt((27.0 + eta) * a * b * d)
    return np.maximum(lade, -d)


def hoek_brown(s1: Array, s2: Array, s3: Array, p: StrengthParameters) -> Array:
    """Generalised Hoek-Brown: F = s1 - s3 - sigma_ci (m_b s3/sigma_ci + s)^a [MPa].

    States with m_b s3/sigma_ci + s <= 0 (beyond the Hoek-Brown tensile strength
    s sigma_ci / m_b) count as failed: F = max(s1 - s3 - ..., -s3 - s sigma_ci/m_b).

    References
    ----------
    Hoek, E., Carranza-Torres, C. & Corkum, B. (2002) Hoek-Brown failure criterion - 2002
    edition, Proc. NARMS-TAC, eq. 1.
    """
    del s2
    sci = np.asarray(p.ucs, dtype=float)
    mb, s, a = (np.asarray(v, dtype=float) for v in (p.hb_mb, p.hb_s, p.hb_a))
    inner = mb * s3 / sci + s
    shear = s1 - s3 - sci * np.maximum(inner, 0.0) ** a
    tension = -s3 - s * sci / mb
    return np.maximum(shear, tension)


def hoek_brown_rock_mass(
    *, mi: ArrayLike, gsi: ArrayLike, disturbance: ArrayLike = 0.0
) -> tuple[Array, Array, Array]:
    """Hoek-Brown rock-mass constants (m_b, s, a) from m_i, GSI and disturbance D [1].

    m_b = m_i exp((GSI - 100)/(28 - 14 D)), s = exp((GSI - 100)/(9 - 3 D)),
    a = 1/2 + (exp(-GSI/15) - exp(-20/3))/6. GSI = 100 gives the intact values m_i, 1, 1/2.

    References
    ----------
    Hoek, Carranza-Torres & Corkum (2002), eqs. 2-4.
    """
    m = np.asarray(mi, dtype=float)
    g = np.asarray(gsi, dtype=float)
    d = np.asarray(disturbance, dtype=float)
    mb = m * np.exp((g - 100.0) / (28.0 - 14.0 * d))
    s = np.exp((g - 100.0) / (9.0 - 3.0 * d))
    a = 0.5 + (np.exp(-g / 15.0) - np.exp(-20.0 / 3.0)) / 6.0
    return mb, s, a


def tensile_cutoff(s3: ArrayLike, tensile_strength: ArrayLike) -> Array:
    """Tensile cut-off: F = -s3 - T0 [MPa]; the cut-off is passed where F > 0 (tension beyond
    T0; with T0 = 0 any tension, while the zero radial stress of a producing wall is not)."""
    return -np.asarray(s3, dtype=float) - np.asarray(tensile_strength, dtype=float)


#: Criteria by the names a scenario uses.
CRITERIA: dict[str, Callable[[Array, Array, Array, StrengthParameters], Array]] = {
    "mohr-coulomb": mohr_coulomb,
    "drucker-prager-circumscribed": drucker_prager("circumscribed"),
    "drucker-prager-middle": drucker_prager("middle"),
    "drucker-prager-inscribed": drucker_prager("inscribed"),
    "mogi-coulomb": mogi_coulomb,
    "modified-lade": modified_lade,
    "hoek-brown": hoek_brown,
}
