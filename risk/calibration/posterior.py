"""Posterior by importance reweighting or by MCMC; weighted risk statistics; diagnostics.

Reweighting: the run's own samples are draws from the prior, so the posterior weight of
sample ``i`` is its likelihood, ``w_i ∝ prod_k L_k(i)^{weight_k}`` (importance sampling with
the prior as proposal; Smith & Gelfand 1992, The American Statistician 46(2), 84–88). Its
Kish effective sample size ``ESS = (sum w)^2 / sum w^2`` (Kish 1965, Survey Sampling, sec.
11.7 — from memory) says whether enough samples carry the posterior.

MCMC: emcee's ensemble sampler (Foreman-Mackey et al. 2013, PASP 125, 306–312; the
affine-invariant ensemble of Goodman & Weare 2010, CAMCoS 5(1), 65–80) with
differential-evolution moves, started from the reweighted posterior, seeded explicitly;
convergence by the rank-normalized split R-hat (Vehtari et al. 2021, Bayesian Analysis 16(2),
667–718) and emcee's integrated autocorrelation time.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, Final

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import special as sc
from scipy import stats

__all__ = ["normalized_weights", "kish_ess", "weighted_quantile", "weighted_quantiles",
           "weighted_curve", "split_rhat", "McmcResult", "run_mcmc", "walker_count",
           "initial_walkers", "BURN_FRACTION"]

Array = NDArray[np.float64]


def normalized_weights(log_w: ArrayLike) -> Array:
    """Weights summing to one from log-weights (max-shifted; all ``-inf`` is an error)."""
    lw = np.asarray(log_w, dtype=float)
    top = float(np.max(lw))
    if not math.isfinite(top):
        raise ValueError("every log-weight is -inf or nan: no sample is compatible")
    w = np.exp(lw - top)
    return np.asarray(w / w.sum())


def kish_ess(w: ArrayLike) -> float:
    """Kish effective sample size ``(sum w)^2 / sum w^2`` [-] of nonnegative weights."""
    a = np.asarray(w, dtype=float)
    s2 = float(np.sum(a * a))
    return float(np.sum(a)) ** 2 / s2 if s2 > 0 else 0.0


def weighted_quantile(x: ArrayLike, w: ArrayLike, q: float) -> float:
    """Smallest ``x_i`` whose cumulative weight reaches ``q`` (the weighted inverted empirical
    CDF; with equal weights it is :func:`risk.probability.percentiles`) [unit of x].
    ``+inf`` values (never fails) are ordinary members."""
    xa = np.asarray(x, dtype=float)
    wa = np.asarray(w, dtype=float)
    order = np.argsort(xa, kind="stable")
    cum = np.cumsum(wa[order])
    total = cum[-1]
    k = int(np.searchsorted(cum, q * total * (1.0 - 1e-12), side="left"))
    return float(xa[order[min(k, xa.size - 1)]])


def weighted_quantiles(x: ArrayLike, w: ArrayLike, qs: ArrayLike) -> Array:
    """:func:`weighted_quantile` at several levels with one sort [unit of x]."""
    xa = np.asarray(x, dtype=float)
    wa = np.asarray(w, dtype=float)
    order = np.argsort(xa, kind="stable")
    cum = np.cumsum(wa[order])
    q = np.asarray(qs, dtype=float)
    k = np.searchsorted(cum, q * cum[-1] * (1.0 - 1e-12), side="left")
    return np.asarray(xa[order[np.minimum(k, xa.size - 1)]])


def weighted_curve(x: ArrayLike, w: ArrayLike, grid: ArrayLike, confidence: float = 0.95
                   ) -> tuple[Array, Array, Array]:
    """Weighted fraction failing at or below each drawdown of ``grid``, with a Wilson band
    (Wilson 1927) on the Kish effective sample size (the usual design-effect correction)."""
    xa = np.asarray(x, dtype=float)
    wa = np.asarray(w, dtype=float)
    order = np.argsort(xa, kind="stable")
    cum = np.concatenate([[0.0], np.cumsum(wa[order])])
    g = np.asarray(grid, dtype=float)
    k = np.searchsorted(xa[order], g, side="right")
    p = np.clip(cum[k] / cum[-1], 0.0, 1.0)
    n = max(kish_ess(wa), 1.0)
    z = float(sc.ndtri(0.5 + confidence / 2.0))
    z2 = z * z
    centre = (p + z2 / (2 * n)) / (1 + z2 / n)
    half = z / (1 + z2 / n) * np.sqrt(p * (1 - p) / n + z2 / (4 * n * n))
    return p, np.clip(centre - half, 0.0, 1.0), np.clip(centre + half, 0.0, 1.0)


def split_rhat(chains: ArrayLike) -> Array:
    """Rank-normalized split R-hat per parameter (Vehtari et al. 2021, eq. 4-5 with the
    rank normalization of their sec. 4.1; the larger of the bulk and folded values) [-].

    Parameters
    ----------
    chains : array_like (n_draws, n_chains, n_params)
    """
    a = np.asarray(chains, dtype=float)
    if a.ndim != 3 or a.shape[0] < 4:
        raise ValueError(f"chains must be (n_draws >= 4, n_chains, n_params), got {a.shape}")
    half = a.shape[0] // 2
    split = np.concatenate([a[:half], a[-half:]], axis=1)  # (half, 2 m, p)

    def rhat(x: Array) -> Array:
        n = x.shape[0]
        means = x.mean(axis=0)
        b = n * means.var(axis=0, ddof=1)
        wv = x.var(axis=0, ddof=1).mean(axis=0)
        var = (n - 1) / n * wv + b / n
        return np.asarray(np.sqrt(var / wv))

    def z_rank(x: Array) -> Array:
        flat = x.reshape(-1, x.shape[2])
        r = stats.rankdata(flat, axis=0)
        return np.asarray(sc.ndtri((r - 0.375) / (flat.shape[0] + 0.25))).reshape(x.shape)

    bulk = rhat(z_rank(split))
    folded = rhat(z_rank(np.abs(split - np.median(split.reshape(-1, a.shape[2]), axis=0))))
    return np.maximum(bulk, folded)


@dataclass(frozen=True)
class McmcResult:
    """Posterior draws of the ensemble sampler (after burn-in, thinned) and its diagnostics."""

    draws: Array               # (m, d) parameter draws
    walkers: int
    steps: int
    burn_in: int
    acceptance: float          # mean acceptance fraction [-]
    rhat: Array                # split R-hat per parameter [-]
    autocorrelation: Array     # integrated autocorrelation time per parameter [steps]
    log_prob_calls: int        # walker positions evaluated


def run_mcmc(log_prob: Callable[[Array], Array], start: ArrayLike, *, steps: int,
             seed: Any, burn_in: int | None = None, moves: str = "de") -> McmcResult:
    """Sample a posterior with emcee's ensemble sampler, vectorised and seeded.

    Parameters
    ----------
    log_prob : callable (k, d) -> (k,)
        Log posterior density (up to a constant) of a batch of positions [-].
    start : array_like (walkers, d)
        Initial walker positions (distinct; at least 2 d walkers).
    steps : int
        Steps per walker.
    seed : anything numpy.random.SeedSequence accepts
        The sampler's stream (its own RandomState; the global one is not touched).
    burn_in : int, optional
        Steps discarded (default: half).
    moves : {"de", "stretch"}
        ``"de"`` (default): differential-evolution proposals (ter Braak 2006, Statistics and
        Computing 16, 239–249), one in five a snooker update (ter Braak & Vrugt 2008,
        Statistics and Computing 18, 435–446), emcee's ``DEMove``/``DESnookerMove``;
        ``"stretch"``: the affine-invariant stretch move alone. On the 5-parameter R-5
        posterior the DE mixture halved the integrated autocorrelation time (docs/derivations.md,
        sec. 14).
    """
    import emcee

    p0 = np.array(start, dtype=float)
    walkers, d = p0.shape
    burn = steps // 2 if burn_in is None else int(burn_in)
    if moves not in ("de", "stretch"):
        raise ValueError(f"moves must be 'de' or 'stretch', got {moves!r}")
    mv: Any = None
    if moves == "de":
        mv = [(emcee.moves.DEMove(), 0.8), (emcee.moves.DESnookerMove(), 0.2)]
    sampler = emcee.EnsembleSampler(walkers, d, lambda x: np.asarray(log_prob(x)),
                                    vectorize=True, moves=mv)
    ss = np.random.SeedSequence(seed)
    sampler.random_state = np.random.RandomState(
        np.random.MT19937(ss)).get_state()  # noqa: NPY002 (emcee's own API)
    sampler.run_mcmc(p0, steps, progress=False)
    chain = sampler.get_chain()  # (steps, walkers, d)
    kept = chain[burn:]
    # emcee's estimate (Sokal's adaptive window, c = 5); tol = 0 computes it without emcee's
    # logged warning: the shortness of the chain is judged by R-hat and reported instead
    tau = np.asarray(emcee.autocorr.integrated_time(kept, c=5, tol=0, quiet=True), dtype=float)
    return McmcResult(draws=kept.reshape(-1, d), walkers=walkers, steps=steps, burn_in=burn,
                      acceptance=float(np.mean(sampler.acceptance_fraction)),
                      rhat=split_rhat(kept), autocorrelation=tau,
                      log_prob_calls=walkers * (steps + 1))


#: Discarded fraction of the MCMC steps is 1/BURN_FRACTION (the walkers start from the
#: reweighted posterior, so a short burn-in suffices).
BURN_FRACTION: Final = 4


def walker_count(d: int) -> int:
    """Walkers of the ensemble sampler for ``d`` parameters [-]: ``max(32, 8 d)``."""
    return max(32, 8 * d)


def initial_walkers(z: ArrayLike, w: ArrayLike, *, walkers: int, rng: np.random.Generator
                    ) -> Array:
    """Start positions (walkers, d): distinct rows of ``z`` (n, d) drawn without replacement
    with probabilities ``w`` (the reweighted posterior; rows of weight 0 only when fewer rows
    carry weight than there are walkers), so the ensemble starts spread over the posterior's
    bulk instead of the prior's."""
    za = np.asarray(z, dtype=float)
    wa = np.asarray(w, dtype=float)
    n = za.shape[0]
    if za.ndim != 2 or wa.shape != (n,) or n < walkers:
        raise ValueError(f"need z (n >= {walkers}, d) and w (n,), got {za.shape}, {wa.shape}")
    pos = np.flatnonzero(wa > 0)
    if pos.size >= walkers:
        pick = rng.choice(pos, size=walkers, replace=False, p=wa[pos] / wa[pos].sum())
    else:
        rest = rng.choice(np.flatnonzero(wa <= 0), size=walkers - pos.size, replace=False)
        pick = np.concatenate([pos, rest])
    return np.asarray(za[np.sort(pick)])
