"""Elastoplastic cylindrical cavity with steady radial inflow: perforation-tunnel collapse.

The model
---------
A long cylindrical cavity (perforation tunnel or open hole) of wall radius ``r_w`` [m] in plane
strain, loaded by an equivalent hydrostatic in-plane total stress ``sigma0`` [MPa]. The caller
takes ``sigma0 = (3 sigma1 - sigma3)/2`` from the in-plane principal far-field stresses, so that
the elastic hoop stress at the wall equals the Kirsch maximum and this limit state meets yield
onset at first yield. The pore pressure is held at ``p_r`` on a drainage radius ``r_e`` and is
``p_w`` at the wall, with steady radial Darcy flow and unchanged permeability in between::

    p(r) = p_w + G ln(r/r_w)   (r_w <= r <= r_e),   p(r) = p_r   (r > r_e),
    G = r dp/dr = (p_r - p_w) / ln(r_e/r_w)                                      [MPa]

Signs, units and symbols follow :mod:`risk.conventions` (compression positive, MPa, m, rad).
Yield uses Terzaghi's effective stress ``s' = s - p``; elastic strains use Biot's
``s'' = s - alpha p`` (measured from the undisturbed state ``sigma0``, ``p_r``). The radial
effective stress at the producing wall is zero. Displacement ``u`` is positive inward, strains
are positive in compression: ``e_theta = u/r``, ``e_r = du/dr``.

Derivation (summary; each piece is checked against an ODE integration in the tests)
---------------------------------------------------------------------------------
*Equilibrium.* For total stresses ``d s_r/dr = (s_theta - s_r)/r`` (the sign is the same for
compression or tension positive, the equation being linear and homogeneous). With
``s' = s - p`` and ``s_theta - s_r = s'_theta - s'_r``::

    d s'_r/dr = (s'_theta - s'_r)/r - dp/dr

so the seepage force ``dp/dr > 0`` (pressure rising away from the wall) lowers the effective
radial stress near the wall (Risnes, Bratli & Horsrud 1982).

*Plastic zone* ``r_w <= r <= R``, Mohr-Coulomb ``s'_theta = UCS + q s'_r`` with
``q = (1 + sin phi)/(1 - sin phi)``, ``n = q - 1``: the equation is linear in ``s'_r`` and with
``s'_r(r_w) = 0``::

    s'_r = (UCS - G)/n [(r/r_w)^n - 1]                        (r <= r_e)
    s'_r = (s'_r(r_e) + UCS/n)(r/r_e)^n - UCS/n               (r_e < r <= R)

Without flow this is the classic solution (Salencon 1969; Hoek's printing of Duncan Fama 1993).
Hoek-Brown ``s'_theta - s'_r = sigma_ci y`` with ``y = (m_b s'_r/sigma_ci + s)^a`` gives
``d s'_r/d ln r = sigma_ci y - G``, separable: ``ln(r/r_w) = T(y)`` with
``T(y) = (1/(m_b a)) int_{s^a}^{y} v^k/(v - g) dv``, ``k = 1/a - 1``, ``g = G/sigma_ci``. For
``a = 1/2`` this is ``T = (2/m_b)[y - sqrt(s) + g ln((y - g)/(sqrt(s) - g))]`` (closed form,
derived; with ``g = 0`` it is Carranza-Torres & Fairhurst 1999). For other ``a`` the integral is
evaluated by 16-point Gauss-Legendre quadrature in ``z = ln(v - g)`` (the integrand
``(g + e^z)^k`` is smooth; relative error below 1e-12 up to ``g = 0.99999 s^a``, checked against
adaptive quadrature). Beyond ``r_e`` (``g = 0``) ``T`` is closed-form for any ``a``. All of this
requires ``g < s^a``, i.e. a seepage-stable wall (below).

*Elastic zone* ``r >= R``. Plane-strain poroelasticity with a radial pressure change
``dp(r) = p(r) - p_r`` (zero beyond ``r_e``) is the thermoelastic problem; the solution that
vanishes at infinity and carries the total radial stress ``s_R`` at ``R`` is (derived, the
thermoelastic analogy; Timoshenko & Goodier 1970, thermal stresses in a long cylinder)::

    s_r - sigma0 = -B(r)/r^2,   s_theta - sigma0 = B(r)/r^2 + A dp(r),
    u(R) = (1 + nu)(sigma0 - s_R) R/E,
    B(r) = (sigma0 - s_R) R^2 - A int_R^r rho dp(rho) d rho,   A = alpha (1 - 2 nu)/(1 - nu)

At the wall of an elastic cavity this is the hoop stress ``2 sigma0 - p_w - A (p_r - p_w)`` of
docs/derivations.md, sec. 1, whatever the pressure profile.

*Elastic-plastic radius.* Continuity of ``s_r`` and ``p`` at ``R`` and the yield condition on
the elastic side give ``s'_theta(R) - s'_r(R) = 2(sigma0 - p_R) - A(p_r - p_R) - 2 s'_r(R)``. For
Mohr-Coulomb with ``R <= r_e`` this is ``a1 x + b1 ln x = c1`` in ``x = (R/r_w)^n`` (derived),
solved in closed form with the Wright omega function ``w + ln w = const``
(``scipy.special.wrightomega``, then two Newton steps); with ``R > r_e`` the plastic radius is
explicit. For Hoek-Brown it is one vectorised safeguarded-Newton root in ``y(R)``, bracketed
below by the value without flow and above by the root without the seepage term (derived);
``R > r_e`` is recognised beforehand (``T(y_nf) > ln(r_e/r_w)``, with ``y_nf`` the interface
value when ``p(R) = p_r``).

*Kinematics.* Plastic potential ``s'_theta - K_psi s'_r``, ``K_psi = (1 + sin psi)/(1 - sin psi)``
(non-associated, psi the dilation angle; for Hoek-Brown the same linear potential, as in
Carranza-Torres 2004). The plastic strains then satisfy ``e^p_r + K_psi e^p_theta = 0`` and the
total displacement obeys ``d(r^K_psi u)/dr = r^K_psi (e^e_r + K_psi e^e_theta)``, integrated in
closed form from ``u(R)`` (Mohr-Coulomb; for Hoek-Brown the one remaining stress integral
``int r^K_psi s'_r dr`` by 24-point Gauss-Legendre quadrature in z, relative error of the wall
plastic strain below 1e-10 for strains below 1, checked against a 48-point rule; it is not
needed for psi = 0). This assumes monotonic loading: the plastic zone only grows as the
drawdown grows.

Decisions on the open points (docs/derivations.md, sec. 5)
----------------------------------------------------------
*Elastic strain in the plastic zone:* Hooke's law applied to the actual stress change
(``e^e = C^-1 (s'' - s''_0)``, plane strain, Biot effective stress), not the frozen
elastic-plastic-boundary strain of Brown et al. (1983). This is the small-strain choice of
Salencon (1969) (and, to our reading, of Carranza-Torres 2004); with psi = 0 and no flow it
reproduces exactly the wall displacement of Duncan Fama (1993) as printed by Hoek (tested).

*Plastic-strain measure:* ``critical_plastic_strain`` refers to the **wall plastic hoop strain**
``e^p_theta(r_w) = u_w/r_w - e^e_theta(r_w)`` [1] (compressive, positive): the part of the wall
convergence ``u_w/r_w`` not recovered on unloading. It is the largest plastic normal strain in
the cavity, needs no choice of invariant, and any other common measure at the wall is a fixed
multiple of it through the flow rule: the maximum plastic shear strain
``g^p = e^p_theta - e^p_r = (1 + K_psi) e^p_theta`` and the von Mises equivalent plastic strain
``sqrt(2/3 e^p:e^p) = sqrt(2/3 (1 + K_psi^2)) e^p_theta`` (plane strain, ``e^p_z = 0``). A
calibration made with one of those measures converts with that factor.

*Seepage instability:* at a yielded wall ``s'_r = 0`` and ``s'_theta = UCS`` (Hoek-Brown:
``sigma_ci s^a``), so ``d s'_r/dr = (UCS - G)/r_w``: when ``G = r_w dp/dr(r_w) >= UCS`` the radial
effective stress behind the wall turns tensile and, with the log profile, the whole plastic zone
has ``s'_r <= 0``: no plastic equilibrium exists and the wall is unstable (the same tensile
mechanism as the hemispherical sand arch of Bratli & Risnes 1981; at a spherical tip the same
argument gives ``r dp/dr >= 2 UCS``). Because
``G = (p_r - p_w)/ln(r_e/r_w)`` the threshold is the wall pressure
``p_r - UCS ln(r_e/r_w)`` (:func:`seepage_limit_wall_pressure`). With ``r_e >= e r_w`` and
``sigma0 >= p_r`` a wall at that gradient is always yielded (derived: the elastic hoop is at
least ``2(sigma0 - p_r) + G ln(r_e/r_w)``); :func:`collapse_wall_pressure` does not rely on
it. Results of seepage-unstable states are ``nan``, flagged by ``seepage_unstable``.

*Plane strain:* the plastic potential involves only ``s'_r`` and ``s'_theta``, so ``e^p_z = 0``,
and the axial effective stress at the wall is ``s_z0 - p_w + nu (ds_r + ds_theta) - alpha(1-2nu)
(p_r - p_w)`` (``ds`` the total-stress changes at the wall). Where it exceeds the hoop stress at
a yielded wall the axial stress is no longer intermediate and the two-dimensional solution does
not hold: ``axial_exceeds_hoop`` flags it.

Limitations (state them in the memo): small strain; elastic-perfectly plastic (no softening);
path-independent (monotonic) loading; permeability unchanged by yield; steady flow with a fixed
drainage radius; the anisotropic far field replaced by an equivalent hydrostatic one (the
deviatoric part of the far field is not carried into the plastic zone); the friction angle must
not be tiny (the formulas divide by ``q - 1``; keep phi >= 1 degree).

References
----------
Salencon, J. (1969) Contraction quasi-statique d'une cavite a symetrie spherique ou cylindrique
dans un milieu elastoplastique. Annales des Ponts et Chaussees 4, 231-236.
Duncan Fama, M.E. (1993) Numerical modelling of yield zones in weak rock. In Hudson, J.A. (ed.)
Comprehensive Rock Engineering, vol. 2, 49-75. Pergamon; as printed by Hoek, E., Practical Rock
Engineering, chapter "Tunnels in weak rock" (quoted from memory).
Brown, E.T., Bray, J.W., Ladanyi, B. & Hoek, E. (1983) Ground response curves for rock tunnels.
J. Geotech. Eng. 109(1), 15-39.
Carranza-Torres, C. & Fairhurst, C. (1999) The elasto-plastic response of underground
excavations in rock masses that satisfy the Hoek-Brown failure criterion. Int. J. Rock Mech.
Min. Sci. 36(6), 777-809.
Carranza-Torres, C. (2004) Elasto-plastic solution of tunnel problems using the generalized form
of the Hoek-Brown failure criterion. Int. J. Rock Mech. Min. Sci. 41(S1), 629-639.
Risnes, R., Bratli, R.K. & Horsrud, P. (1982) Sand stresses around a wellbore. SPE Journal
22(6), 883-898.
Bratli, R.K. & Risnes, R. (1981) Stability and failure of sand arches. SPE Journal 21(2),
236-248.
Timoshenko, S.P. & Goodier, J.N. (1970) Theory of Elasticity, 3rd ed., McGraw-Hill (thermal
stresses).
Press, W.H., Teukolsky, S.A., Vetterling, W.T. & Flannery, B.P. (2007) Numerical Recipes, 3rd
ed., Cambridge University Press, sec. 9.4 (Newton-Raphson with bracketing).
Hoek, E., Carranza-Torres, C. & Corkum, B. (2002) Hoek-Brown failure criterion - 2002 edition.
Proc. NARMS-TAC 2002, Toronto, 267-273.
Lawrence, P.W., Corless, R.M. & Jeffrey, D.J. (2012) Algorithm 917: complex double-precision
evaluation of the Wright omega function. ACM Trans. Math. Softw. 38(3), 20.
Chandrupatla, T.R. (1997) A new hybrid quadratic/bisection algorithm for finding the zero of a
nonlinear function without using derivatives. Adv. Eng. Softw. 28(3), 145-149.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, Final, NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.optimize import elementwise
from scipy.special import wrightomega

from risk.mechanics.criteria import hoek_brown_rock_mass, passive_coefficient

Array = NDArray[np.float64]
Mask = NDArray[np.bool_]

__all__ = [
    "CAVITY_CRITERIA",
    "CavityResponse",
    "mohr_coulomb_cavity",
    "hoek_brown_cavity",
    "collapse_wall_pressure",
    "seepage_limit_wall_pressure",
    "hoek_brown_rock_mass",
]

#: Strength criteria of the cavity model, by the names a scenario uses.
CAVITY_CRITERIA: Final = ("mohr-coulomb", "hoek-brown")

# Gauss-Legendre rules on [-1, 1] for the Hoek-Brown integrals: 16 nodes for ln(r/r_w) at a
# given y (a != 1/2; relative error below 1e-12 up to g = 0.99999 s^a, checked against
# adaptive quadrature), 24 for the displacement integral (its integrand carries the steep
# factor (r/r_w)^(K_psi + 1)), with the matrix that maps integrand values at the nodes to the
# integral of their interpolating polynomial from -1 to each node (spectral cumulative
# integration).
_GL_ORDER: Final = 16
_GL_X, _GL_W = np.polynomial.legendre.leggauss(_GL_ORDER)
_GLD_ORDER: Final = 24
_GLD_X, _GLD_W = np.polynomial.legendre.leggauss(_GLD_ORDER)
_CHUNK: Final = 8192       # rows per block of the (samples x nodes) displacement integrals


def _cumulative_matrix(x: Array) -> Array:
    leg = np.polynomial.legendre
    n = x.size
    vander = leg.legvander(x, n - 1)
    integ = np.empty((n, n))
    for j in range(n):
        unit = np.zeros(n)
        unit[j] = 1.0
        integ[:, j] = leg.legval(x, leg.legint(unit, lbnd=-1.0))
    return np.asarray(integ @ np.linalg.inv(vander), dtype=float)


_GLD_CUMULATIVE: Final = _cumulative_matrix(_GLD_X)

# Root tolerances: inner roots in the dimensionless Hoek-Brown variable y, outer roots in the
# wall pressure [MPa].
_TOL_Y: Final = {"xatol": 0.0, "xrtol": 1e-14, "fatol": 0.0, "frtol": 0.0}
_TOL_P: Final = {"xatol": 1e-9, "xrtol": 1e-12, "fatol": 0.0, "frtol": 0.0}
_SEEPAGE_STEP: Final = 1e-9     # [MPa]


@dataclass(frozen=True)
class CavityResponse:
    """State of the cavity at one wall pressure (arrays of the broadcast input shape).

    Attributes
    ----------
    plastic_radius : ndarray
        Radius R of the elastic-plastic boundary [m]; ``r_w`` where the wall is elastic, ``nan``
        where ``seepage_unstable``.
    yielded : ndarray of bool
        The wall has reached the yield condition.
    seepage_unstable : ndarray of bool
        Yielded wall with ``r_w dp/dr >= UCS`` at the wall: no plastic equilibrium (module
        docstring).
    plastic_zone_beyond_drainage : ndarray of bool
        R exceeds the drainage radius r_e (the plastic zone reaches the constant-pressure region).
    wall_displacement : ndarray
        Radial displacement of the wall, positive inward (convergence) [m].
    wall_plastic_strain : ndarray
        Wall plastic hoop strain e^p_theta(r_w), compression positive [1]; 0 where elastic.
    wall_hoop_stress_eff : ndarray
        Terzaghi effective hoop stress at the wall [MPa] (the yield value where yielded).
    wall_axial_stress_eff : ndarray
        Terzaghi effective axial stress at the wall in plane strain [MPa]; ``nan`` when no
        far-field axial stress was given.
    axial_exceeds_hoop : ndarray of bool
        Yielded wall whose axial effective stress exceeds the hoop one: the plane-strain
        solution (axial stress intermediate) does not hold there.
    """

    plastic_radius: Array
    yielded: Mask
    seepage_unstable: Mask
    plastic_zone_beyond_drainage: Mask
    wall_displacement: Array
    wall_plastic_strain: Array
    wall_hoop_stress_eff: Array
    wall_axial_stress_eff: Array
    axial_exceeds_hoop: Mask


class _State(NamedTuple):
    """Dimensionless cavity state on flat arrays (internal)."""

    rho: Array          # R / r_w [1]
    yielded: Mask
    unstable: Mask
    beyond: Mask
    u_over_rw: Array    # u_w / r_w [1]
    eps_p: Array        # wall plastic hoop strain [1]
    hoop_el: Array      # elastic effective hoop stress at the wall [MPa]
    hoop_wall: Array    # actual effective hoop stress at the wall [MPa]


# ----------------------------------------------------------------------------------------------
# input handling
# ----------------------------------------------------------------------------------------------

def _broadcast(values: dict[str, ArrayLike]) -> tuple[tuple[int, ...], dict[str, Array]]:
    arrays = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in values.values()))
    shape = arrays[0].shape if arrays else ()
    return shape, {k: np.ascontiguousarray(a).ravel() for k, a in zip(values, arrays, strict=True)}


def _require(ok: ArrayLike, what: str, found: ArrayLike) -> None:
    good = np.asarray(ok, dtype=bool)
    if not np.all(good):
        bad = np.asarray(found, dtype=float)[~good] if np.ndim(found) else found
        sample = np.ravel(bad)[:3]
        raise ValueError(f"{what}; found {sample.tolist()}")


def _check_common(v: dict[str, Array], *, with_wall_pressure: bool) -> None:
    _require(v["r_w"] > 0.0, "r_w must be > 0 [m]", v["r_w"])
    _require(v["r_e"] > v["r_w"], "r_e must exceed r_w [m]", v["r_e"])
    _require(v["young_modulus"] > 0.0, "young_modulus must be > 0 [MPa]", v["young_modulus"])
    nu = v["poisson_ratio"]
    _require((nu >= 0.0) & (nu < 0.5), "poisson_ratio must lie in [0, 0.5)", nu)
    b = v["biot"]
    _require((b >= 0.0) & (b <= 1.0), "biot must lie in [0, 1]", b)
    psi = v["dilation_angle"]
    _require((psi >= 0.0) & (psi < 0.5 * np.pi), "dilation_angle must lie in [0, pi/2) [rad]",
             psi)
    if with_wall_pressure:
        _require(v["p_w"] <= v["p_r"], "p_w must not exceed p_r (producing cavity) [MPa]",
                 v["p_w"])


def _check_mc(v: dict[str, Array]) -> None:
    _require(v["ucs"] > 0.0, "ucs must be > 0 [MPa]", v["ucs"])
    phi = v["friction_angle"]
    _require((phi > 0.0) & (phi < 0.5 * np.pi), "friction_angle must lie in (0, pi/2) [rad]", phi)
    _require(v["dilation_angle"] <= phi, "dilation_angle must not exceed friction_angle [rad]",
             v["dilation_angle"])


def _check_hb(v: dict[str, Array]) -> None:
    _require(v["sigma_ci"] > 0.0, "sigma_ci must be > 0 [MPa]", v["sigma_ci"])
    _require(v["mb"] > 0.0, "mb must be > 0 [1]", v["mb"])
    _require((v["s"] > 0.0) & (v["s"] <= 1.0), "s must lie in (0, 1] [1]", v["s"])
    _require((v["a"] > 0.0) & (v["a"] < 1.0), "a must lie in (0, 1) [1]", v["a"])


def _flow_coefficient(psi: Array) -> Array:
    """K_psi = (1 + sin psi)/(1 - sin psi) [1]."""
    sp = np.sin(psi)
    return (1.0 + sp) / (1.0 - sp)


# ----------------------------------------------------------------------------------------------
# shared kinematics
# ----------------------------------------------------------------------------------------------

def _wall_kinematics(
    *, rho: Array, rho_a: Array, s_r: Array, k1_integral: Array, big_g: Array, log_e: Array,
    drawdown: Array, s0: Array, m: Array, e_mod: Array, nu: Array, biot: Array,
    hoop_wall: Array, rho_a_k1: Array | None = None,
) -> tuple[Array, Array]:
    """Wall convergence u_w/r_w and wall plastic hoop strain [1] (derived, module docstring).

    ``rho = R/r_w``, ``rho_a = min(R, r_e)/r_w``, ``s_r`` the effective radial stress at R,
    ``k1_integral = int_1^rho x^m s'_r(x) dx`` [MPa], ``m = K_psi``. Uses the identity
    ``d(x^(m+1) s'_r)/dx = x^m (m s'_r + s'_theta - G [x <= rho_e])`` to remove the hoop-stress
    integral, and integrates ``d(x^m u)/dx = x^m (e^e_r + m e^e_theta)`` from R to the wall.
    ``rho_a_k1``: ``rho_a**(m + 1)`` when the caller has it already (the same value).
    """
    k1 = m + 1.0
    rho_k1 = rho**k1
    if rho_a_k1 is None:
        rho_a_k1 = rho_a**k1
    log_a = np.log(rho_a)
    k3 = (rho_k1 - 1.0) / k1                                   # int_1^rho x^m dx
    k3a = (rho_a_k1 - 1.0) / k1                                # int_1^rho_a x^m dx
    # int_1^rho_a x^m dp dx with dp = G ln(x/rho_e)
    f_a = rho_a_k1 * ((log_a - log_e) / k1 - 1.0 / k1**2)
    f_1 = -log_e / k1 - 1.0 / k1**2
    k4 = big_g * (f_a - f_1)
    dp_r = big_g * (log_a - log_e)                             # p(R) - p_r
    hoop_integral = rho_k1 * s_r - m * k1_integral + big_g * k3a
    c_r = (1.0 - nu) - nu * m
    c_t = m * (1.0 - nu) - nu
    scale = (1.0 + nu) / e_mod
    elastic_integral = scale * (c_r * k1_integral + c_t * hoop_integral
                                - k1 * (1.0 - 2.0 * nu) * (s0 * k3 - (1.0 - biot) * k4))
    u_r = scale * (s0 - s_r - dp_r) * rho                      # u(R)/r_w
    u_w = rho**m * u_r - elastic_integral
    eps_e = scale * ((1.0 - nu) * hoop_wall - (1.0 - 2.0 * nu) * (s0 + (1.0 - biot) * drawdown))
    return u_w, u_w - eps_e


def _elastic_wall(s0: Array, drawdown: Array, big_a: Array) -> Array:
    """Elastic effective hoop stress at the wall, 2(sigma0 - p_w) - A(p_r - p_w) [MPa]."""
    return 2.0 * s0 + (2.0 - big_a) * drawdown


def _finish(
    *, yielded: Mask, unstable: Mask, beyond: Mask, rho: Array, u_w: Array, eps_p: Array,
    hoop_el: Array, hoop_yield: Array, s0: Array, drawdown: Array, e_mod: Array, nu: Array,
) -> _State:
    elastic_u = (1.0 + nu) / e_mod * (s0 + drawdown)
    rho = np.where(yielded, rho, 1.0)
    u_w = np.where(yielded, u_w, elastic_u)
    eps_p = np.where(yielded, eps_p, 0.0)
    rho = np.where(unstable, np.nan, rho)
    u_w = np.where(unstable, np.nan, u_w)
    eps_p = np.where(unstable, np.nan, eps_p)
    hoop_wall = np.where(yielded, hoop_yield, hoop_el)
    return _State(rho, yielded, unstable, beyond & ~unstable, u_w, eps_p, hoop_el, hoop_wall)


# ----------------------------------------------------------------------------------------------
# Mohr-Coulomb
# ----------------------------------------------------------------------------------------------

def _mc_invariants(sigma0: Array, p_r: Array, r_w: Array, r_e: Array, ucs: Array, q: Array,
                   m: Array, nu: Array, biot: Array) -> tuple[Array, ...]:
    """The terms of :func:`_mc_state` that do not depend on the wall pressure (computed once
    per root search instead of once per iterate; the same values)."""
    with np.errstate(all="ignore"):
        log_e = np.log(r_e / r_w)
        s0 = sigma0 - p_r
        big_a = biot * (1.0 - 2.0 * nu) / (1.0 - nu)
        n = q - 1.0
        rho_e = r_e / r_w
        x_e = np.exp(n * log_e)                                   # rho_e^n
        s_nf = (2.0 * s0 - ucs) / (1.0 + q)                       # s'_r(R) when R > r_e
        k1, kn = m + 1.0, m + n + 1.0
        return log_e, s0, big_a, n, rho_e, x_e, s_nf, k1, kn, rho_e**kn, rho_e**k1


def _mc_state(
    sigma0: Array, p_r: Array, p_w: Array, r_w: Array, r_e: Array, ucs: Array, q: Array,
    m: Array, e_mod: Array, nu: Array, biot: Array, *, invariants: tuple[Array, ...] | None = None,
    lean: bool = False,
) -> Any:
    """Closed-form Mohr-Coulomb cavity with seepage (module docstring; derived).

    ``invariants``: :func:`_mc_invariants` of the same inputs, when the caller keeps them.
    ``lean``: return only (yielded, unstable, raw wall plastic strain, elastic wall hoop
    stress), all that the collapse margin needs, instead of the :class:`_State`."""
    with np.errstate(all="ignore"):
        if invariants is None:
            invariants = _mc_invariants(sigma0, p_r, r_w, r_e, ucs, q, m, nu, biot)
        log_e, s0, big_a, n, rho_e, x_e, s_nf, k1, kn, rho_e_kn, rho_e_k1 = invariants
        drawdown = p_r - p_w
        big_g = drawdown / log_e
        hoop_el = _elastic_wall(s0, drawdown, big_a)
        yielded = hoop_el > ucs
        unstable = yielded & (big_g >= ucs)

        beta = (ucs - big_g) / n
        s_e = beta * (x_e - 1.0)                                  # s'_r at r_e (log profile)
        beyond = yielded & ~unstable & (s_e < s_nf)

        # R <= r_e:  a1 x + b1 ln x = c1 with x = (R/r_w)^n
        a1 = (1.0 + q) * (ucs - big_g)
        b1 = (2.0 - big_a) * big_g
        c1 = n * (hoop_el - ucs) + a1
        tiny = b1 <= 1e-10 * a1
        safe_b1 = np.where(tiny, 1.0, b1)
        arg = c1 / safe_b1 + np.log(a1 / safe_b1)
        # omega only where the plastic radius inside r_e uses it (a scalar function applied
        # element by element, so the same values on a subset; about 70 ns an element)
        use = yielded & ~tiny
        if np.all(use):
            omega = wrightomega(arg)
        else:
            omega = np.ones_like(arg)
            if np.any(use):
                omega[use] = wrightomega(arg[use])
        x = np.where(tiny, c1 / a1, safe_b1 / a1 * omega)
        for _ in range(2):                                        # Newton polish
            x = x - (a1 * x + b1 * np.log(x) - c1) / (a1 + b1 / x)
        x = np.maximum(x, 1.0)
        rho_in = x ** (1.0 / n)

        # R > r_e: explicit
        ratio = (s_nf + ucs / n) / (s_e + ucs / n)
        rho_out = rho_e * ratio ** (1.0 / n)

        rho = np.where(beyond, rho_out, np.where(yielded, rho_in, 1.0))
        rho_a = np.minimum(rho, rho_e)
        s_r = np.where(beyond, s_nf, beta * (rho**n - 1.0))
        # int_1^rho x^m s'_r dx, zone A then zone B
        rho_a_k1 = rho_a**k1
        k1_a = beta * ((rho_a**kn - 1.0) / kn - (rho_a_k1 - 1.0) / k1)
        rho_b = np.where(beyond, rho, rho_e)
        c_b = s_e + ucs / n
        k1_b = (c_b * (rho_b**kn - rho_e_kn) / (kn * x_e)
                - ucs / n * (rho_b**k1 - rho_e_k1) / k1)
        k1_int = k1_a + np.where(beyond, k1_b, 0.0)
        u_w, eps_p = _wall_kinematics(
            rho=rho, rho_a=rho_a, s_r=s_r, k1_integral=k1_int, big_g=big_g, log_e=log_e,
            drawdown=drawdown, s0=s0, m=m, e_mod=e_mod, nu=nu, biot=biot, hoop_wall=ucs,
            rho_a_k1=rho_a_k1)
        if lean:
            return yielded, unstable, eps_p, hoop_el
        return _finish(yielded=yielded, unstable=unstable, beyond=beyond, rho=rho, u_w=u_w,
                       eps_p=eps_p, hoop_el=hoop_el, hoop_yield=ucs, s0=s0, drawdown=drawdown,
                       e_mod=e_mod, nu=nu)


# ----------------------------------------------------------------------------------------------
# Hoek-Brown
# ----------------------------------------------------------------------------------------------

def _uniform(x: Array) -> Array | float:
    """A float when every element is equal, else the array."""
    flat = np.ravel(x)
    return float(flat[0]) if flat.size and np.all(flat == flat[0]) else x


def _pow(x: Array, e: Array | float) -> Array:
    """x**e; a scalar exponent only for the fast special cases (numpy's general scalar-exponent
    power is slower than the elementwise one)."""
    u = _uniform(np.asarray(e, dtype=float))
    if isinstance(u, float) and u in (0.5, 1.0, 2.0):
        return np.asarray(x**u, dtype=float)
    return np.asarray(np.power(x, np.broadcast_to(e, np.broadcast(x, e).shape)), dtype=float)


def _hb_radial(y: Array, sci: Array, mb: Array, s: Array, a: Array | float) -> Array:
    """Effective radial stress s'_r [MPa] from y = (m_b s'_r/sigma_ci + s)^a."""
    return np.asarray(sci * (_pow(y, 1.0 / np.asarray(a)) - s) / mb, dtype=float)


def _hb_log_radius(y: Array, y_w: Array, g: Array, mb: Array, a: Array) -> Array:
    """ln(r/r_w) at which the plastic solution with log-profile flow reaches y [1].

    ``T(y) = (1/(m_b a)) int_{y_w}^{y} v^k/(v - g) dv``, ``k = 1/a - 1`` (derived); closed
    form for a = 1/2, Gauss-Legendre in ``z = ln(v - g)`` otherwise. Requires y_w > g.
    """
    lr = np.log((y - g) / (y_w - g))
    half = a == 0.5
    out = 2.0 / mb * (y - y_w + g * lr)
    if not np.all(half):
        k = 1.0 / a - 1.0
        acc = np.zeros(np.broadcast(y, y_w, g, a).shape)
        for xj, wj in zip(_GL_X, _GL_W, strict=True):
            v = g + (y_w - g) * np.exp(lr * (0.5 * (xj + 1.0)))
            acc += wj * _pow(v, k)
        general = 0.5 * lr * acc / (mb * a)
        out = np.where(half, out, general)
    return np.asarray(out, dtype=float)


def _hb_radial_integral_a(
    y_a: Array, y_w: Array, g: Array, sci: Array, mb: Array, s: Array, a: Array, m: Array,
) -> Array:
    """int_1^{rho_a} x^m s'_r(x) dx [MPa] over the log-profile zone (Gauss-Legendre in z).

    With ``x = e^T``, ``dT = v^k/(m_b a) dz`` and ``v = g + e^z``: the integrand
    ``e^((m+1) T) s'_r(v) v^k/(m_b a)`` is smooth in z. ``T`` at the nodes is closed-form for
    a = 1/2 and the spectral cumulative integral of ``v^k/(m_b a)`` otherwise. Blocks of rows
    keep the (samples x nodes) temporaries small.
    """
    out = np.empty(y_a.shape)
    xs = 0.5 * (_GLD_X + 1.0)[None, :]
    for start in range(0, y_a.size, _CHUNK):
        b = slice(start, start + _CHUNK)
        lr = np.log((y_a[b] - g[b]) / (y_w[b] - g[b]))[:, None]
        g2, yw2, mb2 = g[b, None], y_w[b, None], mb[b, None]
        a2 = a[b, None]
        v = g2 + (yw2 - g2) * np.exp(lr * xs)
        if np.all(a2 == 0.5):
            f = v / (0.5 * mb2)
            t = 2.0 / mb2 * (v - yw2 + g2 * lr * xs)
        else:
            f = _pow(v, 1.0 / a2 - 1.0) / (mb2 * a2)                    # dT/dz
            t_general = 0.5 * lr * (f @ _GLD_CUMULATIVE.T)
            t = np.where(a2 == 0.5, 2.0 / mb2 * (v - yw2 + g2 * lr * xs), t_general)
        sig = _hb_radial(v, sci[b, None], mb2, s[b, None], a2)
        out[b] = 0.5 * lr[:, 0] * ((np.exp((m[b, None] + 1.0) * t) * sig * f) @ _GLD_W)
    return out


def _hb_radial_integral_b(
    y_e: Array, t_b: Array, rho_e: Array, sci: Array, mb: Array, s: Array, a: Array, m: Array,
) -> Array:
    """int_{rho_e}^{rho} x^m s'_r(x) dx [MPa] beyond the drainage radius (no flow).

    In ``t = ln(r/r_e)``, ``y^k = y_e^k + m_b a k t`` (derived), Gauss-Legendre on [0, t_b].
    """
    k = (1.0 / a - 1.0)[:, None]
    t = 0.5 * t_b[:, None] * (_GLD_X + 1.0)[None, :]
    v = _pow(_pow(y_e[:, None], k) + (mb * a)[:, None] * k * t, 1.0 / k)
    sig = _hb_radial(v, sci[:, None], mb[:, None], s[:, None], a[:, None])
    integral = 0.5 * t_b * ((np.exp((m[:, None] + 1.0) * t) * sig) @ _GLD_W)
    return np.asarray(rho_e ** (m + 1.0) * integral, dtype=float)


def _hb_match_flow(y: Array, hoop_el: Array, two_minus_a_g: Array, y_w: Array, g: Array,
                   sci: Array, mb: Array, s: Array, a: Array) -> tuple[Array, Array]:
    """Elastic-side yield mismatch at R <= r_e as a function of y(R) [MPa] (decreasing), and
    its derivative in y (``dT/dy = y^k/((y - g) m_b a)``, ``d s'_r/dy = sigma_ci y^k/(m_b a)``,
    ``k = 1/a - 1``)."""
    t = _hb_log_radius(y, y_w, g, mb, a)
    value = hoop_el - two_minus_a_g * t - 2.0 * _hb_radial(y, sci, mb, s, a) - sci * y
    yk = _pow(y, 1.0 / a - 1.0) / (mb * a)
    slope = -yk * (two_minus_a_g / (y - g) + 2.0 * sci) - sci
    return value, slope


def _newton_decreasing(fun: Callable[..., tuple[Array, Array]], lo: Array, hi: Array,
                       args: tuple[Array, ...], *, rtol: float = 1e-14, maxiter: int = 60
                       ) -> Array:
    """Root of a decreasing function in [lo, hi] (f(lo) >= 0 >= f(hi)), vectorised.

    Newton steps from ``hi``, replaced by bisection whenever a step leaves the current bracket
    (safeguarded Newton; Press et al. 2007, Numerical Recipes, 3rd ed., sec. 9.4). ``fun``
    returns the value and the derivative. Only unconverged elements are evaluated.
    """
    x = hi.copy()
    lo, hi = lo.copy(), hi.copy()
    active = np.arange(x.size)
    for _ in range(maxiter):
        if active.size == 0:
            break
        xa, la, ha = x[active], lo[active], hi[active]
        f, df = fun(xa, *(v[active] for v in args))
        la = np.where(f > 0.0, xa, la)
        ha = np.where(f < 0.0, xa, ha)
        xn = xa - f / df
        outside = ~((xn > la) & (xn < ha))
        xn = np.where(outside, 0.5 * (la + ha), xn)
        done = ((np.abs(xn - xa) <= rtol * np.abs(xn)) | (f == 0.0)
                | (ha - la <= rtol * np.abs(ha)))
        x[active] = np.where(f == 0.0, xa, xn)
        lo[active], hi[active] = la, ha
        active = active[~done]
    return x


def _hb_match_noflow(y: Array, s0: Array, sci: Array, mb: Array, s: Array, a: Array) -> Array:
    """Elastic-side yield mismatch at R > r_e (p(R) = p_r) [MPa] (decreasing in y)."""
    return 2.0 * s0 - 2.0 * _hb_radial(y, sci, mb, s, a) - sci * y


def _hb_upper_bracket(y_lo: Array, hoop_el: Array, sci: Array, mb: Array, s: Array,
                      a: Array) -> Array:
    """An upper bound of y(R) for R <= r_e: the root of the matching without its flow term.

    ``h0(y) = hoop_el - 2 s'_r(y) - sigma_ci y >= h(y)`` is concave and decreasing, so Newton
    steps from ``y_lo`` (where ``h0 >= 0``) overshoot once and then stay on the side
    ``h0 <= 0``: every iterate after the first is a valid upper bound (derived). Closed form
    for a = 1/2.
    """
    c = hoop_el / sci + 2.0 * s / mb
    if np.all(a == 0.5):
        return np.asarray(2.0 * c / (1.0 + np.sqrt(1.0 + 8.0 * c / mb)), dtype=float)
    inv_a = 1.0 / a
    y = y_lo
    for _ in range(4):
        h0 = hoop_el - 2.0 * _hb_radial(y, sci, mb, s, a) - sci * y
        dh0 = -2.0 * sci * inv_a * _pow(y, inv_a - 1.0) / mb - sci
        y = y - h0 / dh0
    return np.asarray(y, dtype=float)


def _hb_drainage_gap(y: Array, y_w: Array, g: Array, mb: Array, a: Array, log_e: Array
                     ) -> Array:
    return _hb_log_radius(y, y_w, g, mb, a) - log_e


def _root(fun: Callable[..., Array], lo: Array, hi: Array, args: tuple[Array, ...],
          tol: dict[str, float]) -> Array:
    """Vectorised bracketed root of a monotonic function (Chandrupatla 1997).

    Where the bracket is not valid (a zero-width bracket, the function vanishing at an end, or
    a round-off sign error at an end that is the root to rounding), the end with the smaller
    absolute function value.
    """
    if lo.size == 0:
        return lo.copy()
    res: Any = elementwise.find_root(fun, (lo, hi), args=args, tolerances=tol)
    x = np.array(res.x, dtype=float)
    bad = np.flatnonzero(np.asarray(res.status) == -1)
    if bad.size:
        sub = tuple(np.asarray(t)[bad] for t in args)
        f_lo, f_hi = fun(lo[bad], *sub), fun(hi[bad], *sub)
        x[bad] = np.where(np.abs(f_lo) <= np.abs(f_hi), lo[bad], hi[bad])
    return x


def _hb_state(
    sigma0: Array, p_r: Array, p_w: Array, r_w: Array, r_e: Array, sci: Array, mb: Array,
    s: Array, a: Array, m: Array, e_mod: Array, nu: Array, biot: Array,
) -> _State:
    """Hoek-Brown cavity with seepage: closed form (a = 1/2) or quadrature, plus one root."""
    with np.errstate(all="ignore"):
        log_e = np.log(r_e / r_w)
        drawdown = p_r - p_w
        big_g = drawdown / log_e
        g = big_g / sci
        s0 = sigma0 - p_r
        big_a = biot * (1.0 - 2.0 * nu) / (1.0 - nu)
        y_w = s**a
        ucs = sci * y_w
        hoop_el = _elastic_wall(s0, drawdown, big_a)
        yielded = hoop_el > ucs
        unstable = yielded & (g >= y_w)
        ok = yielded & ~unstable

        size = sigma0.size
        rho = np.ones(size)
        beyond = np.zeros(size, dtype=bool)
        s_r = np.zeros(size)
        k1_int = np.zeros(size)
        idx = np.flatnonzero(ok)
        if idx.size:
            (s0_i, sci_i, mb_i, s_i, a_i, yw_i, g_i, le_i, he_i, bg_i, ba_i, m_i) = (
                v[idx] for v in (s0, sci, mb, s, a, y_w, g, log_e, hoop_el, big_g, big_a, m))
            k_i = 1.0 / a_i - 1.0
            # no-flow matching root y_nf (the interface value if R > r_e)
            c = 2.0 * s0_i / sci_i + 2.0 * s_i / mb_i
            # (c <= 0 only for a tensile effective far field: no interface beyond r_e)
            y_nf = np.where(c > 0.0, 2.0 * c / (1.0 + np.sqrt(1.0 + 8.0 * c / mb_i)), 0.0)
            general = a_i != 0.5
            if np.any(general):
                j = np.flatnonzero(general & (c > 0.0))
                y_nf = np.where(general, 0.0, y_nf)
                y_nf[j] = _root(_hb_match_noflow, np.zeros(j.size), c[j],
                                (s0_i[j], sci_i[j], mb_i[j], s_i[j], a_i[j]), _TOL_Y)
            t_nf = _hb_log_radius(np.maximum(y_nf, yw_i), yw_i, g_i, mb_i, a_i)
            out = (y_nf > yw_i) & (t_nf > le_i)
            y_r = y_nf.copy()
            # R <= r_e: root of the flow matching in y
            # bracket: y(R) >= y_nf (derived: p(R) <= p_r) and y(R) <= the root without the
            # seepage term (_hb_upper_bracket)
            j = np.flatnonzero(~out)
            y_lo = np.maximum(yw_i[j], y_nf[j])
            y_hi = _hb_upper_bracket(y_lo, he_i[j], sci_i[j], mb_i[j], s_i[j], a_i[j])
            y_lo = np.minimum(y_lo, y_hi)
            y_r[j] = _newton_decreasing(
                _hb_match_flow, y_lo, y_hi,
                (he_i[j], (2.0 - ba_i[j]) * bg_i[j], yw_i[j], g_i[j], sci_i[j], mb_i[j],
                 s_i[j], a_i[j]))
            t_r = _hb_log_radius(y_r, yw_i, g_i, mb_i, a_i)
            y_a = y_r.copy()
            # R > r_e: y at r_e, then the closed-form no-flow zone
            j = np.flatnonzero(out)
            y_e = _root(_hb_drainage_gap, yw_i[j], y_nf[j],
                        (yw_i[j], g_i[j], mb_i[j], a_i[j], le_i[j]), _TOL_Y)
            t_b = (y_nf[j] ** k_i[j] - y_e**k_i[j]) / (mb_i[j] * a_i[j] * k_i[j])
            t_r[j] = le_i[j] + t_b
            y_a[j] = y_e
            rho[idx] = np.exp(t_r)
            beyond[idx] = out
            s_r[idx] = _hb_radial(y_r, sci_i, mb_i, s_i, a_i)
            # int x^m s'_r dx: only needed when its coefficient (1 - nu)(1 - K_psi^2) != 0
            need = m_i != 1.0
            if np.any(need):
                j = np.flatnonzero(need)
                kint = np.zeros(idx.size)
                kint[j] = _hb_radial_integral_a(y_a[j], yw_i[j], g_i[j], sci_i[j], mb_i[j],
                                                s_i[j], a_i[j], m_i[j])
                jb = np.flatnonzero(need & out)
                sel = np.searchsorted(np.flatnonzero(out), jb)
                kint[jb] += _hb_radial_integral_b(
                    y_e[sel], t_b[sel], np.exp(le_i[jb]), sci_i[jb], mb_i[jb], s_i[jb],
                    a_i[jb], m_i[jb])
                k1_int[idx] = kint
        rho_a = np.minimum(rho, r_e / r_w)
        u_w, eps_p = _wall_kinematics(
            rho=rho, rho_a=rho_a, s_r=s_r, k1_integral=k1_int, big_g=big_g, log_e=log_e,
            drawdown=drawdown, s0=s0, m=m, e_mod=e_mod, nu=nu, biot=biot, hoop_wall=ucs)
        return _finish(yielded=yielded, unstable=unstable, beyond=beyond, rho=rho, u_w=u_w,
                       eps_p=eps_p, hoop_el=hoop_el, hoop_yield=ucs, s0=s0, drawdown=drawdown,
                       e_mod=e_mod, nu=nu)


# ----------------------------------------------------------------------------------------------
# public API
# ----------------------------------------------------------------------------------------------

def _axial(sigma_axial: ArrayLike | None, shape: tuple[int, ...], v: dict[str, Array],
           state: _State) -> tuple[Array, Mask]:
    """Plane-strain effective axial stress at the wall [MPa] and the 'axial > hoop' flag.

    ``sigma_axial`` was broadcast with the other inputs into ``v["sigma_axial"]`` when given.
    """
    if sigma_axial is None:
        return np.full(shape, np.nan), np.zeros(shape, dtype=bool)
    sz0 = v["sigma_axial"]
    nu, drawdown = v["poisson_ratio"], v["p_r"] - v["p_w"]
    s0 = v["sigma0"] - v["p_r"]
    # ds_r + ds_theta at the wall = s'_theta,w - 2 (sigma0 - p_w)
    sum_change = state.hoop_wall - 2.0 * (s0 + drawdown)
    axial = (sz0 - v["p_w"] + nu * sum_change
             - v["biot"] * (1.0 - 2.0 * nu) * drawdown)
    flag = state.yielded & (axial > state.hoop_wall)
    return axial.reshape(shape), flag.reshape(shape)


def _response(state: _State, shape: tuple[int, ...], v: dict[str, Array],
              sigma_axial: ArrayLike | None) -> CavityResponse:
    axial, flag = _axial(sigma_axial, shape, v, state)
    return CavityResponse(
        plastic_radius=(state.rho * v["r_w"]).reshape(shape),
        yielded=state.yielded.reshape(shape),
        seepage_unstable=state.unstable.reshape(shape),
        plastic_zone_beyond_drainage=state.beyond.reshape(shape),
        wall_displacement=(state.u_over_rw * v["r_w"]).reshape(shape),
        wall_plastic_strain=state.eps_p.reshape(shape),
        wall_hoop_stress_eff=state.hoop_wall.reshape(shape),
        wall_axial_stress_eff=axial,
        axial_exceeds_hoop=flag,
    )


def mohr_coulomb_cavity(
    *,
    sigma0: ArrayLike,
    p_r: ArrayLike,
    p_w: ArrayLike,
    r_w: ArrayLike,
    r_e: ArrayLike,
    ucs: ArrayLike,
    friction_angle: ArrayLike,
    dilation_angle: ArrayLike,
    young_modulus: ArrayLike,
    poisson_ratio: ArrayLike,
    biot: ArrayLike,
    sigma_axial: ArrayLike | None = None,
) -> CavityResponse:
    """Elastic-perfectly plastic Mohr-Coulomb cavity with steady radial inflow.

    All array arguments broadcast together. Model, derivation, strain measure and limitations:
    module docstring.

    Parameters
    ----------
    sigma0 : array_like
        Equivalent hydrostatic in-plane far-field total stress, (3 sigma1 - sigma3)/2 [MPa].
    p_r : array_like
        Far-field pore pressure, held at the drainage radius [MPa].
    p_w : array_like
        Flowing wall pressure, ``p_w <= p_r`` [MPa].
    r_w : array_like
        Cavity (tunnel or hole) radius [m].
    r_e : array_like
        Drainage radius, ``r_e > r_w`` [m].
    ucs : array_like
        Unconfined compressive strength [MPa].
    friction_angle : array_like
        Friction angle phi, in (0, pi/2) [rad].
    dilation_angle : array_like
        Dilation angle psi, in [0, phi] [rad] (psi = 0: no plastic volume change).
    young_modulus : array_like
        Drained Young's modulus [MPa].
    poisson_ratio : array_like
        Drained Poisson's ratio, in [0, 0.5) [1].
    biot : array_like
        Biot coefficient alpha, in [0, 1] [1].
    sigma_axial : array_like, optional
        Far-field total stress along the cavity axis [MPa]; needed only for the axial wall
        stress and the plane-strain flag.

    Returns
    -------
    CavityResponse
        Plastic radius [m], wall convergence [m], wall plastic hoop strain [1], wall effective
        stresses [MPa] and flags.

    Raises
    ------
    ValueError
        An argument outside its domain (listed above).

    References
    ----------
    Salencon (1969) (plastic zone and non-associated kinematics without flow); Duncan Fama
    (1993) as printed by Hoek & Marinos (2000) (psi = 0 reduction); Risnes, Bratli & Horsrud
    (1982) (seepage force in the plastic zone); the closed form with the log-profile seepage
    force and the Wright-omega plastic radius are derived here (module docstring).
    """
    shape, v = _broadcast(dict(
        sigma0=sigma0, p_r=p_r, p_w=p_w, r_w=r_w, r_e=r_e, ucs=ucs,
        friction_angle=friction_angle, dilation_angle=dilation_angle,
        young_modulus=young_modulus, poisson_ratio=poisson_ratio, biot=biot,
        sigma_axial=np.nan if sigma_axial is None else sigma_axial))
    _check_common(v, with_wall_pressure=True)
    _check_mc(v)
    state = _mc_state(v["sigma0"], v["p_r"], v["p_w"], v["r_w"], v["r_e"], v["ucs"],
                      passive_coefficient(v["friction_angle"]),
                      _flow_coefficient(v["dilation_angle"]), v["young_modulus"],
                      v["poisson_ratio"], v["biot"])
    return _response(state, shape, v, sigma_axial)


def hoek_brown_cavity(
    *,
    sigma0: ArrayLike,
    p_r: ArrayLike,
    p_w: ArrayLike,
    r_w: ArrayLike,
    r_e: ArrayLike,
    sigma_ci: ArrayLike,
    mb: ArrayLike,
    s: ArrayLike,
    a: ArrayLike,
    dilation_angle: ArrayLike,
    young_modulus: ArrayLike,
    poisson_ratio: ArrayLike,
    biot: ArrayLike,
    sigma_axial: ArrayLike | None = None,
) -> CavityResponse:
    """Elastic-perfectly plastic Hoek-Brown cavity with steady radial inflow.

    Yield ``s'_1 = s'_3 + sigma_ci (m_b s'_3/sigma_ci + s)^a`` with hoop major and radial
    minor; plastic potential of Mohr-Coulomb form with dilation angle psi (Carranza-Torres
    2004). Unconfined strength of the rock mass ``sigma_ci s^a``. For a = 1/2 the plastic-zone
    stresses are closed-form, otherwise Gauss-Legendre quadrature; the dilatant displacement
    needs one more quadrature (accuracy: module docstring). The plastic radius is a vectorised
    safeguarded-Newton root. Other arguments, returns and limitations as
    :func:`mohr_coulomb_cavity`.

    Parameters
    ----------
    sigma_ci : array_like
        Unconfined compressive strength of the intact rock [MPa].
    mb, s, a : array_like
        Hoek-Brown constants [1]: ``mb > 0``, ``0 < s <= 1``, ``0 < a < 1``
        (see :func:`hoek_brown_rock_mass`).

    References
    ----------
    Carranza-Torres & Fairhurst (1999) (a = 1/2, no flow: scaled-stress closed form);
    Carranza-Torres (2004) (general a and the dilatant flow rule); Hoek, Carranza-Torres &
    Corkum (2002) (the criterion); Risnes, Bratli & Horsrud (1982) (seepage force). The flow
    terms are derived here (module docstring).
    """
    shape, v = _broadcast(dict(
        sigma0=sigma0, p_r=p_r, p_w=p_w, r_w=r_w, r_e=r_e, sigma_ci=sigma_ci, mb=mb, s=s, a=a,
        dilation_angle=dilation_angle, young_modulus=young_modulus,
        poisson_ratio=poisson_ratio, biot=biot,
        sigma_axial=np.nan if sigma_axial is None else sigma_axial))
    _check_common(v, with_wall_pressure=True)
    _check_hb(v)
    state = _hb_state(v["sigma0"], v["p_r"], v["p_w"], v["r_w"], v["r_e"], v["sigma_ci"],
                      v["mb"], v["s"], v["a"], _flow_coefficient(v["dilation_angle"]),
                      v["young_modulus"], v["poisson_ratio"], v["biot"])
    return _response(state, shape, v, sigma_axial)


def seepage_limit_wall_pressure(
    *, p_r: ArrayLike, r_w: ArrayLike, r_e: ArrayLike, unconfined_strength: ArrayLike,
) -> Array:
    """Wall pressure at which the wall seepage gradient reaches the unconfined strength [MPa].

    ``p_w = p_r - UCS ln(r_e/r_w)``: below it ``r_w dp/dr >= UCS`` at the wall and a yielded
    wall is unstable (module docstring; derived after Bratli & Risnes 1981 and Risnes, Bratli &
    Horsrud 1982). May be negative (no seepage failure at any non-negative wall pressure).

    Parameters
    ----------
    p_r : array_like
        Far-field pore pressure [MPa].
    r_w, r_e : array_like
        Cavity and drainage radii [m].
    unconfined_strength : array_like
        UCS for Mohr-Coulomb, ``sigma_ci s^a`` for Hoek-Brown [MPa].
    """
    return np.asarray(
        np.asarray(p_r, dtype=float)
        - np.asarray(unconfined_strength, dtype=float)
        * np.log(np.asarray(r_e, dtype=float) / np.asarray(r_w, dtype=float)), dtype=float)


def _margin_mc(p_w: Array, sigma0: Array, p_r: Array, r_w: Array, r_e: Array, ucs: Array,
               q: Array, m: Array, e_mod: Array, nu: Array, biot: Array, crit: Array,
               *invariants: Array) -> Array:
    """Collapse margin of :func:`_margin` for Mohr-Coulomb; ``invariants`` (optional): the
    :func:`_mc_invariants` of the same inputs. The same values as _margin(_mc_state(...)):
    the states it leaves out (unstable, overflowing) are 1 either way."""
    yielded, unstable, eps_p, hoop_el = _mc_state(
        sigma0, p_r, p_w, r_w, r_e, ucs, q, m, e_mod, nu, biot,
        invariants=invariants or None, lean=True)
    with np.errstate(all="ignore"):
        ext = np.where(yielded, eps_p, (1.0 + nu) * (hoop_el - ucs) / e_mod)
        out = ext - crit
    return np.asarray(np.where(unstable | ~np.isfinite(out), 1.0, out), dtype=float)


def _margin_hb(p_w: Array, sigma0: Array, p_r: Array, r_w: Array, r_e: Array, sci: Array,
               mb: Array, s: Array, a: Array, m: Array, e_mod: Array, nu: Array, biot: Array,
               crit: Array) -> Array:
    st = _hb_state(sigma0, p_r, p_w, r_w, r_e, sci, mb, s, a, m, e_mod, nu, biot)
    return _margin(st, sci * s**a, e_mod, nu, crit)


def _margin(st: _State, ucs: Array, e_mod: Array, nu: Array, crit: Array) -> Array:
    """Collapse margin [1]: >= 0 collapsed. Elastic states continue the plastic strain by the
    (negative) hoop-stress margin (1 + nu)(s'_theta - UCS)/E, so that the margin is continuous
    and increasing with drawdown and a zero critical strain gives first yield."""
    ext = np.where(st.yielded, st.eps_p, (1.0 + nu) * (st.hoop_el - ucs) / e_mod)
    out = ext - crit
    # seepage-unstable (and overflowing, R -> infinity) states count as collapsed
    return np.asarray(np.where(st.unstable | ~np.isfinite(out), 1.0, out), dtype=float)


def collapse_wall_pressure(
    *,
    criterion: str,
    critical_plastic_strain: ArrayLike,
    sigma0: ArrayLike,
    p_r: ArrayLike,
    r_w: ArrayLike,
    r_e: ArrayLike,
    dilation_angle: ArrayLike,
    young_modulus: ArrayLike,
    poisson_ratio: ArrayLike,
    biot: ArrayLike,
    ucs: ArrayLike | None = None,
    friction_angle: ArrayLike | None = None,
    sigma_ci: ArrayLike | None = None,
    mb: ArrayLike | None = None,
    s: ArrayLike | None = None,
    a: ArrayLike | None = None,
    path: str = "compiled",
) -> Array:
    """Highest wall pressure in [0, p_r] at which the perforation tunnel collapses [MPa].

    Collapse: the wall plastic hoop strain reaches ``critical_plastic_strain`` or the yielded
    wall becomes seepage-unstable (module docstring). The wall plastic strain is taken to grow
    monotonically with drawdown (checked by a property test), so the answer is the root of a
    margin [1]: the plastic strain minus its critical value, continued into the elastic range
    by ``(1 + nu)(s'_theta - UCS)/E`` and jumping to "collapsed" below the seepage limit
    ``p_seep`` (:func:`seepage_limit_wall_pressure`). Collapse cannot precede first yield,
    ``p_y = p_r - (UCS - 2(sigma0 - p_r))/(2 - A)`` (docs/derivations.md, sec. 3), and the wall is
    unstable below ``p_seep``; so: never if ``p_y < 0``; ``p_y`` if ``p_seep >= p_y``; else
    ``p_seep`` if the margin is still negative just above it, otherwise a vectorised bracketed
    root (Chandrupatla 1997, ``scipy.optimize.elementwise.find_root``) between
    ``max(0, p_seep)`` and ``min(p_y, p_r)``, to 1e-9 MPa. No Python loop over samples.

    Convention: the value is ``p_r`` when the tunnel has collapsed already at zero drawdown and
    ``-inf`` when it does not collapse for any wall pressure in [0, p_r] ("never"), so the
    critical drawdown ``p_r - p_wc`` is 0 and ``+inf`` in those cases.

    Parameters
    ----------
    criterion : {"mohr-coulomb", "hoek-brown"}
        Strength criterion of the rock.
    critical_plastic_strain : array_like
        Critical wall plastic hoop strain, >= 0 [1] (0 gives first yield at the wall).
    sigma0, p_r, r_w, r_e, dilation_angle, young_modulus, poisson_ratio, biot : array_like
        As :func:`mohr_coulomb_cavity` ([MPa], [MPa], [m], [m], [rad], [MPa], [1], [1]).
    ucs, friction_angle : array_like, optional
        Mohr-Coulomb strength [MPa] and friction angle [rad] (required for "mohr-coulomb").
    sigma_ci, mb, s, a : array_like, optional
        Hoek-Brown constants ([MPa], [1], [1], [1]) (required for "hoek-brown").
    path : {"compiled", "numpy"}
        How Mohr-Coulomb is searched: "compiled" (the default; the same margin and the same
        Chandrupatla iteration made scalar per case, :mod:`risk.mechanics._collapse_kernel`,
        equal to the numpy path to rounding, docs/derivations.md sec. 16) or "numpy" (the
        reference path, described here). Hoek-Brown always takes the numpy path.

    Returns
    -------
    ndarray
        Critical wall pressure p_wc [MPa], in [0, p_r], or ``-inf`` for never.

    Raises
    ------
    ValueError
        Unknown criterion, a missing strength parameter, or an argument outside its domain.

    References
    ----------
    Chandrupatla (1997); the cavity solutions of :func:`mohr_coulomb_cavity` and
    :func:`hoek_brown_cavity`.
    """
    if criterion not in CAVITY_CRITERIA:
        raise ValueError(f"criterion must be one of {CAVITY_CRITERIA}; found {criterion!r}")
    if path not in ("compiled", "numpy"):
        raise ValueError(f"path must be 'compiled' or 'numpy'; found {path!r}")
    common: dict[str, ArrayLike] = dict(
        critical_plastic_strain=critical_plastic_strain, sigma0=sigma0, p_r=p_r, r_w=r_w,
        r_e=r_e, dilation_angle=dilation_angle, young_modulus=young_modulus,
        poisson_ratio=poisson_ratio, biot=biot)
    strength: dict[str, ArrayLike | None]
    if criterion == "mohr-coulomb":
        strength = dict(ucs=ucs, friction_angle=friction_angle)
    else:
        strength = dict(sigma_ci=sigma_ci, mb=mb, s=s, a=a)
    missing = [k for k, val in strength.items() if val is None]
    if missing:
        raise ValueError(f"criterion {criterion!r} needs {', '.join(missing)}; found None")
    shape, v = _broadcast({**common, **{k: val for k, val in strength.items()
                                        if val is not None}})
    _check_common(v, with_wall_pressure=False)
    crit = v["critical_plastic_strain"]
    _require(crit >= 0.0, "critical_plastic_strain must be >= 0 [1]", crit)
    m = _flow_coefficient(v["dilation_angle"])
    base = (v["sigma0"], v["p_r"], v["r_w"], v["r_e"])
    elastic = (v["young_modulus"], v["poisson_ratio"], v["biot"], crit)
    margin: Callable[..., Array]
    args: tuple[Array, ...]
    if criterion == "mohr-coulomb":
        _check_mc(v)
        margin = _margin_mc
        q = passive_coefficient(v["friction_angle"])
        if path == "compiled":
            from risk.mechanics._collapse_kernel import collapse_mc

            res = np.empty(crit.shape)
            collapse_mc(v["sigma0"], v["p_r"], v["r_w"], v["r_e"], v["ucs"], q, m,
                        v["young_modulus"], v["poisson_ratio"], v["biot"], crit, res)
            return res.reshape(shape)
        args = (*base, v["ucs"], q, m, *elastic,
                *_mc_invariants(*base, v["ucs"], q, m, v["poisson_ratio"], v["biot"]))
        unconfined = v["ucs"]
    else:
        _check_hb(v)
        margin = _margin_hb
        args = (*base, v["sigma_ci"], v["mb"], v["s"], v["a"], m, *elastic)
        unconfined = v["sigma_ci"] * v["s"] ** v["a"]

    # Collapse never precedes first yield (the margin is the negative elastic hoop margin
    # before it), so the search runs between the seepage limit and the first-yield pressure
    # p_y = p_r - (UCS - 2(sigma0 - p_r))/(2 - A) (derived, docs/derivations.md, sec. 3). Below p_y
    # the wall is yielded, so below the seepage limit p_seep it is unstable.
    p_r_all = v["p_r"]
    nu = v["poisson_ratio"]
    big_a = v["biot"] * (1.0 - 2.0 * nu) / (1.0 - nu)
    p_y = p_r_all - (unconfined - 2.0 * (v["sigma0"] - p_r_all)) / (2.0 - big_a)
    p_hi = np.minimum(p_r_all, p_y)
    p_seep = seepage_limit_wall_pressure(p_r=p_r_all, r_w=v["r_w"], r_e=v["r_e"],
                                         unconfined_strength=unconfined)
    out = np.full(p_hi.shape, -np.inf)                  # no yield in [0, p_r]: never
    # unstable as soon as it yields
    out = np.where((p_hi >= 0.0) & (p_seep >= p_hi), p_hi, out)
    live = np.flatnonzero((p_hi >= 0.0) & (p_seep < p_hi))
    if live.size:
        out[live] = _collapse_search(margin, tuple(x[live] for x in args), p_seep[live],
                                     p_hi[live], p_r_all[live], crit[live])
    return out.reshape(shape)


def _collapse_search(margin: Callable[..., Array], args: tuple[Array, ...], p_seep: Array,
                     p_hi: Array, p_r: Array, crit: Array) -> Array:
    """Highest wall pressure in [0, p_hi] where the margin is >= 0 (``-inf`` if none).

    ``p_seep < p_hi <= p_r``; the wall is yielded below ``p_hi`` and unstable below ``p_seep``.
    """
    # margin at p_hi: evaluated where the wall yields already at p_r, else -crit (first yield)
    f_hi = -crit.copy()
    j = np.flatnonzero(p_hi >= p_r)
    if j.size:
        f_hi[j] = margin(p_hi[j], *(x[j] for x in args))
    # Just above the seepage limit the margin is continuous; its value there decides whether
    # the strain limit comes first (a root search) or the seepage instability (the margin's
    # jump at p_seep). The small step keeps the evaluation off the singular state G = UCS.
    seep = p_seep > 0.0
    p_lo = np.where(seep, np.minimum(p_seep + _SEEPAGE_STEP, p_hi), 0.0)
    f_lo = margin(p_lo, *args)
    out = np.where(seep, p_seep, -np.inf)               # the margin stays < 0 down to p_lo
    out = np.where(f_hi >= 0.0, p_hi, out)
    j = np.flatnonzero((f_hi < 0.0) & (f_lo >= 0.0))
    if j.size:
        res: Any = elementwise.find_root(margin, (p_lo[j], p_hi[j]),
                                         args=tuple(x[j] for x in args), tolerances=_TOL_P)
        root = np.asarray(res.x, dtype=float)
        # the failing end of the final bracket if the iteration stopped early
        lo_end = np.asarray(res.bracket[0], dtype=float)
        out[j] = np.where(res.success, root, lo_end)
    return out
