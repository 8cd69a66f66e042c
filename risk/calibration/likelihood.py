"""Likelihood of a field observation given the model's critical drawdown, with model error.

The true critical drawdown of the observed well is taken to be the model's ``c`` times a
lognormal model error: ``log D_true = log c + e``, ``e ~ N(0, sigma^2)``. Then

- onset at ``D``:              ``L = phi((log D - log c)/sigma) / (sigma D)``  (a density [1/MPa])
- no sand up to ``D``:         ``L = Phi((log c - log D)/sigma)``  (right-censored)
- onset in ``(lo, hi]``:       ``L = Phi((log hi - log c)/sigma) - Phi((log lo - log c)/sigma)``

(the censored-data likelihood of Klein & Moeschberger 2003, sec. 3.5, for a lognormal
accelerated-failure-time model — from memory). The model's two explicit outcomes
(:mod:`risk.conventions`) are their limits: ``c = +inf`` (never fails within the reservoir
pressure) gives ``L = 1`` for "no sand" and ``0`` for any onset; ``c = 0`` (fails with no
drawdown) gives ``L = 0`` for "no sand" and for an onset at ``D > 0``, and ``1`` for an onset
in ``(0, hi]``. Everything is computed on the log scale (``scipy.special.log_ndtr``), so
likelihoods far in the tails do not underflow to zero before they are compared.
"""

from __future__ import annotations

import math
from typing import Final

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import special as sc

__all__ = ["log_likelihood", "outcome_probability", "IMPOSSIBLE_SD", "standardized_distance"]

Array = NDArray[np.float64]
_LOG_SQRT_2PI: Final = 0.5 * math.log(2.0 * math.pi)
#: An observation is outside what the model can express when even its best sample is more
#: than this many model-error standard deviations from it (probability below 1e-15: derived,
#: the normal tail at 8).
IMPOSSIBLE_SD: Final = 8.0


def _log_diff(log_b: Array, log_a: Array) -> Array:
    """log(exp(log_b) - exp(log_a)) for log_b >= log_a, stably; -inf where equal."""
    with np.errstate(divide="ignore", invalid="ignore"):
        d = np.where(np.isneginf(log_a), 0.0, log_a - log_b)
        out = log_b + np.log1p(-np.exp(np.minimum(d, 0.0)))
    return np.where(np.isneginf(log_b), -np.inf, out)


def log_likelihood(c: ArrayLike, *, outcome: str, drawdown: float = math.nan,
                   low: float = math.nan, high: float = math.nan, sigma: float) -> Array:
    """Log-likelihood of one observation for each model critical drawdown ``c``.

    Parameters
    ----------
    c : array_like
        The model's critical drawdown for the observation's conditions [MPa]; ``+inf`` never,
        ``0`` with no drawdown.
    outcome : {"onset", "no_sand", "onset_between"}
    drawdown : float
        Observed onset drawdown, or the largest sand-free drawdown [MPa] (> 0).
    low, high : float
        The interval of an onset between two drawdowns [MPa], ``0 <= low < high``.
    sigma : float
        Standard deviation of the model error on the log critical drawdown [-], > 0.

    Returns
    -------
    ndarray, shape of ``c``
        Log-likelihood (onset: log density per MPa; otherwise log probability) [-].
    """
    if not sigma > 0:
        raise ValueError(f"sigma must be > 0, got {sigma!r}")
    a = np.asarray(c, dtype=float)
    with np.errstate(divide="ignore"):
        log_c = np.log(a)  # -inf at 0, +inf at +inf
    if outcome == "onset":
        if not drawdown > 0:
            raise ValueError(f"drawdown must be > 0, got {drawdown!r}")
        z = (math.log(drawdown) - log_c) / sigma
        with np.errstate(invalid="ignore"):
            out = -0.5 * z * z - _LOG_SQRT_2PI - math.log(sigma * drawdown)
        return np.where(np.isfinite(log_c), out, -np.inf)
    if outcome == "no_sand":
        if not drawdown > 0:
            raise ValueError(f"drawdown must be > 0, got {drawdown!r}")
        with np.errstate(invalid="ignore"):
            out = sc.log_ndtr((log_c - math.log(drawdown)) / sigma)
        return np.asarray(out, dtype=float)
    if outcome == "onset_between":
        if not 0 <= low < high:
            raise ValueError(f"need 0 <= low < high, got {low!r}, {high!r}")
        log_b = sc.log_ndtr((math.log(high) - log_c) / sigma)
        if low == 0:
            out = np.asarray(log_b, dtype=float)
        else:
            out = _log_diff(np.asarray(log_b, dtype=float),
                            np.asarray(sc.log_ndtr((math.log(low) - log_c) / sigma), dtype=float))
        return np.where(np.isposinf(log_c), -np.inf, out)
    raise ValueError(f"unknown outcome {outcome!r}")


def outcome_probability(c: ArrayLike, *, outcome: str, drawdown: float = math.nan,
                        low: float = math.nan, high: float = math.nan, sigma: float) -> Array:
    """Predictive probability of what was seen, per sample [-]: for an onset, the probability
    that the true critical drawdown is at or below the observed one (the predictive CDF at
    ``D``, a probability integral transform); for "no sand" and an interval, the probability
    of the outcome itself."""
    a = np.asarray(c, dtype=float)
    if outcome == "onset":
        with np.errstate(divide="ignore"):
            z = (math.log(drawdown) - np.log(a)) / sigma
        return np.asarray(sc.ndtr(z), dtype=float)
    return np.exp(log_likelihood(a, outcome=outcome, drawdown=drawdown, low=low, high=high,
                                 sigma=sigma))


def standardized_distance(c: ArrayLike, *, outcome: str, drawdown: float = math.nan,
                          low: float = math.nan, high: float = math.nan, sigma: float) -> Array:
    """How many model-error standard deviations each sample's ``c`` lies from agreeing with
    the observation [-] (0 where it agrees; ``+inf`` where no model error can reconcile them:
    a sample that never fails against an onset, one failing with no drawdown against "no
    sand")."""
    a = np.asarray(c, dtype=float)
    with np.errstate(divide="ignore"):
        log_c = np.log(a)
    if outcome == "onset":
        d = np.abs(math.log(drawdown) - log_c) / sigma
    elif outcome == "no_sand":
        d = np.maximum(math.log(drawdown) - log_c, 0.0) / sigma
    else:
        lo = math.log(low) if low > 0 else -math.inf
        with np.errstate(invalid="ignore"):
            d = np.fmax(np.fmax(lo - log_c, log_c - math.log(high)), 0.0) / sigma
    return np.where(np.isnan(d), np.inf, d)
