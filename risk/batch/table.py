"""The field's results table: one row per well x interval x mechanism x stage, built from each
case's results.json (so a case reused from an earlier run gives the same rows as a fresh one).

Pressures are in the field's units (the column names carry them); probabilities are shares
(0-1). ``mechanism = "sand_free"`` rows hold the headline (the sand-free limit, the governing
mechanism, P(sand) at the planned point of the stage); a failed case has one row with its
message.
"""

from __future__ import annotations

import io
from collections.abc import Iterable, Mapping
from typing import Any, Final

import pandas as pd

from risk.conventions import DISPLAY_UNITS, TO_INTERNAL

__all__ = ["COLUMNS", "case_rows", "failed_row", "frame", "to_parquet", "to_csv"]

#: Columns in order: (name, dimension) with dimension "pressure" (named with the unit) or "".
COLUMNS: Final[tuple[tuple[str, str], ...]] = (
    ("case", ""), ("well", ""), ("interval", ""), ("status", ""), ("reused", ""),
    ("message", ""), ("mechanism", ""), ("mechanism_name", ""), ("stage", ""),
    ("reservoir_pressure", "pressure"), ("drawdown_limit", "pressure"),
    ("drawdown_limit_lower", "pressure"), ("critical_drawdown_p10", "pressure"),
    ("critical_drawdown_p50", "pressure"), ("critical_drawdown_p90", "pressure"),
    ("never_fraction", ""), ("zero_drawdown_fraction", ""), ("governing", ""),
    ("planned_drawdown", "pressure"), ("probability", ""), ("probability_low", ""),
    ("probability_high", ""), ("accepted_risk", ""), ("convergence_warning", ""),
    ("seed", ""), ("samples", ""), ("sampling", ""), ("criterion", ""), ("completion", ""),
    ("version", ""), ("scenario_sha256", ""), ("input_digest", ""),
)
_INT: Final = ("stage", "seed", "samples")
_FLOAT: Final = tuple(n for n, d in COLUMNS if d == "pressure") + (
    "never_fraction", "zero_drawdown_fraction", "probability", "probability_low",
    "probability_high", "accepted_risk")


def _scale(summary: Mapping[str, Any], units: str) -> float:
    """Factor from the case's pressure unit to the field's."""
    own = str(summary.get("unit_system", units))
    return TO_INTERNAL[own]["pressure"] / TO_INTERNAL[units]["pressure"]


def _planned(summary: Mapping[str, Any], p_r: float | None) -> Mapping[str, Any] | None:
    """The planned operating point at this stage with the largest drawdown (the one that
    decides), or None."""
    sf = summary.get("sand_free") or {}
    pts = [p for p in sf.get("operating_points") or []
           if p.get("reservoir_pressure") == p_r and p.get("drawdown") is not None]
    return max(pts, key=lambda p: p["drawdown"]) if pts else None


def case_rows(summary: Mapping[str, Any], *, case: str, well: str, interval: str,
              digest: str, reused: bool, units: str) -> list[dict[str, Any]]:
    """Rows of one finished case from its results.json."""
    k = _scale(summary, units)

    def p(v: Any) -> float | None:
        return None if v is None else float(v) * k

    base = {"case": case, "well": well, "interval": interval, "status": "ok",
            "reused": reused, "message": None, "accepted_risk": summary.get("accepted_risk"),
            "seed": summary.get("seed"), "samples": summary.get("samples"),
            "sampling": summary.get("sampling"), "criterion": summary.get("criterion"),
            "completion": summary.get("completion"), "version": summary.get("version"),
            "scenario_sha256": summary.get("scenario_sha256"), "input_digest": digest}
    sf = summary.get("sand_free")
    governing: dict[int, str] = {}
    rows: list[dict[str, Any]] = []
    if sf is not None:
        for stage, st in enumerate(sf["stages"]):
            governing[stage] = st["governing"]
            pt = _planned(summary, st["reservoir_pressure"])
            rows.append({**base, "mechanism": "sand_free",
                         "mechanism_name": "sand-free limit (earliest sand-production "
                                           "mechanism)", "stage": stage,
                         "reservoir_pressure": p(st["reservoir_pressure"]),
                         "drawdown_limit": p(st["drawdown_limit"]),
                         "drawdown_limit_lower": p(st["drawdown_limit_lower"]),
                         "zero_drawdown_fraction": st["p_no_drawdown"],
                         "governing": st["governing"],
                         "planned_drawdown": None if pt is None else p(pt["drawdown"]),
                         "probability": None if pt is None else pt["probability"],
                         "probability_low": None if pt is None else pt["low"],
                         "probability_high": None if pt is None else pt["high"]})
    for key, mech in (summary.get("mechanisms") or {}).items():
        for stage, st in enumerate(mech.get("stages") or []):
            row = {**base, "mechanism": key, "mechanism_name": mech.get("name"),
                   "stage": stage, "reservoir_pressure": p(st.get("reservoir_pressure")),
                   "governing": governing.get(stage)}
            if key == "pore_collapse":  # P(collapsed) at the stage's reservoir pressure
                row.update({"probability": st.get("probability"),
                            "probability_low": st.get("low"),
                            "probability_high": st.get("high")})
            else:
                dc = st.get("critical_drawdown") or {}
                row.update({"drawdown_limit": p(st.get("drawdown_limit")),
                            "drawdown_limit_lower": p(st.get("drawdown_limit_lower")),
                            "critical_drawdown_p10": p(dc.get("p10")),
                            "critical_drawdown_p50": p(dc.get("p50")),
                            "critical_drawdown_p90": p(dc.get("p90")),
                            "never_fraction": st.get("never_fraction"),
                            "zero_drawdown_fraction": st.get("zero_drawdown_fraction"),
                            "convergence_warning": st.get("convergence_warning")})
            rows.append(row)
    return rows


def failed_row(*, case: str, well: str, interval: str, message: str, digest: str | None
               ) -> dict[str, Any]:
    """The one row of a case that did not finish."""
    return {"case": case, "well": well, "interval": interval, "status": "failed",
            "reused": False, "message": message, "input_digest": digest}


def frame(rows: Iterable[Mapping[str, Any]], units: str) -> pd.DataFrame:
    """The table as a DataFrame with fixed columns and types (pressures in ``units``)."""
    unit = DISPLAY_UNITS[units]["pressure"]
    rows = list(rows)
    data: dict[str, Any] = {}
    for name, dim in COLUMNS:
        values = [r.get(name) for r in rows]
        label = f"{name} [{unit}]" if dim == "pressure" else name
        if name in _INT:
            data[label] = pd.array(values, dtype="Int64")
        elif name in _FLOAT:
            data[label] = pd.array([None if v is None else float(v) for v in values],
                                   dtype="Float64")
        elif name == "reused":
            data[label] = pd.array(values, dtype="boolean")
        else:
            data[label] = pd.array(values, dtype="string")
    return pd.DataFrame(data)


def to_parquet(df: pd.DataFrame) -> bytes:
    buf = io.BytesIO()
    df.to_parquet(buf, index=False, engine="pyarrow")
    return buf.getvalue()


def to_csv(df: pd.DataFrame) -> str:
    return str(df.to_csv(index=False, lineterminator="\n"))
