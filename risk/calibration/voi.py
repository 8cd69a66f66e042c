"""Value of information in drawdown units, from the run's own samples.

The decision quantity is the sand-free drawdown limit ``D*``: the accepted-risk quantile of the
critical drawdown (capped at the reservoir pressure). Measuring an input ``X`` gives a value
``Y`` (``Y = X`` for a perfect measurement, ``Y = X + e`` or ``log Y = log X + e`` with a
stated error), after which the limit would be the quantile of the distribution given ``Y``.
The value of the measurement is the preposterior expectation of that limit minus today's:

    VOI_X = E_Y[ q_p(D | Y) ] - q_p(D)     [MPa]

(the expected value of sample information of Raiffa & Schlaifer 1961, ch. 4, with the limit in
place of a utility — from memory). Because the limit is a quantile, not an expectation, VOI
need not be positive: learning can also show a limit to be lower than feared on average.

Estimator (given data, no new model runs), in the spirit of the regression estimators of the
expected value of partial perfect information of Strong & Oakley (2013, Medical Decision
Making 33(6), 755–766; Strong, Oakley & Brennan 2014, MDM 34(3), 311–326): the samples are
sorted by the (simulated) measured value and cut into bins of equal count; within each bin the
trend of ``D`` along ``Y`` is removed with a global cubic least-squares fit in the normal scores
of ``Y`` (so the bin width does not widen the conditional distribution), and the bin's
weighted quantile estimates ``q_p(D | Y)`` at the bin's median. Averaging over bins gives the
preposterior expectation. Its Monte-Carlo error is the standard deviation over Bayesian-
bootstrap replicates (Rubin 1981, Annals of Statistics 9(1), 130–134: Dirichlet weights on
the samples), the bins and the trend held fixed.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import special as sc
from scipy import stats

__all__ = ["VoiEstimate", "value_of_information", "simulate_measurement"]

Array = NDArray[np.float64]

#: Samples per bin the estimator aims for, and the fewest and most bins.
BIN_SAMPLES = 400
MIN_BINS, MAX_BINS = 4, 64
BOOTSTRAP = 64


@dataclass(frozen=True)
class VoiEstimate:
    """Value of information of one measurement at one stage [MPa]."""

    value: float            # E_Y[limit | Y] - limit today
    error: float            # Monte-Carlo standard error
    limit_today: float      # q_p of the (capped) critical drawdown
    expected_limit: float   # E_Y[q_p(D | Y)]
    bins: int


def simulate_measurement(x: ArrayLike, *, error: float = 0.0, relative_error: float = 0.0,
                         rng: np.random.Generator) -> Array:
    """The value a measurement would return for each sample's true ``x`` [unit of x]:
    ``x`` itself (perfect), ``x + error N(0, 1)``, or ``x exp(relative_error N(0, 1))``
    (a lognormal scatter, for positive quantities)."""
    a = np.asarray(x, dtype=float)
    if error < 0 or relative_error < 0:
        raise ValueError("measurement errors must be >= 0")
    if error > 0 and relative_error > 0:
        raise ValueError("give error or relative_error, not both")
    if error > 0:
        return np.asarray(a + error * rng.standard_normal(a.shape))
    if relative_error > 0:
        return np.asarray(a * np.exp(relative_error * rng.standard_normal(a.shape)))
    return a


def _wquantiles(y_sorted: Array, w_sorted: Array, q: float) -> Array:
    """Weighted inverted-CDF quantile of sorted values for each row of weights (r, m)."""
    cum = np.cumsum(w_sorted, axis=-1)
    target = q * cum[..., -1:] * (1.0 - 1e-12)
    k = np.minimum((cum < target).sum(axis=-1), y_sorted.size - 1)
    return np.asarray(y_sorted[k])


def value_of_information(*, signal: ArrayLike, output: ArrayLike, accepted_risk: float,
                         cap: float = math.inf, weights: ArrayLike | None = None,
                         rng: np.random.Generator, n_bins: int | None = None,
                         n_bootstrap: int = BOOTSTRAP) -> VoiEstimate:
    """Expected gain of the accepted-risk quantile of ``output`` once ``signal`` is known.

    Parameters
    ----------
    signal : array_like (n,)
        Each sample's measured value (:func:`simulate_measurement`) [unit of the input].
    output : array_like (n,)
        Each sample's critical drawdown [MPa] (``+inf``: never).
    accepted_risk : float
        The quantile level ``p`` [-], in (0, 1).
    cap : float
        The limit is capped here (the reservoir pressure) [MPa].
    weights : array_like (n,), optional
        Sample weights (posterior importance weights); equal when omitted.
    rng : numpy.random.Generator
        For the Bayesian bootstrap.
    n_bins : int, optional
        Bins of equal count (default: about :data:`BIN_SAMPLES` effective samples each).
    """
    s = np.asarray(signal, dtype=float)
    y = np.clip(np.asarray(output, dtype=float), 0.0, cap)
    n = s.size
    if y.shape != s.shape or n < 2 * MIN_BINS:
        raise ValueError("signal and output need the same shape and enough samples")
    if not 0 < accepted_risk < 1:
        raise ValueError(f"accepted_risk must be in (0, 1), got {accepted_risk!r}")
    w = np.ones(n) if weights is None else np.asarray(weights, dtype=float)
    w = w / w.sum()
    ess = float(1.0 / np.sum(w * w))
    bins = n_bins or int(min(MAX_BINS, max(MIN_BINS, ess // BIN_SAMPLES)))
    order = np.argsort(s, kind="stable")
    # normal scores of the signal (ties share their rank) and the trend of the output along it
    t = np.asarray(sc.ndtri((stats.rankdata(s) - 0.5) / n))
    finite_y = np.isfinite(y)
    yy = np.where(finite_y, y, cap if math.isfinite(cap) else 0.0)
    basis = np.column_stack([t ** j for j in range(4)])
    sw = np.sqrt(w)
    coef, *_ = np.linalg.lstsq(basis * sw[:, None], yy * sw, rcond=None)
    trend = basis @ coef
    oy = np.argsort(y, kind="stable")
    y_sorted = y[oy]
    today = float(min(_wquantiles(y_sorted, w[oy][None, :], accepted_risk)[0], cap))
    edges = np.linspace(0, n, bins + 1).round().astype(int)
    dirichlet = rng.standard_exponential((n_bootstrap, n))
    rep_w = dirichlet * w[None, :]
    values = np.zeros(n_bootstrap + 1)
    masses = np.zeros(n_bootstrap + 1)
    for b in range(bins):
        idx = order[edges[b]:edges[b + 1]]
        mid = idx[len(idx) // 2]
        adj = y[idx] - np.where(np.isfinite(y[idx]), trend[idx] - trend[mid], 0.0)
        adj = np.clip(adj, 0.0, cap)
        o = np.argsort(adj, kind="stable")
        ys = adj[o]
        wb = np.vstack([w[idx][o][None, :], rep_w[:, idx][:, o]])
        qb = np.minimum(_wquantiles(ys, wb, accepted_risk), cap)
        mass = wb.sum(axis=1)
        values += mass * qb
        masses += mass
    expected = values / masses
    rep_today = np.minimum(_wquantiles(y_sorted, rep_w[:, oy], accepted_risk), cap)
    gains = expected[1:] - rep_today
    return VoiEstimate(value=float(expected[0] - today), error=float(np.std(gains, ddof=1)),
                       limit_today=today, expected_limit=float(expected[0]), bins=bins)
