"""Stresses and pore pressure over depth (pure, vectorised; compression positive, MPa, m).

References
----------
Zoback, M.D. (2007). Reservoir Geomechanics. Cambridge University Press, eq. 1.2 (the
vertical stress as the integral of density times gravity over depth).
Blanton, T.L., Olson, J.E. (1999). Stress magnitudes from logs: effects of tectonic strains
and temperature. SPE Reservoir Eval. Eng. 2(1), 62-68 (the uniaxial-strain horizontal stress
with tectonic strain terms; from memory).
"""

from __future__ import annotations

from typing import Final

import numpy as np
from numpy.typing import ArrayLike, NDArray

Array = NDArray[np.float64]

__all__ = ["G", "overburden", "poroelastic_horizontal"]

#: Standard acceleration of gravity [m/s2] (CGPM 1901, exact by definition).
G: Final = 9.80665


def overburden(*, depth: ArrayLike, density: ArrayLike, top_stress: float) -> Array:
    """Vertical stress Sv(z) [MPa] = Sv(z_0) + int_{z_0}^{z} rho g dz (trapezoid rule).

    Parameters
    ----------
    depth : array_like (n,)
        True vertical depth of the log samples [m], increasing.
    density : array_like (n,)
        Bulk density [kg/m3].
    top_stress : float
        Vertical stress at the first sample [MPa] (from the stated density or gradient above
        the log top).

    References
    ----------
    Zoback (2007), eq. 1.2.
    """
    z = np.asarray(depth, dtype=float)
    rho = np.asarray(density, dtype=float)
    if z.ndim != 1 or z.shape != rho.shape:
        raise ValueError("depth and density must be 1-D arrays of one length")
    inc = 0.5 * (rho[1:] + rho[:-1]) * np.diff(z) * G * 1e-6
    return np.asarray(top_stress + np.concatenate(([0.0], np.cumsum(inc))))


def poroelastic_horizontal(*, sv: ArrayLike, pore_pressure: ArrayLike, poisson_ratio: ArrayLike,
                           biot: ArrayLike, young_modulus: ArrayLike = 0.0,
                           strain_min: ArrayLike = 0.0, strain_max: ArrayLike = 0.0
                           ) -> tuple[Array, Array]:
    """Shmin and SHmax [MPa] under uniaxial strain with tectonic strains.

    S_h = nu/(1 - nu) (Sv - alpha Pp) + alpha Pp + E/(1 - nu^2) (eps_h + nu eps_H),
    S_H = nu/(1 - nu) (Sv - alpha Pp) + alpha Pp + E/(1 - nu^2) (eps_H + nu eps_h).

    Parameters
    ----------
    sv, pore_pressure : array_like
        Vertical stress and pore pressure [MPa].
    poisson_ratio, biot : array_like
        Drained Poisson's ratio [-] and Biot's coefficient [-].
    young_modulus : array_like
        Drained (static) Young's modulus [MPa].
    strain_min, strain_max : array_like
        Tectonic strains in the directions of Shmin and SHmax [-] (extension negative).

    References
    ----------
    Blanton & Olson (1999) (from memory); without strains, the uniaxial-strain relation of
    Zoback (2007), sec. 9.
    """
    nu = np.asarray(poisson_ratio, dtype=float)
    a = np.asarray(biot, dtype=float)
    pp = np.asarray(pore_pressure, dtype=float)
    base = nu / (1.0 - nu) * (np.asarray(sv, dtype=float) - a * pp) + a * pp
    k = np.asarray(young_modulus, dtype=float) / (1.0 - nu * nu)
    eh, e_big = np.asarray(strain_min, dtype=float), np.asarray(strain_max, dtype=float)
    return np.asarray(base + k * (eh + nu * e_big)), np.asarray(base + k * (e_big + nu * eh))
