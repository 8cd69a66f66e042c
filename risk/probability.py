"""From per-sample critical drawdowns to risk numbers.

Every function takes ``dc``, a 1-D array of per-sample critical drawdown [MPa] (see
:mod:`risk.conventions`): ``+inf`` means "never fails in the available range", ``0`` means
"fails with no drawdown". Arrays evaluated in chunks can simply be concatenated.

Definitions (used everywhere in this module)
--------------------------------------------
- Probability of failure at drawdown ``D``: ``P(D) = #{dc <= D} / n``, the empirical CDF of
  ``dc`` (right-continuous; a sample fails *at* its critical drawdown).
- The ``p``-quantile (``p10`` for ``p = 0.10``, ...) is the smallest sample value ``x`` with
  ``P(x) >= p``: the value at or below which a fraction ``p`` of the samples fail. This is the
  inverted empirical CDF (Hyndman & Fan 1996, definition 1; numpy ``method="inverted_cdf"``),
  so a percentile and the curve agree exactly. It is ``+inf`` when more than ``1 - p`` of the
  samples never fail.

The binomial statements (bands, lower bound, sample-size guide) assume independent samples
(plain Monte Carlo). Scrambled Sobol' and Latin-hypercube samples estimate the same quantities
with less variance (docs/derivations.md, sec. 6), so for them the bands and bounds are conservative
in practice, though not proven so.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import special as sc
from scipy import stats

__all__ = [
    "fraction_at_or_below",
    "convergence_warning",
    "drawdown_limit",
    "failure_curve",
    "min_samples_for_bound",
    "percentiles",
    "samples_needed",
]

FloatArray = NDArray[np.float64]

_METHODS = ("wilson", "clopper-pearson")


def _sorted_dc(dc: ArrayLike) -> FloatArray:
    a = np.asarray(dc, dtype=float)
    if a.ndim != 1 or a.size == 0:
        raise ValueError(f"dc must be a non-empty 1-D array, got shape {a.shape}")
    if np.isnan(a).any():
        raise ValueError("dc contains NaN; every sample needs a critical drawdown or +inf")
    if a.size < 2 or bool(np.all(a[1:] >= a[:-1])):
        return a  # already sorted (callers that sort once pass it on): no copy
    return np.sort(a)


def _check_prob(name: str, p: float, *, closed: bool) -> None:
    ok = 0.0 <= p <= 1.0 if closed else 0.0 < p < 1.0
    if not ok:
        raise ValueError(f"{name} must be in {'[0, 1]' if closed else '(0, 1)'}, got {p!r}")


def failure_curve(dc: ArrayLike, grid: ArrayLike, confidence: float = 0.95,
                  method: str = "wilson") -> tuple[FloatArray, FloatArray, FloatArray]:
    """Probability of failure at each drawdown of ``grid``, with pointwise confidence bands.

    Parameters
    ----------
    dc : array_like (n,)
        Critical drawdown of each sample [MPa]; ``+inf`` for "never".
    grid : array_like
        Drawdowns at which to evaluate [MPa], any shape.
    confidence : float
        Two-sided confidence level of each pointwise band [-], in (0, 1).
    method : {"wilson", "clopper-pearson"}
        Wilson score interval (Wilson 1927, without continuity correction) or the exact
        Clopper–Pearson interval (Clopper & Pearson 1934), both for ``k = #{dc <= D}``
        failures out of ``n``.

    Returns
    -------
    p, low, high : ndarray, shape of ``grid``
        Fraction of samples failing at or below each drawdown and the band limits [-].

    References
    ----------
    Wilson, E.B. (1927). Probable inference, the law of succession, and statistical inference.
    JASA 22(158), 209–212.
    Clopper, C.J. & Pearson, E.S. (1934). The use of confidence or fiducial limits illustrated
    in the case of the binomial. Biometrika 26(4), 404–413.
    Brown, L.D., Cai, T.T. & DasGupta, A. (2001). Interval estimation for a binomial
    proportion. Statistical Science 16(2), 101–133.
    """
    if method not in _METHODS:
        raise ValueError(f"method must be one of {_METHODS}, got {method!r}")
    _check_prob("confidence", confidence, closed=False)
    s = _sorted_dc(dc)
    n = s.size
    g = np.asarray(grid, dtype=float)
    k = np.searchsorted(s, g, side="right").astype(float)
    p = k / n
    alpha = 1.0 - confidence
    if method == "wilson":
        z = float(sc.ndtri(1.0 - alpha / 2.0))
        z2 = z * z
        centre = (k + z2 / 2.0) / (n + z2)
        half = z / (n + z2) * np.sqrt(k * (n - k) / n + z2 / 4.0)
        low = np.clip(centre - half, 0.0, 1.0)
        high = np.clip(centre + half, 0.0, 1.0)
        low = np.where(k == 0, 0.0, low)
        high = np.where(k == n, 1.0, high)
    else:
        with np.errstate(invalid="ignore"):
            low = np.where(k == 0, 0.0, sc.betaincinv(k, n - k + 1.0, alpha / 2.0))
            high = np.where(k == n, 1.0, sc.betaincinv(k + 1.0, n - k, 1.0 - alpha / 2.0))
    return p, np.asarray(low, dtype=float), np.asarray(high, dtype=float)


def percentiles(dc: ArrayLike, qs: ArrayLike) -> FloatArray:
    """Quantiles of the critical drawdown, as defined in the module docstring.

    Parameters
    ----------
    dc : array_like (n,)
        Critical drawdown of each sample [MPa]; ``+inf`` for "never".
    qs : array_like
        Probabilities [-] in [0, 1], any shape (0.1 gives p10).

    Returns
    -------
    ndarray, shape of ``qs``
        Smallest sample value ``x`` with ``#{dc <= x}/n >= q`` [MPa]; ``+inf`` where the
        quantile falls on "never". Equals ``numpy.quantile(dc, qs, method="inverted_cdf")``
        except where ``q n`` is within rounding of an integer (e.g. ``q = 0.07, n = 100``):
        numpy rounds ``q n`` up, this function compares ``k/n >= q`` exactly as
        :func:`failure_curve` computes it, so the two always agree.
    """
    s = _sorted_dc(dc)
    q = np.asarray(qs, dtype=float)
    if np.isnan(q).any() or (q < 0).any() or (q > 1).any():
        raise ValueError(f"qs must be probabilities in [0, 1], got {qs!r}")
    n = s.size
    # the first order statistic k (1-based) whose curve value k/n reaches q, compared in the
    # same floating-point arithmetic as failure_curve (no array of n levels: 80 MB at 10^7)
    idx = np.empty(q.shape, dtype=np.intp)
    for pos, qv in np.ndenumerate(q):
        k = min(max(math.ceil(float(qv) * n), 1), n)
        while k > 1 and (k - 1) / n >= qv:
            k -= 1
        while k < n and k / n < qv:
            k += 1
        idx[pos] = k - 1
    return np.asarray(s[idx])


def min_samples_for_bound(accepted_risk: float, confidence: float = 0.95) -> int:
    """Fewest samples for which :func:`drawdown_limit` gives a finite lower bound [-].

    The smallest order statistic is a lower bound at confidence ``c`` when
    ``1 - (1 - p)^n >= c``: ``n >= ln(1 - c) / ln(1 - p)`` (derived from the binomial
    argument in :func:`drawdown_limit`).
    """
    _check_prob("accepted_risk", accepted_risk, closed=False)
    _check_prob("confidence", confidence, closed=False)
    n = math.ceil(math.log1p(-confidence) / math.log1p(-accepted_risk) - 1e-9)
    while stats.binom.sf(0, n, accepted_risk) < confidence:
        n += 1
    return n


def drawdown_limit(dc: ArrayLike, accepted_risk: float,
                   confidence: float = 0.95) -> tuple[float, float]:
    """Drawdown at an accepted risk, with a distribution-free lower confidence bound.

    Parameters
    ----------
    dc : array_like (n,)
        Critical drawdown of each sample [MPa]; ``+inf`` for "never".
    accepted_risk : float
        Accepted probability of failure ``p`` [-], in (0, 1).
    confidence : float
        One-sided confidence level of the lower bound [-], in (0, 1).

    Returns
    -------
    limit : float
        The ``p``-quantile of ``dc`` (:func:`percentiles`) [MPa].
    lower : float
        The ``k``-th smallest sample, ``k`` the largest index with
        ``P(Binomial(n, p) >= k) >= confidence`` [MPa]. Because
        ``P(X_(k) <= x_p) >= P(Binomial(n, p) >= k)`` for any distribution (ties and atoms at 0
        or +inf included), ``lower`` lies at or below the true ``p``-quantile with probability
        at least ``confidence`` (order-statistic interval: David & Nagaraja 2003, sec. 7.1;
        Hahn & Meeker 1991, sec. 5.2 — from memory). ``-inf`` when ``n`` is too small for any
        bound (fewer than :func:`min_samples_for_bound` samples): the data then say nothing
        about the quantile at that confidence.
    """
    _check_prob("accepted_risk", accepted_risk, closed=False)
    _check_prob("confidence", confidence, closed=False)
    s = _sorted_dc(dc)
    n = s.size
    limit = float(percentiles(s, accepted_risk))
    # P(Bin >= k) = sf(k - 1) decreases with k; start from the binomial quantile and step.
    m = int(stats.binom.ppf(1.0 - confidence, n, accepted_risk))
    k = min(max(m + 2, 1), n)
    while k >= 1 and stats.binom.sf(k - 1, n, accepted_risk) < confidence:
        k -= 1
    lower = float(s[k - 1]) if k >= 1 else -math.inf
    return limit, lower


def fraction_at_or_below(dc: ArrayLike, drawdown: float, rtol: float = 1e-9) -> float:
    """Share of samples failing at or below ``drawdown`` [-], counting values within a relative
    ``rtol`` of it as equal, so that results equal up to floating-point rounding (opposite shot
    directions of a symmetric well, 1e-14 MPa apart) are never ranked by that rounding."""
    a = np.asarray(dc, dtype=float)
    if a.size == 0:
        raise ValueError("dc is empty")
    tol = rtol * max(1.0, abs(drawdown)) if math.isfinite(drawdown) else 0.0
    return float(np.mean(a <= drawdown + tol))


def samples_needed(p: float, rel_error: float = 0.1) -> int:
    """Independent samples needed to estimate a probability ``p`` to a relative standard error.

    From the binomial relative standard error ``sqrt((1 - p) / (n p))`` (common practice):
    ``n = ceil((1 - p) / (p rel_error^2))``.

    Parameters
    ----------
    p : float
        Probability to resolve [-], in (0, 1).
    rel_error : float
        Target relative standard error [-], > 0.

    Returns
    -------
    int
        Number of samples [-].
    """
    _check_prob("p", p, closed=False)
    if not rel_error > 0:
        raise ValueError(f"rel_error must be > 0, got {rel_error!r}")
    return math.ceil((1.0 - p) / (p * rel_error * rel_error) - 1e-9)


def convergence_warning(dc: ArrayLike, accepted_risk: float,
                        rel_error: float = 0.1) -> str | None:
    """Text when the run is too small to resolve the accepted risk, else ``None``.

    The run resolves a probability ``p`` when its relative standard error
    ``sqrt((1 - p)/(n p))`` is at most ``rel_error`` (:func:`samples_needed`). For
    scrambled Sobol' samples this is a conservative guide (they need fewer;
    docs/derivations.md, sec. 6).

    Parameters
    ----------
    dc : array_like (n,)
        Critical drawdown of each sample [MPa].
    accepted_risk : float
        Accepted probability of failure [-], in (0, 1).
    rel_error : float
        Target relative standard error [-].
    """
    s = _sorted_dc(dc)
    n = s.size
    needed = samples_needed(accepted_risk, rel_error)
    if n >= needed:
        return None
    limit = float(percentiles(s, accepted_risk))
    failures = int(np.searchsorted(s, limit, side="right")) if math.isfinite(limit) else 0
    rse = math.sqrt((1.0 - accepted_risk) / (n * accepted_risk))
    return (
        f"Too few samples to resolve an accepted risk of {accepted_risk:.3g}: "
        f"{failures} of {n} samples fail at the drawdown limit (about "
        f"{n * accepted_risk:.3g} expected), so the relative standard error of that "
        f"probability is about {rse:.0%}. About {needed} samples are needed for "
        f"{rel_error:.0%}."
    )
