"""results.json blocks of the mechanics added to the core in issue 15: the tunnel root in the
wellbore's stress field, the compaction cap, water weakening and the Hoek-Brown scale note.
Each block states its assumption; a run that uses none of them gets no block."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from risk import probability
from risk.assessment import Assessment

ROOT_ASSUMPTION = (
    "tunnel root: the stress a perforation tunnel sees at its root and along its first three "
    "wellbore radii is the generalized Kirsch field of the wellbore (Kirsch 1898; Hiramatsu & "
    "Oka 1962; Fairhurst 1968) with the flowing pressure on the rock (casing and cement "
    "carry no load, the wellbore's own inflow term left out), and the tunnel's own Kirsch "
    "concentration is superposed on it (two elastic solutions added). The effective-strength "
    "factor k was calibrated with far-field tunnel stresses (Willson et al. 2002), so the root "
    "result with the same k is a conservative check, not a recalibrated prediction.")


def _q(a: Assessment, x: np.ndarray) -> dict[str, float | None]:
    out: dict[str, float | None] = {}
    for name, q in (("p10", 0.1), ("p50", 0.5), ("p90", 0.9)):
        v = float(probability.percentiles(x, [q])[0])
        out[name] = (round(a.scenario.to_display(v, "pressure"), 6) if math.isfinite(v)
                     else None)
    return out


def tunnel_root(a: Assessment) -> dict[str, Any] | None:
    """Effective-strength onset of the perforation tunnels in the far field and at the root:
    well-level critical drawdown percentiles and the limit at the accepted risk per stage."""
    mech = a.mechanisms.get("effective_strength_onset")
    if mech is None or not mech.parts:
        return None
    sc = a.scenario
    unit = sc.display_unit("pressure")
    stages = []
    for k, p_r in enumerate(a.stages):
        row: dict[str, Any] = {"reservoir_pressure": round(sc.to_display(p_r, "pressure"), 6)}
        wells = {}
        for part in ("far_field", "root"):
            well = np.asarray(mech.parts[part][:, :, k].min(axis=1), dtype=float)
            wells[part] = well
            lim, _ = probability.drawdown_limit(well, sc.accepted_risk)
            row[part] = {"critical_drawdown": _q(a, well),
                         "drawdown_limit": (round(sc.to_display(min(lim, p_r), "pressure"), 6)
                                            if math.isfinite(lim) else None)}
        row["root_worse_fraction"] = round(float(np.mean(wells["root"] < wells["far_field"])),
                                           6)
        stages.append(row)
    return {"governing": sc.tunnel_stress, "unit": unit, "assumption": ROOT_ASSUMPTION,
            "stages": stages}


CAP_ASSUMPTION = (
    "pore collapse on a modified Cam clay cap through the pore-collapse pressure P* (Roscoe & "
    "Burland 1968): shear brings compaction on at a lower mean effective stress than P* "
    "(DiMaggio & Sandler 1971; Wong, David & Zhu 1997); the mean-stress criterion is its q = 0 "
    "case. The cap's slope M is {m}; the cap shape is an assumption unless triaxial "
    "compaction tests fix it. The wall is checked at zero drawdown and at the largest "
    "drawdown assessed (max_drawdown, or the reservoir pressure when lower).")
WATER_ASSUMPTION = (
    "water weakening: the strength of the near-well rock falls linearly with the rise in "
    "water saturation S from the as-tested value (S = 0) to the fully saturated one (S = 1, "
    "the wet_strength_ratio r): factor 1 - (1 - r) S on UCS, the effective strength k TWC and "
    "the critical plastic strain; friction angle, tensile strength, elastic constants, P* and "
    "the flow (one phase) are unchanged.")


def compaction_cap(a: Assessment) -> dict[str, Any] | None:
    """The pore-collapse surface and its shape parameter."""
    if a.compaction is None:
        return None
    sc = a.scenario
    if sc.compaction_cap == "mean-stress":
        return {"surface": "mean-stress", "assumption": "pore collapse when the mean effective "
                "stress reaches P* (no cap in the p'-q plane; shear-enhanced compaction "
                "ignored, which is not conservative)"}
    m = ("the scenario's rock.cap_m" if "cap_m" in sc.inputs else
         "6 sin(phi)/(3 - sin(phi)) from the friction angle (triaxial compression, Wood 1990)")
    return {"surface": "modified-cam-clay", "m": m, "assumption": CAP_ASSUMPTION.format(m=m)}


def water_weakening(a: Assessment) -> dict[str, Any] | None:
    """Water saturation and the strength factor per stage (percentiles over the samples)."""
    sc = a.scenario
    if not sc.water_saturation:
        return None
    ratio = np.asarray(a.inputs["wet_strength_ratio"], dtype=float)
    stages = []
    for p_r, s_w in zip(a.stages, sc.water_saturation, strict=True):
        f = 1.0 - (1.0 - ratio) * s_w
        stages.append({"reservoir_pressure": round(sc.to_display(p_r, "pressure"), 6),
                       "water_saturation": s_w,
                       "strength_factor": {k: round(float(np.quantile(f, q)), 6) for k, q in
                                           (("p10", 0.1), ("p50", 0.5), ("p90", 0.9))}})
    return {"assumption": WATER_ASSUMPTION, "stages": stages}


def extensions(a: Assessment) -> dict[str, Any]:
    """The issue-15 blocks present in this run (empty when none applies)."""
    out: dict[str, Any] = {}
    for key, block in (("tunnel_root", tunnel_root(a)), ("compaction_cap", compaction_cap(a)),
                       ("water_weakening", water_weakening(a))):
        if block is not None:
            out[key] = block
    return out
