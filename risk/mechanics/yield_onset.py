"""Yield onset at the wall of an open hole or a perforation tunnel.

For one set of inputs (vectorised over any number of them) this finds the highest flowing wall
pressure ``p_wc`` in [0, p_r] at which the effective stress somewhere on the cavity wall reaches
the chosen failure criterion or the tensile cut-off, and the wall angle where it happens.

Method
------
At the wall the effective radial stress is zero (permeable, producing wall: the fluid pressure is
``p_w``), and the hoop and axial effective stresses are affine in ``p_w`` at a fixed wall angle
``t``::

    s'_t = a_t - (2 - A) p_w,     s'_z = a_z - (1 - A) p_w,     t_tz independent of p_w

(:func:`risk.mechanics.stresses.wall_stresses`, Terzaghi effective stress). Every criterion in
:mod:`risk.mechanics.criteria` but Mogi-Coulomb has a convex elastic domain, so along this
straight stress path the safe wall pressures at one angle form a single interval (Mogi-Coulomb's
domain turns inwards at the triaxial-extension corners, so its failing pressures at one angle
can form a band: every Mogi-Coulomb path handles it, docs/derivations.md sec. 15.5), and the
tensile cut-off can only be
reached at zero drawdown (the smallest principal effective stress does not fall as ``p_w``
falls; derived), so it is checked at ``p_w = p_r``. Two solvers:

- **Mohr-Coulomb** (the default criterion): a compiled kernel, one case per loop iteration
  (:mod:`risk.mechanics._mc_kernel`). At each angle the critical wall pressure is the root of
  a quadratic in closed form; where the worst angle can lie is narrowed by derived monotonicity
  arguments, and on the remaining arc it is the root of the closed form's slope.
- **Drucker-Prager** (three matchings) and **modified Lade**: a compiled kernel built like
  the Mohr-Coulomb one (:mod:`risk.mechanics._arc_kernel`): the crossing at one angle in
  closed form (for modified Lade the root of a cubic by a fixed number of bracketed Halley
  steps, sec. 15.3), the worst angle on a derived half circle (docs/derivations.md,
  sec. 15.1).
- **Hoek-Brown**: on walls compressive all round it is Mohr-Coulomb's branch ``hi = UCS``
  with ``UCS = sigma_ci s^a``, solved by the Mohr-Coulomb kernel (sec. 15.2); other walls as
  below.
- **Mogi-Coulomb**: a compiled kernel on the whole circle (:mod:`risk.mechanics._mogi_kernel`):
  the crossing at one angle by a fixed number of safeguarded steps, the worst angle searched
  as for Drucker-Prager but on the whole circle (docs/derivations.md, sec. 15.4); a value at
  one angle not certified as the largest failing wall pressure there sends the case to the
  envelope iteration and a band pass (sec. 15.5), as does the reference path for every case.
- **the fallback of every kernel above**: the envelope iteration (Notes of
  :func:`critical_wall_pressure`), compiled by default (:mod:`risk.mechanics._onset_kernel`,
  one case per loop iteration); its numpy form
  is kept as the reference path for every criterion but Mohr-Coulomb (``compiled=False``):
  bracketed roots in the wall pressure (Chandrupatla 1997,
  ``scipy.optimize.elementwise.find_root``) and maxima over ``n_theta`` grid angles refined by
  parabolic steps on shrinking brackets.

The numpy iteration agrees with the Mohr-Coulomb kernel to 1e-8 MPa
(tests/mechanics/test_yield_onset.py) and with every compiled path to 1e-9 MPa on every
criterion (tests/mechanics/test_onset_kernel.py; the compiled envelope iteration itself in
tests/mechanics/test_arc_kernel.py).

Outcomes, per :mod:`risk.conventions`: ``p_wc = p_r`` when the wall fails with no drawdown and
``p_wc = -inf`` when it does not fail for any wall pressure in [0, p_r] ("never").
"""

from __future__ import annotations

from collections.abc import Callable
from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.optimize import elementwise

from risk.mechanics.criteria import CRITERIA, StrengthParameters, cohesion, tensile_cutoff
from risk.mechanics.stresses import LocalStress

Array = NDArray[np.float64]

__all__ = ["OnsetResult", "critical_wall_pressure", "critical_drawdown", "wall_excess"]

_ROOT_TOL = {"xatol": 1e-12, "xrtol": 4 * np.finfo(float).eps}


class OnsetResult(NamedTuple):
    """Critical wall pressure [MPa] (``p_r``: fails with no drawdown; ``-inf``: never) and the
    wall angle [rad] in [0, pi) where the limit state is first reached (nan for never)."""

    wall_pressure: Array
    theta: Array


def _principal(st: Array, sz: Array, tau: Array) -> tuple[Array, Array, Array]:
    """Sorted principal effective stresses at the wall, radial effective stress being zero."""
    mean = 0.5 * (st + sz)
    half = 0.5 * (st - sz)
    rad = np.sqrt(half * half + tau * tau)
    hi, lo = mean + rad, mean - rad
    s1 = np.maximum(hi, 0.0)
    s3 = np.minimum(lo, 0.0)
    s2 = np.minimum(np.maximum(lo, 0.0), hi)
    return s1, s2, s3


def _coefficients(theta: Array, c: tuple[Array, ...]) -> tuple[Array, Array, Array]:
    """a_t, a_z and t_tz at wall angle theta from the packed per-case constants."""
    sum_xy, diff_xy, sxy, szz, sxz, syz, inflow, nu = c
    c2, s2 = np.cos(2.0 * theta), np.sin(2.0 * theta)
    dev = 2.0 * diff_xy * c2 + 4.0 * sxy * s2
    a_t = sum_xy - dev - inflow
    a_z = szz - nu * dev - inflow
    tau = 2.0 * (syz * np.cos(theta) - sxz * np.sin(theta))
    return a_t, a_z, tau


def wall_excess(
    p_w: ArrayLike, theta: ArrayLike, local: LocalStress, *, reservoir_pressure: ArrayLike,
    poro_coefficient: ArrayLike, poisson_ratio: ArrayLike, strength: StrengthParameters,
    criterion: str,
) -> Array:
    """Criterion excess F [MPa] at wall pressure ``p_w`` [MPa] and wall angle ``theta`` [rad].

    ``F >= 0`` means the criterion is reached there. Exposed for checks and plots.
    """
    consts = _pack(local, reservoir_pressure, poro_coefficient, poisson_ratio)
    a_t, a_z, tau = _coefficients(np.asarray(theta, dtype=float), consts)
    big_a = np.asarray(poro_coefficient, dtype=float)
    pw = np.asarray(p_w, dtype=float)
    s1, s2, s3 = _principal(a_t - (2.0 - big_a) * pw, a_z - (1.0 - big_a) * pw, tau)
    return CRITERIA[criterion](s1, s2, s3, strength)


def _pack(local: LocalStress, p_r: ArrayLike, big_a: ArrayLike, nu: ArrayLike
          ) -> tuple[Array, ...]:
    a = np.asarray(big_a, dtype=float)
    return (local.sxx + local.syy, local.sxx - local.syy, np.asarray(local.sxy),
            np.asarray(local.szz), np.asarray(local.sxz), np.asarray(local.syz),
            a * np.asarray(p_r, dtype=float), np.asarray(nu, dtype=float))


def critical_wall_pressure(
    local: LocalStress,
    *,
    reservoir_pressure: ArrayLike,
    poro_coefficient: ArrayLike,
    poisson_ratio: ArrayLike,
    strength: StrengthParameters,
    tensile_strength: ArrayLike,
    criterion: str = "mohr-coulomb",
    n_theta: int = 24,
    compiled: bool = True,
    angles: bool = True,
) -> OnsetResult:
    """Highest wall pressure in [0, p_r] at which the cavity wall reaches yield onset.

    Parameters
    ----------
    local : LocalStress
        Far-field total stress in the cavity frame at this depletion stage [MPa].
    reservoir_pressure : array_like
        Far-field pore pressure p_r of the stage [MPa].
    poro_coefficient : array_like
        A = alpha (1 - 2 nu)/(1 - nu) [1].
    poisson_ratio : array_like
        nu [1].
    strength : StrengthParameters
        UCS [MPa], friction angle [rad] and Hoek-Brown constants [1].
    tensile_strength : array_like
        Tensile strength T0 [MPa] of the cut-off (``inf`` switches it off).
    criterion : str
        A key of :data:`risk.mechanics.criteria.CRITERIA`.
    n_theta : int
        Number of wall angles in the bracketing grid over [0, pi) of the envelope iteration
        (criteria other than Mohr-Coulomb).
    compiled : bool
        Criteria other than Mohr-Coulomb: the compiled paths (the default; module docstring)
        or the numpy envelope iteration (False: the reference path, kept for checks).
        Mohr-Coulomb always takes its own kernel.
    angles : bool
        Mohr-Coulomb: False leaves out the wall angle (``theta`` all nan, a read-only view),
        for callers that keep only the pressure; the pressure is the same either way.

    Returns
    -------
    OnsetResult
        Critical wall pressure [MPa] and worst wall angle [rad], shaped like the broadcast
        inputs.

    Notes
    -----
    (The envelope iteration, for criteria other than Mohr-Coulomb; Mohr-Coulomb takes the
    compiled kernel of :mod:`risk.mechanics._mc_kernel`.)
    With G(p) = max over the wall angle of F(t, p), the answer is the largest root of G in
    [0, p_r]. G is convex in p (a maximum of functions convex along the path), so the iteration
    p_{k+1} = root of F(t_k, .), t_{k+1} = argmax_t F(t, p_{k+1}) rises monotonically to it:
    F(t_k, .) touches G at p_k with the same slope (envelope theorem), so each step is at least
    as good as a Newton step on G. Every root is bracketed and every maximum is refined from a
    grid bracket, so no step relies on a starting guess. For Mogi-Coulomb (F not convex along
    the path) a band pass follows: the largest failing wall pressure at one angle, maximised
    over the angle, raises the answer where it is higher (docs/derivations.md, sec. 15.5).

    References
    ----------
    Wall stresses: Fjaer et al. (2008) sec. 4.4; Zoback (2007) ch. 8. Bracketed root:
    Chandrupatla, T.R. (1997) Adv. Eng. Softw. 28, 145. Mohr-Coulomb kernel: Anderson, N. &
    Bjorck, A. (1973) BIT 13, 253; Brent, R.P. (1973) Algorithms for Minimization without
    Derivatives, chs. 4-5. Mogi-Coulomb: Al-Ajmi, A.M. & Zimmerman, R.W. (2005) IJRMMS 42,
    431-439; golden section: Kiefer, J. (1953) Proc. Amer. Math. Soc. 4, 502-506.
    """
    if criterion not in CRITERIA:
        raise ValueError(f"unknown criterion {criterion!r}; expected one of {sorted(CRITERIA)}")
    arrays = [np.asarray(v, dtype=float) for v in (
        *local, reservoir_pressure, poro_coefficient, poisson_ratio, tensile_strength,
        *strength)]
    shape = np.broadcast_shapes(*(a.shape for a in arrays))
    if criterion == "mohr-coulomb":
        return _compiled_mohr_coulomb(arrays, shape, angles=angles)
    if compiled:
        return _compiled_general(arrays, shape, criterion, n_theta)
    parts = np.broadcast_arrays(*arrays)
    flat = [np.ascontiguousarray(p).ravel() for p in parts]
    loc = LocalStress(*flat[:6])
    p_r, big_a, nu, t0 = flat[6:10]
    prm = tuple(flat[10:])
    pw_g, th_g = _general_solver(loc, p_r, big_a, nu, t0, prm, criterion, n_theta)
    theta = np.where(np.isneginf(pw_g), np.nan, np.mod(th_g, np.pi))
    return OnsetResult(pw_g.reshape(shape), theta.reshape(shape))


def _compiled_mohr_coulomb(arrays: list[Array], shape: tuple[int, ...], *,
                           angles: bool = True) -> OnsetResult:
    """Mohr-Coulomb by the compiled per-case kernel (:mod:`risk.mechanics._mc_kernel`).

    Inputs are read through broadcast views (no copies); shapes of more than three axes are
    folded into three.
    """
    from risk.mechanics._mc_kernel import mohr_coulomb_onset

    sxx, syy, szz, sxy, sxz, syz, p_r, big_a, nu, t0, ucs, phi = arrays[:12]
    derived = [sxx + syy, sxx - syy]  # two sums are cheaper than re-adding in every case
    if len(shape) <= 3:
        full = (1,) * (3 - len(shape)) + tuple(shape)
        # put the longest axis first so the parallel loop has work to share
        order = tuple(int(i) for i in np.argsort([-n for n in full], kind="stable"))
    else:
        full = (int(np.prod(shape)), 1, 1)
        order = (0, 1, 2)
    out = tuple(full[i] for i in order)
    views = []
    for a in (*derived, sxy, szz, sxz, syz, p_r, big_a, nu, t0, ucs, phi):
        b = np.broadcast_to(a, shape)
        b = np.ascontiguousarray(b).reshape(full) if len(shape) > 3 else b.reshape(full)
        views.append(np.broadcast_to(np.transpose(b, order), out))  # read-only views
    # flat outputs in the kernel's axis order, returned in the caller's
    p_k, cos2, sin2 = (np.empty(int(np.prod(out))) for _ in range(3))
    mohr_coulomb_onset(*views, p_k, cos2, sin2)  # type: ignore[call-arg]  # 12 + 3 arrays
    inverse = tuple(int(i) for i in np.argsort(order))
    p_wc = np.transpose(p_k.reshape(out), inverse).reshape(shape)
    if not angles:
        return OnsetResult(p_wc, np.broadcast_to(np.nan, shape))
    theta = np.arctan2(sin2, cos2, out=sin2)  # nan where never
    theta *= 0.5
    np.add(theta, np.pi, out=theta, where=theta < 0.0)
    np.copyto(theta, 0.0, where=theta >= np.pi)  # [0, pi): -tiny + pi can round to pi
    theta += 0.0  # no -0.0
    theta = np.transpose(theta.reshape(out), inverse).reshape(shape)
    return OnsetResult(p_wc, theta)


def _folded_views(arrays: list[Array], shape: tuple[int, ...]
                  ) -> tuple[list[Array], tuple[int, ...], tuple[int, ...]]:
    """Read-only 3-D broadcast views of the inputs (no copies up to three axes), the longest
    axis first so that a parallel loop has work to share; also the kernel's shape and the
    axis order (to return outputs in the caller's order)."""
    if len(shape) <= 3:
        full = (1,) * (3 - len(shape)) + tuple(shape)
        order = tuple(int(i) for i in np.argsort([-n for n in full], kind="stable"))
    else:
        full = (int(np.prod(shape)), 1, 1)
        order = (0, 1, 2)
    out = tuple(full[i] for i in order)
    views = []
    for a in arrays:
        b = np.broadcast_to(a, shape)
        b = np.ascontiguousarray(b).reshape(full) if len(shape) > 3 else b.reshape(full)
        views.append(np.broadcast_to(np.transpose(b, order), out))  # read-only views
    return views, out, order


def _theta_from_psi(psi: Array, out: tuple[int, ...], order: tuple[int, ...],
                    shape: tuple[int, ...]) -> Array:
    """theta = psi/2 in [0, pi) (nan stays nan), in the caller's axis order."""
    theta = np.mod(psi, 2.0 * np.pi, out=psi)
    theta *= 0.5
    np.copyto(theta, 0.0, where=theta >= np.pi)  # [0, pi): rounding can reach pi
    theta += 0.0  # no -0.0
    inverse = tuple(int(i) for i in np.argsort(order))
    return np.transpose(theta.reshape(out), inverse).reshape(shape)


#: Criteria whose worst angle is searched on the half circle, the crossing at one angle in
#: closed form or by a fixed number of bracketed Halley steps on a cubic (modified Lade)
#: (:mod:`risk.mechanics._arc_kernel`; docs/derivations.md, secs. 15.1 and 15.3).
_ARC = ("drucker-prager-circumscribed", "drucker-prager-middle", "drucker-prager-inscribed",
        "modified-lade")


def _compiled_general(arrays: list[Array], shape: tuple[int, ...], criterion: str,
                      n_theta: int) -> OnsetResult:
    """Any criterion but Mohr-Coulomb by its compiled path: Hoek-Brown by
    :func:`_compiled_hoek_brown`, the others by :func:`_compiled_kernels`."""
    if n_theta < 3:
        raise ValueError(f"n_theta must be at least 3; found {n_theta}")
    if criterion == "hoek-brown":
        return _compiled_hoek_brown(arrays, shape, n_theta)
    return _compiled_kernels(arrays, shape, criterion, n_theta)


def _compiled_kernels(arrays: list[Array], shape: tuple[int, ...], criterion: str,
                      n_theta: int) -> OnsetResult:
    """Drucker-Prager and modified Lade by the half-circle kernel
    (:mod:`risk.mechanics._arc_kernel`), Mogi-Coulomb by the whole-circle kernel
    (:mod:`risk.mechanics._mogi_kernel`), any other criterion by the compiled envelope
    iteration (:mod:`risk.mechanics._onset_kernel`, also the kernels' fallback)."""
    from risk.mechanics._onset_kernel import CODES, onset

    sxx, syy, szz, sxy, sxz, syz, p_r, big_a, nu, t0 = arrays[:10]
    strength = arrays[10:15]  # UCS, friction angle, m_b, s, a
    views, out, order = _folded_views(
        [sxx + syy, sxx - syy, sxy, szz, sxz, syz, p_r, big_a, nu, t0, *strength], shape)
    size = int(np.prod(out))
    p_k, psi = np.empty(size), np.empty(size)
    if criterion in _ARC:
        from risk.mechanics._arc_kernel import arc_onset

        cos2 = np.empty(size)
        arc_onset(*views, CODES[criterion], n_theta, p_k, cos2, psi)  # type: ignore[call-arg]
        psi = np.arctan2(psi, cos2, out=psi)  # nan where never
    elif criterion == "mogi-coulomb":
        from risk.mechanics._mogi_kernel import mogi_onset

        cos2 = np.empty(size)
        mogi_onset(*views, n_theta, p_k, cos2, psi)  # type: ignore[call-arg]
        psi = np.arctan2(psi, cos2, out=psi)  # nan where never
    else:
        onset(*views, CODES[criterion], n_theta, p_k, psi)  # type: ignore[call-arg]
    inverse = tuple(int(i) for i in np.argsort(order))
    p_wc = np.transpose(p_k.reshape(out), inverse).reshape(shape)
    return OnsetResult(p_wc, _theta_from_psi(psi, out, order, shape))


def _compiled_hoek_brown(arrays: list[Array], shape: tuple[int, ...], n_theta: int
                         ) -> OnsetResult:
    """Hoek-Brown: on walls compressive all round the Mohr-Coulomb kernel, elsewhere the
    compiled envelope iteration.

    On a wall whose hoop-axial block is compressive all round at p_r (and so below it: the
    smaller principal stress does not fall as the wall pressure falls) s3 is the zero radial
    stress, so Hoek-Brown reads s1 = sigma_ci s^a: the Mohr-Coulomb branch F_a = hi - UCS with
    UCS = sigma_ci s^a, which is all the Mohr-Coulomb kernel uses on such walls
    (docs/derivations.md, sec. 15.2). The test of compressive walls is the kernel's own
    sufficient test, with a margin of 1e-9 MPa so rounding never sends a wall it treats as
    having a tensile sector down this path.
    """
    sxx, syy, szz, sxy, sxz, syz, p_r, big_a, nu, t0, ucs, phi, _, hb_s, hb_a = arrays[:15]
    unconfined = ucs * np.power(hb_s, hb_a)  # sigma_ci s^a [MPa]
    mc = _compiled_mohr_coulomb([sxx, syy, szz, sxy, sxz, syz, p_r, big_a, nu, t0,
                                 unconfined, phi], shape)
    amp = np.sqrt((2.0 * (sxx - syy)) ** 2 + (4.0 * sxy) ** 2)  # |hoop deviator| bound
    tmax = 2.0 * np.sqrt(sxz * sxz + syz * syz)  # |hoop-axial shear| bound
    k0 = sxx + syy - big_a * p_r
    z0 = szz - big_a * p_r
    comp = ((k0 - amp - (2.0 - big_a) * p_r - tmax >= 1e-9)
            & (z0 - nu * amp - (1.0 - big_a) * p_r - tmax >= 1e-9))
    comp = np.broadcast_to(comp, shape)
    if comp.all():
        return mc
    p_wc, theta = mc.wall_pressure.copy(), mc.theta.copy()
    rest = ~comp
    sub = [np.broadcast_to(a, shape)[rest] for a in arrays]
    gen = _compiled_kernels(sub, sub[0].shape, "hoek-brown", n_theta)
    p_wc[rest], theta[rest] = gen.wall_pressure, gen.theta
    return OnsetResult(p_wc, theta)


def _general_solver(loc: LocalStress, p_r: Array, big_a: Array, nu: Array, t0: Array,
                    prm: tuple[Array, ...], criterion: str, n_theta: int
                    ) -> tuple[Array, Array]:
    """The envelope iteration for any criterion and orientation (see the Notes above)."""
    # per case: 8 stress constants, A, then the strength parameters
    case = (*_pack(loc, p_r, big_a, nu), big_a, *prm)
    solver = _Solver(CRITERIA[criterion], n_theta)
    n = p_r.size
    p_wc = np.full(n, -np.inf)
    theta = np.full(n, np.nan)

    # zero drawdown: shear criterion and tensile cut-off at p_w = p_r
    g_r, t_r = solver.max_over_theta(solver.shear, p_r, case, decided_at=0.0)
    tens = np.isfinite(t0) & (g_r < 0.0)
    g_t = np.full(n, -np.inf)
    t_t = np.zeros(n)
    if np.any(tens):
        idx = np.nonzero(tens)[0]
        g_t[idx], t_t[idx] = solver.max_over_theta(
            solver.tension, p_r[idx], (*_take(case, idx), t0[idx]), decided_at=1e-300)
    zero = (g_r >= 0.0) | (g_t > 0.0)  # tension beyond T0 (T0 = 0: any tension)
    p_wc[zero] = p_r[zero]
    theta[zero] = np.where(g_r[zero] >= 0.0, t_r[zero], t_t[zero])

    # full drawdown (p_w = 0): no failure there means no failure in [0, p_r]
    rest = np.nonzero(~zero)[0]
    g_0, t_0 = solver.max_over_theta(solver.shear, np.zeros(rest.size), _take(case, rest),
                                     decided_at=0.0)
    fails = g_0 >= 0.0
    idx = rest[fails]
    p_k = np.zeros(idx.size)
    t_k = t_0[fails]
    active = np.arange(idx.size)
    for _ in range(60):
        if active.size == 0:
            break
        sub = _take(case, idx[active])
        p_new = solver.root_in_p(t_k[active], p_k[active], p_r[idx[active]], sub)
        g_new, t_new = solver.max_over_theta(solver.shear, p_new, sub)
        moved = p_new - p_k[active]
        p_k[active] = p_new
        t_k[active] = t_new
        tol = 1e-13 * (1.0 + np.abs(p_new))
        done = (g_new <= 0.0) | (moved <= tol)
        active = active[~done]
    p_wc[idx] = p_k
    theta[idx] = t_k
    if criterion == "mogi-coulomb":
        _mogi_bands(p_wc, theta, case, p_r, n_theta)
    return p_wc, theta


def _mogi_bands(p_wc: Array, theta: Array, case: tuple[Array, ...], p_r: Array,
                n_theta: int) -> None:
    """Mogi-Coulomb: raise ``p_wc`` (and set ``theta``) in place where the failing wall
    pressures of some angle form a band above it, which the envelope iteration (it assumes a
    convex domain) does not see (docs/derivations.md, sec. 15.5): the largest, over the wall
    angle, of the value at one angle that does not assume it (:func:`_mogi_largest`), on a
    grid of 4 n_theta angles, then golden-section searches (Kiefer 1953) on both sides of the
    grid's two largest local maxima (the value jumps where a band appears, so the parabolic
    steps of :func:`_refine_max` do not apply), to 1e-12 rad."""
    todo = np.nonzero(p_wc < p_r)[0]
    if todo.size == 0:
        return
    sub = _take(case, todo)
    pr = p_r[todo]
    n = 4 * n_theta
    step = np.pi / n
    grid = np.arange(n, dtype=float)
    grid *= step
    col = tuple(a[:, None] if np.ndim(a) else a for a in sub)
    vals = _mogi_largest(grid[None, :], pr[:, None], *col)
    rows = np.arange(todo.size)
    k1 = np.argmax(vals, axis=1)
    peak = (vals >= np.roll(vals, 1, axis=1)) & (vals >= np.roll(vals, -1, axis=1))
    masked = np.where(peak, vals, -np.inf)
    masked[rows, k1] = -np.inf
    k2 = np.argmax(masked, axis=1)
    k2 = np.where(np.isfinite(masked[rows, k2]), k2, k1)
    best, t_best = vals[rows, k1], grid[k1]
    gr = 0.5 * (np.sqrt(5.0) - 1.0)
    for k in (k1, k2):
        for side in (-1.0, 1.0):
            a = grid[k] + np.minimum(side, 0.0) * step
            b = a + step
            c, d = b - gr * (b - a), a + gr * (b - a)
            fc = _mogi_largest(c, pr, *sub)
            fd = _mogi_largest(d, pr, *sub)
            for _ in range(64):  # 0.618^64 of a grid step: below 1e-14 rad
                left = fc >= fd
                b = np.where(left, d, b)
                a = np.where(left, a, c)
                c_new = np.where(left, b - gr * (b - a), d)
                d_new = np.where(left, c, a + gr * (b - a))
                f_new = _mogi_largest(np.where(left, c_new, d_new), pr, *sub)
                fc, fd = np.where(left, f_new, fd), np.where(left, fc, f_new)
                c, d = c_new, d_new
            for v, t in ((fc, c), (fd, d)):
                up = v > best
                best, t_best = np.where(up, v, best), np.where(up, t, t_best)
    new = np.minimum(best, pr)
    up = (best >= 0.0) & (new > p_wc[todo])
    p_wc[todo[up]] = new[up]
    theta[todo[up]] = np.mod(t_best[up], np.pi)


def _mogi_largest(theta: Array, p_r: Array, *case: Array) -> Array:
    """Mogi-Coulomb at wall angle theta without assuming a convex domain (docs/derivations.md,
    sec. 15.5): p_r + F(p_r) where F(p_r) >= 0, else the largest wall pressure in [0, p_r)
    where F = 0 if F >= 0 anywhere there, else the larger of F(0) and F where hoop = axial
    (negative; it climbs towards the angles where a band appears). The branches of the
    principal stresses (lo = m - r and hi = m + r against the zero radial stress) change
    where m^2 - r^2, a quadratic in p, vanishes (lo and hi do not rise with p); on the
    branches with one or two tensile principal stresses F is convex, so their crossing is
    bracketed (Chandrupatla 1997, ``scipy.optimize.elementwise.find_root``); on the
    compressive branch the largest root is approached from above by the roots of the convex
    majorants with r replaced by its tangent (each a quadratic). Vectorised."""
    a_t, a_z, tau = _coefficients(theta, case[:8])
    ba = case[8]
    prm = StrengthParameters(*case[9:])
    shape = np.broadcast_shapes(np.shape(a_t), np.shape(a_z), np.shape(tau), np.shape(p_r),
                                np.shape(ba), *(np.shape(v) for v in prm))
    a_t, a_z, tau, pr, ba = (np.broadcast_to(v, shape).ravel() for v in (a_t, a_z, tau, p_r,
                                                                           ba))
    par = [np.broadcast_to(np.asarray(v, dtype=float), shape).ravel() for v in prm]
    bt, bz = 2.0 - ba, 1.0 - ba
    ma, ha, mb, w = 0.5 * (a_t + a_z), 0.5 * (a_t - a_z), 0.5 * (bt + bz), tau * tau
    phi = par[1]
    coh = cohesion(ucs=par[0], friction_angle=phi)
    aa = 2.0 * np.sqrt(2.0) / 3.0 * coh * np.cos(phi)
    bb = 2.0 * np.sqrt(2.0) / 3.0 * np.sin(phi)

    def excess(p: Array, at: Array, az: Array, ta: Array, b_t: Array, b_z: Array,
               *sp: Array) -> Array:
        s1, s2, s3 = _principal(at - b_t * p, az - b_z * p, ta)
        return CRITERIA["mogi-coulomb"](s1, s2, s3, StrengthParameters(*sp))

    def eig(p: Array, sl: slice | NDArray[np.intp] = slice(None)) -> tuple[Array, Array]:
        m = ma[sl] - mb[sl] * p
        h = ha[sl] - 0.5 * p
        r = np.sqrt(h * h + w[sl])
        return m - r, m + r

    args = (a_t, a_z, tau, bt, bz, *par)
    fr = excess(pr, *args)
    out = np.where(fr >= 0.0, pr + fr, np.nan)

    # where lo and hi cross zero: the smaller and larger roots of m^2 - r^2, a quadratic in p
    # (lo and hi do not rise with p, so each is crossed once), kept to [0, p_r]
    d2 = mb * mb - 0.25
    d1 = ha - 2.0 * ma * mb
    d0 = ma * ma - ha * ha - w
    with np.errstate(divide="ignore", invalid="ignore"):
        half = -0.5 * (d1 + np.copysign(np.sqrt(np.maximum(d1 * d1 - 4.0 * d2 * d0, 0.0)),
                                        d1))
        za = np.where(d2 > 0.0, half / d2, np.copysign(np.inf, half))
        zb = np.where(half != 0.0, d0 / half, np.inf)
    lo0, hi0 = eig(np.zeros_like(pr))
    lo_r, hi_r = eig(pr)
    top_b = np.where(hi_r >= 0.0, pr, np.where(hi0 < 0.0, 0.0,
                                               np.clip(np.maximum(za, zb), 0.0, pr)))
    top_a = np.where(lo_r >= 0.0, pr, np.where(lo0 < 0.0, 0.0,
                                               np.clip(np.minimum(za, zb), 0.0, top_b)))

    def crossing(mask: NDArray[np.bool_], lo: Array, hi: Array) -> None:
        idx = np.nonzero(mask)[0]
        if idx.size:
            sub = tuple(a[idx] for a in args)
            res = elementwise.find_root(excess, (lo[idx], hi[idx]), args=sub,
                                        tolerances=_ROOT_TOL)
            out[idx] = np.where(res.success, res.x, lo[idx])

    open_ = np.isnan(out)
    crossing(open_ & (top_b < pr) & (excess(top_b, *args) >= 0.0), top_b, pr)
    open_ = np.isnan(out)
    crossing(open_ & (top_a < top_b) & (excess(top_a, *args) >= 0.0), top_a, top_b)
    f0 = np.maximum(excess(np.zeros_like(pr), *args),
                    excess(np.clip(2.0 * ha, 0.0, pr), *args))
    # the compressive branch on [0, top_a], F(top_a) < 0: descend
    act = np.nonzero(np.isnan(out) & (top_a > 0.0))[0]
    x = top_a[act]
    s2 = 2.0 / 9.0
    for _ in range(200):
        if act.size == 0:
            break
        a_, h_, m_, w_, e_a, e_b = ma[act], ha[act], mb[act], w[act], aa[act], bb[act]
        hx = h_ - 0.5 * x
        rx = np.sqrt(hx * hx + w_)
        r1 = -0.5 * hx / np.maximum(rx, 1e-300)
        e0 = e_a + 0.5 * e_b * (a_ + rx - r1 * x)
        e1 = 0.5 * e_b * (m_ - r1)
        q2 = s2 * (m_ * m_ + 0.75) - e1 * e1
        q1 = -s2 * (2.0 * a_ * m_ + 3.0 * h_) + 2.0 * e0 * e1
        q0 = s2 * (a_ * a_ + 3.0 * (h_ * h_ + w_)) - e0 * e0
        with np.errstate(divide="ignore", invalid="ignore"):
            sd = np.sqrt(q1 * q1 - 4.0 * q2 * q0)
            half = -0.5 * (q1 + np.copysign(sd, q1))
            roots = np.stack([half / q2, q0 / half])
        tol = 1e-12 * (1.0 + x)
        ok = np.isfinite(roots) & (roots < x + tol) & (e0 - e1 * roots >= 0.0)
        nxt = np.minimum(np.max(np.where(ok, roots, -np.inf), axis=0), x)
        none = nxt < 0.0  # the majorant, hence F, is negative on [0, x]
        moved = x - nxt
        x_new = np.where(none, 0.0, nxt)
        sub = tuple(a[act] for a in args)
        found = ~none & ((excess(x_new, *sub) >= 0.0) | (moved <= 1e-14 * (1.0 + x_new)))
        out[act[found]] = x_new[found]
        keep = ~(none | found)
        act, x = act[keep], x_new[keep]
    out = np.where(np.isnan(out), f0, out)
    return out.reshape(shape)


def _take(arrays: tuple[Array, ...], idx: NDArray[np.intp]) -> tuple[Array, ...]:
    return tuple(np.broadcast_to(a, idx.shape if np.ndim(a) == 0 else a.shape)[idx]
                 if np.ndim(a) else a for a in arrays)


def _refine_max(f: Callable[..., Array], t: Array, best: Array, h: float, p: Array,
                case: tuple[Array, ...]) -> tuple[Array, Array]:
    """Refine grid maxima of f(t, p, *case) by successive parabolic steps on brackets.

    Each step fits a parabola through t - h, t, t + h, moves to its vertex (within the
    bracket) and keeps the best point seen, so the value never decreases. The bracket of each
    element then shrinks to twice the distance just moved, by at most fifty-fold and not at all
    while the step reaches the bracket's edge (a bracket shrinking faster than the first
    estimate's error could stop short of the peak: found in review), until below 1e-11 rad
    (the value is then exact to rounding, its error being second order in the angle).
    Vectorised over the elements still open.
    """
    t = t.copy()
    best = best.copy()
    hh = np.full(t.size, h)
    todo = np.arange(t.size)
    for _ in range(60):
        if todo.size == 0:
            break
        sub = tuple(a[todo] if np.ndim(a) else a for a in case)
        ts, bs, hs, ps = t[todo], best[todo], hh[todo], p[todo]
        fm = f(ts - hs, ps, *sub)
        fp = f(ts + hs, ps, *sub)
        curv = fp - 2.0 * bs + fm
        with np.errstate(divide="ignore", invalid="ignore"):
            off = np.where(curv < 0.0, 0.5 * hs * (fm - fp) / curv, 0.0)
        off = np.clip(np.nan_to_num(off), -hs, hs)
        tv = ts + off
        fv = f(tv, ps, *sub)
        cand_t = np.stack([ts, ts - hs, ts + hs, tv])
        cand_f = np.stack([bs, fm, fp, fv])
        j = np.argmax(cand_f, axis=0)
        cols = np.arange(ts.size)
        new_t = cand_t[j, cols]
        best[todo] = cand_f[j, cols]
        moved = np.abs(new_t - ts)
        t[todo] = new_t
        hh[todo] = np.clip(2.0 * moved, 0.02 * hs, hs)
        todo = todo[hh[todo] > 1e-11]
    return best, t


class _Solver:
    """Vectorised maximum over the wall angle and root in wall pressure for one criterion."""

    def __init__(self, excess: Callable[..., Array], n_theta: int) -> None:
        self.excess = excess
        self.grid = np.arange(n_theta) * (np.pi / n_theta)
        self.step = np.pi / n_theta

    def shear(self, theta: Array, p: Array, *case: Array) -> Array:
        a_t, a_z, tau = _coefficients(theta, case[:8])
        ba = case[8]
        s1, s2, s3 = _principal(a_t - (2.0 - ba) * p, a_z - (1.0 - ba) * p, tau)
        return self.excess(s1, s2, s3, StrengthParameters(*case[9:]))

    def tension(self, theta: Array, p: Array, *case: Array) -> Array:
        """Tensile cut-off with the hoop-axial block's smaller eigenvalue lo in place of
        s3 = min(lo, 0): the same decision (-lo - T0 > 0 needs lo < 0 as T0 >= 0), but smooth
        in the angle, so a tension sector narrower than the grid still has a peak to climb
        (with s3 the grid sees a plateau of -T0; found in review)."""
        a_t, a_z, tau = _coefficients(theta, case[:8])
        ba = case[8]
        st, sz = a_t - (2.0 - ba) * p, a_z - (1.0 - ba) * p
        half = 0.5 * (st - sz)
        lo = 0.5 * (st + sz) - np.sqrt(half * half + tau * tau)
        return tensile_cutoff(lo, case[-1])

    def max_over_theta(self, f: Callable[..., Array], p: Array, case: tuple[Array, ...],
                       decided_at: float | None = None) -> tuple[Array, Array]:
        """max over t of f(t, p, *case): grid bracket, then refined to the floating-point limit.

        Elements whose grid maximum already reaches ``decided_at`` are not refined (their
        outcome is decided by an actual wall angle).
        """
        n = p.size
        if n == 0:
            return np.zeros(0), np.zeros(0)
        col = tuple(a[:, None] if np.ndim(a) else a for a in case)
        vals = f(self.grid[None, :], p[:, None], *col)
        rows = np.arange(n)
        k = np.argmax(vals, axis=1)
        best = vals[rows, k]
        t = self.grid[k].copy()
        todo = np.arange(n) if decided_at is None else np.nonzero(best < decided_at)[0]
        if todo.size:
            sub = tuple(a[todo] if np.ndim(a) else a for a in case)
            b, tt = _refine_max(f, t[todo], best[todo], self.step, p[todo], sub)
            # also the second-largest local maximum of the grid (period pi): a narrow peak
            # between grid angles can rise above the grid's largest (found in review)
            v = vals[todo]
            peak = (v >= np.roll(v, 1, axis=1)) & (v >= np.roll(v, -1, axis=1))
            masked = np.where(peak, v, -np.inf)
            masked[np.arange(todo.size), k[todo]] = -np.inf
            k2 = np.argmax(masked, axis=1)
            second = masked[np.arange(todo.size), k2]
            has = np.nonzero(np.isfinite(second))[0]
            if has.size:
                sub2 = tuple(a[has] if np.ndim(a) else a for a in sub)
                b2, tt2 = _refine_max(f, self.grid[k2[has]], second[has], self.step,
                                      p[todo][has], sub2)
                up = b2 > b[has]
                b[has[up]] = b2[up]
                tt[has[up]] = tt2[up]
            best[todo] = b
            t[todo] = tt
        return best, t

    def root_in_p(self, theta: Array, p_fail: Array, p_safe: Array,
                  case: tuple[Array, ...]) -> Array:
        """Root of shear(theta, .) between a failing and a safe wall pressure."""
        res = elementwise.find_root(
            lambda p, t, *c: self.shear(t, p, *c), (p_fail, p_safe), args=(theta, *case),
            tolerances=_ROOT_TOL,
        )
        # invalid bracket only where F(theta, p_fail) is exactly 0: p_fail is the root
        return np.where(res.success, res.x, p_fail)


def critical_drawdown(wall_pressure: ArrayLike, reservoir_pressure: ArrayLike) -> Array:
    """D_c = p_r - p_wc [MPa]; ``+inf`` where ``p_wc`` is ``-inf`` (never fails)."""
    return np.asarray(reservoir_pressure, dtype=float) - np.asarray(wall_pressure, dtype=float)
