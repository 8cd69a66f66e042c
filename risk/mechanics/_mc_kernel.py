"""Compiled Mohr-Coulomb yield onset at a cavity wall (numba).

This is the Mohr-Coulomb path of :func:`risk.mechanics.yield_onset.critical_wall_pressure`;
the conventions, outcomes and the stress path are documented there. What is specific here:

Angle variable
    With psi = 2 theta, every wall quantity the criterion sees is affine in (cos psi, sin psi):
    the deviatoric term ``dev = P cos psi + Q sin psi`` and the squared hoop-axial shear
    ``w = t_tz^2 = W0 + W1 cos psi + W2 sin psi`` (t_tz = Y cos theta - X sin theta). Write
    ``u = -dev``: the hoop and axial effective stresses rise with u.

Two branches of Mohr-Coulomb
    With the radial effective stress 0 at the wall, s1 = max(hi, 0) and s3 = min(lo, 0), hi and
    lo the eigenvalues of the hoop-axial block. Then
    F = s1 - q s3 - UCS = max(F_a, F_b, F_c, -UCS), with F_a = hi - UCS, F_b = hi - q lo - UCS
    and F_c = -q lo - UCS. All three are convex in the wall pressure p, and F_c only falls as p
    falls (lo does not fall), so it matters with no drawdown only; below p_r the first wall
    pressure where F >= 0 is the larger of the first crossings v_a, v_b of F_a and F_b
    (derived). Each crossing is a root of a quadratic in p:

    - F_a = 0  <=>  (UCS - s'_t)(UCS - s'_z) = w on the branch UCS >= mean: the larger root;
    - F_b = 0  <=>  (1 + q)^2 (h^2 + w) = (UCS + (q - 1) m)^2 with UCS + (q - 1) m >= 0
      (m, h the mean and half difference of s'_t, s'_z): the genuine root below p_r.

Where to look for the worst angle (derived, used to shrink the search)
    F_a, F_b and the tensile cut-off all rise with w at fixed u. Reflecting psi about the
    direction of largest u keeps u and lowers w on the far side, so every maximum over the
    wall lies on the half circle from the largest-u direction towards the largest-w direction.
    F_a also rises with u (dF_a/du >= nu >= 0), so its maximum lies on the shorter arc between
    the two directions; where w is constant (a principal-axis cavity) it is at the largest-u
    direction itself. Walls whose hoop-axial block is compressive all round at p_r stay so as
    p falls (as for the tensile cut-off), so there F_b <= F_a and only F_a is needed.

Maximisation
    F_a's value (the crossing v_a, or p_r plus the excess where the wall fails with no
    drawdown) is quasi-concave along the arc: its superlevel sets in (u, w) are {w >= g(u)}
    with g a convex parabola, and the arc is the concave north-east boundary of an ellipse in
    (u, w) (derived). Its slope is >= 0 at the start of the arc and <= 0 at the end, so the
    maximum is the root of the slope. The arc is parametrised by the half-angle tangent
    t = tan(x/2 - d/4) in [-T, T], which gives the direction without trigonometric calls.
    Blocks of cases take, all alike and branch-free so that the compiler vectorises the loops,
    one step to the maximum of the cubic Hermite model of the value between the ends (a
    bisection where it has none inside), then Anderson-Bjorck regula falsi steps (Anderson &
    Bjorck 1973, BIT 13, 253) kept 1 % of the bracket away from its ends (antipodal extreme
    directions make both ends stationary). A case has converged when the bracket is below 1e-7
    in t or the slope at the best point is below 1e-6 MPa/rad; the few others finish with
    Brent's method (Brent 1973, ch. 4).

Walls with a tensile sector
    (rare in reservoirs; F_b and the cut-off matter only there) With no drawdown, F_b, the
    full criterion's tensile-throughout branch -q lo - UCS and the cut-off -lo - T0 (passed
    where it is > 0) are each maximised over the half circle as smooth functions (a grid of 48
    angles over [0, pi) in theta, then Brent's minimiser on each side of the grid's two largest
    local maxima), skipped where a cheap bound over all angles is negative. Below p_r, F_b's
    crossing above F_a's is found by the envelope iteration of the general solver on F_b
    alone, with F_b's crossing at one angle in closed form.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit, prange, types

_FINE = 48  # intervals on the half circle for walls with a tensile sector (rare, so dense)
_STEP_F = math.pi / _FINE
_COS_F = np.cos(np.arange(_FINE + 1) * _STEP_F)
_SIN_F = np.sin(np.arange(_FINE + 1) * _STEP_F)

# Positions in the packs the kernel passes around (module-level ints: numba compiles them in as
# constants, so naming them costs nothing).
# x[_X_*, r]: a block's gathered inputs, case r
_X_SUM_XY, _X_DIFF_XY, _X_SXY, _X_SZZ, _X_SXZ, _X_SYZ = 0, 1, 2, 3, 4, 5
_X_P_R, _X_A, _X_NU, _X_UCS = 6, 7, 8, 9
_NX = 10
# kk[_K_*][r]: F_a's per-case constants (k0 = sum_xy - A p_r, z0 = szz - A p_r, pp = 2 diff_xy,
# qq = 4 sxy, w0, w1, w2 of the squared hoop-axial shear, bt = 2 - A, bz = 1 - A, nu, UCS, p_r)
_K_K0, _K_Z0, _K_PP, _K_QQ, _K_W0, _K_W1, _K_W2 = 0, 1, 2, 3, 4, 5, 6
_K_BT, _K_BZ, _K_NU, _K_UCS, _K_P_R = 7, 8, 9, 10, 11
_NK = 12
# geo[_G_*][r]: largest-u direction (cu, su), turning sign sg, mid-arc direction (cm, sm),
# T = tan(d/4), and 1.0 where the wall is compressive all round at p_r
_G_CU, _G_SU, _G_SG, _G_CM, _G_SM, _G_T, _G_COMP = 0, 1, 2, 3, 4, 5, 6
# k[_C_*]: one case's constants in the tensile-sector pass: kk's first eleven (k0 ... UCS, same
# positions), then q, T0 and p_r
_C_UCS, _C_Q, _C_T0, _C_P_R = 10, 11, 12, 13
# compiled once per machine (cached beside the module); numpy's error model: x/0 gives inf
_jit = njit(cache=True, error_model="numpy", nogil=True)
_jit_inline = njit(cache=True, error_model="numpy", nogil=True, inline="always")
# one signature for the kernel (read-only inputs of any layout, broadcast views included), so
# no call ever waits for a second compilation
_IN = types.Array(types.float64, 3, "A", readonly=True)
_OUT = types.Array(types.float64, 1, "C")
_jit_parallel = njit(types.void(*([_IN] * 12), _OUT, _OUT, _OUT), cache=True,
                     error_model="numpy", nogil=True, parallel=True)


@_jit_inline
def _fa(c: float, s: float, sg: float, k0: float, z0: float, pp: float, qq: float, w0: float,
        w1: float, w2: float, bt: float, bz: float, nu: float, ucs: float, p_r: float
        ) -> tuple[float, float]:
    """F_a's value at direction (c, s): the first crossing v_a below p_r, or p_r + F_a(p_r)
    where F_a(p_r) >= 0; and its slope d/dpsi turning by sign sg. Branch-free (vectorises)."""
    dev = pp * c + qq * s
    w = max(w0 + w1 * c + w2 * s, 0.0)
    ddev = sg * (qq * c - pp * s)
    dw = sg * (w2 * c - w1 * s)
    at = k0 - dev
    az = z0 - nu * dev
    a1 = ucs - at
    a2 = ucs - az
    qa = bt * bz
    qb = a1 * bz + a2 * bt
    qc = a1 * a2 - w
    dd = a1 * bz - a2 * bt
    sd = math.sqrt(dd * dd + 4.0 * qa * w)
    # larger root of qa p^2 + qb p + qc = 0 without cancellation (discriminant a sum of
    # squares): num/den
    neg = qb <= 0.0
    num = -qb + sd if neg else 2.0 * qc
    den = 2.0 * qa if neg else -qb - sd
    st = at - bt * p_r
    sz = az - bz * p_r
    hh = 0.5 * (st - sz)
    r = math.sqrt(hh * hh + w)
    excess = 0.5 * (st + sz) + r - ucs
    # F_a(p_r) >= 0 exactly when the root is at or above p_r (F_a falls with p): then the
    # value is p_r + F_a(p_r) and the slope that of the hoop-axial major stress at p_r; else
    # the root and its implicit derivative (dPhi/dp = sd there). One division for each.
    # (also where the quadratic degenerates, den = 0: A = 1 with the axial stress at UCS,
    # where F_a >= 0 at every p and rounding can leave the excess a hair below zero)
    over = not ((excess < 0.0) & (den != 0.0))
    v_num = p_r + max(excess, 0.0) if over else num
    v_den = 1.0 if over else den
    g_num = (-0.5 * (1.0 + nu) * ddev * r - 0.5 * (1.0 - nu) * ddev * hh + 0.5 * dw if over
             else -(ddev * (bz + nu * bt) * num + (ddev * (a2 + nu * a1) - dw) * den))
    g_den = max(r, 1e-300) if over else den * sd
    v = v_num / v_den
    g = g_num / g_den
    return v, g


@_jit_inline
def _fa_tan(t: float, cm: float, sm: float, sg: float, k0: float, z0: float, pp: float,
            qq: float, w0: float, w1: float, w2: float, bt: float, bz: float, nu: float,
            ucs: float, p_r: float) -> tuple[float, float]:
    """:func:`_fa` at the direction turned from (cm, sm) by 2 atan(t) (sense sg)."""
    t2 = t * t
    inv = 1.0 / (1.0 + t2)
    cx, sx = (1.0 - t2) * inv, sg * 2.0 * t * inv
    return _fa(cm * cx - sm * sx, sm * cx + cm * sx, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz,
               nu, ucs, p_r)


@_jit_inline
def _block(c: float, s: float, p: float, k: tuple
           ) -> tuple[float, float, float]:
    """Mean m, half difference h and radius r of the hoop-axial block at wall pressure p."""
    k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, ucs, q, t0, p_r = k
    dev = pp * c + qq * s
    w = max(w0 + w1 * c + w2 * s, 0.0)
    st = k0 - dev - bt * p
    sz = z0 - nu * dev - bz * p
    hh = 0.5 * (st - sz)
    return 0.5 * (st + sz), hh, math.sqrt(hh * hh + w)


@_jit
def _smooth(which: int, c: float, s: float, p: float, k: tuple
            ) -> float:
    """Smooth functions of the wall angle for walls with a tensile sector: F_b = hi - q lo -
    UCS at wall pressure p (which = 1), or -lo at p (which = 2)."""
    m, _, r = _block(c, s, p, k)
    if which == 1:
        return m + r - k[_C_Q] * (m - r) - k[_C_UCS]
    return r - m


@_jit
def _crossing_b(c: float, s: float, p_fail: float, p_safe: float, k: tuple
                ) -> float:
    """The wall pressure in [p_fail, p_safe] where F_b crosses zero at direction (c, s), given
    F_b(p_fail) >= 0 > F_b(p_safe): F_b is convex in p, so the crossing is unique; it is a root
    of (1 + q)^2 (h^2 + w) = (UCS + (q - 1) m)^2 with UCS + (q - 1) m >= 0 (closed form, then
    one Newton step against rounding), kept inside the bracket."""
    k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, ucs, q, t0, p_r = k
    dev = pp * c + qq * s
    w = max(w0 + w1 * c + w2 * s, 0.0)
    at = k0 - dev
    az = z0 - nu * dev
    alpha2 = (1.0 + q) * (1.0 + q)
    h0 = 0.5 * (at - az)
    e0 = ucs + (q - 1.0) * 0.5 * (at + az)
    e1 = (q - 1.0) * 0.5 * (bt + bz)
    c2 = 0.25 * alpha2 - e1 * e1
    c1 = -alpha2 * h0 + 2.0 * e0 * e1
    c0 = alpha2 * (h0 * h0 + w) - e0 * e0
    disc = max(c1 * c1 - 4.0 * c2 * c0, 0.0)
    half = -0.5 * (c1 + math.copysign(math.sqrt(disc), c1))
    best, err = 0.5 * (p_fail + p_safe), math.inf
    for x in (half / c2, c0 / half):
        if x == x and p_fail - 1e-9 <= x <= p_safe + 1e-9:
            x = min(max(x, p_fail), p_safe)
            f = abs(_smooth(1, c, s, x, k))
            if f < err:
                best, err = x, f
    # one Newton step (dF_b/dp from m, h, r), kept inside the bracket
    m, hh, r = _block(c, s, best, k)
    slope = -(1.0 - q) * 0.5 * (bt + bz) - (1.0 + q) * 0.5 * hh / max(r, 1e-300)
    f = m + r - q * (m - r) - ucs
    if slope != 0.0:
        nxt = best - f / slope
        if p_fail <= nxt <= p_safe and abs(_smooth(1, c, s, nxt, k)) < abs(f):
            best = nxt
    return best


@_jit
def _smooth_at(which: int, x: float, p: float, cu: float, su: float, sg: float,
               k: tuple) -> float:
    """:func:`_smooth` at offset x (psi) from the largest-u direction, turning by sg."""
    cx, sx = math.cos(x), sg * math.sin(x)
    return _smooth(which, cu * cx - su * sx, su * cx + cu * sx, p, k)


@_jit
def _local_max(which: int, a: float, b: float, p: float, cu: float, su: float, sg: float,
               k: tuple) -> tuple[float, float]:
    """A local maximum of :func:`_smooth` quantity ``which`` on [a, b] (offsets in psi) by
    Brent's minimiser on its negative (golden section with parabolic steps; Brent 1973, ch. 5,
    'localmin'), to 1e-10 rad. Returns the value and its offset."""
    golden = 0.3819660112501051
    x = w = v = a + golden * (b - a)
    fx = fw = fv = -_smooth_at(which, x, p, cu, su, sg, k)
    d = e = 0.0
    for _ in range(100):
        m = 0.5 * (a + b)
        tol = 1e-10 + 1e-14 * abs(x)
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
        fu = -_smooth_at(which, u, p, cu, su, sg, k)
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
def _half_circle_max(which: int, p: float, cu: float, su: float, sg: float,
                     k: tuple) -> tuple[float, float]:
    """Maximum of :func:`_smooth` quantity ``which`` at wall pressure p over the half circle
    from the largest-u direction (cu, su) turning by sg: a grid of 48 angles over [0, pi) in
    theta, then Brent's minimiser on each side of the grid's two largest local maxima (a local
    maximum of the grid can sit in the dip between two peaks, and a refinement reaching only
    from the grid point can stop short of its peak: both were found in review). Returns the
    value and its offset in psi."""
    vals = np.empty(_FINE + 1)
    for i in range(_FINE + 1):
        cx, sx = _COS_F[i], sg * _SIN_F[i]
        vals[i] = _smooth(which, cu * cx - su * sx, su * cx + cu * sx, p, k)
    # the two largest grid local maxima
    j1, j2 = -1, -1
    for i in range(_FINE + 1):
        left = vals[i - 1] if i > 0 else -math.inf
        right = vals[i + 1] if i < _FINE else -math.inf
        if vals[i] >= left and vals[i] >= right:
            if j1 < 0 or vals[i] > vals[j1]:
                j1, j2 = i, j1
            elif j2 < 0 or vals[i] > vals[j2]:
                j2 = i
    best, x_best = vals[j1], j1 * _STEP_F
    for j in (j1, j2):
        if j < 0:
            continue
        xj = j * _STEP_F
        for a, b in ((max(xj - _STEP_F, 0.0), xj), (xj, min(xj + _STEP_F, math.pi))):
            if b > a:
                v, x = _local_max(which, a, b, p, cu, su, sg, k)
                if v > best:
                    best, x_best = v, x
    return best, x_best


@_jit_inline
def _bounds(p: float, k: tuple) -> tuple[float, float]:
    """Upper bounds over every wall angle of F_b and of -lo at wall pressure p, from the
    ranges of the mean m, the half difference h and w over the angle (cheap; used to skip the
    searches that cannot reach zero)."""
    k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, ucs, q, t0, p_r = k
    amp = math.sqrt(pp * pp + qq * qq)  # |dev| <= amp
    m_min = 0.5 * (k0 + z0) - 0.5 * (1.0 + nu) * amp - 0.5 * (bt + bz) * p
    h_max = abs(0.5 * (k0 - z0) - 0.5 * (bt - bz) * p) + 0.5 * (1.0 - nu) * amp
    r_max = math.sqrt(h_max * h_max + w0 + math.sqrt(w1 * w1 + w2 * w2))
    return (1.0 - q) * m_min + (1.0 + q) * r_max - ucs, r_max - m_min


@_jit
def _tensile_side(best_a: float, x_a: float, cu: float, su: float, sg: float,
                  k: tuple) -> tuple[float, float]:
    """Walls with a tensile sector, against F_a's maximum (best_a, x_a; offsets are from the
    largest-u direction on the half circle towards the largest-w direction).

    With no drawdown, F = max(F_a, F_b, F_c) with F_c = -q lo - UCS (walls whose hoop-axial
    block is tensile throughout) and the tensile cut-off -lo - T0; F_b and -lo are smooth in
    the angle and are maximised on their own (the kinked F itself can hide a narrow tensile
    sector between grid angles). Below p_r, F_c only falls, and F_b's crossing is found, where
    it lies above F_a's, by the envelope iteration of the general solver on F_b alone
    (p_{k+1} = F_b's crossing at the angle maximising F_b at p_k; F_b's crossing in closed
    form). Returns the value (>= p_r: fails with no drawdown) and its offset."""
    ucs, q, t0, p_r = k[_C_UCS], k[_C_Q], k[_C_T0], k[_C_P_R]
    if best_a >= p_r:
        return best_a, x_a  # F_a, hence F, is reached with no drawdown
    fb_max, lo_max = _bounds(p_r, k)
    if fb_max >= 0.0:
        g_b, x_b = _half_circle_max(1, p_r, cu, su, sg, k)
        if g_b >= 0.0:
            return p_r + g_b, x_b
    if q * lo_max - ucs >= 0.0 or lo_max - t0 > 0.0:
        g_l, x_l = _half_circle_max(2, p_r, cu, su, sg, k)
        if q * g_l - ucs >= 0.0:
            return p_r + q * g_l - ucs, x_l
        if g_l - t0 > 0.0:  # tension beyond T0 (T0 = 0: any tension, not zero stress)
            return p_r, x_l
    p = max(best_a, 0.0)
    if _bounds(p, k)[0] < 0.0:
        return best_a, x_a  # F_b cannot be reached above F_a's crossing (nor above 0)
    g, x = _half_circle_max(1, p, cu, su, sg, k)
    if g < 0.0:
        return best_a, x_a  # F_b is not reached above F_a's crossing (nor above 0)
    for _ in range(60):
        c, s = math.cos(x), sg * math.sin(x)
        c, s = cu * c - su * s, su * c + cu * s
        p_new = _crossing_b(c, s, p, p_r, k)
        g, x_new = _half_circle_max(1, p_new, cu, su, sg, k)
        moved = p_new - p
        p = p_new
        if g <= 0.0 or moved <= 1e-13 * (1.0 + abs(p)):
            break
        x = x_new
    return p, x


_BLOCK = 256  # cases per block: the state of a block stays in the processor's cache
_ROUNDS = 6  # Anderson-Bjorck steps for every case (then the check, then Brent where needed)


@_jit
def _setup_block(x: np.ndarray) -> tuple[tuple[np.ndarray, ...], tuple[np.ndarray, ...]]:
    """Per-case constants for a block, from the gathered inputs x[_X_*, r] (sum_xy, diff_xy,
    sxy, szz, sxz, syz, p_r, A, nu, UCS): F_a's constants kk[_K_*][r]; and geo[_G_*][r]: the
    largest-u direction (cu, su), the turning sign sg towards the largest-w direction, the
    mid-arc direction (cm, sm), T = tan(d/4) with d in [0, pi] the angle between the two
    directions (0 where they coincide), and 1.0 where the wall is compressive all round at p_r
    (a sufficient test, see the module docstring). Branch-free, so the loop vectorises (the
    outputs are allocated here: the compiler then knows they alias nothing)."""
    cnt = x.shape[1]
    x0, x1, x2, x3, x4 = x[_X_SUM_XY], x[_X_DIFF_XY], x[_X_SXY], x[_X_SZZ], x[_X_SXZ]
    x5, x6, x7, x8, x9 = x[_X_SYZ], x[_X_P_R], x[_X_A], x[_X_NU], x[_X_UCS]
    # every output its own allocation: the compiler then knows no two alias (rows of one 2-D
    # array would need run-time alias checks, too many for it to vectorise the loop)
    o0, o1, o2, o3, o4, o5 = (np.empty(cnt), np.empty(cnt), np.empty(cnt), np.empty(cnt),
                              np.empty(cnt), np.empty(cnt))
    o6, o7, o8, o9, o10, o11 = (np.empty(cnt), np.empty(cnt), np.empty(cnt), np.empty(cnt),
                                np.empty(cnt), np.empty(cnt))
    g0, g1, g2, g3, g4, g5, g6 = (np.empty(cnt), np.empty(cnt), np.empty(cnt), np.empty(cnt),
                                  np.empty(cnt), np.empty(cnt), np.empty(cnt))
    for r in range(cnt):
        p_r, big_a, nu = x6[r], x7[r], x8[r]
        k0 = x0[r] - big_a * p_r
        z0 = x3[r] - big_a * p_r
        pp, qq = 2.0 * x1[r], 4.0 * x2[r]
        yy, xx = 2.0 * x5[r], 2.0 * x4[r]
        w0, w1, w2 = 0.5 * (yy * yy + xx * xx), 0.5 * (yy * yy - xx * xx), -xx * yy
        bt, bz = 2.0 - big_a, 1.0 - big_a
        o0[r], o1[r], o2[r], o3[r], o4[r], o5[r] = k0, z0, pp, qq, w0, w1
        o6[r], o7[r], o8[r], o9[r], o10[r], o11[r] = w2, bt, bz, nu, x9[r], p_r
    for r in range(cnt):
        k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r = (o0[r], o1[r], o2[r], o3[r], o4[r],
                                                       o5[r], o6[r], o7[r], o8[r], o9[r],
                                                       o11[r])
        amp = math.sqrt(pp * pp + qq * qq)
        inv_a = 1.0 / amp if amp > 0.0 else 0.0
        cu = -pp * inv_a if amp > 0.0 else 1.0
        su = -qq * inv_a
        bw = math.sqrt(w1 * w1 + w2 * w2)
        w_dir = bw > 1e-14 * (w0 + 1.0)
        inv_w = 1.0 / bw if w_dir else 0.0
        cw = w1 * inv_w if w_dir else cu
        sw = w2 * inv_w if w_dir else su
        cross = cu * sw - su * cw
        sg = 1.0 if cross >= 0.0 else -1.0
        cd = cu * cw + su * sw
        ch = math.sqrt(max(0.5 * (1.0 + cd), 0.0))  # half-angle formulas for d/2
        sh = math.sqrt(max(0.5 * (1.0 - cd), 0.0))
        single = (cross == 0.0) & (cd > 0.0)  # the two directions coincide
        sh = 0.0 if single else sh
        ch = 1.0 if single else ch
        tmax = math.sqrt(2.0 * w0)
        comp = (k0 - amp - bt * p_r - tmax >= 0.0) & (z0 - nu * amp - bz * p_r - tmax >= 0.0)
        g0[r], g1[r], g2[r] = cu, su, sg
        g3[r] = cu * ch - su * sg * sh  # mid-arc direction
        g4[r] = su * ch + cu * sg * sh
        g5[r] = sh / (1.0 + ch)  # T = tan(d/4)
        g6[r] = 1.0 if comp else 0.0
    # o<i> is kk[i] and g<i> is geo[i]: the order of the _K_* and _G_* constants
    return (o0, o1, o2, o3, o4, o5, o6, o7, o8, o9, o10, o11), (g0, g1, g2, g3, g4, g5, g6)


@_jit
def _brent_max(a: float, b: float, best_v: float, best_t: float, cm: float, sm: float,
               sg: float, kk: tuple[np.ndarray, ...], r: int) -> tuple[float, float]:
    """Brent's zero finder (Brent 1973, ch. 4, 'zeroin') on F_a's slope in t over a bracket
    [a, b] of its root, keeping the largest value seen. The fallback of the vectorised
    steps."""
    k0, z0, pp, qq = kk[_K_K0][r], kk[_K_Z0][r], kk[_K_PP][r], kk[_K_QQ][r]
    w0, w1, w2 = kk[_K_W0][r], kk[_K_W1][r], kk[_K_W2][r]
    bt, bz, nu = kk[_K_BT][r], kk[_K_BZ][r], kk[_K_NU][r]
    ucs, p_r = kk[_K_UCS][r], kk[_K_P_R][r]
    va, fa = _fa_tan(a, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, ucs, p_r)
    vb, fb = _fa_tan(b, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, ucs, p_r)
    # the bracket keeps slope >= 0 at a and <= 0 at b; zeros (stationary ends, rounding) get
    # the sign they stand for
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
        vb, fb = _fa_tan(b, cm, sm, sg, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, ucs, p_r)
        if vb > best_v:
            best_v, best_t = vb, b
    return best_v, best_t


@_jit
def _search_block(k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, ucs, p_r, cm, sm, sg, lo_io, hi_io,
                  bv_out, bx_out, g_out):
    """F_a's maximum over the arc [lo, hi] in t for a block of cases (1-D arrays): both ends,
    a Hermite step, then Anderson-Bjorck steps on the slope, every case alike and branch-free
    so that the loops vectorise. Leaves the best value and its t in bv_out, bx_out, the final
    bracket of the slope's root in lo_io, hi_io, and in g_out the slope's magnitude at the
    best point (0 where no step was taken). The state lives in arrays allocated here, which the
    compiler knows alias nothing, and only float arrays are stored to inside the loops (both
    found necessary for the loops to vectorise)."""
    cnt = lo_io.size
    lo, hi = lo_io.copy(), hi_io.copy()
    fl, fh, bv, bx = np.empty(cnt), np.empty(cnt), np.empty(cnt), np.empty(cnt)
    kept = np.zeros(cnt)
    g_last = np.zeros(cnt)
    bv_lo, bv_hi = np.empty(cnt), np.empty(cnt)
    for r in range(cnt):
        va, ga = _fa_tan(lo[r], cm[r], sm[r], sg[r], k0[r], z0[r], pp[r], qq[r], w0[r], w1[r],
                         w2[r], bt[r], bz[r], nu[r], ucs[r], p_r[r])
        vb, gb = _fa_tan(hi[r], cm[r], sm[r], sg[r], k0[r], z0[r], pp[r], qq[r], w0[r], w1[r],
                         w2[r], bt[r], bz[r], nu[r], ucs[r], p_r[r])
        up = va >= vb
        bv[r] = va if up else vb
        bx[r] = lo[r] if up else hi[r]
        bv_lo[r] = va
        bv_hi[r] = vb
        # the slope is >= 0 at the start and <= 0 at the end (module docstring); where it
        # vanishes there (antipodal extreme directions make both ends stationary) the maximum
        # may still lie inside, so the search always runs on an arc of positive length, with
        # signs forced at stationary ends
        fl[r] = ga if ga > 0.0 else 1e-300
        fh[r] = gb if gb < 0.0 else -1e-300
    rounds = _ROUNDS
    if not np.any(hi > lo):
        rounds = 0  # every arc is a single direction (principal-axis cavities)
    else:
        # first step: the root of the quadratic slope that matches the slopes at both ends and
        # the rise between them (a cubic Hermite model of the value), kept to the middle 90 %
        # of the arc; a plain bisection where that model has no root inside (at antipodal
        # extreme directions both end slopes vanish)
        for r in range(cnt):
            a, b = lo[r], hi[r]
            h = b - a
            ma = fl[r] * 2.0 / (1.0 + a * a)  # dv/dt = dv/dpsi * dpsi/dt
            mb = fh[r] * 2.0 / (1.0 + b * b)
            rise = (bv_hi[r] - bv_lo[r]) / h if h > 0.0 else 0.0
            c2 = 3.0 * (ma + mb) - 6.0 * rise
            c1 = mb - ma - c2
            disc = c1 * c1 - 4.0 * c2 * ma
            sq = math.sqrt(max(disc, 0.0))
            den = -c1 - sq if c1 > 0.0 else -c1 + sq  # q(s) = ma + c1 s + c2 s^2
            s1 = 2.0 * ma / den if den != 0.0 else 0.5
            s2 = den / (2.0 * c2) if c2 != 0.0 else 0.5
            s_ = s1 if (s1 > 0.0) & (s1 < 1.0) else s2
            good = (disc >= 0.0) & (s_ > 0.0) & (s_ < 1.0)
            s_ = min(max(s_, 0.05), 0.95) if good else 0.5
            tn = a + s_ * h
            v, g = _fa_tan(tn, cm[r], sm[r], sg[r], k0[r], z0[r], pp[r], qq[r], w0[r], w1[r],
                           w2[r], bt[r], bz[r], nu[r], ucs[r], p_r[r])
            better = v > bv[r]
            bv[r] = v if better else bv[r]
            bx[r] = tn if better else bx[r]
            right = g > 0.0
            lo[r] = tn if right else lo[r]
            hi[r] = hi[r] if right else tn
            fl[r] = g if right else fl[r]
            fh[r] = fh[r] if right else g
    for _ in range(rounds):
        for r in range(cnt):
            den = fh[r] - fl[r]
            tn = (lo[r] * fh[r] - hi[r] * fl[r]) / den
            mid = 0.5 * (lo[r] + hi[r])
            tn = tn if den < 0.0 else mid
            # at least 1% of the bracket from either end: a flat (stationary) end would
            # otherwise hold the secant point on itself; where the root is that close to an
            # end, the step shrinks the bracket a hundredfold
            gap = 0.01 * (hi[r] - lo[r])
            tn = min(max(tn, lo[r] + gap), hi[r] - gap)
            v, g = _fa_tan(tn, cm[r], sm[r], sg[r], k0[r], z0[r], pp[r], qq[r], w0[r], w1[r],
                           w2[r], bt[r], bz[r], nu[r], ucs[r], p_r[r])
            better = v > bv[r]
            bv[r] = v if better else bv[r]
            bx[r] = tn if better else bx[r]
            right = g > 0.0  # the maximum lies beyond tn: tn replaces the lower end
            # the end kept a second time in a row has its slope scaled by
            # 1 - g/(the replaced end's slope), or 1/2 (Anderson-Bjorck)
            keep_hi_twice = right and kept[r] > 0.0
            keep_lo_twice = (not right) and kept[r] < 0.0
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
    # the slope at the best point (tracking it inside the loop above, or any other store
    # there, stops the compiler from vectorising that loop)
    for r in range(cnt if rounds else 0):
        _, g = _fa_tan(bx[r], cm[r], sm[r], sg[r], k0[r], z0[r], pp[r], qq[r], w0[r], w1[r],
                       w2[r], bt[r], bz[r], nu[r], ucs[r], p_r[r])
        g_last[r] = abs(g)
    lo_io[:] = lo
    hi_io[:] = hi
    bv_out[:] = bv
    bx_out[:] = bx
    g_out[:] = g_last


@_jit_inline
def _passive(phi: float) -> float:
    """q = (1 + sin phi)/(1 - sin phi)."""
    sphi = math.sin(phi)
    return (1.0 + sphi) / (1.0 - sphi)


@_jit_parallel
def mohr_coulomb_onset(sum_xy, diff_xy, sxy, szz, sxz, syz, p_r, big_a, nu, t0, ucs, phi,
                       out_p, out_c, out_s):
    """Critical wall pressure [MPa] (p_r: fails with no drawdown, -inf: never) into out_p and
    (cos, sin) of psi = 2 theta at the worst wall angle into (out_c, out_s) (nan where never),
    for 3-D inputs that broadcast to shape (n0, n1, n2) (strides may be zero: broadcast views
    are read without copying); the outputs are flat, in C order of that shape. The angle itself
    is left to numpy's vectorised arctan2.

    Each block of cases is gathered into contiguous arrays, then set up, searched and finished
    by loops that vectorise; walls with a tensile sector take a scalar pass at the end.
    """
    n0, n1, n2 = sum_xy.shape
    total = n0 * n1 * n2
    nblocks = (total + _BLOCK - 1) // _BLOCK
    for blk in prange(nblocks):
        first = blk * _BLOCK
        cnt = min(_BLOCK, total - first)
        i, rem = first // (n1 * n2), first % (n1 * n2)
        j, m = rem // n2, rem % n2
        x = np.empty((_NX, cnt))
        for r in range(cnt):
            x[_X_SUM_XY, r], x[_X_DIFF_XY, r] = sum_xy[i, j, m], diff_xy[i, j, m]
            x[_X_SXY, r], x[_X_SZZ, r] = sxy[i, j, m], szz[i, j, m]
            x[_X_SXZ, r], x[_X_SYZ, r] = sxz[i, j, m], syz[i, j, m]
            x[_X_P_R, r], x[_X_A, r] = p_r[i, j, m], big_a[i, j, m]
            x[_X_NU, r], x[_X_UCS, r] = nu[i, j, m], ucs[i, j, m]
            m += 1
            if m == n2:
                m = 0
                j += 1
                if j == n1:
                    j = 0
                    i += 1
        kk, geo = _setup_block(x)
        lo = -geo[_G_T]
        hi = geo[_G_T].copy()
        bv, bx, g_last = np.empty(cnt), np.empty(cnt), np.empty(cnt)
        _search_block(kk[_K_K0], kk[_K_Z0], kk[_K_PP], kk[_K_QQ], kk[_K_W0], kk[_K_W1],
                      kk[_K_W2], kk[_K_BT], kk[_K_BZ], kk[_K_NU], kk[_K_UCS], kk[_K_P_R],
                      geo[_G_CM], geo[_G_SM], geo[_G_SG], lo, hi, bv, bx, g_last)
        op = out_p[first:first + cnt]
        oc = out_c[first:first + cnt]
        os_ = out_s[first:first + cnt]
        for r in range(cnt):
            # converged when the slope's root is bracketed to 1e-7 in t (the ends were
            # evaluated, the value is smooth: what is left to gain is of order |v''| 1e-14), or
            # when the slope at the best point is below 1e-6 MPa/rad (that point is the
            # maximum to g^2/(2|v''|), 5e-13 MPa for |v''| >= 1); else Brent's method from
            # the bracket (rare)
            if hi[r] - lo[r] > 1e-7 and g_last[r] > 1e-6:
                bv[r], bx[r] = _brent_max(lo[r], hi[r], bv[r], bx[r], geo[_G_CM][r],
                                          geo[_G_SM][r], geo[_G_SG][r], kk, r)
        for r in range(cnt):
            tb = bx[r]
            inv = 1.0 / (1.0 + tb * tb)
            cx, sx = (1.0 - tb * tb) * inv, geo[_G_SG][r] * 2.0 * tb * inv
            oc[r] = geo[_G_CM][r] * cx - geo[_G_SM][r] * sx
            os_[r] = geo[_G_SM][r] * cx + geo[_G_CM][r] * sx
            op[r] = bv[r]
        # walls with a tensile sector: a scalar pass (inputs read again at their indices)
        for r in range(cnt):
            if geo[_G_COMP][r] == 0.0:
                flat = first + r
                i, rem = flat // (n1 * n2), flat % (n1 * n2)
                j, m = rem // n2, rem % n2
                cu, su, sg = geo[_G_CU][r], geo[_G_SU][r], geo[_G_SG][r]
                # the order of the _C_* constants
                k = (kk[_K_K0][r], kk[_K_Z0][r], kk[_K_PP][r], kk[_K_QQ][r], kk[_K_W0][r],
                     kk[_K_W1][r], kk[_K_W2][r], kk[_K_BT][r], kk[_K_BZ][r], kk[_K_NU][r],
                     kk[_K_UCS][r], _passive(phi[i, j, m]), t0[i, j, m], kk[_K_P_R][r])
                c, s = oc[r], os_[r]
                # offsets on the half circle are measured from the largest-u direction
                xo = math.atan2(sg * (cu * s - su * c), cu * c + su * s)
                best, xo = _tensile_side(op[r], xo, cu, su, sg, k)
                c, s = math.cos(xo), sg * math.sin(xo)
                oc[r], os_[r] = cu * c - su * s, su * c + cu * s
                op[r] = best
        # outcome conventions
        for r in range(cnt):
            p_res = kk[_K_P_R][r]
            never = op[r] < 0.0
            op[r] = p_res if op[r] >= p_res else (-math.inf if never else op[r])
            os_[r] = math.nan if never else os_[r]
