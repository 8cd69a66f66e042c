"""The memo's body: the scenario (settings and inputs), results per mechanism, pore collapse,
operating points, sensitivity and what to measure next, and reproducibility."""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from typing import Any, Final

import numpy as np

from risk.report.formatting import format_value, input_label, output_name
from risk.report.memo.common import (
    _angle_reference,
    _lower,
    _num,
    _p,
    _pct,
    _prob,
    _rank_basis,
    _rich,
    _sci,
    _tied,
    _top_sensitivity,
)
from risk.report.memo.texts import _SECTION_TITLES
from risk.report.reading import drawdown_mechanisms as _drawdown_mechanisms
from risk.report.reading import rank_value as _rank_value

_SHOT_STAGES: Final = 3  # depletion stages per per-shot table (keeps it within the page)

#: A source that says the value comes from a log correlation (not merely "density log").
_LOG_CORRELATION: Final = re.compile(
    r"correlat|\bsonic\b|log[- ]derived|from (the )?(well )?logs?\b|\bmcnally\b", re.I)


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
                "method": str(sr.get("limit_method") or "sampling"),
                "runs": str(sr.get("model_runs", "–")),
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
                         ("far field, mean-stress criterion (q = 0)",
                          "mean_stress_critical_reservoir_pressure"),
                         ("at the wall, zero drawdown", "wall_critical_reservoir_pressure")):
        q = pc.get(field)
        if q:
            crit.append({"where": label, **{k: _p(results, q.get(k), none="not reached")
                                            for k in ("p10", "p50", "p90")}})
    stages = [{"p_r": _p(results, s.get("reservoir_pressure")),
               "prob": _prob(s.get("probability")),
               "band": f"{_prob(s.get('low'))} – {_prob(s.get('high'))}",
               "wall": _prob(s.get("wall_probability")),
               "wall_dd": (_prob(s["wall_probability_at_max_drawdown"])
                           if s.get("wall_probability_at_max_drawdown") is not None else None)}
              for s in pc.get("stages") or []]
    return {"name": str(pc.get("name", "Pore collapse")), "crit": crit, "stages": stages,
            "has_wall": any(s.get("wall_probability") is not None
                            for s in pc.get("stages") or []),
            "has_wall_dd": any(s.get("wall_probability_at_max_drawdown") is not None
                               for s in pc.get("stages") or []),
            "surface": str(pc.get("surface", "mean-stress")),
            "never": _pct(pc.get("never_fraction")) if "never_fraction" in pc else None,
            "initial": (_pct(pc["initially_compacted_fraction"])
                        if pc.get("initially_compacted_fraction") else None),
            "wall_initial": (_pct(pc["wall_initially_compacted_fraction"])
                             if pc.get("wall_initially_compacted_fraction") else None)}


def _interp_probability(stage: Mapping[str, Any], drawdown: float) -> float | None:
    fp = stage.get("failure_probability") or []
    d = np.array([r["drawdown"] for r in fp if r.get("p") is not None], dtype=float)
    p = np.array([r["p"] for r in fp if r.get("p") is not None], dtype=float)
    if d.size == 0 or not d[0] <= drawdown <= d[-1]:
        return None
    return float(np.interp(drawdown, d, p))


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
            held = e.get("validation_error")
            by_stage.append({
                "name": names.get(key, key),
                "p_r": (_p(results, e.get("reservoir_pressure"))
                        if e.get("reservoir_pressure") is not None else "over depletion"),
                "method": str(e.get("method") or "–"),
                "loo": "–" if loo is None else f"{float(loo):.3f}",
                "held_out": "–" if held is None else f"{float(held):.3f}",
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


def _root_section(results: Mapping[str, Any]) -> dict[str, Any] | None:
    """Perforation tunnels in the far field and at the root, per stage (sand-free-style limit
    of the effective-strength onset at the accepted risk)."""
    block = results.get("tunnel_root")
    if not isinstance(block, Mapping):
        return None
    rows = []
    for s in block.get("stages") or []:
        rows.append({"p_r": _p(results, s.get("reservoir_pressure")),
                     "far": _p(results, (s.get("far_field") or {}).get("drawdown_limit")),
                     "root": _p(results, (s.get("root") or {}).get("drawdown_limit")),
                     "worse": _pct(s.get("root_worse_fraction"))})
    return {"rows": rows, "governing": str(block.get("governing", "far-field"))}


def _water_section(results: Mapping[str, Any]) -> dict[str, Any] | None:
    """Water saturation and the strength factor per stage."""
    block = results.get("water_weakening")
    if not isinstance(block, Mapping):
        return None
    rows = []
    for s in block.get("stages") or []:
        f = s.get("strength_factor") or {}
        rows.append({"p_r": _p(results, s.get("reservoir_pressure")),
                     "sw": f"{float(s.get('water_saturation', 0.0)):.2f}",
                     "factor": " / ".join(f"{float(f[k]):.2f}" for k in ("p10", "p50", "p90")
                                          if k in f)})
    return {"rows": rows}
