"""Small accepted risks: the drawdown limit and its probability by FORM, SORM and importance
sampling.

Plain sampling needs about (1 - p)/(p 0.1^2) runs to resolve a probability p to 10% (66,000 at
p = 1.5e-3; derived, docs/derivations.md, sec. 6). For accepted risks of 1% or less the
orchestrator therefore also runs, for each mechanism and stage, the reliability methods on the
limit state ``g(xi) = min(D_c(x(xi)), p_r) - D`` in the independent standard-normal space
behind the copula (``g <= 0``: failure at drawdown D):

- FORM (improved HL-RF, :func:`risk.reliability.form`) from a robust start: the failing sample
  of the run nearest the limit surface (``g`` closest to 0 among the failing samples), then the
  most probable sample near the surface, then the median point; samples on a plateau of the
  critical drawdown (0 = "fails with no drawdown", p_r = "never": zero gradient) are never
  used as starts, and the next start is tried when FORM does not converge;
- SORM (Breitung 1984) from the curvatures at the design point;
- importance sampling at the design point with the FORM hyperplane as control variate and a
  stopping rule on its coefficient of variation (:func:`risk.rare_events.importance_sampling_cv`);
- subset simulation (Au & Beck 2001) where FORM finds no design point from any start.

**Which limit is reported.** The sampled quantile stands when sampling resolves it: at least
``N_RESOLVE`` = 100 samples at or below it (relative standard error of the sampled probability
at most 10%, sec. 6). Otherwise the limit is the root of ``P(D_c <= D) = accepted risk`` along
D, solved from the reliability estimate: FORM gives ``beta(D)`` with
``d beta / d D = -1/|grad g|`` (the design point moves along alpha; Madsen, Krenk & Lind 1986,
Methods of Structural Safety, sec. 6 — from memory), one Newton step per FORM run; importance
sampling around the design point then gives ``P(D_c <= D)`` for every D from the same weighted
samples, and its root is found by bisection. The method named in the result is importance
sampling when it reached its coefficient-of-variation target, else SORM, else FORM.

References
----------
See :mod:`risk.reliability` (Hasofer & Lind 1974; Zhang & Der Kiureghian 1995; Breitung 1984)
and :mod:`risk.rare_events` (Owen & Zhou 2000; Au & Beck 2001; Rubinstein & Kroese 2004).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np
from numpy.typing import NDArray
from scipy import special as sc
from scipy import stats

from risk.rare_events import cv_estimate, importance_sampling_cv, subset_simulation
from risk.reliability import FormResult, compare, form, sorm_breitung

Array = NDArray[np.float64]
Response = Callable[[Array], Array]

__all__ = ["SMALL_RISK", "N_RESOLVE", "IS_COV_TARGET", "IS_MAX_RUNS", "form_starts",
           "robust_form", "small_risk_limit", "sampling_resolves"]

SMALL_RISK = 0.01  #: accepted risks at or below this get the reliability methods
N_RESOLVE = 100  #: samples at or below the quantile for sampling to resolve it (10% error)
IS_COV_TARGET = 0.07  #: stopping coefficient of variation of importance sampling
#: SORM's Hessian takes 2 (d-1)^2 + 1 runs; above this it runs only when importance sampling
#: misses its target (it is then the fallback estimate)
SORM_MAX_RUNS = 150
IS_MAX_RUNS = 4096  #: importance-sampling budget per mechanism and stage
#: first batch of importance sampling: smaller ones stopped on a luckily low c.o.v. estimate
#: (measured relative RMSE 0.089 at 200, 0.082 at 300, 0.075 at 400 for a target of 0.07)
IS_FIRST = 300
SUBSET_RUNS = 500  #: samples per level of the subset-simulation fallback
FORM_TOL = 1e-3  #: FORM tolerance (importance sampling corrects the rest)
FORM_MAX_ITER = 40  #: FORM iterations per start (forward differences: d + 1 runs each)
D_FLOOR = 0.002  #: FORM levels at or above this share of p_r
_MAX_STARTS = 3
_NEAR = 20  # samples nearest the surface searched for the most probable one
_BETA_STEP_TOL = 0.5  # |beta - beta_target| above this: FORM again at the Newton point


def sampling_resolves(n_samples: int, accepted_risk: float) -> bool:
    """Whether ``n_samples`` resolve the ``accepted_risk`` quantile: ``n p >= N_RESOLVE``."""
    return n_samples * accepted_risk >= N_RESOLVE


def form_starts(xi: Array, dc: Array, *, drawdown: float, reservoir_pressure: float,
                ) -> list[Array]:
    """Starting points of FORM from the samples of the run, best first.

    Parameters
    ----------
    xi : ndarray (n, d)
        Independent standard normals of the samples [-].
    dc : ndarray (n,)
        Their critical drawdowns [MPa].
    drawdown : float
        D of the limit state [MPa].
    reservoir_pressure : float
        p_r [MPa]; ``D_c <= 0`` and ``D_c >= p_r`` are plateaus (no gradient) and never starts.

    Returns
    -------
    list of ndarray (d,)
        The failing sample with ``g`` closest to 0, the most probable of the ``_NEAR`` samples
        nearest the surface, and the origin (duplicates removed).
    """
    g = np.minimum(dc, reservoir_pressure) - drawdown
    off = (dc > 0.0) & (dc < reservoir_pressure) & np.isfinite(dc)
    out: list[Array] = []
    fail = np.nonzero(off & (g <= 0.0))[0]
    if fail.size:
        out.append(xi[fail[np.argmax(g[fail])]])
    cand = np.nonzero(off)[0]
    if cand.size:
        near = cand[np.argsort(np.abs(g[cand]), kind="stable")[:_NEAR]]
        out.append(xi[near[np.argmin(np.sum(xi[near] ** 2, axis=1))]])
    out.append(np.zeros(xi.shape[1]))
    unique: list[Array] = []
    for s in out:
        if not any(np.array_equal(s, t) for t in unique):
            unique.append(np.array(s, dtype=float))
    return unique


def _ok(fr: FormResult) -> bool:
    return bool(fr.converged and np.all(np.isfinite(fr.design_point))
                and np.any(fr.gradient != 0.0))


def robust_form(g: Callable[[Array], Array], d: int, starts: list[Array]
                ) -> tuple[FormResult | None, int, int]:
    """FORM from each start in turn until one converges with a gradient (multi-start).

    Returns
    -------
    result : FormResult or None
        The first converged result; None when no start converged.
    runs : int
        Model evaluations over all starts [-].
    tried : int
        Starts tried [-].
    """
    runs, tried = 0, 0
    for u0 in starts[:_MAX_STARTS]:
        fr = form(g, d, u0=u0, tol=FORM_TOL, forward=True, max_iter=FORM_MAX_ITER)
        runs += fr.n_evals
        tried += 1
        if _ok(fr):
            return fr, runs, tried
    return None, runs, tried


def _bisect(f: Callable[[float], float], lo: float, hi: float, target: float) -> float:
    """Smallest-bracket root of nondecreasing-ish ``f(D) = target`` on [lo, hi] [MPa]."""
    if f(lo) >= target:
        return lo
    if f(hi) < target:
        return hi
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        if f(mid) >= target:
            hi = mid
        else:
            lo = mid
        if hi - lo <= 1e-9 * max(1.0, hi):
            break
    return 0.5 * (lo + hi)


def _empty(drawdown: float, sampling_p: float, runs: int, note: str) -> dict[str, Any]:
    return {"drawdown": drawdown, "sampling_p": sampling_p, "beta": math.nan,
            "form_p": math.nan, "sorm_p": math.nan, "is_p": math.nan, "is_cov": math.nan,
            "converged": False, "importance": {}, "model_runs": runs,
            "runs": {"form": runs}, "limit": drawdown, "limit_method": "sampling",
            "limit_lower": None, "diagnostic": note}


def small_risk_limit(response: Response, names: tuple[str, ...], *, reservoir_pressure: float,
                     accepted_risk: float, sampled_limit: float, n_samples: int,
                     sampled_fraction: Callable[[float], float], xi_head: Array,
                     dc_head: Array, rng: np.random.Generator) -> dict[str, Any]:
    """The drawdown limit at a small accepted risk and the reliability estimates behind it.

    Parameters
    ----------
    response : callable (n, d) -> (n,)
        Critical drawdown of the mechanism at the stage [MPa] for independent standard normals
        (n, d) [-]; values above ``reservoir_pressure`` are capped here.
    names : tuple of str
        Input names (importance factors are reported by name).
    reservoir_pressure : float
        p_r of the stage [MPa].
    accepted_risk : float
        Accepted probability of failure [-], in (0, 1).
    sampled_limit : float
        The sampled ``accepted_risk`` quantile of the critical drawdown [MPa] (finite).
    n_samples : int
        Size of the sampling run [-].
    sampled_fraction : callable(D) -> float
        Sampled share failing at or below D [-].
    xi_head, dc_head : ndarray (m, d), (m,)
        Stored samples of the run and their critical drawdowns (FORM starts) [-], [MPa].
    rng : numpy.random.Generator
        For importance sampling and subset simulation.

    Returns
    -------
    dict (internal units): ``limit`` and ``limit_method`` ("sampling", "importance sampling",
    "SORM", "FORM", "subset simulation"), ``limit_lower`` (importance-sampling 95% lower
    bound or None),
    ``drawdown`` (where the probabilities are given: the limit), ``sampling_p``, ``beta``,
    ``form_p``, ``sorm_p``, ``is_p``, ``is_cov``, ``converged``, ``importance``,
    ``model_runs`` and ``runs`` by method, ``starts`` tried, and a ``diagnostic`` or None.
    """
    p_r = float(reservoir_pressure)
    d = len(names)
    resolved = sampling_resolves(n_samples, accepted_risk) and 0.0 < sampled_limit < p_r
    solve = not sampling_resolves(n_samples, accepted_risk)
    # FORM runs at D >= d_min, clear of the kink where the "fails with no drawdown" plateau
    # begins (importance sampling then resolves P(D_c <= D) down to D = 0)
    d_min = D_FLOOR * p_r
    if sampled_limit <= 0.0:
        # a zero limit stands when sampling shows P(D_c <= 0) above the accepted risk: at least
        # k0 failures at zero drawdown would have probability < 5% were it at the risk
        k0 = round(sampled_fraction(0.0) * n_samples)
        zero_sure = k0 >= 1 and float(stats.binom.sf(k0 - 1, n_samples, accepted_risk)) < 0.05
        solve = solve and not zero_sure
    if sampled_limit >= p_r or (not solve and sampled_limit <= 0.0):
        where = "failure with no drawdown" if sampled_limit <= 0.0 else (
            "no failure up to the full reservoir pressure")
        return _empty(min(max(sampled_limit, 0.0), p_r), sampled_fraction(sampled_limit), 0,
                      f"The drawdown limit lies on a plateau of the critical drawdown ({where})"
                      ": FORM, SORM and importance sampling were not run; the sampled value "
                      "stands.")
    d0 = min(max(sampled_limit, d_min), p_r * (1.0 - 1e-9))
    beta_t = float(-sc.ndtri(accepted_risk))

    def limit_state(level: float) -> Callable[[Array], Array]:
        def g(xi: Array) -> Array:
            return np.minimum(np.asarray(response(xi), dtype=float), p_r) - level
        return g

    starts = form_starts(xi_head, dc_head, drawdown=d0, reservoir_pressure=p_r)
    fr, form_runs, tried = robust_form(limit_state(d0), d, starts)
    if fr is None:  # no design point: subset simulation on the critical drawdown itself
        sus = subset_simulation(limit_state(0.0), d, rng, n=SUBSET_RUNS, stop_p=accepted_risk)
        if solve:
            at, method = min(max(sus.quantile(accepted_risk), 0.0), p_r), "subset simulation"
        else:
            at, method = sampled_limit, "sampling"
        out = _empty(at, sampled_fraction(at), form_runs + sus.n_evals,
                     f"FORM converged from none of {tried} starts (plateaus, kinks or several "
                     "design points); subset simulation (Au & Beck 2001) stands in for "
                     "importance sampling.")
        out.update(is_p=sus.cdf(at), is_cov=sus.cov, starts=tried, limit=at,
                   limit_method=method, sampled_limit=sampled_limit,
                   runs={"form": form_runs, "subset": sus.n_evals})
        return out
    level = d0
    for _ in range(3 if solve else 0):  # Newton steps in D on beta(D) = beta_target
        gnorm = float(np.linalg.norm(fr.gradient))
        if abs(fr.beta - beta_t) <= _BETA_STEP_TOL:
            break
        new = min(max(level - (beta_t - fr.beta) * gnorm, d_min), p_r * (1.0 - 1e-9))
        if new == level:
            break
        u0 = fr.design_point + (beta_t - fr.beta) * fr.alpha
        fr2, r2, _ = robust_form(limit_state(new), d, [u0])
        form_runs += r2
        if fr2 is None:
            break
        fr, level = fr2, new
    gnorm = float(np.linalg.norm(fr.gradient))
    if solve and abs(fr.beta - beta_t) > 1e-9:
        # the last small step without FORM: shift the design point along alpha to the Newton
        # point (exact for a linear limit state; importance sampling corrects the rest)
        new = min(max(level - (beta_t - fr.beta) * gnorm, d_min), p_r * (1.0 - 1e-9))
        shift = (level - new) / gnorm
        fr = FormResult(beta=fr.beta + shift, design_point=fr.design_point + shift * fr.alpha,
                        alpha=fr.alpha, pf=float(sc.ndtr(-(fr.beta + shift))),
                        gradient=fr.gradient, n_evals=fr.n_evals, n_calls=fr.n_calls,
                        n_iter=fr.n_iter, converged=fr.converged, message=fr.message)
        level = new
    g_level = limit_state(level)
    is_res = importance_sampling_cv(g_level, fr, rng, cov_target=IS_COV_TARGET,
                                    first=IS_FIRST, max_evals=IS_MAX_RUNS)
    sorm_cost = 2 * (d - 1) ** 2 + 1 if d > 1 else 0
    sorm_skipped = is_res.converged and sorm_cost > SORM_MAX_RUNS
    so = None if sorm_skipped else sorm_breitung(g_level, fr)
    runs = {"form": form_runs, "sorm": 0 if so is None else so.n_evals, "is": is_res.n_evals}
    dc_is = is_res.values + level
    alpha = np.asarray(fr.alpha)
    proj = is_res.points @ alpha

    def beta_at(dd: float) -> float:
        return fr.beta - (dd - level) / gnorm

    def is_at(dd: float) -> tuple[float, float]:
        return cv_estimate(dc_is <= dd, is_res.weights, proj, beta_at(dd))

    psi = (so.pf / fr.pf if so is not None and math.isfinite(so.pf) and fr.pf > 0
           else math.nan)
    if solve:
        lim_form = min(max(level - (beta_t - fr.beta) * gnorm, 0.0), p_r)
        lim_sorm = (min(max(level - (float(-sc.ndtri(min(accepted_risk / psi, 0.5)))
                                     - fr.beta) * gnorm, 0.0), p_r)
                    if math.isfinite(psi) and psi > 0 else math.nan)
        lim_is = _bisect(lambda dd: is_at(dd)[0], 0.0, p_r, accepted_risk)
        if is_res.converged:
            limit, method = lim_is, "importance sampling"

            def upper(dd: float) -> float:
                p, c = is_at(dd)
                return p * (1.0 + 1.645 * c) if math.isfinite(c) else 1.0

            lower: float | None = _bisect(upper, 0.0, p_r, accepted_risk)
        elif math.isfinite(lim_sorm):
            limit, method, lower = lim_sorm, "SORM", None
        else:
            limit, method, lower = lim_form, "FORM", None
    else:
        limit, method, lower = sampled_limit, "sampling", None
        lim_form = lim_sorm = lim_is = math.nan
    at = limit
    b_at = beta_at(at)
    form_p = float(sc.ndtr(-b_at))
    sorm_p = form_p * psi if math.isfinite(psi) else math.nan
    is_p, is_cov = is_at(at)
    samp_p = sampled_fraction(at)
    fr_at = FormResult(beta=b_at, design_point=fr.design_point, alpha=fr.alpha, pf=form_p,
                       gradient=fr.gradient, n_evals=fr.n_evals, n_calls=fr.n_calls,
                       n_iter=fr.n_iter, converged=fr.converged, message=fr.message)
    notes = [] if is_res.converged else [
        f"Importance sampling stopped at its budget of {IS_MAX_RUNS} runs with c.o.v. "
        f"{is_res.cov:.2g} above the target {IS_COV_TARGET}: the failure domain may have "
        "several design points."]
    cmp = compare(fr_at, sorm_p, is_p, is_cov, sorm_skipped=sorm_skipped)
    if sorm_skipped:
        notes.append(f"SORM not run: its Hessian would take {sorm_cost} model runs and "
                     "importance sampling reached its target.")
    if cmp:
        notes.append(cmp)
    if resolved:
        se = math.sqrt(max(samp_p * (1 - samp_p), 1e-300) / max(n_samples, 1))
        if is_p > 0 and math.isfinite(is_cov) and abs(samp_p - is_p) > 3.0 * math.hypot(
                se, is_cov * is_p):
            notes.append(f"Sampling ({samp_p:.3g}) and importance sampling ({is_p:.3g}) differ "
                         "by more than three combined standard errors.")
    if solve and limit <= 0.0:
        p0 = {"importance sampling": is_p, "SORM": sorm_p}.get(method, form_p)
        notes.append(f"P(failure with no drawdown) is {p0:.3g} by {method}, at or above the "
                     "accepted risk: the limit is zero.")
    return {
        "drawdown": at, "sampling_p": samp_p, "beta": b_at, "form_p": form_p,
        "sorm_p": sorm_p, "is_p": is_p, "is_cov": is_cov, "converged": fr.converged,
        "importance": {n: float(v) for n, v in zip(names, fr.importance, strict=True)},
        "model_runs": int(sum(runs.values())), "runs": runs, "starts": tried,
        "limit": limit, "limit_method": method, "limit_lower": lower,
        "sampled_limit": sampled_limit, "form_limit": lim_form, "sorm_limit": lim_sorm,
        "is_limit": lim_is, "diagnostic": " ".join(notes) if notes else None,
    }
