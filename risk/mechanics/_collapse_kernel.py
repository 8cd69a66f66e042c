"""Compiled tunnel collapse (Mohr-Coulomb) and effective-strength onset at the tunnel root.

Two kernels, each the numpy path's arithmetic made scalar per case, so that a run's largest
limit-state costs leave the numpy temporaries and the per-iterate Python work of the bracketed
root (docs/derivations.md, sec. 16):

:func:`collapse_mc`
    :func:`risk.mechanics.cavity.collapse_wall_pressure` for Mohr-Coulomb: the same first-yield
    pressure, seepage limit and cases, and the same bracketed root of the same collapse margin
    (the closed-form cavity state of :func:`risk.mechanics.cavity._mc_state`), found by
    Chandrupatla's method (Chandrupatla 1997) with the update, the termination tests and the
    tolerances (1e-9 MPa + 1e-12 |p|) of ``scipy.optimize.elementwise.find_root``, which the
    numpy path calls. The plastic radius inside the drainage radius solves
    ``w + ln w = z`` (the Wright omega function): initial values of Lawrence, Corless & Jeffrey
    (2012) on the three intervals (-inf, -2), [-2, 1), [1, inf), then two steps of the
    fourth-order iteration of Fritsch, Shafer & Crowley (1973), then, as in the numpy path, two
    Newton steps on the plastic-radius equation. Powers of the plastic radius R/r_w are taken
    as exp(c ln(R/r_w)) from one logarithm (the same values to a few units in the last place).

:func:`root_onset`
    :func:`risk.limit_states._root_onset`: per tunnel (sample x shot x stage) and per radius
    of :data:`risk.mechanics.root.ROOT_RADII`, the wellbore's generalized Kirsch field on the
    tunnel axis (affine in the wall pressure), its in-plane tunnel-frame components
    (:func:`risk.mechanics.root.tunnel_in_plane`), the critical wall pressure of
    :func:`risk.mechanics.root.onset_wall_pressure` (the root of a quadratic, the few cases
    rounding leaves uncertain bisected 60 times), classified as
    :func:`risk.mechanics.sanding.classify_wall_pressure`, the worst over the radii.

Both are equal to the numpy path to rounding (tests: tests/mechanics/test_collapse_kernel.py);
the numpy path stays the reference (``path="numpy"``). The kernels release the GIL.

References
----------
Chandrupatla, T.R. (1997) A new hybrid quadratic/bisection algorithm for finding the zero of a
nonlinear function without using derivatives. Adv. Eng. Softw. 28(3), 145-149.
Lawrence, P.W., Corless, R.M. & Jeffrey, D.J. (2012) Algorithm 917: complex double-precision
evaluation of the Wright omega function. ACM Trans. Math. Softw. 38(3), 20.
Fritsch, F.N., Shafer, R.E. & Crowley, W.P. (1973) Algorithm 443: solution of the
transcendental equation w e^w = x. Commun. ACM 16(2), 123-124.
Kirsch (1898), Hiramatsu & Oka (1962), Fairhurst (1968), as given in Fjaer, E. et al. (2008)
*Petroleum Related Rock Mechanics*, 2nd ed., Elsevier, sec. 4.4 (the wellbore's field).
"""

from __future__ import annotations

import math

from numba import njit, types

_jit_inline = njit(cache=True, error_model="numpy", nogil=True, inline="always")
_V = types.Array(types.float64, 1, "C", readonly=True)
_M = types.Array(types.float64, 2, "C", readonly=True)
_OUT = types.Array(types.float64, 1, "C")

_XATOL = 1e-9          # [MPa], as cavity._TOL_P
_XRTOL = 1e-12         # [1]
_SEEPAGE_STEP = 1e-9   # [MPa], as cavity._SEEPAGE_STEP
_MAXITER = 2046        # scipy's default: log2(max) - log2(smallest normal)
_EPS = 2.220446049250313e-16  # double-precision machine epsilon


@_jit_inline
def _fsc(x: float, w: float) -> float:
    """One Fritsch-Shafer-Crowley step for w + ln w = x (fourth order)."""
    r = x - w - math.log(w)
    wp1 = w + 1.0
    d = 2.0 * wp1 * (wp1 + 2.0 / 3.0 * r)
    return w * (1.0 + r / wp1 * (d - r) / (d - 2.0 * r))


@_jit_inline
def wright_omega(x: float) -> float:
    """Real Wright omega function: the w > 0 with w + ln w = x [1] (module docstring)."""
    if x != x:
        return x
    if x > 1e20:
        return x
    if x < -50.0:
        return math.exp(x)
    if x < -2.0:
        w = math.exp(x)
    elif x < 1.0:
        w = math.exp(2.0 * (x - 1.0) / 3.0)
    else:
        lx = math.log(x)
        w = x - lx + lx / x
    r = x - w - math.log(w)
    wp1 = w + 1.0
    d = 2.0 * wp1 * (wp1 + 2.0 / 3.0 * r)
    w = w * (1.0 + r / wp1 * (d - r) / (d - 2.0 * r))
    # a second step only where the first leaves an error above rounding (the a-priori bound
    # of Lawrence et al. 2012, sec. 4: |(2 w^2 - 8 w - 1) r^4| / (72 |1 + w|^6) >= eps)
    r2 = r * r
    if abs((2.0 * w * w - 8.0 * w - 1.0) * (r2 * r2)) >= _EPS * 72.0 * wp1**6:
        w = _fsc(x, w)
    return w


@_jit_inline
def _margin(p_w: float, p_r: float, ucs: float, q: float, m: float, e_mod: float, nu: float,
            biot: float, crit: float, log_e: float, s0: float, big_a: float, n: float,
            rho_e: float, x_e: float, s_nf: float, k1: float, kn: float, rho_e_kn: float,
            rho_e_k1: float) -> float:
    """Collapse margin [1] of cavity._margin_mc at wall pressure p_w [MPa] (>= 0 collapsed)."""
    drawdown = p_r - p_w
    big_g = drawdown / log_e
    hoop_el = 2.0 * s0 + (2.0 - big_a) * drawdown
    if not hoop_el > ucs:  # elastic: the hoop-stress margin continues the plastic strain
        out = (1.0 + nu) * (hoop_el - ucs) / e_mod - crit
        return out if math.isfinite(out) else 1.0
    if big_g >= ucs:       # seepage-unstable
        return 1.0
    beta = (ucs - big_g) / n
    s_e = beta * (x_e - 1.0)
    beyond = s_e < s_nf
    if beyond:             # R > r_e: explicit
        ratio = (s_nf + ucs / n) / (s_e + ucs / n)
        lrho = log_e + math.log(ratio) / n
        s_r = s_nf
    else:                  # a1 x + b1 ln x = c1, x = (R/r_w)^n
        a1 = (1.0 + q) * (ucs - big_g)
        b1 = (2.0 - big_a) * big_g
        c1 = n * (hoop_el - ucs) + a1
        if b1 <= 1e-10 * a1:
            x = c1 / a1
        else:
            x = b1 / a1 * wright_omega(c1 / b1 + math.log(a1 / b1))
        for _ in range(2):  # Newton polish (b1 = 0 at no drawdown: b1 ln x = 0, unneeded)
            x = x - (a1 * x + (b1 * math.log(x) if b1 != 0.0 else 0.0) - c1) / (a1 + b1 / x)
        x = max(x, 1.0)
        lrho = math.log(x) / n
        s_r = beta * (x - 1.0)
    rho = math.exp(lrho)
    rho_k1 = math.exp(k1 * lrho)
    if beyond:
        log_a, rho_a_k1, rho_a_kn = log_e, rho_e_k1, rho_e_kn
    else:
        log_a, rho_a_k1, rho_a_kn = lrho, rho_k1, math.exp(kn * lrho)
    k1_int = beta * ((rho_a_kn - 1.0) / kn - (rho_a_k1 - 1.0) / k1)
    if beyond:
        c_b = s_e + ucs / n
        k1_int += (c_b * (math.exp(kn * lrho) - rho_e_kn) / (kn * x_e)
                   - ucs / n * (rho_k1 - rho_e_k1) / k1)
    # wall kinematics (cavity._wall_kinematics)
    k3 = (rho_k1 - 1.0) / k1
    k3a = (rho_a_k1 - 1.0) / k1
    f_a = rho_a_k1 * ((log_a - log_e) / k1 - 1.0 / k1**2)
    f_1 = -log_e / k1 - 1.0 / k1**2
    k4 = big_g * (f_a - f_1)
    dp_r = big_g * (log_a - log_e)
    hoop_integral = rho_k1 * s_r - m * k1_int + big_g * k3a
    c_r = (1.0 - nu) - nu * m
    c_t = m * (1.0 - nu) - nu
    scale = (1.0 + nu) / e_mod
    elastic_integral = scale * (c_r * k1_int + c_t * hoop_integral
                                - k1 * (1.0 - 2.0 * nu) * (s0 * k3 - (1.0 - biot) * k4))
    u_r = scale * (s0 - s_r - dp_r) * rho
    rho_m = rho if m == 1.0 else math.exp(m * lrho)
    u_w = rho_m * u_r - elastic_integral
    eps_e = scale * ((1.0 - nu) * ucs - (1.0 - 2.0 * nu) * (s0 + (1.0 - biot) * drawdown))
    out = u_w - eps_e - crit
    return out if math.isfinite(out) else 1.0


@_jit_inline
def _same_sign(a: float, b: float) -> bool:
    """numpy's sign(a) == sign(b) (False where either is nan)."""
    if a != a or b != b:
        return False
    sa = 1.0 if a > 0.0 else (-1.0 if a < 0.0 else 0.0)
    sb = 1.0 if b > 0.0 else (-1.0 if b < 0.0 else 0.0)
    return sa == sb


@njit(types.void(_V, _V, _V, _V, _V, _V, _V, _V, _V, _V, _V, _OUT), cache=True, nogil=True,
      error_model="numpy")
def collapse_mc(sigma0, p_r, r_w, r_e, ucs, q, m, e_mod, nu, biot, crit, out):
    """Critical wall pressure of tunnel collapse [MPa] per case into out (p_r: collapsed with
    no drawdown; -inf: never in [0, p_r]); inputs as cavity.collapse_wall_pressure with
    q = (1 + sin phi)/(1 - sin phi) and m = K_psi [1]."""
    for i in range(sigma0.shape[0]):
        pr, uc, qi, mi, nui, bi, cr = p_r[i], ucs[i], q[i], m[i], nu[i], biot[i], crit[i]
        log_e = math.log(r_e[i] / r_w[i])
        s0 = sigma0[i] - pr
        big_a = bi * (1.0 - 2.0 * nui) / (1.0 - nui)
        n = qi - 1.0
        rho_e = r_e[i] / r_w[i]
        x_e = math.exp(n * log_e)
        s_nf = (2.0 * s0 - uc) / (1.0 + qi)
        k1 = mi + 1.0
        kn = mi + n + 1.0
        rho_e_kn = rho_e**kn
        rho_e_k1 = rho_e**k1
        e = e_mod[i]
        p_y = pr - (uc - 2.0 * (sigma0[i] - pr)) / (2.0 - big_a)
        p_hi = min(pr, p_y) if p_y == p_y else p_y
        p_seep = pr - uc * log_e
        res = -math.inf
        if (p_hi >= 0.0) and (p_seep >= p_hi):
            res = p_hi                                    # unstable as soon as it yields
        elif (p_hi >= 0.0) and (p_seep < p_hi):
            f_hi = -cr
            if p_hi >= pr:
                f_hi = _margin(p_hi, pr, uc, qi, mi, e, nui, bi, cr, log_e, s0, big_a, n,
                               rho_e, x_e, s_nf, k1, kn, rho_e_kn, rho_e_k1)
            seep = p_seep > 0.0
            p_lo = min(p_seep + _SEEPAGE_STEP, p_hi) if seep else 0.0
            res = p_seep if seep else -math.inf
            # (the margin at p_lo decides nothing when the tunnel collapses at p_hi)
            f_lo = -1.0 if f_hi >= 0.0 else _margin(
                p_lo, pr, uc, qi, mi, e, nui, bi, cr, log_e, s0, big_a, n, rho_e, x_e, s_nf,
                k1, kn, rho_e_kn, rho_e_k1)
            if f_hi >= 0.0:
                res = p_hi
            elif f_lo >= 0.0:
                # Chandrupatla's method as scipy.optimize.elementwise.find_root runs it
                x1, f1 = p_lo, f_lo
                x2 = p_hi
                # scipy evaluates both ends again: at p_hi = p_r that is f_hi itself
                f2 = f_hi if p_hi >= pr else _margin(
                    p_hi, pr, uc, qi, mi, e, nui, bi, cr, log_e, s0, big_a, n, rho_e, x_e,
                    s_nf, k1, kn, rho_e_kn, rho_e_k1)
                x3, f3 = x2, f2
                t = 0.5
                for it in range(_MAXITER + 1):
                    if it > 0:
                        x = x1 + t * (x2 - x1)
                        f = _margin(x, pr, uc, qi, mi, e, nui, bi, cr, log_e, s0, big_a, n,
                                    rho_e, x_e, s_nf, k1, kn, rho_e_kn, rho_e_k1)
                        x3, f3 = x2, f2
                        if _same_sign(f, f1):
                            x3, f3 = x1, f1
                        else:
                            x2, f2 = x1, f1
                        x1, f1 = x, f
                    first = abs(f1) < abs(f2)
                    xmin = x1 if first else x2
                    fmin = f1 if first else f2
                    if abs(fmin) <= 0.0:
                        res = xmin
                        break
                    failed = False
                    if _same_sign(f1, f2):
                        xmin, failed = math.nan, True
                    elif (not (math.isfinite(x1) and math.isfinite(x2))
                          or (f1 != f1 and f2 != f2)):
                        xmin, failed = math.nan, True
                    dx = abs(x2 - x1)
                    tol = abs(xmin) * _XRTOL + _XATOL
                    if dx < tol:
                        res = xmin
                        break
                    if failed or it == _MAXITER:  # the failing end: the lower one
                        res = x1 if x1 < x2 else x2
                        break
                    if it == 0:  # scipy's first step is the bisection (t = 0.5)
                        continue
                    xi1 = (x1 - x2) / (x3 - x2)
                    phi1 = (f1 - f2) / (f3 - f2)
                    alpha = (x3 - x1) / (x2 - x1)
                    if ((1.0 - math.sqrt(1.0 - xi1)) < phi1) and (phi1 < math.sqrt(xi1)):
                        t = (f1 / (f1 - f2) * f3 / (f3 - f2)
                             - alpha * f1 / (f3 - f1) * f2 / (f2 - f3))
                    else:
                        t = 0.5
                    tl = 0.5 * tol / dx
                    t = min(max(t, tl), 1.0 - tl)
        out[i] = res


@_jit_inline
def _onset_one(m0: float, h0: float, e0: float, m1: float, h1: float, e1: float, a: float,
               pr: float, u: float) -> float:
    """root.onset_wall_pressure for one tunnel: critical wall pressure [MPa] (p_r: fails
    with no drawdown; -inf: never in [0, p_r])."""
    alpha = 2.0 * m0 - a * pr - u
    beta = 2.0 * m1 - (2.0 - a)
    f_top = alpha + beta * pr + 4.0 * math.hypot(h0 + h1 * pr, e0 + e1 * pr)
    if f_top >= 0.0:
        return pr
    f_low = alpha + beta * 0.0 + 4.0 * math.hypot(h0 + h1 * 0.0, e0 + e1 * 0.0)
    if not ((f_top < 0.0) and (f_low >= 0.0)):
        return -math.inf
    # the root of the square with a non-positive affine side (docs/derivations.md, sec. 10):
    # the three candidates of the numpy path, the one with the least residual in [0, p_r]
    c2 = 16.0 * (h1 * h1 + e1 * e1) - beta * beta
    c1 = 2.0 * (16.0 * (h0 * h1 + e0 * e1) - alpha * beta)
    c0 = 16.0 * (h0 * h0 + e0 * e0) - alpha * alpha
    disc = math.sqrt(max(c1 * c1 - 4.0 * c2 * c0, 0.0))
    qq = -0.5 * (c1 + (disc if c1 >= 0.0 else -disc))
    best_res = math.inf
    root = math.nan
    for k in range(3):
        c = qq / c2 if k == 0 else (c0 / qq if k == 1 else -c0 / c1)
        if not ((c >= 0.0) and (c <= pr) and math.isfinite(c)):
            continue
        r = abs(alpha + beta * c + 4.0 * math.hypot(h0 + h1 * c, e0 + e1 * c))
        if r < best_res:  # numpy's argmin: the first of equal values
            best_res, root = r, c
    scale = abs(alpha) + abs(beta) * pr + 1.0
    if not (best_res <= 1e-9 * scale):  # bisection where rounding left it uncertain
        lo, hi = 0.0, pr
        for _ in range(60):
            mid = 0.5 * (lo + hi)
            if alpha + beta * mid + 4.0 * math.hypot(h0 + h1 * mid, e0 + e1 * mid) >= 0.0:
                lo = mid
            else:
                hi = mid
        root = 0.5 * (lo + hi)
    return root


@njit(types.void(_M, _M, _M, _M, _M, _M, _V, _M, _M, _V, _M, _M, _M, _OUT, _OUT),
      cache=True, nogil=True, error_model="numpy")
def root_onset(sxx, syy, szz, sxy, sxz, syz, nu, trig, rot, radii, u, big_a, p_r, best_out,
               theta_out):
    """Effective-strength onset of every tunnel in the wellbore's field, the worst over the
    radii (risk.limit_states._root_onset), into best_out (critical drawdown [MPa]) and
    theta_out (tunnel wall angle [rad], nan for never), each (n, m, k) in C order.

    sxx ... syz : (n, k) far field in the well frame [MPa]; nu : (n,) [1]; trig : (m, 4) cos 2w,
    sin 2w, cos w, sin w of the shot angles w; rot : (m, 9) the rotations F W^T B^T, row-major
    (root.tunnel_in_plane); radii : r/R of the check points [1]; u : (n, k) effective strength
    [MPa]; big_a : (n, k) [1]; p_r : (n, k) reservoir pressure [MPa].
    """
    n, n_k = sxx.shape
    n_m = trig.shape[0]
    for i in range(n):
        for j in range(n_m):
            c2, s2, c1, s1 = trig[j, 0], trig[j, 1], trig[j, 2], trig[j, 3]
            g00, g01, g02 = rot[j, 0], rot[j, 1], rot[j, 2]
            g10, g11, g12 = rot[j, 3], rot[j, 4], rot[j, 5]
            # coefficients of (rr, tt, zz, rt, tz, rz) in sxx, syy, sxy of the tunnel frame
            xx_c = (g00 * g00, g01 * g01, g02 * g02, g00 * g01 + g01 * g00,
                    g01 * g02 + g02 * g01, g00 * g02 + g02 * g00)
            yy_c = (g10 * g10, g11 * g11, g12 * g12, g10 * g11 + g11 * g10,
                    g11 * g12 + g12 * g11, g10 * g12 + g12 * g10)
            xy_c = (g00 * g10, g01 * g11, g02 * g12, g00 * g11 + g01 * g10,
                    g01 * g12 + g02 * g11, g00 * g12 + g02 * g10)
            for k in range(n_k):
                xx, yy, zz, xy = sxx[i, k], syy[i, k], szz[i, k], sxy[i, k]
                xz, yz = sxz[i, k], syz[i, k]
                mean = 0.5 * (xx + yy)
                dev = 0.5 * (xx - yy) * c2 + xy * s2
                shear = -0.5 * (xx - yy) * s2 + xy * c2
                t_tz = yz * c1 - xz * s1
                t_rz = xz * c1 + yz * s1
                a, pr, uu = big_a[i, k], p_r[i, k], u[i, k]
                best = math.inf
                theta = math.nan
                for ratio in radii:
                    rho2 = 1.0 / ratio**2
                    rho4 = rho2 * rho2
                    rr = mean * (1 - rho2) + dev * (1 + 3 * rho4 - 4 * rho2)
                    tt = mean * (1 + rho2) - dev * (1 + 3 * rho4)
                    zz_f = zz - nu[i] * 4.0 * dev * rho2
                    rt = shear * (1 + 2 * rho2 - 3 * rho4)
                    tz = t_tz * (1 + rho2)
                    rz = t_rz * (1 - rho2)
                    l0xx = (xx_c[0] * rr + xx_c[1] * tt + xx_c[2] * zz_f + xx_c[3] * rt
                            + xx_c[4] * tz + xx_c[5] * rz)
                    l0yy = (yy_c[0] * rr + yy_c[1] * tt + yy_c[2] * zz_f + yy_c[3] * rt
                            + yy_c[4] * tz + yy_c[5] * rz)
                    l0xy = (xy_c[0] * rr + xy_c[1] * tt + xy_c[2] * zz_f + xy_c[3] * rt
                            + xy_c[4] * tz + xy_c[5] * rz)
                    # the field of a unit wall pressure: s_r = rho^2, s_t = -rho^2, no other
                    l1xx = xx_c[0] * rho2 + xx_c[1] * -rho2
                    l1yy = yy_c[0] * rho2 + yy_c[1] * -rho2
                    l1xy = xy_c[0] * rho2 + xy_c[1] * -rho2
                    pw = _onset_one(0.5 * (l0xx + l0yy), 0.5 * (l0xx - l0yy), l0xy,
                                    0.5 * (l1xx + l1yy), 0.5 * (l1xx - l1yy), l1xy, a, pr, uu)
                    if pw >= pr:
                        dc = 0.0
                    elif pw < 0.0:
                        dc = math.inf
                    else:
                        dc = pr - pw
                    if dc < best:
                        best = dc
                        theta = math.nan
                        if math.isfinite(pw):
                            half = 0.5 * ((l0xx + pw * l1xx) - (l0yy + pw * l1yy))
                            sh = l0xy + pw * l1xy
                            theta = (0.5 * (math.atan2(4.0 * sh, 4.0 * half) + math.pi)
                                     % math.pi)
                idx = (i * n_m + j) * n_k + k
                best_out[idx] = best
                theta_out[idx] = theta
