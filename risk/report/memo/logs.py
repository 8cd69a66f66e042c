"""The memo of a log run: the interval section (the answer over depth, the perforation plan,
the depth tracks, the transform and its uncertainty, assumptions and limitations) with the
memo's safety cautions, as one self-contained HTML page (and its PDF)."""

from __future__ import annotations

import base64
import html
from collections.abc import Mapping
from typing import Any, Final

from risk.report.memo.texts import CAUTIONS

__all__ = ["log_memo_html", "LOG_ASSUMPTIONS"]

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


def _li(items: list[str]) -> str:
    return "<ul>" + "".join(f"<li>{html.escape(i)}</li>" for i in items) + "</ul>"


def log_memo_html(s: Mapping[str, Any], figure_png: bytes, run_date: str | None = None) -> str:
    """The HTML memo of a log-run summary (:func:`risk.logs.summary.summarize_depth`)."""
    pu, lu = s["units"]["pressure"], s["units"]["length"]
    e = html.escape
    parts = [f"<h1>{e(s['title'])}</h1>",
             f"<p>Interval {_fmt(s['las']['top'], lu, 1)} to {_fmt(s['las']['base'], lu, 1)} "
             f"from {e(s['las']['file'])} (well {e(s['las']['well'] or 'unnamed')}), "
             f"{s['las']['depths']:,} depths, {s['samples']:,} samples per depth, seed "
             f"{s['seed']}, {e(s['sampling'])} sampling"
             + (f", run {e(run_date)}" if run_date else "") + ".</p>"]
    plan = s.get("plan")
    parts.append("<h2>The answer over depth</h2>")
    if plan is None:
        parts.append("<p>No sand-production mechanism is switched on (give twc or twc_ratio, "
                     "or critical_plastic_strain): only first yield is shown.</p>")
    else:
        iv = s["interval"]
        rows = "".join(
            f"<tr><td>{k + 1}</td><td>{_fmt(st, pu)}</td>"
            f"<td>{iv['probability_whole'][k]:.3f}</td>"
            f"<td>{iv['probability_if_independent'][k]:.3f}</td>"
            f"<td>{iv['worst_depth_probability'][k]:.3f} at {_fmt(iv['worst_depth'][k], lu, 1)}"
            f"</td><td>{_fmt(iv['sand_free_limit_whole'][k], pu)}</td>"
            f"<td>{_fmt(plan['sand_free_limit'][k], pu)}</td></tr>"
            for k, st in enumerate(s["stages"]))
        parts.append(
            f"<p>At the planned drawdown of {_fmt(s['planned_drawdown'], pu)} and an accepted "
            f"risk of {s['accepted_risk']:.2f}:</p><table><tr><th>stage</th><th>reservoir "
            f"pressure (datum)</th><th>P(whole interval sands)</th><th>same if depths were "
            f"independent</th><th>worst single depth</th><th>sand-free limit, whole interval"
            f"</th><th>sand-free limit, plan</th></tr>{rows}</table>")
        runs = ", ".join(f"{_fmt(a, lu, 1)} to {_fmt(b, lu, 1)}" for a, b in plan["runs"])
        parts.append(
            "<h2>Selective-perforation plan</h2>"
            f"<p>Perforate {runs or 'nothing'}: {_fmt(plan['length'], lu, 1)} in all, "
            f"P(interval sands) = {plan['probability']:.3f} at the planned drawdown. "
            f"{plan['weak_zones']} of {plan['zones']} zones of "
            f"{_fmt(plan['zone_thickness'], lu, 1)} are weak; {plan['excluded_zones']} are "
            f"excluded with the stand-off of {_fmt(plan['standoff'], lu, 1)}; minimum interval "
            f"{_fmt(plan['min_interval'], lu, 1)}."
            f" Rule: {e(plan['rule'])}."
            + ("" if plan["optimal"] else " The search stopped at its node budget: this is the "
               "best plan found, not a proven optimum.") + "</p>")
    pc = s.get("pore_collapse")
    if pc is not None:
        rows = "".join(
            f"<tr><td>{k + 1}</td><td>{_fmt(st, pu)}</td>"
            f"<td>{pc['probability_whole'][k]:.3f}</td>"
            f"<td>{pc['wall_probability_whole'][k]:.3f}</td>"
            + (f"<td>{pc['probability_plan'][k]:.3f}</td>" if "probability_plan" in pc else "")
            + "</tr>" for k, st in enumerate(s["stages"]))
        parts.append(
            "<h2>Pore collapse over depth</h2><p>Depletion, not drawdown, drives pore collapse;"
            " the probability that some depth of the interval has collapsed by each stage "
            "(joint samples over depth):</p><table><tr><th>stage</th><th>reservoir pressure "
            "(datum)</th><th>P(far field, whole interval)</th><th>P(at a cavity wall, whole "
            "interval)</th>" + ("<th>P(far field, plan)</th>" if "probability_plan" in pc
                                else "") + f"</tr>{rows}</table>")
    uri = "data:image/png;base64," + base64.b64encode(figure_png).decode("ascii")
    parts.append(f"<h2>Depth tracks</h2><img src='{uri}' style='width:100%' alt='depth tracks'>"
                 "<p class='caption'>Input logs, UCS from the transform with its P10-P90 band, "
                 "the sand-free critical drawdown (P10-P50) per stage against the planned "
                 "drawdown, P(sanding) per depth at the planned drawdown (dashed: P(pore collapse) "
                 "at each stage, when assessed), and the plan.</p>")
    tr = s["transform"]
    corr = ("one error for the whole interval" if tr["correlation_length"] is None
            else f"correlation length {_fmt(tr['correlation_length'], lu, 1)}")
    parts.append(f"<h2>Strength from logs</h2><p>UCS from {e(tr['source'])} "
                 f"({e(tr['lithology'])}), lognormal error with cov {tr['cov']:.2f}, {corr}."
                 + (f" Core calibration: {e(tr['core'])}." if tr.get("core") else "")
                 + "</p>")
    if s["warnings"]:
        parts.append("<h2>Warnings and data notes</h2>" + _li(list(s["warnings"])))
    parts.append("<h2>Assumptions and limitations</h2>" + _li(list(LOG_ASSUMPTIONS)))
    parts.append("<h2>Safety cautions</h2>" + _li(list(CAUTIONS)))
    body = "\n".join(parts)
    css = ("body{font-family:'DejaVu Sans',sans-serif;font-size:10pt;max-width:48em;margin:2em "
           "auto}table{border-collapse:collapse}td,th{border:1px solid #999;padding:2px 5px;"
           "font-size:9pt}.caption{font-size:8.5pt;color:#333}")
    return (f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'><title>"
            f"{e(s['title'])}</title><style>{css}</style></head><body>{body}</body></html>\n")
