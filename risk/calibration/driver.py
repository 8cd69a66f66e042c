"""Calibration of a run to its field history, and the value of information, on its own samples.

Modelling choices (the memo states them):

- The calibrated inputs ``theta`` are shared by every well of the field; every other uncertain
  input ``omega`` varies from well to well. For observation ``k`` the run's samples of
  ``theta`` are paired with an independent re-pairing of the rows of ``omega`` (a seeded
  permutation per observation), so that one well's variability does not stand in for
  another's; the product of the per-observation likelihoods is then an unbiased estimate of
  the likelihood of ``theta`` with ``omega`` integrated out per observation (a pseudo-marginal
  weight: Andrieu & Roberts 2009, Annals of Statistics 37(2), 697–725).
- The model's prediction for an observation is its sand drawdown: the earliest of the enabled
  sand-production mechanisms over the observation's shot directions (:mod:`risk.decision`),
  at the observation's reservoir pressure, with the observation's overrides.
- Model error: lognormal, stated standard deviation on the log critical drawdown
  (:mod:`risk.calibration.likelihood`).
- Reweighting when the Kish effective sample size reaches ``min_ess``; otherwise (or when
  asked) MCMC over the normal scores of ``theta`` with the same likelihood, ``omega``
  integrated by a fixed set of :data:`INNER` common random rows per observation; the walkers
  (:func:`~risk.calibration.posterior.walker_count`) start at distinct rows drawn from the
  reweighted posterior, differential-evolution moves, a quarter of the steps burnt in.

docs/derivations.md, sec. 14 lists these choices with the figures measured on them.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any, Final

import numpy as np
from numpy.typing import NDArray
from scipy import special as sc

from risk import decision
from risk.calibration.history import History, Observation
from risk.calibration.likelihood import (
    IMPOSSIBLE_SD,
    log_likelihood,
    outcome_probability,
    standardized_distance,
)
from risk.calibration.posterior import (
    BURN_FRACTION,
    McmcResult,
    initial_walkers,
    kish_ess,
    normalized_weights,
    run_mcmc,
    walker_count,
    weighted_curve,
    weighted_quantile,
    weighted_quantiles,
)
from risk.calibration.voi import (
    bootstrap_multipliers,
    limit_today,
    simulate_measurement,
    value_of_information,
)
from risk.errors import ScenarioError
from risk.uncertainty import rng_stream

__all__ = ["Calibration", "PosteriorRisk", "VoiRow", "calibrate", "value_of_information_table",
           "INNER", "POSTERIOR_ROWS"]

Array = NDArray[np.float64]

#: Inner rows of the well-to-well inputs per observation in the MCMC likelihood.
INNER: Final = 32
#: Floor of the MCMC log-likelihood (positions no inner row can explain) [-].
LOG_FLOOR: Final = -1e6
#: Index of the bootstrap multipliers' substream of the "voi" stream (the measurements' own
#: substreams are numbered from 0).
BOOT_STREAM: Final = 10_000
#: Rows evaluated under the MCMC posterior for the posterior risk.
POSTERIOR_ROWS: Final = 8192
GRID_POINTS: Final = 51
LEVELS: Final = (0.01, 0.05, 0.1, 0.25, 0.5, 0.75, 0.9)
#: A posterior-predictive tail probability below this flags an observation as not reproduced.
PREDICTIVE_TAIL: Final = 0.025
#: A prior-predictive tail probability below this is a conflict with the model's stated error.
CONFLICT_TAIL: Final = 0.005


@dataclass(frozen=True)
class PosteriorRisk:
    """Risk numbers on one set of weighted samples [MPa]; per mechanism and stage."""

    curves: Mapping[str, tuple[tuple[Array, Array, Array], ...]]   # p, low, high on grid
    limits: Mapping[str, tuple[float, ...]]                         # capped at p_r
    envelope: Mapping[str, tuple[tuple[float, ...], ...]]           # wall pressure at LEVELS
    sand_free: tuple[float, ...] | None                             # per stage
    p_no_drawdown: tuple[float, ...] | None
    grid: Array
    #: P(sand) at each planned operating point that lies on a stage (p_r, p_w, probability)
    points: tuple[tuple[float, float, float], ...] = ()
    #: per mechanism, per shot direction, per stage: the capped drawdown limit
    per_direction: Mapping[str, tuple[tuple[float, ...], ...]] = field(default_factory=dict)
    #: the life-of-well shot set (perforated wells): (phasing [deg] or None for the set as
    #: given, orientation [deg], direction indices, its sand-free limit per stage)
    phasing: tuple[float | None, float, tuple[int, ...], tuple[float, ...]] | None = None
    #: completion options: (name, sand-free limit per stage)
    options: tuple[tuple[str, tuple[float, ...]], ...] = ()
    #: pore collapse: far-field critical reservoir pressure at which 10%, 50%, 90% of the
    #: weight has collapsed [MPa], and the collapsed share per stage [-]
    pore_collapse: Mapping[str, Any] | None = None


@dataclass(frozen=True)
class Calibration:
    """What the history did to the run (internal units)."""

    method: str                       # "reweight" or "mcmc"
    inputs: tuple[str, ...]
    model_error: float
    ess: float                        # Kish ESS of the reweighting (also when MCMC followed)
    rows: int                         # samples carrying the posterior
    min_ess: int
    prior_inputs: Mapping[str, Mapping[str, float]]
    posterior_inputs: Mapping[str, Mapping[str, float]]
    histograms: Mapping[str, Mapping[str, Any]]
    observations: tuple[Mapping[str, Any], ...]
    prior: PosteriorRisk
    posterior: PosteriorRisk
    warnings: tuple[str, ...]
    mcmc: Mapping[str, Any] | None = None
    # what the value of information uses: x columns, sand drawdown, weights (not reported)
    samples: Mapping[str, Any] = field(default_factory=dict, repr=False, compare=False)


@dataclass(frozen=True)
class VoiRow:
    """Value of one measurement per stage [MPa]."""

    name: str
    input: str
    error: float
    relative_error: float
    perfect: bool
    values: tuple[float, ...]
    errors: tuple[float, ...]


def _sand(out: Mapping[str, Any]) -> Array:
    keys = tuple(k for k in decision.SAND_PRODUCTION if k in out)
    return decision.sand_drawdown({k: out[k].by_direction for k in keys}, keys)


def _obs_columns(obs: Observation, k: int, cols: Mapping[str, Array], theta: tuple[str, ...],
                 uncertain: tuple[str, ...], seed: int) -> dict[str, Array]:
    """Input columns of observation ``k``: theta as sampled, the well-to-well inputs re-paired
    by a seeded permutation, overridden inputs fixed or drawn afresh."""
    m = next(iter(cols.values())).shape[0]
    rng = rng_stream(seed, "calibration", k)
    perm = rng.permutation(m)
    out = {name: (np.asarray(v) if name in theta or name not in uncertain else np.asarray(v)[perm])
           for name, v in cols.items()}
    for name in obs.overridden:
        marg = obs.scenario.inputs.get(name)
        if marg is None:
            continue
        if marg.is_fixed:
            out[name] = np.full(m, marg.value)
        else:
            out[name] = np.asarray(marg.ppf(np.clip(rng.random(m), 1e-12, 1 - 1e-12)))
    return out


def _loglik(obs: Observation, c: Array, sigma: float) -> Array:
    return obs.weight * log_likelihood(c, outcome=obs.outcome, drawdown=obs.drawdown,
                                       low=obs.low, high=obs.high, sigma=sigma)


def _predicted(obs_list: tuple[Observation, ...], cols: Mapping[str, Array],
               theta: tuple[str, ...], uncertain: tuple[str, ...], seed: int) -> list[Array]:
    from risk.limit_states import evaluate

    out = []
    for k, obs in enumerate(obs_list):
        ck = _obs_columns(obs, k, cols, theta, uncertain, seed)
        res = evaluate(ck, obs.scenario, only=set(decision.SAND_PRODUCTION))
        out.append(_sand(res)[:, 0])
    return out


def _refuse(obs_list: tuple[Observation, ...], preds: list[Array], sigma: float,
            units: str, source: str = "") -> None:
    from risk.conventions import DISPLAY_UNITS, TO_INTERNAL

    problems = []
    for k, (obs, c) in enumerate(zip(obs_list, preds, strict=True)):
        dist = standardized_distance(c, outcome=obs.outcome, drawdown=obs.drawdown,
                                     low=obs.low, high=obs.high, sigma=sigma)
        if float(np.min(dist)) > IMPOSSIBLE_SD:
            unit = DISPLAY_UNITS[units]["pressure"]
            scale = TO_INTERNAL[units]["pressure"]
            fin = c[np.isfinite(c)]
            span = (f"model critical drawdowns from {fin.min() / scale:.4g} to "
                    f"{fin.max() / scale:.4g} {unit}" if fin.size else
                    "no sample of the model ever produces sand there")
            key = "drawdown" if obs.outcome != "onset_between" else "drawdown_high"
            value = obs.drawdown if obs.outcome != "onset_between" else obs.high
            from risk.errors import Problem

            problems.append(Problem(
                f"history[{k}] ({obs.name!r}).{key}", f"{value / scale:.6g} {unit}",
                f"an outcome the model can produce within {IMPOSSIBLE_SD:g} model-error standard "
                f"deviations (sigma = {sigma:g} on the log drawdown; {span}): check the "
                "observation, its overrides, or widen calibration.model_error",
                found_text=f"outcome {obs.outcome!r} at {value / scale:.6g} {unit}"))
    if problems:
        raise ScenarioError(problems, source or None)


def _input_summary(x: Array, w: Array) -> dict[str, float]:
    mean = float(np.sum(w * x) / np.sum(w))
    sd = float(math.sqrt(max(float(np.sum(w * (x - mean) ** 2) / np.sum(w)), 0.0)))
    q = weighted_quantiles(x, w, (0.1, 0.5, 0.9))
    return {"mean": mean, "sd": sd, "p10": float(q[0]), "p50": float(q[1]), "p90": float(q[2])}


def _sand_free(scenario: Any, by_direction: Mapping[str, Array], w: Array
               ) -> tuple[float, ...] | None:
    keys = tuple(k for k in decision.SAND_PRODUCTION if k in by_direction)
    if not keys:
        return None
    sand = decision.sand_drawdown(by_direction, keys)
    return tuple(min(weighted_quantile(sand[:, k], w, scenario.accepted_risk), p_r)
                 for k, p_r in enumerate(scenario.reservoir_pressure))


def _pore(scenario: Any, far_field: Array | None, w: Array) -> dict[str, Any] | None:
    """Weighted pore-collapse summary: ``p10`` is the reservoir pressure at or above which
    10% of the weight has collapsed (the 0.1 quantile of the negated critical pressure), as
    in the run's own pore-collapse results; ``probability`` the collapsed share per stage."""
    if far_field is None:
        return None
    f = np.asarray(far_field, dtype=float)
    q = -weighted_quantiles(-f, w, (0.1, 0.5, 0.9))  # the run's own convention (result.py)
    total = float(np.sum(w))
    return {"p10": float(q[0]), "p50": float(q[1]), "p90": float(q[2]),
            "probability": tuple(float(np.sum(w * (f >= p_r))) / total
                                 for p_r in scenario.reservoir_pressure)}


def _risk(scenario: Any, by_direction: Mapping[str, Array], w: Array,
          options: tuple[tuple[str, Any, Mapping[str, Array]], ...] = (),
          far_field: Array | None = None) -> PosteriorRisk:
    """Curves, limits and envelopes per mechanism, per shot direction, the sand-free limit,
    the life-of-well shot set, the completion options and pore collapse, on samples of
    weights ``w`` (equal: the prior; importance weights or MCMC rows: the posterior)."""
    grid = np.linspace(0.0, scenario.max_drawdown, GRID_POINTS)
    per_dir: dict[str, tuple[tuple[float, ...], ...]] = {}
    curves: dict[str, tuple[tuple[Array, Array, Array], ...]] = {}
    limits: dict[str, tuple[float, ...]] = {}
    env: dict[str, tuple[tuple[float, ...], ...]] = {}
    for key, arr in by_direction.items():
        well = np.asarray(arr.min(axis=1), dtype=float)
        cs, ls, es = [], [], []
        for k, p_r in enumerate(scenario.reservoir_pressure):
            cs.append(weighted_curve(well[:, k], w, grid))
            qs = weighted_quantiles(well[:, k], w, (scenario.accepted_risk, *LEVELS))
            ls.append(min(float(qs[0]), p_r))
            es.append(tuple(float(p_r - v) for v in qs[1:]))
        curves[key], limits[key], env[key] = tuple(cs), tuple(ls), tuple(es)
        per_dir[key] = tuple(
            tuple(min(weighted_quantile(arr[:, j, k], w, scenario.accepted_risk), p_r)
                  for k, p_r in enumerate(scenario.reservoir_pressure))
            for j in range(arr.shape[1]))
    keys = tuple(k for k in decision.SAND_PRODUCTION if k in by_direction)
    sand_free = p0 = None
    points: list[tuple[float, float, float]] = []
    if keys:
        sand = decision.sand_drawdown(by_direction, keys)
        sand_free = tuple(min(weighted_quantile(sand[:, k], w, scenario.accepted_risk), p_r)
                          for k, p_r in enumerate(scenario.reservoir_pressure))
        p0 = tuple(float(np.sum(w * (sand[:, k] <= 0.0)) / np.sum(w))
                   for k in range(len(scenario.reservoir_pressure)))
        for p_r, p_w in scenario.operating_points:
            at = [k for k, s in enumerate(scenario.reservoir_pressure)
                  if math.isclose(s, p_r, rel_tol=1e-9, abs_tol=1e-9)]
            if at:
                prob = float(np.sum(w * (sand[:, at[0]] <= p_r - p_w)) / np.sum(w))
                points.append((p_r, p_w, prob))
    phasing = None
    well = scenario.well
    if keys and well.completion == "perforated":
        choice = decision.choose_phasing(
            by_direction, [math.degrees(x) for x in well.shot_angles],
            scenario.reservoir_pressure, scenario.accepted_risk, scenario.operating_points,
            phasings=scenario.phasings, weights=w)
        if choice is not None:
            c = choice.chosen
            phasing = (c.phasing, c.orientation, c.directions, choice.limits)
    opts = tuple((name, lim) for name, _, dirs in options
                 if (lim := _sand_free(scenario, dirs, w)) is not None)
    return PosteriorRisk(curves, limits, env, sand_free, p0, grid, tuple(points), per_dir,
                         phasing, opts, _pore(scenario, far_field, w))


_Fn = Callable[[Array], Array]


def _target(history: History, joint: Any, cols: Mapping[str, Array], seed: int
            ) -> tuple[_Fn, _Fn, _Fn]:
    """The MCMC target over the normal scores ``z`` of theta: ``log_prob(z)`` (k,) [-], the map
    ``to_x(z)`` to input values and its inverse ``to_z(x)``, each on (k, d) arrays."""
    from risk.limit_states import evaluate

    spec = history.calibration
    assert spec is not None
    theta = spec.inputs
    idx = [joint.names.index(n) for n in theta]
    marg = [joint.marginals[i] for i in idx]
    corr = joint.normal_corr[np.ix_(idx, idx)]
    prec = np.linalg.inv(corr)
    uncertain = tuple(joint.names)
    inner = []
    for k, obs in enumerate(history.observations):
        ck = _obs_columns(obs, k, cols, theta, uncertain, seed)
        inner.append({n: np.asarray(v)[:INNER] for n, v in ck.items()})
    sigma = spec.model_error

    def to_x(z: Array) -> Array:
        u = np.clip(sc.ndtr(z), 1e-300, 1 - 1e-16)
        return np.column_stack([m.ppf(u[:, j]) for j, m in enumerate(marg)])

    def to_z(x: Array) -> Array:
        u = np.column_stack([m.cdf(x[:, j]) for j, m in enumerate(marg)])
        return np.asarray(sc.ndtri(np.clip(u, 1e-12, 1 - 1e-12)))

    def log_prob(z: Array) -> Array:
        z = np.atleast_2d(z)
        b = z.shape[0]
        prior = -0.5 * np.einsum("ij,jk,ik->i", z, prec, z)
        lp = np.zeros(b)
        x = to_x(z)
        for obs, ck in zip(history.observations, inner, strict=True):
            m = next(iter(ck.values())).shape[0]
            rep = {n: np.tile(v, b) for n, v in ck.items()}
            for j, n in enumerate(theta):
                rep[n] = np.repeat(x[:, j], m)
            c = _sand(evaluate(rep, obs.scenario, only=set(decision.SAND_PRODUCTION)))[:, 0]
            ll = _loglik(obs, c, sigma).reshape(b, m)
            with np.errstate(divide="ignore"):
                lp = lp + sc.logsumexp(ll, axis=1) - math.log(m)
        # a finite floor on the likelihood keeps the sampler's comparisons defined where no
        # inner row agrees; the prior still pulls such walkers back
        return np.asarray(prior + np.maximum(lp, LOG_FLOOR))

    return log_prob, to_x, to_z


def _mcmc(history: History, joint: Any, cols: Mapping[str, Array], w_re: Array,
          seed: int) -> tuple[McmcResult, Array]:
    """Posterior draws of the normal scores of theta (MCMC), as input values (m, d)."""
    spec = history.calibration
    assert spec is not None
    theta = spec.inputs
    log_prob, to_x, to_z = _target(history, joint, cols, seed)
    rng = rng_stream(seed, "mcmc")
    x_rows = np.column_stack([np.asarray(cols[n], dtype=float) for n in theta])
    walkers = walker_count(len(theta))
    if x_rows.shape[0] >= walkers:
        start = initial_walkers(to_z(x_rows), w_re, walkers=walkers, rng=rng)
    else:  # fewer stored rows than walkers: start from the prior
        idx = [joint.names.index(n) for n in theta]
        start = rng.multivariate_normal(np.zeros(len(theta)),
                                        joint.normal_corr[np.ix_(idx, idx)], size=walkers)
    res = run_mcmc(log_prob, start, steps=spec.mcmc_steps, seed=[seed, 18, 1],
                   burn_in=spec.mcmc_steps // BURN_FRACTION)
    pick = rng.choice(res.draws.shape[0], size=min(POSTERIOR_ROWS,
                                                   next(iter(cols.values())).shape[0]))
    return res, to_x(res.draws[pick])


def calibrate(scenario: Any, joint: Any, cols: Mapping[str, Array],
              by_direction: Mapping[str, Array], seed: int,
              options: tuple[tuple[str, Any, Mapping[str, Array]], ...] = (),
              far_field: Array | None = None) -> Calibration:
    """Posterior of the calibrated inputs and the posterior risk, on the run's stored samples.

    Parameters
    ----------
    scenario : Scenario with a history (``scenario.history.calibration`` not None)
    joint : the run's JointModel
    cols : every input's column for the stored samples [internal units]
    by_direction : per mechanism, critical drawdown of the stored samples (m, dirs, stages)
    seed : the run's seed
    options : per completion option (name, Well, its ``by_direction`` on the same samples)
    far_field : pore collapse's far-field critical reservoir pressure of the samples [MPa]

    Raises
    ------
    ScenarioError
        When an observation lies outside what the model can express.
    """
    from risk.limit_states import evaluate

    history: History = scenario.history
    spec = history.calibration
    assert spec is not None
    theta = spec.inputs
    uncertain = tuple(joint.names)
    sigma = spec.model_error
    obs_list = history.observations
    m = next(iter(cols.values())).shape[0]
    preds = _predicted(obs_list, cols, theta, uncertain, seed)
    _refuse(obs_list, preds, sigma, scenario.units, scenario.source_name)
    ll = np.column_stack([_loglik(o, c, sigma) for o, c in zip(obs_list, preds, strict=True)])
    total = ll.sum(axis=1)
    if not np.any(np.isfinite(total)):
        raise ScenarioError.single(
            "history", f"{len(obs_list)} observations",
            "observations the model can reproduce together within its model error (check "
            "them and their overrides, widen calibration.model_error, or run more samples)",
            found_text=f"no sample of the run ({m:,}) agrees with all {len(obs_list)} "
                       "observations at once", source=scenario.source_name or None)
    w_re = normalized_weights(total)
    ess = kish_ess(w_re)
    use_mcmc = spec.method == "mcmc" or (spec.method == "auto" and ess < spec.min_ess)
    equal = np.full(m, 1.0 / m)
    mcmc_info = None
    if use_mcmc:
        res, x_post = _mcmc(history, joint, cols, w_re, seed)
        r = x_post.shape[0]
        post_cols = {n: np.asarray(v)[:r].copy() for n, v in cols.items()}
        for j, n in enumerate(theta):
            post_cols[n] = x_post[:, j]
        out = evaluate(post_cols, scenario)
        post_dir = {k: v.by_direction for k, v in out.items()}
        post_options: tuple[tuple[str, Any, Mapping[str, Array]], ...] = tuple(
            (name, well, {k: v.by_direction for k, v in evaluate(
                post_cols, dataclasses.replace(scenario, well=well),
                only=set(decision.SAND_PRODUCTION)).items()})
            for name, well, _ in options)
        post_far = None
        if far_field is not None:
            from risk.limit_states import evaluate_compaction

            post_far = evaluate_compaction(post_cols, scenario).far_field
        w_post = np.full(r, 1.0 / r)
        post_preds = _predicted(obs_list, post_cols, theta, uncertain, seed)
        mcmc_info = {"walkers": res.walkers, "steps": res.steps, "burn_in": res.burn_in,
                     "acceptance": res.acceptance, "rhat": dict(zip(theta, map(float, res.rhat),
                                                                      strict=True)),
                     "autocorrelation": dict(zip(theta, map(float, res.autocorrelation),
                                                 strict=True)),
                     "model_runs": res.log_prob_calls * INNER * len(obs_list) + r
                     * (1 + len(obs_list)), "draws": int(res.draws.shape[0])}
    else:
        post_cols, post_dir, w_post, post_preds = dict(cols), dict(by_direction), w_re, preds
        post_options, post_far = options, far_field
    prior_risk = _risk(scenario, by_direction, equal, options, far_field)
    post_risk = _risk(scenario, post_dir, w_post, post_options, post_far)
    rows = []
    warnings = []
    if not use_mcmc and ess < spec.min_ess:
        warnings.append(f"the reweighting rests on an effective {ess:.0f} samples (fewer than "
                        f"{spec.min_ess}): the posterior is uncertain; use method = \"mcmc\"")
    if mcmc_info is not None and max(mcmc_info["rhat"].values()) > 1.05:
        warnings.append("MCMC chains have not mixed (split R-hat above 1.05): raise "
                        "calibration.mcmc_steps")
    for obs, c_prior, c_post in zip(obs_list, preds, post_preds, strict=True):
        pri = float(np.sum(equal * outcome_probability(
            c_prior, outcome=obs.outcome, drawdown=obs.drawdown, low=obs.low, high=obs.high,
            sigma=sigma)))
        post = float(np.sum(w_post * outcome_probability(
            c_post, outcome=obs.outcome, drawdown=obs.drawdown, low=obs.low, high=obs.high,
            sigma=sigma)))
        if obs.outcome == "onset":
            tail_prior, tail_post = min(pri, 1 - pri), min(post, 1 - post)
        else:
            tail_prior, tail_post = pri, post
        reproduced = tail_post >= PREDICTIVE_TAIL
        conflict = tail_prior < CONFLICT_TAIL
        if conflict:
            warnings.append(f"history {obs.name!r} conflicts with the model beyond its stated "
                            f"error: prior predictive probability {tail_prior:.2g}")
        elif not reproduced:
            warnings.append(f"history {obs.name!r} is not reproduced by the calibrated model "
                            f"(posterior predictive probability {tail_post:.2g})")
        rows.append({"name": obs.name, "source": obs.source, "outcome": obs.outcome,
                     "reservoir_pressure": obs.reservoir_pressure, "drawdown": obs.drawdown,
                     "low": obs.low, "high": obs.high, "weight": obs.weight,
                     "overridden": obs.overridden, "prior_predictive": pri,
                     "posterior_predictive": post, "reproduced": reproduced,
                     "conflict": conflict,
                     "median_prediction_prior": weighted_quantile(c_prior, equal, 0.5),
                     "median_prediction_posterior": weighted_quantile(c_post, w_post, 0.5)})
    prior_in, post_in, hist = {}, {}, {}
    for n in theta:
        xp, xq = np.asarray(cols[n], dtype=float), np.asarray(post_cols[n], dtype=float)
        prior_in[n] = _input_summary(xp, equal)
        post_in[n] = _input_summary(xq, w_post)
        lo_x, hi_x = np.quantile(xp, [0.001, 0.999])
        edges = np.linspace(float(lo_x), float(hi_x), 31)
        hp, _ = np.histogram(xp, edges, weights=equal, density=True)
        hq, _ = np.histogram(xq, edges, weights=w_post, density=True)
        hist[n] = {"edges": edges, "prior": hp, "posterior": hq}
    keys = tuple(k for k in decision.SAND_PRODUCTION if k in post_dir)
    samples = {"cols": post_cols, "weights": w_post,
               "sand": decision.sand_drawdown(post_dir, keys) if keys else None}
    return Calibration("mcmc" if use_mcmc else "reweight", theta, sigma, ess,
                       int(w_post.size), spec.min_ess, prior_in, post_in, hist, tuple(rows),
                       prior_risk, post_risk, tuple(warnings), mcmc_info, samples)


def value_of_information_table(scenario: Any, cols: Mapping[str, Array], sand: Array,
                               weights: Array | None, uncertain: tuple[str, ...],
                               seed: int) -> tuple[VoiRow, ...]:
    """Every uncertain input measured perfectly, then every named ``[[measurement]]``; per
    stage the expected gain of the sand-free limit [MPa] with its Monte-Carlo error."""
    from risk.calibration.history import Measurement

    history = scenario.history
    wanted = [Measurement(f"{n} (perfect)", n) for n in uncertain]
    if history is not None:
        wanted += list(history.measurements)
    caps = np.asarray(scenario.reservoir_pressure)
    # one set of bootstrap multipliers for today's limit and every measurement: the paired
    # error of each gain (risk.calibration.voi)
    boot = bootstrap_multipliers(sand.shape[0], rng=rng_stream(seed, "voi", BOOT_STREAM))
    today = limit_today(output=sand, accepted_risk=scenario.accepted_risk, cap=caps,
                        weights=weights, boot=boot)
    out = []
    for j, meas in enumerate(wanted):
        rng = rng_stream(seed, "voi", j)
        x = np.asarray(cols[meas.input], dtype=float)
        signal = simulate_measurement(x, error=meas.error, relative_error=meas.relative_error,
                                      rng=rng)
        ests = value_of_information(signal=signal, output=sand,
                                    accepted_risk=scenario.accepted_risk,
                                    cap=caps, weights=weights, boot=boot, today=today)
        assert isinstance(ests, list)
        vals = [e.value for e in ests]
        errs = [e.error for e in ests]
        out.append(VoiRow(meas.name, meas.input, meas.error, meas.relative_error,
                          meas.error == 0 and meas.relative_error == 0, tuple(vals),
                          tuple(errs)))
    return tuple(out)
