"""The validated scenario (Scenario, Well, CompletionOption), its limits and constants."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any, Final

from risk.conventions import DISPLAY_UNITS, TO_INTERNAL
from risk.uncertainty import (
    Marginal,
)

MAX_SAMPLES: Final = 10_000_000
#: Largest scenario file [bytes] (1 MiB; a scenario is a few kB). Checked before parsing.
MAX_FILE_BYTES: Final = 1_048_576
#: Longest title [characters].
MAX_TITLE_CHARS: Final = 200
#: Most shot directions, depletion stages and operating points of one scenario.
MAX_SHOTS: Final = 36
MAX_STAGES: Final = 50
MAX_OPERATING_POINTS: Final = 1_000
#: Most completion options ([[option]] tables) and gun phasings of one scenario, and the
#: longest option name [characters].
MAX_OPTIONS: Final = 12
MAX_PHASINGS: Final = 10
MAX_OPTION_NAME_CHARS: Final = 80
#: Gun phasings compared when [well] gives none [deg] (0 = every shot in one direction); the
#: same as risk.decision.COMMON_PHASINGS (a test keeps them equal).
DEFAULT_PHASINGS: Final = (0.0, 60.0, 90.0, 120.0, 180.0)
#: A phasing p divides 360 when |round(360/p) p - 360| is at most this [deg] (the tolerance
#: within which risk.decision takes two shot directions to be the same).
PHASING_TOL: Final = 1e-6
#: The keys of [well] an [[option]] may replace.
COMPLETION_KEYS: Final = ("completion", "shot_angles", "tunnel_diameter", "hole_diameter")
_OPTION_KEYS: Final = ("name", *COMPLETION_KEYS)
#: Keys of a depletion-stage rule (production.reservoir_pressure as a table) and of an
#: operating point given as a table.
_STAGE_RULE_KEYS: Final = ("from", "to", "to_fraction", "stages")
_OPERATING_POINT_KEYS: Final = ("reservoir_pressure", "drawdown", "wall_pressure")
#: Per-sample probability below which two uncertain inputs are taken never to break a rule
#: between them (dilation angle <= friction angle): with MAX_SAMPLES samples the chance that
#: any sample breaks it is then at most 1e7 x 1e-13 = 1e-6 (derived, union bound).
PAIR_TAIL: Final = 1e-13
#: A stage more than this fraction above the initial pore pressure gets a warning [-].
STAGE_ABOVE_PP: Final = 0.01
COMPLETIONS: Final = ("perforated", "openhole")
TUNNEL_STRESS: Final = ("far-field", "root-and-far-field")
COMPACTION_CAPS: Final = ("modified-cam-clay", "mean-stress")
STRESS_NAMES: Final = ("sv", "shmax", "shmin", "pp")


@dataclass(frozen=True)
class Well:
    """Well geometry and completion (internal units).

    depth [m] true vertical depth of the interval; inclination, azimuth [rad];
    completion "perforated" or "openhole"; shot_angles [rad] from the high side
    (empty for an open hole); tunnel_diameter, hole_diameter [m] or None.
    """

    depth: float
    inclination: float
    azimuth: float
    completion: str
    shot_angles: tuple[float, ...]
    tunnel_diameter: float | None
    hole_diameter: float | None


@dataclass(frozen=True)
class CompletionOption:
    """One ``[[option]]`` of a scenario: the base well with some completion keys replaced.

    name : the option's name as written (one line, at most :data:`MAX_OPTION_NAME_CHARS`)
    well : the complete well of the option (geometry of ``[well]``; internal units)
    """

    name: str
    well: Well


@dataclass(frozen=True)
class Scenario:
    """A validated scenario in internal units (:mod:`risk.conventions`).

    ``inputs`` maps each given numeric input name (see :data:`INPUTS`) to its distribution;
    ``stress_given`` says for each of sv, shmax, shmin, pp whether the file gave the absolute
    value ("absolute") or the gradient ("gradient"). ``warnings`` holds one text per input that
    is accepted but looks unintended (each starts with its key), in a fixed order.

    ``options`` are the completion options compared with the base well (``[[option]]``, in
    file order; the base well itself is not one of them). ``phasings`` are the candidate gun
    phasings [deg] of the life-of-well phasing choice (:data:`DEFAULT_PHASINGS` unless
    ``[well] phasings`` gives them); they matter for perforated wells only.
    ``reservoir_pressure`` holds the depletion stages [MPa], a stage rule already expanded.
    """

    title: str
    units: str
    well: Well
    inputs: Mapping[str, Marginal]
    stress_given: Mapping[str, str]
    reservoir_pressure: tuple[float, ...]
    max_drawdown: float
    accepted_risk: float
    criterion: str
    effective_strength_cavity: str
    samples: int
    seed: int
    sampling: str
    correlation: tuple[tuple[str, str, float], ...]
    operating_points: tuple[tuple[float, float], ...] = ()
    source_name: str = ""
    sha256: str = ""
    warnings: tuple[str, ...] = ()
    options: tuple[CompletionOption, ...] = ()
    phasings: tuple[float, ...] = DEFAULT_PHASINGS
    #: which stress governs a perforation tunnel's effective-strength onset: "far-field" (the
    #: default, the stress the TWC factor is calibrated with) or "root-and-far-field" (the
    #: worse of the far field and the wellbore's field at the tunnel root and along its first
    #: wellbore radii). The root result is computed and reported either way.
    tunnel_stress: str = "far-field"
    #: the pore-collapse yield surface: "modified-cam-clay" (the default: a cap in p'-q through
    #: P*, risk.mechanics.cap) or "mean-stress" (the mean effective stress reaches P*)
    compaction_cap: str = "modified-cam-clay"
    #: rise in water saturation of the near-well rock over the one its strength was measured
    #: at, per stage [1] (``[production] water_saturation``); empty: no water weakening
    water_saturation: tuple[float, ...] = ()
    #: field sanding history and measurements (risk.calibration.History; None: none given)
    history: Any = None
    raw: Mapping[str, Any] = field(default_factory=dict, repr=False, compare=False)

    @property
    def initial_pore_pressure_key(self) -> str:
        return "pp" if self.stress_given["pp"] == "absolute" else "pp_gradient"

    def display_unit(self, dimension: str) -> str:
        """The scenario's unit for a dimension (for output)."""
        return DISPLAY_UNITS[self.units][dimension]

    def to_display(self, value: float, dimension: str) -> float:
        """Internal value -> the scenario's unit."""
        return value / TO_INTERNAL[self.units][dimension]

    @property
    def uncertain_names(self) -> tuple[str, ...]:
        return tuple(n for n, m in self.inputs.items() if not m.is_fixed)
