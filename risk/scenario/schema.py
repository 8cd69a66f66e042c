"""The inputs a scenario may give (InputSpec, INPUTS, sections), the mechanisms they switch on."""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Final

from risk.scenario.model import Scenario
from risk.uncertainty import (
    Bounds,
)


@dataclass(frozen=True)
class InputSpec:
    """A numeric scenario input that may carry a distribution.

    name : the key in its section (also the input's name in results and the sensitivity list)
    section : TOML table it lives in
    dimension : key of :data:`risk.conventions.TO_INTERNAL`
    bounds : physical range in internal units
    required : whether the scenario must give it (False: optional or conditional)
    description : one line for ``risk check`` and the memo
    """

    name: str
    section: str
    dimension: str
    bounds: Bounds
    required: bool
    description: str


_POS = Bounds.positive()
_NONNEG = Bounds.nonnegative()
_ANY = Bounds()

#: Every numeric input that may be uncertain, in the order they are listed to the user.
INPUTS: Final[tuple[InputSpec, ...]] = (
    InputSpec("sv", "stress", "pressure", _POS, False, "vertical (overburden) stress"),
    InputSpec("sv_gradient", "stress", "gradient", _POS, False, "overburden gradient"),
    InputSpec("shmax", "stress", "pressure", _POS, False, "maximum horizontal stress"),
    InputSpec("shmax_gradient", "stress", "gradient", _POS, False, "SHmax gradient"),
    InputSpec("shmin", "stress", "pressure", _POS, False, "minimum horizontal stress"),
    InputSpec("shmin_gradient", "stress", "gradient", _POS, False, "Shmin gradient"),
    InputSpec("pp", "stress", "pressure", _POS, False, "initial pore pressure"),
    InputSpec("pp_gradient", "stress", "gradient", _POS, False, "initial pore-pressure gradient"),
    InputSpec("shmax_azimuth", "stress", "angle", _ANY, True,
              "SHmax azimuth, clockwise from north"),
    InputSpec("depletion_path", "stress", "dimensionless",
              Bounds(0.0, 1.0, text="in [0, 1]"), False,
              "depletion stress path dSh/dPp (default: uniaxial strain)"),
    InputSpec("depletion_path_shmax", "stress", "dimensionless",
              Bounds(0.0, 1.0, text="in [0, 1]"), False,
              "depletion stress path dSH/dPp (default: the same as depletion_path)"),
    InputSpec("ucs", "rock", "pressure", _POS, True, "unconfined compressive strength"),
    InputSpec("friction_angle", "rock", "angle",
              Bounds(0.0, math.pi / 2, lower_inclusive=False, upper_inclusive=False,
                     text="in (0, 90) degrees"), True, "internal friction angle"),
    InputSpec("tensile_strength", "rock", "pressure", _NONNEG, True, "tensile strength"),
    InputSpec("poisson_ratio", "rock", "dimensionless",
              Bounds(0.0, 0.5, upper_inclusive=False, text="in [0, 0.5)"), True,
              "Poisson's ratio (drained)"),
    InputSpec("biot", "rock", "dimensionless",
              Bounds(0.0, 1.0, lower_inclusive=False, text="in (0, 1]"), True,
              "Biot coefficient"),
    InputSpec("hb_mi", "rock", "dimensionless", _POS, False,
              "Hoek-Brown m_i of the intact rock (criterion hoek-brown)"),
    InputSpec("gsi", "rock", "dimensionless", Bounds(0.0, 100.0, lower_inclusive=False,
                                                     text="in (0, 100]"), False,
              "geological strength index (Hoek-Brown rock mass; default 100 = intact)"),
    InputSpec("twc", "rock", "pressure", _POS, False,
              "thick-wall cylinder collapse strength (TWC)"),
    InputSpec("twc_ratio", "rock", "dimensionless", _POS, False,
              "TWC/UCS ratio, when no TWC test exists"),
    InputSpec("twc_factor", "rock", "dimensionless", _POS, False,
              "effective-strength factor k, U = k TWC (default 3.1, Willson et al. 2002)"),
    InputSpec("young_modulus", "rock", "pressure", _POS, False, "Young's modulus (drained)"),
    InputSpec("dilation_angle", "rock", "angle",
              Bounds(0.0, math.pi / 2, upper_inclusive=False, text="in [0, 90) degrees"), False,
              "dilation angle (default 0: no plastic volume change)"),
    InputSpec("critical_plastic_strain", "rock", "dimensionless",
              Bounds(0.0, 1.0, lower_inclusive=False,
                     text="in (0, 1] (a strain, not a percentage)"), False,
              "wall plastic hoop strain at tunnel collapse (calibrated)"),
    InputSpec("pore_collapse_pressure", "rock", "pressure", _POS, False,
              "pore-collapse pressure P* (mean effective stress, hydrostatic test)"),
    InputSpec("wet_strength_ratio", "rock", "dimensionless",
              Bounds(0.0, 1.0, lower_inclusive=False, text="in (0, 1]"), False,
              "strength of the water-saturated rock over the as-tested one (water weakening "
              "of UCS, TWC and critical plastic strain)"),
    InputSpec("strength_multiplier", "rock", "dimensionless", _POS, False,
              "strength multiplier on UCS (and what the model derives from it: TWC from "
              "twc_ratio, the Hoek-Brown sigma_ci); a model-calibration input, default 1 with "
              "no spread"),
    InputSpec("cap_m", "rock", "dimensionless", _POS, False,
              "critical-state slope M of the compaction cap (modified Cam clay; default "
              "6 sin(phi)/(3 - sin(phi)) from the friction angle)"),
    InputSpec("drainage_radius", "production", "length", _POS, False,
              "radius of the constant-pressure boundary of the steady inflow"),
)
#: Every input's specification by name (read-only): the public way to look one up.
INPUT_SPECS: Final[Mapping[str, InputSpec]] = MappingProxyType({s.name: s for s in INPUTS})
#: Former private name of :data:`INPUT_SPECS`, kept while modules still import it.
_SPEC: Final = INPUT_SPECS

_SECTIONS: Final[dict[str, tuple[str, ...]]] = {
    "": ("title", "units", "well", "stress", "rock", "production", "analysis", "correlation",
         "option", "history", "calibration", "measurement"),
    "well": ("depth", "inclination", "azimuth", "completion", "shot_angles", "tunnel_diameter",
             "hole_diameter", "phasings"),
    "stress": tuple(s.name for s in INPUTS if s.section == "stress"),
    "rock": tuple(s.name for s in INPUTS if s.section == "rock"),
    "production": ("reservoir_pressure", "max_drawdown", "accepted_risk", "operating_points",
                   "drainage_radius", "water_saturation"),
    "analysis": ("criterion", "samples", "seed", "sampling", "effective_strength_cavity",
                 "tunnel_stress", "compaction_cap"),
    "correlation": ("pairs",),
}


#: Inputs that switch a mechanism on, and the inputs it then needs.
MECHANISM_INPUTS: Final[dict[str, tuple[tuple[str, ...], tuple[str, ...]]]] = {
    "effective_strength_onset": (("twc", "twc_ratio"), ()),
    "tunnel_collapse": (("critical_plastic_strain",), ("young_modulus", "drainage_radius")),
    "pore_collapse": (("pore_collapse_pressure",), ()),
}


def mechanisms_of(scenario: Scenario) -> tuple[str, ...]:
    """The mechanisms a scenario's inputs switch on (yield onset always)."""
    out = ["yield_onset"]
    for mech, (switches, _) in MECHANISM_INPUTS.items():
        if any(k in scenario.inputs for k in switches):
            out.append(mech)
    return tuple(out)
