"""Log transforms against their published equations, and the stresses over depth."""

from __future__ import annotations

import math

import numpy as np
import pytest

from risk.logs import stresses, transforms
from risk.logs.transforms import FRICTION_TRANSFORMS, UCS_TRANSFORMS, range_warnings

FT = 0.3048  # NIST SP 811, exact


@pytest.mark.parametrize("dt", [60.0, 100.0, 140.0])
def test_mcnally(dt: float) -> None:
    # McNally (1987): UCS = 1200 exp(-0.036 dt), dt in us/ft (Zhang 2019, Applied Petroleum
    # Geomechanics, eq. 3.17; Chang et al. 2006, Table 1)
    assert transforms.mcnally_1987(dt=dt) == pytest.approx(1200.0 * math.exp(-0.036 * dt))
    # the registry reads the log in us/m
    got = UCS_TRANSFORMS["mcnally_1987"].apply({"dt": np.array([dt / FT])})
    assert got[0] == pytest.approx(1200.0 * math.exp(-0.036 * dt), rel=1e-12)


def test_mcnally_check_point() -> None:
    # 100 us/ft -> 1200 e^-3.6 = 1200 x 0.0273237 = 32.788 MPa (hand value)
    assert transforms.mcnally_1987(dt=100.0) == pytest.approx(32.788, abs=1e-3)


def test_fjaer() -> None:
    # Fjaer et al. (1992), Thuringia: UCS = 0.035 Vp - 31.5 (Chang et al. 2006, Table 1;
    # from memory). Vp = 3000 m/s -> 73.5 MPa.
    assert transforms.fjaer_1992(vp=3000.0) == pytest.approx(73.5)
    got = UCS_TRANSFORMS["fjaer_1992"].apply({"dt": np.array([1e6 / 3000.0])})
    assert got[0] == pytest.approx(73.5, rel=1e-12)


def test_gulf_coast() -> None:
    # Chang et al. (2006), Table 1, Gulf Coast weak sandstones: UCS = 1.4138e7 dt^-3
    # (from memory). dt = 100 us/ft -> 14.138 MPa.
    assert transforms.gulf_coast_weak_sandstone(dt=100.0) == pytest.approx(14.138)


def test_moos() -> None:
    # Moos et al. (1999), Cook Inlet: UCS = 1.745e-9 rho Vp^2 - 21 (Chang et al. 2006,
    # Table 1; from memory). rho 2300 kg/m3, Vp 3000 m/s -> 36.1215 - 21 = 15.1215 MPa.
    assert transforms.moos_1999(rho=2300.0, vp=3000.0) == pytest.approx(15.1215)


def test_vernik() -> None:
    # Vernik et al. (1993): UCS = 254 (1 - 2.7 phi)^2 (Chang et al. 2006, Table 1; from
    # memory). phi 0.2 -> 254 x 0.46^2 = 53.7464 MPa.
    assert transforms.vernik_1993(phi=0.2) == pytest.approx(53.7464)


def test_chang_porosity() -> None:
    # Chang et al. (2006), Table 1: UCS = 277 exp(-10 phi) (from memory). phi 0.1 -> 277/e.
    assert transforms.chang_2006_porosity(phi=0.1) == pytest.approx(277.0 / math.e)


def test_bradford() -> None:
    # Bradford et al. (1998): UCS = 2.28 + 4.1089 E, E in GPa (Zhang 2019, eq. 3.22).
    assert transforms.bradford_1998(young_modulus=10.0) == pytest.approx(43.369)


def test_weingarten_perkins() -> None:
    # Weingarten & Perkins (1995): friction angle = 57.8 - 105 phi [deg] (from memory).
    assert transforms.weingarten_perkins_1995(phi=0.2) == pytest.approx(36.8)
    got = FRICTION_TRANSFORMS["weingarten_perkins_1995"].apply({"phi": np.array([0.2])})
    assert got[0] == pytest.approx(36.8)


def test_dynamic_moduli() -> None:
    # Isotropic elasticity (Mavko et al. 2009, sec. 2.2): Vp/Vs = sqrt(3) gives nu = 0.25 and
    # E = 2 G (1 + nu) = 2.5 rho Vs^2.
    vs = 1500.0
    e, nu = transforms.dynamic_moduli(rho=2200.0, vp=vs * math.sqrt(3.0), vs=vs)
    assert nu == pytest.approx(0.25)
    assert e == pytest.approx(2.5 * 2200.0 * vs ** 2)


def test_range_warning() -> None:
    t = UCS_TRANSFORMS["vernik_1993"]
    phi = np.array([0.1, 0.2, 0.35])  # published for porosity below 0.30
    w = range_warnings(t, {"phi": phi}, np.array([1.0, 2.0, 3.0]), t.apply({"phi": phi}),
                       show_depth=lambda z: f"{z} m")
    assert len(w) == 1 and "outside its published range" in w[0] and "3.0 m" in w[0]
    assert range_warnings(t, {"phi": phi[:2]}, np.array([1.0, 2.0]),
                          t.apply({"phi": phi[:2]}), show_depth=str) == []


def test_overburden_constant_density() -> None:
    # Sv = Sv0 + rho g dz (Zoback 2007, eq. 1.2, constant density); g = 9.80665 m/s2 (CGPM)
    z = np.linspace(2000.0, 2100.0, 201)
    sv = stresses.overburden(depth=z, density=np.full(z.size, 2300.0), top_stress=45.0)
    np.testing.assert_allclose(sv, 45.0 + 2300.0 * 9.80665 * (z - 2000.0) * 1e-6, rtol=1e-12)


def test_overburden_one_psi_per_foot() -> None:
    # common practice: a bulk density of about 2.31 g/cm3 gives 1 psi/ft of overburden
    # (1 psi/ft = 22,620.6 Pa/m; / 9.80665 = 2,306.7 kg/m3)
    rho = 6894.757293168361 / 0.3048 / 9.80665
    z = np.array([0.0, 1000.0 * 0.3048])
    sv = stresses.overburden(depth=z, density=np.full(2, rho), top_stress=0.0)
    assert sv[1] == pytest.approx(1000.0 * 6894.757293168361e-6, rel=1e-12)


def test_linear_density_integrated_exactly() -> None:
    # trapezoid rule is exact for a linear density: int (a + b z) g dz in closed form
    z = np.linspace(0.0, 50.0, 11)
    rho = 2000.0 + 4.0 * z
    sv = stresses.overburden(depth=z, density=rho, top_stress=0.0)
    np.testing.assert_allclose(sv, (2000.0 * z + 2.0 * z * z) * 9.80665e-6, rtol=1e-12)


def test_poroelastic_uniaxial_strain() -> None:
    # no tectonic strain: Sh = nu/(1 - nu) (Sv - alpha Pp) + alpha Pp (Zoback 2007, sec. 9;
    # Blanton & Olson 1999): nu 0.25, Sv 50, Pp 20, alpha 1 -> 30 MPa
    sh, s_big = stresses.poroelastic_horizontal(sv=50.0, pore_pressure=20.0,
                                                poisson_ratio=0.25, biot=1.0)
    assert sh == pytest.approx(30.0) and s_big == pytest.approx(30.0)


def test_poroelastic_tectonic_strains_satisfy_hooke() -> None:
    # independent check: isotropic Hooke's law in effective stress (sigma' = S - alpha Pp)
    # must give back the imposed horizontal strains: E eps_h = s'_h - nu (s'_H + s'_v)
    e, nu, a, sv, pp = 12_000.0, 0.27, 0.85, 55.0, 24.0
    eh, e_big = 1.5e-4, 4e-4
    sh, s_big = stresses.poroelastic_horizontal(sv=sv, pore_pressure=pp, poisson_ratio=nu,
                                                biot=a, young_modulus=e, strain_min=eh,
                                                strain_max=e_big)
    ph, p_big, pv = sh - a * pp, s_big - a * pp, sv - a * pp
    assert (ph - nu * (p_big + pv)) / e == pytest.approx(eh, rel=1e-9)
    assert (p_big - nu * (ph + pv)) / e == pytest.approx(e_big, rel=1e-9)
