"""Compaction cap in the p'-q plane: shear-enhanced onset of pore collapse.

Permanent compaction of a porous sandstone starts on a cap of the yield surface that meets the
mean-effective-stress axis at the pore-collapse pressure P* (hydrostatic test) and bends down
toward the shear envelope, so that shear lowers the mean stress at which compaction starts
(DiMaggio & Sandler 1971; Wong, David & Zhu 1997). The cap used here is the modified Cam clay
ellipse (Roscoe & Burland 1968)::

    F = q^2 + M^2 p' (p' - P*) = 0        (a circle of radius P*/2 about (P*/2, 0) in p', q/M)

p' the mean effective stress, q = sqrt(3 J2) the deviator stress [MPa], M the slope of the
critical-state line [1]. Only the wet (compaction) side p' >= P*/2 is the cap; the dry side is
shear failure, which the other mechanisms treat. The compaction excess::

    E = p' - p_cap(q),   p_cap(q) = P*/2 + sqrt(max((P*/2)^2 - q^2 / M^2, 0))

is in MPa, continuous, and E >= 0 exactly when the state is on or beyond the cap (F >= 0 with
p' >= P*/2; derived). At q = 0 it is p' - P*: the mean-stress criterion is the special case.

Default shape: M = 6 sin(phi) / (3 - sin(phi)), the triaxial-compression slope matching the
friction angle phi (Wood 1990, sec. 7.4, from memory), with the scenario's friction angle
when ``cap_m`` is not given.

References
----------
Roscoe, K.H. & Burland, J.B. (1968) On the generalized stress-strain behaviour of 'wet' clay,
in *Engineering Plasticity*, Cambridge Univ. Press, 535-609.
DiMaggio, F.L. & Sandler, I.S. (1971) Material model for granular soils, J. Eng. Mech. Div.
ASCE 97(3), 935-950.
Wong, T.-f., David, C. & Zhu, W. (1997) The transition from brittle faulting to cataclastic
flow in porous sandstones: mechanical deformation, J. Geophys. Res. 102(B2), 3009-3025.
Wood, D.M. (1990) *Soil Behaviour and Critical State Soil Mechanics*, Cambridge Univ. Press.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

Array = NDArray[np.float64]

__all__ = ["critical_state_slope", "cap_excess", "yield_function", "deviator_stress",
           "far_field_cap_pressure", "wall_cap_excess"]


def critical_state_slope(friction_angle: ArrayLike) -> Array:
    """M = 6 sin(phi) / (3 - sin(phi)) [1] from the friction angle phi [rad] (triaxial
    compression; Wood 1990, from memory)."""
    s = np.sin(np.asarray(friction_angle, dtype=float))
    return 6.0 * s / (3.0 - s)


def yield_function(p: ArrayLike, q: ArrayLike, *, collapse_pressure: ArrayLike,
                   m: ArrayLike) -> Array:
    """Modified Cam clay F = q^2 + M^2 p' (p' - P*) [MPa^2] (Roscoe & Burland 1968)."""
    p_ = np.asarray(p, dtype=float)
    m_ = np.asarray(m, dtype=float)
    return np.asarray(q, dtype=float) ** 2 + m_ * m_ * p_ * (p_ - np.asarray(collapse_pressure))


def cap_excess(p: ArrayLike, q: ArrayLike, *, collapse_pressure: ArrayLike,
               m: ArrayLike) -> Array:
    """Compaction excess E = p' - p_cap(q) [MPa] of the module docstring (E >= 0: on or
    beyond the cap). p' and q [MPa], P* [MPa], M [1]."""
    half = 0.5 * np.asarray(collapse_pressure, dtype=float)
    ratio = np.asarray(q, dtype=float) / np.asarray(m, dtype=float)
    return np.asarray(p, dtype=float) - half - np.sqrt(np.maximum(half * half - ratio * ratio,
                                                                  0.0))


def deviator_stress(s1: ArrayLike, s2: ArrayLike, s3: ArrayLike) -> Array:
    """q = sqrt(3 J2) = sqrt(((s1 - s2)^2 + (s2 - s3)^2 + (s3 - s1)^2) / 2) [MPa]."""
    a, b, c = (np.asarray(v, dtype=float) for v in (s1, s2, s3))
    return np.sqrt(0.5 * ((a - b) ** 2 + (b - c) ** 2 + (c - a) ** 2))


def far_field_cap_pressure(*, sv: ArrayLike, shmax0: ArrayLike, shmin0: ArrayLike,
                           p0: ArrayLike, path: ArrayLike, path_shmax: ArrayLike,
                           collapse_pressure: ArrayLike, m: ArrayLike) -> Array:
    """Highest reservoir pressure p_r in [0, p0] [MPa] at which the far-field state is on or
    beyond the cap under the depletion path; p0 when it is there initially, -inf when no
    depletion to zero pressure reaches it.

    On the path (Terzaghi effective stress, S_v constant, S_h(p_r) = S_h0 - g (p0 - p_r),
    docs/derivations.md, sec. 2) the effective principal stresses are affine in p_r, so F is
    a quadratic in p_r and p' affine. The set {F >= 0, p' >= P*/2} is closed and its highest
    point is p0, a root of F or the point where p' = P*/2: the highest candidate that meets
    both conditions (derived, docs/derivations.md, sec. 11).

    Parameters
    ----------
    sv, shmax0, shmin0 : array_like
        Initial total stresses [MPa].
    p0 : array_like
        Initial pore pressure [MPa].
    path, path_shmax : array_like
        Depletion paths dSh/dp and dSH/dp [1].
    collapse_pressure : array_like
        P* [MPa].
    m : array_like
        Critical-state slope M [1].
    """
    sv_, big, small, p0_, g, gb, pc, m_ = np.broadcast_arrays(
        *(np.asarray(v, dtype=float) for v in (sv, shmax0, shmin0, p0, path, path_shmax,
                                               collapse_pressure, m)))
    # effective stresses x_i = a_i + b_i p_r
    a = np.stack([sv_, big - gb * p0_, small - g * p0_])
    b = np.stack([-np.ones_like(sv_), gb - 1.0, g - 1.0])
    pa, pb = a.mean(axis=0), b.mean(axis=0)
    q0 = q1 = q2 = np.zeros_like(sv_)
    for i, j in ((0, 1), (1, 2), (2, 0)):
        c, e = a[i] - a[j], b[i] - b[j]
        q0, q1, q2 = q0 + 0.5 * c * c, q1 + c * e, q2 + 0.5 * e * e
    m2 = m_ * m_
    # F(p) = f2 p^2 + f1 p + f0
    f2 = q2 + m2 * pb * pb
    f1 = q1 + m2 * (2.0 * pa * pb - pc * pb)
    f0 = q0 + m2 * (pa * pa - pc * pa)
    disc = np.sqrt(np.maximum(f1 * f1 - 4.0 * f2 * f0, 0.0))
    with np.errstate(divide="ignore", invalid="ignore"):
        qq = -0.5 * (f1 + np.where(f1 >= 0.0, disc, -disc))
        cands = np.stack([p0_, qq / f2, f0 / qq, -f0 / f1, (0.5 * pc - pa) / pb])
    cands = np.where(np.isfinite(cands), np.clip(cands, 0.0, p0_), np.nan)
    x = a[:, None] + b[:, None] * cands[None]
    p_c = x.mean(axis=0)
    q_c = deviator_stress(x[0], x[1], x[2])
    scale = np.abs(pc) + np.abs(p_c) + q_c / m_ + 1.0
    ok = cap_excess(p_c, q_c, collapse_pressure=pc, m=m_) >= -1e-9 * scale
    best = np.max(np.where(ok & np.isfinite(cands), cands, -np.inf), axis=0)
    return np.asarray(best)


def wall_cap_excess(*, hoop: ArrayLike, axial: ArrayLike, shear: ArrayLike,
                    collapse_pressure: ArrayLike, m: ArrayLike) -> Array:
    """Compaction excess E [MPa] at a producing cavity wall from its effective hoop and axial
    stresses and the hoop-axial shear [MPa] (the effective radial stress is zero there):
    p' = (s_t + s_z)/3, q^2 = (s_t + s_z)^2 - 3 (s_t s_z - t^2) (derived from q = sqrt(3 J2)
    with principal stresses 0 and the two of the hoop-axial block)."""
    st_, sz, t = (np.asarray(v, dtype=float) for v in (hoop, axial, shear))
    tr = st_ + sz
    q = np.sqrt(np.maximum(tr * tr - 3.0 * (st_ * sz - t * t), 0.0))
    return cap_excess(tr / 3.0, q, collapse_pressure=collapse_pressure, m=m)
