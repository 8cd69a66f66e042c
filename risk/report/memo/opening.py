"""The memo's opening: the answer (sand-free limit now and over depletion, planned points, the
life-of-well gun and completion options) and the summary of every mechanism's limits."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from risk.report.formatting import format_value, input_label
from risk.report.memo.common import (
    _lower,
    _p,
    _pct,
    _prob,
    _punit,
    _rank_basis,
    _raw,
    _rich,
    _top_sensitivity,
)
from risk.report.reading import drawdown_mechanisms as _drawdown_mechanisms
from risk.report.reading import rank_value as _rank_value

# --------------------------------------------------------------------------- shot sets


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
    solved = [st for st in stages if st.get("drawdown_limit_method") not in (None, "sampling")]
    if solved:
        sents.append(
            "At this small accepted risk the run has too few samples beyond the quantile to "
            "resolve it at " + ", ".join(f"p_r = {_p(results, st['reservoir_pressure'])}"
                                        for st in solved)
            + "; there the limit is the drawdown at which the reliability estimate of "
            "P(sanding) equals the accepted risk (by " + ", ".join(sorted(
                {str(st["drawdown_limit_method"]) for st in solved}))
            + "; see the small-risk tables).")
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
