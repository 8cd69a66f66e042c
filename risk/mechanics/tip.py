"""Stress concentration at a spherical cavity (the perforation tip) in a triaxial far field.

The perforation tip is modelled as a spherical cavity of radius a in an isotropic, linear
elastic medium under a uniform far-field total stress sigma (any orientation), with the fluid
pressure p_w on the cavity surface. The surface is traction-free apart from p_w, so the radial
stress there is p_w and the stress tensor acting in the tangent plane of the surface point with
unit normal n is (compression positive; derived in docs/derivations.md, sec. 9)::

    sigma_t(n) = 3/2 (p - p_w) P + p_w P
                 + 15 / (7 - 5 nu) [ (1 - nu) P s P - nu (n . s . n) P ]

with p = tr(sigma)/3 the mean stress, s = sigma - p I its deviator and P = I - n n the
projector onto the tangent plane. The first line is Lame's hollow sphere; the second is the
deviatoric part of the elastic solution for a spherical cavity (Southwell & Gough 1926; Goodier
1933), written in the isotropic form fixed by the two published surface values of the uniaxial
case. The largest tangential stress over the whole surface is reached where n is the direction
of the least principal deviatoric stress s3, acting along s1 (derived)::

    max_n max_t sigma_t = 3/2 p - 1/2 p_w + 15 [(1 - nu) s1 - nu s3] / (7 - 5 nu)

For a uniaxial far field S this is (27 - 15 nu) S / (2 (7 - 5 nu)), about 2.0 S for
nu = 0.2 (Goodier 1933); for a hydrostatic field it is Lame's (3 p - p_w)/2.

References
----------
Southwell, R.V. & Gough, H.J. (1926) On the concentration of stress in the neighbourhood of a
small spherical flaw, Phil. Mag. 1(1), 71-97.
Goodier, J.N. (1933) Concentration of stress around spherical and cylindrical inclusions and
flaws, J. Appl. Mech. (Trans. ASME) 55, 39-44.
Timoshenko, S.P. & Goodier, J.N. (1970) *Theory of Elasticity*, 3rd ed., McGraw-Hill, sec. 136.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

Array = NDArray[np.float64]

__all__ = ["deviatoric_principal", "surface_stress", "peak_deviatoric_hoop",
           "peak_hoop_stress", "equivalent_mean_stress"]


def deviatoric_principal(tensor: ArrayLike) -> tuple[Array, Array, Array]:
    """Mean stress p and the largest and smallest principal deviatoric stresses s1, s3 [MPa]
    of symmetric 3x3 stress tensors ``(..., 3, 3)`` [MPa]."""
    t = np.asarray(tensor, dtype=float)
    eig = np.linalg.eigvalsh(t)  # ascending
    p = eig.sum(axis=-1) / 3.0
    return p, eig[..., 2] - p, eig[..., 0] - p


def surface_stress(tensor: ArrayLike, normal: ArrayLike, *, poisson_ratio: ArrayLike,
                   cavity_pressure: ArrayLike = 0.0) -> Array:
    """Total stress tensor [MPa] at the point of a spherical cavity's surface with unit outward
    normal ``normal`` (3,) or (..., 3), far-field total stress ``tensor`` (..., 3, 3) [MPa],
    Poisson's ratio nu [1] and cavity pressure p_w [MPa]. The radial part (n n) is p_w; the
    tangential part is sigma_t(n) of the module docstring.
    """
    t = np.asarray(tensor, dtype=float)
    n = np.asarray(normal, dtype=float)
    n = n / np.linalg.norm(n, axis=-1, keepdims=True)
    nu = np.asarray(poisson_ratio, dtype=float)[..., None, None]
    pw = np.asarray(cavity_pressure, dtype=float)[..., None, None]
    p = (np.trace(t, axis1=-2, axis2=-1) / 3.0)[..., None, None]
    s = t - p * np.eye(3)
    nn = n[..., :, None] * n[..., None, :]
    proj = np.eye(3) - nn
    psp = proj @ s @ proj
    sn = np.einsum("...i,...ij,...j->...", n, s, n)[..., None, None]
    dev = 15.0 / (7.0 - 5.0 * nu) * ((1.0 - nu) * psp - nu * sn * proj)
    return np.asarray(1.5 * (p - pw) * proj + pw * proj + dev + pw * nn)


def peak_deviatoric_hoop(*, s1: ArrayLike, s3: ArrayLike, poisson_ratio: ArrayLike) -> Array:
    """Largest deviatoric addition to the tangential stress over the cavity surface [MPa]:
    15 [(1 - nu) s1 - nu s3] / (7 - 5 nu), s1 >= s3 principal deviatoric stresses [MPa]."""
    nu = np.asarray(poisson_ratio, dtype=float)
    return 15.0 * ((1.0 - nu) * np.asarray(s1) - nu * np.asarray(s3)) / (7.0 - 5.0 * nu)


def peak_hoop_stress(tensor: ArrayLike, *, poisson_ratio: ArrayLike,
                     cavity_pressure: ArrayLike = 0.0) -> Array:
    """Largest total tangential stress over the surface of a spherical cavity [MPa]:
    3/2 p - 1/2 p_w + 15 [(1 - nu) s1 - nu s3] / (7 - 5 nu)."""
    p, s1, s3 = deviatoric_principal(tensor)
    return (1.5 * p - 0.5 * np.asarray(cavity_pressure, dtype=float)
            + peak_deviatoric_hoop(s1=s1, s3=s3, poisson_ratio=poisson_ratio))


def equivalent_mean_stress(tensor: ArrayLike, *, poisson_ratio: ArrayLike) -> Array:
    """The hydrostatic stress [MPa] whose Lame sphere has the same peak tangential stress as
    the triaxial field: p + (2/3) 15 [(1 - nu) s1 - nu s3] / (7 - 5 nu). Equal to the mean
    stress for a hydrostatic field; what the tip sanding-onset formula takes as its stress."""
    p, s1, s3 = deviatoric_principal(tensor)
    return p + 2.0 / 3.0 * peak_deviatoric_hoop(s1=s1, s3=s3, poisson_ratio=poisson_ratio)
