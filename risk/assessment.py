"""The one orchestrator: scenario -> sampled inputs -> limit states -> a frozen Assessment.

Steps are kept apart: sampling (:mod:`risk.uncertainty`), evaluation
(:mod:`risk.limit_states`, pure and vectorised over samples x directions x stages, run here in
chunks so memory stays bounded), the small-risk methods and sensitivity, and the decisions of
:mod:`risk.decision`. The answers are computed from the Assessment in :mod:`risk.result`.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any, Final

import numpy as np
from numpy.typing import NDArray

from risk import __version__, _overlap, decision, probability
from risk._cores import second_core_idle
from risk._sensitivity_step import GROUPS as GROUPS
from risk._sensitivity_step import HOLDOUT_RUNS as HOLDOUT_RUNS
from risk._sensitivity_step import MC_FALLBACK_RUNS as MC_FALLBACK_RUNS
from risk._sensitivity_step import PCE_TRUNCATIONS as PCE_TRUNCATIONS
from risk._sensitivity_step import SENSITIVITY_RUNS as SENSITIVITY_RUNS
from risk._sensitivity_step import SHAPLEY_FALLBACK_RUNS as SHAPLEY_FALLBACK_RUNS
from risk._sensitivity_step import _outputs as _outputs
from risk._sensitivity_step import _sensitivity
from risk.limit_states import (
    DEFAULT_TWC_FACTOR,
    MECHANISMS,
    PROFILE_POINTS,
    PROFILE_SAMPLES,
    CompactionResult,
    MechanismResult,
    cavity_radius,
    collapse_profile,
    depletion_paths,
    evaluate,
    evaluate_compaction,
    physical_inputs,
)
from risk.scenario import Scenario
from risk.small_risk import SMALL_RISK, sampling_resolves, small_risk_limit
from risk.uncertainty import UnitSampler, build_joint, input_columns, rng_stream, to_inputs

Array = NDArray[np.float64]
Progress = Callable[[int, int], None]

__all__ = ["MechanismResult", "Assessment", "assess", "evaluate", "ChunkOutcome",
           "evaluate_chunks", "chunk_count", "MECHANISMS", "physical_inputs",
           "CompactionResult", "DEFAULT_TWC_FACTOR", "cavity_radius", "collapse_profile",
           "depletion_paths", "evaluate_compaction", "PROFILE_POINTS", "PROFILE_SAMPLES"]

CHUNK: Final = 4096  # samples per evaluation chunk (a power of two keeps Sobol' balanced)
HEAD_ROWS: Final = 65_536  # leading samples whose inputs and wall angles are kept
LARGE_RUN: Final = 2**20  # above this many samples, outcomes are stored in single precision



@dataclass(frozen=True)
class OptionResult:
    """One completion option of the scenario (``[[option]]``), on the run's own samples."""

    name: str
    well: Any  # risk.scenario.Well
    sand_free: decision.SandFree | None
    phasing: decision.PhasingChoice | None


@dataclass(frozen=True)
class Assessment:
    """Everything one run produced (internal units)."""

    scenario: Scenario
    samples: int
    seed: int
    sampling: str
    deterministic: bool
    directions: tuple[float, ...]  # shot angles [rad]; (nan,) for an open hole
    stages: tuple[float, ...]  # reservoir pressures [MPa]
    #: every input by name for the first HEAD_ROWS samples (what the input summaries and the
    #: sensitivity design use), (min(n, HEAD_ROWS),) [internal units]
    inputs: Mapping[str, Array]
    uncertain: tuple[str, ...]
    xi: Array  # independent standard normals behind those samples (min(n, HEAD_ROWS), d)
    mechanisms: Mapping[str, MechanismResult]
    compaction: CompactionResult | None = None
    #: FORM/SORM/importance sampling per (mechanism, stage index), internal units
    reliability: Mapping[tuple[str, int], Mapping[str, Any]] = field(default_factory=dict)
    #: Sobol/Shapley indices per (mechanism, stage) of the capped critical drawdown
    sensitivity: Mapping[tuple[str, int], Any] = field(default_factory=dict)
    #: one-at-a-time swings per mechanism (first stage): input -> (x_low, x_high, y_low, y_high)
    tornado: Mapping[str, Mapping[str, tuple[float, float, float, float]]] = field(
        default_factory=dict)
    tornado_base: Mapping[str, float] = field(default_factory=dict)
    #: tunnel collapse along the drawdown axis, per stage (first PROFILE_SAMPLES samples, each
    #: at its first-failing direction): drawdown [MPa] (g,), plastic_radius_ratio (m, g),
    #: wall_plastic_strain (m, g); plane_strain_flag: share of collapsing samples whose axial
    #: effective stress exceeds the hoop one at the yielded wall
    collapse_profile: tuple[Mapping[str, Any], ...] = ()
    #: the headline: sand-free drawdown limit per stage (None: no sand-production mechanism)
    sand_free: decision.SandFree | None = None
    #: perforated wells: the gun phasing for the life of the well
    phasing: decision.PhasingChoice | None = None
    #: completion options of the scenario, evaluated on the same samples
    options: tuple[OptionResult, ...] = ()
    #: field-history calibration (risk.calibration.Calibration; None: no history)
    calibration: Any = None
    #: value of information per measurement (risk.calibration.VoiRow; empty: not asked for)
    value_of_information: tuple[Any, ...] = ()
    version: str = __version__
    provenance: Mapping[str, object] = field(default_factory=dict)


def _decisions(scenario: Scenario, well: Any, by_direction: Mapping[str, Array],
               small_risk: Mapping[tuple[str, int], Mapping[str, Any]] | None = None
               ) -> tuple[decision.SandFree | None, decision.PhasingChoice | None]:
    """The sand-free limit and (perforated wells) the life-of-well phasing of one completion.
    ``small_risk``: the reliability results of the scenario's own completion (the sand-free
    limit takes the solved limit where sampling cannot resolve the quantile)."""
    solved = None
    if small_risk:
        solved = {k: (float(r["limit"]), r.get("limit_lower"), str(r["limit_method"]))
                  for (key, k), r in small_risk.items()
                  if key == SAND_FREE_KEY and r.get("limit_method") != "sampling"}
        own = {(key, k): float(r["limit"]) for (key, k), r in small_risk.items()
               if key in decision.SAND_PRODUCTION and r.get("limit_method") != "sampling"}
    sand = decision.sand_free(by_direction, scenario.reservoir_pressure, scenario.accepted_risk,
                              scenario.operating_points, solved=solved or None,
                              solved_own=(own or None) if small_risk else None)
    phasing = None
    if well.completion == "perforated" and sand is not None:
        phasing = decision.choose_phasing(
            by_direction, [math.degrees(x) for x in well.shot_angles],
            scenario.reservoir_pressure, scenario.accepted_risk, scenario.operating_points,
            phasings=scenario.phasings)
    return sand, phasing


SAND_FREE_KEY: Final = "sand_free"  #: reliability key of the combined sand-production drawdown


def _reliability(scenario: Scenario, joint: Any, mechanisms: Mapping[str, MechanismResult],
                 xi_head: Array, n: int, seed_: int, step: Callable[[str], None] | None
                 ) -> dict[tuple[str, int], Mapping[str, Any]]:
    """The small-risk methods (risk.small_risk) per mechanism and stage, and for the combined
    sand-production drawdown of the sand-free limit where sampling cannot resolve it."""
    from risk.uncertainty import normals_to_inputs

    out: dict[tuple[str, int], Mapping[str, Any]] = {}
    risk_ = scenario.accepted_risk
    if risk_ > SMALL_RISK or joint.d == 0:
        return out
    if step is not None:
        step("FORM, SORM and importance sampling at the limits")
    head = xi_head.shape[0]
    sand_keys = tuple(k for k in decision.SAND_PRODUCTION if k in mechanisms)
    targets: list[tuple[str, tuple[str, ...]]] = [(k, (k,)) for k in mechanisms]
    if len(sand_keys) > 1 and not sampling_resolves(n, risk_):
        targets.append((SAND_FREE_KEY, sand_keys))
    for t, (key, members) in enumerate(targets):
        for stage, p_r in enumerate(scenario.reservoir_pressure):
            dc = (mechanisms[key].well[:, stage] if key in mechanisms else decision.sand_drawdown(
                {k: mechanisms[k].by_direction for k in members}, members)[:, stage])
            limit, _ = probability.drawdown_limit(dc, risk_)
            if not math.isfinite(limit):
                continue

            def response(xi: Array, members: tuple[str, ...] = members,
                         stage: int = stage) -> Array:
                cols = input_columns(joint, normals_to_inputs(joint, xi))
                res = evaluate(cols, scenario, only=set(members))
                return np.min([res[k].well[:, stage] for k in members], axis=0)

            def fraction(d: float, dc: Array = dc) -> float:
                return float(np.mean(dc <= d))

            out[(key, stage)] = small_risk_limit(
                response, tuple(joint.names), reservoir_pressure=p_r, accepted_risk=risk_,
                sampled_limit=min(limit, p_r), n_samples=n, sampled_fraction=fraction,
                xi_head=xi_head, dc_head=np.asarray(dc[:head], dtype=float),
                rng=rng_stream(seed_, "reliability", stage, t))
    if len(sand_keys) == 1:  # one sand mechanism: the sand-free drawdown is its own
        for stage in range(len(scenario.reservoir_pressure)):
            if (sand_keys[0], stage) in out:
                out[(SAND_FREE_KEY, stage)] = out[(sand_keys[0], stage)]
    return out


def _calibration(scenario: Scenario, joint: Any, cols: Mapping[str, Array],
                 by_direction: Mapping[str, NDArray[Any]], seed_: int,
                 options: tuple[tuple[str, Any, Mapping[str, NDArray[Any]]], ...] = (),
                 far_field: NDArray[Any] | None = None) -> tuple[Any, tuple[Any, ...]]:
    """Calibration to the field history (when given) and the value of information, on the
    stored samples (risk.calibration); the options' results and pore collapse's far-field
    critical pressures of the same samples are reweighted too."""
    from risk.calibration import calibrate, value_of_information_table

    dirs = {k: np.asarray(v, dtype=np.float64) for k, v in by_direction.items()}
    cal = None
    if scenario.history.calibration is not None:
        opts = tuple((name, well, {k: np.asarray(v, dtype=np.float64) for k, v in d.items()})
                     for name, well, d in options)
        far = None if far_field is None else np.asarray(far_field, dtype=np.float64)
        cal = calibrate(scenario, joint, cols, dirs, seed_, opts, far)
    keys = tuple(k for k in decision.SAND_PRODUCTION if k in dirs)
    if not keys:
        return cal, ()
    if cal is not None:
        vcols, sand, w = cal.samples["cols"], cal.samples["sand"], cal.samples["weights"]
    else:
        vcols, sand, w = cols, decision.sand_drawdown(dirs, keys), None
    return cal, value_of_information_table(scenario, vcols, sand, w, tuple(joint.names), seed_)


@dataclass(frozen=True)
class ChunkOutcome:
    """What one sample chunk of a run evaluates to: the unit of work of a run split over
    processes (:func:`evaluate_chunks` makes them, ``assess(chunks=...)`` continues from them).

    Chunk ``index`` holds samples ``index * CHUNK`` to ``index * CHUNK + size`` of the run,
    exactly as :func:`assess` draws and evaluates them itself, so a split run is bit-identical
    to a single-process run with the same scenario, samples and seed.
    """

    index: int
    size: int
    #: by_direction (size, n_dir, n_stage) [MPa]; theta for the kept leading rows only [rad]
    mechanisms: Mapping[str, MechanismResult]
    #: per completion option, sand-production mechanism -> by_direction [MPa]
    options: tuple[Mapping[str, Array], ...]
    compaction: CompactionResult | None
    inputs: Mapping[str, Array]  # the kept leading rows of every input [internal units]
    xi: Array  # their independent standard normals (kept rows, d)
    profile: tuple[Mapping[str, Any], ...] = ()  # tunnel-collapse profile (chunk 0 only)


def _sampler(scenario: Scenario, joint: Any, seed: int, n: int) -> UnitSampler:
    """The run's unit-cube sampler for ``n`` samples in all (the one place both
    :func:`assess` and :func:`evaluate_chunks` make it, so that they draw the same points)."""
    return UnitSampler(scenario.sampling, joint.d, np.random.default_rng(seed), total=n)


def _balanced(rule: str, n: int) -> bool:
    """What :attr:`UnitSampler.balanced` reports after ``n`` points were drawn."""
    return rule != "sobol" or (n > 0 and n & (n - 1) == 0)


def _evaluate_drawn(scenario: Scenario, joint: Any, option_scenarios: list[Scenario],
                    u: Array, *, index: int, keep: int) -> ChunkOutcome:
    """Evaluate one chunk of unit-cube points ``u`` (every mechanism, the options, pore
    collapse), keeping inputs, normals and wall angles of its first ``keep`` rows."""
    x, xi = to_inputs(joint, u)
    cols = input_columns(joint, x)
    out = evaluate(cols, scenario, parts=True)
    profile: tuple[Mapping[str, Any], ...] = ()
    if index == 0 and "tunnel_collapse" in out:
        m0 = min(PROFILE_SAMPLES, u.shape[0])
        profile = collapse_profile({k: v[:m0] for k, v in cols.items()}, scenario,
                                   out["tunnel_collapse"].by_direction[:m0])
    mechanisms = {k: MechanismResult(k, r.by_direction, r.theta[:keep], r.parts)
                  for k, r in out.items()}
    options = tuple({k: r.by_direction for k, r in
                     evaluate(cols, osc, only=set(decision.SAND_PRODUCTION)).items()}
                    for osc in option_scenarios)
    comp = (evaluate_compaction(cols, scenario)
            if "pore_collapse_pressure" in scenario.inputs else None)
    return ChunkOutcome(index=index, size=u.shape[0], mechanisms=mechanisms, options=options,
                        compaction=comp, inputs={k: v[:keep] for k, v in cols.items()},
                        xi=xi[:keep], profile=profile)


def chunk_count(scenario: Scenario, *, samples: int | None = None) -> int:
    """How many sample chunks :func:`assess` evaluates for this scenario and sample count."""
    names = list(scenario.inputs)
    joint = build_joint(names, [scenario.inputs[k] for k in names],
                        [list(p) for p in scenario.correlation])
    n = scenario.samples if samples is None else int(samples)
    return 1 if joint.d == 0 else -(-n // CHUNK)


def evaluate_chunks(scenario: Scenario, *, samples: int | None = None, seed: int | None = None,
                    start: int, stop: int, progress: Progress | None = None
                    ) -> list[ChunkOutcome]:
    """Evaluate chunks ``start`` to ``stop - 1`` of the run ``assess(scenario, samples=samples,
    seed=seed)`` would make, exactly as it would (the split-run hook of :mod:`risk.batch`).

    The unit-cube stream is replayed from the seed up to chunk ``start`` (drawing points is
    cheap next to evaluating them), so any contiguous range can run on any process and
    ``assess(scenario, ..., chunks=...)`` fed with all of them gives bit-identical results.
    ``progress(done, total)``, when given, is called after each evaluated chunk with the
    samples of this range evaluated so far and the range's sample count.
    """
    n_req = scenario.samples if samples is None else int(samples)
    seed_ = scenario.seed if seed is None else int(seed)
    names = list(scenario.inputs)
    joint = build_joint(names, [scenario.inputs[k] for k in names],
                        [list(p) for p in scenario.correlation])
    n = 1 if joint.d == 0 else n_req
    total = -(-n // CHUNK)
    if not 0 <= start <= stop <= total:
        raise ValueError(f"chunks {start} to {stop} outside 0 to {total}")
    sampler = _sampler(scenario, joint, seed_, n)
    option_scenarios = [dataclasses.replace(scenario, well=o.well) for o in scenario.options]
    head = min(n, HEAD_ROWS)
    out = []
    in_range = max(0, min(n, stop * CHUNK) - start * CHUNK)
    evaluated = 0
    for index in range(stop):
        done = index * CHUNK
        m = min(CHUNK, n - done)
        u = sampler.draw(m)
        if index >= start:
            out.append(_evaluate_drawn(scenario, joint, option_scenarios, u, index=index,
                                       keep=max(0, min(m, head - done))))
            evaluated += m
            if progress is not None:
                progress(evaluated, in_range)
    return out


def _head_sensitivity(scenario: Scenario, joint: Any, n: int, seed_: int) -> tuple[Any, ...]:
    """:func:`_sensitivity` of the run of ``n`` samples, evaluating afresh only the leading
    chunks it reads (the SENSITIVITY_RUNS + HOLDOUT_RUNS first samples) and storing them as
    :func:`assess` does (its dtype): what the forked child computes while the caller
    evaluates the rest (bit-identical to the step in turn; tests/test_overlap.py)."""
    rows = min(n, SENSITIVITY_RUNS + HOLDOUT_RUNS, HEAD_ROWS)
    cs = evaluate_chunks(scenario, samples=n, seed=seed_, start=0, stop=-(-rows // CHUNK))
    dtype = np.float64 if n <= LARGE_RUN else np.float32

    def cat(arrays: list[Any], cast: bool = True) -> Array:
        out = np.concatenate(arrays)[:rows]
        return out.astype(dtype, copy=False) if cast else out

    mechs = {k: MechanismResult(k, cat([c.mechanisms[k].by_direction for c in cs]),
                                cat([c.mechanisms[k].theta for c in cs], False))
             for k in cs[0].mechanisms}
    comp = None
    if "pore_collapse_pressure" in scenario.inputs:
        comp = CompactionResult(*(cat([getattr(c.compaction, f) for c in cs])
                                  for f in ("far_field", "wall", "initial")))
    return _sensitivity(scenario, joint, mechs, comp, cat([c.xi for c in cs], False), seed_)


def _start_sensitivity(scenario: Scenario, joint: Any, n: int, seed_: int,
                       overlap: bool | None) -> _overlap.Forked | None:
    """The sensitivity step started in a forked child (see ``assess(overlap=...)``), or None
    where it is computed in turn."""
    if overlap is False or joint.d < 2 or n < 64:
        return None
    replayed = -(-min(n, SENSITIVITY_RUNS + HOLDOUT_RUNS) // CHUNK) * CHUNK
    if overlap is None and (n <= replayed or not second_core_idle()):
        return None
    job = _overlap.fork_call(lambda: _head_sensitivity(scenario, joint, n, seed_),
                             what="the sensitivity indices")
    if job is not None:
        job.key = (scenario, n, seed_)
    return job


def start_sensitivity(scenario: Scenario, *, samples: int | None = None,
                      seed: int | None = None, overlap: bool | None = None
                      ) -> _overlap.Forked | None:
    """Start the sensitivity step of ``assess(scenario, samples=samples, seed=seed)`` in a
    forked child now, to be passed on as ``assess(..., sensitivity=...)``; None where it is
    computed in turn (``overlap`` as in :func:`assess`). For callers that load the compiled
    kernels before the run (the command line): numba's GNU OpenMP threads, once set up in a
    process, cannot be used in a child forked after that (:func:`risk._overlap.fork_safe`),
    so the child is forked first and loads the kernels itself, on its own core.
    The caller closes what it gets (:meth:`risk._overlap.Forked.close`) if it does not run
    the assessment."""
    n_req = scenario.samples if samples is None else int(samples)
    seed_ = scenario.seed if seed is None else int(seed)
    names = list(scenario.inputs)
    joint = build_joint(names, [scenario.inputs[k] for k in names],
                        [list(p) for p in scenario.correlation])
    return _start_sensitivity(scenario, joint, 1 if joint.d == 0 else n_req, seed_, overlap)


def _read_only(results: Mapping[Any, Any]) -> None:
    """Make the arrays of the (unpickled) sensitivity results read-only again."""
    for r in results.values():
        if dataclasses.is_dataclass(r):
            for f in dataclasses.fields(r):
                v = getattr(r, f.name)
                if isinstance(v, np.ndarray):
                    v.setflags(write=False)


def assess(scenario: Scenario, *, samples: int | None = None, seed: int | None = None,
           progress: Progress | None = None,
           step: Callable[[str], None] | None = None,
           chunks: Callable[[int], ChunkOutcome] | None = None,
           overlap: bool | None = None,
           sensitivity: _overlap.Forked | None = None) -> Assessment:
    """Sample the scenario's inputs, evaluate every mechanism, return a frozen result.

    Parameters
    ----------
    scenario : Scenario
    samples, seed : int, optional
        Override the scenario's ``[analysis] samples`` and ``seed``.
    progress : callable(done, total), optional
        Called after each evaluated chunk (the CLI shows a progress bar).
    step : callable(text), optional
        Told when a later step starts (small-risk methods, sensitivity).
    chunks : callable(index) -> ChunkOutcome, optional
        Outcomes of the sample chunks evaluated elsewhere (:func:`evaluate_chunks`, e.g. on
        other processes); the run then draws and evaluates nothing itself and continues from
        them (small-risk methods, sensitivity, decisions) exactly as if it had.
    overlap : bool, optional
        Compute the sensitivity step in a forked child while this process evaluates the
        chunks (it reads only the leading samples, :func:`_head_sensitivity`): None (the
        default) where a second core is idle (:func:`risk._cores.second_core_idle`) and the
        run has more chunks than the child evaluates again; True wherever fork is available
        (tests); False never. The results are the same bit for bit either way.
    sensitivity : optional
        The step already started by :func:`start_sensitivity` for this scenario, samples
        and seed (then ``overlap`` is not used); closed here.

    Notes
    -----
    With every input fixed the run is deterministic: one evaluation, ``samples = 1``.
    The same scenario, samples and seed give bit-identical results.
    """
    n_req = scenario.samples if samples is None else int(samples)
    seed_ = scenario.seed if seed is None else int(seed)
    names = list(scenario.inputs)
    joint = build_joint(names, [scenario.inputs[k] for k in names],
                        [list(p) for p in scenario.correlation])
    deterministic = joint.d == 0
    n = 1 if deterministic else n_req
    sampler = _sampler(scenario, joint, seed_, n)
    n_dir = len(scenario.well.shot_angles) if scenario.well.completion == "perforated" else 1
    n_stage = len(scenario.reservoir_pressure)
    dtype = np.float64 if n <= LARGE_RUN else np.float32
    head = min(n, HEAD_ROWS)
    dc_all: dict[str, NDArray[Any]] = {}
    parts_all: dict[str, dict[str, NDArray[Any]]] = {}  # mechanism -> part -> (n, dirs, stages)
    theta_head: dict[str, Array] = {}
    col_head: dict[str, Array] = {k: np.empty(head) for k in names}
    xi_head = np.empty((head, joint.d))
    with_compaction = "pore_collapse_pressure" in scenario.inputs
    far_all: Array = np.empty(n if with_compaction else 0, dtype=dtype)
    wall_all: Array = np.empty(n if with_compaction else 0, dtype=dtype)
    p0_all: Array = np.empty(n if with_compaction else 0, dtype=dtype)
    mean_far_all: Array | None = None  # mean-stress far field when the cap governs
    wall_dd_all: Array = np.empty((n, n_stage) if with_compaction else (0, 0), dtype=dtype)
    profile: tuple[Mapping[str, Any], ...] = ()
    options = scenario.options
    option_scenarios = [dataclasses.replace(scenario, well=o.well) for o in options]
    option_dc: list[dict[str, NDArray[Any]]] = [{} for _ in options]
    background = sensitivity if sensitivity is not None or chunks is not None else (
        _start_sensitivity(scenario, joint, n, seed_, overlap))
    if background is not None and (background.key[0] is not scenario
                                   or background.key[1:] != (n, seed_)):
        background.close()
        raise ValueError("the sensitivity step given was started for another run")
    try:
        done = 0
        index = 0
        while done < n:
            m = min(CHUNK, n - done)
            rows = slice(done, done + m)
            h = max(0, min(m, head - done))
            c = (chunks(index) if chunks is not None else
                 _evaluate_drawn(scenario, joint, option_scenarios, sampler.draw(m), index=index,
                                 keep=h))
            if c.index != index or c.size != m:
                raise ValueError(f"chunk {c.index} of {c.size} samples given where chunk {index} "
                                 f"of {m} samples belongs")
            if index == 0:
                profile = c.profile
            for key, res in c.mechanisms.items():
                if key not in dc_all:
                    dc_all[key] = np.empty((n, n_dir, n_stage), dtype=dtype)
                    theta_head[key] = np.empty((head, n_dir, n_stage))
                dc_all[key][rows] = res.by_direction
                for part, arr in res.parts.items():
                    store = parts_all.setdefault(key, {})
                    if part not in store:
                        store[part] = np.empty((n, n_dir, n_stage), dtype=dtype)
                    store[part][rows] = arr
                if h:
                    theta_head[key][done:done + h] = res.theta[:h]
            for i, osc in enumerate(option_scenarios):
                o_dir = len(osc.well.shot_angles) if osc.well.completion == "perforated" else 1
                for key, arr in c.options[i].items():
                    if key not in option_dc[i]:
                        option_dc[i][key] = np.empty((n, o_dir, n_stage), dtype=dtype)
                    option_dc[i][key][rows] = arr
            if with_compaction and c.compaction is not None:
                far_all[rows] = c.compaction.far_field
                wall_all[rows] = c.compaction.wall
                p0_all[rows] = c.compaction.initial
                if c.compaction.far_field_mean_stress is not None:
                    if mean_far_all is None:
                        mean_far_all = np.empty(n, dtype=dtype)
                    mean_far_all[rows] = c.compaction.far_field_mean_stress
                if c.compaction.wall_at_max_drawdown is not None:
                    wall_dd_all[rows] = c.compaction.wall_at_max_drawdown
            if h:
                for k in names:
                    col_head[k][done:done + h] = c.inputs[k][:h]
                xi_head[done:done + h] = c.xi[:h]
            done += m
            index += 1
            if progress is not None:
                progress(done, n)
        mechanisms = {key: MechanismResult(key, dc_all[key], theta_head[key],
                                           parts_all.get(key, {})) for key in dc_all}
        comp_all = (CompactionResult(far_all, wall_all, p0_all, mean_far_all, wall_dd_all)
                    if with_compaction else None)
        reliability = _reliability(scenario, joint, mechanisms, xi_head, n, seed_, step)
        if step is not None:
            step("sensitivity indices")
        sens_ = _overlap.LOST if background is None else background.result()
    finally:
        if background is not None:
            background.close()
    if sens_ is _overlap.LOST:  # in turn (or the child ended without a word)
        sens_ = _sensitivity(scenario, joint, mechanisms, comp_all, xi_head, seed_)
    else:
        _read_only(sens_[0])
    sens, torn, torn_base = sens_
    directions = (scenario.well.shot_angles if scenario.well.completion == "perforated"
                  else (float("nan"),))
    sand, phasing = _decisions(scenario, scenario.well,
                               {k: m.by_direction for k, m in mechanisms.items()},
                               small_risk=reliability)
    option_results = tuple(
        OptionResult(o.name, o.well, *_decisions(scenario, o.well, dc))
        for o, dc in zip(options, option_dc, strict=True))
    calibration, voi = None, ()
    if scenario.history is not None and joint.d > 0:
        if step is not None:
            step("calibration to the field history")
        calibration, voi = _calibration(
            scenario, joint, col_head, {k: r.by_direction[:head] for k, r in mechanisms.items()},
            seed_, tuple((o.name, o.well, {k: v[:head] for k, v in dc.items()})
                         for o, dc in zip(options, option_dc, strict=True)),
            None if comp_all is None else comp_all.far_field[:head])
    import scipy

    return Assessment(
        scenario=scenario, samples=n, seed=seed_, sampling=scenario.sampling,
        deterministic=deterministic, directions=tuple(directions),
        stages=scenario.reservoir_pressure,
        inputs=col_head, uncertain=tuple(joint.names), xi=xi_head, mechanisms=mechanisms,
        compaction=comp_all,
        reliability=reliability, sensitivity=sens, tornado=torn, tornado_base=torn_base,
        collapse_profile=profile, sand_free=sand, phasing=phasing, options=option_results,
        calibration=calibration, value_of_information=voi,
        provenance={"numpy": np.__version__, "scipy": scipy.__version__,
                    "chunk": CHUNK,
                    "sobol_balanced": (sampler.balanced if chunks is None
                                       else _balanced(scenario.sampling, n))},
    )
