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

from risk import decision
from risk.assessment import MECHANISMS, Assessment
from risk.conventions import DISPLAY_UNITS, TO_INTERNAL, angle_reference
from risk.report.extensions import extensions
from risk.result import GRID_POINTS, PoreCollapse, Result, StageResult
from risk.result import summarize as summarize_result
from risk.scenario import INPUT_SPECS

__all__ = ["summarize", "GRID_POINTS", "rounded"]

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


def _stage_summary(a: Assessment, st: StageResult) -> dict[str, Any]:
    """One mechanism at one stage, formatted (display units, rounded, null for never)."""
    sc = a.scenario
    dc = st.critical_drawdown
    out: dict[str, Any] = {
        "reservoir_pressure": _pressure(a, st.reservoir_pressure),
        "critical_drawdown": {k: _pressure(a, dc[k]) for k in ("p10", "p50", "p90", "mean")},
        "critical_wall_pressure": {k: _pressure(a, v)
                                   for k, v in st.critical_wall_pressure.items()},
        "never_fraction": rounded(st.never_fraction),
        "zero_drawdown_fraction": rounded(st.zero_drawdown_fraction),
        "drawdown_limit": _pressure(a, st.drawdown_limit),
        "drawdown_limit_lower": (None if st.drawdown_limit_lower is None
                                 else _pressure(a, st.drawdown_limit_lower)),
        "failure_probability": [
            {"drawdown": _pressure(a, float(d)), "p": rounded(float(pi)),
             "low": rounded(float(li)), "high": rounded(float(hi_))}
            for d, pi, li, hi_ in zip(st.grid, st.p, st.low, st.high, strict=True)
        ],
        "convergence_warning": st.convergence_warning,
    }
    rel = st.small_risk
    if rel is not None:
        out["small_risk"] = {
            "drawdown": _pressure(a, float(rel["drawdown"])),
            "sampling_p": rounded(float(rel["sampling_p"])),
            "form_beta": rounded(float(rel["beta"])), "form_p": rounded(float(rel["form_p"])),
            "sorm_p": rounded(float(rel["sorm_p"])), "is_p": rounded(float(rel["is_p"])),
            "is_cov": rounded(float(rel["is_cov"])), "form_converged": bool(rel["converged"]),
            "importance": {n: rounded(v) for n, v in rel["importance"].items()},
            "model_runs": int(rel["model_runs"]),
            "model_runs_by_method": {k: int(v) for k, v in (rel.get("runs") or {}).items()},
            "form_starts": rel.get("starts"),
            "limit_method": rel.get("limit_method", "sampling"),
            "limits_by_method": {
                m: (None if v is None or not math.isfinite(float(v))
                    else _pressure(a, float(v)))
                for m, v in (("sampling", rel.get("sampled_limit")),
                             ("FORM", rel.get("form_limit")), ("SORM", rel.get("sorm_limit")),
                             ("importance sampling", rel.get("is_limit")))
                if v is not None},
            "diagnostic": rel["diagnostic"],
        }
    if st.limit_method is not None:
        out["drawdown_limit_method"] = st.limit_method
    if st.limit_beyond:
        out["drawdown_limit_note"] = (
            f"fewer than {sc.accepted_risk:.0%} of samples fail within the available "
            "drawdown; the limit is the full reservoir pressure")
    if sc.well.completion == "perforated":
        distinct = bool(st.best_shots)
        out["worst_shot_angle"] = _angle(a, st.worst_shots[0]) if distinct else None
        out["best_shot_angle"] = _angle(a, st.best_shots[0]) if distinct else None
        out["worst_shot_angles"] = ([_angle(a, x) for x in st.worst_shots]
                                    if distinct else None)
        out["best_shot_angles"] = [_angle(a, x) for x in st.best_shots] if distinct else None
        if not distinct:
            out["shot_note"] = "every shot direction gives the same result: no preference"
        out["shots"] = [{"angle": _angle(a, sh.angle),
                         "critical_drawdown_p50": _pressure(a, sh.critical_drawdown_p50),
                         "drawdown_limit": _pressure(a, sh.drawdown_limit),
                         "probability_at_limit": rounded(sh.probability_at_limit)}
                        for sh in st.shots]
        if st.best_pair is not None:
            (a1, a2), lim = st.best_pair
            out["best_phasing"] = {"angles": [_angle(a, a1), _angle(a, a2)],
                                   "drawdown_limit": _pressure(a, lim)}
    else:
        out["worst_wall_angle"] = (None if st.worst_wall_angle is None
                                   else _angle(a, st.worst_wall_angle))
    return out


def _pore_collapse(a: Assessment, pc: PoreCollapse) -> dict[str, Any]:
    """Pore collapse, formatted: ``p10`` is the reservoir pressure at or above which 10% of
    the samples have collapsed (so p10 > p50 > p90)."""
    out: dict[str, Any] = {"name": MECHANISMS["pore_collapse"]}
    out["critical_reservoir_pressure"] = {k: _pressure(a, v) for k, v in pc.far_field.items()}
    out["wall_critical_reservoir_pressure"] = {k: _pressure(a, v) for k, v in pc.wall.items()}
    out["stages"] = [{"reservoir_pressure": _pressure(a, s["reservoir_pressure"]),
                      "probability": rounded(s["probability"]), "low": rounded(s["low"]),
                      "high": rounded(s["high"]),
                      "wall_probability": rounded(s["wall_probability"]),
                      **({"wall_probability_at_max_drawdown":
                          rounded(s["wall_probability_at_max_drawdown"])}
                         if "wall_probability_at_max_drawdown" in s else {})}
                     for s in pc.stages]
    out["surface"] = pc.surface
    if pc.mean_stress is not None:
        out["mean_stress_critical_reservoir_pressure"] = {
            k: _pressure(a, v) for k, v in pc.mean_stress.items()}
    out["never_fraction"] = rounded(pc.never_fraction)
    if pc.initially_compacted_fraction is not None:
        # a critical pressure at or above p0: compacted before any depletion (the wall value
        # is then reported as p0 itself)
        out["initially_compacted_fraction"] = rounded(pc.initially_compacted_fraction)
        out["wall_initially_compacted_fraction"] = rounded(
            pc.wall_initially_compacted_fraction or 0.0)
    if pc.uncollapsed_at_last_stage_fraction is not None:
        out["uncollapsed_at_last_stage_fraction"] = rounded(
            pc.uncollapsed_at_last_stage_fraction)
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
            "validation_error": rounded(float(r.validation_error), 4),
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
            spec = INPUT_SPECS[name]
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
        spec = INPUT_SPECS[name]
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
        **({"drawdown_limit_method": row.method} if a.reliability else {}),
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


def _first_yield(a: Assessment, limits: tuple[float, ...] | None) -> dict[str, Any] | None:
    if limits is None:
        return None
    return {"note": "conservative first-yield reference: the rock at the wall starts to yield; "
                    "yielding is not sand production",
            "stages": [{"reservoir_pressure": _pressure(a, p_r),
                        "drawdown_limit": _pressure(a, lim)}
                       for p_r, lim in zip(a.stages, limits, strict=True)]}


def _rank_correlation(a: Assessment) -> dict[str, Any] | None:
    names = list(a.uncertain)
    if len(names) < 2 or a.samples < 3:
        return None
    x = np.column_stack([a.inputs[n] for n in names])
    ranks = np.argsort(np.argsort(x, axis=0), axis=0).astype(float)
    r = np.corrcoef(ranks, rowvar=False)
    return {"names": names, "matrix": [[rounded(float(v), 4) for v in row] for row in r]}


def summarize(run: Assessment | Result) -> dict[str, Any]:
    """A JSON-ready summary of one run (numbers in the scenario's units, listed in ``units``):
    the typed :class:`~risk.result.Result` formatted, nothing computed here.

    ``warnings`` repeats the scenario's input warnings (:attr:`risk.scenario.Scenario.warnings`,
    an empty list when there are none), in the loader's fixed order.
    """
    result = run if isinstance(run, Result) else summarize_result(run)
    a = result.assessment
    sc = a.scenario
    units = {"pressure": sc.display_unit("pressure"), "angle": "deg",
             "length": sc.display_unit("length"), "probability": "-", "strain": "-",
             "plastic_radius_ratio": "-"}
    mechanisms = {
        key: {"name": m.name, "stages": [_stage_summary(a, st) for st in m.stages]}
        for key, m in result.mechanisms.items()
    }
    if result.pore_collapse is not None:
        mechanisms["pore_collapse"] = _pore_collapse(a, result.pore_collapse)
    if a.collapse_profile and "tunnel_collapse" in mechanisms:
        mechanisms["tunnel_collapse"]["profile"] = _profile(a)
    sens_first, sens_stage, tornado = _sensitivity(a)
    out: dict[str, Any] = {
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
        "first_yield": _first_yield(a, result.first_yield),
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
        **extensions(a),
    }
    # field-history calibration and value of information: only when the scenario asks
    from risk.report.calibration import calibration_block, voi_block

    cal, voi = calibration_block(a), voi_block(a)
    if cal is not None:
        out["calibration"] = cal
    if voi is not None:
        out["value_of_information"] = voi
    return out
