"""The memo of a log run: the main memo template (risk/report/templates/memo.html.j2) with the
interval study as its first section (the answer over depth, the selective-perforation plan,
pore collapse over depth, the depth tracks, a summary of the per-depth table, the strength
from logs and its warnings), followed by the memo's own assumptions and limitations (the
general ones and those of a log run), safety cautions and reproducibility blocks: one
template, one set of those blocks for every memo."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any, Final

import numpy as np

from risk.report.memo.render import _data_uri, _environment, _png_width_in
from risk.report.memo.sections import _reproducibility
from risk.report.memo.texts import ASSUMPTIONS, CAUTIONS, SECTIONS

__all__ = ["log_memo_html", "interval_context", "LOG_ASSUMPTIONS", "INTERVAL_HEADING",
           "DEPTH_CAPTION", "WEAKEST_ROWS"]

#: Heading of the interval study (section 1 of a log run's memo).
INTERVAL_HEADING: Final = "The interval over depth"
#: Caption of the depth-track figure.
DEPTH_CAPTION: Final = (
    "Depth tracks: input logs, UCS from the transform with its P10-P90 band, the sand-free "
    "critical drawdown (P10-P50) per stage against the planned drawdown, P(sanding) per depth at "
    "the planned drawdown (dashed: P(pore collapse) at each stage, when assessed), and the "
    "selective-perforation plan.")
#: Depths listed in the memo's summary of the per-depth table (the highest P(sanding)).
WEAKEST_ROWS: Final = 10

#: What every log run assumes (the memo states each).
LOG_ASSUMPTIONS: Final[tuple[str, ...]] = (
    "Stresses and pore pressure use true vertical depth: the log depth itself, or, where the "
    "logs are in measured depth, TVD by minimum curvature on the survey (Sawaryn & Thorogood "
    "2005) or the [well] inclination held from surface; the mechanics use the [well] "
    "inclination and azimuth at every depth.",
    "UCS comes from a published empirical transform fitted to other rocks; its scatter is "
    "sampled as a lognormal error of the stated coefficient of variation, correlated along "
    "depth with an exponential correlation of the stated length. The transform should be "
    "calibrated on local core tests before the limits are relied on.",
    "Inputs other than the log-derived ones (friction angle unless a transform gives it, "
    "Poisson's ratio, Biot's coefficient, TWC ratio, stress gradients) are sampled once per "
    "sample and held over the whole interval (fully correlated over depth).",
    "Each depletion stage lowers the pore pressure by the same amount at every depth (a "
    "connected interval); stage pressures are quoted at the datum depth of [well] depth.",
    "The interval sands when any perforated depth sands; its probability comes from the joint "
    "samples over depth, not from a product of per-depth probabilities.",
    "The plan counts a sample as failing if it sands at the planned drawdown at any stage; "
    "zones with unassessed depths are never perforated.",
    "Core tests calibrate the transform by a factor exp(sum w_i ln r_i / max(1, sum w_i)), "
    "w_i = exp(-|z - z_i|/D) with D the stated influence distance and r_i each core's "
    "core/transform UCS ratio; away from the cores the uncalibrated transform applies, and "
    "the transform's scatter is not reduced near a core.",
    "Pore collapse uses each depth's stresses and the scenario's pore-collapse pressure "
    "(not from the logs); the depth collapses when the stage's pressure there reaches its "
    "critical pressure.",
    "Short null runs and depth gaps (up to logs.max_gap) are filled by linear interpolation.",
)




def _fmt(v: Any, unit: str = "", nd: int = 0) -> str:
    if v is None:
        return "never (n/a)"
    text = f"{float(v):,.{nd}f}"
    return f"{text} {unit}".strip()


def _weakest(s: Mapping[str, Any]) -> tuple[list[str], list[list[str]], str] | None:
    """The summary of the per-depth table: the depths of highest P(sanding) at the planned
    drawdown at the last stage (ties: the shallower first), with UCS and the sand-production
    critical drawdown (P10) of every stage."""
    table = s.get("table") or {}
    k_last = len(s["stages"])
    key = f"P(sanding) stage {k_last} [-]"
    if key not in table:
        return None
    pu, lu = s["units"]["pressure"], s["units"]["length"]
    p = np.array([np.nan if v is None else v for v in table[key]], dtype=float)
    order = np.argsort(-np.nan_to_num(p, nan=-1.0), kind="stable")[:WEAKEST_ROWS]
    cols = [(f"depth [{lu}]", f"depth [{lu}]", 1),
            (f"UCS P50 [{pu}]", f"ucs P50 [{pu}]", 0)]
    cols += [(f"sand D<sub>c</sub> P10, stage {k + 1} [{pu}]",
              f"sand stage {k + 1} dc P10 [{pu}]", 0) for k in range(k_last)]
    cols += [(f"P(sanding), stage {k + 1} [-]", f"P(sanding) stage {k + 1} [-]", 3)
             for k in range(k_last)]
    cols = [c for c in cols if c[1] in table]
    rows = []
    for i in order:
        row = []
        for _, name, nd in cols:
            v = table[name][int(i)]
            row.append("never" if v is None and "dc" in name else _fmt(v, "", nd))
        if "perforated [-]" in table:
            row.append("yes" if table["perforated [-]"][int(i)] else "no")
        rows.append(row)
    head = [c[0] for c in cols] + (["perforated"] if "perforated [-]" in table else [])
    caption = (f"The {len(rows)} depths of highest P(sanding) at the planned drawdown at the "
               f"last stage, of {len(p):,}; every depth, with every column "
               f"({len(table)}), is in depth.csv and depth.parquet. D<sub>c</sub>: critical "
               "drawdown of the first sand-production mechanism; P10: one sample in ten sands "
               "at or below it.")
    return head, rows, caption


def interval_context(s: Mapping[str, Any]) -> dict[str, Any]:
    """The interval study's part of the template context (texts with their units)."""
    pu, lu = s["units"]["pressure"], s["units"]["length"]
    las = s["las"]
    lead = (f"Interval {_fmt(las['top'], lu, 1)} to {_fmt(las['base'], lu, 1)} from "
            f"{las['file']} (well {las['well'] or 'unnamed'}), {las['depths']:,} depths, "
            f"{s['samples']:,} samples per depth, seed {s['seed']}, {s['sampling']} sampling.")
    out: dict[str, Any] = {"heading": INTERVAL_HEADING, "lead": lead,
                           "planned": _fmt(s["planned_drawdown"], pu),
                           "risk": f"{s['accepted_risk']:.2f}", "rows": [], "plan": "",
                           "pore": [], "pore_plan": False, "weakest": [],
                           "warnings": [str(w) for w in s.get("warnings") or ()]}
    plan = s.get("plan")
    if plan is not None:
        iv = s["interval"]
        out["rows"] = [
            {"stage": k + 1, "p_r": _fmt(st, pu), "whole": f"{iv['probability_whole'][k]:.3f}",
             "indep": f"{iv['probability_if_independent'][k]:.3f}",
             "worst": (f"{iv['worst_depth_probability'][k]:.3f} at "
                       f"{_fmt(iv['worst_depth'][k], lu, 1)}"),
             "limit_whole": _fmt(iv["sand_free_limit_whole"][k], pu),
             "limit_plan": _fmt(plan["sand_free_limit"][k], pu)}
            for k, st in enumerate(s["stages"])]
        runs = ", ".join(f"{_fmt(a, lu, 1)} to {_fmt(b, lu, 1)}" for a, b in plan["runs"])
        out["plan"] = (
            f"Perforate {runs or 'nothing'}: {_fmt(plan['length'], lu, 1)} in all, "
            f"P(interval sands) = {plan['probability']:.3f} at the planned drawdown. "
            f"{plan['weak_zones']} of {plan['zones']} zones of "
            f"{_fmt(plan['zone_thickness'], lu, 1)} are weak; {plan['excluded_zones']} are "
            f"excluded with the stand-off of {_fmt(plan['standoff'], lu, 1)}; minimum interval "
            f"{_fmt(plan['min_interval'], lu, 1)}. Rule: {plan['rule']}."
            + ("" if plan["optimal"] else " The search stopped at its node budget: this is the "
               "best plan found, not a proven optimum."))
    pc = s.get("pore_collapse")
    if pc is not None:
        out["pore_plan"] = "probability_plan" in pc
        out["pore"] = [
            {"stage": k + 1, "p_r": _fmt(st, pu), "far": f"{pc['probability_whole'][k]:.3f}",
             "wall": f"{pc['wall_probability_whole'][k]:.3f}",
             "plan": (f"{pc['probability_plan'][k]:.3f}" if "probability_plan" in pc else "")}
            for k, st in enumerate(s["stages"])]
    weakest = _weakest(s)
    if weakest is not None:
        out["weakest_head"], out["weakest"], out["weakest_caption"] = weakest
    tr = s["transform"]
    corr = ("one error for the whole interval" if tr["correlation_length"] is None
            else f"correlation length {_fmt(tr['correlation_length'], lu, 1)}")
    out["strength"] = (f"UCS from {tr['source']} ({tr['lithology']}), lognormal error with cov "
                       f"{tr['cov']:.2f}, {corr}."
                       + (f" Core calibration: {tr['core']}." if tr.get("core") else ""))
    return out


def log_memo_html(s: Mapping[str, Any], figure_png: bytes, run_date: str | None = None, *,
                  scenario_file: str | None = None) -> str:
    """The HTML memo of a log-run summary (:func:`risk.logs.summary.summarize_depth`): the
    main memo template with the interval study as its first section."""
    from markupsafe import Markup

    study = interval_context(s)
    # header cells and the caption carry the memo's own markup (D<sub>c</sub>)
    study["weakest_head"] = [Markup(h) for h in study.get("weakest_head", [])]
    if "weakest_caption" in study:
        study["weakest_caption"] = Markup(study["weakest_caption"])
    figures = {"depth": {"number": 1, "uri": _data_uri(figure_png), "caption": DEPTH_CAPTION,
                         "name": "depth", "width": _png_width_in(figure_png)}}
    prov = {**s, "run_date": run_date, "scenario_file": scenario_file}
    repro = [(k, v if k != "units" else v.strip().strip("()")) for k, v
             in _reproducibility(prov) if v != "–"]
    repro.insert(4, ("LAS file", f"{s['las']['file']} ({s['las']['depths']:,} depths)"))
    context = {
        "interval": study,
        "title": str(s.get("title") or "Untitled scenario"),
        "unit": s["units"]["pressure"],
        "samples": f"{s['las']['depths']:,} depths \u00d7 {int(s['samples']):,}",
        "deterministic": False,
        "run_date": run_date,
        "sections": SECTIONS,
        "figures": figures,
        "assumptions": [*ASSUMPTIONS, *LOG_ASSUMPTIONS],
        "input_warnings": [],
        "cautions": CAUTIONS,
        "reproducibility": repro,
    }
    return _environment().get_template("memo.html.j2").render(context)
