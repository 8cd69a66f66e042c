"""Small real runs for the report tests, and the sections results.json does not carry yet.

:func:`real_run` assesses a tiny scenario and summarises it exactly as ``risk run`` does.
:func:`augment` adds the sections the lead announced (``inputs``, ``input_rank_correlation``,
extra critical-wall-pressure quantiles, ``operating_points``, ``sensitivity``, ``tornado``,
``best_shot_angle``, a tunnel-collapse profile, pore collapse, more mechanisms, ``run_date``)
in exactly the announced shape, only where the summary lacks them. Their numbers are built from
the run's own samples where that is easy (inputs, quantiles, rank correlations) and are
otherwise placeholders for rendering: shape fixtures, not check values.
"""

from __future__ import annotations

import copy
from pathlib import Path
from typing import Any

import numpy as np
from scipy import stats

from risk.assessment import assess
from risk.report.results import rounded, summarize
from risk.scenario import load_scenario

OPENHOLE_DOC = """
title = "Report test, open hole"
units = "field"
[well]
depth = 7850
inclination = 0
azimuth = 0
completion = "openhole"
hole_diameter = 8.5
[stress]
sv_gradient = { dist = "normal", mean = 0.98, sd = 0.02, source = "density log integration" }
shmax_gradient = { dist = "uniform", low = 0.78, high = 0.92, source = "breakout width" }
shmin_gradient = { dist = "normal", mean = 0.72, sd = 0.02, source = "leak-off tests" }
shmax_azimuth = 40
pp_gradient = 0.44
[rock]
ucs = { dist = "lognormal", median = 8200, cov = 0.25, source = "core plugs & sonic correlation" }
friction_angle = { dist = "truncnormal", mean = 32, sd = 3, low = 20, high = 45 }
tensile_strength = 150
poisson_ratio = { dist = "uniform", low = 0.22, high = 0.30 }
biot = 0.9
[production]
reservoir_pressure = [3450, 3000, 2500]
max_drawdown = 2000
accepted_risk = 0.10
[analysis]
criterion = "mohr-coulomb"
samples = 256
seed = 7
sampling = "sobol"
[correlation]
pairs = [["ucs", "friction_angle", 0.4]]
"""

PERFORATED_DOC = """
title = "Report test, perforated <well> & co"
units = "si"
[well]
depth = 2800
inclination = 35
azimuth = 120
completion = "perforated"
shot_angles = [0, 60, 120, 180, 240, 300]
tunnel_diameter = 12.7
[stress]
sv_gradient = 22.6
shmax_gradient = { dist = "uniform", low = 17.0, high = 19.5, source = "breakouts" }
shmin_gradient = 15.5
shmax_azimuth = 45
pp_gradient = 10.2
depletion_path = 0.6
[rock]
ucs = { dist = "normal", mean = 120, sd = 15, source = "core plugs" }
friction_angle = 33
tensile_strength = 5
poisson_ratio = 0.25
biot = 0.9
twc = { dist = "normal", mean = 40, sd = 6, source = "TWC tests" }
pore_collapse_pressure = { dist = "normal", mean = 30, sd = 3 }
[production]
reservoir_pressure = [28.5, 25, 21]
max_drawdown = 15
accepted_risk = 0.05
operating_points = [[28.5, 24.0], [25.0, 21.5]]
[analysis]
criterion = "mohr-coulomb"
samples = 128
seed = 3
sampling = "sobol"
"""


def real_run(tmp_path: Path, doc: str, name: str = "scenario.toml") -> tuple[dict[str, Any], Any]:
    """(results dict, Assessment) of a small real run, as ``risk run`` summarises it."""
    path = tmp_path / name
    path.write_text(doc, encoding="utf-8")
    a = assess(load_scenario(path))
    return summarize(a), a


def _r(x: float) -> float | None:
    return rounded(float(x))


def augment(results: dict[str, Any], a: Any) -> dict[str, Any]:
    """A deep copy of ``results`` with every announced section added where absent."""
    out = copy.deepcopy(results)
    sc = a.scenario
    from risk.conventions import DISPLAY_UNITS, TO_INTERNAL
    from risk.scenario import INPUT_SPECS

    disp, to_int = DISPLAY_UNITS[sc.units], TO_INTERNAL[sc.units]
    uncertain = [n for n in a.uncertain if n in a.inputs]
    if "inputs" not in out:
        items = []
        for name, marg in sc.inputs.items():
            spec = INPUT_SPECS[name]
            scale, unit = to_int[spec.dimension], disp[spec.dimension]
            v = np.asarray(a.inputs[name], dtype=float) / scale
            q = np.quantile(v, [0.1, 0.5, 0.9])
            counts, edges = np.histogram(v, bins=16)
            items.append({
                "name": name, "section": spec.section, "unit": unit,
                "distribution": marg.describe(scale, unit), "source": marg.source,
                "fixed": name not in uncertain,
                "p10": _r(q[0]), "p50": _r(q[1]), "p90": _r(q[2]),
                "histogram": {"edges": [_r(e) for e in edges], "counts": counts.tolist()},
            })
        out["inputs"] = items
    if "input_rank_correlation" not in out and len(uncertain) >= 2:
        m = stats.spearmanr(np.column_stack([a.inputs[n] for n in uncertain])).statistic
        out["input_rank_correlation"] = {
            "names": uncertain, "matrix": [[_r(x) for x in row] for row in np.atleast_2d(m)]}
    yo = out["mechanisms"]["yield_onset"]
    for st in yo["stages"]:
        if sc.well.completion == "perforated" and "best_shot_angle" not in st:
            best = min(st["shots"], key=lambda s: s["probability_at_limit"])
            st["best_shot_angle"] = best["angle"]
    stages_p = [st["reservoir_pressure"] for st in yo["stages"]]
    if "effective_strength_onset" not in out["mechanisms"]:
        es = copy.deepcopy(yo)
        es["name"] = "Effective-strength sanding onset (placeholder)"
        for st in es["stages"]:
            for row in st["failure_probability"]:
                row["p"], row["low"], row["high"] = (_r(0.6 * row[x]) for x in ("p", "low", "high"))
            if st["drawdown_limit"] is not None:
                st["drawdown_limit"] = _r(st["drawdown_limit"] + 0.1 * out["max_drawdown"])
        out["mechanisms"]["effective_strength_onset"] = es
    if "tunnel_collapse" not in out["mechanisms"]:
        tc = copy.deepcopy(yo)
        tc["name"] = "Tunnel collapse (placeholder)"
        for st in tc["stages"]:
            for row in st["failure_probability"]:
                row["p"], row["low"], row["high"] = (_r(0.3 * row[x] ** 2)
                                                     for x in ("p", "low", "high"))
        d = np.linspace(0.0, out["max_drawdown"], 11)
        tc["profile"] = [
            {"reservoir_pressure": p_r, "drawdown": [_r(x) for x in d],
             "plastic_radius_ratio": {
                 q: [_r(1.0 + f * (x / d[-1]) ** 1.5 * (1 + 0.3 * i)) for x in d]
                 for q, f in (("p10", 0.2), ("p50", 0.5), ("p90", 1.1))},
             "wall_plastic_strain": {
                 q: [_r(f * (x / d[-1]) ** 2 * (1 + 0.3 * i)) for x in d]
                 for q, f in (("p10", 0.001), ("p50", 0.004), ("p90", 0.012))}}
            for i, p_r in enumerate(stages_p)]
        out["mechanisms"]["tunnel_collapse"] = tc
    if "pore_collapse" not in out["mechanisms"]:
        lo_p, hi_p = min(stages_p), max(stages_p)
        out["mechanisms"]["pore_collapse"] = {
            "name": "Pore collapse under depletion (placeholder)",
            "critical_reservoir_pressure": {"p10": _r((lo_p + hi_p) / 2), "p50": _r(lo_p * 1.02),
                                            "p90": _r(lo_p * 0.9)},
            "stages": [{"reservoir_pressure": p, "probability": _r(pr), "low": _r(pr * 0.8),
                        "high": _r(min(1.0, pr * 1.2 + 0.01))}
                       for p, pr in zip(stages_p, np.linspace(0.0, 0.6, len(stages_p)),
                                        strict=True)],
        }
    if not out.get("operating_points"):
        out["operating_points"] = [
            {"reservoir_pressure": p, "wall_pressure": _r(p - 0.3 * out["max_drawdown"])}
            for p in stages_p[:2]]
    if "sensitivity" not in out and uncertain:
        w = np.arange(len(uncertain), 0, -1, dtype=float) ** 2
        first = w / w.sum() * 0.8
        rows = [{"input": n, "first": _r(f), "total": _r(f * 1.15 + 0.01),
                 "first_low": _r(max(f - 0.05, 0.0)), "first_high": _r(f + 0.05),
                 "total_low": _r(max(f * 1.15 - 0.04, 0.0)), "total_high": _r(f * 1.15 + 0.06),
                 "shapley": _r(f * 1.05)}
                for n, f in zip(uncertain, first, strict=True)]
        out["sensitivity"] = {"yield_onset": rows,
                              "tunnel_collapse": list(reversed(copy.deepcopy(rows)))}
    if "tornado" not in out and out.get("inputs") and uncertain:
        base = yo["stages"][0]["critical_drawdown"]["p50"] or 0.0
        by_name = {i["name"]: i for i in out["inputs"]}
        rows = [{"input": n, "low_value": by_name[n]["p10"], "high_value": by_name[n]["p90"],
                 "output_low": _r(base * (1.0 - 0.15 * (j + 1))),
                 "output_high": _r(base * (1.0 + 0.1 * (j + 1)))}
                for j, n in enumerate(uncertain)]
        out["tornado"] = {"yield_onset": {"base": base, "rows": rows}}
    out.setdefault("run_date", "2024-05-01")
    return out


def strip_optional(results: dict[str, Any]) -> dict[str, Any]:
    """A deep copy without any of the optional sections (the oldest results shape)."""
    out = copy.deepcopy(results)
    for key in ("inputs", "input_rank_correlation", "operating_points", "sensitivity",
                "tornado", "run_date"):
        out.pop(key, None)
    out["mechanisms"] = {k: v for k, v in out["mechanisms"].items() if k == "yield_onset"}
    for st in out["mechanisms"]["yield_onset"]["stages"]:
        for key in ("p01", "p05", "p25", "p75"):
            st["critical_wall_pressure"].pop(key, None)
        st.pop("best_shot_angle", None)
    return out
