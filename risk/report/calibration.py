"""results.json blocks of the field-history calibration and the value of information.

Pure formatting of :class:`risk.calibration.Calibration` and :class:`risk.calibration.VoiRow`
(display units, rounded, ``null`` for never); nothing is computed here.
"""

from __future__ import annotations

import math
from typing import Any

from risk.conventions import DISPLAY_UNITS, TO_INTERNAL
from risk.scenario import INPUT_SPECS

__all__ = ["calibration_block", "voi_block", "MODELLING_NOTE"]

MODELLING_NOTE = (
    "The calibrated inputs are shared by the field; every other uncertain input varies from "
    "well to well and is integrated out per observation (each observation is paired with an "
    "independent re-pairing of those inputs). The model's prediction is its sand drawdown "
    "(the earliest enabled sand-production mechanism over the observation's shot directions) "
    "at the observation's reservoir pressure and overrides; the true onset is taken to be that "
    "prediction times a lognormal model error of the stated standard deviation. Posterior by "
    "importance reweighting of the run's samples when the effective sample size reaches the "
    "stated minimum, else by ensemble MCMC. Prior and posterior are both computed on the "
    "run's stored samples (the first 65,536 at most), so the two columns compare like with "
    "like.")


def _r(x: float | None, digits: int = 6) -> float | None:
    if x is None or not math.isfinite(x):
        return None
    return 0.0 if x == 0 else float(f"{x:.{digits}g}")


def _p(sc: Any, v: float | None) -> float | None:
    return None if v is None else _r(v / TO_INTERNAL[sc.units]["pressure"])


def _input_unit(sc: Any, name: str) -> tuple[float, str]:
    dim = INPUT_SPECS[name].dimension
    return TO_INTERNAL[sc.units][dim], DISPLAY_UNITS[sc.units][dim]


def _risk(sc: Any, r: Any) -> dict[str, Any]:
    mech = {}
    for key, curves in r.curves.items():
        mech[key] = [{
            "reservoir_pressure": _p(sc, p_r),
            "drawdown_limit": _p(sc, r.limits[key][k]),
            "critical_wall_pressure": {f"p{round(100 * lv):02d}": _p(sc, v)
                                       for lv, v in zip((0.01, 0.05, 0.1, 0.25, 0.5, 0.75,
                                                         0.9), r.envelope[key][k],
                                                        strict=True)},
            "failure_probability": [{"drawdown": _p(sc, float(d)), "p": _r(float(p)),
                                     "low": _r(float(lo)), "high": _r(float(hi))}
                                    for d, p, lo, hi in zip(r.grid, *curves[k], strict=True)],
        } for k, p_r in enumerate(sc.reservoir_pressure)]
    return {"mechanisms": mech,
            "sand_free": None if r.sand_free is None else [
                {"reservoir_pressure": _p(sc, p_r), "drawdown_limit": _p(sc, lim),
                 "p_no_drawdown": _r(p0)}
                for p_r, lim, p0 in zip(sc.reservoir_pressure, r.sand_free, r.p_no_drawdown or (),
                                        strict=True)],
            "operating_points": [{"reservoir_pressure": _p(sc, p_r), "wall_pressure": _p(sc, p_w),
                                  "probability": _r(prob)} for p_r, p_w, prob in r.points],
            **_coverage(sc, r)}


def _limits(sc: Any, limits: Any) -> list[dict[str, Any]]:
    return [{"reservoir_pressure": _p(sc, p_r), "drawdown_limit": _p(sc, lim)}
            for p_r, lim in zip(sc.reservoir_pressure, limits, strict=True)]


def _coverage(sc: Any, r: Any) -> dict[str, Any]:
    """Per shot direction, the life-of-well shot set, the completion options and pore
    collapse on the same (weighted) samples, where the run has them."""
    out: dict[str, Any] = {}
    perforated = sc.well.completion == "perforated"
    angles = [_r(math.degrees(a)) for a in sc.well.shot_angles] if perforated else [None]
    if r.per_direction:
        out["per_direction"] = {key: [{"shot_angle": angles[j] if j < len(angles) else None,
                                       "limits": _limits(sc, lims)}
                                      for j, lims in enumerate(per)]
                                for key, per in r.per_direction.items()}
    if r.phasing is not None:
        ph, orient, dirs, lims = r.phasing
        out["phasing"] = {"phasing": None if ph is None else _r(ph),
                          "orientation": _r(orient),
                          "shot_angles": [angles[j] for j in dirs],
                          "sand_free": _limits(sc, lims)}
    if r.options:
        out["options"] = [{"name": name, "sand_free": _limits(sc, lims)}
                          for name, lims in r.options]
    if r.pore_collapse is not None:
        pc = r.pore_collapse
        out["pore_collapse"] = {
            "critical_reservoir_pressure": {k: _p(sc, pc[k]) for k in ("p10", "p50", "p90")},
            "stages": [{"reservoir_pressure": _p(sc, p_r), "probability": _r(prob)}
                       for p_r, prob in zip(sc.reservoir_pressure, pc["probability"],
                                            strict=True)]}
    return out


def calibration_block(a: Any) -> dict[str, Any] | None:
    """The ``calibration`` block of results.json, or None without a history."""
    cal = a.calibration
    if cal is None:
        return None
    sc = a.scenario
    inputs = []
    for n in cal.inputs:
        scale, unit = _input_unit(sc, n)
        h = cal.histograms[n]
        inputs.append({
            "name": n, "unit": unit,
            "prior": {k: _r(v / scale) for k, v in cal.prior_inputs[n].items()},
            "posterior": {k: _r(v / scale) for k, v in cal.posterior_inputs[n].items()},
            "histogram": {"edges": [_r(float(e) / scale) for e in h["edges"]],
                          "prior": [_r(float(v) * scale) for v in h["prior"]],
                          "posterior": [_r(float(v) * scale) for v in h["posterior"]]}})
    obs = [{"name": o["name"], "source": o["source"], "outcome": o["outcome"],
            "reservoir_pressure": _p(sc, o["reservoir_pressure"]),
            "drawdown": _p(sc, o["drawdown"]), "drawdown_low": _p(sc, o["low"]),
            "drawdown_high": _p(sc, o["high"]), "weight": _r(o["weight"]),
            "overridden": list(o["overridden"]),
            "prior_predictive": _r(o["prior_predictive"], 4),
            "posterior_predictive": _r(o["posterior_predictive"], 4),
            "reproduced": bool(o["reproduced"]), "conflict": bool(o["conflict"]),
            "median_prediction_prior": _p(sc, o["median_prediction_prior"]),
            "median_prediction_posterior": _p(sc, o["median_prediction_posterior"])}
           for o in cal.observations]
    mcmc = None
    if cal.mcmc is not None:
        m = cal.mcmc
        mcmc = {"walkers": m["walkers"], "steps": m["steps"], "burn_in": m["burn_in"],
                "draws": m["draws"], "acceptance": _r(m["acceptance"], 4),
                "rhat": {k: _r(v, 4) for k, v in m["rhat"].items()},
                "autocorrelation_steps": {k: _r(v, 4) for k, v in m["autocorrelation"].items()},
                "model_runs": m["model_runs"]}
    return {"method": cal.method, "inputs": inputs, "model_error_log_sd": _r(cal.model_error),
            "effective_sample_size": _r(cal.ess, 4), "min_effective_sample_size": cal.min_ess,
            "posterior_rows": cal.rows, "mcmc": mcmc, "observations": obs,
            "warnings": list(cal.warnings), "note": MODELLING_NOTE,
            "prior": _risk(sc, cal.prior), "posterior": _risk(sc, cal.posterior)}


def voi_block(a: Any) -> dict[str, Any] | None:
    """The ``value_of_information`` block of results.json, or None when not computed."""
    rows = a.value_of_information
    if not rows:
        return None
    sc = a.scenario
    out = []
    for r in rows:
        scale, unit = _input_unit(sc, r.input)
        out.append({"name": r.name, "input": r.input, "perfect": r.perfect,
                    "error": _r(r.error / scale) if r.error else None,
                    "error_unit": unit if r.error else None,
                    "relative_error": _r(r.relative_error) if r.relative_error else None,
                    "stages": [{"reservoir_pressure": _p(sc, p_r), "gain": _p(sc, v),
                                "mc_error": _p(sc, e)}
                               for p_r, v, e in zip(sc.reservoir_pressure, r.values, r.errors,
                                                    strict=True)]})
    return {"definition": "expected gain of the sand-free drawdown limit at the accepted risk "
                          "once the quantity is measured (preposterior expectation of the "
                          "limit minus today's limit), from the run's own samples "
                          "(given-data binned estimator; paired Bayesian-bootstrap error: "
                          "today's limit and the expected limit from the same reweighted "
                          "samples)",
            "under": "posterior" if a.calibration is not None else "prior",
            "rows": out}
