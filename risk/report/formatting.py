"""Numbers and names for people, shared by the figures, the memo and anything else that reports.

A value with its unit (:func:`format_value`: pressures to a fixed number of decimals per unit,
thousands separated), the short label of an input (:func:`input_label`) and what a mechanism's
sensitivity is computed on (:func:`output_name`). Pure functions of their arguments.
"""

from __future__ import annotations

import math
from typing import Final

__all__ = ["INPUT_LABELS", "format_value", "input_label", "output_name"]


#: Short labels for inputs in axes and tables (names from :data:`risk.scenario.INPUTS`).
INPUT_LABELS: Final[dict[str, str]] = {
    "sv": "Sv", "sv_gradient": "Sv gradient", "shmax": "SHmax",
    "shmax_gradient": "SHmax gradient", "shmin": "Shmin", "shmin_gradient": "Shmin gradient",
    "pp": "initial pore pressure", "pp_gradient": "pore-pressure gradient",
    "shmax_azimuth": "SHmax azimuth", "depletion_path": "depletion path dSh/dPp",
    "ucs": "UCS", "friction_angle": "friction angle", "tensile_strength": "tensile strength",
    "poisson_ratio": "Poisson's ratio", "biot": "Biot coefficient", "hb_mi": "Hoek-Brown mi",
    "gsi": "GSI", "twc": "TWC", "twc_ratio": "TWC/UCS", "twc_factor": "strength factor k",
    "young_modulus": "Young's modulus", "dilation_angle": "dilation angle",
    "critical_plastic_strain": "critical plastic strain",
    "strength_multiplier": "strength multiplier",
    "pore_collapse_pressure": "pore-collapse pressure P*", "drainage_radius": "drainage radius",
}

#: Decimals shown for a pressure in each unit (finer than any input is known).
_PRESSURE_DECIMALS: Final[dict[str, int]] = {"psi": 0, "kPa": 0, "bar": 1, "MPa": 2}


def input_label(name: str) -> str:
    """A short human label for an input name (``ucs`` -> ``UCS``)."""
    return INPUT_LABELS.get(name, name.replace("_", " "))


def format_value(v: float | None, unit: str = "", *, none: str = "never") -> str:
    """A number for people: pressures to a fixed number of decimals per unit, anything else to
    four significant digits; thousands separated; the unit appended (``-`` = dimensionless is
    left off). ``None`` (never fails within the available drawdown) gives ``none``."""
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return none
    x = float(v)
    if unit in _PRESSURE_DECIMALS:
        text = f"{x:,.{_PRESSURE_DECIMALS[unit]}f}"
    elif x != 0 and (abs(x) >= 1e7 or abs(x) < 1e-3):
        text = f"{x:.3e}"
    elif abs(x) >= 1e4:
        text = f"{x:,.0f}"
    else:
        text = f"{x:,.4g}"
    if text.startswith("-") and float(text.replace(",", "")) == 0:
        text = text[1:]
    return f"{text} {unit}" if unit and unit != "-" else text


def output_name(key: str) -> str:
    """What the sensitivity of a mechanism is computed on: the critical drawdown, or for pore
    collapse the critical reservoir pressure."""
    return "critical reservoir pressure" if key == "pore_collapse" else "critical drawdown"
