"""The risk memo: a self-contained HTML page and its PDF, rendered from the results dict alone.

Everything here takes the parsed ``results.json`` (see the README's table and
:mod:`risk.report.results`), so ``risk memo DIR`` can re-render a memo without recomputing.
Sections that a results file does not carry (an older run, an open hole, a run without a
sensitivity study) are skipped with a short note. The HTML embeds its figures as base64 data
URIs and its CSS inline: it loads nothing from anywhere. Nothing here reads or writes files
(apart from the package's own templates) or reads the clock: the run date is printed only when
the results carry a ``run_date``, so the same results give the same memo.

Templates are Jinja2 with autoescaping on; every text that reaches them from the results
(titles, sources, warnings) is escaped, and control characters in it (a results file written by
hand, a scenario file name) are printed as visible escapes such as ``\\x1b``
(:func:`risk.errors.visible`; tab and line breaks stay, they are only white space in HTML).
"""

from __future__ import annotations

import base64
import json
import math
import re
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Final

import numpy as np
from jinja2 import Environment, FileSystemLoader, StrictUndefined
from markupsafe import Markup, escape

from risk.errors import visible
from risk.report.figures import DPI, format_value, input_label, output_name, render_all

__all__ = ["Memo", "build_memo", "memo_context", "render_html", "render_pdf", "SECTIONS"]

TEMPLATES: Final = Path(__file__).resolve().parent / "templates"

#: Section headings, in order (tests look for each one).
SECTIONS: Final[tuple[str, ...]] = (
    "Summary",
    "The scenario",
    "Results per mechanism",
    "Sensitivity and what to measure next",
    "Assumptions and limitations",
    "Safety cautions",
    "Reproducibility",
)

_SECTION_TITLES: Final[dict[str, str]] = {
    "well": "Well and completion", "stress": "Stresses and pore pressure", "rock": "Rock",
    "production": "Production", "analysis": "Analysis",
}

#: Figure captions (what the reader should look for), by figure name.
CAPTIONS: Final[dict[str, str]] = {
    "sand_free": (
        "Sand-free drawdown limit at every depletion stage (the drawdown at which the "
        "probability that an enabled sand-production mechanism predicts sand reaches the "
        "accepted risk), with its one-sided 95% lower bound shaded; for perforated wells also "
        "the gun chosen for the life of the well, and every completion option of the scenario "
        "on the same samples. A limit at zero means sand is expected with no drawdown."),
    "input_histograms": "Sampled inputs in the scenario's units, with P10, P50 and P90 marked.",
    "input_correlation": "Rank (Spearman) correlation between the sampled inputs, as sampled.",
    "failure_probability": (
        "Probability of failure vs drawdown for each mechanism and depletion stage, with its "
        "95% confidence band. The dashed line is the accepted risk; each dot marks the drawdown "
        "limit, its whisker reaches down to the 95% lower confidence bound (limits beyond the "
        "largest drawdown considered are in the tables only)."),
    "envelope": (
        "Operating envelope over depletion: the critical flowing wall pressure (below it, that "
        "share of samples fails) vs reservoir pressure. Shading gives the share of samples "
        "failing; the straight line is zero drawdown; the labelled dashed line is the accepted "
        "risk (reservoir pressure minus the drawdown limit)."),
    "shot_directions": (
        "Risk per perforation direction: the drawdown limit at the accepted risk of tunnels shot "
        "in each direction (longer is better); the best direction is highlighted where the "
        "limits differ between directions. Angles are measured {angles}."),
    "tunnel_collapse": (
        "Tunnel collapse: plastic radius ratio and wall plastic strain vs drawdown, median "
        "(solid) with the P10-P90 band (dotted edges), per depletion stage."),
    "pore_collapse": (
        "Pore collapse: probability vs reservoir pressure with its 95% band and the P10, P50 and "
        "P90 critical reservoir pressures."),
    "sensitivity": (
        "Sensitivity indices with their intervals at the first stage (pore collapse: over "
        "depletion) of the capped critical drawdown (pore collapse: of the critical reservoir "
        "pressure); diamonds are Shapley effects where the surrogate gave them. With correlated "
        "inputs the first-order index is the full one (with everything correlated with the "
        "input) and the total the independent one, so first can exceed total; where only "
        "given-data first-order indices exist, no total is drawn."),
    "tornado": (
        "Tornado chart: the critical drawdown (pore collapse: the critical reservoir pressure) "
        "when one input at a time is moved to its P10 or P90 value, the others held at their "
        "base values. The axis ends at the first stage's reservoir pressure, where the outputs "
        "are capped: a hatched bar with an arrow reaches the cap (no failure within the "
        "available drawdown). Inputs that barely move the output are named under each panel; "
        "the table lists every input."),
}

_SHOT_STAGES: Final = 3  # depletion stages per per-shot table (keeps it within the page)

#: Where each figure sits in the memo (numbering follows this order).
_FIGURE_ORDER: Final = ("sand_free", "input_histograms", "input_correlation", "failure_probability",
                        "envelope", "shot_directions", "tunnel_collapse", "pore_collapse",
                        "sensitivity", "tornado")

ASSUMPTIONS: Final[tuple[str, ...]] = (
    "Linear elastic, isotropic rock and a plane-strain idealisation at the cavity wall (open "
    "hole or perforation tunnel); stresses at the wall from the generalized Kirsch solution.",
    "Failure is checked with Terzaghi effective stresses (total stress minus pore pressure); "
    "Biot's coefficient enters only the poroelastic terms (the inflow term at the wall and the "
    "depletion stress path).",
    "The steady radial Darcy inflow term is exact for an unbounded medium; a bounded hollow "
    "cylinder (a laboratory sample or a finite drainage radius) differs.",
    "Perforation tunnels see the far-field stresses, not the stresses amplified by the "
    "wellbore.",
    "The effective-strength factor is an empirical calibration: k \u2248 3.1 (Willson et al. "
    "2002); 3.8\u20134.6 in perforation-collapse tests (Yeow et al. 2004); field sanding onset "
    "at 0.5\u20131\u00d7 the predicted critical bottom-hole flowing pressure (Palmer et al. "
    "2003) \u2014 all as quoted in Bellarby (2009).",
    "Log correlations for UCS carry factor-of-two scatter outside the basin they were fitted "
    "in (McNally 1987; Chang, Zoback & Khaksar 2006).",
    "Not modelled: transient and cyclic loading (start-ups, shut-ins), multiphase flow and "
    "water breakthrough, rate-dependent erosion and sand transport, strain softening and large "
    "strains, thermal effects.",
    "Yield onset at the wall is the earliest and most conservative signal: it marks the "
    "first permanent deformation, not sand production, which needs the tunnel to fail "
    "(tunnel collapse) or the calibrated effective-strength onset.",
    "Tunnel collapse (when computed): an axisymmetric elastic-perfectly plastic cavity "
    "(Mohr\u2013Coulomb with dilation, or Hoek\u2013Brown) in an equivalent hydrostatic in-plane "
    "stress (3\u03c3\u2081 \u2212 \u03c3\u2083)/2, with steady Darcy flow to a fixed drainage "
    "radius and unchanged permeability; small strain, monotonic loading, no softening. "
    "Collapse is taken when the wall plastic hoop strain reaches the calibrated critical value, "
    "or when the seepage gradient at the yielded wall reaches the unconfined strength. Where "
    "the axial stress at the yielded wall exceeds the hoop stress the plane-strain solution is "
    "approximate; the share of such samples is in results.json (plane_strain_flag_fraction) "
    "and flagged in the results section when it is not zero.",
    "Effective-strength onset at a perforation tip (when chosen) treats the tip as a spherical "
    "cavity in the mean far-field total stress.",
    "Pore collapse (when computed): compaction starts when the mean effective stress reaches "
    "the pore-collapse pressure P* of hydrostatic tests; the wall value is taken at zero "
    "drawdown (flowing only raises it).",
    "Sensitivity indices describe the critical drawdown capped at the reservoir pressure; "
    "outcomes stuck at zero drawdown or at the full reservoir pressure make the output "
    "non-smooth, in which case a Monte-Carlo estimator on the model (independent inputs) "
    "replaces the polynomial surrogate. With "
    "correlated inputs, Shapley effects rank the inputs where the surrogate holds; where it "
    "does not, full first-order indices from the sample itself (given data; estimates below "
    "zero from sampling noise are shown as 0) rank them; the "
    "tornado varies one input at a time "
    "and ignores correlation.",
    "P10 of a critical drawdown is the drawdown at or below which 10% of the samples fail "
    "(pessimistic end); for pore collapse, the reservoir pressure at or above which 10% have "
    "compacted.",
    "Sampling error: every probability is estimated from a finite number of samples. Failure "
    "curves carry 95% confidence bands and each drawdown limit a one-sided 95% lower "
    "confidence bound; use the bound, not the estimate, when the two differ.",
)

CAUTIONS: Final[tuple[str, ...]] = (
    "This is a screening tool. It does not replace engineering judgement.",
    "Local regulations, codes and operator standards take precedence; have the decision "
    "reviewed by a licensed professional.",
    "Calibrate the model against the local sanding history (offset wells, sand-production "
    "events, core tests) before relying on its limits.",
    "Produced sand erodes chokes, flowlines and equipment and can lead to loss of containment "
    "or loss of well control.",
    "Ramp rates up slowly after start-up and after every shut-in.",
    "Monitor sand production (acoustic or intrusive detectors, separator and sample checks).",
)


@dataclass(frozen=True)
class Memo:
    """A rendered memo: the HTML page, its PDF and the figures' PNG bytes by name."""

    html: str
    pdf: bytes
    figures: dict[str, bytes]


# --------------------------------------------------------------------------- helpers

def _p(results: Mapping[str, Any], v: Any, *, none: str = "never") -> str:
    return format_value(v, _punit(results), none=none)


def _punit(results: Mapping[str, Any]) -> str:
    return str((results.get("units") or {}).get("pressure", ""))


def _prob(v: Any) -> str:
    if v is None:
        return "–"
    return f"{float(v):.3f}"


def _pct(v: Any) -> str:
    if v is None:
        return "–"
    return f"{100.0 * float(v):.1f}%"


def _lower(name: str) -> str:
    """A mechanism name for the middle of a sentence ("Yield onset" -> "yield onset"; an
    acronym such as "TWC onset" stays)."""
    return name[0].lower() + name[1:] if name[:2].istitle() else name


def _rich(text: str) -> Markup:
    """Escaped text with the reservoir-pressure symbol typeset (p_r -> p<sub>r</sub>)."""
    return (escape(text).replace("p_r", Markup("p<sub>r</sub>"))
            .replace("p_wf", Markup("p<sub>wf</sub>")))


def _sci(v: Any) -> str:
    """A small probability [-] in scientific notation."""
    return "–" if v is None else f"{float(v):.3g}"


def _num(v: Any) -> str:
    return "–" if v is None else f"{float(v):.3g}"


def _raw(v: Any) -> str:
    """The JSON text of a value, for machine-readable ``data-value`` attributes."""
    return json.dumps(v)


def _drawdown_mechanisms(results: Mapping[str, Any]) -> list[tuple[str, Mapping[str, Any]]]:
    out = []
    for key, mech in (results.get("mechanisms") or {}).items():
        stages = mech.get("stages") or []
        if stages and all("failure_probability" in s for s in stages):
            out.append((key, mech))
    return out


def _data_uri(png: bytes) -> str:
    return "data:image/png;base64," + base64.b64encode(png).decode("ascii")


def _png_width_in(png: bytes) -> str:
    """The printed width [in] of a PNG drawn at :data:`~risk.report.figures.DPI`, so every
    figure keeps its design size (and its fonts their point size) in the memo."""
    if png[:8] != b"\x89PNG\r\n\x1a\n" or len(png) < 24:
        return "100%"
    return f"{int.from_bytes(png[16:20], 'big') / DPI:.3f}in"


#: A source that says the value comes from a log correlation (not merely "density log").
_LOG_CORRELATION: Final = re.compile(
    r"correlat|\bsonic\b|log[- ]derived|from (the )?(well )?logs?\b|\bmcnally\b", re.I)


def _rank_value(row: Mapping[str, Any]) -> float | None:
    """What ranks an input: Shapley effect, else total index, else first-order index."""
    for k in ("rank_value", "shapley", "total", "first"):
        if row.get(k) is not None:
            return float(row[k])
    return None


def _rank_basis(row: Mapping[str, Any]) -> str:
    for k, text in (("shapley", "Shapley effect"), ("total", "total Sobol index"),
                    ("first", "first-order (full) Sobol index")):
        if row.get(k) is not None:
            return text
    return "index"


def _top_sensitivity(results: Mapping[str, Any], key: str) -> Mapping[str, Any] | None:
    rows = (results.get("sensitivity") or {}).get(key) or []
    rows = [r for r in rows if _rank_value(r) is not None]
    return max(rows, key=lambda r: float(_rank_value(r) or 0.0)) if rows else None


def _interp_probability(stage: Mapping[str, Any], drawdown: float) -> float | None:
    fp = stage.get("failure_probability") or []
    d = np.array([r["drawdown"] for r in fp if r.get("p") is not None], dtype=float)
    p = np.array([r["p"] for r in fp if r.get("p") is not None], dtype=float)
    if d.size == 0 or not d[0] <= drawdown <= d[-1]:
        return None
    return float(np.interp(drawdown, d, p))


# --------------------------------------------------------------------------- sections

def _angles(c: Mapping[str, Any]) -> str:
    """A shot set as text: "180° phasing, shots at 0° and 180°"."""
    shots = [f"{float(a):g}\u00b0" for a in c.get("shot_angles") or []]
    ph = c.get("phasing")
    what = ("the planned shot set" if ph is None else
            "0\u00b0 phasing (every shot in one direction)" if float(ph) == 0.0
            else f"{float(ph):g}\u00b0 phasing")
    where = ", ".join(shots[:-1]) + (" and " if len(shots) > 1 else "") + shots[-1] if shots \
        else "–"
    return f"{what}, shots at {where}"


def _angle_reference(results: Mapping[str, Any]) -> str:
    """Where shot and wall angles are measured from (results.json; older files: the high
    side, with the vertical-well rule of risk.conventions)."""
    return str(results.get("angle_reference") or "from the high side of the well, clockwise "
               "looking down the hole (vertical well: from the direction azimuth, clockwise "
               "seen from above)")


def _tied(stage: Mapping[str, Any], key: str) -> str:
    """An angle, or every angle tied with it ("0° / 180°": equal directions tie, always)."""
    group = stage.get(key + "s")
    if group and len(group) > 1:
        shown = "/".join(f"{float(v):g}\u00b0" for v in group[:3])
        return shown + (f" +{len(group) - 3}" if len(group) > 3 else "")
    return format_value(stage.get(key), "deg", none="–")


def _first_shots(results: Mapping[str, Any]) -> list[Mapping[str, Any]]:
    for _key, mech in _drawdown_mechanisms(results):
        shots = (mech.get("stages") or [{}])[0].get("shots")
        if shots:
            return list(shots)
    return []


def _completion_text(results: Mapping[str, Any], o: Mapping[str, Any]) -> str:
    """A completion in a few words: "open hole, 216 mm" or "perforated, 12 directions 30°
    apart, tunnels 18 mm"."""
    small = str((results.get("units") or {}).get("length", ""))
    small = "in" if small == "ft" else "mm"
    if o.get("completion") == "openhole":
        d = o.get("hole_diameter")
        return "open hole" + (f", {float(d):g} {small}" if d is not None else "")
    shots = [float(a) for a in o.get("shot_angles") or [] if a is not None]
    steps = sorted({round((b - a) % 360.0, 6) for a, b in zip(shots, shots[1:] + shots[:1],
                                                              strict=True)}) if shots else []
    if len(shots) > 4 and len(steps) == 1:
        where = f"{len(shots)} directions {steps[0]:g}\u00b0 apart"
    else:
        where = "shots at " + ", ".join(f"{a:g}\u00b0" for a in shots)
    d = o.get("tunnel_diameter")
    return "perforated, " + where + (f", tunnels {float(d):g} {small}" if d is not None else "")


def _answer(results: Mapping[str, Any]) -> dict[str, Any]:
    """The memo's opening: the sand-free limit now and over depletion, what it means at the
    planned points, and the completion for the life of the well (results.json alone)."""
    sf = results.get("sand_free")
    out: dict[str, Any] = {"available": sf is not None, "sentences": [], "rows": [],
                           "screening": None, "note": results.get("sand_free_note"),
                           "choice": None, "options": [], "points": []}
    fy = {st["reservoir_pressure"]: st["drawdown_limit"]
          for st in ((results.get("first_yield") or {}).get("stages") or [])}
    if sf is None:
        return out
    stages = sf.get("stages") or []
    names = {k: str(m.get("name", k)) for k, m in (results.get("mechanisms") or {}).items()}
    for st in stages:
        out["rows"].append({
            "p_r": _p(results, st["reservoir_pressure"]),
            "limit": _p(results, st["drawdown_limit"]),
            "limit_raw": _raw(st["drawdown_limit"]),
            "lower": _p(results, st.get("drawdown_limit_lower"), none="not resolved"),
            "governing": names.get(st["governing"], st["governing"]),
            "p0": f"{_pct(st['p_no_drawdown'])} ({_pct(st['p_no_drawdown_low'])}–"
                  f"{_pct(st['p_no_drawdown_high'])})",
            "first_yield": _p(results, fy.get(st["reservoir_pressure"]))})
    if not stages:
        return out
    first, sents = stages[0], out["sentences"]
    gov = _lower(names.get(first["governing"], first["governing"]))
    sents.append(
        f"Sand-free drawdown limit now: {_p(results, first['drawdown_limit'])} at p_r = "
        f"{_p(results, first['reservoir_pressure'])}"
        + (" with the planned shot set" if results.get("completion") == "perforated" else "")
        + f", governed by {gov} (95% lower bound "
        f"{_p(results, first.get('drawdown_limit_lower'), none='not resolved')}), at an "
        f"accepted risk of {results.get('accepted_risk')}.")
    if len(stages) > 1:
        sents.append("Over the depletion plan: " + "; ".join(
            f"{_p(results, st['drawdown_limit'])} at p_r = {_p(results, st['reservoir_pressure'])}"
            for st in stages[1:]) + ".")
    z = sf.get("zero_limit") or {}
    if z.get("kind") == "between":
        sents.append(
            f"The sand-free limit reaches zero when the reservoir is depleted below about "
            f"{_p(results, z.get('estimate'))} (between the stages at "
            f"{_p(results, z.get('above'))} and {_p(results, z.get('below'))}, where P(sand "
            f"with no drawdown) reaches the accepted risk; linear interpolation).")
    elif z.get("kind") == "first-stage":
        sents.append("The sand-free limit is zero from the first stage on: the accepted risk "
                     "is exceeded with no drawdown at all.")
    else:
        sents.append(f"The sand-free limit stays above zero down to the last stage "
                     f"({_p(results, z.get('above'))}).")
    zero_rows = [st for st in stages if st["drawdown_limit"] == 0]
    if zero_rows:
        st = zero_rows[0]
        out["screening"] = (
            f"Where the limit is zero, the well is expected to sand with no drawdown at all: "
            f"P(sanding with no drawdown) = {_pct(st['p_no_drawdown'])} (95% band "
            f"{_pct(st['p_no_drawdown_low'])}–{_pct(st['p_no_drawdown_high'])}) at p_r = "
            f"{_p(results, st['reservoir_pressure'])}, above the accepted risk. As screening, "
            "the completion then needs sand control, a changed completion or a rate "
            "restriction; which one is the engineer's decision, under local practice and "
            "regulations.")
    out["points"] = [{
        "p_r": _p(results, pt["reservoir_pressure"]), "p_w": _p(results, pt["wall_pressure"]),
        "d": _p(results, pt["drawdown"]),
        "p": ("not a depletion stage" if pt.get("probability") is None else
              f"{_pct(pt['probability'])} ({_pct(pt['low'])}–{_pct(pt['high'])})"),
        "vs": ("–" if pt.get("beyond_limit") is None else
               "beyond the limit" if pt["beyond_limit"] else "within the limit")}
        for pt in sf.get("operating_points") or []]
    ch = results.get("completion_choice")
    if ch:
        if all(float(v or 0.0) == 0.0 for v in ch["chosen"].get("drawdown_limits") or []):
            out["sentences"].append(
                "No shot set gives a positive sand-free limit at any stage, so the gun below is "
                "chosen by the tie rules only: phasing does not avoid sanding here.")
        out["choice"] = {
            "chosen": _angles(ch["chosen"]),
            "rule": ch.get("rule"),
            "rows": [{"p_r": _p(results, st["reservoir_pressure"]),
                      "chosen": _p(results, lim),
                      "best": _p(results, st["drawdown_limit"]),
                      "best_set": _angles(st)}
                     for st, lim in zip(ch.get("per_stage_best") or [],
                                        ch["chosen"].get("drawdown_limits") or [],
                                        strict=False)],
            "by_phasing": [{"set": _angles(c), "limits": [_p(results, v)
                                                          for v in c["drawdown_limits"]]}
                           for c in ch.get("by_phasing") or []],
            "tied": [_angles(c) for c in ch.get("tied") or []],
        }
    for o in results.get("completion_options") or []:
        osf = o.get("sand_free") or {}
        out["options"].append({
            "name": o["name"], "what": _completion_text(results, o),
            "limits": [_p(results, st["drawdown_limit"]) for st in osf.get("stages") or []]})
    if out["options"]:
        out["planned_what"] = _completion_text(results, {
            "completion": results.get("completion"),
            "shot_angles": [sh.get("angle") for sh in _first_shots(results)],
            "tunnel_diameter": None, "hole_diameter": None})
        out["option_stages"] = [r["p_r"] for r in out["rows"]]
        out["planned_limits"] = [r["limit"] for r in out["rows"]]
    out["sentences"] = [_rich(t) for t in out["sentences"]]
    if out["screening"]:
        out["screening"] = _rich(out["screening"])
    return out


def _summary(results: Mapping[str, Any]) -> dict[str, Any]:
    mechs = _drawdown_mechanisms(results)
    risk = results.get("accepted_risk")
    n = max((len(m["stages"]) for _, m in mechs), default=0)
    rows = []
    notes: list[str] = []
    unresolved = "– (deterministic)" if results.get("deterministic") else "not resolved"
    governing: list[tuple[str, tuple[str, ...], str]] = []  # (p_r text, keys, limit text)
    for k in range(n):
        cells: list[dict[str, Any] | None] = []
        best: tuple[float, list[str]] = (math.inf, [])
        p_r = None
        for key, mech in mechs:
            if k >= len(mech["stages"]):
                cells.append(None)
                continue
            st = mech["stages"][k]
            p_r = st.get("reservoir_pressure")
            lim, low = st.get("drawdown_limit"), st.get("drawdown_limit_lower")
            mark = ""
            if st.get("drawdown_limit_note"):
                notes.append(f"{mech.get('name', key)}, p_r = {_p(results, p_r)}: "
                             f"{st['drawdown_limit_note']}.")
                mark = f"[{len(notes)}]"
            cells.append({
                "key": key, "stage": k, "limit": _p(results, lim), "limit_raw": _raw(lim),
                "lower": _p(results, low, none=unresolved), "lower_raw": _raw(low),
                "mark": mark, "warn": bool(st.get("convergence_warning")),
            })
            if lim is not None:
                if float(lim) < best[0]:
                    best = (float(lim), [key])
                elif float(lim) == best[0]:
                    best[1].append(key)
        names = {k_: str(m.get("name", k_)) for k_, m in mechs}
        if len(best[1]) > 1 and len(best[1]) == len(mechs):
            gov = "every mechanism"
        else:
            gov = " and ".join(names[g] for g in best[1]) if best[1] else "–"
        rows.append({"p_r": _p(results, p_r), "p_r_raw": _raw(p_r), "cells": cells,
                     "governing": gov,
                     "governing_limit": _p(results, best[0]) if best[1] else "–"})
        if best[1]:
            governing.append((_p(results, p_r), tuple(best[1]), _p(results, best[0])))
    sentences = []
    if governing:
        names = {k_: str(m.get("name", k_)) for k_, m in mechs}
        zero = [(str(mech.get("name", key)), _p(results, st.get("reservoir_pressure")),
                 st.get("zero_drawdown_fraction"))
                for key, mech in mechs for st in mech["stages"]
                if risk is not None and st.get("zero_drawdown_fraction") is not None
                and float(st["zero_drawdown_fraction"]) >= float(risk)]
        if zero:
            first = zero[0]
            sentences.append(
                f"The accepted risk is exceeded with no drawdown at all in {len(zero)} of the "
                f"stage results (for example {_lower(first[0])} at p_r = {first[1]}: "
                f"{_pct(first[2])} of the samples fail at zero drawdown), so the limit there "
                f"is 0 {_punit(results)}.")
        sand = results.get("sand_free") or {}
        top_key = ((sand.get("stages") or [{}])[0].get("governing") or governing[0][1][0])
        top = _top_sensitivity(results, top_key)
        if top is None:
            for key, _m in mechs:
                top = _top_sensitivity(results, key)
                if top is not None:
                    top_key = key
                    break
        if top is not None:
            sentences.append(
                f"For {_lower(names.get(top_key, top_key))}, the input whose uncertainty "
                f"matters most is {input_label(str(top['input']))} (largest "
                f"{_rank_basis(top)}, {_rank_value(top):.2f}, at the first stage).")
    pore = (results.get("mechanisms") or {}).get("pore_collapse")
    if pore and pore.get("stages"):
        last = pore["stages"][-1]
        crit = (pore.get("critical_reservoir_pressure") or {}).get("p50")
        wall = last.get("wall_probability")
        sentences.append(
            f"{pore.get('name', 'Pore collapse')}: probability "
            f"{_prob(last.get('probability'))} in the far field"
            + (f" and {_prob(wall)} at the wall" if wall is not None else "")
            + f" at the last stage (p_r = {_p(results, last.get('reservoir_pressure'))}); "
            f"median far-field critical reservoir pressure "
            f"{_p(results, crit, none='not reached')}.")
    if results.get("deterministic"):
        sentences.append("Deterministic run (every input fixed, one evaluation): each "
                         "probability is 0 or 1 and carries no sampling error, so no confidence "
                         "bound applies.")
    warnings = sum(1 for _, m in mechs for s in m["stages"] if s.get("convergence_warning"))
    return {
        "mechanisms": [{"key": k, "name": str(m.get("name", k))} for k, m in mechs],
        "rows": rows, "notes": [_rich(t) for t in notes],
        "sentences": [_rich(t) for t in sentences], "warnings": warnings,
        "accepted_risk": format_value(risk, "-"),
    }


def _scenario(results: Mapping[str, Any]) -> dict[str, Any]:
    settings = [
        ("title", str(results.get("title") or "–")),
        ("completion", str(results.get("completion") or "–")),
        ("failure criterion", str(results.get("criterion") or "–")),
    ]
    mechs = _drawdown_mechanisms(results)
    well = results.get("well")
    if isinstance(well, Mapping):
        for k, v in well.items():
            label, text = _setting(str(k), v)
            # the stages and shot angles get their own rows below (formatted per value)
            if mechs and label in ("reservoir pressure stages", "shot angles"):
                continue
            settings.append((label, text))
    if mechs:
        stages = [s.get("reservoir_pressure") for s in mechs[0][1]["stages"]]
        settings.append(("reservoir pressure stages",
                         ", ".join(_p(results, s) for s in stages)))
        shots = mechs[0][1]["stages"][0].get("shots")
        if shots:
            settings.append(("shot directions", ", ".join(
                format_value(s.get("angle"), "deg") for s in shots) + " "
                + _angle_reference(results)))
    settings += [
        ("largest drawdown considered", _p(results, results.get("max_drawdown"))),
        ("accepted risk", format_value(results.get("accepted_risk"), "-", none="–")),
    ]
    points = results.get("operating_points") or []
    if points:
        settings.append(("planned operating points", "; ".join(
            f"p_r {_p(results, p.get('reservoir_pressure'))}, p_wf "
            f"{_p(results, p.get('wall_pressure'))}" for p in points)))
    groups: list[dict[str, Any]] = []
    inputs = results.get("inputs")
    if inputs:
        order = list(_SECTION_TITLES)
        by_section: dict[str, list[dict[str, Any]]] = {}
        for item in inputs:
            unit = str(item.get("unit") or "-")
            by_section.setdefault(str(item.get("section") or "other"), []).append({
                "label": _unbroken(input_label(str(item["name"]))), "name": str(item["name"]),
                "description": str(item.get("description") or ""),
                "unit": unit, "distribution": _distribution(item.get("distribution")),
                "p10": format_value(item.get("p10"), unit, none="–"),
                "p50": format_value(item.get("p50"), unit, none="–"),
                "p90": format_value(item.get("p90"), unit, none="–"),
                "source": str(item.get("source") or "not stated"),
                "fixed": bool(item.get("fixed")),
            })
        for sec in sorted(by_section, key=lambda s: (order.index(s) if s in order else 99, s)):
            groups.append({"title": _SECTION_TITLES.get(sec, sec.capitalize()),
                           "rows": by_section[sec]})
    log_based = [f"{input_label(str(i['name']))} ({i['source']})" for i in inputs or []
                 if i.get("source") and _LOG_CORRELATION.search(str(i["source"]))]
    return {
        "settings": [(k, _rich(v)) for k, v in settings], "groups": groups,
        "uncertain": [input_label(str(n)) for n in results.get("uncertain_inputs") or []],
        "log_based": log_based,
    }


_KEY_UNIT: Final = re.compile(r"^(?P<label>.*?)\s*\[(?P<unit>[^\]]+)\]$")
_NUMBER: Final = re.compile(r"^-?\d+(\.\d+)?([eE][-+]?\d+)?$")


def _setting(key: str, value: Any) -> tuple[str, str]:
    """A ``well`` entry for the settings table: ``("true vertical depth [ft]", 7850.0)`` ->
    ``("true vertical depth", "7,850 ft")``; a list of numbers in text is formatted number by
    number; anything else is shown as it is."""
    key = key.replace("_", " ")
    m = _KEY_UNIT.match(key)
    if m is None:
        return key, str(value)
    label, unit = m.group("label"), m.group("unit")
    if isinstance(value, int | float) and not isinstance(value, bool):
        return label, format_value(float(value), unit)
    parts = [p.strip() for p in str(value).split(",")]
    if parts and all(_NUMBER.match(p) for p in parts):
        return label, ", ".join(format_value(float(p), unit) for p in parts)
    return key, str(value)


_BIG_INTEGER: Final = re.compile(r"(?<![\d.,])(\d{4,})(?![\d.,]?\d)")
_NUMBER_UNIT: Final = re.compile(r"(\d) (?=[A-Za-z%°][^\s,()]*)")


def _distribution(text: Any) -> str:
    """A distribution as written in results.json, for people: integers of four or more digits
    with thousands separators (``median 2600 psi`` -> ``median 2,600 psi``), and no line break
    inside a unit (``psi/ft``) or between a number and its unit (word joiner U+2060 after a
    slash, no-break space)."""
    return _unbroken(_BIG_INTEGER.sub(lambda m: f"{int(m.group(1)):,}", str(text or "")))


def _unbroken(text: str) -> str:
    """No line break between a number and its unit (no-break space) nor after the slash of a
    unit or ratio such as psi/ft or dSh/dPp (word joiner U+2060)."""
    return re.sub(r"(?<=\w)/(?=\w)", "/\u2060", _NUMBER_UNIT.sub("\\1\u00a0", text))


def _mechanism_sections(results: Mapping[str, Any]) -> list[dict[str, Any]]:
    out = []
    risk = format_value(results.get("accepted_risk"), "-")
    for key, mech in _drawdown_mechanisms(results):
        stages = mech["stages"]
        warnings = [{"p_r": _p(results, s.get("reservoir_pressure")),
                     "text": str(s["convergence_warning"])}
                    for s in stages if s.get("convergence_warning")]
        for prof in mech.get("profile") or []:
            share = prof.get("plane_strain_flag_fraction")
            if share:
                warnings.append({
                    "p_r": _p(results, prof.get("reservoir_pressure")),
                    "text": f"{_pct(share)} of the collapsing samples of the profile have an "
                            "axial effective stress above the hoop stress at the yielded wall: "
                            "the plane-strain solution is approximate for them."})
        dist_rows, limit_rows = [], []
        for s in stages:
            dc = s.get("critical_drawdown") or {}
            cw = s.get("critical_wall_pressure") or {}
            dist_rows.append({
                "p_r": _p(results, s.get("reservoir_pressure")),
                "p10": _p(results, dc.get("p10")), "p50": _p(results, dc.get("p50")),
                "p90": _p(results, dc.get("p90")),
                "mean": _p(results, dc.get("mean"), none="– (some never fail)"),
                "zero": _pct(s.get("zero_drawdown_fraction")),
                "never": _pct(s.get("never_fraction")),
            })
            angle = ("worst_shot_angle" if "worst_shot_angle" in s else "worst_wall_angle")
            limit_rows.append({
                "p_r": _p(results, s.get("reservoir_pressure")),
                "limit": _p(results, s.get("drawdown_limit")),
                "lower": _p(results, s.get("drawdown_limit_lower"), none="not resolved"),
                "cw10": _p(results, cw.get("p10"), none="below 0"),
                "cw50": _p(results, cw.get("p50"), none="below 0"),
                "cw90": _p(results, cw.get("p90"), none="below 0"),
                "worst": _tied(s, angle),
                "best": _tied(s, "best_shot_angle"),
            })
        shots = None
        if all(s.get("shots") for s in stages):
            angles = [sh.get("angle") for sh in stages[0]["shots"]]
            chunks = [stages[i:i + _SHOT_STAGES] for i in range(0, len(stages), _SHOT_STAGES)]
            shots = {
                "has_limit": any("drawdown_limit" in sh for s in stages for sh in s["shots"]),
                "chunks": [{
                    "stages": [_p(results, s.get("reservoir_pressure")) for s in chunk],
                    "rows": [{
                        "angle": format_value(a, "deg", none="–"),
                        "cells": [_shot_cell(results, s, j) for s in chunk],
                    } for j, a in enumerate(angles)],
                } for chunk in chunks],
            }
        small = []
        for s in stages:
            sr = s.get("small_risk")
            if not sr:
                continue
            imp = sorted(((k_, v) for k_, v in (sr.get("importance") or {}).items()
                          if v is not None), key=lambda kv: -kv[1])[:3]
            small.append({
                "p_r": _p(results, s.get("reservoir_pressure")),
                "d": _p(results, sr.get("drawdown")),
                "sampling": _sci(sr.get("sampling_p")), "beta": _num(sr.get("form_beta")),
                "form": _sci(sr.get("form_p")), "sorm": _sci(sr.get("sorm_p")),
                "is": _sci(sr.get("is_p")) + (f" (c.o.v. {_num(sr.get('is_cov'))})"
                                              if sr.get("is_cov") is not None else ""),
                "converged": "yes" if sr.get("form_converged") else "no",
                "importance": ", ".join(f"{input_label(k_)} {v:.2f}" for k_, v in imp) or "–",
                "diagnostic": str(sr.get("diagnostic") or ""),
            })
        out.append({
            "key": key, "name": str(mech.get("name", key)), "warnings": warnings,
            "small_risk": small,
            "dist_rows": dist_rows, "limit_rows": limit_rows, "shots": shots,
            "open_hole": "worst_wall_angle" in stages[0], "risk": risk,
        })
    return out


def _shot_cell(results: Mapping[str, Any], stage: Mapping[str, Any], j: int) -> dict[str, str]:
    shots = stage.get("shots") or []
    if j >= len(shots):
        return {"prob": "–", "p50": "–", "limit": ""}
    sh = shots[j]
    return {"prob": _prob(sh.get("probability_at_limit")),
            "p50": _p(results, sh.get("critical_drawdown_p50")),
            "limit": (_p(results, sh["drawdown_limit"]) if "drawdown_limit" in sh else "")}


def _pore_section(results: Mapping[str, Any]) -> dict[str, Any] | None:
    pc = (results.get("mechanisms") or {}).get("pore_collapse")
    if not pc:
        return None
    crit = []
    for label, field in (("far field", "critical_reservoir_pressure"),
                         ("at the wall", "wall_critical_reservoir_pressure")):
        q = pc.get(field)
        if q:
            crit.append({"where": label, **{k: _p(results, q.get(k), none="not reached")
                                            for k in ("p10", "p50", "p90")}})
    stages = [{"p_r": _p(results, s.get("reservoir_pressure")),
               "prob": _prob(s.get("probability")),
               "band": f"{_prob(s.get('low'))} – {_prob(s.get('high'))}",
               "wall": _prob(s.get("wall_probability"))}
              for s in pc.get("stages") or []]
    return {"name": str(pc.get("name", "Pore collapse")), "crit": crit, "stages": stages,
            "has_wall": any(s.get("wall_probability") is not None
                            for s in pc.get("stages") or []),
            "never": _pct(pc.get("never_fraction")) if "never_fraction" in pc else None,
            "initial": (_pct(pc["initially_compacted_fraction"])
                        if pc.get("initially_compacted_fraction") else None),
            "wall_initial": (_pct(pc["wall_initially_compacted_fraction"])
                             if pc.get("wall_initially_compacted_fraction") else None)}


def _operating_points(results: Mapping[str, Any]) -> list[dict[str, Any]]:
    mechs = _drawdown_mechanisms(results)
    out = []
    for pt in results.get("operating_points") or []:
        p_r, p_w = pt.get("reservoir_pressure"), pt.get("wall_pressure")
        if p_r is None or p_w is None:
            continue
        d = float(p_r) - float(p_w)
        probs = []
        for _key, mech in mechs:
            st = next((s for s in mech["stages"]
                       if s.get("reservoir_pressure") is not None
                       and math.isclose(float(s["reservoir_pressure"]), float(p_r),
                                        rel_tol=1e-9)), None)
            if st is None:
                probs.append("not a stage")
                continue
            p = _interp_probability(st, d)
            lim = st.get("drawdown_limit")
            flag = "" if lim is None or d <= float(lim) else " (beyond the limit)"
            probs.append((_prob(p) if p is not None else "outside the curve") + flag)
        out.append({"p_r": _p(results, p_r), "p_w": _p(results, p_w), "d": _p(results, d),
                    "probs": probs})
    return out


def _sensitivity(results: Mapping[str, Any]) -> dict[str, Any]:
    sens = {k: v for k, v in (results.get("sensitivity") or {}).items() if v}
    names = {k: str(m.get("name", k)) for k, m in (results.get("mechanisms") or {}).items()}
    tables = []
    for key, rows in sens.items():
        ranked = sorted(rows, key=lambda r: -(_rank_value(r) or 0.0))
        tables.append({"name": names.get(key, key), "output": output_name(key), "rows": [{
            "rank": i + 1, "input": input_label(str(r["input"])),
            "first": _idx(r.get("first"), r.get("first_low"), r.get("first_high")),
            "total": _idx(r.get("total"), r.get("total_low"), r.get("total_high")),
            "shapley": "–" if r.get("shapley") is None else f"{float(r['shapley']):.3f}",
        } for i, r in enumerate(ranked)]})
    recs = []
    for key in sens:
        top = _top_sensitivity(results, key)
        if top is not None:
            recs.append(
                f"For {_lower(names.get(key, key))}, measure "
                f"{input_label(str(top['input']))} next: it has the largest {_rank_basis(top)} "
                f"({_rank_value(top):.2f}), so narrowing its range narrows the spread of the "
                f"{output_name(key)} the most.")
    by_stage = []
    for key, entries in (results.get("sensitivity_by_stage") or {}).items():
        for e in entries or []:
            idx = [r for r in e.get("indices") or [] if _rank_value(r) is not None]
            top = max(idx, key=lambda r: float(_rank_value(r) or 0.0)) if idx else None
            loo = e.get("loo_error")
            by_stage.append({
                "name": names.get(key, key),
                "p_r": (_p(results, e.get("reservoir_pressure"))
                        if e.get("reservoir_pressure") is not None else "over depletion"),
                "method": str(e.get("method") or "–"),
                "loo": "–" if loo is None else f"{float(loo):.3f}",
                "runs": f"{int(e['model_runs']):,}" if e.get("model_runs") is not None else "–",
                "top": (f"{input_label(str(top['input']))} ({_rank_value(top):.2f}, "
                        f"{_rank_basis(top)})" if top else "–"),
            })
    tornado = []
    units = {str(i["name"]): str(i.get("unit") or "") for i in results.get("inputs") or []}
    for key, t in (results.get("tornado") or {}).items():
        if not t or not t.get("rows"):
            continue
        rows = sorted(t["rows"], key=lambda r: -abs((r.get("output_high") or 0.0)
                                                    - (r.get("output_low") or 0.0)))
        tornado.append({"name": names.get(key, key), "output": output_name(key),
                        "base": _p(results, t.get("base")),
                        "rows": [{
                            "input": input_label(str(r["input"])),
                            "low": format_value(r.get("low_value"), _unit_of(r, units), none="–"),
                            "high": format_value(r.get("high_value"), _unit_of(r, units),
                                                 none="–"),
                            "out_low": _p(results, r.get("output_low")),
                            "out_high": _p(results, r.get("output_high")),
                        } for r in rows]})
    return {"tables": tables, "recommendations": recs, "tornado": tornado,
            "by_stage": by_stage, "output_note": str(results.get("sensitivity_output") or "")}


def _unit_of(row: Mapping[str, Any], units: Mapping[str, str]) -> str:
    return str(row.get("unit") or units.get(str(row["input"]), ""))


def _idx(v: Any, lo: Any, hi: Any) -> str:
    if v is None:
        return "–"
    text = f"{float(v):.3f}"
    if lo is not None and hi is not None:
        text += f" [{float(lo):.3f}, {float(hi):.3f}]"
    return text


def _reproducibility(results: Mapping[str, Any]) -> list[tuple[str, str]]:
    rows = [
        ("tool", f"{results.get('tool', 'risk')} {results.get('version', '')}".strip()),
        ("results schema", str(results.get("schema", "–"))),
        ("scenario file", str(results.get("scenario_file") or "–")),
        ("scenario SHA-256", str(results.get("scenario_sha256") or "–")),
        ("seed", str(results.get("seed", "–"))),
        ("samples", f"{int(results['samples']):,}" if results.get("samples") is not None
         else "–"),
        ("sampling rule", str(results.get("sampling", "–"))
         + (" (deterministic: every input fixed)" if results.get("deterministic") else "")),
        ("failure criterion", str(results.get("criterion", "–"))),
        ("units", f"{results.get('unit_system', '')} ("
                  + ", ".join(f"{k}: {v}" for k, v in (results.get("units") or {}).items())
                  + ")"),
    ]
    if results.get("run_date"):
        rows.append(("date of the run", str(results["run_date"])))
    prov = results.get("provenance") or {}
    if prov:
        rows.append(("provenance", ", ".join(f"{k} {v}" for k, v in prov.items())))
    if results.get("scenario_file"):
        rows.append(("to reproduce", f"risk run {results['scenario_file']} --samples "
                                     f"{results.get('samples')} --seed {results.get('seed')}"))
    return rows


def memo_context(results: Mapping[str, Any], figures: Mapping[str, bytes]) -> dict[str, Any]:
    """The template's view of the results: every number formatted with its unit."""
    numbered: dict[str, dict[str, Any]] = {}
    for name in [*_FIGURE_ORDER, *(n for n in figures if n not in _FIGURE_ORDER)]:
        if name in figures:
            caption = CAPTIONS.get(name, name.replace("_", " ")).replace(
                "{angles}", _angle_reference(results))
            if name == "envelope" and results.get("operating_points"):
                caption += " Crosses are the planned operating points."
            numbered[name] = {"number": len(numbered) + 1, "uri": _data_uri(figures[name]),
                              "caption": caption,
                              "name": name, "width": _png_width_in(figures[name])}
    scenario = _scenario(results)
    assumptions = list(ASSUMPTIONS)
    if scenario["log_based"]:
        assumptions.append("In this scenario these inputs rest at least partly on log "
                           "correlations, with the scatter stated above: "
                           + "; ".join(scenario["log_based"]) + ".")
    return {
        "angle_reference": _angle_reference(results),
        "title": str(results.get("title") or "Untitled scenario"),
        "unit": _punit(results),
        "sections": SECTIONS,
        "summary": _summary(results),
        "answer": _answer(results),
        "scenario": scenario,
        "mechanisms": _mechanism_sections(results),
        "pore": _pore_section(results),
        "operating_points": _operating_points(results),
        "has_profile": bool(((results.get("mechanisms") or {}).get("tunnel_collapse") or {})
                            .get("profile")),
        "sensitivity": _sensitivity(results),
        "assumptions": assumptions,
        "input_warnings": [str(w) for w in results.get("warnings") or ()],
        "cautions": CAUTIONS,
        "reproducibility": _reproducibility(results),
        "figures": numbered,
        "run_date": str(results["run_date"]) if results.get("run_date") else None,
        "samples": (f"{int(results['samples']):,}" if results.get("samples") is not None
                    else "–"),
        "deterministic": bool(results.get("deterministic")),
    }


def _shown(value: Any) -> Any:
    """Every expression a template prints: texts with their control characters made visible
    (markup built here keeps its type; the replacement holds no HTML special character)."""
    if isinstance(value, str):
        text = visible(value, keep="\t\n\r")
        return Markup(text) if isinstance(value, Markup) else text
    return value


def _environment() -> Environment:
    return Environment(loader=FileSystemLoader(str(TEMPLATES)), autoescape=True,
                       undefined=StrictUndefined, trim_blocks=True, lstrip_blocks=True,
                       finalize=_shown)


def render_html(results: Mapping[str, Any], figures: Mapping[str, bytes]) -> str:
    """The memo as one self-contained HTML page (figures as data URIs, CSS inline).

    Parameters
    ----------
    results : mapping
        The parsed ``results.json`` of a run.
    figures : mapping of str to bytes
        PNG bytes by figure name (:func:`risk.report.figures.render_all`); figures missing
        here are left out of the memo.
    """
    return _environment().get_template("memo.html.j2").render(memo_context(results, figures))


def render_pdf(html: str) -> bytes:
    """The PDF of a memo page (WeasyPrint; A4, page numbers in the footer)."""
    from weasyprint import HTML

    fetcher: Any
    try:  # WeasyPrint >= 66: a fetcher object that can refuse protocols
        from weasyprint import URLFetcher

        fetcher = URLFetcher(allowed_protocols=("data",))
    except ImportError:  # pragma: no cover - older WeasyPrint: a fetcher function
        from weasyprint import default_url_fetcher

        def fetcher(url: str, *args: Any, **kwargs: Any) -> Any:
            if not url.startswith("data:"):
                raise ValueError(f"the memo loads no external resource ({url[:60]!r})")
            return default_url_fetcher(url, *args, **kwargs)

    # the memo is self-contained: anything but an embedded data URI is refused
    pdf = HTML(string=html, url_fetcher=fetcher).write_pdf()
    return bytes(pdf) if pdf is not None else b""


def build_memo(results: Mapping[str, Any]) -> Memo:
    """Figures, HTML and PDF of a run's memo, from its results dict alone."""
    figures = render_all(results)
    html = render_html(results, figures)
    return Memo(html=html, pdf=render_pdf(html), figures=dict(figures))
