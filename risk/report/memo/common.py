"""Helpers every memo section uses: numbers in the run's units and probabilities as text,
typesetting (p_r -> p<sub>r</sub>), and small readers of the results dict (mechanisms with
failure curves, the input that ranks first, tied angles, the angle reference).
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from typing import Any

from markupsafe import Markup, escape

from risk.report.formatting import format_value
from risk.report.reading import rank_value as _rank_value


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
