"""Stresses at a perforation tunnel's root: the wellbore's generalized Kirsch field.

A perforation tunnel leaves the wellbore radially at the shot angle w (from the well's high
side, the x axis of the well frame, toward y). Its own wall stresses are those of a cylindrical
cavity (:func:`risk.mechanics.stresses.wall_stresses`) whose "far field" is taken here as the
stress the wellbore leaves at the point of the tunnel axis at radius r from the well axis: the
superposition of two elastic solutions, the generalized Kirsch field of the wellbore and the
Kirsch concentration of the tunnel on top (docs/derivations.md, sec. 10). Far from the
wellbore (r -> infinity) it is the far field, and the tunnel model is the former one.

Generalized Kirsch field of the wellbore (radius R, plane strain along the well, isotropic
linear elasticity, pressure p_w on the wall; rho = R / r, cylindrical components of the well
frame)::

    s_r  = (sx + sy)/2 (1 - rho^2) + [(sx - sy)/2 cos 2t + txy sin 2t] (1 + 3 rho^4 - 4 rho^2)
           + p_w rho^2
    s_t  = (sx + sy)/2 (1 + rho^2) - [(sx - sy)/2 cos 2t + txy sin 2t] (1 + 3 rho^4) - p_w rho^2
    s_z  = szz - nu [2 (sx - sy) cos 2t + 4 txy sin 2t] rho^2
    t_rt = [(sy - sx)/2 sin 2t + txy cos 2t] (1 + 2 rho^2 - 3 rho^4)
    t_tz = (tyz cos t - txz sin t) (1 + rho^2)
    t_rz = (txz cos t + tyz sin t) (1 - rho^2)

Assumptions (stated in the memo): casing and cement carry no load (the open-hole field with the
flowing pressure on the rock: the larger concentration, conservative); the wellbore's own
inflow term is left out (the tunnel's inflow term, applied at its wall, stands for the flow);
both solutions elastic and superposed.

References
----------
Kirsch, E.G. (1898) Die Theorie der Elastizitaet und die Beduerfnisse der Festigkeitslehre,
Z. Vereines Deutscher Ingenieure 42, 797-807.
Hiramatsu, Y. & Oka, Y. (1962) Stress around a shaft or level excavated in ground with a
three-dimensional stress state, Mem. Fac. Eng. Kyoto Univ. 24, 56-76.
Fairhurst, C. (1968) Methods of determining in situ rock stresses at great depths, Tech. Rep.
1-68, Missouri River Div., US Army Corps of Engineers.
As given in Fjaer, E. et al. (2008) *Petroleum Related Rock Mechanics*, 2nd ed., Elsevier,
sec. 4.4, and Jaeger, Cook & Zimmerman (2007) *Fundamentals of Rock Mechanics*, sec. 8.11.
"""

from __future__ import annotations

from typing import Final, NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

from risk.mechanics.stresses import LocalStress

Array = NDArray[np.float64]

__all__ = ["ROOT_RADII", "WellboreField", "wellbore_field", "field_tensor", "root_stress",
           "cylindrical_basis", "well_local", "tunnel_local", "tunnel_in_plane",
           "onset_wall_pressure"]

#: Radii along the tunnel, as multiples of the wellbore radius, at which the tunnel is checked
#: in the wellbore's field: the root (1) and the first wellbore radii, where the concentration
#: decays (at 3 radii it is within about 10% of the far field).
ROOT_RADII: Final = (1.0, 1.25, 1.5, 2.0, 3.0)


class WellboreField(NamedTuple):
    """Cylindrical stress components of the wellbore's field [MPa] (well frame)."""

    rr: Array
    tt: Array
    zz: Array
    rt: Array
    tz: Array
    rz: Array


def wellbore_field(local: LocalStress, *, theta: ArrayLike, radius_ratio: ArrayLike,
                   wall_pressure: ArrayLike, poisson_ratio: ArrayLike) -> WellboreField:
    """Generalized Kirsch stresses [MPa] at angle ``theta`` [rad] and r/R = ``radius_ratio``
    [1] (>= 1) around a wellbore with far-field stress ``local`` in its frame [MPa], wall
    pressure p_w [MPa] and Poisson's ratio nu [1] (module docstring)."""
    t = np.asarray(theta, dtype=float)
    ratio = np.asarray(radius_ratio, dtype=float)
    if np.any(ratio < 1.0):
        raise ValueError("radius_ratio must be >= 1 (a point in the rock)")
    rho2 = 1.0 / ratio**2
    rho4 = rho2 * rho2
    pw = np.asarray(wall_pressure, dtype=float)
    nu = np.asarray(poisson_ratio, dtype=float)
    c2, s2, c1, s1 = np.cos(2 * t), np.sin(2 * t), np.cos(t), np.sin(t)
    mean = 0.5 * (local.sxx + local.syy)
    dev = 0.5 * (local.sxx - local.syy) * c2 + local.sxy * s2
    rr = mean * (1 - rho2) + dev * (1 + 3 * rho4 - 4 * rho2) + pw * rho2
    tt = mean * (1 + rho2) - dev * (1 + 3 * rho4) - pw * rho2
    zz = local.szz - nu * 4.0 * dev * rho2
    rt = (-0.5 * (local.sxx - local.syy) * s2 + local.sxy * c2) * (1 + 2 * rho2 - 3 * rho4)
    tz = (local.syz * c1 - local.sxz * s1) * (1 + rho2)
    rz = (local.sxz * c1 + local.syz * s1) * (1 - rho2)
    return WellboreField(*np.broadcast_arrays(rr, tt, zz, rt, tz, rz))


def cylindrical_basis(theta: ArrayLike) -> Array:
    """Rows e_r, e_t, e_z at angle ``theta`` [rad] in well-frame components (..., 3, 3)."""
    t = np.asarray(theta, dtype=float)
    c, s = np.cos(t), np.sin(t)
    zero = np.zeros_like(c)
    return np.stack([np.stack([c, s, zero], -1), np.stack([-s, c, zero], -1),
                     np.stack([zero, zero, zero + 1.0], -1)], -2)


def _cylindrical_matrix(field: WellboreField) -> Array:
    cyl = np.empty(field.rr.shape + (3, 3))
    cyl[..., 0, 0], cyl[..., 1, 1], cyl[..., 2, 2] = field.rr, field.tt, field.zz
    cyl[..., 0, 1] = cyl[..., 1, 0] = field.rt
    cyl[..., 1, 2] = cyl[..., 2, 1] = field.tz
    cyl[..., 0, 2] = cyl[..., 2, 0] = field.rz
    return cyl


def field_tensor(field: WellboreField, theta: ArrayLike) -> Array:
    """The cylindrical components at angle ``theta`` [rad] as a Cartesian tensor in the well
    frame (..., 3, 3) [MPa]."""
    basis = cylindrical_basis(theta)
    return np.asarray(np.swapaxes(basis, -1, -2) @ _cylindrical_matrix(field) @ basis)


def well_local(tensor_ned: ArrayLike, well_frame: ArrayLike) -> LocalStress:
    """Far-field components in the well frame [MPa]."""
    w = np.asarray(well_frame, dtype=float)
    t = w @ np.asarray(tensor_ned, dtype=float) @ np.swapaxes(w, -1, -2)
    return LocalStress(t[..., 0, 0], t[..., 1, 1], t[..., 2, 2],
                       t[..., 0, 1], t[..., 0, 2], t[..., 1, 2])


def root_stress(tensor_ned: ArrayLike, *, well_frame: ArrayLike, shot_angle: ArrayLike,
                radius_ratio: ArrayLike, wall_pressure: ArrayLike, poisson_ratio: ArrayLike
                ) -> Array:
    """NED total stress tensor [MPa] on the axis of a tunnel shot at ``shot_angle`` [rad], at
    r/R = ``radius_ratio`` [1], in the field of a wellbore whose frame is ``well_frame``
    (rows x, y, z in NED) under far-field ``tensor_ned`` [MPa], wall pressure p_w [MPa] and
    Poisson's ratio nu [1]. Broadcasts over leading dimensions."""
    w = np.asarray(well_frame, dtype=float)
    f = wellbore_field(well_local(tensor_ned, w), theta=shot_angle,
                       radius_ratio=radius_ratio, wall_pressure=wall_pressure,
                       poisson_ratio=poisson_ratio)
    return np.asarray(np.swapaxes(w, -1, -2) @ field_tensor(f, shot_angle) @ w)


def tunnel_local(field: WellboreField, rotation: ArrayLike, *, in_plane_only: bool = False
                 ) -> LocalStress:
    """Components of a wellbore-field stress in tunnel frames [MPa]: ``rotation`` (..., 3, 3)
    is F W^T B^T, the tunnel frame F (rows in NED), the well frame W and the cylindrical
    basis B at the shot angle (so that the tunnel-frame tensor is G C G^T).

    ``in_plane_only``: compute only sxx, syy, sxy (the others are nan), all that the
    effective-strength onset needs, at about half the cost."""
    g = np.asarray(rotation, dtype=float)
    if in_plane_only:
        g2 = g[..., :2, :]
        t = g2 @ _cylindrical_matrix(field) @ np.swapaxes(g2, -1, -2)
        nan = np.full(t.shape[:-2], np.nan)
        return LocalStress(t[..., 0, 0], t[..., 1, 1], nan, t[..., 0, 1], nan, nan)
    t = g @ _cylindrical_matrix(field) @ np.swapaxes(g, -1, -2)
    return LocalStress(t[..., 0, 0], t[..., 1, 1], t[..., 2, 2],
                       t[..., 0, 1], t[..., 0, 2], t[..., 1, 2])


def tunnel_in_plane(field: WellboreField, rotation: ArrayLike) -> LocalStress:
    """The in-plane components sxx, syy, sxy of :func:`tunnel_local` (the others nan) [MPa],
    in closed form: for rows g, h of ``rotation`` (..., 3, 3) and the symmetric cylindrical
    tensor C, s_gh = sum_ij g_i h_j C_ij, six products per component with coefficients that
    depend on the rotation alone (S' = G C G^T written out; Fjaer et al. 2008, sec. 4.4).
    Equal to :func:`tunnel_local` (the reference path: stacked 3 x 3 products) to rounding,
    without its (..., 3, 3) temporaries."""
    g = np.asarray(rotation, dtype=float)
    comps = (field.rr, field.tt, field.zz, field.rt, field.tz, field.rz)

    def coefficients(a: Array, b: Array) -> tuple[Array, ...]:
        # sum_ij a_i b_j C_ij with C_ij = C_ji, grouped by the six distinct components
        return (a[..., 0] * b[..., 0], a[..., 1] * b[..., 1], a[..., 2] * b[..., 2],
                a[..., 0] * b[..., 1] + a[..., 1] * b[..., 0],
                a[..., 1] * b[..., 2] + a[..., 2] * b[..., 1],
                a[..., 0] * b[..., 2] + a[..., 2] * b[..., 0])

    def contract(coef: tuple[Array, ...]) -> Array:
        out = coef[0] * comps[0]
        for c, f in zip(coef[1:], comps[1:], strict=True):
            out = out + c * f
        return np.asarray(out)

    sxx = contract(coefficients(g[..., 0, :], g[..., 0, :]))
    syy = contract(coefficients(g[..., 1, :], g[..., 1, :]))
    sxy = contract(coefficients(g[..., 0, :], g[..., 1, :]))
    nan = np.full(sxx.shape, np.nan)
    return LocalStress(sxx, syy, nan, sxy, nan, nan)


def _in_plane(loc0: LocalStress, loc1: LocalStress, p: Array) -> tuple[Array, Array, Array]:
    """Mean, half-difference and shear of the in-plane block at wall pressure p [MPa]."""
    sxx = loc0.sxx + p * loc1.sxx
    syy = loc0.syy + p * loc1.syy
    sxy = loc0.sxy + p * loc1.sxy
    return 0.5 * (sxx + syy), 0.5 * (sxx - syy), sxy


def onset_wall_pressure(loc0: LocalStress, loc1: LocalStress, *, strength: ArrayLike,
                        reservoir_pressure: ArrayLike, poro_coefficient: ArrayLike
                        ) -> tuple[Array, Array]:
    """Effective-strength onset of a tunnel whose far field depends on the wall pressure.

    The tunnel's far-field stress in its frame is ``loc0 + p_w loc1`` [MPa] (the wellbore's
    field is affine in p_w). Sanding starts where the largest effective hoop stress,
    3 s1 - s3 - (2 - A) p_w - A p_r (s1 >= s3 in-plane principal total stresses; Willson et al.
    2002, as in :func:`risk.mechanics.sanding.cylinder_onset_wall_pressure`), reaches U::

        f(p) = alpha + beta p + 4 sqrt((h0 + h1 p)^2 + (e0 + e1 p)^2)

    (h the in-plane half-difference, e the in-plane shear, alpha and beta the affine rest).
    f is convex in p, so with f(p_r) < 0 <= f(0) it has exactly one root in [0, p_r]: a root
    of the quadratic 16 [(h0 + h1 p)^2 + (e0 + e1 p)^2] = (alpha + beta p)^2 with
    alpha + beta p <= 0 (derived, docs/derivations.md, sec. 10); the few cases the quadratic
    leaves uncertain by rounding are bisected.

    Returns
    -------
    (p_wc, theta) : critical wall pressure [MPa] (p_r: fails with no drawdown; -inf: never
    in [0, p_r]) and the tunnel wall angle [rad] of the peak hoop stress (nan for never).
    """
    u = np.asarray(strength, dtype=float)
    pr = np.asarray(reservoir_pressure, dtype=float)
    a = np.asarray(poro_coefficient, dtype=float)
    shape = np.broadcast(loc0.sxx, loc1.sxx, u, pr, a).shape

    def b(x: ArrayLike) -> Array:  # flattened to 1-D (0-d inputs included)
        return np.broadcast_to(np.asarray(x, dtype=float), shape).reshape(-1)

    # the in-plane block at p = 0 is loc0's own (adding p loc1 = 0 changes no value)
    m0, h0, e0 = (b(v) for v in (0.5 * (loc0.sxx + loc0.syy), 0.5 * (loc0.sxx - loc0.syy),
                                 loc0.sxy))
    m1 = b(0.5 * (loc1.sxx + loc1.syy))
    h1 = b(0.5 * (loc1.sxx - loc1.syy))
    e1 = b(loc1.sxy)
    alpha = 2.0 * m0 - b(a * pr) - b(u)
    beta = 2.0 * m1 - b(2.0 - a)
    top = b(pr)

    def excess(p: Array) -> Array:
        return alpha + beta * p + 4.0 * np.hypot(h0 + h1 * p, e0 + e1 * p)

    f_top = excess(top)
    f_low = excess(np.zeros(top.shape))
    solve = (f_top < 0.0) & (f_low >= 0.0)
    pw = np.where(f_top >= 0.0, top, -np.inf)
    if np.any(solve):
        idx = np.nonzero(solve)
        al, be, hh0, hh1, ee0, ee1, tp = (v[idx] for v in (alpha, beta, h0, h1, e0, e1, top))
        c2 = 16.0 * (hh1 * hh1 + ee1 * ee1) - be * be
        c1 = 2.0 * (16.0 * (hh0 * hh1 + ee0 * ee1) - al * be)
        c0 = 16.0 * (hh0 * hh0 + ee0 * ee0) - al * al
        disc = np.sqrt(np.maximum(c1 * c1 - 4.0 * c2 * c0, 0.0))
        q = -0.5 * (c1 + np.where(c1 >= 0.0, disc, -disc))
        with np.errstate(divide="ignore", invalid="ignore"):
            cands = np.stack([q / c2, c0 / q, -c0 / c1])  # the last: c2 = 0 (linear)
        cands = np.where(np.isfinite(cands), cands, np.nan)

        def f_sub(p: Array) -> Array:
            return al + be * p + 4.0 * np.hypot(hh0 + hh1 * p, ee0 + ee1 * p)

        res = np.abs(f_sub(cands))
        ok_range = (cands >= 0.0) & (cands <= tp)
        res = np.where(ok_range, res, np.inf)
        best = np.argmin(np.where(np.isnan(res), np.inf, res), axis=0)
        root = np.take_along_axis(cands, best[None], axis=0)[0]
        scale = np.abs(al) + np.abs(be) * tp + 1.0
        bad = ~(np.take_along_axis(res, best[None], axis=0)[0] <= 1e-9 * scale)
        if np.any(bad):  # bisection where rounding left the quadratic's answer uncertain
            lo, hi = np.zeros(int(bad.sum())), tp[bad].copy()
            sub = (al[bad], be[bad], hh0[bad], hh1[bad], ee0[bad], ee1[bad])
            for _ in range(60):
                mid = 0.5 * (lo + hi)
                pos = sub[0] + sub[1] * mid + 4.0 * np.hypot(sub[2] + sub[3] * mid,
                                                             sub[4] + sub[5] * mid) >= 0.0
                lo, hi = np.where(pos, mid, lo), np.where(pos, hi, mid)
            root[bad] = 0.5 * (lo + hi)
        pw[idx] = root
    pw = pw.reshape(shape)
    at = np.where(np.isfinite(pw), pw, 0.0)
    _, half, sxy = _in_plane(loc0, loc1, at)
    theta = np.mod(0.5 * (np.arctan2(4.0 * sxy, 4.0 * half) + np.pi), np.pi)
    return pw, np.where(np.isfinite(pw), np.broadcast_to(theta, shape), np.nan)
