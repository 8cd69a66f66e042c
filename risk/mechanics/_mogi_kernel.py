"""Compiled Mogi-Coulomb yield onset at a cavity wall on the whole circle (numba).

The fast path of :func:`risk.mechanics.yield_onset.critical_wall_pressure` for the
Mogi-Coulomb criterion (Al-Ajmi & Zimmerman 2005); conventions, outcomes and the stress path
are documented there. It is built like the Drucker-Prager half-circle kernel
(:mod:`risk.mechanics._arc_kernel`): the answer is the largest, over the wall angle, of the
critical wall pressure at one angle, found by a grid, a Hermite step and Anderson-Bjorck steps
on the slope, in branch-free blocks of cases; two things differ (docs/derivations.md,
sec. 15.4).

Value at one angle
    With psi = 2 theta, the wall's principal effective stresses are 0 and m +- r, and
    Mogi-Coulomb reads F = (sqrt 2/3) sqrt(m^2 + 3 r^2) - a - b mid with mid the mean of the
    largest and smallest of them: (m + r)/2, m or (m - r)/2 as the wall is compressive, has one
    tensile principal stress or two. Only on the middle branch is the crossing F = 0 a root of
    a quadratic in the wall pressure p; on the others it is a root of a quartic. The crossing
    is therefore taken by a fixed number of steps, each the root of the quadratic obtained with
    r replaced by its tangent (a Newton step on the r term alone), safeguarded by the bracket
    [0, p_r] as it shrinks and started from the middle branch's quadratic root, then one Newton
    step on F. The value searched and its slope are those of the Drucker-Prager kernel
    (v = the crossing, F(0) where the angle never fails, p_r + F(p_r) where it fails with no
    drawdown).

Where to look for the worst angle
    Mogi-Coulomb's excess falls as the hoop-axial shear rises where the two wall stresses are
    nearly equal (dF/dr = -b/2 at r = 0), so the half circle of the Drucker-Prager kernel does
    not hold: the search covers the whole circle, with a grid of _GRID directions. Where the
    value search finds no failure at p_r, F(p_r) and the tensile cut-off are searched on the
    circle only where the value grid's largest F and -lo at p_r, plus a Lipschitz bound over
    half a grid step, do not rule them out.

The domain is not convex
    Mogi-Coulomb's elastic domain turns inwards at the triaxial-extension corners (derivations
    sec. 15.4), so the failing wall pressures at one angle can form a band above the crossing
    (or with F(0) < 0). Every value on the grid and the final one carries a certificate that
    nothing fails above it at its angle (a convex majorant on the compressive branch, the
    excess where two principal stresses vanish; sec. 15.5), and the value search is skipped
    only where a bound over every angle and every wall pressure in [0, p_r] is negative.

Cases whose grid shows two maxima that might compete, whose slope search has not converged,
whose polished crossing has not converged or with a value not certified take the general
envelope iteration of :mod:`risk.mechanics._onset_kernel` (the previous compiled path), then
the band pass (:func:`_band`: the largest failing wall pressure at one angle without assuming
a convex domain, maximised over the angle), and keep the larger answer.

References
----------
Al-Ajmi, A.M. & Zimmerman, R.W. (2005) Relation between the Mogi and the Coulomb failure
criteria. Int. J. Rock Mech. Min. Sci. 42, 431-439. Al-Ajmi, A.M. & Zimmerman, R.W. (2006)
Stability analysis of vertical boreholes using the Mogi-Coulomb failure criterion. Int. J.
Rock Mech. Min. Sci. 43, 1200-1211. Anderson, N. & Bjorck, A. (1973) A new high order method
of regula falsi type for computing a root of an equation. BIT 13, 253-264. Kiefer, J. (1953)
Sequential minimax search for a maximum. Proc. Amer. Math. Soc. 4, 502-506.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit, prange, types

from risk.mechanics._onset_kernel import (
    _MOGI,
    _solve_case,
    _strength_constants,
    _tension_bound,
)

_BLOCK = 256  # cases per block: the state of a block stays in the processor's cache
_GRID = 12  # directions of the grid over the whole circle in psi
_ROUNDS = 6  # Anderson-Bjorck steps for every case
# safeguarded steps per crossing (:func:`_step`): 1 on the grid, 3 in the steps on the slope,
# 8 at the final angle (written out in _dir)
_S = math.sqrt(2.0) / 3.0  # tau_oct = _S sqrt(m^2 + 3 r^2) at the wall
_S2 = 2.0 / 9.0
_HALF_STEP = math.pi / _GRID  # every direction lies within this of a grid direction [rad]
_VALUE, _TENSION, _SHEAR_R = 0, 1, 2  # the function a search maximises

_jit = njit(cache=True, error_model="numpy", nogil=True)
_jit_inline = njit(cache=True, error_model="numpy", nogil=True, inline="always")
_IN = types.Array(types.float64, 3, "A", readonly=True)
_OUT = types.Array(types.float64, 1, "C")
_jit_parallel = njit(types.void(*([_IN] * 15), types.int64, _OUT, _OUT, _OUT),
                     cache=True, error_model="numpy", nogil=True, parallel=True)


@_jit_inline
def _mogi(m: float, h: float, w: float, aa: float, bb: float
          ) -> tuple[float, float, float, float]:
    """Mogi-Coulomb excess F at the wall (principal stresses 0 and m +- r, r^2 = h^2 + w) and
    its partial derivatives in m, h and w. Branch-free."""
    r = math.sqrt(h * h + w)
    q = math.sqrt(max(m * m + 3.0 * r * r, 1e-300))
    hi = m + r
    lo = m - r
    up = 1.0 if hi > 0.0 else 0.0  # s1 = max(hi, 0)
    dn = 1.0 if lo < 0.0 else 0.0  # s3 = min(lo, 0)
    mid = 0.5 * (max(hi, 0.0) + min(lo, 0.0))
    rr = max(r, 1e-300)
    inv = 1.0 / (q * rr)  # one division for 1/q and 1/r
    sq = _S * rr * inv
    ri = 0.5 * (up - dn) * q * inv  # d mid/dr over r
    return (_S * q - aa - bb * mid, sq * m - 0.5 * bb * (up + dn), 3.0 * sq * h - bb * ri * h,
            1.5 * sq - 0.5 * bb * ri)


@_jit_inline
def _step(x: float, lo: float, hi: float, ma: float, ha: float, mb: float, w: float,
          aa: float, bb: float) -> tuple[float, float, float, float]:
    """One step towards the crossing from wall pressure x (m = ma - mb x, h = ha - x/2): the
    sign of F at x narrows the bracket [lo, hi] (F(lo) >= 0 > F(hi)), then the next x is the
    root of the model with the branch at x and r replaced by its tangent at x (a quadratic:
    docs/derivations.md, sec. 15.4), the one in the bracket (to rounding) with a non-negative
    right-hand side nearest x, or the bracket's middle where there is none. Returns the new x, the
    bracket and the step's size. Branch-free."""
    m = ma - mb * x
    h = ha - 0.5 * x
    r = math.sqrt(h * h + w)
    q = math.sqrt(m * m + 3.0 * r * r)
    up = 1.0 if m + r > 0.0 else 0.0
    dn = 1.0 if m - r < 0.0 else 0.0
    cm = 0.5 * (up + dn)  # mid = cm m + cr r on this branch
    cr = 0.5 * (up - dn)
    f = _S * q - aa - bb * (cm * m + cr * r)
    fail = f >= 0.0
    lo = x if fail else lo
    hi = hi if fail else x
    r1 = -0.5 * h / max(r, 1e-300)  # dr/dp
    e0 = aa + bb * (cm * ma + cr * (r - r1 * x))  # a + b mid = e0 - e1 p on the tangent
    e1 = bb * (cm * mb - cr * r1)
    q2 = _S2 * (mb * mb + 0.75) - e1 * e1
    q1 = -_S2 * (2.0 * ma * mb + 3.0 * ha) + 2.0 * e0 * e1
    q0 = _S2 * (ma * ma + 3.0 * (ha * ha + w)) - e0 * e0
    sd = math.sqrt(max(q1 * q1 - 4.0 * q2 * q0, 0.0))
    half = -0.5 * (q1 + (sd if q1 >= 0.0 else -sd))
    ra = half / q2
    rb = q0 / half
    # a root within rounding of the bracket counts as in it (at the crossing F(x) may be
    # -1e-15 and the model's root x + 1e-15: found in review), and is clipped into it
    tol = 1e-12 * (1.0 + abs(x))
    da = abs(ra - x) if ((ra >= lo - tol) & (ra <= hi + tol)
                         & (e0 - e1 * ra >= 0.0)) else math.inf
    db = abs(rb - x) if ((rb >= lo - tol) & (rb <= hi + tol)
                         & (e0 - e1 * rb >= 0.0)) else math.inf
    xn = ra if da <= db else rb
    xn = min(max(xn, lo), hi) if min(da, db) < math.inf else 0.5 * (lo + hi)
    return xn, lo, hi, abs(xn - x)


@_jit_inline
def _excess(p: float, ma: float, ha: float, mb: float, w: float, aa: float, bb: float
            ) -> float:
    """F at wall pressure p on the path of one angle (m = ma - mb p, h = ha - p/2)."""
    return _mogi(ma - mb * p, ha - 0.5 * p, w, aa, bb)[0]


@_jit_inline
def _lo_hi(p: float, ma: float, ha: float, mb: float, w: float) -> tuple[float, float]:
    """The hoop-axial block's eigenvalues lo = m - r and hi = m + r at wall pressure p."""
    m = ma - mb * p
    h = ha - 0.5 * p
    r = math.sqrt(h * h + w)
    return m - r, m + r


@_jit_inline
def _tangent_model(x: float, p: float, ma: float, ha: float, mb: float, w: float, aa: float,
                   bb: float) -> float:
    """Branch A's excess at p with r replaced by its tangent at x: S q(p) - a - (b/2)(m(p) +
    r(x) + r'(x)(p - x)). r is convex in p, so this is >= F_A(p) everywhere, equal at x, and
    convex in p (docs/derivations.md, sec. 15.5)."""
    hx = ha - 0.5 * x
    rx = math.sqrt(hx * hx + w)
    r1 = -0.5 * hx / max(rx, 1e-300)
    m = ma - mb * p
    h = ha - 0.5 * p
    q = math.sqrt(m * m + 3.0 * (h * h + w))
    return _S * q - aa - 0.5 * bb * (m + rx + r1 * (p - x))


@_jit_inline
def _breaks(ma: float, ha: float, mb: float, w: float) -> tuple[float, float]:
    """The wall pressures where lo = 0 (p_AB, branch A to B) and hi = 0 (p_BC, B to C): the
    roots of m^2 - r^2 = d2 p^2 + d1 p + d0, the smaller and the larger (lo and hi do not rise
    with p, so each is crossed once; a root not there is +-inf). Branch-free."""
    d2 = max(mb * mb - 0.25, 0.0)
    d1 = ha - 2.0 * ma * mb
    d0 = ma * ma - ha * ha - w
    sd = math.sqrt(max(d1 * d1 - 4.0 * d2 * d0, 0.0))
    half = -0.5 * (d1 + (sd if d1 >= 0.0 else -sd))
    za = half / d2 if d2 > 0.0 else (math.inf if half > 0.0 else -math.inf)
    zb = d0 / half if half != 0.0 else math.inf
    return min(za, zb), max(za, zb)


@_jit_inline
def _certified(x: float, p_r: float, fr: float, ma: float, ha: float, mb: float, w: float,
               aa: float, bb: float) -> float:
    """0.0 where no wall pressure in (x, p_r] fails at this angle (F(x) <= 0 and F(p_r) < 0
    given), else 1.0 (not shown; docs/derivations.md, sec. 15.5): on branch A the tangent
    model at x is a convex majorant of F, so it suffices that it is negative where branch A
    ends; on branches B and C F is convex, so it suffices that F is negative at the end of B
    (the concave kink hi = 0). Branch-free."""
    p_ab, p_bc = _breaks(ma, ha, mb, w)
    lo_x, hi_x = _lo_hi(x, ma, ha, mb, w)
    lo_r, hi_r = _lo_hi(p_r, ma, ha, mb, w)
    end_a = p_r if lo_r >= 0.0 else min(max(p_ab, x), p_r)
    ok_a = (lo_x < 0.0) | (_tangent_model(x, end_a, ma, ha, mb, w, aa, bb) < 0.0)
    f_bc = _excess(min(max(p_bc, x), p_r), ma, ha, mb, w, aa, bb)
    ok_c = (hi_r >= 0.0) | (hi_x < 0.0) | (f_bc < 0.0)
    return 0.0 if (ok_a & ok_c & (fr < 0.0)) else 1.0


@_jit
def _root_between(lo: float, hi: float, ma: float, ha: float, mb: float, w: float, aa: float,
                  bb: float) -> float:
    """The crossing in [lo, hi] where F(lo) >= 0 > F(hi) and F is convex there (branch B or
    C): the safeguarded steps of :func:`_step` until they stop moving."""
    x = 0.5 * (lo + hi)
    for _ in range(60):
        x, lo, hi, dx = _step(x, lo, hi, ma, ha, mb, w, aa, bb)
        if dx <= 1e-14 * (1.0 + abs(x)):
            break
    return x


@_jit
def _largest(ma: float, ha: float, mb: float, w: float, aa: float, bb: float, p_r: float
             ) -> float:
    """The value at one angle without assuming a convex domain (docs/derivations.md,
    sec. 15.5): p_r + F(p_r) where F(p_r) >= 0, else the largest wall pressure in [0, p_r)
    where F = 0 if F >= 0 anywhere there, else the larger of F(0) and F where hoop = axial
    (negative: never at this angle; the second climbs towards angles where a band appears,
    sec. 15.5). Branches
    C, B, A are taken from the top: on C and B F is convex (one crossing below a negative
    end), on A the largest root is approached from above by the roots of convex majorants
    (the tangent models of :func:`_tangent_model`), each step keeping F < 0 above it."""
    fr = _excess(p_r, ma, ha, mb, w, aa, bb)
    if fr >= 0.0:
        return p_r + fr
    p_ab, p_bc = _breaks(ma, ha, mb, w)
    lo0, hi0 = _lo_hi(0.0, ma, ha, mb, w)
    lo_r, hi_r = _lo_hi(p_r, ma, ha, mb, w)
    # the ends of the branches within [0, p_r]
    top_b = p_r if hi_r >= 0.0 else (0.0 if hi0 < 0.0 else min(max(p_bc, 0.0), p_r))
    top_a = p_r if lo_r >= 0.0 else (0.0 if lo0 < 0.0 else min(max(p_ab, 0.0), top_b))
    if top_b < p_r:  # branch C on [top_b, p_r]
        if _excess(top_b, ma, ha, mb, w, aa, bb) >= 0.0:
            return _root_between(top_b, p_r, ma, ha, mb, w, aa, bb)
    if top_a < top_b:  # branch B on [top_a, top_b], F(top_b) < 0
        if _excess(top_a, ma, ha, mb, w, aa, bb) >= 0.0:
            return _root_between(top_a, top_b, ma, ha, mb, w, aa, bb)
    f0 = max(_excess(0.0, ma, ha, mb, w, aa, bb),
             _excess(min(max(2.0 * ha, 0.0), p_r), ma, ha, mb, w, aa, bb))
    if top_a <= 0.0:
        return f0
    # branch A on [0, top_a], F(top_a) < 0: descend by the majorants' roots
    x = top_a
    for _ in range(200):
        hx = ha - 0.5 * x
        rx = math.sqrt(hx * hx + w)
        r1 = -0.5 * hx / max(rx, 1e-300)
        e0 = aa + 0.5 * bb * (ma + rx - r1 * x)
        e1 = 0.5 * bb * (mb - r1)
        q2 = _S2 * (mb * mb + 0.75) - e1 * e1
        q1 = -_S2 * (2.0 * ma * mb + 3.0 * ha) + 2.0 * e0 * e1
        q0 = _S2 * (ma * ma + 3.0 * (ha * ha + w)) - e0 * e0
        disc = q1 * q1 - 4.0 * q2 * q0
        if disc < 0.0:
            return f0  # the majorant is negative everywhere
        sd = math.sqrt(disc)
        half = -0.5 * (q1 + (sd if q1 >= 0.0 else -sd))
        best = -math.inf
        for z in (half / q2 if q2 != 0.0 else math.nan, q0 / half if half != 0.0 else math.nan):
            # a root within rounding of x (F(x) is then -0) counts as x itself
            if (z == z) and (z < x + 1e-12 * (1.0 + x)) and (e0 - e1 * z >= 0.0) \
                    and (z > best):
                best = min(z, x)
        if best < 0.0:
            return f0  # the majorant, hence F, is negative on [0, x]
        moved = x - best
        x = best
        if _excess(x, ma, ha, mb, w, aa, bb) >= 0.0 or moved <= 1e-14 * (1.0 + x):
            return x
    return x


@_jit_inline
def _turn(t: float, cb: float, sb: float) -> tuple[float, float]:
    """(cos, sin) of the direction turned from (cb, sb) by 2 atan(t)."""
    t2 = t * t
    inv = 1.0 / (1.0 + t2)
    cx, sx = (1.0 - t2) * inv, 2.0 * t * inv
    return cb * cx - sb * sx, sb * cx + cb * sx


@_jit_inline
def _dir(t: float, cb: float, sb: float, k0: float, z0: float, pp: float, qq: float, w0: float,
         w1: float, w2: float, bt: float, bz: float, nu: float, p_r: float, aa: float,
         bb: float, refine: bool, polish: bool, certify: bool
         ) -> tuple[float, float, float, float, float, float]:
    """The value at the direction turned from (cb, sb) by 2 atan(t), its slope in psi, the
    size of the last step (module docstring; docs/derivations.md, sec. 15.4), F and
    -lo at p_r (for the screens of :func:`_search`), and (``certify``) 1.0 where the value
    is not shown to be the largest failing wall pressure at this angle (:func:`_certified`),
    else 0.0."""
    c, s = _turn(t, cb, sb)
    dev = pp * c + qq * s
    w = max(w0 + w1 * c + w2 * s, 0.0)
    ddev = qq * c - pp * s
    dw = w2 * c - w1 * s
    at = k0 - dev
    az = z0 - nu * dev
    ma = 0.5 * (at + az)  # m = ma - mb p, h = ha - p/2 (b_t - b_z = 1)
    ha = 0.5 * (at - az)
    mb = 0.5 * (bt + bz)
    dm = -0.5 * (1.0 + nu) * ddev  # d/dpsi at fixed p
    dh = -0.5 * (1.0 - nu) * ddev
    f0, fm0, fh0, fw0 = _mogi(ma, ha, w, aa, bb)
    fr, fmr, fhr, fwr = _mogi(ma - mb * p_r, ha - 0.5 * p_r, w, aa, bb)
    # start: the middle branch's crossing, S^2 (m^2 + 3 h^2 + 3 w) = (a + b m)^2, a quadratic
    e0 = aa + bb * ma
    e1 = bb * mb
    q2 = _S2 * (mb * mb + 0.75) - e1 * e1
    q1 = -_S2 * (2.0 * ma * mb + 3.0 * ha) + 2.0 * e0 * e1
    q0 = _S2 * (ma * ma + 3.0 * (ha * ha + w)) - e0 * e0
    sd = math.sqrt(max(q1 * q1 - 4.0 * q2 * q0, 0.0))
    half = -0.5 * (q1 + (sd if q1 >= 0.0 else -sd))
    r1 = half / q2
    r2 = q0 / half
    in1 = (r1 >= 0.0) & (r1 <= p_r)
    x = r1 if in1 else r2
    # where neither root lies in [0, p_r], the secant point of F(0) >= 0 > F(p_r)
    x = x if (x >= 0.0) & (x <= p_r) else p_r * f0 / (f0 - fr)
    x = min(max(x, 0.0), p_r) if x == x else 0.5 * p_r
    # safeguarded steps (:func:`_step`), the bracket [lo, hi] kept with F(lo) >= 0 > F(hi);
    # written out (no inner loop: the loop over cases then vectorises)
    lo, hi = 0.0, p_r
    x, lo, hi, dx = _step(x, lo, hi, ma, ha, mb, w, aa, bb)
    if refine:
        x, lo, hi, dx = _step(x, lo, hi, ma, ha, mb, w, aa, bb)
        x, lo, hi, dx = _step(x, lo, hi, ma, ha, mb, w, aa, bb)
    if polish:
        x, lo, hi, dx = _step(x, lo, hi, ma, ha, mb, w, aa, bb)
        x, lo, hi, dx = _step(x, lo, hi, ma, ha, mb, w, aa, bb)
        x, lo, hi, dx = _step(x, lo, hi, ma, ha, mb, w, aa, bb)
        x, lo, hi, dx = _step(x, lo, hi, ma, ha, mb, w, aa, bb)
        x, lo, hi, dx = _step(x, lo, hi, ma, ha, mb, w, aa, bb)
    f, fm, fh, fw = _mogi(ma - mb * x, ha - 0.5 * x, w, aa, bb)
    fp = -mb * fm - 0.5 * fh
    gx = -(fm * dm + fh * dh + fw * dw) / fp
    xn = x - f / fp  # a last Newton step, kept in the bracket
    x = xn if (fp < 0.0) & (xn >= lo) & (xn <= hi) else x
    top = fr >= 0.0
    bottom = (f0 < 0.0) & (not top)
    v = p_r + fr if top else (f0 if bottom else x)
    g = (fmr * dm + fhr * dh + fwr * dw) if top else (
        (fm0 * dm + fh0 * dh + fw0 * dw) if bottom else gx)
    h_r = ha - 0.5 * p_r
    cert = 0.0
    if certify:
        cert = 0.0 if top else _certified(0.0 if bottom else x, p_r, fr, ma, ha, mb, w, aa,
                                          bb)
    return (v, g, 0.0 if (top | bottom) else dx, fr,
            math.sqrt(h_r * h_r + w) - (ma - mb * p_r), cert)


@_jit_inline
def _at_p_r(kind: int, t: float, cb: float, sb: float, k0: float, z0: float, pp: float,
            qq: float, w0: float, w1: float, w2: float, bt: float, bz: float, nu: float,
            p_r: float, aa: float, bb: float) -> tuple[float, float]:
    """F at p_r (kind _SHEAR_R) or -lo = r - m at p_r (_TENSION, the tensile cut-off's smooth
    function, as in the general path) at the direction turned from (cb, sb) by 2 atan(t), and
    its slope in psi."""
    c, s = _turn(t, cb, sb)
    dev = pp * c + qq * s
    w = max(w0 + w1 * c + w2 * s, 0.0)
    ddev = qq * c - pp * s
    dw = w2 * c - w1 * s
    st = k0 - dev - bt * p_r
    sz = z0 - nu * dev - bz * p_r
    m, h = 0.5 * (st + sz), 0.5 * (st - sz)
    dh = -0.5 * (1.0 - nu) * ddev
    dm = -0.5 * (1.0 + nu) * ddev
    if kind == _TENSION:
        r = math.sqrt(h * h + w)
        return r - m, (h * dh + 0.5 * dw) / max(r, 1e-300) - dm
    f, fm, fh, fw = _mogi(m, h, w, aa, bb)
    return f, fm * dm + fh * dh + fw * dw


@_jit
def _evaluate(kind, mode, tt, cb, sb, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, aa, bb):
    """The function a search maximises at t = tt[r] from (cb[r], sb[r]) for every case r of a
    block: the value (kind _VALUE; steps 1 for ``mode`` 0 (the grid), 3 for 1 (the
    steps on the slope), 8 for 2 (the final value)), F at p_r or -lo at p_r.
    Returns (values, slopes, F and -lo at p_r for the value (the last steps twice
    polished; the values twice for the others), and the certificates of :func:`_certified`
    on the grid and the final value (zeros for the others)). One plain loop per kind, its outputs
    allocated in it (such loops vectorise; see the Drucker-Prager kernel)."""
    if kind == _VALUE:
        if mode == 2:
            return _loop_polished(tt, cb, sb, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r,
                                  aa, bb)
        if mode == 1:
            return _loop_refine(tt, cb, sb, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, aa,
                                bb)
        return _loop_value(tt, cb, sb, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r,
                           aa, bb)
    return _loop_p_r(kind, tt, cb, sb, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, aa, bb)


@_jit
def _loop_value(tt, cb, sb, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, aa, bb):
    """:func:`_dir` at every case (see :func:`_evaluate`): values, slopes, F and -lo at p_r,
    certificates."""
    cnt = tt.size
    vn, gn, fn, tn, cn = (np.empty(cnt), np.empty(cnt), np.empty(cnt), np.empty(cnt),
                          np.empty(cnt))
    for r in range(cnt):
        v, g, _d, f, t, c = _dir(tt[r], cb[r], sb[r], k0[r], z0[r], pp[r], qq[r], w0[r],
                                 w1[r], w2[r], bt[r], bz[r], nu[r], p_r[r], aa[r], bb[r],
                                 False, False, True)
        vn[r] = v
        gn[r] = g
        fn[r] = f
        tn[r] = t
        cn[r] = c
    return vn, gn, fn, tn, cn


@_jit
def _loop_refine(tt, cb, sb, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, aa, bb):
    """:func:`_dir` with 3 steps at every case (see :func:`_evaluate`; no certificates)."""
    cnt = tt.size
    vn, gn, fn, tn = np.empty(cnt), np.empty(cnt), np.empty(cnt), np.empty(cnt)
    for r in range(cnt):
        v, g, _d, f, t, _c = _dir(tt[r], cb[r], sb[r], k0[r], z0[r], pp[r], qq[r], w0[r],
                                  w1[r], w2[r], bt[r], bz[r], nu[r], p_r[r], aa[r], bb[r],
                                  True, False, False)
        vn[r] = v
        gn[r] = g
        fn[r] = f
        tn[r] = t
    return vn, gn, fn, tn, np.zeros(cnt)


@_jit
def _loop_polished(tt, cb, sb, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, aa, bb):
    """:func:`_dir` with the polishing steps at every case (see :func:`_evaluate`)."""
    cnt = tt.size
    vn, gn, dn, cn = np.empty(cnt), np.empty(cnt), np.empty(cnt), np.empty(cnt)
    for r in range(cnt):
        v, g, d, _f, _t, c = _dir(tt[r], cb[r], sb[r], k0[r], z0[r], pp[r], qq[r], w0[r],
                                  w1[r], w2[r], bt[r], bz[r], nu[r], p_r[r], aa[r], bb[r],
                                  True, True, True)
        vn[r] = v
        gn[r] = g
        dn[r] = d
        cn[r] = c
    return vn, gn, dn, dn, cn


@_jit
def _loop_p_r(kind, tt, cb, sb, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, aa, bb):
    """:func:`_at_p_r` at every case (see :func:`_evaluate`)."""
    cnt = tt.size
    vn, gn = np.empty(cnt), np.empty(cnt)
    for r in range(cnt):
        v, g = _at_p_r(kind, tt[r], cb[r], sb[r], k0[r], z0[r], pp[r], qq[r], w0[r], w1[r],
                       w2[r], bt[r], bz[r], nu[r], p_r[r], aa[r], bb[r])
        vn[r] = v
        gn[r] = g
    # no crossing here: the third output, read by _search as the last step's size, is zero
    # (it was the value itself, which sent every failure found at p_r to the envelope
    # iteration)
    zero = np.zeros(cnt)
    return vn, gn, zero, vn, zero


@_jit
def _search(kind, k0, z0, pp, qq, w0, w1, w2, bt, bz, nu, p_r, aa, bb, bv_out, bc_out, bs_out,
            flag_out, sf_out, st_out):
    """The largest value over the whole circle for a block of cases (1-D arrays): the grid of
    _GRID directions, then on the bracket of the best sign change of the slope a Hermite step
    and Anderson-Bjorck steps, every case alike and branch-free; ``kind`` is the function of
    the angle (:func:`_evaluate`). Leaves the best value (polished) and its direction (cos psi,
    sin psi) in bv_out, bc_out, bs_out and in flag_out 1.0 where the case must take the
    general path (competing maxima on the grid, a slope search or a crossing not converged),
    else 0.0. For the value, sf_out and st_out receive the largest F and -lo at p_r over the
    grid (the screens of the searches at p_r in :func:`mogi_onset`)."""
    cnt = bv_out.size
    span = math.tan(math.pi / _GRID)  # t at the next grid direction
    lo, hi = np.zeros(cnt), np.full(cnt, span)
    fl, fh, vl, vh = np.zeros(cnt), np.zeros(cnt), np.zeros(cnt), np.zeros(cnt)
    cb, sb = np.ones(cnt), np.zeros(cnt)
    bv, bx, bcb, bsb, peaks = np.empty(cnt), np.zeros(cnt), np.empty(cnt), np.empty(cnt), \
        np.empty(cnt)
    kept = np.zeros(cnt)
    unc = np.zeros(cnt)  # 1.0: a grid value not shown to be its angle's largest failing p
    vv = np.empty(_GRID * cnt)
    gg = np.empty(_GRID * cnt)
    tt = np.zeros(cnt)
    gc, gs = np.empty(cnt), np.empty(cnt)
    for j in range(_GRID):
        gc[:] = math.cos(j * 2.0 * math.pi / _GRID)
        gs[:] = math.sin(j * 2.0 * math.pi / _GRID)
        vn, gn, fn, tn, cn = _evaluate(kind, 0, tt, gc, gs, k0, z0, pp, qq, w0, w1, w2, bt,
                                       bz, nu, p_r, aa, bb)
        for r in range(cnt):
            unc[r] = max(unc[r], cn[r])
        vv[j * cnt:(j + 1) * cnt] = vn
        gg[j * cnt:(j + 1) * cnt] = gn
        if j == 0:
            sf_out[:] = fn
            st_out[:] = tn
        else:
            for r in range(cnt):
                sf_out[r] = max(sf_out[r], fn[r])
                st_out[r] = max(st_out[r], tn[r])
    # per case: the best grid point, and the bracket of the best sign change of the slope from
    # + to - (cyclic). Each bracket's peak lies between the larger end value and the height
    # where the tangents at its ends meet (exact where the value is concave there), inflated
    # by half the gap; a case where another bracket's upper estimate exceeds the best
    # bracket's lower one by more than rounding is ambiguous (flag)
    fac = 1.0 / (1.0 + span * span)
    for r in range(cnt):
        best, jb = vv[r], 0
        key, key_up, other_up = -np.inf, -np.inf, -np.inf
        for j in range(_GRID):
            jn = j + 1 if j + 1 < _GRID else 0
            v_prev, g_prev = vv[j * cnt + r], gg[j * cnt + r]
            v, g = vv[jn * cnt + r], gg[jn * cnt + r]
            if v_prev > best:
                best, jb = v_prev, j
            if g_prev > 0.0 and g <= 0.0:
                sa = 2.0 * g_prev  # dv/dt at the ends
                sc = 2.0 * g * fac
                xm = min(max((v - v_prev - sc * span) / (sa - sc), 0.0), span)
                low = max(v, v_prev)
                up = max(v_prev + sa * xm, low)
                up += 0.5 * (up - low)
                if low > key:
                    other_up = max(other_up, key_up)
                    key, key_up = low, up
                    lo[r], hi[r] = 0.0, span
                    fl[r], fh[r], vl[r], vh[r] = g_prev, g, v_prev, v
                    cb[r] = math.cos(j * 2.0 * math.pi / _GRID)
                    sb[r] = math.sin(j * 2.0 * math.pi / _GRID)
                else:
                    other_up = max(other_up, up)
        bv[r] = best
        bcb[r] = math.cos(jb * 2.0 * math.pi / _GRID)
        bsb[r] = math.sin(jb * 2.0 * math.pi / _GRID)
        peaks[r] = 2.0 if other_up > key + 1e-11 * (1.0 + abs(key)) else 1.0
    # first step: the root of the quadratic slope of the cubic Hermite model of the value
    # between the bracket's ends, kept to the middle 90 % (a bisection where it has none)
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
    for rnd in range(_ROUNDS + 1):
        if rnd > 0:
            for r in range(cnt):
                den = fh[r] - fl[r]
                tn = (lo[r] * fh[r] - hi[r] * fl[r]) / den
                mid = 0.5 * (lo[r] + hi[r])
                tn = tn if den < 0.0 else mid
                # at least 1% of the bracket from either end (a flat end would hold the
                # secant point on itself)
                gap = 0.01 * (hi[r] - lo[r])
                tt[r] = min(max(tn, lo[r] + gap), hi[r] - gap)
        vn, gn, _f, _t, _c = _evaluate(kind, 1, tt, cb, sb, k0, z0, pp, qq, w0, w1, w2, bt,
                                       bz, nu, p_r, aa, bb)
        for r in range(cnt):
            tn, v, g = tt[r], vn[r], gn[r]
            better = v > bv[r]
            bv[r] = v if better else bv[r]
            bx[r] = tn if better else bx[r]
            bcb[r] = cb[r] if better else bcb[r]
            bsb[r] = sb[r] if better else bsb[r]
            right = g > 0.0
            # the end kept a second time in a row has its slope scaled by 1 - g/(the
            # replaced end's slope), or 1/2 (Anderson-Bjorck); the Hermite step plain
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
            kept[r] = (1.0 if right else -1.0) if rnd > 0 else 0.0
    # the polished value at the best point, and its slope
    vn, gn, dn, _d, cn = _evaluate(kind, 2, bx, bcb, bsb, k0, z0, pp, qq, w0, w1, w2, bt,
                                   bz, nu, p_r, aa, bb)
    for r in range(cnt):
        # the search compared values of fewer steps: where the polished one differs, those
        # were not converged and the comparison is not trusted (flag)
        loose = abs(vn[r] - bv[r]) > 1e-7 * (1.0 + abs(vn[r]))
        bv_out[r] = vn[r]
        c, s = _turn(bx[r], bcb[r], bsb[r])
        bc_out[r] = c
        bs_out[r] = s
        # converged: the slope's root bracketed to 1e-7 in t, or the slope at the best point
        # below 1e-6 MPa/rad (the value is then the maximum to g^2/(2|v''|)); the crossing's
        # last step below 1e-9 MPa (the error after it is of its square's order)
        open_ = (hi[r] - lo[r] > 1e-7) & (abs(gn[r]) > 1e-6)
        # and where a value on the grid or the final one is not certified as its angle's
        # largest failing wall pressure (the domain is not convex: sec. 15.5)
        flag_out[r] = 1.0 if ((peaks[r] > 1.0) | open_ | (dn[r] > 1e-9) | loose
                              | (unc[r] > 0.0) | (cn[r] > 0.0)) else 0.0


@_jit_inline
def _shear_bound(p0: float, p1: float, k0: float, z0: float, pp: float, qq: float, w0: float,
                 w1: float, w2: float, bt: float, bz: float, nu: float, aa: float, bb: float
                 ) -> float:
    """An upper bound of F over every wall angle and every wall pressure in [p0, p1] (cheap;
    skips searches that cannot reach zero): m lies in [m_lo, m_hi] and r in [0, r_max], so
    sqrt(m^2 + 3 r^2) <= sqrt(max(m_lo^2, m_hi^2) + 3 r_max^2) and mid >= (max(m_lo, 0) +
    min(m_lo - r_max, 0))/2 (max(m + r, 0) rises with m and r, min(m - r, 0) rises with m and
    falls with r); m falls with p, and |h| is largest at an end of [p0, p1]."""
    amp = math.sqrt(pp * pp + qq * qq)  # |dev| <= amp
    m_lo = 0.5 * (k0 + z0) - 0.5 * (bt + bz) * p1 - 0.5 * (1.0 + nu) * amp
    m_hi = 0.5 * (k0 + z0) - 0.5 * (bt + bz) * p0 + 0.5 * (1.0 + nu) * amp
    h_max = (max(abs(0.5 * (k0 - z0) - 0.5 * p0), abs(0.5 * (k0 - z0) - 0.5 * p1))
             + 0.5 * (1.0 - nu) * amp)
    r_max = math.sqrt(h_max * h_max + w0 + math.sqrt(w1 * w1 + w2 * w2))
    m2 = max(m_lo * m_lo, m_hi * m_hi)
    mid = 0.5 * (max(m_lo, 0.0) + min(m_lo - r_max, 0.0))
    return _S * math.sqrt(m2 + 3.0 * r_max * r_max) - aa - bb * mid


@_jit_inline
def _vertex_bound(k0: float, z0: float, pp: float, qq: float, w0: float, w1: float, w2: float,
                  bt: float, bz: float, nu: float, p_r: float, aa: float, bb: float) -> float:
    """An upper bound of F over every wall angle and every wall pressure in [0, p_r] that
    keeps m and h coupled (docs/derivations.md, sec. 15.5): F = C - (b/2) max(hi, 0) with C
    convex in (u, p, v) (u = -dev, v = |t|), and hi >= s_t, hi >= s_z (affine), so F is at
    most C - (b/2) s_t and C - (b/2) s_z, each convex, hence at most its largest value at the
    8 vertices of the box [-U, U] x [0, p_r] x [0, v_max] holding every angle."""
    amp = math.sqrt(pp * pp + qq * qq)
    vmax2 = w0 + math.sqrt(w1 * w1 + w2 * w2)
    best_t, best_z = -math.inf, -math.inf
    for u in (-amp, amp):
        for p in (0.0, p_r):
            st = k0 + u - bt * p
            sz = z0 + nu * u - bz * p
            m = 0.5 * (st + sz)
            h = 0.5 * (st - sz)
            for v2 in (0.0, vmax2):
                c = (_S * math.sqrt(m * m + 3.0 * (h * h + v2)) - aa
                     + 0.5 * bb * max(math.sqrt(h * h + v2) - m, 0.0))
                best_t = max(best_t, c - 0.5 * bb * st)
                best_z = max(best_z, c - 0.5 * bb * sz)
    return min(best_t, best_z)


@_jit
def _band(k0: float, z0: float, pp: float, qq: float, w0: float, w1: float, w2: float,
          bt: float, bz: float, nu: float, p_r: float, aa: float, bb: float, n: int
          ) -> tuple[float, float]:
    """The largest, over the wall angle, of the value at one angle that does not assume a
    convex domain (:func:`_largest`): a grid of n directions in psi, then a golden-section
    search (Kiefer 1953) on both sides of the grid's two largest local maxima, to 1e-12 rad.
    For the cases of the envelope iteration, whose every step assumes a convex domain
    (docs/derivations.md, sec. 15.5). Returns (value, psi)."""
    vals = np.empty(n)
    step = 2.0 * math.pi / n
    mb = 0.5 * (bt + bz)
    j1 = 0
    for j in range(n):
        vals[j] = _largest_at(j * step, k0, z0, pp, qq, w0, w1, w2, nu, mb, p_r, aa, bb)
        if vals[j] > vals[j1]:
            j1 = j
    j2 = -1
    for j in range(n):
        v = vals[j]
        if j != j1 and v >= vals[j - 1] and v >= vals[(j + 1) % n] and (j2 < 0 or v > vals[j2]):
            j2 = j
    best, x_best = vals[j1], j1 * step
    gr = 0.6180339887498949
    for jj in (j1, j2):
        if jj < 0:
            continue
        for a, b in ((jj * step - step, jj * step), (jj * step, jj * step + step)):
            c = b - gr * (b - a)
            d = a + gr * (b - a)
            fc = _largest_at(c, k0, z0, pp, qq, w0, w1, w2, nu, mb, p_r, aa, bb)
            fd = _largest_at(d, k0, z0, pp, qq, w0, w1, w2, nu, mb, p_r, aa, bb)
            for _ in range(200):
                if b - a < 1e-12:
                    break
                if fc >= fd:
                    b, d, fd = d, c, fc
                    c = b - gr * (b - a)
                    fc = _largest_at(c, k0, z0, pp, qq, w0, w1, w2, nu, mb, p_r, aa, bb)
                else:
                    a, c, fc = c, d, fd
                    d = a + gr * (b - a)
                    fd = _largest_at(d, k0, z0, pp, qq, w0, w1, w2, nu, mb, p_r, aa, bb)
            for v, x in ((fc, c), (fd, d)):
                if v > best:
                    best, x_best = v, x
    return best, x_best


@_jit_inline
def _largest_at(psi: float, k0: float, z0: float, pp: float, qq: float, w0: float, w1: float,
                w2: float, nu: float, mb: float, p_r: float, aa: float, bb: float) -> float:
    """:func:`_largest` at the direction psi."""
    c, s = math.cos(psi), math.sin(psi)
    dev = pp * c + qq * s
    w = max(w0 + w1 * c + w2 * s, 0.0)
    at = k0 - dev
    az = z0 - nu * dev
    return _largest(0.5 * (at + az), 0.5 * (at - az), mb, w, aa, bb, p_r)


@_jit_parallel
def mogi_onset(sum_xy, diff_xy, sxy, szz, sxz, syz, p_r, big_a, nu, t0, ucs, phi, mb, hb_s,
               hb_a, n_theta, out_p, out_c, out_s):
    """Critical wall pressure [MPa] into out_p and (cos, sin) of psi = 2 theta at the worst
    wall angle into (out_c, out_s) (nan where never) for Mogi-Coulomb, for 3-D inputs that
    broadcast to shape (n0, n1, n2) (strides may be zero); outputs flat, in C order of that
    shape. ``n_theta``: grid angles of the general path taken by the cases flagged in the
    module docstring (mb, hb_s, hb_a are not used: one signature for every kernel)."""
    n0, n1, n2 = sum_xy.shape
    total = n0 * n1 * n2
    cos_g = np.cos(np.arange(n_theta) * (2.0 * math.pi / n_theta))
    sin_g = np.sin(np.arange(n_theta) * (2.0 * math.pi / n_theta))
    nblocks = (total + _BLOCK - 1) // _BLOCK
    for blk in prange(nblocks):
        first = blk * _BLOCK
        cnt = min(_BLOCK, total - first)
        k0, z0, pp, qq = np.empty(cnt), np.empty(cnt), np.empty(cnt), np.empty(cnt)
        w0, w1, w2 = np.empty(cnt), np.empty(cnt), np.empty(cnt)
        bt, bz, nuv, prv = np.empty(cnt), np.empty(cnt), np.empty(cnt), np.empty(cnt)
        aa, bb, tq = np.empty(cnt), np.empty(cnt), np.empty(cnt)
        last_phi, a_unit, b_const = math.nan, 0.0, 0.0
        i, rem = first // (n1 * n2), first % (n1 * n2)
        j, m = rem // n2, rem % n2
        for r in range(cnt):
            a, pr = big_a[i, j, m], p_r[i, j, m]
            k0[r] = sum_xy[i, j, m] - a * pr
            z0[r] = szz[i, j, m] - a * pr
            pp[r], qq[r] = 2.0 * diff_xy[i, j, m], 4.0 * sxy[i, j, m]
            yy, xx = 2.0 * syz[i, j, m], 2.0 * sxz[i, j, m]
            w0[r] = 0.5 * (yy * yy + xx * xx)
            w1[r] = 0.5 * (yy * yy - xx * xx)
            w2[r] = -xx * yy
            bt[r], bz[r], nuv[r], prv[r] = 2.0 - a, 1.0 - a, nu[i, j, m], pr
            tq[r] = t0[i, j, m]
            # a is proportional to UCS and b depends on phi only: the trigonometry once per
            # run of equal friction angles (often one value for a whole call)
            ph = phi[i, j, m]
            if ph != last_phi:
                last_phi = ph
                a_unit, b_const, _, _ = _strength_constants(_MOGI, 1.0, ph, 0.0, 0.0, 0.0)
            aa[r], bb[r] = a_unit * ucs[i, j, m], b_const
            m += 1
            if m == n2:
                m = 0
                j += 1
                if j == n1:
                    j = 0
                    i += 1
        # the value's search, on the cases that may fail at some wall pressure (where either
        # bound of F over every angle and every wall pressure in [0, p_r] is negative: never; the
        # failing pressures of an angle can be a band, so a bound at p = 0 alone does not
        # do: sec. 15.5)
        bv, bc, bs, flag = np.full(cnt, -1.0), np.ones(cnt), np.zeros(cnt), np.zeros(cnt)
        # the screens: largest F and -lo at p_r on the value's grid (+inf: not screened)
        sf, stn = np.full(cnt, np.inf), np.full(cnt, np.inf)
        sel = np.empty(cnt, dtype=np.bool_)
        for r in range(cnt):
            # (not "< 0": nan inputs take the search and give nan, as elsewhere)
            sel[r] = not ((_shear_bound(0.0, prv[r], k0[r], z0[r], pp[r], qq[r], w0[r], w1[r],
                                        w2[r], bt[r], bz[r], nuv[r], aa[r], bb[r]) < 0.0)
                          | (_vertex_bound(k0[r], z0[r], pp[r], qq[r], w0[r], w1[r], w2[r],
                                           bt[r], bz[r], nuv[r], prv[r], aa[r], bb[r]) < 0.0))
        for r in range(cnt):
            # no angle fails at any wall pressure, so none at p_r: no search of F there
            sf[r] = sf[r] if sel[r] else -np.inf
        value = np.int64(_VALUE)  # not a literal: one compiled search serves every kind
        idx = np.nonzero(sel)[0]
        if idx.size == cnt:
            _search(value, k0, z0, pp, qq, w0, w1, w2, bt, bz, nuv, prv, aa, bb, bv, bc, bs,
                    flag, sf, stn)
        elif idx.size:
            sv, sc, ss, sg = (np.empty(idx.size), np.empty(idx.size), np.empty(idx.size),
                              np.empty(idx.size))
            s1, s2 = np.empty(idx.size), np.empty(idx.size)
            _search(value, k0[idx], z0[idx], pp[idx], qq[idx], w0[idx], w1[idx], w2[idx],
                    bt[idx], bz[idx], nuv[idx], prv[idx], aa[idx], bb[idx], sv, sc, ss, sg,
                    s1, s2)
            bv[idx], bc[idx], bs[idx], flag[idx], sf[idx], stn[idx] = sv, sc, ss, sg, s1, s2
        # with no drawdown, where the value search found no failure: the criterion at p_r (an
        # angle may fail at p_r but not at 0, in a sector the grid can miss), then the tensile
        # cut-off; each maximised on the whole circle on the cases that neither a cheap bound
        # over every angle nor the value grid's largest value with a Lipschitz bound between
        # grid directions rules out (docs/derivations.md, sec. 15.4)
        for kind in (_SHEAR_R, _TENSION):
            for r in range(cnt):
                amp = math.sqrt(pp[r] * pp[r] + qq[r] * qq[r])
                dr = 0.5 * (1.0 - nuv[r]) * amp + 0.5 * math.sqrt(2.0 * w0[r])  # |dr/dpsi|
                dm = 0.5 * (1.0 + nuv[r]) * amp  # |dm/dpsi|
                if kind == _SHEAR_R:
                    bound = _shear_bound(prv[r], prv[r], k0[r], z0[r], pp[r], qq[r], w0[r],
                                         w1[r], w2[r], bt[r], bz[r], nuv[r], aa[r], bb[r])
                    lip = (_S + bb[r]) * dm + (_S * math.sqrt(3.0) + 0.5 * bb[r]) * dr
                    screen = sf[r] + _HALF_STEP * lip
                    sel[r] = (bv[r] < prv[r]) & (bound >= 0.0) & (screen >= -1e-9)
                else:
                    kt = (k0[r], z0[r], pp[r], qq[r], w0[r], w1[r], w2[r], bt[r], bz[r],
                          nuv[r], prv[r], tq[r])
                    screen = stn[r] + _HALF_STEP * (dm + dr) - tq[r]
                    sel[r] = ((bv[r] < prv[r]) & (tq[r] < math.inf)
                              & (_tension_bound(prv[r], kt) > 0.0) & (screen > -1e-9))
            idx = np.nonzero(sel & (flag == 0.0))[0]
            if idx.size == 0:
                continue
            tv, tc, ts, tflag = (np.empty(idx.size), np.empty(idx.size), np.empty(idx.size),
                                 np.empty(idx.size))
            _search(np.int64(kind), k0[idx], z0[idx], pp[idx], qq[idx], w0[idx], w1[idx],
                    w2[idx], bt[idx], bz[idx], nuv[idx], prv[idx], aa[idx], bb[idx], tv, tc,
                    ts, tflag, np.empty(idx.size), np.empty(idx.size))
            for q in range(idx.size):
                r = idx[q]
                if tflag[q] != 0.0:
                    flag[r] = 1.0  # the general path decides
                elif kind == _SHEAR_R and tv[q] >= 0.0:
                    bv[r], bc[r], bs[r] = prv[r] + tv[q], tc[q], ts[q]
                elif kind == _TENSION and tv[q] - tq[r] > 0.0:
                    bv[r], bc[r], bs[r] = prv[r], tc[q], ts[q]  # tension beyond T0
        op = out_p[first:first + cnt]
        oc = out_c[first:first + cnt]
        os_ = out_s[first:first + cnt]
        for r in range(cnt):
            p_res = prv[r]
            never = bv[r] < 0.0
            op[r] = p_res if bv[r] >= p_res else (-math.inf if never else bv[r])
            oc[r] = bc[r]
            os_[r] = math.nan if never else bs[r]
        # the general path for the flagged cases
        for r in range(cnt):
            if flag[r] != 0.0:
                kg = (k0[r], z0[r], pp[r], qq[r], w0[r], w1[r], w2[r], bt[r], bz[r], nuv[r],
                      prv[r], tq[r], aa[r], bb[r], 0.0, 0.0)
                vals = np.empty(n_theta)
                p_g, psi = _solve_case(_MOGI, kg, cos_g, sin_g, vals)
                if p_g < prv[r]:
                    # the failing wall pressures of an angle may form a band above the
                    # envelope iteration's answer (sec. 15.5)
                    v_b, psi_b = _band(k0[r], z0[r], pp[r], qq[r], w0[r], w1[r], w2[r], bt[r],
                                       bz[r], nuv[r], prv[r], aa[r], bb[r], 4 * n_theta)
                    if v_b >= 0.0 and min(v_b, prv[r]) > p_g:
                        p_g, psi = min(v_b, prv[r]), psi_b
                op[r] = p_g
                oc[r] = math.cos(psi)
                os_[r] = math.sin(psi)
