"""Compiled yield onset at a cavity wall for every criterion (numba).

This is the compiled path of :func:`risk.mechanics.yield_onset.critical_wall_pressure` for the
criteria other than Mohr-Coulomb (which has its own, faster kernel in
:mod:`risk.mechanics._mc_kernel`); the conventions, outcomes and the stress path are documented
there. It computes the same answer as the numpy envelope iteration of that module (the reference
path, kept for checks), by the same algorithm, one case per loop iteration:

1. with no drawdown (``p_w = p_r``): the largest excess over the wall angle of the criterion
   and of the tensile cut-off (a grid of ``n_theta`` angles over [0, pi), refined on both sides
   of the grid's two largest local maxima by Brent's minimiser, Brent 1973, ch. 5, unless the
   grid already decides the outcome);
2. at full drawdown (``p_w = 0``): no failure there means "never";
3. otherwise the envelope iteration ``p_{k+1}`` = the crossing of ``F(theta_k, .)`` in
   ``[p_k, p_r]``, ``theta_{k+1}`` = the worst angle at ``p_{k+1}``, rising monotonically to the
   answer (Notes of :func:`risk.mechanics.yield_onset.critical_wall_pressure`).

The crossing at one angle: for the three Drucker-Prager matchings it is a root of a quadratic
in the wall pressure (docs/derivations.md, sec. 15; Drucker & Prager 1952), taken in closed form
and polished by one Newton step; for Mogi-Coulomb (a quartic in general, a quadratic only where
the hoop-axial shear vanishes: same section), modified Lade and Hoek-Brown it is Brent's
bracketed root (Brent 1973, ch. 4, 'zeroin') on ``[p_k, p_r]``, where the criterion is convex
in the wall pressure so the crossing is unique.

Every quantity the criteria see depends on the wall angle theta only through
``(cos psi, sin psi)``, psi = 2 theta (the squared hoop-axial shear is affine in them), so the
search runs in psi over [0, 2 pi) and only the answer is turned into theta (by numpy).

References
----------
Drucker, D.C. & Prager, W. (1952) Soil mechanics and plastic analysis or limit design.
Q. Appl. Math. 10, 157-165. Al-Ajmi, A.M. & Zimmerman, R.W. (2005) Relation between the Mogi
and the Coulomb failure criteria. IJRMMS 42, 431-439. Ewy, R.T. (1999) Wellbore-stability
predictions by use of a modified Lade criterion. SPE Drill. & Completion 14(2), 85-91. Hoek, E.,
Carranza-Torres, C. & Corkum, B. (2002) Hoek-Brown failure criterion - 2002 edition, Proc.
NARMS-TAC. Brent, R.P. (1973) Algorithms for Minimization without Derivatives, chs. 4-5.
"""

from __future__ import annotations

import math
from typing import Final

import numpy as np
from numba import njit, prange, types

#: Integer codes of the criteria in the kernel, by the names a scenario uses.
CODES: Final = {
    "mohr-coulomb": 0,
    "drucker-prager-circumscribed": 1,
    "drucker-prager-middle": 2,
    "drucker-prager-inscribed": 3,
    "mogi-coulomb": 4,
    "modified-lade": 5,
    "hoek-brown": 6,
}
_MC, _DP_C, _DP_M, _DP_I, _MOGI, _LADE, _HB = 0, 1, 2, 3, 4, 5, 6

# k[_K_*]: one case's constants (a tuple of floats, positions named here; numba compiles the
# module-level ints in as constants). K0 = sum_xy - A p_r, Z0 = szz - A p_r, PP = 2 diff_xy,
# QQ = 4 sxy (dev = PP cos psi + QQ sin psi), W0, W1, W2 the squared hoop-axial shear
# w = W0 + W1 cos psi + W2 sin psi, BT = 2 - A, BZ = 1 - A, NU, P_R, T0, then the criterion's
# constants C0 ... C3 (see _strength_constants)
_K_K0, _K_Z0, _K_PP, _K_QQ, _K_W0, _K_W1, _K_W2 = 0, 1, 2, 3, 4, 5, 6
_K_BT, _K_BZ, _K_NU, _K_P_R, _K_T0 = 7, 8, 9, 10, 11
_K_C0, _K_C1, _K_C2, _K_C3 = 12, 13, 14, 15
# which function of the angle a search maximises
_SHEAR, _TENSION = 0, 1
_BLOCK = 64  # cases per parallel task (each task owns one grid buffer)
_MAX_STEPS = 60  # envelope iterations (as the reference path)
# angle tolerance of the refinement [rad in psi]: the value at a smooth maximum is then exact to
# |F''| 1e-18 MPa, far below the 1e-12 MPa of the roots (the reference path refines to 1e-11)
_ANGLE_TOL = 1e-9

_jit = njit(cache=True, error_model="numpy", nogil=True)
_jit_inline = njit(cache=True, error_model="numpy", nogil=True, inline="always")
_IN = types.Array(types.float64, 3, "A", readonly=True)
_OUT = types.Array(types.float64, 1, "C")
_jit_parallel = njit(types.void(*([_IN] * 15), types.int64, types.int64, _OUT, _OUT),
                     cache=True, error_model="numpy", nogil=True, parallel=True)


@_jit
def _strength_constants(code: int, ucs: float, phi: float, mb: float, s: float, a: float
                        ) -> tuple[float, float, float, float]:
    """The criterion's constants (C0, C1, C2, C3), as risk.mechanics.criteria computes them:
    Mohr-Coulomb (UCS, q); Drucker-Prager (k, lambda); Mogi-Coulomb (a, b); modified Lade
    (S1 = c/tan phi, 27 + eta); Hoek-Brown (sigma_ci, m_b, s, a)."""
    sphi, cphi = math.sin(phi), math.cos(phi)
    coh = ucs * (1.0 - sphi) / (2.0 * cphi)
    if code == _MC:
        return ucs, (1.0 + sphi) / (1.0 - sphi), 0.0, 0.0
    if code == _DP_C:
        den = math.sqrt(3.0) * (3.0 - sphi)
        return 6.0 * coh * cphi / den, 2.0 * sphi / den, 0.0, 0.0
    if code == _DP_M:
        den = math.sqrt(3.0) * (3.0 + sphi)
        return 6.0 * coh * cphi / den, 2.0 * sphi / den, 0.0, 0.0
    if code == _DP_I:
        den = math.sqrt(3.0 * (3.0 + sphi * sphi))
        return 3.0 * coh * cphi / den, sphi / den, 0.0, 0.0
    if code == _MOGI:
        f = 2.0 * math.sqrt(2.0) / 3.0
        return f * coh * cphi, f * sphi, 0.0, 0.0
    if code == _LADE:
        tphi = math.tan(phi)
        eta = 4.0 * tphi * tphi * (9.0 - 7.0 * sphi) / (1.0 - sphi)
        return coh / tphi, 27.0 + eta, 0.0, 0.0
    return ucs, mb, s, a


@_jit_inline
def _criterion(code: int, s1: float, s2: float, s3: float, k: tuple) -> float:
    """Excess F [MPa] of the criterion at sorted principal effective stresses (the formulas of
    risk.mechanics.criteria, scalar)."""
    c0, c1, c2, c3 = k[_K_C0], k[_K_C1], k[_K_C2], k[_K_C3]
    if code == _MC:
        return s1 - c0 - c1 * s3
    if code <= _MOGI:
        d12, d23, d31 = s1 - s2, s2 - s3, s3 - s1
        ss = d12 * d12 + d23 * d23 + d31 * d31
        if code == _MOGI:
            return math.sqrt(ss) / 3.0 - c0 - c1 * 0.5 * (s1 + s3)
        return math.sqrt(ss / 6.0) - c0 - c1 * (s1 + s2 + s3)
    if code == _LADE:
        a, b, d = s1 + c0, s2 + c0, s3 + c0
        return max((a + b + d) - np.cbrt(c1 * a * b * d), -d)
    inner = c1 * s3 / c0 + c2
    shear = s1 - s3 - c0 * max(inner, 0.0) ** c3
    return max(shear, -s3 - c2 * c0 / c1)


@_jit_inline
def _wall(c: float, s: float, p: float, k: tuple) -> tuple[float, float, float]:
    """Mean, half difference and radius of the hoop-axial block at direction (cos psi, sin psi)
    and wall pressure p."""
    dev = k[_K_PP] * c + k[_K_QQ] * s
    w = max(k[_K_W0] + k[_K_W1] * c + k[_K_W2] * s, 0.0)
    st = k[_K_K0] - dev - k[_K_BT] * p
    sz = k[_K_Z0] - k[_K_NU] * dev - k[_K_BZ] * p
    hh = 0.5 * (st - sz)
    return 0.5 * (st + sz), hh, math.sqrt(hh * hh + w)


@_jit_inline
def _value(kind: int, code: int, c: float, s: float, p: float, k: tuple) -> float:
    """The criterion's excess (kind _SHEAR), or the smooth tension function -lo - T0 (kind
    _TENSION; the reference path's choice: smooth in the angle, same decision as -s3 - T0)."""
    m, _, r = _wall(c, s, p, k)
    hi, lo = m + r, m - r
    if kind == _TENSION:
        return -lo - k[_K_T0]
    return _criterion(code, max(hi, 0.0), min(max(lo, 0.0), hi), min(lo, 0.0), k)


@_jit_inline
def _value_at(kind: int, code: int, t: float, c0: float, s0: float, p: float, k: tuple
              ) -> float:
    """:func:`_value` at the direction turned from (c0, s0) by 2 atan(t) (no trigonometric
    calls: cos and sin of the turn are rational in the half-angle tangent t)."""
    t2 = t * t
    inv = 1.0 / (1.0 + t2)
    cx, sx = (1.0 - t2) * inv, 2.0 * t * inv
    return _value(kind, code, c0 * cx - s0 * sx, s0 * cx + c0 * sx, p, k)


@_jit
def _local_max(kind: int, code: int, a: float, b: float, c0: float, s0: float, p: float,
               k: tuple) -> tuple[float, float]:
    """A local maximum on [a, b] in t, the half-angle tangent of the turn from the direction
    (c0, s0), by Brent's minimiser on the negative (golden section with parabolic steps; Brent
    1973, ch. 5, 'localmin'), to _ANGLE_TOL in t (about half that in psi). Returns (value, t)."""
    golden = 0.3819660112501051
    x = w = v = a + golden * (b - a)
    fx = fw = fv = -_value_at(kind, code, x, c0, s0, p, k)
    d = e = 0.0
    for _ in range(100):
        m = 0.5 * (a + b)
        tol = _ANGLE_TOL
        if abs(x - m) <= 2.0 * tol - 0.5 * (b - a):
            break
        use_golden = True
        if abs(e) > tol:
            r = (x - w) * (fx - fv)
            q = (x - v) * (fx - fw)
            pp = (x - v) * q - (x - w) * r
            q = 2.0 * (q - r)
            if q > 0.0:
                pp = -pp
            q = abs(q)
            if abs(pp) < abs(0.5 * q * e) and pp > q * (a - x) and pp < q * (b - x):
                e, d = d, pp / q
                u = x + d
                if u - a < 2.0 * tol or b - u < 2.0 * tol:
                    d = tol if x < m else -tol
                use_golden = False
        if use_golden:
            e = (b - x) if x < m else (a - x)
            d = golden * e
        u = x + (d if abs(d) >= tol else (tol if d > 0.0 else -tol))
        fu = -_value_at(kind, code, u, c0, s0, p, k)
        if fu <= fx:
            if u < x:
                b = x
            else:
                a = x
            v, fv, w, fw, x, fx = w, fw, x, fx, u, fu
        else:
            if u < x:
                a = u
            else:
                b = u
            if fu <= fw or w == x:
                v, fv, w, fw = w, fw, u, fu
            elif fu <= fv or v == x or v == w:
                v, fv = u, fu
    return -fx, x


@_jit
def _max_over_angle(kind: int, code: int, p: float, k: tuple, cos_g: np.ndarray,
                    sin_g: np.ndarray, vals: np.ndarray, decided_at: float
                    ) -> tuple[float, float]:
    """Largest value over the wall angle at wall pressure p: the grid (psi_j = j 2 pi / n),
    then Brent's minimiser on both sides of the grid's two largest local maxima (period 2 pi in
    psi), unless the grid maximum already reaches ``decided_at``. Returns (value, psi)."""
    n = cos_g.size
    step = 2.0 * math.pi / n
    j1 = 0
    for j in range(n):
        vals[j] = _value(kind, code, cos_g[j], sin_g[j], p, k)
        if vals[j] > vals[j1]:
            j1 = j
    best, x_best = vals[j1], j1 * step
    if best >= decided_at:
        return best, x_best
    # the second-largest local maximum of the grid (a narrow peak between grid angles can rise
    # above the grid's largest)
    j2 = -1
    for j in range(n):
        if j == j1:
            continue
        v = vals[j]
        if v >= vals[j - 1] and v >= vals[(j + 1) % n] and (j2 < 0 or v > vals[j2]):
            j2 = j
    tt = math.tan(0.5 * step)  # the neighbouring grid angles, as half-angle tangents
    for jj in (j1, j2):
        if jj < 0:
            continue
        for a, b in ((-tt, 0.0), (0.0, tt)):
            v, t = _local_max(kind, code, a, b, cos_g[jj], sin_g[jj], p, k)
            if v > best:
                best, x_best = v, jj * step + 2.0 * math.atan(t)
    return best, x_best


@_jit
def _dp_excess(p: float, a0: float, a1: float, a2: float, e0: float, e1: float) -> float:
    """Drucker-Prager excess sqrt(J2) - (k + lambda I1) with J2 = a0 + a1 p + a2 p^2 and
    k + lambda I1 = e0 - e1 p."""
    return math.sqrt(max(a0 + p * (a1 + a2 * p), 0.0)) - e0 + e1 * p


@_jit
def _dp_crossing(c: float, s: float, p_fail: float, p_safe: float, k: tuple) -> float:
    """Drucker-Prager crossing in [p_fail, p_safe] at direction (c, s), given F(p_fail) >= 0 >
    F(p_safe): sqrt(J2) = k + lambda I1 squared is a quadratic in p (docs/derivations.md, sec. 15);
    the root in the bracket with the smallest |F|, then one Newton step kept in the bracket.
    Returns nan where no root of the quadratic lies in the bracket (rounding; the caller then
    takes the bracketed root)."""
    dev = k[_K_PP] * c + k[_K_QQ] * s
    w = max(k[_K_W0] + k[_K_W1] * c + k[_K_W2] * s, 0.0)
    at = k[_K_K0] - dev
    az = k[_K_Z0] - k[_K_NU] * dev
    bt, bz = k[_K_BT], k[_K_BZ]
    kk, lam = k[_K_C0], k[_K_C1]
    da = at - az  # s'_t - s'_z = da - p (bt - bz = 1)
    a2 = (1.0 + bt * bt + bz * bz) / 6.0
    a1 = -(da + at * bt + az * bz) / 3.0
    a0 = (da * da + at * at + az * az) / 6.0 + w
    e0 = kk + lam * (at + az)
    e1 = lam * (bt + bz)
    q2 = a2 - e1 * e1
    q1 = a1 + 2.0 * e0 * e1
    q0 = a0 - e0 * e0
    disc = max(q1 * q1 - 4.0 * q2 * q0, 0.0)
    half = -0.5 * (q1 + math.copysign(math.sqrt(disc), q1))
    best, err = math.nan, math.inf
    tol = 1e-9 * (1.0 + abs(p_safe))
    for x in (half / q2, q0 / half):
        if x == x and p_fail - tol <= x <= p_safe + tol:
            x = min(max(x, p_fail), p_safe)
            f = abs(_dp_excess(x, a0, a1, a2, e0, e1))
            if f < err:
                best, err = x, f
    if best != best:
        return best
    j2 = max(a0 + best * (a1 + a2 * best), 1e-300)
    slope = (2.0 * a2 * best + a1) / (2.0 * math.sqrt(j2)) + e1
    f = _dp_excess(best, a0, a1, a2, e0, e1)
    if slope != 0.0:
        nxt = best - f / slope
        if p_fail <= nxt <= p_safe and abs(_dp_excess(nxt, a0, a1, a2, e0, e1)) < abs(f):
            best = nxt
    return best


@_jit
def _crossing(code: int, c: float, s: float, p_fail: float, p_safe: float, k: tuple) -> float:
    """The wall pressure in [p_fail, p_safe] where the criterion crosses zero at direction
    (c, s), given F(p_fail) >= 0 > F(p_safe) (F convex in p: the crossing is unique). Closed
    form for Drucker-Prager; otherwise Brent's 'zeroin' (Brent 1973, ch. 4) to 1e-12 MPa."""
    if _DP_C <= code <= _DP_I:
        x = _dp_crossing(c, s, p_fail, p_safe, k)
        if x == x:
            return x
    a, b = p_fail, p_safe
    fa = _value(_SHEAR, code, c, s, a, k)
    fb = _value(_SHEAR, code, c, s, b, k)
    if fa <= 0.0:
        return a  # F(p_fail) == 0: p_fail is the crossing
    if fb >= 0.0:
        return b
    cc, fc = a, fa
    e = dlt = b - a
    for _ in range(200):
        if (fb > 0.0) == (fc > 0.0):
            cc, fc = a, fa
            e = dlt = b - a
        if abs(fc) < abs(fb):
            a, fa = b, fb
            b, fb = cc, fc
            cc, fc = a, fa
        tol = 2e-16 * abs(b) + 0.5e-12
        m = 0.5 * (cc - b)
        if abs(m) <= tol or fb == 0.0:
            break
        if abs(e) >= tol and abs(fa) > abs(fb):
            s_ = fb / fa
            if a == cc:
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
        fb = _value(_SHEAR, code, c, s, b, k)
    # the failing end of the final bracket: F >= 0 there (the reference path's convention:
    # the root to its tolerance)
    return b if fb >= 0.0 else (cc if fc >= 0.0 else b)


@_jit_inline
def _tension_bound(p: float, k: tuple) -> float:
    """An upper bound over every wall angle of -lo - T0 at wall pressure p, from the ranges of
    the mean m, the half difference h and w over the angle (-lo = r - m <= r_max - m_min;
    cheap, skips the search on walls compressive all round)."""
    amp = math.sqrt(k[_K_PP] * k[_K_PP] + k[_K_QQ] * k[_K_QQ])  # |dev| <= amp
    nu, bt, bz = k[_K_NU], k[_K_BT], k[_K_BZ]
    m_min = 0.5 * (k[_K_K0] + k[_K_Z0]) - 0.5 * (1.0 + nu) * amp - 0.5 * (bt + bz) * p
    h_max = abs(0.5 * (k[_K_K0] - k[_K_Z0]) - 0.5 * (bt - bz) * p) + 0.5 * (1.0 - nu) * amp
    w_max = k[_K_W0] + math.sqrt(k[_K_W1] * k[_K_W1] + k[_K_W2] * k[_K_W2])
    return math.sqrt(h_max * h_max + w_max) - m_min - k[_K_T0]


@_jit
def _solve_case(code: int, k: tuple, cos_g: np.ndarray, sin_g: np.ndarray, vals: np.ndarray
                ) -> tuple[float, float]:
    """Critical wall pressure (p_r: fails with no drawdown; -inf: never) and psi at the worst
    angle (nan for never) of one case; steps 1-3 of the module docstring."""
    p_r = k[_K_P_R]
    g_r, x_r = _max_over_angle(_SHEAR, code, p_r, k, cos_g, sin_g, vals, 0.0)
    if g_r >= 0.0:
        return p_r, x_r
    if k[_K_T0] < math.inf and _tension_bound(p_r, k) > 0.0:
        g_t, x_t = _max_over_angle(_TENSION, code, p_r, k, cos_g, sin_g, vals, 1e-300)
        if g_t > 0.0:  # tension beyond T0 (T0 = 0: any tension)
            return p_r, x_t
    g_0, x_k = _max_over_angle(_SHEAR, code, 0.0, k, cos_g, sin_g, vals, 0.0)
    if g_0 < 0.0:
        return -math.inf, math.nan
    p_k = 0.0
    for _ in range(_MAX_STEPS):
        p_new = _crossing(code, math.cos(x_k), math.sin(x_k), p_k, p_r, k)
        g_new, x_new = _max_over_angle(_SHEAR, code, p_new, k, cos_g, sin_g, vals, math.inf)
        moved = p_new - p_k
        p_k = p_new
        x_k = x_new
        if g_new <= 0.0 or moved <= 1e-13 * (1.0 + abs(p_new)):
            break
    return p_k, x_k


@_jit_parallel
def onset(sum_xy, diff_xy, sxy, szz, sxz, syz, p_r, big_a, nu, t0, ucs, phi, mb, hb_s, hb_a,
          code, n_theta, out_p, out_psi):
    """Critical wall pressure [MPa] into out_p and psi = 2 theta at the worst wall angle into
    out_psi (nan where never) for the criterion ``code`` (:data:`CODES`), for 3-D inputs that
    broadcast to shape (n0, n1, n2) (strides may be zero: broadcast views are read without
    copying); outputs flat, in C order of that shape. ``n_theta``: grid angles over [0, pi)."""
    n0, n1, n2 = sum_xy.shape
    total = n0 * n1 * n2
    cos_g = np.cos(np.arange(n_theta) * (2.0 * math.pi / n_theta))
    sin_g = np.sin(np.arange(n_theta) * (2.0 * math.pi / n_theta))
    nblocks = (total + _BLOCK - 1) // _BLOCK
    for blk in prange(nblocks):
        vals = np.empty(n_theta)
        first = blk * _BLOCK
        for flat in range(first, min(first + _BLOCK, total)):
            i, rem = flat // (n1 * n2), flat % (n1 * n2)
            j, m = rem // n2, rem % n2
            a, pr = big_a[i, j, m], p_r[i, j, m]
            yy, xx = 2.0 * syz[i, j, m], 2.0 * sxz[i, j, m]
            c0, c1, c2, c3 = _strength_constants(code, ucs[i, j, m], phi[i, j, m],
                                                 mb[i, j, m], hb_s[i, j, m], hb_a[i, j, m])
            # the order of the _K_* constants
            k = (sum_xy[i, j, m] - a * pr, szz[i, j, m] - a * pr, 2.0 * diff_xy[i, j, m],
                 4.0 * sxy[i, j, m], 0.5 * (yy * yy + xx * xx), 0.5 * (yy * yy - xx * xx),
                 -xx * yy, 2.0 - a, 1.0 - a, nu[i, j, m], pr, t0[i, j, m], c0, c1, c2, c3)
            out_p[flat], out_psi[flat] = _solve_case(code, k, cos_g, sin_g, vals)
