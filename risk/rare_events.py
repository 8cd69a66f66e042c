"""Rare-event estimators beyond FORM/SORM: importance sampling with control variates and a
stopping rule, and subset simulation.

Same conventions as :mod:`risk.reliability`: a limit state ``g(u)`` of independent standard
normals (n, d) -> (n,), ``g <= 0`` failure, costs counted in rows passed to ``g``.

References
----------
Melchers, R.E. & Beck, A.T. (2018). Structural Reliability Analysis and Prediction, 3rd ed.,
Wiley: ch. 3 (importance sampling) (from memory).
Owen, A. & Zhou, Y. (2000). Safe and effective importance sampling. J. Am. Stat. Assoc.
95(449), 135–143 (importance sampling with control variates).
Rubinstein, R.Y. & Kroese, D.P. (2004). The Cross-Entropy Method. Springer (from memory).
Au, S.-K. & Beck, J.L. (2001). Estimation of small failure probabilities in high dimensions by
subset simulation. Prob. Eng. Mech. 16(4), 263–277.
Papaioannou, I., Betz, W., Zwirglmaier, K. & Straub, D. (2015). MCMC algorithms for subset
simulation. Prob. Eng. Mech. 41, 89–103 (conditional sampling in standard-normal space).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from scipy import special as sc

from risk.reliability import FormResult, LimitState, _Counter

__all__ = ["CV_OFFSETS", "ISResult", "SubsetResult", "cv_estimate", "importance_sampling_cv",
           "subset_simulation"]

FloatArray = NDArray[np.float64]


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
