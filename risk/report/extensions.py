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


def extensions(a: Assessment) -> dict[str, Any]:
    """The issue-15 blocks present in this run (empty when none applies)."""
    out: dict[str, Any] = {}
    root = tunnel_root(a)
    if root is not None:
        out["tunnel_root"] = root
    return out
