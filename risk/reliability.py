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

Importance sampling with control variates and a stopping rule, and subset simulation:
:mod:`risk.rare_events`.
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
    "LimitState",
    "SormResult",
    "compare",
    "form",
    "importance_sampling",
    "sorm_breitung",
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
                        g_known: float | None = None, *, forward: bool = False
                        ) -> tuple[float, FloatArray]:
    """g(u) and its finite-difference gradient in one vectorised call: central (2 d + 1 rows,
    or 2 d when ``g(u)`` is already known) or forward (d + 1, or d)."""
    d = u.size
    if forward:
        pts = np.repeat(u[None, :], d + 1, axis=0)
        pts[1:] += step * np.eye(d)
        vals = gc(pts) if g_known is None else np.concatenate([[g_known], gc(pts[1:])])
        return float(vals[0]), (vals[1:] - vals[0]) / step
    pts = np.repeat(u[None, :], 2 * d + 1, axis=0)
    pts[1:d + 1] += step * np.eye(d)
    pts[d + 1:] -= step * np.eye(d)
    if g_known is None:
        vals = gc(pts)
    else:
        vals = np.concatenate([[g_known], gc(pts[1:])])
    return float(vals[0]), (vals[1:d + 1] - vals[d + 1:]) / (2.0 * step)


def form(g: LimitState, d: int, *, u0: NDArray[np.float64] | None = None, tol: float = 1e-6,
         max_iter: int = 100, step: float = 1e-3, forward: bool = False) -> FormResult:
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
        Finite-difference step [-] (truncation error ~ step^2 central, ~ step forward).
    forward : bool
        Forward differences (d + 1 model runs per gradient instead of 2 d + 1).

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
    gu, grad = _value_and_gradient(gc, u, step, forward=forward)
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
        g_new, grad_new = _value_and_gradient(gc, trial, step, g_trial, forward=forward)
        # A step onto a plateau of g (zero gradient, e.g. "fails with no drawdown") leaves
        # HL-RF without a direction: step back towards u until the gradient returns.
        for _ in range(12):
            if np.any(grad_new != 0.0) or not math.isfinite(g_new):
                break
            lam *= 0.5
            trial = u + lam * direction
            g_new, grad_new = _value_and_gradient(gc, trial, step, forward=forward)
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
