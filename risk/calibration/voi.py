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
preposterior expectation. Its Monte-Carlo error combines the standard errors of the bin
quantiles and of today's quantile, each from the spacing of neighbouring quantiles
(:func:`_quantile_and_se`), the bins and the trend held fixed.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import special as sc

__all__ = ["VoiEstimate", "value_of_information", "simulate_measurement", "limit_today"]

Array = NDArray[np.float64]

#: Samples per bin the estimator aims for, and the fewest and most bins.
BIN_SAMPLES = 400
MIN_BINS, MAX_BINS = 4, 64


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


def _segment_quantiles(cum: Array, values: Array, base: Array, mass: Array, q: Array
                       ) -> Array:
    """Weighted inverted-CDF quantiles at levels ``q`` (b, r) of each segment of a sequence
    sorted within segments: ``cum`` the global cumulative weight, ``base`` (b,) the weight
    before each segment, ``mass`` (b,) its weight."""
    target = base[:, None] + q * mass[:, None] * (1.0 - 1e-12)
    k = np.searchsorted(cum, target, side="left")
    return np.asarray(values[np.minimum(k, values.size - 1)])


def _quantiles_and_se(values: Array, w: Array, segment: NDArray[Any], n_seg: int, q: float
                      ) -> tuple[Array, Array, Array]:
    """Per segment: the weighted ``q``-quantile, its standard error from the spacing of the
    quantiles at ``q -+ delta``, ``delta = sqrt(q (1 - q) / ESS)`` (the sectioning estimate of
    the sparsity ``1/f``: Siddiqui 1960; Bloch & Gastwirth 1968 — from memory), and the
    segment's weight. ``values`` need not be sorted: one sort by (segment, value)."""
    by_value = np.argsort(values, kind="stable")
    seg_small = segment.astype(np.int16)  # at most MAX_BINS segments: numpy's radix sort
    o = by_value[np.argsort(seg_small[by_value], kind="stable")]
    vs, ws, seg = values[o], w[o], segment[o]
    mass = np.asarray(np.bincount(seg, weights=ws, minlength=n_seg), dtype=float)
    ess = mass ** 2 / np.maximum(np.bincount(seg, weights=ws * ws, minlength=n_seg), 1e-300)
    cum = np.cumsum(ws)
    base = np.concatenate([[0.0], np.cumsum(mass)[:-1]])
    delta = np.sqrt(q * (1.0 - q) / np.maximum(ess, 1.0))
    levels = np.column_stack([np.full(n_seg, q), np.maximum(q - delta, 0.0),
                              np.minimum(q + delta, 1.0)])
    qs = _segment_quantiles(cum, vs, base, mass, levels)
    return qs[:, 0], 0.5 * (qs[:, 2] - qs[:, 1]), mass


def limit_today(*, output: ArrayLike, accepted_risk: float, cap: float | ArrayLike = math.inf,
                weights: ArrayLike | None = None) -> list[tuple[float, float]]:
    """Today's limit (the capped accepted-risk quantile) and its standard error per column of
    ``output`` (n,) or (n, k) [MPa]."""
    y_all = np.asarray(output, dtype=float)
    y_all = y_all[:, None] if y_all.ndim == 1 else y_all
    n = y_all.shape[0]
    caps = np.broadcast_to(np.asarray(cap, dtype=float), (y_all.shape[1],))
    w = np.ones(n) if weights is None else np.asarray(weights, dtype=float)
    w = w / w.sum()
    zeros = np.zeros(n, dtype=np.intp)
    out = []
    for j, cap_j in enumerate(caps):
        y = np.clip(y_all[:, j], 0.0, cap_j)
        q0, se0, _ = _quantiles_and_se(y, w, zeros, 1, accepted_risk)
        out.append((float(min(q0[0], cap_j)), float(se0[0])))
    return out


def value_of_information(*, signal: ArrayLike, output: ArrayLike, accepted_risk: float,
                         cap: float | ArrayLike = math.inf, weights: ArrayLike | None = None,
                         n_bins: int | None = None,
                         today: list[tuple[float, float]] | None = None
                         ) -> VoiEstimate | list[VoiEstimate]:
    """Expected gain of the accepted-risk quantile of ``output`` once ``signal`` is known.

    Parameters
    ----------
    signal : array_like (n,)
        Each sample's measured value (:func:`simulate_measurement`) [unit of the input].
    output : array_like (n,) or (n, k)
        Each sample's critical drawdown [MPa] (``+inf``: never); one column per stage.
    accepted_risk : float
        The quantile level ``p`` [-], in (0, 1).
    cap : float or array_like (k,)
        The limit is capped here (the reservoir pressure of each stage) [MPa].
    weights : array_like (n,), optional
        Sample weights (posterior importance weights); equal when omitted.
    n_bins : int, optional
        Bins of equal count (default: about :data:`BIN_SAMPLES` effective samples each).
    today : list of (limit, error), optional
        :func:`limit_today` of the same output and weights, when several signals share them.

    Returns
    -------
    VoiEstimate for a 1-D ``output``; a list of them (one per column) for a 2-D one.

    Notes
    -----
    The Monte-Carlo error adds the variances of the bin quantiles (independent bins) and of
    today's quantile; the two parts share samples and are positively correlated, so the sum
    overstates the variance of the difference (a conservative error). A quantile on an atom
    of the output (many samples at zero drawdown, or at the cap) has a zero spacing: there
    the error says nothing.
    """
    s = np.asarray(signal, dtype=float)
    y_all = np.asarray(output, dtype=float)
    single = y_all.ndim == 1
    y_all = y_all[:, None] if single else y_all
    n = s.size
    if y_all.shape[0] != n or s.ndim != 1 or n < 2 * MIN_BINS:
        raise ValueError("signal and output need the same number of samples, and enough")
    if not 0 < accepted_risk < 1:
        raise ValueError(f"accepted_risk must be in (0, 1), got {accepted_risk!r}")
    caps = np.broadcast_to(np.asarray(cap, dtype=float), (y_all.shape[1],))
    w = np.ones(n) if weights is None else np.asarray(weights, dtype=float)
    w = w / w.sum()
    ess = float(1.0 / np.sum(w * w))
    bins = n_bins or int(min(MAX_BINS, max(MIN_BINS, ess // BIN_SAMPLES)))
    order = np.argsort(s, kind="stable")
    rank = np.empty(n, dtype=np.intp)
    rank[order] = np.arange(n)
    edges = np.linspace(0, n, bins + 1).round().astype(int)
    bin_of = np.searchsorted(edges, rank, side="right") - 1  # each sample's bin
    mid = order[(edges[:-1] + edges[1:]) // 2]  # the sample at each bin's median
    # normal scores of the signal and the trend of the output along them (weighted least
    # squares by the normal equations: four columns)
    t = np.asarray(sc.ndtri((rank + 0.5) / n))
    basis = np.column_stack([np.ones(n), t, t * t, t * t * t])
    gram = (basis * w[:, None]).T @ basis
    out = []
    for j, cap_j in enumerate(caps):
        y = np.clip(y_all[:, j], 0.0, cap_j)
        fin = np.isfinite(y)
        yy = np.where(fin, y, cap_j if math.isfinite(cap_j) else 0.0)
        coef = np.linalg.lstsq(gram, basis.T @ (w * yy), rcond=None)[0]
        trend = basis @ coef
        adj = np.clip(y - np.where(fin, trend - trend[mid][bin_of], 0.0), 0.0, cap_j)
        q_b, se_b, mass = _quantiles_and_se(adj, w, bin_of, bins, accepted_risk)
        q0, se0 = (today[j] if today is not None else
                   limit_today(output=y, accepted_risk=accepted_risk, cap=cap_j, weights=w)[0])
        expected = float(np.sum(mass * np.minimum(q_b, cap_j)))
        error = math.sqrt(float(np.sum((mass * se_b) ** 2)) + se0 ** 2)
        out.append(VoiEstimate(value=expected - q0, error=error, limit_today=q0,
                               expected_limit=expected, bins=bins))
    return out[0] if single else out
