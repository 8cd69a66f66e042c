"""The run summary: an :class:`~risk.assessment.Assessment` -> a JSON-ready dict in the
scenario's units (pure; :mod:`risk.report.writer` writes it).

Percentile keys follow :mod:`risk.conventions`: ``p10`` of a critical drawdown is the drawdown
at or below which 10% of the samples fail. For critical flowing wall pressure the same key is
the wall pressure at or above which 10% of the samples fail (``p_r - D_p10``). ``null`` stands
for "never fails within [0, p_r]" wherever a number is infinite.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from risk import decision, probability
from risk.assessment import MECHANISMS, Assessment
from risk.conventions import DISPLAY_UNITS, TO_INTERNAL, angle_reference
from risk.scenario import _SPEC

__all__ = ["summarize", "GRID_POINTS", "rounded"]

GRID_POINTS = 51
SCHEMA = "risk.results/1"


def rounded(x: float, digits: int = 6) -> float | None:
    """Round to significant digits for output; None for non-finite values."""
    if x is None or not math.isfinite(x):
        return None
    if x == 0:
        return 0.0
    return float(f"{x:.{digits}g}")


def _pressure(a: Assessment, v: float) -> float | None:
    return rounded(a.scenario.to_display(v, "pressure"))


def _angle(a: Assessment, v: float) -> float | None:
    return rounded(math.degrees(v)) if math.isfinite(v) else None


def _key(x: float) -> float:
    """A ranking key insensitive to floating-point noise (9 significant digits)."""
    return float(f"{x:.9g}") if math.isfinite(x) else x


def _best_phasing(a: Assessment, by_dir: Any, p_r: float) -> dict[str, Any] | None:
    """The best 180-degree phasing (two opposite shots) among the scenario's directions.

    A pair fails when either tunnel fails, so its critical drawdown per sample is the smaller
    of the two; the pair with the largest drawdown limit at the accepted risk wins.
    """
    angles = np.mod(np.degrees(np.asarray(a.directions)), 360.0)
    best: tuple[tuple[float, float, float], int, int] | None = None
    worst: tuple[float, float, float] | None = None
    for i, ai in enumerate(angles):
        for j, aj in enumerate(angles):
            if j <= i or not np.isclose(np.mod(aj - ai, 360.0), 180.0, atol=1e-6):
                continue
            pair = np.minimum(by_dir[:, i], by_dir[:, j])
            lim = min(probability.drawdown_limit(pair, a.scenario.accepted_risk)[0], p_r)
            key = (_key(lim), _key(-float(np.mean(pair <= lim))),
                   _key(float(np.mean(np.minimum(pair, p_r)))))
            if best is None or key > best[0]:
                best = (key, i, j)
            worst = key if worst is None or key < worst else worst
    if best is None or worst == best[0]:
        return None  # fewer than two pairs, or every pair alike: no preference
    (lim, _, _), i, j = best
    return {"angles": [_angle(a, a.directions[i]), _angle(a, a.directions[j])],
            "drawdown_limit": _pressure(a, lim)}


def _stage_summary(a: Assessment, key: str, k: int) -> dict[str, Any]:
    sc = a.scenario
    mech = a.mechanisms[key]
    p_r = a.stages[k]
    # sorted once, in double precision: every probability function below then reuses it
    # (one copy, sorted in place: at 10^7 samples each extra copy is 80 MB of peak memory)
    col = mech.by_direction[:, :, k]
    dc = (col[:, 0] if col.shape[1] == 1 else col.min(axis=1)).astype(np.float64)
    dc.sort()
    levels = (0.01, 0.05, 0.1, 0.25, 0.5, 0.75, 0.9)
    qs = probability.percentiles(dc, levels)
    q = qs[[2, 4, 6]]
    finite = np.isfinite(dc)
    mean = float(dc.mean()) if finite.all() else math.inf
    grid = np.linspace(0.0, sc.max_drawdown, GRID_POINTS)
    p, lo, hi = probability.failure_curve(dc, grid)
    limit, lower = probability.drawdown_limit(dc, sc.accepted_risk)
    if a.deterministic:  # one exact evaluation: no sampling error, no band, bound = value
        lo, hi, lower = p, p, limit
    out: dict[str, Any] = {
        "reservoir_pressure": _pressure(a, p_r),
        "critical_drawdown": {"p10": _pressure(a, q[0]), "p50": _pressure(a, q[1]),
                              "p90": _pressure(a, q[2]), "mean": _pressure(a, mean)},
        "critical_wall_pressure": {f"p{round(100 * lv):02d}": _pressure(a, p_r - v)
                                   for lv, v in zip(levels, qs, strict=True)},
        "never_fraction": rounded(float(np.mean(~finite))),
        "zero_drawdown_fraction": rounded(float(np.mean(dc <= 0.0))),
        "drawdown_limit": _pressure(a, min(limit, p_r)),
        "drawdown_limit_lower": _pressure(a, min(lower, p_r)) if lower > -math.inf else None,
        "failure_probability": [
            {"drawdown": _pressure(a, float(d)), "p": rounded(float(pi)),
             "low": rounded(float(li)), "high": rounded(float(hi_))}
            for d, pi, li, hi_ in zip(grid, p, lo, hi, strict=True)
        ],
        "convergence_warning": (None if a.deterministic
                                else probability.convergence_warning(dc, sc.accepted_risk)),
    }
    rel = a.reliability.get((key, k))
    if rel is not None:
        out["small_risk"] = {
            "drawdown": _pressure(a, float(rel["drawdown"])),
            "sampling_p": rounded(float(rel["sampling_p"])),
            "form_beta": rounded(float(rel["beta"])), "form_p": rounded(float(rel["form_p"])),
            "sorm_p": rounded(float(rel["sorm_p"])), "is_p": rounded(float(rel["is_p"])),
            "is_cov": rounded(float(rel["is_cov"])), "form_converged": bool(rel["converged"]),
            "importance": {n: rounded(v) for n, v in rel["importance"].items()},
            "model_runs": int(rel["model_runs"]), "diagnostic": rel["diagnostic"],
        }
    if not math.isfinite(limit):
        out["drawdown_limit_note"] = (
            f"fewer than {sc.accepted_risk:.0%} of samples fail within the available "
            "drawdown; the limit is the full reservoir pressure")
        out["drawdown_limit"] = _pressure(a, p_r)
    if sc.well.completion == "perforated":
        by_dir = mech.by_direction[:, :, k]
        lim = limit if math.isfinite(limit) else p_r
        p50s = [float(probability.percentiles(by_dir[:, j], [0.5])[0])
                for j in range(by_dir.shape[1])]
        limits = [min(probability.drawdown_limit(by_dir[:, j], sc.accepted_risk)[0], p_r)
                  for j in range(by_dir.shape[1])]
        p_at = [probability.fraction_at_or_below(by_dir[:, j], lim)
                for j in range(by_dir.shape[1])]
        # mean of the critical drawdown capped at p_r: the last tie-breaker (larger is safer)
        means = [float(np.mean(np.minimum(by_dir[:, j], p_r))) for j in range(by_dir.shape[1])]
        shots = [{"angle": _angle(a, ang), "critical_drawdown_p50": _pressure(a, v),
                  "drawdown_limit": _pressure(a, lim_j),
                  "probability_at_limit": rounded(pj)}
                 for ang, v, lim_j, pj in zip(a.directions, p50s, limits, p_at, strict=True)]
        # best: largest own limit, then lowest probability at the well's limit, then largest
        # capped mean; worst: the reverse. Exact ties all the way are reported as no preference.
        # rounded so that floating-point noise (e.g. opposite shots, equal by symmetry) cannot
        # pick a winner
        keys = [(_key(lim_j), _key(-pj), _key(mj))
                for lim_j, pj, mj in zip(limits, p_at, means, strict=True)]
        order = sorted(range(len(keys)), key=lambda j: keys[j])
        worst, best = order[0], order[-1]
        distinct = keys[best] != keys[worst]
        # equal directions tie, always: every direction with the worst (best) key is named,
        # and the single angle reported is the first of them in the scenario's order
        worst_all = [j for j in range(len(keys)) if keys[j] == keys[worst]]
        best_all = [j for j in range(len(keys)) if keys[j] == keys[best]]
        worst, best = worst_all[0], best_all[0]
        out["worst_shot_angle"] = _angle(a, a.directions[worst]) if distinct else None
        out["best_shot_angle"] = _angle(a, a.directions[best]) if distinct else None
        out["worst_shot_angles"] = ([_angle(a, a.directions[j]) for j in worst_all]
                                    if distinct else None)
        out["best_shot_angles"] = ([_angle(a, a.directions[j]) for j in best_all]
                                   if distinct else None)
        if not distinct:
            out["shot_note"] = "every shot direction gives the same result: no preference"
        out["shots"] = shots
        phasing = _best_phasing(a, by_dir, p_r)
        if phasing is not None:
            out["best_phasing"] = phasing
    else:
        th = mech.theta[:, 0, k]
        ok = np.isfinite(th)
        # wall angles are axial (t and t + pi are the same place): circular mean of 2t
        mean2 = (math.atan2(float(np.mean(np.sin(2 * th[ok]))), float(np.mean(np.cos(2 * th[ok]))))
                 if ok.any() else math.nan)
        out["worst_wall_angle"] = (_angle(a, (0.5 * mean2) % math.pi) if ok.any() else None)
    return out


def _pore_collapse(a: Assessment) -> dict[str, Any]:
    """Pore collapse: critical reservoir pressure percentiles and the probability per stage.

    ``p10`` is the reservoir pressure at or above which 10% of the samples have collapsed
    (deplete to it and one sample in ten compacts), so p10 > p50 > p90.
    """
    assert a.compaction is not None
    out: dict[str, Any] = {"name": MECHANISMS["pore_collapse"]}
    # one double copy at a time, sorted in place and reused (each is 80 MB at 10^7 samples)
    neg = np.negative(a.compaction.far_field, dtype=np.float64)
    neg.sort()
    q_far = -probability.percentiles(neg, [0.1, 0.5, 0.9])
    stages = []
    for p_r in a.stages:
        p, lo, hi = probability.failure_curve(neg, [-p_r])
        if a.deterministic:
            lo, hi = p, p
        stages.append({"reservoir_pressure": _pressure(a, p_r), "probability": rounded(p[0]),
                       "low": rounded(lo[0]), "high": rounded(hi[0]),
                       "wall_probability": rounded(float(np.mean(a.compaction.wall >= p_r)))})
    del neg
    neg = np.negative(a.compaction.wall, dtype=np.float64)
    neg.sort()
    q_wall = -probability.percentiles(neg, [0.1, 0.5, 0.9])
    del neg
    for label, q in (("critical_reservoir_pressure", q_far),
                     ("wall_critical_reservoir_pressure", q_wall)):
        out[label] = {"p10": _pressure(a, q[0]), "p50": _pressure(a, q[1]),
                      "p90": _pressure(a, q[2])}
    out["stages"] = stages
    out["never_fraction"] = rounded(float(np.mean(np.isneginf(a.compaction.far_field))))
    if a.compaction.initial is not None:
        # a critical pressure at or above p0: compacted before any depletion (the wall value
        # is then reported as p0 itself)
        out["initially_compacted_fraction"] = rounded(
            float(np.mean(a.compaction.far_field >= a.compaction.initial)))
        out["wall_initially_compacted_fraction"] = rounded(
            float(np.mean(a.compaction.wall >= a.compaction.initial)))
    if a.stages:
        last = min(a.stages)
        out["uncollapsed_at_last_stage_fraction"] = rounded(
            float(np.mean(a.compaction.far_field < last)))
    return out


def _indices(a: Assessment, r: Any) -> list[dict[str, Any]]:
    """Rows of one SensitivityResult, largest total index first."""
    rows = []
    for j, name in enumerate(r.names):
        rows.append({
            "input": name,
            "first": rounded(float(r.first[j]), 4), "total": rounded(float(r.total[j]), 4),
            "first_low": rounded(float(r.first_low[j]), 4),
            "first_high": rounded(float(r.first_high[j]), 4),
            "total_low": rounded(float(r.total_low[j]), 4),
            "total_high": rounded(float(r.total_high[j]), 4),
            "shapley": rounded(float(r.shapley[j]), 4),
        })
    for row in rows:  # what ranks the inputs: Shapley, else the total, else the first index
        row["rank_value"] = next((row[k] for k in ("shapley", "total", "first")
                                  if row[k] is not None), None)
    rows.sort(key=lambda row: -(row["rank_value"] if row["rank_value"] is not None else -1.0))
    return rows


def _sensitivity(a: Assessment) -> tuple[dict[str, Any], dict[str, Any], dict[str, Any]]:
    first: dict[str, Any] = {}
    by_stage: dict[str, Any] = {}
    for (key, stage), r in a.sensitivity.items():
        entry = {
            "reservoir_pressure": _pressure(a, a.stages[stage]) if key != "pore_collapse"
            else None,
            "method": r.method, "loo_error": rounded(float(r.loo_error), 4),
            "model_runs": int(r.n_runs), "correlated": bool(r.correlated),
            "indices": _indices(a, r),
            "groups": [{"group": g, "first": rounded(float(f), 4),
                        "total": rounded(float(t), 4), "shapley": rounded(float(sh), 4)}
                       for g, f, t, sh in zip(r.group_names, r.group_first, r.group_total,
                                              r.group_shapley, strict=True)],
        }
        by_stage.setdefault(key, []).append(entry)
        if stage == 0:
            first[key] = entry["indices"]
    if a.tornado:  # sensitivity ran: say where an output had no spread to analyse
        for key in list(a.mechanisms) + (["pore_collapse"] if a.compaction is not None else []):
            stages = range(len(a.stages)) if key != "pore_collapse" else range(1)
            for stage in stages:
                if (key, stage) in a.sensitivity:
                    continue
                entry = {"reservoir_pressure": _pressure(a, a.stages[stage])
                         if key != "pore_collapse" else None,
                         "method": "none", "indices": [], "groups": [],
                         "note": "almost every sample has the same outcome (fewer than 2% "
                                 "differ): no spread to analyse"}
                by_stage.setdefault(key, []).insert(stage, entry)
                if stage == 0:
                    first[key] = []
    tornado: dict[str, Any] = {}
    for key, swings in a.tornado.items():
        rows: list[dict[str, Any]] = []
        for name, (xl, xh, yl, yh) in swings.items():
            spec = _SPEC[name]
            scale = TO_INTERNAL[a.scenario.units][spec.dimension]
            rows.append({"input": name, "unit": DISPLAY_UNITS[a.scenario.units][spec.dimension],
                         "low_value": rounded(xl / scale), "high_value": rounded(xh / scale),
                         "output_low": _pressure(a, yl), "output_high": _pressure(a, yh)})
        rows.sort(key=lambda r: -abs((r["output_high"] or 0.0) - (r["output_low"] or 0.0)))
        tornado[key] = {"base": _pressure(a, a.tornado_base[key]), "rows": rows}
    order = [*a.mechanisms, "pore_collapse"]
    first = {k: first[k] for k in order if k in first}
    by_stage = {k: by_stage[k] for k in order if k in by_stage}
    return first, by_stage, tornado


def _profile(a: Assessment) -> list[dict[str, Any]]:
    """Percentile bands of plastic radius / wall radius and wall plastic strain vs drawdown."""
    out = []
    for p_r, prof in zip(a.stages, a.collapse_profile, strict=True):
        entry: dict[str, Any] = {
            "reservoir_pressure": _pressure(a, p_r),
            "drawdown": [_pressure(a, float(d)) for d in prof["drawdown"]],
            "samples": int(prof["plastic_radius_ratio"].shape[0]),
            "plane_strain_flag_fraction": rounded(float(prof["plane_strain_flag"])),
        }
        for name in ("plastic_radius_ratio", "wall_plastic_strain"):
            vals = np.asarray(prof[name])
            entry[name] = {
                f"p{q}": [rounded(float(v)) for v in np.percentile(vals, q, axis=0,
                                                                    method="inverted_cdf")]
                for q in (10, 50, 90)}
        out.append(entry)
    return out


def _well(a: Assessment) -> dict[str, Any]:
    """Well geometry in display units (keys carry their unit)."""
    sc = a.scenario
    w = sc.well
    length, small = sc.display_unit("length"), sc.display_unit("small_length")
    out: dict[str, Any] = {
        f"true vertical depth [{length}]": rounded(sc.to_display(w.depth, "length")),
        "inclination [deg]": rounded(math.degrees(w.inclination)),
        "azimuth [deg]": rounded(math.degrees(w.azimuth)),
    }
    if w.completion == "perforated":
        out["shot angles [deg]"] = ", ".join(f"{math.degrees(x):g}" for x in w.shot_angles)
    if w.tunnel_diameter is not None:
        out[f"tunnel diameter [{small}]"] = rounded(sc.to_display(w.tunnel_diameter,
                                                                  "small_length"))
    if w.hole_diameter is not None:
        out[f"hole diameter [{small}]"] = rounded(sc.to_display(w.hole_diameter,
                                                                "small_length"))
    out["reservoir pressure stages [" + sc.display_unit("pressure") + "]"] = ", ".join(
        f"{sc.to_display(p, 'pressure'):g}" for p in sc.reservoir_pressure)
    return out


def _inputs(a: Assessment) -> list[dict[str, Any]]:
    sc = a.scenario
    rows = []
    for name, m in sc.inputs.items():
        spec = _SPEC[name]
        scale = TO_INTERNAL[sc.units][spec.dimension]
        unit = DISPLAY_UNITS[sc.units][spec.dimension]
        vals = np.asarray(a.inputs[name]) / scale
        q = np.quantile(vals, [0.1, 0.5, 0.9]) if not m.is_fixed else [vals[0]] * 3
        row: dict[str, Any] = {
            "name": name, "section": spec.section, "unit": unit,
            "description": spec.description, "distribution": m.describe(scale, unit),
            "source": m.source, "fixed": m.is_fixed,
            "p10": rounded(float(q[0])), "p50": rounded(float(q[1])),
            "p90": rounded(float(q[2])),
        }
        if not m.is_fixed:
            counts, edges = np.histogram(vals, bins=24)
            row["histogram"] = {"edges": [rounded(float(e)) for e in edges],
                                "counts": [int(c) for c in counts]}
        rows.append(row)
    return rows


_ENABLE = ("effective-strength sanding onset: give rock.twc or rock.twc_ratio (TWC tests); "
           "tunnel collapse: give rock.critical_plastic_strain with rock.young_modulus and "
           "production.drainage_radius")


def _stage_limit(a: Assessment, row: decision.StageLimit) -> dict[str, Any]:
    return {
        "reservoir_pressure": _pressure(a, row.reservoir_pressure),
        "drawdown_limit": _pressure(a, row.limit),
        "drawdown_limit_lower": (None if row.lower is None else _pressure(a, row.lower)),
        "governing": row.governing, "governing_name": MECHANISMS[row.governing],
        "by_mechanism": {k: _pressure(a, v) for k, v in row.by_mechanism.items()},
        "p_no_drawdown": rounded(row.p_no_drawdown),
        "p_no_drawdown_low": rounded(row.p_no_drawdown_band[0]),
        "p_no_drawdown_high": rounded(row.p_no_drawdown_band[1]),
    }


def _sand_free(a: Assessment, sf: decision.SandFree | None) -> dict[str, Any] | None:
    """The headline block: the sand-free drawdown limit (risk.decision)."""
    if sf is None:
        return None
    z = sf.zero
    zero = {"kind": z.kind, "above": None if z.above is None else _pressure(a, z.above),
            "below": None if z.below is None else _pressure(a, z.below),
            "estimate": None if z.estimate is None else _pressure(a, z.estimate)}
    points = [{"reservoir_pressure": _pressure(a, pt.reservoir_pressure),
               "wall_pressure": _pressure(a, pt.wall_pressure),
               "drawdown": _pressure(a, pt.reservoir_pressure - pt.wall_pressure),
               "probability": None if pt.probability is None else rounded(pt.probability),
               "low": None if pt.band is None else rounded(pt.band[0]),
               "high": None if pt.band is None else rounded(pt.band[1]),
               "beyond_limit": pt.beyond_limit,
               "note": None if pt.stage is not None else "not a depletion stage"}
              for pt in sf.points]
    return {"mechanisms": list(sf.mechanisms),
            "definition": "largest drawdown at which the probability that any enabled "
                          "sand-production mechanism predicts sand stays at or below the "
                          "accepted risk, capped at the reservoir pressure",
            "stages": [_stage_limit(a, row) for row in sf.stages],
            "zero_limit": zero, "operating_points": points}


def _candidate(a: Assessment, c: decision.Candidate, well_angles: tuple[float, ...]
               ) -> dict[str, Any]:
    return {"phasing": c.phasing, "orientation": rounded(c.orientation),
            "shot_angles": [_angle(a, well_angles[j]) for j in c.directions]}


def _phasing(a: Assessment, ch: decision.PhasingChoice | None, well_angles: tuple[float, ...]
             ) -> dict[str, Any] | None:
    if ch is None:
        return None
    return {
        "rule": ch.rule,
        "chosen": {**_candidate(a, ch.chosen, well_angles),
                   "drawdown_limits": [_pressure(a, v) for v in ch.limits]},
        "tied": [_candidate(a, c, well_angles) for c in ch.tied],
        "per_stage_best": [{"reservoir_pressure": _pressure(a, p_r),
                            **_candidate(a, c, well_angles), "drawdown_limit": _pressure(a, v)}
                           for p_r, (c, v) in zip(a.stages, ch.per_stage_best, strict=True)],
        "by_phasing": [{**_candidate(a, c, well_angles),
                        "drawdown_limits": [_pressure(a, v) for v in lims]}
                       for c, lims in ch.by_phasing],
    }


def _options(a: Assessment) -> list[dict[str, Any]]:
    sc = a.scenario
    out = []
    for o in a.options:
        w = o.well
        entry: dict[str, Any] = {
            "name": o.name, "completion": w.completion,
            "shot_angles": ([_angle(a, x) for x in w.shot_angles]
                            if w.completion == "perforated" else None),
            "tunnel_diameter": (None if w.tunnel_diameter is None
                                else rounded(sc.to_display(w.tunnel_diameter, "small_length"))),
            "hole_diameter": (None if w.hole_diameter is None
                              else rounded(sc.to_display(w.hole_diameter, "small_length"))),
            "sand_free": _sand_free(a, o.sand_free),
            "completion_choice": _phasing(a, o.phasing, w.shot_angles),
        }
        out.append(entry)
    return out


def _first_yield(a: Assessment) -> dict[str, Any] | None:
    mech = a.mechanisms.get("yield_onset")
    if mech is None:
        return None
    well = mech.well
    stages = []
    for k, p_r in enumerate(a.stages):
        lim, _ = probability.drawdown_limit(well[:, k], a.scenario.accepted_risk)
        stages.append({"reservoir_pressure": _pressure(a, p_r),
                       "drawdown_limit": _pressure(a, min(lim, p_r))})
    return {"note": "conservative first-yield reference: the rock at the wall starts to yield; "
                    "yielding is not sand production", "stages": stages}


def _rank_correlation(a: Assessment) -> dict[str, Any] | None:
    names = list(a.uncertain)
    if len(names) < 2 or a.samples < 3:
        return None
    x = np.column_stack([a.inputs[n] for n in names])
    ranks = np.argsort(np.argsort(x, axis=0), axis=0).astype(float)
    r = np.corrcoef(ranks, rowvar=False)
    return {"names": names, "matrix": [[rounded(float(v), 4) for v in row] for row in r]}


def summarize(a: Assessment) -> dict[str, Any]:
    """A JSON-ready summary of one run (numbers in the scenario's units, listed in ``units``).

    ``warnings`` repeats the scenario's input warnings (:attr:`risk.scenario.Scenario.warnings`,
    an empty list when there are none), in the loader's fixed order.
    """
    sc = a.scenario
    units = {"pressure": sc.display_unit("pressure"), "angle": "deg",
             "length": sc.display_unit("length"), "probability": "-", "strain": "-",
             "plastic_radius_ratio": "-"}
    mechanisms = {
        key: {"name": MECHANISMS[key],
              "stages": [_stage_summary(a, key, k) for k in range(len(a.stages))]}
        for key in a.mechanisms
    }
    if a.compaction is not None:
        mechanisms["pore_collapse"] = _pore_collapse(a)
    if a.collapse_profile and "tunnel_collapse" in mechanisms:
        mechanisms["tunnel_collapse"]["profile"] = _profile(a)
    sens_first, sens_stage, tornado = _sensitivity(a)
    return {
        "schema": SCHEMA,
        "tool": "risk",
        "version": a.version,
        "title": sc.title,
        "scenario_file": sc.source_name,
        "scenario_sha256": sc.sha256,
        "warnings": list(sc.warnings),
        "angle_reference": angle_reference(sc.well.inclination, sc.well.azimuth),
        "sand_free": _sand_free(a, a.sand_free),
        "sand_free_note": (None if a.sand_free is not None else
                           "no sand-production mechanism is enabled, so this run gives no "
                           "sand-free limit (first yield is not sand production); to enable "
                           "one: " + _ENABLE),
        "first_yield": _first_yield(a),
        "completion_choice": (_phasing(a, a.phasing, sc.well.shot_angles)
                              if sc.well.completion == "perforated" else None),
        "completion_options": _options(a),
        "units": units,
        "unit_system": sc.units,
        "samples": a.samples,
        "seed": a.seed,
        "sampling": a.sampling,
        "deterministic": a.deterministic,
        "criterion": sc.criterion,
        "completion": sc.well.completion,
        "accepted_risk": sc.accepted_risk,
        "max_drawdown": _pressure(a, sc.max_drawdown),
        "uncertain_inputs": list(a.uncertain),
        "well": _well(a),
        "operating_points": [
            {"reservoir_pressure": _pressure(a, pr), "wall_pressure": _pressure(a, pw)}
            for pr, pw in sc.operating_points],
        "inputs": _inputs(a),
        "input_rank_correlation": _rank_correlation(a),
        "mechanisms": mechanisms,
        "sensitivity_output": (
            "critical drawdown capped at the reservoir pressure, min(D_c, p_r), per mechanism; "
            "pore collapse: far-field critical reservoir pressure clipped to [0, p0]"),
        "sensitivity": sens_first,
        "sensitivity_by_stage": sens_stage,
        "tornado": tornado,
        "provenance": dict(a.provenance),
    }
