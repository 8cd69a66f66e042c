"""The run's sensitivity step (:func:`_sensitivity`): Sobol/Shapley indices of every
mechanism and stage on the run's leading samples, and the tornado.

Kept apart from :mod:`risk.assessment`, which calls it in turn or, where a second core is
idle, in a forked child while it evaluates the rest of the run (:mod:`risk._overlap`).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any, Final

import numpy as np
from numpy.typing import NDArray

from risk.limit_states import CompactionResult, MechanismResult, evaluate, evaluate_compaction
from risk.scenario import Scenario
from risk.uncertainty import input_columns, rng_stream

Array = NDArray[np.float64]

SENSITIVITY_RUNS: Final = 1024  # leading QMC points of the run used as the PCE design
HOLDOUT_RUNS: Final = 4096  # the next points of the run, held out to measure the fit's error
#: candidate truncations (q, highest degree; None = from the design size) of the expansion
#: for independent inputs; each output keeps the one with the least held-out error (Blatman &
#: Sudret 2011 for hyperbolic sets: high degrees in one input, low orders of interaction).
#: With correlated inputs the total-degree set only: the correlated scheme re-expresses every
#: term in rotated variables, and its cost grew about tenfold with degree-14 terms.
PCE_TRUNCATIONS: Final = ((1.0, None), (0.5, 14))
MC_FALLBACK_RUNS: Final = 512  # base sample of the Monte-Carlo fallback, n (d + 2) model runs
#: model runs of the Monte-Carlo Shapley fallback for correlated inputs (replicates of d + 1
#: runs each; about 1,300 replicates for 12 inputs: 95% bands about +-0.05 wide on the effects)
SHAPLEY_FALLBACK_RUNS: Final = 16_384

#: Inputs grouped for grouped indices (coupled blocks); only uncertain members count.
GROUPS: Final[dict[str, tuple[str, ...]]] = {
    "in-situ stresses": ("sv", "sv_gradient", "shmax", "shmax_gradient", "shmin",
                         "shmin_gradient", "shmax_azimuth", "pp", "pp_gradient",
                         "depletion_path", "depletion_path_shmax"),
    "rock strength": ("ucs", "friction_angle", "tensile_strength", "twc", "twc_ratio",
                      "twc_factor", "hb_mi", "gsi", "critical_plastic_strain",
                      "pore_collapse_pressure", "strength_multiplier"),
}


def _outputs(scenario: Scenario, res: Mapping[str, MechanismResult],
             comp: CompactionResult | None) -> tuple[list[tuple[str, int]], Array]:
    """Capped outputs for sensitivity: min(D_c, p_r) per mechanism and stage [MPa]; pore
    collapse as the far-field critical reservoir pressure clipped to [0, p0] [MPa]."""
    keys: list[tuple[str, int]] = []
    cols: list[Array] = []
    for key, mech in res.items():
        well = mech.well
        for stage, p_r in enumerate(scenario.reservoir_pressure):
            keys.append((key, stage))
            cols.append(np.minimum(well[:, stage], p_r))
    if comp is not None:
        keys.append(("pore_collapse", 0))
        far = np.where(np.isneginf(comp.far_field), 0.0, comp.far_field)
        top = comp.initial if comp.initial is not None else np.inf
        cols.append(np.clip(far, 0.0, top))
    return keys, np.column_stack(cols)


def _sensitivity(scenario: Scenario, joint: Any, mechanisms: Mapping[str, MechanismResult],
                 compaction_all: CompactionResult | None, xi: Array, seed_: int) -> tuple[
                     dict[tuple[str, int], Any],
                     dict[str, dict[str, tuple[float, float, float, float]]],
                     dict[str, float]]:
    """Sobol/Shapley indices (PCE on the run's leading QMC points, Monte-Carlo fallback) and
    the tornado, for every mechanism and stage. Skipped for fewer than 2 uncertain inputs or
    fewer than 64 samples."""
    from risk import sensitivity as sa
    from risk.uncertainty import correlated_normals, normals_to_inputs

    n_all = next(iter(mechanisms.values())).by_direction.shape[0]
    if joint.d < 2 or n_all < 64:
        return {}, {}, {}
    m = min(SENSITIVITY_RUNS, n_all)
    rng = rng_stream(seed_, "sensitivity")
    head = {k: MechanismResult(k, r.by_direction[:m], r.theta[:m]) for k, r in mechanisms.items()}
    comp_head = (CompactionResult(compaction_all.far_field[:m], compaction_all.wall[:m],
                                  None if compaction_all.initial is None
                                  else compaction_all.initial[:m])
                 if compaction_all is not None else None)
    keys, y = _outputs(scenario, head, comp_head)
    names = list(joint.names)
    with_far = compaction_all is not None
    z = correlated_normals(joint, xi[:m])
    groups = {g: [n for n in members if n in names] for g, members in GROUPS.items()}
    groups = {g: v for g, v in groups.items() if len(v) >= 2}
    correlated = bool(np.any(joint.normal_corr != np.eye(joint.d)))
    corr = joint.normal_corr if correlated else None
    cols_ok = np.nonzero(sa.has_spread(y))[0]
    # runs of the sample that the fit does not see check it (no extra model runs)
    m_ho = min(HOLDOUT_RUNS, xi.shape[0] - m)
    holdout = None
    if m_ho >= 2 * joint.d + 2:
        held = slice(m, m + m_ho)
        _, y_ho = _outputs(scenario, {k: MechanismResult(k, r.by_direction[held], r.theta[:0])
                                      for k, r in mechanisms.items()},
                           CompactionResult(compaction_all.far_field[held],
                                            compaction_all.wall[held],
                                            None if compaction_all.initial is None
                                            else compaction_all.initial[held])
                           if compaction_all is not None else None)
        holdout = (correlated_normals(joint, xi[held]), y_ho[:, cols_ok])
    res: dict[int, Any] = {}
    if cols_ok.size:
        def model_xi(xi_: Array, outputs: list[int]) -> Array:
            """The outputs that fell back, from runs of only the mechanisms they need."""
            wanted = [keys[cols_ok[c]] for c in outputs]
            need = {k for k, _ in wanted}
            cols = input_columns(joint, normals_to_inputs(joint, xi_))
            out = evaluate(cols, scenario, only=need - {"pore_collapse"})
            f = (evaluate_compaction(cols, scenario) if "pore_collapse" in need else None)
            k2, yy = _outputs(scenario, out, f)
            return yy[:, [k2.index(w) for w in wanted]]

        with sa.blas_single_thread(), np.errstate(invalid="ignore", divide="ignore"):
            families = sa.families_for([mg.kind for mg in joint.marginals], corr,
                                       ppfs=[mg.ppf for mg in joint.marginals])
            fitted = sa.sensitivity(
                z, y[:, cols_ok], names=names, rng=rng, corr=corr, groups=groups or None,
                model=model_xi, partial_model=True, mc_n=MC_FALLBACK_RUNS,
                shapley_replicates=max(2, SHAPLEY_FALLBACK_RUNS // (joint.d + 1)),
                n_bootstrap=100, families=families, holdout=holdout,
                truncations=(PCE_TRUNCATIONS if holdout is not None and not correlated
                             else None))
        res = dict(zip(cols_ok.tolist(), fitted, strict=True))
    sens = {keys[c]: r for c, r in sorted(res.items())}
    # tornado: P10 / P90 of each input, others at P50 (one-at-a-time, correlation ignored)
    mid = np.array([mg.quantile(0.5) for mg in joint.marginals])
    low = np.array([mg.quantile(0.1) for mg in joint.marginals])
    high = np.array([mg.quantile(0.9) for mg in joint.marginals])

    def model_x(x: Array) -> Array:
        out = evaluate(input_columns(joint, x), scenario)
        f = evaluate_compaction(input_columns(joint, x), scenario) if with_far else None
        return _outputs(scenario, out, f)[1]

    swings, y_mid = sa.tornado(model_x, low, mid, high, base=True)
    torn: dict[str, dict[str, tuple[float, float, float, float]]] = {}
    base: dict[str, float] = {}
    for c, (key, stage) in enumerate(keys):
        if stage != 0:
            continue
        base[key] = float(y_mid[c])
        torn[key] = {name: (float(low[j]), float(high[j]), float(swings[j, 0, c]),
                            float(swings[j, 1, c])) for j, name in enumerate(names)}
    return sens, torn, base
