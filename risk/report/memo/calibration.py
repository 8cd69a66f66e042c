"""The memo's calibration section (observations, prior and posterior, predictive check) and
its value-of-information table: the template's view of the results' ``calibration`` and
``value_of_information`` blocks, every number with its unit."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from risk.report.formatting import input_label

__all__ = ["calibration_context", "CALIBRATION_ASSUMPTION"]

CALIBRATION_ASSUMPTION = (
    "Calibration to field history: the observed onset is taken to be the model's sand drawdown "
    "for that well's conditions times a lognormal model error of the stated standard "
    "deviation; the calibrated inputs are shared by the field and every other uncertain input "
    "varies from well to well. Offset wells enter through their stated overrides only; "
    "anything else that differs between them and this well is not represented.")

_OUTCOME = {"onset": "sand onset at", "no_sand": "no sand up to",
            "onset_between": "onset between"}


def _num(v: Any, unit: str = "", digits: int = 4) -> str:
    """``v`` to ``digits`` significant digits (at least the whole number: 1,266 psi, not
    1.27e+03 psi), thousands separated, without trailing zeros."""
    if v is None:
        return "–"
    x = float(v)
    if not math.isfinite(x):
        return "–"
    decimals = 0 if x == 0 else max(digits - 1 - math.floor(math.log10(abs(x))), 0)
    text = f"{round(x, decimals):,.{decimals}f}"
    if "." in text:  # trailing zeros carry no information here
        text = text.rstrip("0").rstrip(".")
    return f"{text} {unit}".strip()


def calibration_context(results: Mapping[str, Any]) -> dict[str, Any] | None:
    """Template context of the calibration and value-of-information section (None: absent)."""
    cal = results.get("calibration")
    voi = results.get("value_of_information")
    if not cal and not voi:
        return None
    unit = str((results.get("units") or {}).get("pressure", ""))
    out: dict[str, Any] = {"unit": unit}
    if cal:
        obs = []
        for o in cal["observations"]:
            if o["outcome"] == "onset_between":
                what = (f"{_OUTCOME[o['outcome']]} {_num(o['drawdown_low'])} and "
                        f"{_num(o['drawdown_high'], unit)}")
            else:
                what = f"{_OUTCOME[o['outcome']]} {_num(o['drawdown'], unit)}"
            obs.append({"name": o["name"], "p_r": _num(o["reservoir_pressure"], unit),
                        "what": what, "weight": _num(o["weight"], "", 2),
                        "overrides": ", ".join(o["overridden"]) or "–",
                        "prior": _num(o["prior_predictive"], "", 2),
                        "posterior": _num(o["posterior_predictive"], "", 2),
                        "verdict": ("conflict" if o["conflict"] else
                                    "reproduced" if o["reproduced"] else "not reproduced"),
                        "source": o["source"] or "–"})
        inputs = [{"name": input_label(i["name"]), "unit": i["unit"],
                   "prior": f"{_num(i['prior']['p50'])} ({_num(i['prior']['p10'])}–"
                            f"{_num(i['prior']['p90'])})",
                   "posterior": f"{_num(i['posterior']['p50'])} ({_num(i['posterior']['p10'])}–"
                                f"{_num(i['posterior']['p90'])})"} for i in cal["inputs"]]
        prior_sf = cal["prior"].get("sand_free") or []
        post_sf = cal["posterior"].get("sand_free") or []
        limits = [{"p_r": _num(a["reservoir_pressure"], unit),
                   "prior": _num(a["drawdown_limit"], unit),
                   "posterior": _num(b["drawdown_limit"], unit)}
                  for a, b in zip(prior_sf, post_sf, strict=True)]
        points = [{"p_r": _num(a["reservoir_pressure"], unit),
                   "p_w": _num(a["wall_pressure"], unit),
                   "prior": _num(a["probability"], "", 2),
                   "posterior": _num(b["probability"], "", 2)}
                  for a, b in zip(cal["prior"].get("operating_points") or [],
                                  cal["posterior"].get("operating_points") or [], strict=True)]
        if cal["method"] == "mcmc" and cal.get("mcmc"):
            m = cal["mcmc"]
            how = (f"MCMC (ensemble sampler, {m['walkers']} walkers x {m['steps']} steps, "
                   f"burn-in {m['burn_in']}, acceptance {_num(m['acceptance'], '', 2)}, split "
                   "R-hat " + ", ".join(f"{k} {_num(v, '', 3)}" for k, v in m["rhat"].items())
                   + f"; {m['model_runs']:,} model runs), because the reweighting's effective "
                   f"sample size was {_num(cal['effective_sample_size'], '', 3)}")
        else:
            how = ("importance reweighting of the run's own samples (effective sample size "
                   f"{_num(cal['effective_sample_size'], '', 3)} of {cal['posterior_rows']:,})")
        out.update(observations=obs, inputs=inputs, limits=limits, points=points, how=how,
                   coverage=_coverage(cal["prior"], cal["posterior"], unit),
                   model_error=_num(cal["model_error_log_sd"], "", 3),
                   warnings=list(cal["warnings"]), note=cal["note"])
    if voi:
        stages = [_num(s["reservoir_pressure"], unit) for s in voi["rows"][0]["stages"]]
        rows = []
        for r in voi["rows"]:
            if r["perfect"]:
                err = "perfect"
            elif r.get("relative_error"):
                err = f"{100 * float(r['relative_error']):.3g}%"
            else:
                err = _num(r["error"], str(r.get("error_unit") or ""))
            rows.append({"name": _voi_name(r), "error": err,
                         "gains": [f"{_num(s['gain'], '', 3)} ± {_num(s['mc_error'], '', 2)}"
                                   for s in r["stages"]]})
        out["voi"] = {"stages": stages, "rows": rows, "under": voi["under"],
                      "recommendation": _voi_recommendation(voi["rows"], stages, unit)}
    return out


#: A gain counts as one when it exceeds this many Monte-Carlo standard errors (a one-sided
#: test at about 2.3%: common practice for a Monte-Carlo estimate).
_SIGNIFICANT: float = 2.0


def _shot_set(ph: Mapping[str, Any]) -> str:
    angles = ", ".join(f"{float(a):g}°" for a in ph.get("shot_angles") or [])
    if ph.get("phasing") is None:
        return f"the shots as given ({angles})"
    return f"{float(ph['phasing']):g}° phasing ({angles})"


def _coverage(prior: Mapping[str, Any], post: Mapping[str, Any], unit: str
              ) -> list[dict[str, str]]:
    """Rows (what, prior, posterior) for what else the history moves: the limit per shot
    direction at the first stage, the life-of-well shot set, the completion options and pore
    collapse."""
    from risk.limit_states import MECHANISMS

    rows: list[dict[str, str]] = []
    from risk.decision import SAND_PRODUCTION

    for key, dirs in (post.get("per_direction") or {}).items():
        before = (prior.get("per_direction") or {}).get(key) or []
        if len(dirs) < 2 or key not in SAND_PRODUCTION:
            continue
        for a, b in zip(before, dirs, strict=True):
            rows.append({"what": f"{MECHANISMS.get(key, key)}, shot at "
                                 f"{float(b['shot_angle']):g}°, limit at "
                                 f"{_num(b['limits'][0]['reservoir_pressure'], unit)}",
                         "prior": _num(a["limits"][0]["drawdown_limit"], unit),
                         "posterior": _num(b["limits"][0]["drawdown_limit"], unit)})
    if post.get("phasing") and prior.get("phasing"):
        a, b = prior["phasing"], post["phasing"]
        rows.append({"what": "life-of-well shot set", "prior": _shot_set(a),
                     "posterior": _shot_set(b)})
        for x, y in zip(a["sand_free"], b["sand_free"], strict=True):
            rows.append({"what": "its sand-free limit at "
                                 f"{_num(y['reservoir_pressure'], unit)}",
                         "prior": _num(x["drawdown_limit"], unit),
                         "posterior": _num(y["drawdown_limit"], unit)})
    for a, b in zip(prior.get("options") or [], post.get("options") or [], strict=True):
        for x, y in zip(a["sand_free"], b["sand_free"], strict=True):
            rows.append({"what": f"option {b['name']}: sand-free limit at "
                                 f"{_num(y['reservoir_pressure'], unit)}",
                         "prior": _num(x["drawdown_limit"], unit),
                         "posterior": _num(y["drawdown_limit"], unit)})
    if post.get("pore_collapse") and prior.get("pore_collapse"):
        a, b = prior["pore_collapse"], post["pore_collapse"]
        rows.append({"what": "pore collapse: reservoir pressure at which 10% have collapsed "
                             "(P10)",
                     "prior": _num(a["critical_reservoir_pressure"]["p10"], unit),
                     "posterior": _num(b["critical_reservoir_pressure"]["p10"], unit)})
        for x, y in zip(a["stages"], b["stages"], strict=True):
            rows.append({"what": "pore collapse: probability at "
                                 f"{_num(y['reservoir_pressure'], unit)}",
                         "prior": _num(x["probability"], "", 2),
                         "posterior": _num(y["probability"], "", 2)})
    return rows


def _voi_name(row: Mapping[str, Any]) -> str:
    """A measurement's name for people: a named measurement as given, an input measured
    perfectly by its label (``twc_ratio (perfect)`` -> ``TWC/UCS, measured perfectly``)."""
    if row.get("perfect") and row.get("input"):
        return f"{input_label(str(row['input']))}, measured perfectly"
    return str(row["name"])


def _voi_recommendation(rows: list[Mapping[str, Any]], stages: list[str], unit: str) -> str:
    """What to measure next, from the value of information: the measurement with the largest
    gain at the first stage that its Monte-Carlo error distinguishes from zero."""
    def first(r: Mapping[str, Any]) -> tuple[float, float]:
        s = r["stages"][0]
        return float(s.get("gain") or 0.0), float(s.get("mc_error") or 0.0)

    clear = [r for r in rows if first(r)[0] > _SIGNIFICANT * first(r)[1] and first(r)[0] > 0]
    if not clear:
        return ("No measurement is expected to raise the sand-free limit at the first stage "
                f"({stages[0]}) by more than {_SIGNIFICANT:g} Monte-Carlo errors: on what the "
                "run knows today, measuring any one input would not move the decision; the "
                "variance-based ranking below still says which inputs drive the spread.")
    best = max(clear, key=lambda r: first(r)[0])
    gain, err = first(best)
    return (f"Measure next: {_voi_name(best)}. It is expected to raise the sand-free drawdown "
            f"limit at the first stage ({stages[0]}) by {_num(gain, unit, 3)} "
            f"(± {_num(err, unit, 2)}, Monte-Carlo standard error), the largest expected gain "
            "of the measurements valued here. The variance-based ranking below says which "
            "inputs drive the spread of the critical drawdown; the value of information says "
            "what measuring one would change in the limit, and decides.")
