"""The glossary: names, internal units, sign conventions and frames, stated once.

Internal units (the core never converts)
-----------------------------------------
- stress and pressure: MPa
- length: m
- angle: rad
- stress gradient: MPa/m
- strain: dimensionless (1)

Units enter and leave only at the file and CLI boundary (:mod:`risk.scenario` on the way in,
the report writer on the way out), through the exact factors below.

Signs and symbols
-----------------
- Compression is positive. Tension is negative.
- Effective stress for failure checks is Terzaghi's, sigma' = sigma - p.
  Biot's coefficient alpha enters only the poroelastic stress changes: the steady-inflow term
  ``A * (p_r - p_w)`` at a cavity wall and the depletion stress path.
- ``p0``  initial pore pressure [MPa]; ``p_r`` current far-field reservoir pressure of a
  depletion stage [MPa]; ``p_w`` flowing pressure at the cavity wall [MPa].
- Drawdown ``D = p_r - p_w >= 0`` [MPa]. Critical drawdown ``D_c = p_r - p_wc`` where ``p_wc``
  is the highest wall pressure in [0, p_r] at which a limit state is reached.
  ``D_c = 0``: fails with no drawdown. No failure for any wall pressure in [0, p_r]:
  ``D_c = +inf`` ("never"), never clipped.
- ``A = alpha (1 - 2 nu) / (1 - nu)``: poroelastic stress coefficient.
- Depletion path ``gamma = dSh/dp`` (total horizontal stress change per unit pore-pressure
  change); the uniaxial-strain value equals ``A``.

Frames
------
- Geographic frame: north-east-down (NED).
- Cavity frame (well or tunnel) for inclination ``i`` (from vertical-down) and azimuth ``a``
  (clockwise from north):
  x = (cos i cos a, cos i sin a, -sin i)  (high side),
  y = (-sin a, cos a, 0),
  z = (sin i cos a, sin i sin a, cos i)  (along the axis).
  The wall angle ``theta`` runs from x toward y.
- A perforation tunnel shot at ``omega`` from the well's high side has its axis along
  ``cos(omega) x + sin(omega) y`` (outward); its own frame is built from that axis with the same
  formulas. For a vertical well the reference direction x is the well's ``azimuth``, so shot
  angles run clockwise seen from above.
- Far-field stress (Andersonian): S = SH e_H e_H^T + Sh e_h e_h^T + Sv e_v e_v^T with e_H
  horizontal at the SHmax azimuth. In a cavity frame S' = R S R^T, rows of R the frame's
  unit vectors.

Percentiles
-----------
``p10`` of a critical quantity is the value at or below which 10% of the samples fail
(the 10% quantile of the critical drawdown), so P10 < P50 < P90 and a small p10 is the
pessimistic end.
"""

from __future__ import annotations

import math
from typing import Final

# Exact conversion factors (NIST SP 811, 2008 edition, Appendix B).
PSI_TO_MPA: Final = 6.894757293168e-3
FT_TO_M: Final = 0.3048
IN_TO_M: Final = 0.0254
MM_TO_M: Final = 1.0e-3
DEG_TO_RAD: Final = math.pi / 180.0
PSI_PER_FT_TO_MPA_PER_M: Final = PSI_TO_MPA / FT_TO_M  # 0.022620594... MPa/m
KPA_PER_M_TO_MPA_PER_M: Final = 1.0e-3

UNIT_SYSTEMS: Final = ("field", "si")

#: Dimensions a scenario quantity may have, and the unit it is written in for each system.
DISPLAY_UNITS: Final[dict[str, dict[str, str]]] = {
    "field": {
        "pressure": "psi", "length": "ft", "small_length": "in", "angle": "deg",
        "gradient": "psi/ft", "dimensionless": "-",
    },
    "si": {
        "pressure": "MPa", "length": "m", "small_length": "mm", "angle": "deg",
        "gradient": "kPa/m", "dimensionless": "-",
    },
}

#: Factor that turns a value in the scenario's unit into the internal unit.
TO_INTERNAL: Final[dict[str, dict[str, float]]] = {
    "field": {
        "pressure": PSI_TO_MPA, "length": FT_TO_M, "small_length": IN_TO_M,
        "angle": DEG_TO_RAD, "gradient": PSI_PER_FT_TO_MPA_PER_M, "dimensionless": 1.0,
    },
    "si": {
        "pressure": 1.0, "length": 1.0, "small_length": MM_TO_M,
        "angle": DEG_TO_RAD, "gradient": KPA_PER_M_TO_MPA_PER_M, "dimensionless": 1.0,
    },
}

#: Internal unit of each dimension (for messages and documentation).
INTERNAL_UNITS: Final[dict[str, str]] = {
    "pressure": "MPa", "length": "m", "small_length": "m", "angle": "rad",
    "gradient": "MPa/m", "dimensionless": "-",
}


def to_internal(value: float, dimension: str, units: str) -> float:
    """Convert a value written in ``units`` (``"field"`` or ``"si"``) to internal units."""
    return value * TO_INTERNAL[units][dimension]


def from_internal(value: float, dimension: str, units: str) -> float:
    """Convert an internal value to the scenario's display unit."""
    return value / TO_INTERNAL[units][dimension]


def angle_reference(inclination: float, azimuth: float) -> str:
    """Where shot and wall angles are measured from, for a well of ``inclination`` and
    ``azimuth`` [rad] (:mod:`risk.conventions`: the angle runs from the frame's x toward its y,
    clockwise looking down the hole; a vertical well's x is the direction ``azimuth``)."""
    az = math.degrees(azimuth) % 360.0
    if inclination == 0.0:
        return (f"from the direction azimuth ({az:.4g} deg from north), clockwise seen from "
                "above (vertical well)")
    if inclination == math.pi:
        return (f"from the direction azimuth + 180 ({(az + 180.0) % 360.0:.4g} deg from north), "
                "counterclockwise seen from above (a vertical well drilled upward)")
    return "from the high side of the well, clockwise looking down the hole"
