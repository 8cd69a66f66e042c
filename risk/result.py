"""Typed results: every engineering answer of a run, computed once, before any report.

:func:`summarize` turns an :class:`~risk.assessment.Assessment` (per-sample outcomes) into a
frozen :class:`Result` holding, per mechanism and depletion stage, the critical-drawdown
percentiles, the failure-probability curve with its band, the drawdown limit and its lower
confidence bound, the per-shot results with the best and worst directions, the best pair of
opposite shots, the small-risk estimates; the sand-free limit and the life-of-well gun
(:mod:`risk.decision`); pore collapse; sensitivity. Numbers are in internal units (MPa, rad);
``to_frame(units="scenario")`` gives pandas tables with the unit in every column name.

``risk.report`` only formats a :class:`Result` (JSON, console, figures, memo): where a limit is
computed has a one-file answer, here (and the statistics themselves in
:mod:`risk.probability`).
"""

from __future__ import annotations

import math
import os
from collections.abc import Mapping
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from types import MappingProxyType
from typing import TYPE_CHECKING, Any

import numpy as np
from numpy.typing import NDArray

from risk import decision, probability
from risk.conventions import TO_INTERNAL

if TYPE_CHECKING:  # pragma: no cover
    import pandas as pd

    from risk.assessment import Assessment

__all__ = ["GRID_POINTS", "LEVELS", "Shot", "StageResult", "MechanismSummary", "PoreCollapse",
           "Result", "summarize", "Limits", "Curves", "SensitivityTable"]

Array = NDArray[np.float64]

SUMMARY_THREADS = 2  # threads over (mechanism, stage) in summarize (1: in turn)
GRID_POINTS = 51  # drawdowns of the failure-probability curve, from 0 to max_drawdown
LEVELS = (0.01, 0.05, 0.1, 0.25, 0.5, 0.75, 0.9)  # envelope levels (share of samples failing)


def _key(x: float) -> float:
    """A ranking key insensitive to floating-point noise (9 significant digits)."""
    return float(f"{x:.9g}") if math.isfinite(x) else x


def _frozen(a: Array) -> Array:
    out = np.array(a, dtype=float)
    out.setflags(write=False)
    return out


@dataclass(frozen=True)
class Shot:
    """One shot direction at one stage [rad, MPa]."""

    angle: float
    critical_drawdown_p50: float
    drawdown_limit: float        # this direction's own limit, capped at p_r
    probability_at_limit: float  # share failing at the well's limit


@dataclass(frozen=True)
class StageResult:
    """One mechanism at one depletion stage [MPa; angles rad; +inf = never]."""

    reservoir_pressure: float
    critical_drawdown: Mapping[str, float]      # p10, p50, p90, mean
    critical_wall_pressure: Mapping[str, float]  # p01 ... p90 (envelope levels)
    never_fraction: float
    zero_drawdown_fraction: float
    drawdown_limit: float                # capped at p_r (p_r where beyond it)
    drawdown_limit_lower: float | None   # one-sided 95% bound; None: too few samples
    limit_beyond: bool                   # fewer than the accepted share fail within [0, p_r]
    grid: Array                          # drawdowns of the curve
    p: Array                             # P(failure) on the grid, with its 95% band
    low: Array
    high: Array
    convergence_warning: str | None
    small_risk: Mapping[str, Any] | None = None
    #: how the limit was found where the small-risk methods ran: "sampling" (the sampled
    #: quantile) or the reliability method that solved it (risk.small_risk); None otherwise
    limit_method: str | None = None
    shots: tuple[Shot, ...] = ()
    worst_shots: tuple[float, ...] = ()  # every direction tied worst (empty: no preference)
    best_shots: tuple[float, ...] = ()
    best_pair: tuple[tuple[float, float], float] | None = None  # opposite shots, their limit
    worst_wall_angle: float | None = None  # open hole: axial circular mean [rad]


@dataclass(frozen=True)
class MechanismSummary:
    key: str
    name: str
    stages: tuple[StageResult, ...]


@dataclass(frozen=True)
class PoreCollapse:
    """Pore collapse: critical reservoir pressure percentiles and P per stage [MPa]."""

    far_field: Mapping[str, float]   # p10, p50, p90 (p10 > p50 > p90)
    wall: Mapping[str, float]
    stages: tuple[Mapping[str, float], ...]  # reservoir_pressure, probability, low, high,
    #                                           wall_probability
    never_fraction: float
    initially_compacted_fraction: float | None
    wall_initially_compacted_fraction: float | None
    uncollapsed_at_last_stage_fraction: float | None
    #: the yield surface used ("modified-cam-clay" or "mean-stress")
    surface: str = "mean-stress"
    #: far-field p10/p50/p90 of the mean-stress criterion when the cap governs [MPa]
    mean_stress: Mapping[str, float] | None = None


class _Table:
    """Rows of one kind, with a pandas view (units in the column names)."""

    def __init__(self, rows: list[dict[str, Any]], units: Mapping[str, str], result: Result
                 ) -> None:
        self._rows = rows
        self._units = units  # column -> dimension ("pressure", "angle", "" for none)
        self._result = result

    def __len__(self) -> int:
        return len(self._rows)

    def to_frame(self, units: str = "scenario") -> pd.DataFrame:
        """A pandas DataFrame; ``units="scenario"`` (the scenario's psi or MPa) or ``"si"``
        (MPa). Angles in degrees."""
        import pandas as pd

        if units not in ("scenario", "si"):
            raise ValueError(f'units must be "scenario" or "si", got {units!r}')
        sc = self._result.scenario
        from risk.conventions import DISPLAY_UNITS

        disp = DISPLAY_UNITS[sc.units] if units == "scenario" else {"pressure": "MPa"}
        scale = TO_INTERNAL[sc.units]["pressure"] if units == "scenario" else 1.0
        cols: dict[str, list[Any]] = {}
        for name, dim in self._units.items():
            values = [r.get(name) for r in self._rows]
            if dim == "pressure":
                label = f"{name} [{disp['pressure']}]"
                values = [None if v is None else float(v) / scale for v in values]
            elif dim == "angle":
                label = f"{name} [deg]"
                values = [None if v is None or not math.isfinite(v) else math.degrees(v)
                          for v in values]
            elif dim:
                label = f"{name} [{dim}]"
            else:
                label = name
            cols[label] = values
        return pd.DataFrame(cols)


class Limits(_Table):
    """Per mechanism and stage (and, for perforated wells, per shot direction): the drawdown
    limit at the accepted risk, its 95% lower bound and the critical-drawdown percentiles."""


class Curves(_Table):
    """The failure-probability curves: per mechanism, stage and drawdown, P and its band."""


class SensitivityTable(_Table):
    """Sobol/Shapley indices per mechanism, stage and input."""


@dataclass(frozen=True)
class Result:
    """Everything a run answers (internal units), before any formatting."""

    assessment: Assessment
    mechanisms: Mapping[str, MechanismSummary]
    pore_collapse: PoreCollapse | None
    first_yield: tuple[float, ...] | None  # yield-onset limit per stage (reference only)

    @property
    def scenario(self) -> Any:
        return self.assessment.scenario

    @property
    def sand_free(self) -> decision.SandFree | None:
        return self.assessment.sand_free

    @property
    def phasing(self) -> decision.PhasingChoice | None:
        return self.assessment.phasing

    @property
    def options(self) -> tuple[Any, ...]:
        return self.assessment.options

    @property
    def seed(self) -> int:
        return self.assessment.seed

    @property
    def limits(self) -> Limits:
        rows: list[dict[str, Any]] = []
        for key, m in self.mechanisms.items():
            for k, st in enumerate(m.stages):
                base = {"mechanism": key, "stage": k,
                        "reservoir_pressure": st.reservoir_pressure}
                rows.append({**base, "direction": None,
                             "drawdown_limit": st.drawdown_limit,
                             "drawdown_limit_lower": st.drawdown_limit_lower,
                             "critical_drawdown_p10": st.critical_drawdown["p10"],
                             "critical_drawdown_p50": st.critical_drawdown["p50"],
                             "critical_drawdown_p90": st.critical_drawdown["p90"],
                             "never_fraction": st.never_fraction,
                             "zero_drawdown_fraction": st.zero_drawdown_fraction})
                for sh in st.shots:
                    rows.append({**base, "direction": sh.angle,
                                 "drawdown_limit": sh.drawdown_limit,
                                 "drawdown_limit_lower": None,
                                 "critical_drawdown_p10": None,
                                 "critical_drawdown_p50": sh.critical_drawdown_p50,
                                 "critical_drawdown_p90": None,
                                 "never_fraction": None, "zero_drawdown_fraction": None})
        sf = self.sand_free
        if sf is not None:
            for k, row in enumerate(sf.stages):
                rows.append({"mechanism": "sand_free", "stage": k,
                             "reservoir_pressure": row.reservoir_pressure, "direction": None,
                             "drawdown_limit": row.limit, "drawdown_limit_lower": row.lower,
                             "critical_drawdown_p10": None, "critical_drawdown_p50": None,
                             "critical_drawdown_p90": None, "never_fraction": None,
                             "zero_drawdown_fraction": row.p_no_drawdown})
        return Limits(rows, {"mechanism": "", "stage": "", "reservoir_pressure": "pressure",
                             "direction": "angle", "drawdown_limit": "pressure",
                             "drawdown_limit_lower": "pressure",
                             "critical_drawdown_p10": "pressure",
                             "critical_drawdown_p50": "pressure",
                             "critical_drawdown_p90": "pressure",
                             "never_fraction": "-", "zero_drawdown_fraction": "-"}, self)

    @property
    def curves(self) -> Curves:
        rows: list[dict[str, Any]] = []
        for key, m in self.mechanisms.items():
            for k, st in enumerate(m.stages):
                for d, p, lo, hi in zip(st.grid, st.p, st.low, st.high, strict=True):
                    rows.append({"mechanism": key, "stage": k,
                                 "reservoir_pressure": st.reservoir_pressure,
                                 "drawdown": float(d), "probability": float(p),
                                 "low": float(lo), "high": float(hi)})
        return Curves(rows, {"mechanism": "", "stage": "", "reservoir_pressure": "pressure",
                             "drawdown": "pressure", "probability": "-", "low": "-",
                             "high": "-"}, self)

    @property
    def sensitivity(self) -> SensitivityTable:
        rows: list[dict[str, Any]] = []
        for (key, stage), r in self.assessment.sensitivity.items():
            for j, name in enumerate(r.names):
                rows.append({"mechanism": key, "stage": stage, "input": name,
                             "first": float(r.first[j]), "total": float(r.total[j]),
                             "shapley": float(r.shapley[j]), "method": r.method})
        return SensitivityTable(rows, {"mechanism": "", "stage": "", "input": "",
                                       "first": "-", "total": "-", "shapley": "-",
                                       "method": ""}, self)


# ------------------------------------------------------------------------ computations ----

def _best_pair(directions: tuple[float, ...], by_dir: Array, p_r: float, risk: float
               ) -> tuple[tuple[float, float], float] | None:
    """The best 180-degree phasing (two opposite shots) among the scenario's directions.

    A pair fails when either tunnel fails, so its critical drawdown per sample is the smaller
    of the two; the pair with the largest drawdown limit at the accepted risk wins. None with
    fewer than two pairs, or when every pair is alike (no preference).
    """
    angles = np.mod(np.degrees(np.asarray(directions)), 360.0)
    best: tuple[tuple[float, float, float], int, int] | None = None
    worst: tuple[float, float, float] | None = None
    for i, ai in enumerate(angles):
        for j, aj in enumerate(angles):
            if j <= i or not np.isclose(np.mod(aj - ai, 360.0), 180.0, atol=1e-6):
                continue
            pair = np.minimum(by_dir[:, i], by_dir[:, j])
            lim = min(probability.drawdown_limit(pair, risk)[0], p_r)
            key = (_key(lim), _key(-float(np.mean(pair <= lim))),
                   _key(float(np.mean(np.minimum(pair, p_r)))))
            if best is None or key > best[0]:
                best = (key, i, j)
            worst = key if worst is None or key < worst else worst
    if best is None or worst == best[0]:
        return None
    (lim, _, _), i, j = best
    return (directions[i], directions[j]), lim


def _shots(a: Assessment, by_dir: Array, limit: float, p_r: float
           ) -> tuple[tuple[Shot, ...], tuple[float, ...], tuple[float, ...]]:
    """Per shot direction, and the worst and best directions (every tied one named)."""
    risk = a.scenario.accepted_risk
    lim = limit if math.isfinite(limit) else p_r
    n_dir = by_dir.shape[1]
    # each direction sorted once, for its median and its limit (the probability functions take
    # a sorted array as it is)
    p50s, limits = [], []
    for j in range(n_dir):
        col = by_dir[:, j].astype(np.float64)  # a copy, sorted in place
        col.sort()
        p50s.append(float(probability.percentiles(col, [0.5])[0]))
        limits.append(min(probability.drawdown_limit(col, risk)[0], p_r))
    p_at = [probability.fraction_at_or_below(by_dir[:, j], lim) for j in range(n_dir)]
    # mean of the critical drawdown capped at p_r: the last tie-breaker (larger is safer)
    means = [float(np.mean(np.minimum(by_dir[:, j], p_r))) for j in range(n_dir)]
    shots = tuple(Shot(ang, v, lim_j, pj)
                  for ang, v, lim_j, pj in zip(a.directions, p50s, limits, p_at, strict=True))
    # best: largest own limit, then lowest probability at the well's limit, then largest
    # capped mean; worst: the reverse; rounded so that floating-point noise (opposite shots,
    # equal by symmetry) cannot pick a winner. Exact ties all the way: no preference.
    keys = [(_key(lim_j), _key(-pj), _key(mj))
            for lim_j, pj, mj in zip(limits, p_at, means, strict=True)]
    order = sorted(range(len(keys)), key=lambda j: keys[j])
    worst, best = order[0], order[-1]
    if keys[best] == keys[worst]:
        return shots, (), ()
    worst_all = tuple(a.directions[j] for j in range(n_dir) if keys[j] == keys[worst])
    best_all = tuple(a.directions[j] for j in range(n_dir) if keys[j] == keys[best])
    return shots, worst_all, best_all


def _stage(a: Assessment, key: str, k: int) -> StageResult:
    sc = a.scenario
    mech = a.mechanisms[key]
    p_r = a.stages[k]
    # sorted once, in double precision: every probability function below then reuses it
    # (one copy, sorted in place: at 10^7 samples each extra copy is 80 MB of peak memory)
    col = mech.by_direction[:, :, k]
    if col.shape[1] > 1:  # one gather: each direction's column contiguous for all below
        col = np.asfortranarray(col)
    # pairwise minima over the few directions: the values of col.min(axis=1) (a minimum is
    # exact), without numpy's slow reduction along a middle axis
    dc = col[:, 0].astype(np.float64)
    for j in range(1, col.shape[1]):
        np.minimum(dc, col[:, j], out=dc)
    dc.sort()
    qs = probability.percentiles(dc, LEVELS)
    q = qs[[2, 4, 6]]
    finite = np.isfinite(dc)
    mean = float(dc.mean()) if finite.all() else math.inf
    grid = np.linspace(0.0, sc.max_drawdown, GRID_POINTS)
    p, lo, hi = probability.failure_curve(dc, grid)
    limit, lower = probability.drawdown_limit(dc, sc.accepted_risk)
    if a.deterministic:  # one exact evaluation: no sampling error, no band, bound = value
        lo, hi, lower = p, p, limit
    rel = a.reliability.get((key, k))
    method = "sampling" if rel is None else str(rel.get("limit_method", "sampling"))
    if rel is not None and method != "sampling":
        # sampling cannot resolve the quantile: the limit solved by the reliability method
        limit = float(rel["limit"])
        low_rel = rel.get("limit_lower")
        lower = -math.inf if low_rel is None else float(low_rel)
    never = float(np.mean(~finite))
    zero = float(np.mean(dc <= 0.0))
    warning = None if a.deterministic else probability.convergence_warning(dc, sc.accepted_risk)
    del dc
    extra: dict[str, Any] = {}
    if sc.well.completion == "perforated":
        by_dir = col  # (n, directions), the same values, column by column
        shots, worst, best = _shots(a, by_dir, limit, p_r)
        extra = {"shots": shots, "worst_shots": worst, "best_shots": best,
                 "best_pair": _best_pair(a.directions, by_dir, p_r, sc.accepted_risk)}
    else:
        th = mech.theta[:, 0, k]
        ok = np.isfinite(th)
        # wall angles are axial (t and t + pi are the same place): circular mean of 2t
        if ok.any():
            mean2 = math.atan2(float(np.mean(np.sin(2 * th[ok]))),
                               float(np.mean(np.cos(2 * th[ok]))))
            extra = {"worst_wall_angle": (0.5 * mean2) % math.pi}
    return StageResult(
        reservoir_pressure=p_r,
        critical_drawdown=MappingProxyType({"p10": float(q[0]), "p50": float(q[1]),
                                            "p90": float(q[2]), "mean": mean}),
        critical_wall_pressure=MappingProxyType({
            f"p{round(100 * lv):02d}": float(p_r - v) for lv, v in zip(LEVELS, qs, strict=True)}),
        never_fraction=never, zero_drawdown_fraction=zero,
        drawdown_limit=min(limit, p_r) if math.isfinite(limit) else p_r,
        drawdown_limit_lower=min(lower, p_r) if lower > -math.inf else None,
        limit_beyond=not math.isfinite(limit) or (method != "sampling" and limit >= p_r),
        grid=_frozen(grid), p=_frozen(p), low=_frozen(lo), high=_frozen(hi),
        convergence_warning=warning,
        small_risk=None if rel is None else MappingProxyType(dict(rel)),
        limit_method=None if rel is None else method,
        **extra)


def _pore_collapse(a: Assessment) -> PoreCollapse | None:
    """``p10`` is the reservoir pressure at or above which 10% of the samples have collapsed
    (deplete to it and one sample in ten compacts), so p10 > p50 > p90."""
    comp = a.compaction
    if comp is None:
        return None
    # one double copy at a time, sorted in place and reused (each is 80 MB at 10^7 samples)
    neg = np.negative(comp.far_field, dtype=np.float64)
    neg.sort()
    q_far = -probability.percentiles(neg, [0.1, 0.5, 0.9])
    stages: list[Mapping[str, float]] = []
    at_max = comp.wall_at_max_drawdown
    for k, p_r in enumerate(a.stages):
        p, lo, hi = probability.failure_curve(neg, [-p_r])
        if a.deterministic:
            lo, hi = p, p
        row = {"reservoir_pressure": p_r, "probability": float(p[0]), "low": float(lo[0]),
               "high": float(hi[0]), "wall_probability": float(np.mean(comp.wall >= p_r))}
        if at_max is not None:
            row["wall_probability_at_max_drawdown"] = float(np.mean(at_max[:, k] >= 0.0))
        stages.append(MappingProxyType(row))
    del neg
    neg = np.negative(comp.wall, dtype=np.float64)
    neg.sort()
    q_wall = -probability.percentiles(neg, [0.1, 0.5, 0.9])
    del neg
    initial = comp.initial
    mean_q = None
    if comp.far_field_mean_stress is not None:
        neg = np.negative(comp.far_field_mean_stress, dtype=np.float64)
        neg.sort()
        mean_q = MappingProxyType(dict(zip(
            ("p10", "p50", "p90"), map(float, -probability.percentiles(neg, [0.1, 0.5, 0.9])),
            strict=True)))
        del neg
    return PoreCollapse(
        far_field=MappingProxyType(dict(zip(("p10", "p50", "p90"), map(float, q_far),
                                            strict=True))),
        wall=MappingProxyType(dict(zip(("p10", "p50", "p90"), map(float, q_wall),
                                       strict=True))),
        stages=tuple(stages),
        never_fraction=float(np.mean(np.isneginf(comp.far_field))),
        initially_compacted_fraction=(None if initial is None else
                                      float(np.mean(comp.far_field >= initial))),
        wall_initially_compacted_fraction=(None if initial is None else
                                           float(np.mean(comp.wall >= initial))),
        uncollapsed_at_last_stage_fraction=(float(np.mean(comp.far_field < min(a.stages)))
                                            if a.stages else None),
        surface=a.scenario.compaction_cap, mean_stress=mean_q)


def _first_yield(a: Assessment) -> tuple[float, ...] | None:
    mech = a.mechanisms.get("yield_onset")
    if mech is None:
        return None
    well = mech.well
    out = []
    for k, p_r in enumerate(a.stages):
        rel = a.reliability.get(("yield_onset", k))
        if rel is not None and rel.get("limit_method", "sampling") != "sampling":
            out.append(min(float(rel["limit"]), p_r))  # solved where sampling cannot resolve
        else:
            out.append(min(probability.drawdown_limit(well[:, k],
                                                      a.scenario.accepted_risk)[0], p_r))
    return tuple(out)


def summarize(a: Assessment) -> Result:
    """Every answer of a run, computed from its per-sample outcomes (internal units)."""
    from risk.assessment import MECHANISMS

    # every (mechanism, stage) apart on a pool of threads: sorting and the other large array
    # operations release the interpreter, so a second core shares them; each is computed
    # as alone, so the answers are the same with any number of threads
    items = [(key, k) for key in a.mechanisms for k in range(len(a.stages))]
    workers = min(len(items), os.cpu_count() or 1, SUMMARY_THREADS)
    if workers > 1:
        with ThreadPoolExecutor(max_workers=workers, thread_name_prefix="risk-summary") as pool:
            stages = list(pool.map(lambda item: _stage(a, *item), items))
    else:
        stages = [_stage(a, key, k) for key, k in items]
    n_k = len(a.stages)
    mechanisms = {key: MechanismSummary(key, MECHANISMS[key],
                                        tuple(stages[i * n_k:(i + 1) * n_k]))
                  for i, key in enumerate(a.mechanisms)}
    return Result(assessment=a, mechanisms=MappingProxyType(mechanisms),
                  pore_collapse=_pore_collapse(a), first_yield=_first_yield(a))
