"""Far-field stresses, cavity frames, depletion path and wall stresses of a cylindrical cavity.

All functions broadcast over leading array dimensions. Units and signs: :mod:`risk.conventions`.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

Array = NDArray[np.float64]

__all__ = [
    "LocalStress",
    "WallStress",
    "cavity_frame",
    "axis_orientation",
    "tunnel_frame",
    "far_field_tensor",
    "rotate_to_frame",
    "local_stress",
    "local_stress_frames",
    "poroelastic_coefficient",
    "uniaxial_strain_path",
    "depleted_stress",
    "wall_stresses",
    "in_plane_principal",
]


class LocalStress(NamedTuple):
    """Far-field total stress components in a cavity frame [MPa]."""

    sxx: Array
    syy: Array
    szz: Array
    sxy: Array
    sxz: Array
    syz: Array


class WallStress(NamedTuple):
    """Total stresses at the cavity wall [MPa] (cylindrical components, frame of the cavity)."""

    radial: Array
    hoop: Array
    axial: Array
    shear_hoop_axial: Array


def cavity_frame(inclination: ArrayLike, azimuth: ArrayLike) -> Array:
    """Rotation matrix whose rows are the unit vectors x, y, z of a cavity frame in NED.

    Parameters
    ----------
    inclination : array_like
        Angle of the cavity axis from vertical-down [rad], in [0, pi].
    azimuth : array_like
        Azimuth of the axis, clockwise from north [rad].

    Returns
    -------
    ndarray, shape (..., 3, 3)
        Rows x (high side), y, z (axis), as defined in :mod:`risk.conventions`.

    References
    ----------
    Fjaer, E. et al. (2008) *Petroleum Related Rock Mechanics*, 2nd ed., Elsevier, sec. 4.4
    (well-frame transformation); same convention as Zoback (2007) *Reservoir Geomechanics*,
    Appendix.
    """
    i = np.asarray(inclination, dtype=float)
    a = np.asarray(azimuth, dtype=float)
    ci, si, ca, sa = np.cos(i), np.sin(i), np.cos(a), np.sin(a)
    zero = np.zeros(np.broadcast(i, a).shape)
    x = np.stack(np.broadcast_arrays(ci * ca, ci * sa, -si + zero), axis=-1)
    y = np.stack(np.broadcast_arrays(-sa + zero, ca + zero, zero), axis=-1)
    z = np.stack(np.broadcast_arrays(si * ca, si * sa, ci + zero), axis=-1)
    return np.stack([x, y, z], axis=-2)


def axis_orientation(axis: ArrayLike) -> tuple[Array, Array]:
    """Inclination and azimuth [rad] of a direction given in NED components.

    A vertical axis has no azimuth; 0 is returned (results that are maximised over the wall
    angle do not depend on it).
    """
    v = np.asarray(axis, dtype=float)
    v = v / np.linalg.norm(v, axis=-1, keepdims=True)
    inc = np.arccos(np.clip(v[..., 2], -1.0, 1.0))
    horiz = np.hypot(v[..., 0], v[..., 1])
    az = np.where(horiz > 1e-12, np.arctan2(v[..., 1], v[..., 0]), 0.0)
    return inc, az


def tunnel_frame(
    *, well_inclination: ArrayLike, well_azimuth: ArrayLike, shot_angle: ArrayLike
) -> Array:
    """Frame of a perforation tunnel shot at ``shot_angle`` [rad] from the well's high side.

    The tunnel axis is ``cos(w) x + sin(w) y`` of the well frame; its frame is then built from
    that axis as for any cavity (:func:`cavity_frame`).

    Returns
    -------
    ndarray, shape (..., 3, 3)
    """
    w = np.asarray(shot_angle, dtype=float)
    well = cavity_frame(well_inclination, well_azimuth)
    axis = np.cos(w)[..., None] * well[..., 0, :] + np.sin(w)[..., None] * well[..., 1, :]
    inc, az = axis_orientation(axis)
    return cavity_frame(inc, az)


def far_field_tensor(
    *, shmax: ArrayLike, shmin: ArrayLike, sv: ArrayLike, shmax_azimuth: ArrayLike
) -> Array:
    """Andersonian far-field total stress tensor in NED [MPa].

    Parameters
    ----------
    shmax, shmin, sv : array_like
        Maximum and minimum horizontal and vertical total stresses [MPa].
    shmax_azimuth : array_like
        Azimuth of SHmax, clockwise from north [rad].

    Returns
    -------
    ndarray, shape (..., 3, 3)
    """
    big, small, vert, az = np.broadcast_arrays(
        *(np.asarray(v, dtype=float) for v in (shmax, shmin, sv, shmax_azimuth))
    )
    c, s = np.cos(az), np.sin(az)
    out = np.zeros(big.shape + (3, 3))
    out[..., 0, 0] = big * c * c + small * s * s
    out[..., 1, 1] = big * s * s + small * c * c
    out[..., 0, 1] = out[..., 1, 0] = (big - small) * c * s
    out[..., 2, 2] = vert
    return out


def rotate_to_frame(tensor: ArrayLike, frame: ArrayLike) -> Array:
    """S' = R S R^T: components of a NED tensor in the frame whose rows are R [MPa].

    Broadcasts over leading axes. Computed by the compiled gufunc
    :func:`risk.mechanics._frame_kernel.rotate`: each entry of R S and of (R S) R^T a chain of
    fused multiply-adds in a fixed order (the roundings of numpy's matmul on BLAS kernels
    with fused multiply-add; the same value for a case however many are computed with it).
    """
    from risk.mechanics._frame_kernel import rotate

    r = np.asarray(frame, dtype=float)
    s = np.asarray(tensor, dtype=float)
    if r.shape[-2:] != (3, 3) or s.shape[-2:] != (3, 3):
        raise ValueError(f"expected 3 x 3 tensors and frames, got {s.shape} and {r.shape}")
    return np.asarray(rotate(s, r))


def local_stress(tensor: ArrayLike, frame: ArrayLike) -> LocalStress:
    """The six components of a NED stress tensor in a cavity frame [MPa]."""
    t = rotate_to_frame(tensor, frame)
    return LocalStress(t[..., 0, 0], t[..., 1, 1], t[..., 2, 2],
                       t[..., 0, 1], t[..., 0, 2], t[..., 1, 2])


def local_stress_frames(tensor: ArrayLike, frames: ArrayLike) -> LocalStress:
    """Components of every tensor in every frame [MPa], compiled in closed form.

    The same quantities as ``local_stress(tensor[:, None], frames[None, :, None])`` (equal to
    rounding: the sums are taken in another order), in one pass without the stacked 3 x 3
    products of :func:`rotate_to_frame`, and the same for a case however many are computed
    with it (:mod:`risk.mechanics._rotation_kernel`).

    Parameters
    ----------
    tensor : array_like, shape (P, Q, 3, 3)
        NED tensors [MPa] (for example samples x depletion stages).
    frames : array_like, shape (M, 3, 3)
        Rotation matrices, rows the frame's unit vectors in NED [1].

    Returns
    -------
    LocalStress
        Six C-contiguous arrays of shape (P, M, Q) [MPa].

    References
    ----------
    Fjaer et al. (2008) sec. 4.4; Zoback (2007) Appendix.
    """
    from risk.mechanics._rotation_kernel import rotate_components

    t = np.ascontiguousarray(tensor, dtype=float)
    r = np.ascontiguousarray(frames, dtype=float)
    if t.ndim != 4 or t.shape[2:] != (3, 3) or r.ndim != 3 or r.shape[1:] != (3, 3):
        raise ValueError(f"expected tensors (P, Q, 3, 3) and frames (M, 3, 3), got "
                         f"{t.shape} and {r.shape}")
    out = np.empty((6, t.shape[0], r.shape[0], t.shape[1]))
    rotate_components(t, r, out)
    return LocalStress(*out)


def poroelastic_coefficient(*, biot: ArrayLike, poisson_ratio: ArrayLike) -> Array:
    """A = alpha (1 - 2 nu) / (1 - nu) [1].

    The coefficient of the steady radial-inflow stress change at a cavity wall and of the
    uniaxial-strain depletion path.

    References
    ----------
    Fjaer et al. (2008), sec. 4.3 (poroelastic wellbore stresses); Zoback (2007), ch. 3.
    """
    a = np.asarray(biot, dtype=float)
    nu = np.asarray(poisson_ratio, dtype=float)
    return a * (1.0 - 2.0 * nu) / (1.0 - nu)


def uniaxial_strain_path(*, biot: ArrayLike, poisson_ratio: ArrayLike) -> Array:
    """Depletion path gamma = dSh/dp under uniaxial strain, alpha (1 - 2 nu)/(1 - nu) [1]."""
    return poroelastic_coefficient(biot=biot, poisson_ratio=poisson_ratio)


def depleted_stress(
    *, initial: ArrayLike, initial_pore_pressure: ArrayLike, reservoir_pressure: ArrayLike,
    path: ArrayLike,
) -> Array:
    """Total horizontal stress after depletion, S(p_r) = S0 - gamma (p0 - p_r) [MPa].

    Parameters
    ----------
    initial : array_like
        Horizontal stress at the initial pore pressure [MPa].
    initial_pore_pressure, reservoir_pressure : array_like
        p0 and the stage's far-field pressure p_r [MPa].
    path : array_like
        gamma = dSh/dp [1].
    """
    return (np.asarray(initial, dtype=float)
            - np.asarray(path, dtype=float) * (np.asarray(initial_pore_pressure, dtype=float)
                                               - np.asarray(reservoir_pressure, dtype=float)))


def wall_stresses(
    local: LocalStress, *, theta: ArrayLike, wall_pressure: ArrayLike,
    reservoir_pressure: ArrayLike, poro_coefficient: ArrayLike, poisson_ratio: ArrayLike,
) -> WallStress:
    """Total stresses at the wall of a cylindrical cavity of any orientation [MPa].

    Generalized Kirsch solution at the wall (plane strain along the axis, isotropic linear
    elasticity) with the steady radial-inflow poroelastic term ``-A (p_r - p_w)``::

        sr  = p_w
        st  = sx + sy - 2 (sx - sy) cos 2t - 4 txy sin 2t - p_w - A (p_r - p_w)
        sz  = szz - nu [2 (sx - sy) cos 2t + 4 txy sin 2t] - A (p_r - p_w)
        ttz = 2 (tyz cos t - txz sin t)

    Parameters
    ----------
    local : LocalStress
        Far-field total stress in the cavity frame [MPa].
    theta : array_like
        Angle around the wall from the frame's x axis toward y [rad].
    wall_pressure, reservoir_pressure : array_like
        p_w and p_r [MPa].
    poro_coefficient : array_like
        A = alpha (1 - 2 nu)/(1 - nu) [1].
    poisson_ratio : array_like
        nu [1].

    References
    ----------
    Hiramatsu, Y. & Oka, Y. (1962); Fairhurst, C. (1968); as given in Fjaer et al. (2008),
    eqs. 4.81-4.86, and Zoback (2007), eq. 8.10 ff. Inflow term: Willson, S.M. et al. (2002),
    SPE 78168; Bellarby, J. (2009) *Well Completion Design*, ch. 3.
    """
    t = np.asarray(theta, dtype=float)
    pw = np.asarray(wall_pressure, dtype=float)
    inflow = np.asarray(poro_coefficient, dtype=float) * (np.asarray(reservoir_pressure) - pw)
    c2, s2 = np.cos(2.0 * t), np.sin(2.0 * t)
    dev = 2.0 * (local.sxx - local.syy) * c2 + 4.0 * local.sxy * s2
    hoop = local.sxx + local.syy - dev - pw - inflow
    axial = local.szz - np.asarray(poisson_ratio, dtype=float) * dev - inflow
    shear = 2.0 * (local.syz * np.cos(t) - local.sxz * np.sin(t))
    return WallStress(np.broadcast_to(pw, np.shape(hoop)).astype(float), hoop, axial,
                      np.broadcast_to(shear, np.shape(hoop)))


def in_plane_principal(local: LocalStress) -> tuple[Array, Array]:
    """Principal values (larger, smaller) of the in-plane 2x2 block of a local stress [MPa]."""
    mean = 0.5 * (local.sxx + local.syy)
    radius = np.hypot(0.5 * (local.sxx - local.syy), local.sxy)
    return mean + radius, mean - radius
