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
preposterior expectation.

Monte-Carlo error: a paired Bayesian bootstrap (Rubin 1981, Annals of Statistics 9(1),
130–134). Each replicate multiplies every sample's weight by an Exp(1) draw (a Dirichlet
reweighting of the rows; with importance weights, the weighted bootstrap of Newton & Raftery
1994, JRSS B 56(1), 3–48 — from memory) and recomputes *both* terms, the bin quantiles and
today's quantile, from the same reweighted rows; the error is the standard deviation of the
replicate differences. The two terms share their samples, so most of their Monte-Carlo noise
cancels in the difference (for an input the limit does not depend on, the bin quantiles
average to today's quantile to first order); adding their separate variances, as an unpaired
error would, overstated it two- to threefold on the checks of docs/derivations.md, sec. 14.
The bins and the trend are held fixed across replicates: the noise of the four-parameter
global trend fit is left out of the error (a stated simplification; on the linear-Gaussian
check the reported error still matched the spread of the estimates over seeds).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Final

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import special as sc

__all__ = ["VoiEstimate", "TodayLimit", "value_of_information", "simulate_measurement",
           "limit_today", "bootstrap_multipliers", "BOOT"]

Array = NDArray[np.float64]

#: Samples per bin the estimator aims for, and the fewest and most bins.
BIN_SAMPLES = 400
MIN_BINS, MAX_BINS = 4, 64
#: Bayesian-bootstrap replicates of the Monte-Carlo error: a standard deviation from 64
#: replicates is itself within about 9% (1/sqrt(2 x 64), derived), enough for an error bar,
#: and the replicates cost time in every run that values measurements.
BOOT: Final = 64


@dataclass(frozen=True)
class VoiEstimate:
    """Value of information of one measurement at one stage [MPa]."""

    value: float            # E_Y[limit | Y] - limit today
    error: float            # Monte-Carlo standard error
    limit_today: float      # q_p of the (capped) critical drawdown
    expected_limit: float   # E_Y[q_p(D | Y)]
    bins: int


@dataclass(frozen=True)
class TodayLimit:
    """Today's limit of one output column [MPa], its bootstrap standard error [MPa] and its
    bootstrap replicates (B,) [MPa], for pairing with the replicates of a measurement."""

    limit: float
    error: float
    replicates: Array = field(repr=False, compare=False)


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


def bootstrap_multipliers(n: int, *, rng: np.random.Generator, replicates: int = BOOT) -> Array:
    """Bayesian-bootstrap multipliers (n, replicates) [-]: Exp(1) draws, one per row and
    replicate (normalised per replicate, they are Dirichlet(1, ..., 1) weights: Rubin 1981)."""
    if n < 1 or replicates < 2:
        raise ValueError("need n >= 1 rows and at least 2 replicates")
    return np.asarray(rng.standard_exponential((n, replicates)))


def _segment_quantiles(values: Array, w: Array, starts: NDArray[Any], ends: NDArray[Any],
                       q: float) -> tuple[NDArray[Any], Array]:
    """Position of the weighted inverted-CDF ``q``-quantile of each segment (b,) and the
    segment's weight (b,) [-]. ``values`` (n,) are sorted within contiguous segments
    ``[starts[b], ends[b])``, ``w`` (n,) their weights."""
    cum = np.cumsum(w)
    before = np.where(starts > 0, cum[np.maximum(starts - 1, 0)], 0.0)
    mass = cum[ends - 1] - before
    k = np.searchsorted(cum, before + q * mass * (1.0 - 1e-12), side="left")
    return np.minimum(np.maximum(k, starts), ends - 1), np.asarray(mass)


def _replicate_positions(w: Array, g: Array, order: NDArray[Any], starts: NDArray[Any],
                         ends: NDArray[Any], mass: Array, k0: NDArray[Any], q: float
                         ) -> NDArray[Any]:
    """Position (b, r) of each segment's ``q``-quantile in each bootstrap replicate.

    ``order`` (n,) lists the rows of ``w`` (n,) and ``g`` (n, r) sorted within the segments,
    ``mass`` (b, r) is each segment's replicate weight and ``k0`` (b,) the positions of the
    point estimate. Only a window of each segment is summed: its rows up to ``k0`` plus
    eight standard deviations of the quantile's rank (``sqrt(m q (1 - q))`` for ``m`` rows,
    the binomial spread); a replicate whose quantile lies beyond the window sends the whole
    computation to full segments (the result is the same, the window only saves time)."""
    n_seg = np.maximum(ends - starts, 1)
    half = np.ceil(8.0 * np.sqrt(n_seg * q * (1.0 - q))).astype(np.intp) + 8
    for full in (False, True):
        hi = ends if full else np.minimum(ends, k0 + half + 1)
        length = hi - starts
        first = np.concatenate([[0], np.cumsum(length)[:-1]])
        rows = order[np.repeat(starts - first, length) + np.arange(int(length.sum()))]
        cum = g[rows] * w[rows, None]
        np.cumsum(cum, axis=0, out=cum)
        base = np.where((first > 0)[:, None], cum[np.maximum(first - 1, 0)], 0.0)
        target = base + q * mass * (1.0 - 1e-12)  # (b, r)
        last = cum[first + length - 1]
        if full or bool(np.all(last >= target)):
            below = (cum < np.repeat(target, length, axis=0)).astype(np.intp)
            count = np.add.reduceat(below, first, axis=0)
            return np.asarray(np.minimum(starts[:, None] + count, (ends - 1)[:, None]))
    raise AssertionError("unreachable")  # pragma: no cover


def _replicated(values: Array, w: Array, g: Array, order: NDArray[Any], starts: NDArray[Any],
                ends: NDArray[Any], mass: Array, k0: NDArray[Any], q: float, cap: float
                ) -> Array:
    """Per bootstrap replicate: the weight-share average of the capped segment quantiles
    (r,) [unit of values]; ``values`` sorted within segments, ``order`` their rows."""
    k = _replicate_positions(w, g, order, starts, ends, mass, k0, q)
    share = mass / mass.sum(axis=0, keepdims=True)
    return np.asarray(np.sum(share * np.minimum(values[k], cap), axis=0))


def _today(y: Array, w: Array, g: Array, accepted_risk: float, cap: float) -> TodayLimit:
    order = np.argsort(y, kind="stable")
    ys = y[order]
    one = np.array([0]), np.array([y.size])
    k0, _ = _segment_quantiles(ys, w[order], *one, accepted_risk)
    mass = (w @ g)[None, :]
    reps = _replicated(ys, w, g, order, *one, mass, k0, accepted_risk, cap)
    reps.flags.writeable = False
    return TodayLimit(float(min(ys[k0[0]], cap)), float(np.std(reps, ddof=1)), reps)


def _multipliers(n: int, rng: np.random.Generator | None, boot: ArrayLike | None) -> Array:
    if boot is not None:
        g = np.asarray(boot, dtype=float)
        if g.ndim != 2 or g.shape[0] != n or g.shape[1] < 2:
            raise ValueError(f"boot must be ({n}, replicates >= 2), got {g.shape}")
        return g
    if rng is None:
        raise ValueError("give rng (a numpy Generator) or boot (bootstrap multipliers)")
    return bootstrap_multipliers(n, rng=rng)


def limit_today(*, output: ArrayLike, accepted_risk: float, cap: float | ArrayLike = math.inf,
                weights: ArrayLike | None = None, rng: np.random.Generator | None = None,
                boot: ArrayLike | None = None) -> list[TodayLimit]:
    """Today's limit (the capped accepted-risk quantile) per column of ``output`` (n,) or
    (n, k) [MPa], with its Bayesian-bootstrap replicates (``boot``, or :data:`BOOT` drawn
    from ``rng``: pass the same ``boot`` to :func:`value_of_information` to pair them)."""
    y_all = np.asarray(output, dtype=float)
    y_all = y_all[:, None] if y_all.ndim == 1 else y_all
    n = y_all.shape[0]
    caps = np.broadcast_to(np.asarray(cap, dtype=float), (y_all.shape[1],))
    w = np.ones(n) if weights is None else np.asarray(weights, dtype=float)
    w = w / w.sum()
    g = _multipliers(n, rng, boot)
    return [_today(np.clip(y_all[:, j], 0.0, cap_j), w, g, accepted_risk, float(cap_j))
            for j, cap_j in enumerate(caps)]


def value_of_information(*, signal: ArrayLike, output: ArrayLike, accepted_risk: float,
                         cap: float | ArrayLike = math.inf, weights: ArrayLike | None = None,
                         n_bins: int | None = None, rng: np.random.Generator | None = None,
                         boot: ArrayLike | None = None, today: list[TodayLimit] | None = None
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
    rng : numpy.random.Generator, optional
        Draws the bootstrap multipliers when ``boot`` is not given.
    boot : array_like (n, B), optional
        Bootstrap multipliers (:func:`bootstrap_multipliers`), shared by several signals.
    today : list of TodayLimit, optional
        :func:`limit_today` of the same output and weights *and the same* ``boot``.

    Returns
    -------
    VoiEstimate for a 1-D ``output``; a list of them (one per column) for a 2-D one.

    Notes
    -----
    The Monte-Carlo error is the standard deviation of the paired bootstrap differences
    (module docstring). A quantile on an atom of the output (many samples at zero drawdown,
    or at the cap) does not move in the replicates: there the error is zero and says nothing
    about the estimator's bias.
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
    g = _multipliers(n, rng, boot)
    ess = float(1.0 / np.sum(w * w))
    bins = min(n_bins or int(min(MAX_BINS, max(MIN_BINS, ess // BIN_SAMPLES))), n // 2)
    order = np.argsort(s, kind="stable")
    rank = np.empty(n, dtype=np.intp)
    rank[order] = np.arange(n)
    edges = np.linspace(0, n, bins + 1).round().astype(int)
    starts, ends = edges[:-1], edges[1:]
    bin_of = np.searchsorted(edges, rank, side="right") - 1  # each sample's bin
    mid = order[(starts + ends) // 2]  # the sample at each bin's median
    # normal scores of the signal and the trend of the output along them (weighted least
    # squares by the normal equations: four columns)
    t = np.asarray(sc.ndtri((rank + 0.5) / n))
    basis = np.column_stack([np.ones(n), t, t * t, t * t * t])
    gram = (basis * w[:, None]).T @ basis
    # each bin's weight in each bootstrap replicate (the bins follow the signal, not the stage)
    bin_mass = np.add.reduceat(g[order] * w[order, None], starts, axis=0)
    out = []
    for j, cap_j in enumerate(caps):
        cap_f = float(cap_j)
        y = np.clip(y_all[:, j], 0.0, cap_f)
        fin = np.isfinite(y)
        yy = np.where(fin, y, cap_f if math.isfinite(cap_f) else 0.0)
        coef = np.linalg.lstsq(gram, basis.T @ (w * yy), rcond=None)[0]
        trend = basis @ coef
        adj = np.clip(y - np.where(fin, trend - trend[mid][bin_of], 0.0), 0.0, cap_f)
        # one sort by (bin, adjusted value): numpy's radix sort on the small bin numbers
        by_value = np.argsort(adj, kind="stable")
        o = by_value[np.argsort(bin_of[by_value].astype(np.int16), kind="stable")]
        vs = adj[o]
        k0, mass0 = _segment_quantiles(vs, w[o], starts, ends, accepted_risk)
        expected = float(np.sum(mass0 * np.minimum(vs[k0], cap_f)))
        now = (today[j] if today is not None else
               _today(y, w, g, accepted_risk, cap_f))
        reps = _replicated(vs, w, g, o, starts, ends, bin_mass, k0, accepted_risk, cap_f)
        if reps.shape != now.replicates.shape:
            raise ValueError("today was computed with other bootstrap multipliers")
        diff = reps - now.replicates
        out.append(VoiEstimate(value=expected - now.limit, error=float(np.std(diff, ddof=1)),
                               limit_today=now.limit, expected_limit=expected, bins=bins))
    return out[0] if single else out
