"""Spherical perforation tip in a triaxial far field (risk.mechanics.tip).

Sources named beside each check: Goodier (1933) J. Appl. Mech. 55, 39-44 and Timoshenko &
Goodier (1970) *Theory of Elasticity*, sec. 136 (uniaxial case); Lame's hollow sphere
(Timoshenko & Goodier 1970, sec. 141); an independent numerical solution built here from the
Papkovich-Neuber representation (Papkovich 1932; Neuber 1934; as in Barber (2010)
*Elasticity*, 3rd ed., ch. 19) with finite-difference stresses and a least-squares fit of the
traction-free condition.
"""

from __future__ import annotations

import numpy as np
import pytest

from risk.mechanics import sanding, tip


def _pn_basis(x: np.ndarray, s: np.ndarray, nu: float) -> list[np.ndarray]:
    """Displacements 2 mu u of decaying Papkovich-Neuber fields at points x (m, 3):
    2 mu u = 4 (1 - nu) psi - grad(x . psi + phi), with harmonic psi and phi."""
    r = np.linalg.norm(x, axis=1)[:, None]
    xsx = np.einsum("mi,ij,mj->m", x, s, x)[:, None]
    sx = x @ s.T
    out = []
    # phi = 1/r: grad(phi) = -x/r^3
    out.append(x / r**3)
    # psi = s x / r^3 (harmonic: x_j / r^3 = -d_j (1/r)); x . psi = xsx / r^3
    g = 2.0 * sx / r**3 - 3.0 * xsx * x / r**5
    out.append(4.0 * (1.0 - nu) * sx / r**3 - g)
    # phi = xsx / r^5 (= s_ij d_i d_j (1/r) / 3 for a traceless s)
    out.append(-(2.0 * sx / r**5 - 5.0 * xsx * x / r**7))
    return out


def _stress_from_field(field, x: np.ndarray, nu: float, h: float = 1e-5) -> np.ndarray:
    """Stress (m, 3, 3) of a displacement field (with 2 mu = 1) by central differences."""
    grad = np.empty((x.shape[0], 3, 3))
    for j in range(3):
        e = np.zeros(3)
        e[j] = h
        grad[:, :, j] = (field(x + e) - field(x - e)) / (2.0 * h)
    eps = 0.5 * (grad + np.swapaxes(grad, 1, 2))
    mu = 0.5
    lam = 2.0 * mu * nu / (1.0 - 2.0 * nu)
    tr = np.trace(eps, axis1=1, axis2=2)[:, None, None]
    return lam * tr * np.eye(3) + 2.0 * mu * eps


def _numerical_surface_stress(sigma: np.ndarray, nu: float, normals: np.ndarray
                              ) -> tuple[np.ndarray, float]:
    """Surface stress of a traction-free unit spherical cavity, by Papkovich-Neuber fields
    fitted to zero traction at the given surface points; also the largest traction left."""
    p = np.trace(sigma) / 3.0
    s = sigma - p * np.eye(3)
    basis = [lambda y, k=k: _pn_basis(y, s, nu)[k] for k in range(3)]
    stresses = [_stress_from_field(b, normals, nu) for b in basis]
    # with 2 mu = 1 the perturbation stresses are per unit coefficient; solve traction = 0
    trac = [np.einsum("mij,mj->mi", sg, normals).ravel() for sg in stresses]
    rhs = -np.einsum("ij,mj->mi", sigma, normals).ravel()
    a = np.column_stack(trac)
    coef, *_ = np.linalg.lstsq(a, rhs, rcond=None)
    total = sigma[None] + sum(c * sg for c, sg in zip(coef, stresses, strict=True))
    left = float(np.max(np.abs(np.einsum("mij,mj->mi", total, normals))))
    return total, left


def _random_tensor(rng: np.random.Generator) -> np.ndarray:
    a = rng.normal(size=(3, 3)) * 20.0
    return 0.5 * (a + a.T) + 40.0 * np.eye(3)


def test_closed_form_matches_papkovich_neuber_numerical_solution():
    # independent numerical evaluation (Papkovich-Neuber fields, finite differences,
    # least squares), sampled at 200 surface points, for random triaxial fields
    rng = np.random.default_rng(7)
    normals = rng.normal(size=(200, 3))
    normals /= np.linalg.norm(normals, axis=1, keepdims=True)
    for nu in (0.0, 0.2, 0.3, 0.45):
        sigma = _random_tensor(rng)
        num, left = _numerical_surface_stress(sigma, nu, normals)
        assert left < 1e-6 * np.abs(sigma).max()  # the fitted field is traction-free
        closed = tip.surface_stress(sigma, normals, poisson_ratio=nu)
        np.testing.assert_allclose(closed, num, atol=1e-6 * np.abs(sigma).max())


def test_peak_over_surface_matches_dense_sampling_of_numerical_solution():
    # the maximum over the sphere of the largest tangential stress: closed form vs the
    # Papkovich-Neuber solution sampled on 20,000 points (never above, within sampling error)
    rng = np.random.default_rng(11)
    normals = rng.normal(size=(20_000, 3))
    normals /= np.linalg.norm(normals, axis=1, keepdims=True)
    for nu in (0.15, 0.25, 0.35):
        sigma = _random_tensor(rng)
        num, _ = _numerical_surface_stress(sigma, nu, normals[:300])
        full = tip.surface_stress(sigma, normals, poisson_ratio=nu)
        sampled = np.linalg.eigvalsh(full)[:, -1].max()
        np.testing.assert_allclose(full[:300], num, atol=1e-6 * np.abs(sigma).max())
        peak = float(tip.peak_hoop_stress(sigma, poisson_ratio=nu))
        assert sampled <= peak + 1e-9
        assert sampled > peak - 0.01 * np.abs(sigma).max()


@pytest.mark.parametrize("nu", [0.2, 0.25, 0.3])
def test_uniaxial_case_is_goodier_1933(nu):
    # Goodier (1933); Timoshenko & Goodier (1970) sec. 136: peak (27 - 15 nu)/(2 (7 - 5 nu)) S
    # at the equator, -(3 + 15 nu)/(2 (7 - 5 nu)) S at the poles (uniaxial S along z)
    s_ = 10.0
    sigma = np.diag([0.0, 0.0, s_])
    peak = float(tip.peak_hoop_stress(sigma, poisson_ratio=nu))
    assert peak == pytest.approx((27 - 15 * nu) / (2 * (7 - 5 * nu)) * s_, rel=1e-12)
    assert 1.9 * s_ < peak < 2.1 * s_  # "about 2 S" for nu = 0.2-0.3 (Goodier 1933)
    pole = tip.surface_stress(sigma, np.array([0.0, 0.0, 1.0]), poisson_ratio=nu)
    assert pole[0, 0] == pytest.approx(-(3 + 15 * nu) / (2 * (7 - 5 * nu)) * s_, rel=1e-12)


def test_hydrostatic_field_is_lame_sphere_and_todays_tip():
    # Lame's hollow sphere (Timoshenko & Goodier 1970, sec. 141): hoop (3 p - p_w)/2; the
    # equivalent stress of the tip formula is then the mean stress (the former tip model)
    sigma = 33.0 * np.eye(3)
    assert float(tip.peak_hoop_stress(sigma, poisson_ratio=0.25, cavity_pressure=12.0)) == (
        pytest.approx((3 * 33.0 - 12.0) / 2))
    eq = tip.equivalent_mean_stress(sigma, poisson_ratio=0.25)
    a = sanding.tip_onset_wall_pressure(sigma=eq, strength=40.0, reservoir_pressure=25.0,
                                        poro_coefficient=0.5)
    b = sanding.tip_onset_wall_pressure(sigma=33.0, strength=40.0, reservoir_pressure=25.0,
                                        poro_coefficient=0.5)
    assert float(a) == pytest.approx(float(b), abs=1e-12)


def test_peak_is_at_least_the_mean_stress_bound():
    # the deviatoric part averages to zero over the sphere, so its maximum is >= 0: the peak
    # is at least (3 p - p_w)/2 (derived; issue 15)
    rng = np.random.default_rng(3)
    for _ in range(50):
        sigma = _random_tensor(rng)
        p = np.trace(sigma) / 3.0
        assert float(tip.peak_hoop_stress(sigma, poisson_ratio=0.25)) >= 1.5 * p - 1e-12
