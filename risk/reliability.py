"""Small failure probabilities at a fixed drawdown: FORM, SORM and importance sampling.

All methods work on a limit-state function ``g(u)`` of independent standard normals ``u``
(shape (n, d) -> (n,)), vectorised over rows, with ``g <= 0`` meaning failure. A model of the
physical inputs is brought to this space with :func:`risk.uncertainty.normals_to_inputs`::

    g = lambda u: capacity_minus_demand(normals_to_inputs(joint, u))

Costs are counted in model evaluations (rows passed to ``g``) and in calls of ``g``.

References
----------
Hasofer, A.M. & Lind, N.C. (1974). Exact and invariant second-moment code format. J. Eng. Mech.
Div. ASCE 100(EM1), 111–121.
Rackwitz, R. & Fiessler, B. (1978). Structural reliability under combined random load
sequences. Computers & Structures 9(5), 489–494.
Zhang, Y. & Der Kiureghian, A. (1995). Two improved algorithms for reliability analysis. In
Reliability and Optimization of Structural Systems, Proc. 6th IFIP WG 7.5, 297–304 (from
memory).
Breitung, K. (1984). Asymptotic approximations for multinormal integrals. J. Eng. Mech. ASCE
110(3), 357–366.
Melchers, R.E. & Beck, A.T. (2018). Structural Reliability Analysis and Prediction, 3rd ed.,
Wiley: ch. 5 (FORM/SORM) and ch. 3 (importance sampling) (from memory).
Owen, A. & Zhou, Y. (2000). Safe and effective importance sampling. J. Am. Stat. Assoc.
95(449), 135–143 (importance sampling with control variates).
Au, S.-K. & Beck, J.L. (2001). Estimation of small failure probabilities in high dimensions by
subset simulation. Prob. Eng. Mech. 16(4), 263–277.
Papaioannou, I., Betz, W., Zwirglmaier, K. & Straub, D. (2015). MCMC algorithms for subset
simulation. Prob. Eng. Mech. 41, 89–103 (conditional sampling in standard-normal space).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from scipy import special as sc

__all__ = [
    "FormResult",
    "ISResult",
    "LimitState",
    "SormResult",
    "SubsetResult",
    "compare",
    "form",
    "importance_sampling",
    "importance_sampling_cv",
    "sorm_breitung",
    "subset_simulation",
    "cv_estimate",
    "CV_OFFSETS",
]

FloatArray = NDArray[np.float64]
LimitState = Callable[[FloatArray], FloatArray]


@dataclass(frozen=True, eq=False)
class FormResult:
    """Outcome of :func:`form`.

    Attributes
    ----------
    beta : float
        Reliability index [-]: ``alpha . u*``, negative when the origin lies in the failure
        domain.
    design_point : ndarray (d,)
        Most probable failure point ``u*`` in standard-normal space [-].
    alpha : ndarray (d,)
        Unit vector ``-grad g / |grad g|`` at ``u*`` (points toward failure) [-].
    pf : float
        ``Phi(-beta)`` [-].
    gradient : ndarray (d,)
        ``grad g`` at ``u*`` [unit of g].
    n_evals : int
        Rows passed to ``g`` (model evaluations) [-].
    n_calls : int
        Calls of ``g`` [-].
    n_iter : int
        Iterations [-].
    converged : bool
        Whether both convergence criteria were met.
    message : str
        Why the iteration stopped.
    """

    beta: float
    design_point: FloatArray
    alpha: FloatArray
    pf: float
    gradient: FloatArray
    n_evals: int
    n_calls: int
    n_iter: int
    converged: bool
    message: str = ""

    @property
    def importance(self) -> FloatArray:
        """FORM importance factors ``alpha_i^2`` (sum to one) [-]."""
        return np.asarray(self.alpha**2)


@dataclass(frozen=True, eq=False)
class SormResult:
    """Outcome of :func:`sorm_breitung`.

    Attributes
    ----------
    pf : float
        Breitung's probability of failure [-]; NaN where the formula does not apply
        (``1 + beta kappa_i <= 0``).
    curvatures : ndarray (d - 1,)
        Principal curvatures of the limit-state surface at the design point [1/unit of u],
        positive when the surface bends away from the origin (smaller failure domain).
    n_evals : int
        Model evaluations used for the curvatures [-].
    """

    pf: float
    curvatures: FloatArray
    n_evals: int


class _Counter:
    """Wraps ``g``: checks its output and counts rows and calls."""

    def __init__(self, g: LimitState, d: int) -> None:
        self.g, self.d, self.evals, self.calls = g, d, 0, 0

    def __call__(self, u: FloatArray) -> FloatArray:
        u2 = np.atleast_2d(np.asarray(u, dtype=float))
        out = np.asarray(self.g(u2), dtype=float).reshape(-1)
        if out.shape[0] != u2.shape[0]:
            raise ValueError(f"g returned {out.shape[0]} values for {u2.shape[0]} rows")
        self.evals += u2.shape[0]
        self.calls += 1
        return out


def _value_and_gradient(gc: _Counter, u: FloatArray, step: float,
                        g_known: float | None = None) -> tuple[float, FloatArray]:
    """g(u) and its central-difference gradient in one vectorised call (2 d + 1 rows, or 2 d
    when ``g(u)`` is already known)."""
    d = u.size
    pts = np.repeat(u[None, :], 2 * d + 1, axis=0)
    pts[1:d + 1] += step * np.eye(d)
    pts[d + 1:] -= step * np.eye(d)
    if g_known is None:
        vals = gc(pts)
    else:
        vals = np.concatenate([[g_known], gc(pts[1:])])
    return float(vals[0]), (vals[1:d + 1] - vals[d + 1:]) / (2.0 * step)


def form(g: LimitState, d: int, *, u0: NDArray[np.float64] | None = None, tol: float = 1e-6,
         max_iter: int = 100, step: float = 1e-3) -> FormResult:
    """First-order reliability method with the improved HL-RF iteration (iHL-RF).

    Finds the design point ``u*`` (the point of ``g = 0`` closest to the origin) by the HL-RF
    direction (Hasofer & Lind 1974; Rackwitz & Fiessler 1978) with the Armijo line search on
    the merit function ``m(u) = |u|^2/2 + c |g(u)|``, ``c = 2 |u|/|grad g| + 10``, of Zhang &
    Der Kiureghian (1995; the constant ``c`` as in common practice). Exact for a linear limit
    state: ``pf = Phi(-beta)`` (Hasofer & Lind 1974).

    Parameters
    ----------
    g : callable (n, d) -> (n,)
        Limit state in independent standard-normal space [any unit]; ``g <= 0`` is failure.
    d : int
        Dimension [-].
    u0 : ndarray (d,), optional
        Starting point [-] (default the origin). Start elsewhere when ``grad g`` vanishes at
        the origin.
    tol : float
        Convergence tolerance [-] on both ``|g(u)| / max(|g(u_start)|, |grad g(u_start)|)``
        and the distance of ``u``
        from the line along ``alpha`` (``|u - (alpha . u) alpha|``).
    max_iter : int
        Iteration limit [-].
    step : float
        Central finite-difference step [-] (truncation error ~ step^2).

    Returns
    -------
    FormResult
        Also when not converged (``converged`` False, ``message`` says why).

    References
    ----------
    See the module docstring.
    """
    if d < 1:
        raise ValueError("d must be >= 1")
    gc = _Counter(g, d)
    u = np.zeros(d) if u0 is None else np.array(u0, dtype=float).reshape(d)
    gu, grad = _value_and_gradient(gc, u, step)
    # |g| is judged against its start value or the change of g over one standard deviation,
    # whichever is larger (a start on the surface has |g| ~ 0, which would never converge)
    g0 = abs(gu) if math.isfinite(gu) else 0.0
    gn0 = float(np.linalg.norm(grad)) if np.isfinite(grad).all() else 0.0
    scale = max(g0, gn0) if max(g0, gn0) > 0.0 else 1.0
    converged, message, n_iter = False, f"no convergence in {max_iter} iterations", 0
    for n_iter in range(1, max_iter + 1):  # noqa: B007 (reported below)
        gnorm = float(np.linalg.norm(grad))
        if not (math.isfinite(gu) and np.isfinite(grad).all()):
            message = "g or its gradient is not finite"
            break
        if gnorm == 0.0:
            message = "zero gradient of g (start the search elsewhere with u0)"
            break
        alpha = -grad / gnorm
        off_line = float(np.linalg.norm(u - (alpha @ u) * alpha))
        if abs(gu) / scale <= tol and off_line <= tol * max(1.0, float(np.linalg.norm(u))):
            converged, message = True, "converged"
            break
        # HL-RF point and search direction.
        direction = ((grad @ u - gu) / gnorm**2) * grad - u
        c = 2.0 * float(np.linalg.norm(u)) / gnorm + 10.0
        merit = 0.5 * float(u @ u) + c * abs(gu)
        slope = float((u + c * np.sign(gu) * grad) @ direction)  # directional derivative
        lam, accepted = 1.0, False
        for _ in range(30):
            trial = u + lam * direction
            g_trial = float(gc(trial[None, :])[0])
            m_trial = 0.5 * float(trial @ trial) + c * abs(g_trial)
            if math.isfinite(m_trial) and m_trial - merit <= 0.5 * lam * min(slope, 0.0):
                accepted = True
                break
            lam *= 0.5
        if not accepted:
            message = "line search failed (g may be discontinuous or noisy)"
            break
        g_new, grad_new = _value_and_gradient(gc, trial, step, g_trial)
        # A step onto a plateau of g (zero gradient, e.g. "fails with no drawdown") leaves
        # HL-RF without a direction: step back towards u until the gradient returns.
        for _ in range(12):
            if np.any(grad_new != 0.0) or not math.isfinite(g_new):
                break
            lam *= 0.5
            trial = u + lam * direction
            g_new, grad_new = _value_and_gradient(gc, trial, step)
        u, gu, grad = trial, g_new, grad_new
    gnorm = float(np.linalg.norm(grad))
    alpha = -grad / gnorm if gnorm > 0 and np.isfinite(grad).all() else np.full(d, np.nan)
    beta = float(alpha @ u)
    return FormResult(beta=beta, design_point=u, alpha=alpha, pf=float(sc.ndtr(-beta)),
                      gradient=np.asarray(grad), n_evals=gc.evals, n_calls=gc.calls,
                      n_iter=n_iter, converged=converged, message=message)


def _rotation(alpha: FloatArray) -> FloatArray:
    """Orthonormal R (d, d) whose last row is ``alpha`` (Gram–Schmidt by QR)."""
    d = alpha.size
    m = np.eye(d)
    k = int(np.argmax(np.abs(alpha)))
    cols = [alpha] + [m[:, i] for i in range(d) if i != k]
    q, _ = np.linalg.qr(np.column_stack(cols))
    q[:, 0] *= np.sign(q[:, 0] @ alpha)
    return np.vstack([q[:, 1:].T, q[:, 0]])


# Breitung's factors 1 + beta kappa at or below this count as zero: the curvature from central
# differences carries a rounding error of about eps |g| / step^2 ~ 1e-11 (derived), far below.
_SORM_FACTOR_TOL = 1e-6


def sorm_breitung(g: LimitState, form_result: FormResult, *, step: float = 1e-2) -> SormResult:
    """Second-order correction of FORM by Breitung's asymptotic formula.

    ``pf = Phi(-beta) prod_i (1 + beta kappa_i)^(-1/2)`` (Breitung 1984, eq. 21), with
    ``kappa_i`` the principal curvatures of ``g = 0`` at the design point: eigenvalues of
    ``(R H R^T)_{d-1} / |grad g|``, ``H`` the Hessian of ``g`` at ``u*`` by central finite
    differences in the rotated frame (last axis along ``alpha``), evaluated in one vectorised
    call of ``2 (d-1)^2 + 1`` rows. Asymptotically exact as ``beta -> inf`` with fixed
    curvatures; NaN when some ``1 + beta kappa_i <= 1e-6`` (the surface wraps around the origin,
    e.g. a sphere centred on it: the design point is not unique and the formula breaks down).

    Parameters
    ----------
    g : callable (n, d) -> (n,)
        The limit state given to :func:`form`.
    form_result : FormResult
        A converged FORM result.
    step : float
        Finite-difference step in standard-normal space [-].

    References
    ----------
    Breitung, K. (1984), see the module docstring. Der Kiureghian, A. (2005), First- and
    second-order reliability methods, in Engineering Design Reliability Handbook, ch. 14,
    CRC Press (curvature from the rotated Hessian — from memory).
    """
    u = np.asarray(form_result.design_point, dtype=float)
    d = u.size
    beta = form_result.beta
    if d == 1:
        return SormResult(form_result.pf, np.empty(0), 0)
    r = _rotation(np.asarray(form_result.alpha))
    m = d - 1
    offsets = [np.zeros(d)]
    for i in range(m):
        offsets += [step * r[i], -step * r[i]]
    for i in range(m):
        for j in range(i + 1, m):
            for si in (1.0, -1.0):
                for sj in (1.0, -1.0):
                    offsets.append(step * (si * r[i] + sj * r[j]))
    gc = _Counter(g, d)
    vals = gc(u[None, :] + np.array(offsets))
    g0 = vals[0]
    hess = np.empty((m, m))
    pos = 1
    for i in range(m):
        hess[i, i] = (vals[pos] - 2.0 * g0 + vals[pos + 1]) / step**2
        pos += 2
    for i in range(m):
        for j in range(i + 1, m):
            pp, pm, mp, mm = vals[pos:pos + 4]
            hess[i, j] = hess[j, i] = (pp - pm - mp + mm) / (4.0 * step**2)
            pos += 4
    gnorm = float(np.linalg.norm(form_result.gradient))
    kappa = np.linalg.eigvalsh(hess / gnorm)
    factors = 1.0 + beta * kappa
    # A factor at zero within the finite-difference error (a sphere about the origin gives
    # 2e-12 instead of 0) is a breakdown too, and a "probability" above 1 is never returned.
    if (factors <= _SORM_FACTOR_TOL).any() or not np.isfinite(factors).all():
        pf = math.nan
    else:
        pf = float(sc.ndtr(-beta) * np.prod(factors ** -0.5))
        if not pf <= 1.0:
            pf = math.nan
    return SormResult(pf, np.asarray(kappa), gc.evals)


def importance_sampling(g: LimitState, design_point: NDArray[np.float64], n: int,
                        rng: np.random.Generator) -> tuple[float, float]:
    """Importance sampling with a unit normal density centred at the design point.

    ``pf = mean(1[g(v) <= 0] w(v))``, ``v ~ N(u*, I)``,
    ``w(v) = phi(v)/phi(v - u*) = exp(-v . u* + |u*|^2 / 2)`` (Melchers & Beck 2018, ch. 3;
    Rubinstein & Kroese 2016 — from memory). Unbiased for any ``u*``; efficient when the
    failure domain is concentrated near one design point.

    Parameters
    ----------
    g : callable (n, d) -> (n,)
        Limit state in standard-normal space; one call with ``n`` rows.
    design_point : ndarray (d,)
        Centre of the sampling density [-] (``FormResult.design_point``).
    n : int
        Number of samples [-], >= 2.
    rng : numpy.random.Generator
        Source of the normal draws.

    Returns
    -------
    pf : float
        Estimated probability of failure [-].
    cov : float
        Its coefficient of variation, the sample standard error over ``pf`` [-]
        (``inf`` when no sample failed).
    """
    if n < 2:
        raise ValueError("n must be >= 2")
    c = np.asarray(design_point, dtype=float).reshape(-1)
    v = c + rng.standard_normal((n, c.size))
    gv = np.asarray(g(v), dtype=float).reshape(-1)
    if gv.shape[0] != n:
        raise ValueError(f"g returned {gv.shape[0]} values for {n} rows")
    w = np.exp(-(v @ c) + 0.5 * float(c @ c))
    terms = np.where(gv <= 0.0, w, 0.0)
    pf = float(terms.mean())
    if pf == 0.0:
        return 0.0, math.inf
    cov = float(terms.std(ddof=1) / math.sqrt(n) / pf)
    return pf, cov


def compare(form_result: FormResult, pf_sorm: float, pf_is: float, cov_is: float, *,
            z: float = 3.0, rel_tol: float = 0.1, sorm_skipped: bool = False) -> str | None:
    """Diagnostic text when FORM, SORM and importance sampling disagree, else ``None``.

    Importance sampling is the reference: its band is ``pf_is (1 +- z cov_is)``. FORM and
    SORM are approximations without an error estimate; they are flagged when they lie outside
    the band widened by the relative allowance ``rel_tol`` (the SORM errors measured on curved
    cases were +3.6%/+0.4%, FORM's +54%/-36%; docs/derivations.md, sec. 7).

    Parameters
    ----------
    form_result : FormResult
    pf_sorm : float
        :attr:`SormResult.pf` [-] (NaN if not applicable).
    pf_is, cov_is : float
        :func:`importance_sampling` estimate and coefficient of variation [-].
    z : float
        Width of the sampling band in standard errors [-].
    rel_tol : float
        Allowance for the approximation error of FORM and SORM [-].
    sorm_skipped : bool
        SORM was not run (its NaN is then no breakdown of the formula).
    """
    notes: list[str] = []
    if not form_result.converged:
        notes.append(f"FORM did not converge ({form_result.message}).")
    if not math.isfinite(pf_sorm) and not sorm_skipped:
        notes.append("SORM (Breitung) does not apply: a principal curvature makes "
                     "1 + beta kappa <= 0; the failure surface wraps around the origin and the "
                     "design point may not be unique.")
    if pf_is <= 0.0 or not math.isfinite(cov_is) or cov_is > 0.3:
        notes.append(f"Importance sampling is unreliable (pf {pf_is:.3g}, cov {cov_is:.3g}); "
                     "use more samples or check for several design points.")
        reference_ok = False
    else:
        reference_ok = True
    if reference_ok:
        lo = pf_is * (1.0 - z * cov_is) * (1.0 - rel_tol)
        hi = pf_is * (1.0 + z * cov_is) * (1.0 + rel_tol)
        for name, value in (("FORM", form_result.pf), ("SORM", pf_sorm)):
            if math.isfinite(value) and not lo <= value <= hi:
                notes.append(
                    f"{name} gives {value:.3g} but importance sampling {pf_is:.3g} "
                    f"(band {lo:.3g} to {hi:.3g}, cov {cov_is:.2g}): the limit state is "
                    "curved or has several design points; prefer importance sampling when its "
                    "cov is small and the design point is unique.")
    return " ".join(notes) if notes else None


@dataclass(frozen=True, eq=False)
class ISResult:
    """Outcome of :func:`importance_sampling_cv`.

    Attributes
    ----------
    pf, cov : float
        Estimate [-] and its coefficient of variation [-] (``inf`` when nothing failed).
    n_evals : int
        Model evaluations [-].
    converged : bool
        Whether ``cov`` reached the target within the budget.
    points : ndarray (n, d)
        The sample points in standard-normal space [-].
    values : ndarray (n,)
        ``g`` at the points [unit of g].
    weights : ndarray (n,)
        Likelihood ratios ``phi(v) / q(v)`` [-].
    """

    pf: float
    cov: float
    n_evals: int
    converged: bool
    points: FloatArray
    values: FloatArray
    weights: FloatArray


#: Offsets of the control hyperplanes ``alpha . v >= beta + delta`` from the FORM one [-]:
#: together they fit P(failure | alpha . v), which a curved surface spreads over a range.
CV_OFFSETS = (-1.0, -0.5, 0.0, 0.5, 1.0, 1.5)


def cv_estimate(fail: NDArray[np.bool_], weights: FloatArray, t: FloatArray, beta: float,
                offsets: tuple[float, ...] = CV_OFFSETS) -> tuple[float, float]:
    """Importance-sampling estimate with hyperplanes parallel to FORM's as control variates.

    ``pf = mean(w 1_g) - c . (mean(w Z) - mu)``, ``Z_k = 1[t >= beta + delta_k]`` with
    ``t = alpha . v`` and exact means ``mu_k = Phi(-(beta + delta_k))``, ``c`` the least-squares
    coefficients of ``w 1_g`` on ``w Z`` (control variates in importance sampling: Owen & Zhou
    2000). Unbiased for fixed ``c``; with ``c`` estimated the bias is O(1/n). Zero variance
    when ``g`` is linear (``1_g`` is the ``delta = 0`` control); on a curved surface the set of
    offsets fits ``P(failure | t)`` and leaves only the spread across ``alpha``.

    Parameters
    ----------
    fail : ndarray of bool (n,)
        ``g(v) <= 0``.
    weights : ndarray (n,)
        ``phi(v) / q(v)`` [-].
    t : ndarray (n,)
        ``alpha . v`` [-].
    beta : float
        Offset of the FORM hyperplane [-].
    offsets : tuple of float
        ``delta_k`` [-].

    Returns
    -------
    pf : float
        Estimate [-], floored at 0.
    cov : float
        Its coefficient of variation [-] (``inf`` when the estimate is 0).
    """
    n = weights.size
    if n < 2:
        raise ValueError("need at least 2 samples")
    y = np.where(fail, weights, 0.0)
    b = beta + np.asarray(offsets, dtype=float)
    z = np.where(t[:, None] >= b[None, :], weights[:, None], 0.0) - sc.ndtr(-b)[None, :]
    keep = np.ptp(z, axis=0) > 0.0
    if keep.any() and n > int(keep.sum()) + 1:
        zk = z[:, keep]
        zc = zk - zk.mean(axis=0)
        coef, *_ = np.linalg.lstsq(zc, y - y.mean(), rcond=None)
        r = y - zk @ coef
    else:
        r = y
    pf = float(r.mean())
    if pf <= 0.0 or not math.isfinite(pf):
        return max(pf, 0.0) if math.isfinite(pf) else math.nan, math.inf
    return pf, float(r.std(ddof=1) / math.sqrt(n) / pf)


def importance_sampling_cv(g: LimitState, form_result: FormResult, rng: np.random.Generator,
                           *, cov_target: float = 0.1, first: int = 200, batch: int = 50,
                           max_evals: int = 4096) -> ISResult:
    """Importance sampling at the design point, with a control variate and a stopping rule.

    Draws ``v ~ N(c, I)`` in batches, ``c`` the FORM design point, weights
    ``phi(v)/phi(v - c)`` (Melchers & Beck 2018, ch. 3), and estimates ``pf`` by
    :func:`cv_estimate` with hyperplanes parallel to FORM's as control variates (exact means
    ``Phi(-beta - delta)``; Owen & Zhou 2000). Stops as soon as at least ``first`` samples are
    drawn and the estimated coefficient of variation is at most ``cov_target``, or at
    ``max_evals``. When half the budget is spent without reaching the target, the centre moves
    once to the weighted mean of the failing samples (a cross-entropy step for a Gaussian with
    unit covariance; Rubinstein & Kroese 2004, The Cross-Entropy Method, Springer, ch. 3 — from
    memory); the estimate stays unbiased because every sample keeps the weight of the density it
    was drawn from.

    Parameters
    ----------
    g : callable (n, d) -> (n,)
        Limit state in standard-normal space [any unit]; ``g <= 0`` is failure.
    form_result : FormResult
        A FORM result with a finite design point and ``alpha``.
    rng : numpy.random.Generator
        Source of the normal draws.
    cov_target : float
        Stopping coefficient of variation [-], > 0.
    first, batch : int
        Size of the first batch and of the later ones [-], >= 2.
    max_evals : int
        Budget in model evaluations [-], >= first.
    """
    if not cov_target > 0.0:
        raise ValueError("cov_target must be > 0")
    if first < 2 or batch < 2 or max_evals < first:
        raise ValueError("need first >= 2, batch >= 2 and max_evals >= first")
    centre = np.asarray(form_result.design_point, dtype=float).reshape(-1)
    alpha = np.asarray(form_result.alpha, dtype=float).reshape(-1)
    if not (np.isfinite(centre).all() and np.isfinite(alpha).all()):
        raise ValueError("the FORM result has no finite design point")
    beta = float(form_result.beta)
    gc = _Counter(g, centre.size)
    pts: list[FloatArray] = []
    vals: list[FloatArray] = []
    wts: list[FloatArray] = []
    pf, cov, moved = math.nan, math.inf, False
    while gc.evals < max_evals:
        m = min(first if not pts else batch, max_evals - gc.evals)
        if m < 1:
            break
        v = centre + rng.standard_normal((m, centre.size))
        pts.append(v)
        vals.append(gc(v))
        wts.append(np.exp(-(v @ centre) + 0.5 * float(centre @ centre)))
        allv, allg, allw = np.vstack(pts), np.concatenate(vals), np.concatenate(wts)
        pf, cov = cv_estimate(allg <= 0.0, allw, allv @ alpha, beta)
        if cov <= cov_target:
            break
        if not moved and gc.evals >= max_evals // 2:
            fail = allg <= 0.0
            if fail.any():
                centre = (allw[fail] @ allv[fail]) / float(allw[fail].sum())
            moved = True
    return ISResult(pf, cov, gc.evals, cov <= cov_target, np.vstack(pts),
                    np.concatenate(vals), np.concatenate(wts))


@dataclass(frozen=True, eq=False)
class SubsetResult:
    """Outcome of :func:`subset_simulation`.

    Attributes
    ----------
    pf, cov : float
        Estimate [-] and its approximate coefficient of variation [-] (Au & Beck 2001, eqs.
        29–30, with the correlation of each level's chains).
    n_evals : int
        Model evaluations [-].
    thresholds : ndarray (levels,)
        Intermediate thresholds of ``g`` [unit of g] (the last is 0).
    values : ndarray (n,)
        ``g`` at the samples of the last level [unit of g].
    level_p : float
        Probability of the last level's conditional region, ``p0^(levels-1)`` [-].
    levels : tuple of (float, ndarray)
        Every level's probability ``P_j`` and its samples' ``g``: for ``y`` at or below the
        level's threshold, ``P(g <= y) ~ P_j mean(g_j <= y)``.
    """

    pf: float
    cov: float
    n_evals: int
    thresholds: FloatArray
    values: FloatArray
    level_p: float
    levels: tuple[tuple[float, FloatArray], ...] = ()

    def quantile(self, p: float) -> float:
        """The ``p``-quantile of ``g`` from the deepest level with ``P_j >= p`` [unit of g]."""
        usable = [(pj, gj) for pj, gj in self.levels if pj >= p]
        if not usable:
            return math.nan
        pj, gj = usable[-1]
        return float(np.quantile(gj, min(p / pj, 1.0), method="inverted_cdf"))

    def cdf(self, y: float) -> float:
        """``P(g <= y)`` from the deepest level whose region contains ``y`` [-]."""
        out = math.nan
        for j, (pj, gj) in enumerate(self.levels):
            if j == 0 or y <= self.thresholds[j - 1]:
                out = pj * float(np.mean(gj <= y))
        return out


def _chain_gamma(ind: NDArray[np.bool_], p: float) -> float:
    """Au & Beck (2001) eq. 29: gamma from the indicator autocorrelation of the chains
    (ind has shape (chain length, chains))."""
    ns, _ = ind.shape
    var = p * (1.0 - p)
    if ns < 2 or var <= 0.0:
        return 0.0
    x = ind.astype(float)
    gamma = 0.0
    for tau in range(1, ns):
        r = float(np.mean(x[:-tau] * x[tau:])) - p * p
        gamma += 2.0 * (1.0 - tau / ns) * r / var
    return max(gamma, 0.0)


def subset_simulation(g: LimitState, d: int, rng: np.random.Generator, *, n: int = 500,
                      p0: float = 0.1, rho: float = 0.8, max_levels: int = 10,
                      stop_p: float = 0.0) -> SubsetResult:
    """Subset simulation (Au & Beck 2001) for ``P(g <= 0)``, for failure domains that one design
    point does not describe (several design points, strong curvature).

    Level 0 is plain Monte Carlo with ``n`` samples; each level fixes the threshold at the
    ``p0`` quantile of ``g`` and grows ``n p0`` Markov chains of length ``1/p0`` from the
    samples below it, by conditional sampling in standard-normal space
    ``v' = rho v + sqrt(1 - rho^2) xi`` (accepted when ``g(v')`` is below the threshold; this
    proposal leaves the standard normal invariant, Papaioannou et al. 2015).

    Parameters
    ----------
    g : callable (n, d) -> (n,)
        Limit state in standard-normal space [any unit].
    d : int
        Dimension [-].
    rng : numpy.random.Generator
    n : int
        Samples per level [-]; ``n p0`` must be a whole number >= 1.
    p0 : float
        Level probability [-], in (0, 0.5].
    rho : float
        Correlation of the conditional sampling proposal [-], in [0, 1).
    max_levels : int
        At most this many levels [-] (the estimate is then a bound, cov inf).
    stop_p : float
        Also stop once the next level's probability would fall below ``stop_p`` [-]: the
        levels then resolve the ``stop_p`` quantile of ``g`` (:meth:`SubsetResult.quantile`);
        ``pf`` is then the last level's estimate of ``P(g <= 0)`` if 0 lies within it.
    """
    n_seeds = round(n * p0)
    if not (0.0 < p0 <= 0.5) or n_seeds < 1 or abs(n_seeds - n * p0) > 1e-9:
        raise ValueError("p0 must be in (0, 0.5] with n * p0 a whole number >= 1")
    if not 0.0 <= rho < 1.0:
        raise ValueError("rho must be in [0, 1)")
    gc = _Counter(g, d)
    v = rng.standard_normal((n, d))
    gv = gc(v)
    chains: FloatArray | None = None  # g of the current level's chains (length, chains)
    thresholds: list[float] = []
    levels: list[tuple[float, FloatArray]] = []
    p_level, delta2 = 1.0, 0.0
    chain_len = n // n_seeds
    for _ in range(max_levels):
        levels.append((p_level, gv.copy()))
        order = np.argsort(gv, kind="stable")
        b = max(float(gv[order[n_seeds - 1]]), 0.0)
        p_cond = float(np.mean(gv <= b))
        gamma = 0.0 if chains is None else _chain_gamma(chains <= b, p_cond)
        if p_cond > 0.0:
            delta2 += (1.0 - p_cond) / (p_cond * n) * (1.0 + gamma)
        thresholds.append(b)
        if b <= 0.0 or p_level * p_cond <= stop_p * (1.0 + 1e-9):
            p_last = float(np.mean(gv <= 0.0))
            pf = p_level * p_last
            cov = math.sqrt(delta2) if pf > 0 else math.inf
            return SubsetResult(pf, cov, gc.evals, np.asarray(thresholds), gv, p_level,
                                tuple(levels))
        p_level *= p_cond
        seeds = order[:n_seeds]
        cur, gcur = v[seeds].copy(), gv[seeds].copy()
        states = np.empty((chain_len, n_seeds, d))
        gvals = np.empty((chain_len, n_seeds))
        for k in range(chain_len):
            states[k], gvals[k] = cur, gcur
            if k == chain_len - 1:
                break
            cand = rho * cur + math.sqrt(1.0 - rho * rho) * rng.standard_normal(cur.shape)
            gcand = gc(cand)
            ok = gcand <= b
            cur = np.where(ok[:, None], cand, cur)
            gcur = np.where(ok, gcand, gcur)
        v, gv, chains = states.reshape(-1, d), gvals.reshape(-1), gvals
    levels.append((p_level, gv.copy()))
    return SubsetResult(p_level, math.inf, gc.evals, np.asarray(thresholds), gv, p_level,
                        tuple(levels))
