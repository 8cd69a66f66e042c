"""A depth result as plain data: per-depth table columns, interval answers, the plan (display
units; JSON-safe: ``None`` stands for "never" / not defined)."""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any, Final

import numpy as np
from numpy.typing import NDArray

from risk import __version__, decision, probability
from risk.limit_states import MECHANISMS
from risk.logs.depth import DepthResult
from risk.logs.interval import (
    failing,
    independent_probability,
    interval_probability,
    plan_for,
    plan_limit,
    zones_by_breaks,
    zones_of,
)

__all__ = ["summarize_depth", "depth_percentiles", "QUANTILES"]

QUANTILES: Final = (0.1, 0.5, 0.9)
_LOG_DISPLAY: Final = {  # role -> (field unit, factor from internal, si unit, factor)
    "dt": ("us/ft", 0.3048, "us/m", 1.0), "dts": ("us/ft", 0.3048, "us/m", 1.0),
    "rhob": ("g/cm3", 1e-3, "kg/m3", 1.0), "phi": ("v/v", 1.0, "v/v", 1.0),
    "vsh": ("v/v", 1.0, "v/v", 1.0), "gr": ("gAPI", 1.0, "gAPI", 1.0),
    "cali": ("in", 1 / 0.0254, "mm", 1000.0)}


def depth_percentiles(values: NDArray[np.floating], qs: Sequence[float]) -> NDArray[np.float64]:
    """Per-row quantiles (rows x len(qs)) with the definition of
    :func:`risk.probability.percentiles` (inverted empirical CDF; +inf kept)."""
    a = np.sort(np.asarray(values, dtype=float), axis=1)
    n = a.shape[1]
    idx = probability.percentiles(np.arange(n, dtype=float), np.asarray(qs)).astype(np.intp)
    return np.asarray(a[:, idx])


def _num(v: float, scale: float = 1.0, nd: int = 6) -> float | None:
    return None if not math.isfinite(v) else round(v / scale, nd)


def _col(a: Any, scale: float = 1.0, nd: int = 6) -> list[float | None]:
    return [_num(float(v), scale, nd) for v in np.asarray(a, dtype=float)]


def summarize_depth(res: DepthResult) -> dict[str, Any]:
    """Everything the outputs of a log run show (see the module docstring)."""
    ls = res.ls
    sc = ls.scenario
    units = sc.units
    p_unit, p_scale = sc.display_unit("pressure"), sc.to_display(1.0, "pressure")
    l_unit, l_scale = sc.display_unit("length"), sc.to_display(1.0, "length")
    risk_ = sc.accepted_risk
    dd = ls.planned_drawdown
    table: dict[str, list[Any]] = {f"depth [{l_unit}]": _col(res.depth * l_scale, nd=4)}
    if ls.depth_reference == "md" and res.tvd is not None:
        table[f"tvd [{l_unit}]"] = _col(res.tvd * l_scale, nd=4)
    for role, values in ls.logs.curves.items():
        fu, ff, su, sf = _LOG_DISPLAY[role]
        unit, f = (fu, ff) if units == "field" else (su, sf)
        table[f"{role} [{unit}]"] = _col(np.asarray(values) * f, nd=5)
    for key in ("sv", "shmin", "shmax", "pp"):
        table[f"{key} P50 [{p_unit}]"] = _col(res.profile[key] * p_scale, nd=2)
    table[f"ucs transform [{p_unit}]"] = _col(res.ucs_transform * p_scale, nd=2)
    q_ucs = depth_percentiles(res.ucs, QUANTILES)
    for j, qv in enumerate(QUANTILES):
        table[f"ucs P{round(100 * qv)} [{p_unit}]"] = _col(q_ucs[:, j] * p_scale, nd=2)
    if res.ucs_calibration is not None:
        table["core calibration factor [-]"] = _col(res.ucs_calibration, nd=5)
    stages_disp = [round(s * p_scale, 3) for s in res.stages]
    collapse = _collapse_columns(res, table, p_unit, p_scale)
    for key, dc in res.dc.items():
        for k in range(len(res.stages)):
            qk = depth_percentiles(dc[:, :, k], QUANTILES)
            for j, qq in enumerate(QUANTILES):
                table[f"{key} stage {k + 1} dc P{round(100 * qq)} [{p_unit}]"] = _col(
                    qk[:, j] * p_scale, nd=2)
    out: dict[str, Any] = {
        "tool": "risk", "kind": "logs", "version": __version__, "title": sc.title,
        "scenario_sha256": sc.sha256, "seed": res.seed, "samples": res.samples,
        "sampling": sc.sampling, "criterion": sc.criterion,
        "units": {"pressure": p_unit, "length": l_unit},
        "las": {"file": ls.logs.source, "well": ls.logs.well, "curves": dict(ls.logs.mnemonics),
                "units_in_file": dict(ls.logs.units), "depths": int(res.depth.size),
                "top": _num(float(res.depth[0]), 1 / l_scale, 3),
                "base": _num(float(res.depth[-1]), 1 / l_scale, 3), "notes": list(ls.logs.notes)},
        "transform": {"ucs": ls.ucs_transform.name, "source": ls.ucs_transform.source,
                      "lithology": ls.ucs_transform.lithology, "cov": ls.ucs_cov,
                      "correlation_length": (None if math.isinf(ls.correlation_length)
                                             else _num(ls.correlation_length, 1 / l_scale, 3)),
                      "friction": (ls.friction_transform.name if ls.friction_transform
                                   else None),
                      "core": _core_text(res)},
        "depth_reference": ls.depth_reference,
        "stress_model": {"overburden": ls.overburden, "horizontal": ls.horizontal,
                         "strain_min": ls.strain_min, "strain_max": ls.strain_max,
                         "elastic": ls.elastic},
        "stages": stages_disp, "accepted_risk": risk_,
        "planned_drawdown": _num(dd, 1 / p_scale, 3),
        "max_drawdown": _num(sc.max_drawdown, 1 / p_scale, 3),
        "mechanisms": {k: MECHANISMS.get(k, k) for k in res.dc},
        "sand_mechanisms": [k for k in decision.SAND_PRODUCTION if k in res.dc],
        "warnings": list(res.warnings),
    }
    if collapse is not None:
        out["pore_collapse"] = collapse
    if res.sand is None:
        out["table"] = table
        out["plan"] = None
        return out
    probs, whole, indep = [], [], []
    for k in range(len(res.stages)):
        qs = depth_percentiles(res.sand[:, :, k], QUANTILES)
        for j, qq in enumerate(QUANTILES):
            table[f"sand stage {k + 1} dc P{round(100 * qq)} [{p_unit}]"] = _col(
                qs[:, j] * p_scale, nd=2)
    for k in range(len(res.stages)):
        fk = failing(res.sand[:, :, k], dd)
        pk = fk.mean(axis=1)
        table[f"P(sanding) stage {k + 1} [-]"] = _col(pk, nd=5)
        probs.append(pk)
        whole.append(interval_probability(fk))
        indep.append(independent_probability(fk))
    zone = (zones_by_breaks(res.ucs_transform, res.depth, threshold=ls.zone_break,
                            thickness=ls.zone_thickness) if ls.zoning == "breaks"
            else zones_of(res.depth, ls.zone_thickness))
    plan = plan_for(depth=res.depth, sand=res.sand, drawdown=dd, accepted_risk=risk_,
                    zone_thickness=ls.zone_thickness, min_interval=ls.min_interval,
                    standoff=ls.standoff, zone=zone)
    mask = plan.perforated[zone]
    table["perforated [-]"] = [bool(v) for v in mask]
    table["weak zone [-]"] = [bool(v) for v in plan.weak[zone]]
    limits = plan_limit(res.sand, mask, risk_)
    whole_limits = plan_limit(res.sand, np.ones(res.depth.size, dtype=bool), risk_)
    runs = _runs(plan.perforated, plan.zone_top, plan.zone_base)
    out["interval"] = {
        "probability_whole": [round(v, 6) for v in whole],
        "probability_if_independent": [round(v, 6) for v in indep],
        "worst_depth_probability": [round(float(np.max(p)), 6) for p in probs],
        "worst_depth": [_num(float(res.depth[int(np.argmax(p))]), 1 / l_scale, 3)
                        for p in probs],
        "sand_free_limit_whole": [_num(v, 1 / p_scale, 1) for v in whole_limits],
    }
    out["plan"] = {
        "rule": ("longest perforated length with P(interval sands at the planned drawdown at "
                 "any stage) <= accepted risk; weak zones (own P > accepted risk) and zones "
                 "within the stand-off excluded; every perforated run >= the minimum interval"),
        "zoning": (ls.zoning if ls.zoning == "fixed" else
                   f"breaks where the transform's UCS changes by more than "
                   f"{100 * ls.zone_break:.0f}%, at most the zone thickness"),
        "zone_thickness": _num(ls.zone_thickness, 1 / l_scale, 3),
        "min_interval": _num(ls.min_interval, 1 / l_scale, 3),
        "standoff": _num(ls.standoff, 1 / l_scale, 3),
        "runs": [[_num(a, 1 / l_scale, 2), _num(b, 1 / l_scale, 2)] for a, b in runs],
        "length": _num(plan.length, 1 / l_scale, 2),
        "probability": round(plan.probability, 6),
        "sand_free_limit": [_num(v, 1 / p_scale, 1) for v in limits],
        "weak_zones": int(plan.weak.sum()), "excluded_zones": int(plan.excluded.sum()),
        "zones": int(plan.perforated.size), "optimal": plan.optimal, "search_nodes": plan.nodes,
    }
    if collapse is not None and res.collapse_far is not None:
        collapse["probability_plan"] = [
            round(interval_probability(res.collapse_far >= p_k, mask), 6) for p_k in res.stages]
    out["table"] = table
    return out


def _core_text(res: DepthResult) -> str | None:
    """The core calibration rule and its range, in words (None without core tests)."""
    ls = res.ls
    if not ls.core or res.ucs_calibration is None:
        return None
    sc = ls.scenario
    lu = sc.display_unit("length")
    pts = ", ".join(f"{sc.to_display(z, 'length'):,.1f} {lu}" for z, _ in ls.core)
    c = res.ucs_calibration
    if math.isinf(ls.core_influence):
        return (f"one factor {float(c[0]):.3f} over the interval (geometric mean of the "
                f"core/transform ratios at {pts})")
    return (f"local factors {float(c.min()):.3f} to {float(c.max()):.3f} from cores at {pts}, "
            f"influence distance {sc.to_display(ls.core_influence, 'length'):g} {lu}")


def _collapse_columns(res: DepthResult, table: dict[str, list[Any]], p_unit: str,
                      p_scale: float) -> dict[str, Any] | None:
    """Pore collapse per depth (the datum stage pressure at or below which a depth collapses,
    P10 > P50 > P90 as in the single-interval summary; P per stage, far field and wall) and
    over the interval (any depth collapsed, from the joint samples)."""
    if res.collapse_far is None or res.collapse_wall is None:
        return None
    # the depth collapses at stage pressure p when its critical datum pressure >= p: the
    # quantiles of "deplete to it and a fraction q has collapsed" are the 1 - q quantiles
    neg = depth_percentiles(-res.collapse_far, QUANTILES)
    for j, qq in enumerate(QUANTILES):
        table[f"pore collapse pressure P{round(100 * qq)} [{p_unit}]"] = _col(
            -neg[:, j] * p_scale, nd=2)
    whole, wall = [], []
    for k, p_k in enumerate(res.stages):
        f = res.collapse_far >= p_k
        table[f"P(pore collapse) stage {k + 1} [-]"] = _col(f.mean(axis=1), nd=5)
        table[f"P(pore collapse at wall) stage {k + 1} [-]"] = _col(
            (res.collapse_wall >= p_k).mean(axis=1), nd=5)
        whole.append(interval_probability(f))
        wall.append(interval_probability(res.collapse_wall >= p_k))
    return {"probability_whole": [round(v, 6) for v in whole],
            "wall_probability_whole": [round(v, 6) for v in wall],
            "rule": "far-field mean effective stress reaches the pore-collapse pressure at some "
                    "depth of the interval (joint samples), at each stage's datum pressure"}


def _runs(chosen: NDArray[np.bool_], top: NDArray[np.float64], base: NDArray[np.float64]
          ) -> list[tuple[float, float]]:
    out: list[tuple[float, float]] = []
    start = None
    for j, c in enumerate(chosen):
        if c and start is None:
            start = j
        if start is not None and (not c or j == chosen.size - 1):
            end = j if c else j - 1
            out.append((float(top[start]), float(base[end])))
            start = None
    return out


def table_columns(summary: Mapping[str, Any]) -> list[str]:
    """The per-depth table's column names, in order."""
    return list(summary["table"])
