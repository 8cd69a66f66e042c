"""The answers a design review reads first: the sand-free drawdown limit and the gun phasing.

*First yield at the wall* is not sand production: weak sand often yields with no drawdown at
all and still produces no sand. The **sand-free drawdown limit** is therefore governed only by
the sand-production mechanisms the scenario enables (effective-strength sanding onset and
tunnel collapse). A sample is taken to produce sand at the smallest drawdown at which any of
them says so (the two are alternative predictors of the same event, so the earlier one is the
conservative reading); the limit at a stage is the accepted-risk quantile of that drawdown
(:func:`risk.probability.drawdown_limit`), capped at the reservoir pressure. The mechanism
*governing* a stage is the one with the smallest limit of its own; both are reported.

**One completion for the life of the well.** A gun is shot once, so its phasing is chosen over
the whole depletion plan: among the candidate shot sets (each gun phasing at each orientation
that the scenario's shot directions can form, and the scenario's own set), the choice has the
largest *smallest limit over the stages*; ties go to the lower mean probability of sanding at
the planned operating points, then to the larger sum of the stage limits, then to more shot
directions (more inflow area per foot: common practice), then to the first in the list. With
every other thing equal, fewer directions never score worse on sanding alone (the minimum over
fewer tunnels is no smaller), so each phasing is also reported at its own best orientation:
productivity and shot density are the engineer's side of the trade.

Everything here is pure: arrays in, frozen results out, internal units (MPa, rad).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from risk import probability

__all__ = ["SAND_PRODUCTION", "StageLimit", "ZeroLimit", "PointRisk", "SandFree", "Candidate",
           "PhasingChoice", "sand_drawdown", "sand_free", "zero_limit_pressure",
           "phasing_candidates", "choose_phasing", "COMMON_PHASINGS"]

Array = NDArray[np.float64]

#: Mechanisms that predict sand production (first yield at the wall does not).
SAND_PRODUCTION = ("effective_strength_onset", "tunnel_collapse")
#: Gun phasings offered by default [deg] (0 = every shot in one direction).
COMMON_PHASINGS = (0.0, 60.0, 90.0, 120.0, 180.0)
_ANGLE_TOL = 1e-6  # [deg] two shot directions closer than this are the same direction


def _key(x: float) -> float:
    """A ranking key insensitive to floating-point noise (9 significant digits)."""
    return float(f"{x:.9g}") if math.isfinite(x) else x


@dataclass(frozen=True)
class StageLimit:
    """The sand-free drawdown limit at one depletion stage [MPa]."""

    reservoir_pressure: float
    limit: float                       # accepted-risk quantile, capped at p_r
    lower: float | None                # 95% lower confidence bound (None: too few samples)
    governing: str                     # mechanism with the smallest own limit
    by_mechanism: Mapping[str, float]  # each mechanism's own limit, capped at p_r
    p_no_drawdown: float               # P(sand with no drawdown at all)
    p_no_drawdown_band: tuple[float, float]  # its 95% Wilson band
    #: how the limit was found: "sampling" (the sampled quantile) or the reliability method
    #: that solved P(sand at D) = accepted risk ("importance sampling", "SORM", "FORM")
    method: str = "sampling"


@dataclass(frozen=True)
class ZeroLimit:
    """Where over depletion the sand-free limit reaches zero.

    kind: "first-stage" (zero already at the first stage), "between" (positive at
    ``above``, zero at ``below``; ``estimate`` from :func:`zero_limit_pressure`), or "never"
    (positive down to the last stage, ``above``).
    """

    kind: str
    above: float | None = None
    below: float | None = None
    estimate: float | None = None


@dataclass(frozen=True)
class PointRisk:
    """P(sanding) at a planned operating point (reservoir pressure, flowing wall pressure)."""

    reservoir_pressure: float
    wall_pressure: float
    probability: float | None  # None: the reservoir pressure is not a depletion stage
    band: tuple[float, float] | None
    stage: int | None
    beyond_limit: bool | None


@dataclass(frozen=True)
class SandFree:
    """The headline: the sand-free limit per stage and what it means at the planned points."""

    mechanisms: tuple[str, ...]
    stages: tuple[StageLimit, ...]
    zero: ZeroLimit
    points: tuple[PointRisk, ...]


def sand_drawdown(by_direction: Mapping[str, Array], keys: Sequence[str],
                  directions: Sequence[int] | None = None) -> Array:
    """Per sample and stage, the smallest critical drawdown over the mechanisms ``keys`` and the
    shot directions ``directions`` (all when None) [MPa], shape (n, n_stages), float64."""
    out: Array | None = None
    for key in keys:
        arr = by_direction[key]
        sub = arr if directions is None else arr[:, list(directions), :]
        m = np.min(sub, axis=1).astype(np.float64)
        out = m if out is None else np.minimum(out, m)
    if out is None:
        raise ValueError("no mechanism given")
    return out


def _stage_index(stages: Sequence[float], p_r: float) -> int | None:
    """The stage at reservoir pressure ``p_r`` (None: not a stage)."""
    return next((i for i, s in enumerate(stages)
                 if math.isclose(s, p_r, rel_tol=1e-9, abs_tol=1e-9)), None)


def _limit(dc: Array, risk: float, p_r: float) -> tuple[float, float | None]:
    lim, low = probability.drawdown_limit(dc, risk)
    return min(lim, p_r), (min(low, p_r) if low > -math.inf else None)


def zero_limit_pressure(stages: Sequence[float], limits: Sequence[float],
                        p_zero: Sequence[float], accepted_risk: float) -> ZeroLimit:
    """Where the sand-free limit first reaches zero as the reservoir depletes.

    The limit is zero exactly where P(sand with no drawdown) reaches the accepted risk, so the
    estimate interpolates that probability linearly in the reservoir pressure between the last
    stage with a positive limit and the first with a zero one (the limit itself, floored at
    zero, cannot be interpolated).
    """
    order = sorted(range(len(stages)), key=lambda i: -stages[i])
    ps = [stages[i] for i in order]
    ls = [limits[i] for i in order]
    p0 = [p_zero[i] for i in order]
    if ls and ls[0] <= 0.0:
        return ZeroLimit("first-stage", below=ps[0])
    for i in range(1, len(ps)):
        if ls[i] <= 0.0:
            span = p0[i] - p0[i - 1]
            frac = (accepted_risk - p0[i - 1]) / span if span > 0 else 1.0
            est = ps[i - 1] + min(max(frac, 0.0), 1.0) * (ps[i] - ps[i - 1])
            return ZeroLimit("between", above=ps[i - 1], below=ps[i], estimate=est)
    return ZeroLimit("never", above=ps[-1] if ps else None)


def sand_free(by_direction: Mapping[str, Array], stages: Sequence[float], accepted_risk: float,
              operating_points: Sequence[tuple[float, float]] = (),
              directions: Sequence[int] | None = None,
              solved: Mapping[int, tuple[float, float | None, str]] | None = None,
              solved_own: Mapping[tuple[str, int], float] | None = None) -> SandFree | None:
    """The sand-free drawdown limit at every stage (module docstring), or None when the
    scenario enables no sand-production mechanism.

    Parameters
    ----------
    by_direction : mapping
        Mechanism key -> critical drawdown [MPa], (n, n_directions, n_stages), +inf = never.
    stages : sequence of float
        Reservoir pressure of each stage [MPa].
    accepted_risk : float
        Accepted probability of sanding [-].
    operating_points : sequence of (p_r, p_w)
        Planned reservoir and flowing wall pressures [MPa].
    directions : sequence of int, optional
        Shot directions of the completion (indices; all when None).
    solved : mapping stage -> (limit, lower, method), optional
        Limits of the sand drawdown solved by a reliability method where sampling cannot
        resolve the quantile at a small accepted risk (:mod:`risk.small_risk`) [MPa]; they
        replace the sampled quantile (and its lower bound) at those stages, never above any
        mechanism's own limit.
    solved_own : mapping (mechanism, stage) -> limit, optional
        The same for each mechanism's own limit [MPa].
    """
    keys = tuple(k for k in SAND_PRODUCTION if k in by_direction)
    if not keys:
        return None
    sand = sand_drawdown(by_direction, keys, directions)
    own_all = {}  # each mechanism's own limit per stage (its drawdowns formed once)
    for key in keys:
        one = sand_drawdown(by_direction, (key,), directions)
        own_all[key] = [_limit(one[:, k], accepted_risk, p_r)[0] for k, p_r in enumerate(stages)]
        del one
    rows = []
    for k, p_r in enumerate(stages):
        col = np.sort(sand[:, k])
        lim, low = _limit(col, accepted_risk, p_r)
        method = "sampling"
        if solved is not None and k in solved:
            lim, low, method = solved[k]
            lim = min(lim, p_r)
            low = None if low is None else min(low, lim)
        own = {key: own_all[key][k] for key in keys}
        if solved_own:
            own.update({key: min(solved_own[(key, k)], p_r) for key in keys
                        if (key, k) in solved_own})
        if method != "sampling":
            # P(min(D_1, D_2) <= D) >= P(D_i <= D): the combined limit is never above a
            # mechanism's own (an estimate around one design point can miss the other's region)
            lim = min([lim, *own.values()])
            low = None if low is None else min(low, lim)
        governing = min(keys, key=lambda key: (_key(own[key]), keys.index(key)))
        p0, lo0, hi0 = probability.failure_curve(col, [0.0])
        rows.append(StageLimit(p_r, lim, low, governing, own, float(p0[0]),
                               (float(lo0[0]), float(hi0[0])), method))
    zero = zero_limit_pressure(list(stages), [r.limit for r in rows],
                               [r.p_no_drawdown for r in rows], accepted_risk)
    points = []
    for p_r, p_w in operating_points:
        at = _stage_index(stages, p_r)
        if at is None:
            points.append(PointRisk(p_r, p_w, None, None, None, None))
            continue
        p, lo, hi = probability.failure_curve(sand[:, at], [p_r - p_w])
        points.append(PointRisk(p_r, p_w, float(p[0]), (float(lo[0]), float(hi[0])), at,
                                p_r - p_w > rows[at].limit))
    return SandFree(keys, tuple(rows), zero, tuple(points))


# ------------------------------------------------------------------------- gun phasing ----

@dataclass(frozen=True)
class Candidate:
    """A shot set: gun ``phasing`` [deg] (None: the scenario's own set as given), its
    ``orientation`` [deg] (the first shot's direction) and the direction indices it uses."""

    phasing: float | None
    orientation: float
    directions: tuple[int, ...]


@dataclass(frozen=True)
class PhasingChoice:
    """The completion for the life of the well, and the comparison behind it [MPa]."""

    chosen: Candidate
    limits: tuple[float, ...]                # the chosen set's limit at every stage
    per_stage_best: tuple[tuple[Candidate, float], ...]  # the best set at each stage alone
    by_phasing: tuple[tuple[Candidate, tuple[float, ...]], ...]  # each phasing, best orientation
    rule: str
    tied: tuple[Candidate, ...] = ()         # other sets equal to the chosen one in every key


RULE = ("largest smallest-over-stages sand-free limit; ties: lower mean P(sanding) at the "
        "planned operating points, larger sum of stage limits, more shot directions")


def phasing_candidates(angles_deg: Sequence[float],
                       phasings: Sequence[float] = COMMON_PHASINGS) -> list[Candidate]:
    """Every shot set the evaluated directions can form: each phasing at each orientation whose
    shots are all among ``angles_deg``, then the full set as given (if not already listed).
    Sets equal as sets of directions are listed once (the first phasing that forms them)."""
    ang = np.mod(np.asarray(angles_deg, dtype=float), 360.0)

    def find(a: float) -> int | None:
        d = np.abs((ang - a + 180.0) % 360.0 - 180.0)
        j = int(np.argmin(d))
        return j if d[j] <= _ANGLE_TOL else None

    seen: set[frozenset[int]] = set()
    out: list[Candidate] = []
    for ph in phasings:
        count = 1 if ph == 0 else round(360.0 / ph)
        if ph != 0 and abs(count * ph - 360.0) > _ANGLE_TOL:
            continue  # not a whole number of shots per turn
        for o in ang:
            idx = [find(float(o) + i * ph) for i in range(count)]
            if any(i is None for i in idx):
                continue
            members = tuple(sorted({i for i in idx if i is not None}))
            if frozenset(members) in seen:
                continue
            seen.add(frozenset(members))
            out.append(Candidate(float(ph), float(o) % 360.0, members))
    whole = frozenset(range(len(ang)))
    if whole not in seen:
        out.append(Candidate(None, float(ang[0]) if len(ang) else 0.0,
                             tuple(range(len(ang)))))
    return out


def _score(by_direction: Mapping[str, Array], keys: Sequence[str], cand: Candidate,
           stages: Sequence[float], risk: float,
           points: Sequence[tuple[int, float]], weights: Array | None = None
           ) -> tuple[tuple[float, ...], tuple[float, ...]]:
    sand = sand_drawdown(by_direction, keys, cand.directions)
    if weights is None:
        limits = tuple(_limit(sand[:, k], risk, p_r)[0] for k, p_r in enumerate(stages))
        p_mean = (float(np.mean([np.mean(sand[:, k] <= d) for k, d in points])) if points
                  else 0.0)
    else:  # weighted samples (a calibrated posterior): the weighted inverted CDF
        from risk.calibration.posterior import weighted_quantile

        w = np.asarray(weights, dtype=float) / float(np.sum(weights))
        limits = tuple(min(weighted_quantile(sand[:, k], w, risk), p_r)
                       for k, p_r in enumerate(stages))
        p_mean = (float(np.mean([np.sum(w * (sand[:, k] <= d)) for k, d in points]))
                  if points else 0.0)
    key = (_key(min(limits)), _key(-p_mean), _key(sum(limits)), float(len(cand.directions)))
    return key, limits


def choose_phasing(by_direction: Mapping[str, Array], angles_deg: Sequence[float],
                   stages: Sequence[float], accepted_risk: float,
                   operating_points: Sequence[tuple[float, float]] = (),
                   phasings: Sequence[float] = COMMON_PHASINGS, weights: Array | None = None
                   ) -> PhasingChoice | None:
    """The life-of-well shot set by the rule of the module docstring; None without a
    sand-production mechanism or with fewer than two shot directions. ``weights`` (n,):
    sample weights (a calibrated posterior, :mod:`risk.calibration`); equal when omitted."""
    keys = tuple(k for k in SAND_PRODUCTION if k in by_direction)
    if not keys or len(angles_deg) < 2:
        return None
    cands = phasing_candidates(angles_deg, phasings)
    points = []
    for p_r, p_w in operating_points:
        at = _stage_index(stages, p_r)
        if at is not None:
            points.append((at, p_r - p_w))
    scored = [(_score(by_direction, keys, c, stages, accepted_risk, points, weights), i, c)
              for i, c in enumerate(cands)]
    # best first: larger keys, then the earlier candidate
    scored.sort(key=lambda t: (tuple(-v for v in t[0][0]), t[1]))
    (best_key, best_limits), _, best = scored[0]
    tied = tuple(c for (k, _), _, c in scored[1:] if k == best_key)
    per_stage = []
    for k in range(len(stages)):
        top = max(scored, key=lambda t: (_key(t[0][1][k]), -t[1]))
        per_stage.append((top[2], top[0][1][k]))
    by_phasing: dict[float | None, tuple[Candidate, tuple[float, ...]]] = {}
    for (_, limits), _, c in scored:  # already best first: the first of each phasing wins
        by_phasing.setdefault(c.phasing, (c, limits))
    return PhasingChoice(best, best_limits, tuple(per_stage), tuple(by_phasing.values()),
                         RULE, tied)
