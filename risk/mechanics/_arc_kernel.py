"""Compiled Drucker-Prager and modified Lade yield onset at a cavity wall on the half circle.

The fast path (numba) of :func:`risk.mechanics.yield_onset.critical_wall_pressure` for the
three Drucker-Prager matchings (Drucker & Prager 1952) and modified Lade (Ewy 1999);
conventions, outcomes and the stress path are documented there. It follows the
Mohr-Coulomb kernel (:mod:`risk.mechanics._mc_kernel`): the answer is the largest, over the
wall angle, of the critical wall pressure at one angle, taken in closed form (or by a fixed
number of steps), and the angle search is confined by a derived argument.

Value at one angle
    With psi = 2 theta and the direction (cos psi, sin psi), the wall's principal effective
    stresses are 0 and m +- r (mean m, half difference h of the hoop and axial stresses,
    r^2 = h^2 + w, w the squared hoop-axial shear). Drucker-Prager reads
    F = sqrt((m^2 + 3 r^2)/3) - k - 2 lambda m (J2 and I1 of those principal stresses),
    convex in the stress, so at one angle the safe wall pressures form an interval; where it
    holds p_r, the failing ones in [0, p_r] are [0, v] and v is a root of a quadratic in p
    (docs/derivations.md, sec. 15), polished by one Newton step. The value searched is v where
    F(0) >= 0 > F(p_r), p_r + F(p_r) where the angle fails with no drawdown and F(0) < 0 where
    it never fails: continuous in the angle where F(p_r) < 0, and its slope (-F_psi/F_p at
    the root, F_psi at the ends) keeps its sign across the joins (docs/derivations.md,
    sec. 15.1).

Modified Lade
    The same search on a function of the same sign as Ewy's excess, G = P/(3 u^2) with
    P = (I1'')^3 - K I3'' where every shifted principal stress is positive, else the smaller
    shifted one's negative (docs/derivations.md, sec. 15.3). At one angle P is a cubic in p
    with one sign change in [0, p_r] where G(0) >= 0 > G(p_r) (the Lade surface is convex),
    found by a fixed number of Halley steps on P/u^3 kept in their bracket: 4 from p = 0 on
    the grid, 2 from the case's last crossing in the later steps, 6 from p = 0 for the final
    value, whose last step must have moved by less than 1e-7 (1 + p_r) MPa (else the case
    takes the general path).

Where to look for the worst angle
    F is convex in the stress and even in the hoop-axial shear, so at fixed hoop and axial
    stresses it does not fall as w rises; the value at one angle then does not fall either.
    Reflecting psi about the direction of largest u (u = -dev) keeps the hoop and axial
    stresses and lowers w on the far side, so the maximum lies on the half circle from the
    largest-u direction towards the largest-w direction, whose ends have slopes pointing
    inwards (docs/derivations.md, sec. 15.1; as for Mohr-Coulomb).

Search
    The half circle is parametrised by the half-angle tangent t in [-1, 1] from its middle
    direction. A grid of _GRID + 1 values of t (values and slopes) brackets the maxima by sign
    changes of the slope; the best bracket takes, as in the Mohr-Coulomb kernel, a
    cubic Hermite step then Anderson-Bjorck regula falsi steps on the slope (Anderson & Bjorck
    1973, BIT 13, 253), every case alike and branch-free so the loops vectorise, and Brent's
    zero finder (Brent 1973, ch. 4) where those have not converged. Where the value found is
    below p_r, F at p_r and the tensile cut-off's -lo at p_r are maximised on the half circle
    by the same search (an angle can fail with no drawdown but not at full drawdown, in a
    sector the value's grid can miss: docs/derivations.md, sec. 15.1), each only where a cheap
    bound over every angle does not rule it out (the same bound at p = 0 skips the value's
    search where no angle fails at full drawdown). Cases whose grid shows two maxima or more
    that might compete (derivations, sec. 15.1) take the general envelope iteration of
    :mod:`risk.mechanics._onset_kernel` (the previous compiled path) instead.

References
----------
Drucker, D.C. & Prager, W. (1952) Soil mechanics and plastic analysis or limit design.
Q. Appl. Math. 10, 157-165. Ewy, R.T. (1999) Wellbore-stability predictions by use of a
modified Lade criterion. SPE Drill. & Completion 14(2), 85-91. Lade, P.V. (1977)
Elasto-plastic stress-strain theory for cohesionless soil with curved yield surfaces. Int. J.
Solids Struct. 13, 1019-1035. Halley's iteration: Press, W.H. et al. (2007) Numerical
Recipes, 3rd ed., sec. 9.4. Anderson, N. & Bjorck, A. (1973) A new high order method of
regula falsi type for computing a root of an equation. BIT 13, 253-264. Brent, R.P. (1973)
Algorithms for Minimization without Derivatives, ch. 4.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit, prange, types

from risk.mechanics._onset_kernel import (
    _LADE,
    _solve_case,
    _strength_constants,
    _tension_bound,
)

_BLOCK = 256  # cases per block: the state of a block stays in the processor's cache
_GRID = 8  # intervals of the grid in t over the half circle
_ROUNDS = 6  # Anderson-Bjorck steps for every case
_THIRD = 1.0 / 3.0
_VALUE, _TENSION, _SHEAR_R, _POLISHED = 0, 1, 2, 3  # the function a search maximises
_L_VALUE, _L_POLISHED, _L_SHEAR_R = 4, 5, 6  # the same for modified Lade
_HALLEY = 4  # Halley steps of the modified Lade crossing on the search's grid, from p = 0
_HALLEY_WARM = 2  # in its later steps, from the crossing last found for the case
_HALLEY_POLISH = 6  # and for the final value, from p = 0 (derivations, sec. 15.3)

_jit = njit(cache=True, error_model="numpy", nogil=True)
_jit_inline = njit(cache=True, error_model="numpy", nogil=True, inline="always")
_IN = types.Array(types.float64, 3, "A", readonly=True)
_OUT = types.Array(types.float64, 1, "C")
_jit_parallel = njit(types.void(*([_IN] * 15), types.int64, types.int64, _OUT, _OUT, _OUT),
                     cache=True, error_model="numpy", nogil=True, parallel=True)


@_jit_inline
def _dp(m: float, h: float, w: float, kk: float, lam2: float
        ) -> tuple[float, float, float, float]:
    """Drucker-Prager excess F = sqrt(J2) - k - 2 lambda m, sqrt(J2) = sqrt((m^2 + 3 h^2 +
    3 w)/3), its partial derivatives in m and h (lam2 = 2 lambda) and 1/(3 sqrt(J2)) (dF/dw
    is 1.5 times that)."""
    j = math.sqrt(max((m * m + 3.0 * (h * h + w)) * _THIRD, 1e-300))
    inv = 1.0 / (3.0 * j)
    return j - kk - lam2 * m, m * inv - lam2, 3.0 * h * inv, inv


@_jit_inline
def _dir(t: float, cm: float, sm: float, sg: float, k0: float, z0: float, pp: float,
         qq: float, w0: float, w1: float, w2: float, bt: float, bz: float, nu: float,
         p_r: float, kk: float, lam2: float, polish: bool) -> tuple[float, float]:
    """The value at the direction turned from (cm, sm) by 2 atan(t) (sense sg) and its slope
    in psi (module docstring); with ``polish``, the crossing takes one Newton step on F
    against rounding (the final value; the search compares unpolished ones). Branch-free
    (vectorises)."""
    t2 = t * t
    inv = 1.0 / (1.0 + t2)
    cx, sx = (1.0 - t2) * inv, sg * 2.0 * t * inv
    c = cm * cx - sm * sx
    s = sm * cx + cm * sx
    dev = pp * c + qq * s
    w = max(w0 + w1 * c + w2 * s, 0.0)
    ddev = sg * (qq * c - pp * s)
    dw = sg * (w2 * c - w1 * s)
    at = k0 - dev
    az = z0 - nu * dev
    ma = 0.5 * (at + az)  # m = ma - mb p, h = ha - p/2 (b_t - b_z = 1)
    ha = 0.5 * (at - az)
    mb = 0.5 * (bt + bz)
    dm = -0.5 * (1.0 + nu) * ddev  # d/dpsi at fixed p
    dh = -0.5 * (1.0 - nu) * ddev
    # F and its slope in psi at 0 and at p_r (dF/dw = 1/(2 sqrt(J2)))
    f0, fm0, fh0, i0 = _dp(ma, ha, w, kk, lam2)
    g0 = fm0 * dm + fh0 * dh + 1.5 * dw * i0
    fr, fmr, fhr, ir = _dp(ma - mb * p_r, ha - 0.5 * p_r, w, kk, lam2)
    gr = fmr * dm + fhr * dh + 1.5 * dw * ir
    # the crossing: root of Q(p) = (m^2 + 3 h^2 + 3 w)/3 - (k + 2 lambda m)^2 = q2 p^2 +
    # q1 p + q0 in [0, p_r] (derivations, sec. 15), the one root there where F(0) >= 0 >
    # F(p_r); its slope by implicit differentiation, -Q_psi/Q_p
    e0 = kk + lam2 * ma
    e1 = lam2 * mb
    q2 = (mb * mb + 0.75) * _THIRD - e1 * e1
    q1 = -2.0 * (ma * mb + 1.5 * ha) * _THIRD + 2.0 * e0 * e1
    q0 = (ma * ma + 3.0 * (ha * ha + w)) * _THIRD - e0 * e0
    sd = math.sqrt(max(q1 * q1 - 4.0 * q2 * q0, 0.0))
    half = -0.5 * (q1 + (sd if q1 >= 0.0 else -sd))
    r1 = half / q2
    r2 = q0 / half
    in1 = (r1 >= 0.0) & (r1 <= p_r)
    x = r1 if in1 else r2
    x = min(max(x, 0.0), p_r) if x == x else 0.5 * p_r
    dq1 = -2.0 * (mb * dm + 1.5 * dh) * _THIRD + 2.0 * e1 * lam2 * dm
    dq0 = 2.0 * (ma * dm + 3.0 * ha * dh) * _THIRD + dw - 2.0 * e0 * lam2 * dm
    qp = 2.0 * q2 * x + q1
    gx = -(dq1 * x + dq0) / qp
    if polish:
        fx, fmx, fhx, _ = _dp(ma - mb * x, ha - 0.5 * x, w, kk, lam2)
        fp = -mb * fmx - 0.5 * fhx  # dF/dp < 0 at the crossing
        xn = x - fx / fp if fp < 0.0 else x
        x = min(max(xn, 0.0), p_r) if xn == xn else x
    top = fr >= 0.0
    bottom = (f0 < 0.0) & (not top)
    v = p_r + fr if top else (f0 if bottom else x)
    g = gr if top else (g0 if bottom else gx)
    return v, g


@_jit_inline
def _tension(t: float, cm: float, sm: float, sg: float, k0: float, z0: float, pp: float,
             qq: float, w0: float, w1: float, w2: float, bt: float, bz: float, nu: float,
             p_r: float) -> tuple[float, float]:
    """-lo = r - m at p_r (the tensile cut-off's smooth function, as in the general path) at
    the direction turned from (cm, sm) by 2 atan(t), and its slope in psi. Branch-free."""
    t2 = t * t
    inv = 1.0 / (1.0 + t2)
    cx, sx = (1.0 - t2) * inv, sg * 2.0 * t * inv
    c = cm * cx - sm * sx
    s = sm * cx + cm * sx
    dev = pp * c + qq * s
    w = max(w0 + w1 * c + w2 * s, 0.0)
    ddev = sg * (qq * c - pp * s)
    dw = sg * (w2 * c - w1 * s)
    st = k0 - dev - bt * p_r
    sz = z0 - nu * dev - bz * p_r
    h = 0.5 * (st - sz)
    r = math.sqrt(h * h + w)
    dh = -0.5 * (1.0 - nu) * ddev
    dm = -0.5 * (1.0 + nu) * ddev
    return r - 0.5 * (st + sz), (h * dh + 0.5 * dw) / max(r, 1e-300) - dm


@_jit_inline
def _shear_r(t: float, cm: float, sm: float, sg: float, k0: float, z0: float, pp: float,
             qq: float, w0: float, w1: float, w2: float, bt: float, bz: float, nu: float,
             p_r: float, kk: float, lam2: float) -> tuple[float, float]:
    """F at p_r at the direction turned from (cm, sm) by 2 atan(t), and its slope in psi.
    Branch-free."""
    t2 = t * t
    inv = 1.0 / (1.0 + t2)
    cx, sx = (1.0 - t2) * inv, sg * 2.0 * t * inv
    c = cm * cx - sm * sx
    s = sm * cx + cm * sx
    dev = pp * c + qq * s
    w = max(w0 + w1 * c + w2 * s, 0.0)
    ddev = sg * (qq * c - pp * s)
    dw = sg * (w2 * c - w1 * s)
    st = k0 - dev - bt * p_r
    sz = z0 - nu * dev - bz * p_r
    fr, fmr, fhr, ir = _dp(0.5 * (st + sz), 0.5 * (st - sz), w, kk, lam2)
    return fr, -0.5 * (1.0 + nu) * ddev * fmr - 0.5 * (1.0 - nu) * ddev * fhr + 1.5 * dw * ir


@_jit_inline
def _shear_bound(p: float, k0: float, z0: float, pp: float, qq: float, w0: float, w1: float,
                 w2: float, bt: float, bz: float, nu: float, kk: float, lam2: float) -> float:
    """An upper bound over every wall angle of F at wall pressure p (cheap; skips searches
    that cannot reach zero): with |dev| <= amp, m lies in [m_lo, m_hi] and r^2 <= h_max^2 +
    w_max, and sqrt((m^2 + 3 r^2)/3) - 2 lambda m is convex in m, so largest at an end."""
    amp = math.sqrt(pp * pp + qq * qq)  # |dev| <= amp
    mc = 0.5 * (k0 + z0) - 0.5 * (bt + bz) * p
    m_lo = mc - 0.5 * (1.0 + nu) * amp
    m_hi = mc + 0.5 * (1.0 + nu) * amp
    h_max = abs(0.5 * (k0 - z0) - 0.5 * p) + 0.5 * (1.0 - nu) * amp
    r2 = 3.0 * (h_max * h_max + w0 + math.sqrt(w1 * w1 + w2 * w2))
    f_lo = math.sqrt((m_lo * m_lo + r2) * _THIRD) - lam2 * m_lo
    f_hi = math.sqrt((m_hi * m_hi + r2) * _THIRD) - lam2 * m_hi
    return max(f_lo, f_hi) - kk


@_jit_inline
def _lade_at(p: float, xa: float, za: float, ua: float, w: float, dx: float, dz: float,
             dw: float, bt: float, bz: float, ss: float, ks: float) -> tuple[float, float]:
    """The modified Lade excess in sign, G [MPa], at wall pressure p, and its slope in psi
    (docs/derivations.md, sec. 15.3): G = P/(3 u^2), P = u^3 - K S (X Z - w), where every
    shifted principal stress is positive (u = I1'', X, Z the shifted hoop and axial stresses;
    xa, za, ua their values at p = 0 and dx, dz their slopes in psi), else the smaller shifted
    eigenvalue's negative, -(lo + S) = r - (X + Z)/2 > 0: G has the sign of the excess of
    risk.mechanics.criteria.modified_lade. Branch-free."""
    x_ = xa - bt * p
    z_ = za - bz * p
    u = ua - (bt + bz) * p
    du = dx + dz
    hh = 0.5 * (x_ - z_)
    rr = math.sqrt(hh * hh + w)
    ten = rr - 0.5 * (x_ + z_)  # -(lo + S)
    gten = (hh * 0.5 * (dx - dz) + 0.5 * dw) / max(rr, 1e-300) - 0.5 * du
    iu = 1.0 / u
    pl = u * u * u - ks * (x_ * z_ - w)
    dpl = 3.0 * u * u * du - ks * (dx * z_ + x_ * dz - dw)
    gl = pl * iu * iu * _THIRD
    ggl = (dpl - 2.0 * pl * du * iu) * iu * iu * _THIRD
    use = (u > 0.0) & (gl >= ten)
    return (gl if use else ten), (ggl if use else gten)


@_jit_inline
def _lade_dir(t: float, cm: float, sm: float, sg: float, k0: float, z0: float, pp: float,
              qq: float, w0: float, w1: float, w2: float, bt: float, bz: float, nu: float,
              p_r: float, ss: float, ks: float, x0: float, steps: int, check: bool
              ) -> tuple[float, float]:
    """As :func:`_dir` for modified Lade (ss = S, ks = K S): the crossing in [0, p_r] is the
    root of the cubic P by ``steps`` Halley steps on P/u^3 from x0 inside the bracket [0,
    p_r]; with ``check`` the slope is set to nan where the last step still moved by more
    than 1e-7 (1 + p_r) (the caller then takes the general path; docs/derivations.md,
    sec. 15.3). Branch-free (vectorises)."""
    t2 = t * t
    inv = 1.0 / (1.0 + t2)
    cx, sx = (1.0 - t2) * inv, sg * 2.0 * t * inv
    c = cm * cx - sm * sx
    s = sm * cx + cm * sx
    dev = pp * c + qq * s
    w = max(w0 + w1 * c + w2 * s, 0.0)
    ddev = sg * (qq * c - pp * s)
    dw = sg * (w2 * c - w1 * s)
    xa = k0 - dev + ss  # shifted hoop and axial stresses and I1'' at p = 0
    za = z0 - nu * dev + ss
    ua = xa + za + ss
    dx = -ddev  # their slopes in psi at fixed p
    dz = -nu * ddev
    # G at p = 0 without its tension branch: where a shifted stress is not positive at p = 0
    # it is not at p_r either (lo does not rise with p), so G(p_r) >= 0 decides first
    iu = 1.0 / ua
    f0 = ua * ua * ua - ks * (xa * za - w)
    g0 = (3.0 * ua * ua * (dx + dz) - ks * (dx * za + xa * dz - dw)
          - 2.0 * f0 * (dx + dz) * iu) * iu * iu * _THIRD
    f0 = f0 * iu * iu * _THIRD
    fr, gr = _lade_at(p_r, xa, za, ua, w, dx, dz, dw, bt, bz, ss, ks)
    # the crossing where G(0) >= 0 > G(p_r): every shifted stress is positive on [0, p_r]
    # there and P has one sign change in it (derivations, sec. 15.3)
    ub = bt + bz
    bb = 2.0 * ks * bt * bz
    x, lo, hi, last = x0, 0.0, p_r, 0.0
    for _ in range(steps):
        x_ = xa - bt * x
        z_ = za - bz * x
        u = ua - ub * x
        pl = u * u * u - ks * (x_ * z_ - w)
        d1 = -3.0 * u * u * ub + ks * (bt * z_ + bz * x_)
        d2 = 6.0 * u * ub * ub - bb
        e1 = d1 * u + 3.0 * ub * pl  # (P/u^3)' u^4
        e2 = (d2 * u + 6.0 * ub * d1) * u + 12.0 * ub * ub * pl  # (P/u^3)'' u^5
        fail = pl >= 0.0
        lo = x if fail else lo
        hi = hi if fail else x
        xn = x - 2.0 * pl * e1 * u / (2.0 * e1 * e1 - pl * e2)
        inside = (xn >= lo) & (xn <= hi)  # false for nan
        xn = xn if inside else 0.5 * (lo + hi)
        last = abs(xn - x)
        x = xn
    x_ = xa - bt * x
    z_ = za - bz * x
    u = ua - ub * x
    d1 = -3.0 * u * u * ub + ks * (bt * z_ + bz * x_)
    dpl = 3.0 * u * u * (dx + dz) - ks * (dx * z_ + x_ * dz - dw)
    gx = -dpl / d1
    if check:
        gx = gx if last <= 1e-7 * (1.0 + p_r) else math.nan
    top = fr >= 0.0
    bottom = (f0 < 0.0) & (not top)
    v = p_r + fr if top else (f0 if bottom else x)
    g = gr if top else (g0 if bottom else gx)
    return v, g


@_jit_inline
def _lade_shear_r(t: float, cm: float, sm: float, sg: float, k0: float, z0: float,
                  pp: float, qq: float, w0: float, w1: float, w2: float, bt: float, bz: float,
                  nu: float, p_r: float, ss: float, ks: float) -> tuple[float, float]:
    """G of :func:`_lade_at` at p_r at the direction turned from (cm, sm) by 2 atan(t), and
    its slope in psi. Branch-free."""
    t2 = t * t
    inv = 1.0 / (1.0 + t2)
    cx, sx = (1.0 - t2) * inv, sg * 2.0 * t * inv
    c = cm * cx - sm * sx
    s = sm * cx + cm * sx
    dev = pp * c + qq * s
    w = max(w0 + w1 * c + w2 * s, 0.0)
    ddev = sg * (qq * c - pp * s)
    dw = sg * (w2 * c - w1 * s)
    xa = k0 - dev + ss
    za = z0 - nu * dev + ss
    return _lade_at(p_r, xa, za, xa + za + ss, w, -ddev, -nu * ddev, dw, bt, bz, ss, ks)


@_jit_inline
def _tension_bound_u(p: float, k: tuple) -> float:
    """A bound over every wall angle of -lo - T0 at wall pressure p, tighter than
    :func:`risk.mechanics._onset_kernel._tension_bound` (which bounds m and h apart): both
    are affine in u = -dev in [-U, U], U = (P^2 + Q^2)^(1/2), and with w at its largest,
    sqrt(h(u)^2 + w_max) - m(u) is convex in u, so at most its larger value at u = -U, U
    (docs/derivations.md, sec. 15.3). k: the tuple of :func:`_tension_bound`."""
    k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, _, t0 = k
    amp = math.sqrt(pp * pp + qq * qq)
    mc = 0.5 * (k0 + z0) - 0.5 * (bt + bz) * p
    hc = 0.5 * (k0 - z0) - 0.5 * (bt - bz) * p
    wm = w0 + math.sqrt(w1 * w1 + w2 * w2)
    a = 0.5 * (1.0 - nu) * amp
    b = 0.5 * (1.0 + nu) * amp
    hp, hm = hc + a, hc - a
    return max(math.sqrt(hp * hp + wm) - mc - b, math.sqrt(hm * hm + wm) - mc + b) - t0


@_jit_inline
def _lade_bound(p: float, k0: float, z0: float, pp: float, qq: float, w0: float, w1: float,
                w2: float, bt: float, bz: float, nu: float, ss: float, ks: float) -> float:
    """A number of the sign of an upper bound over every wall angle of the modified Lade
    excess at wall pressure p (as :func:`_shear_bound`): with m in [m_lo, m_hi] and
    r^2 <= r2, where m_lo + S > sqrt(r2) (every shifted stress positive at every angle), L =
    I1'' - cbrt(K I3'') rises with r and is convex in m (derivations, sec. 15.3), so its
    largest value is at an end with r^2 = r2; else 1 (not ruled out)."""
    amp = math.sqrt(pp * pp + qq * qq)
    mc = 0.5 * (k0 + z0) - 0.5 * (bt + bz) * p
    m_lo = mc - 0.5 * (1.0 + nu) * amp
    m_hi = mc + 0.5 * (1.0 + nu) * amp
    h_max = abs(0.5 * (k0 - z0) - 0.5 * p) + 0.5 * (1.0 - nu) * amp
    r2 = h_max * h_max + w0 + math.sqrt(w1 * w1 + w2 * w2)
    u_lo = 2.0 * m_lo + 3.0 * ss
    u_hi = 2.0 * m_hi + 3.0 * ss
    y_lo = m_lo + ss
    y_hi = m_hi + ss
    g_lo = (u_lo * u_lo * u_lo - ks * (y_lo * y_lo - r2)) / (3.0 * u_lo * u_lo)
    g_hi = (u_hi * u_hi * u_hi - ks * (y_hi * y_hi - r2)) / (3.0 * u_hi * u_hi)
    return max(g_lo, g_hi) if y_lo > math.sqrt(r2) else 1.0


@_jit
def _evaluate(kind, tt, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk, lam2):
    """The function a search maximises, at t = tt[r] for every case r of a block: the value
    (kind _VALUE; _POLISHED: with the final Newton step), F at p_r (_SHEAR_R) or -lo at p_r
    (_TENSION). Returns (values, slopes). One plain loop per kind, its outputs allocated in
    it: such loops vectorise (a loop that also updated a search's state was found not to), and
    each function of the angle is compiled once."""
    if kind == _VALUE:
        return _loop_value(tt, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk, lam2)
    if kind == _POLISHED:
        return _loop_polished(tt, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk, lam2)
    if kind == _SHEAR_R:
        return _loop_shear_r(tt, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk, lam2)
    if kind == _L_VALUE:
        return _loop_l_value(tt, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk, lam2)
    if kind == _L_POLISHED:
        return _loop_l_polished(tt, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk,
                                lam2)
    if kind == _L_SHEAR_R:
        return _loop_l_shear_r(tt, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk,
                               lam2)
    return _loop_tension(tt, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk, lam2)


@_jit
def _loop_value(tt, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk, lam2):
    """:func:`_dir` at every case (see :func:`_evaluate`)."""
    cnt = tt.size
    vn, gn = np.empty(cnt), np.empty(cnt)
    for r in range(cnt):
        v, g = _dir(tt[r], cm[r], sm[r], sg[r], k0[r], z0[r], pp[r], qq[r], w0[r], w1[r], w2[r],
                    bt[r], bz[r], nu[r], p_r[r], kk[r], lam2[r], False)
        vn[r] = v
        gn[r] = g
    return vn, gn


@_jit
def _loop_polished(tt, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk, lam2):
    """:func:`_dir` with the Newton step at every case (see :func:`_evaluate`)."""
    cnt = tt.size
    vn, gn = np.empty(cnt), np.empty(cnt)
    for r in range(cnt):
        v, g = _dir(tt[r], cm[r], sm[r], sg[r], k0[r], z0[r], pp[r], qq[r], w0[r], w1[r], w2[r],
                    bt[r], bz[r], nu[r], p_r[r], kk[r], lam2[r], True)
        vn[r] = v
        gn[r] = g
    return vn, gn


@_jit
def _loop_shear_r(tt, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk, lam2):
    """:func:`_shear_r` at every case (see :func:`_evaluate`)."""
    cnt = tt.size
    vn, gn = np.empty(cnt), np.empty(cnt)
    for r in range(cnt):
        v, g = _shear_r(tt[r], cm[r], sm[r], sg[r], k0[r], z0[r], pp[r], qq[r], w0[r], w1[r], w2[r],
                        bt[r], bz[r], nu[r], p_r[r], kk[r], lam2[r])
        vn[r] = v
        gn[r] = g
    return vn, gn



@_jit
def _loop_l_value(tt, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk, lam2):
    """:func:`_lade_dir` at every case (see :func:`_evaluate`)."""
    cnt = tt.size
    vn, gn = np.empty(cnt), np.empty(cnt)
    for r in range(cnt):
        v, g = _lade_dir(tt[r], cm[r], sm[r], sg[r], k0[r], z0[r], pp[r], qq[r], w0[r], w1[r],
                         w2[r], bt[r], bz[r], nu[r], p_r[r], kk[r], lam2[r], 0.0, _HALLEY,
                         False)
        vn[r] = v
        gn[r] = g
    return vn, gn


@_jit
def _loop_l_polished(tt, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk, lam2):
    """:func:`_lade_dir` with the final steps at every case (see :func:`_evaluate`)."""
    cnt = tt.size
    vn, gn = np.empty(cnt), np.empty(cnt)
    for r in range(cnt):
        v, g = _lade_dir(tt[r], cm[r], sm[r], sg[r], k0[r], z0[r], pp[r], qq[r], w0[r], w1[r],
                         w2[r], bt[r], bz[r], nu[r], p_r[r], kk[r], lam2[r], 0.0,
                         _HALLEY_POLISH, True)
        vn[r] = v
        gn[r] = g
    return vn, gn


@_jit
def _loop_l_warm(tt, xs, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk, lam2):
    """:func:`_lade_dir` at every case from the start xs (see :func:`_search`)."""
    cnt = tt.size
    vn, gn = np.empty(cnt), np.empty(cnt)
    for r in range(cnt):
        v, g = _lade_dir(tt[r], cm[r], sm[r], sg[r], k0[r], z0[r], pp[r], qq[r], w0[r], w1[r],
                         w2[r], bt[r], bz[r], nu[r], p_r[r], kk[r], lam2[r], xs[r],
                         _HALLEY_WARM, False)
        vn[r] = v
        gn[r] = g
    return vn, gn


@_jit
def _loop_l_shear_r(tt, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk, lam2):
    """:func:`_lade_shear_r` at every case (see :func:`_evaluate`)."""
    cnt = tt.size
    vn, gn = np.empty(cnt), np.empty(cnt)
    for r in range(cnt):
        v, g = _lade_shear_r(tt[r], cm[r], sm[r], sg[r], k0[r], z0[r], pp[r], qq[r], w0[r],
                             w1[r], w2[r], bt[r], bz[r], nu[r], p_r[r], kk[r], lam2[r])
        vn[r] = v
        gn[r] = g
    return vn, gn

@_jit
def _loop_tension(tt, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk, lam2):
    """:func:`_tension` at every case (see :func:`_evaluate`)."""
    cnt = tt.size
    vn, gn = np.empty(cnt), np.empty(cnt)
    for r in range(cnt):
        v, g = _tension(tt[r], cm[r], sm[r], sg[r], k0[r], z0[r], pp[r], qq[r], w0[r], w1[r], w2[r],
                        bt[r], bz[r], nu[r], p_r[r])
        vn[r] = v
        gn[r] = g
    return vn, gn


@_jit
def _setup_block(x0, x1, x2, x3, x4, x5, x6, x7, x8, x9, x10):
    """Per-case constants of a block from its gathered inputs (sum_xy, diff_xy, sxy, szz, sxz,
    syz, p_r, A, nu, k, lambda): k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, k, 2 lambda, and
    the half circle's middle direction (cm, sm) and turning sign sg (modified Lade passes S
    and K S/2 for k and lambda, so kk = S and lam2 = K S). Branch-free (every
    output its own allocation, so the compiler knows none alias and vectorises the loop)."""
    cnt = x0.size
    k0, z0, pp, qq = np.empty(cnt), np.empty(cnt), np.empty(cnt), np.empty(cnt)
    w0, w1, w2 = np.empty(cnt), np.empty(cnt), np.empty(cnt)
    bt, bz, nu, p_r = np.empty(cnt), np.empty(cnt), np.empty(cnt), np.empty(cnt)
    kk, lam2 = np.empty(cnt), np.empty(cnt)
    cm, sm, sg = np.empty(cnt), np.empty(cnt), np.empty(cnt)
    for r in range(cnt):
        pr, a = x6[r], x7[r]
        k0[r] = x0[r] - a * pr
        z0[r] = x3[r] - a * pr
        pq, qv = 2.0 * x1[r], 4.0 * x2[r]
        pp[r], qq[r] = pq, qv
        yy, xx = 2.0 * x5[r], 2.0 * x4[r]
        v1, v2 = 0.5 * (yy * yy - xx * xx), -xx * yy
        w0[r], w1[r], w2[r] = 0.5 * (yy * yy + xx * xx), v1, v2
        bt[r], bz[r], nu[r], p_r[r] = 2.0 - a, 1.0 - a, x8[r], pr
        kk[r], lam2[r] = x9[r], 2.0 * x10[r]
        amp = math.sqrt(pq * pq + qv * qv)
        inv_a = 1.0 / amp if amp > 0.0 else 0.0
        cu = -pq * inv_a if amp > 0.0 else 1.0
        su = -qv * inv_a
        # turning sign towards the largest-w direction (w1, w2)/|.|; either where w is constant
        cross = cu * v2 - su * v1
        sgn = 1.0 if cross >= 0.0 else -1.0
        sg[r] = sgn
        cm[r] = -sgn * su  # the middle of the half circle: a quarter turn from (cu, su)
        sm[r] = sgn * cu
    return k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk, lam2, cm, sm, sg


@_jit
def _search(kind, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk, lam2, cm, sm, sg,
            bv_out, bx_out, flag_out):
    """The largest value over the half circle for a block of cases (1-D arrays): the grid,
    then on the bracket of the best sign change of the slope a Hermite step and Anderson-Bjorck
    steps, every case alike and branch-free so the loops vectorise; ``kind`` is the function
    of the angle (:func:`_evaluate`). Leaves the best value (polished) and its t in bv_out,
    bx_out and in flag_out 2.0 where the grid shows competing maxima (the caller takes the
    general path), 1.0 where the steps have not converged (the caller finishes with Brent's
    method), else 0.0; returns the final bracket of the slope's root (lo, hi)."""
    cnt = bv_out.size
    lo, hi = np.empty(cnt), np.empty(cnt)
    fl, fh, vl, vh = np.empty(cnt), np.empty(cnt), np.empty(cnt), np.empty(cnt)
    bv, bx, peaks = np.empty(cnt), np.empty(cnt), np.empty(cnt)
    kept = np.zeros(cnt)
    step = 2.0 / _GRID
    # the grid's values and slopes
    vv = np.empty((_GRID + 1) * cnt)
    gg = np.empty((_GRID + 1) * cnt)
    tt = np.empty(cnt)
    for j in range(_GRID + 1):
        tt[:] = -1.0 + j * step
        vn, gn = _evaluate(kind, tt, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r,
                           kk, lam2)
        vv[j * cnt:(j + 1) * cnt] = vn
        gg[j * cnt:(j + 1) * cnt] = gn
    # per case: the best grid point, and the bracket of the best sign change of the slope
    # from + to - (the slope points inwards at both ends, derived: signs forced there). Each
    # bracket's peak lies between the larger end value and the height where the tangents at
    # its ends meet (exact where the value is concave there), inflated by half the gap; a
    # case where another bracket's upper estimate reaches the best bracket's lower one is
    # ambiguous (flag 2)
    for r in range(cnt):
        best, tb = vv[r], -1.0
        npk, key, key_up, other_up = 0.0, -np.inf, -np.inf, -np.inf
        v_prev, g_prev = vv[r], max(gg[r], 1e-300)
        for j in range(1, _GRID + 1):
            v = vv[j * cnt + r]
            g = gg[j * cnt + r]
            g = min(g, -1e-300) if j == _GRID else g
            if v > best:
                best, tb = v, -1.0 + j * step
            if g_prev > 0.0 and g <= 0.0:
                npk += 1.0
                ta, tc = -1.0 + (j - 1) * step, -1.0 + j * step
                sa = g_prev * 2.0 / (1.0 + ta * ta)  # dv/dt at the ends
                sc = g * 2.0 / (1.0 + tc * tc)
                xm = min(max((v - v_prev - sc * step) / (sa - sc), 0.0), step)
                low = max(v, v_prev)
                up = max(v_prev + sa * xm, low)
                up += 0.5 * (up - low)
                if low > key:
                    other_up = max(other_up, key_up)
                    key, key_up = low, up
                    lo[r], hi[r] = ta, tc
                    fl[r], fh[r], vl[r], vh[r] = g_prev, g, v_prev, v
                else:
                    other_up = max(other_up, up)
            v_prev, g_prev = v, g
        bv[r], bx[r] = best, tb
        peaks[r] = 2.0 if other_up >= key else 1.0
    # first step: the root of the quadratic slope of the cubic Hermite model of the value
    # between the bracket's ends, kept to the middle 90 % (a bisection where it has none).
    # Each step is three loops: the points, their values and slopes, the update (a loop
    # evaluating and updating at once was found not to vectorise)
    for r in range(cnt):
        a, b = lo[r], hi[r]
        h = b - a
        ma = fl[r] * 2.0 / (1.0 + a * a)  # dv/dt = dv/dpsi * dpsi/dt
        mb = fh[r] * 2.0 / (1.0 + b * b)
        rise = (vh[r] - vl[r]) / h
        c2 = 3.0 * (ma + mb) - 6.0 * rise
        c1 = mb - ma - c2
        disc = c1 * c1 - 4.0 * c2 * ma
        sq = math.sqrt(max(disc, 0.0))
        den = -c1 - sq if c1 > 0.0 else -c1 + sq
        s1 = 2.0 * ma / den if den != 0.0 else 0.5
        s2 = den / (2.0 * c2) if c2 != 0.0 else 0.5
        s_ = s1 if (s1 > 0.0) & (s1 < 1.0) else s2
        good = (disc >= 0.0) & (s_ > 0.0) & (s_ < 1.0)
        s_ = min(max(s_, 0.05), 0.95) if good else 0.5
        tt[r] = a + s_ * h
    # modified Lade: from here on each crossing starts from the case's last one (the angle
    # moves less and less), first from the bracket's end of the larger value
    warm = kind == _L_VALUE
    xs = np.zeros(cnt)
    if warm:
        for r in range(cnt):
            xe = vh[r] if vh[r] > vl[r] else vl[r]
            xs[r] = xe if (xe >= 0.0) & (xe <= p_r[r]) else 0.0
        vn, gn = _loop_l_warm(tt, xs, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r,
                              kk, lam2)
    else:
        vn, gn = _evaluate(kind, tt, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r,
                           kk, lam2)
    for r in range(cnt):
        tn, v, g = tt[r], vn[r], gn[r]
        better = v > bv[r]
        bv[r] = v if better else bv[r]
        bx[r] = tn if better else bx[r]
        right = g > 0.0
        lo[r] = tn if right else lo[r]
        hi[r] = hi[r] if right else tn
        fl[r] = g if right else fl[r]
        fh[r] = fh[r] if right else g
    for _ in range(_ROUNDS):
        for r in range(cnt):
            den = fh[r] - fl[r]
            tn = (lo[r] * fh[r] - hi[r] * fl[r]) / den
            mid = 0.5 * (lo[r] + hi[r])
            tn = tn if den < 0.0 else mid
            # at least 1% of the bracket from either end (a flat end would hold the secant
            # point on itself)
            gap = 0.01 * (hi[r] - lo[r])
            tt[r] = min(max(tn, lo[r] + gap), hi[r] - gap)
        if warm:
            for r in range(cnt):
                xe = vn[r]
                xs[r] = xe if (xe >= 0.0) & (xe <= p_r[r]) else xs[r]
            vn, gn = _loop_l_warm(tt, xs, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu,
                                  p_r, kk, lam2)
        else:
            vn, gn = _evaluate(kind, tt, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu,
                               p_r, kk, lam2)
        for r in range(cnt):
            tn, v, g = tt[r], vn[r], gn[r]
            better = v > bv[r]
            bv[r] = v if better else bv[r]
            bx[r] = tn if better else bx[r]
            right = g > 0.0
            # the end kept a second time in a row has its slope scaled by 1 - g/(the
            # replaced end's slope), or 1/2 (Anderson-Bjorck)
            keep_hi_twice = right & (kept[r] > 0.0)
            keep_lo_twice = (not right) & (kept[r] < 0.0)
            m_lo = 1.0 - g / fh[r] if not right else 0.0
            m_hi = 1.0 - g / fl[r] if right else 0.0
            fh_s = fh[r] * (m_hi if m_hi > 0.0 else 0.5)
            fl_s = fl[r] * (m_lo if m_lo > 0.0 else 0.5)
            nfl = g if right else (fl_s if keep_lo_twice else fl[r])
            nfh = fh_s if keep_hi_twice else fh[r]
            nfh = nfh if right else g
            nlo = tn if right else lo[r]
            nhi = hi[r] if right else tn
            lo[r] = nlo
            hi[r] = nhi
            fl[r] = nfl
            fh[r] = nfh
            kept[r] = 1.0 if right else -1.0
    # the polished value at the best point, and its slope
    polish = _POLISHED if kind == _VALUE else (_L_POLISHED if kind == _L_VALUE else kind)
    vn, gn = _evaluate(polish, bx, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk,
                       lam2)
    for r in range(cnt):
        bv[r] = vn[r]
        # converged: the slope's root bracketed to 1e-7 in t, or the slope at the best point
        # below 1e-6 MPa/rad (the value is then the maximum to g^2/(2|v''|))
        open_ = (hi[r] - lo[r] > 1e-7) & (abs(gn[r]) > 1e-6)
        # a modified Lade crossing not converged in its fixed steps: nan slope, finite value
        stuck = (gn[r] != gn[r]) & (vn[r] == vn[r])
        flag_out[r] = 2.0 if (peaks[r] > 1.0) | stuck else (1.0 if open_ else 0.0)
    bv_out[:] = bv
    bx_out[:] = bx
    return lo, hi


@_jit_inline
def _value_one(lade: bool, t: float, cm: float, sm: float, sg: float, k: tuple,
               polish: bool) -> tuple[float, float]:
    """The value and its slope at one t of one case: :func:`_dir` (Drucker-Prager) or
    :func:`_lade_dir` (modified Lade)."""
    k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk, lam2 = k
    if lade:
        return _lade_dir(t, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk, lam2,
                         0.0, _HALLEY_POLISH if polish else _HALLEY, polish)
    return _dir(t, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, kk, lam2, polish)


@_jit
def _brent_max(lade: bool, a: float, b: float, best_v: float, best_t: float, cm: float,
               sm: float, sg: float, k: tuple) -> tuple[float, float]:
    """Brent's zero finder (Brent 1973, ch. 4, 'zeroin') on the slope in t over a bracket
    [a, b] of its root, keeping the largest value seen: the fallback of the vectorised
    steps (as in the Mohr-Coulomb kernel)."""
    va, fa = _value_one(lade, a, cm, sm, sg, k, False)
    vb, fb = _value_one(lade, b, cm, sm, sg, k, False)
    fa = fa if fa > 0.0 else 1e-300
    fb = fb if fb < 0.0 else -1e-300
    c, fc = a, fa
    e = dlt = b - a
    for _ in range(100):
        if (fb > 0.0) == (fc > 0.0):
            c, fc = a, fa
            e = dlt = b - a
        if abs(fc) < abs(fb):
            a, fa = b, fb
            b, fb = c, fc
            c, fc = a, fa
        tol = 2e-16 * abs(b) + 1e-12
        m = 0.5 * (c - b)
        if abs(m) <= tol or fb == 0.0:
            break
        if abs(e) >= tol and abs(fa) > abs(fb):
            s_ = fb / fa
            if a == c:
                p_ = 2.0 * m * s_
                q_ = 1.0 - s_
            else:
                q0 = fa / fc
                r_ = fb / fc
                p_ = s_ * (2.0 * m * q0 * (q0 - r_) - (b - a) * (r_ - 1.0))
                q_ = (q0 - 1.0) * (r_ - 1.0) * (s_ - 1.0)
            if p_ > 0.0:
                q_ = -q_
            else:
                p_ = -p_
            if 2.0 * p_ < min(3.0 * m * q_ - abs(tol * q_), abs(e * q_)):
                e = dlt
                dlt = p_ / q_
            else:
                dlt = m
                e = m
        else:
            dlt = m
            e = m
        a, fa = b, fb
        b = b + dlt if abs(dlt) > tol else b + math.copysign(tol, m)
        vb, fb = _value_one(lade, b, cm, sm, sg, k, False)
        if vb > best_v:
            best_v, best_t = vb, b
    return best_v, best_t


@_jit_parallel
def arc_onset(sum_xy, diff_xy, sxy, szz, sxz, syz, p_r, big_a, nu, t0, ucs, phi, mb, hb_s,
              hb_a, code, n_theta, out_p, out_c, out_s):
    """Critical wall pressure [MPa] into out_p and (cos, sin) of psi = 2 theta at the worst
    wall angle into (out_c, out_s) (nan where never) for a Drucker-Prager criterion or
    modified Lade, ``code`` (the codes of :data:`risk.mechanics._onset_kernel.CODES`), for
    3-D inputs that broadcast
    to shape (n0, n1, n2) (strides may be zero); outputs flat, in C order of that shape.
    ``n_theta``: grid angles of the general path taken by the cases flagged in the module
    docstring."""
    n0, n1, n2 = sum_xy.shape
    total = n0 * n1 * n2
    cos_g = np.cos(np.arange(n_theta) * (2.0 * math.pi / n_theta))
    sin_g = np.sin(np.arange(n_theta) * (2.0 * math.pi / n_theta))
    nblocks = (total + _BLOCK - 1) // _BLOCK
    lade = code == _LADE
    for blk in prange(nblocks):
        first = blk * _BLOCK
        cnt = min(_BLOCK, total - first)
        i, rem = first // (n1 * n2), first % (n1 * n2)
        j, m = rem // n2, rem % n2
        x = np.empty((11, cnt))
        last_phi, k_unit, lam = math.nan, 0.0, 0.0
        for r in range(cnt):
            x[0, r], x[1, r], x[2, r] = sum_xy[i, j, m], diff_xy[i, j, m], sxy[i, j, m]
            x[3, r], x[4, r], x[5, r] = szz[i, j, m], sxz[i, j, m], syz[i, j, m]
            x[6, r], x[7, r], x[8, r] = p_r[i, j, m], big_a[i, j, m], nu[i, j, m]
            # k is proportional to UCS and lambda depends on phi only: the trigonometry
            # once per run of equal friction angles (often one value for a whole call)
            ph = phi[i, j, m]
            if ph != last_phi:
                last_phi = ph
                k_unit, lam, _, _ = _strength_constants(code, 1.0, ph, 0.0, 0.0, 0.0)
            # modified Lade: S = c/tan phi is proportional to UCS, and K = 27 + eta; the
            # block's constants are S and K S (kk and lam2 below)
            kx = k_unit * ucs[i, j, m]
            x[9, r], x[10, r] = kx, (0.5 * lam * kx if lade else lam)
            m += 1
            if m == n2:
                m = 0
                j += 1
                if j == n1:
                    j = 0
                    i += 1
        (k0, z0, pp, qq, w0, w1, w2, bt, bz, nuv, prv, kk, lam2, cm, sm,
         sg) = _setup_block(x[0], x[1], x[2], x[3], x[4], x[5], x[6], x[7], x[8], x[9], x[10])
        # the value's search, on the cases that may fail at full drawdown (where a bound of
        # F at 0 over every angle is negative, the value is negative at every angle: never,
        # unless the wall fails with no drawdown, decided below)
        bv, bx, flag = np.full(cnt, -1.0), np.zeros(cnt), np.zeros(cnt)
        lo, hi = np.zeros(cnt), np.zeros(cnt)
        sel = np.empty(cnt, dtype=np.bool_)
        for r in range(cnt):
            # (not "< 0": nan inputs take the search and give nan, as elsewhere)
            if lade:
                bound = _lade_bound(0.0, k0[r], z0[r], pp[r], qq[r], w0[r], w1[r], w2[r],
                                    bt[r], bz[r], nuv[r], kk[r], lam2[r])
            else:
                bound = _shear_bound(0.0, k0[r], z0[r], pp[r], qq[r], w0[r], w1[r], w2[r],
                                     bt[r], bz[r], nuv[r], kk[r], lam2[r])
            sel[r] = not (bound < 0.0)
        idx = np.nonzero(sel)[0]
        # not a literal: one compiled search serves every kind
        value = np.int64(_L_VALUE if lade else _VALUE)
        if idx.size == cnt:
            lo, hi = _search(value, k0, z0, pp, qq, w0, w1, w2, bt, bz, nuv, prv, kk, lam2, cm,
                             sm, sg, bv, bx, flag)
        elif idx.size:
            sv, sx, sf = np.empty(idx.size), np.empty(idx.size), np.empty(idx.size)
            slo, shi = _search(value, k0[idx], z0[idx], pp[idx], qq[idx], w0[idx], w1[idx],
                               w2[idx], bt[idx], bz[idx], nuv[idx], prv[idx], kk[idx],
                               lam2[idx], cm[idx], sm[idx], sg[idx], sv, sx, sf)
            bv[idx], bx[idx], flag[idx], lo[idx], hi[idx] = sv, sx, sf, slo, shi
        for r in range(cnt):
            if flag[r] == 1.0:
                k = (k0[r], z0[r], pp[r], qq[r], w0[r], w1[r], w2[r], bt[r], bz[r], nuv[r],
                     prv[r], kk[r], lam2[r])
                bv[r], bx[r] = _brent_max(lade, lo[r], hi[r], bv[r], bx[r], cm[r], sm[r],
                                          sg[r], k)
                vf, gf = _value_one(lade, bx[r], cm[r], sm[r], sg[r], k, True)
                bv[r] = vf
                if gf != gf and vf == vf:
                    flag[r] = 2.0  # a modified Lade crossing not converged: general path
        # with no drawdown, where the value search found no failure: the criterion at p_r
        # (an angle may fail at p_r but not at 0, in a sector the grid can miss; the value
        # there is p_r + F(p_r), not reached from the crossing's side), then the tensile
        # cut-off; each maximised on the half circle (both rise with w at fixed u, as the
        # value does) on the cases a cheap bound over every angle does not rule out
        tq = np.empty(cnt)
        for r in range(cnt):
            flat = first + r
            i, rem = flat // (n1 * n2), flat % (n1 * n2)
            j, m = rem // n2, rem % n2
            tq[r] = t0[i, j, m]
        shear_r = _L_SHEAR_R if lade else _SHEAR_R
        for kind in (shear_r, _TENSION):
            for r in range(cnt):
                if kind == shear_r:
                    if lade:
                        bound = _lade_bound(prv[r], k0[r], z0[r], pp[r], qq[r], w0[r], w1[r],
                                            w2[r], bt[r], bz[r], nuv[r], kk[r], lam2[r])
                    else:
                        bound = _shear_bound(prv[r], k0[r], z0[r], pp[r], qq[r], w0[r],
                                             w1[r], w2[r], bt[r], bz[r], nuv[r], kk[r],
                                             lam2[r])
                    sel[r] = (bv[r] < prv[r]) & (bound >= 0.0)
                else:
                    kt = (k0[r], z0[r], pp[r], qq[r], w0[r], w1[r], w2[r], bt[r], bz[r],
                          nuv[r], prv[r], tq[r])
                    sel[r] = ((bv[r] < prv[r]) & (tq[r] < math.inf)
                              & (_tension_bound(prv[r], kt) > 0.0)
                              & (_tension_bound_u(prv[r], kt) > 0.0))
            idx = np.nonzero(sel & (flag != 2.0))[0]
            if idx.size == 0:
                continue
            tv, tx, tflag = np.empty(idx.size), np.empty(idx.size), np.empty(idx.size)
            args = (k0[idx], z0[idx], pp[idx], qq[idx], w0[idx], w1[idx], w2[idx], bt[idx],
                    bz[idx], nuv[idx], prv[idx], kk[idx], lam2[idx], cm[idx], sm[idx],
                    sg[idx], tv, tx, tflag)
            _search(kind, *args)
            for q in range(idx.size):
                r = idx[q]
                if tflag[q] != 0.0:
                    flag[r] = 2.0  # the general path decides
                elif kind == shear_r and tv[q] >= 0.0:
                    bv[r], bx[r] = prv[r] + tv[q], tx[q]
                elif kind == _TENSION and tv[q] - tq[r] > 0.0:
                    bv[r], bx[r] = prv[r], tx[q]  # tension beyond T0 (T0 = 0: any)
        op = out_p[first:first + cnt]
        oc = out_c[first:first + cnt]
        os_ = out_s[first:first + cnt]
        for r in range(cnt):
            tb = bx[r]
            inv = 1.0 / (1.0 + tb * tb)
            cx, sx = (1.0 - tb * tb) * inv, sg[r] * 2.0 * tb * inv
            oc[r] = cm[r] * cx - sm[r] * sx
            os_[r] = sm[r] * cx + cm[r] * sx
            op[r] = bv[r]
        for r in range(cnt):
            p_res = prv[r]
            never = op[r] < 0.0
            op[r] = p_res if op[r] >= p_res else (-math.inf if never else op[r])
            os_[r] = math.nan if never else os_[r]
        # the general path: two maxima or more on a grid, or a tension search not converged
        for r in range(cnt):
            if flag[r] == 2.0:
                flat = first + r
                i, rem = flat // (n1 * n2), flat % (n1 * n2)
                j, m = rem // n2, rem % n2
                c0, c1, c2, c3 = _strength_constants(code, ucs[i, j, m], phi[i, j, m],
                                                     mb[i, j, m], hb_s[i, j, m],
                                                     hb_a[i, j, m])
                kg = (k0[r], z0[r], pp[r], qq[r], w0[r], w1[r], w2[r], bt[r], bz[r], nuv[r],
                      prv[r], tq[r], c0, c1, c2, c3)
                vals = np.empty(n_theta)
                p_g, psi = _solve_case(code, kg, cos_g, sin_g, vals)
                op[r] = p_g
                oc[r] = math.cos(psi)
                os_[r] = math.sin(psi)
