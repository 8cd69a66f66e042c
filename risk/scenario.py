"""Scenario files: TOML in field or SI units -> a validated, frozen scenario in internal units.

The engineer's file is read once here; every value is converted to internal units
(:mod:`risk.conventions`) and every problem found is reported at once in one
:class:`~risk.errors.ScenarioError`. Nothing downstream converts units or re-validates input.

Each numeric input listed in :data:`INPUTS` may be a plain number (fixed) or a distribution
table such as ``{ dist = "normal", mean = 9000, sd = 900, source = "core plugs" }``
(:func:`risk.uncertainty.parse_input`). Stresses and the initial pore pressure are given either
as an absolute value (``sv = ...``) or as a gradient from surface (``sv_gradient = ...``), exactly
one of the two.

Limits (far above any real scenario; they keep a mistyped or hostile file from flooding the
terminal or the run): a file of at most :data:`MAX_FILE_BYTES`, a title of at most
:data:`MAX_TITLE_CHARS` characters and a source of at most
:data:`~risk.uncertainty.MAX_SOURCE_CHARS`, both one line without control characters,
:data:`MAX_SHOTS` shot directions, :data:`MAX_STAGES` depletion stages,
:data:`MAX_OPERATING_POINTS` operating points, :data:`MAX_OPTIONS` completion options (names of
at most :data:`MAX_OPTION_NAME_CHARS` characters), :data:`MAX_PHASINGS` gun phasings, and at
most one correlation per pair of uncertain inputs.

Completion options (``[[option]]``: the ``[well]`` table with some of :data:`COMPLETION_KEYS`
replaced), candidate gun phasings (``[well] phasings``), depletion stages by rule
(``reservoir_pressure = { from = "initial", to = ..., stages = N }``) and operating points by
drawdown (``{ reservoir_pressure = ..., drawdown = ... }``) are described in README "Scenario
files"; a rule is expanded here, so the scenario holds the stages as a list would.

Inputs that are given but unused by the chosen options, and stages that look mistyped, are
accepted with a warning (:attr:`Scenario.warnings`), which the console, results.json and the
memo repeat.
"""

from __future__ import annotations

import dataclasses
import hashlib
import math
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any, Final

from risk.conventions import DISPLAY_UNITS, TO_INTERNAL, UNIT_SYSTEMS
from risk.errors import Problem, ScenarioError, closest, did_you_mean, toml_key, visible
from risk.mechanics.criteria import CRITERIA
from risk.uncertainty import (
    MAGNITUDE_TEXT,
    RULES,
    Bounds,
    Marginal,
    is_plain_number,
    is_real,
    parse_input,
    text_problem,
)

__all__ = [
    "InputSpec",
    "INPUTS",
    "Well",
    "CompletionOption",
    "Scenario",
    "load_scenario",
    "parse_scenario",
    "MAX_SAMPLES",
    "MAX_FILE_BYTES",
    "MAX_TITLE_CHARS",
    "MAX_SHOTS",
    "MAX_STAGES",
    "MAX_OPERATING_POINTS",
    "MAX_OPTIONS",
    "MAX_OPTION_NAME_CHARS",
    "MAX_PHASINGS",
    "DEFAULT_PHASINGS",
    "COMPLETION_KEYS",
    "PAIR_TAIL",
    "STAGE_ABOVE_PP",
]

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
STRESS_NAMES: Final = ("sv", "shmax", "shmin", "pp")


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
    InputSpec("drainage_radius", "production", "length", _POS, False,
              "radius of the constant-pressure boundary of the steady inflow"),
)
#: Every input's specification by name (read-only): the public way to look one up.
INPUT_SPECS: Final[Mapping[str, InputSpec]] = MappingProxyType({s.name: s for s in INPUTS})
#: Former private name of :data:`INPUT_SPECS`, kept while modules still import it.
_SPEC: Final = INPUT_SPECS

_SECTIONS: Final[dict[str, tuple[str, ...]]] = {
    "": ("title", "units", "well", "stress", "rock", "production", "analysis", "correlation",
         "option"),
    "well": ("depth", "inclination", "azimuth", "completion", "shot_angles", "tunnel_diameter",
             "hole_diameter", "phasings"),
    "stress": tuple(s.name for s in INPUTS if s.section == "stress"),
    "rock": tuple(s.name for s in INPUTS if s.section == "rock"),
    "production": ("reservoir_pressure", "max_drawdown", "accepted_risk", "operating_points",
                   "drainage_radius"),
    "analysis": ("criterion", "samples", "seed", "sampling", "effective_strength_cavity"),
    "correlation": ("pairs",),
}


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


# --------------------------------------------------------------------------------------------
_key_text = toml_key


class _Collector:
    """Gathers problems so that one pass reports all of them."""

    def __init__(self) -> None:
        self.problems: list[Problem] = []

    def add(self, key: str, value: Any, expected: str, found_text: str | None = None) -> None:
        self.problems.append(Problem(key, value, expected, found_text))

    def extend(self, err: ScenarioError) -> None:
        self.problems.extend(err.problems)

    def number(self, table: Mapping[str, Any], section: str, key: str, *, required: bool,
               expected: str, check: Any = None, integer: bool = False) -> float | None:
        full = f"{section}.{key}" if section else key
        if key not in table:
            if required:
                self.add(full, None, expected, found_text="nothing (the key is missing)")
            return None
        v = table[key]
        if integer:
            if not isinstance(v, int) or isinstance(v, bool) or not is_real(v):
                self.add(full, v, expected)
                return None
        elif not is_plain_number(v):
            self.add(full, v, expected if not isinstance(v, int | float) or isinstance(v, bool)
                     or (is_real(v) and not math.isfinite(float(v)))
                     else f"{MAGNITUDE_TEXT}; {expected}")
            return None
        fv = float(v)
        if not math.isfinite(fv) or (check is not None and not check(fv)):
            self.add(full, v, expected)
            return None
        return fv


def _check_keys(c: _Collector, table: Mapping[str, Any], section: str) -> None:
    allowed = _SECTIONS[section]
    for key in table:
        if key not in allowed:
            where = f"{section}.{_key_text(key)}" if section else _key_text(key)
            kind = "section" if not section and isinstance(table[key], dict) else "key"
            c.add(where, table[key],
                  f"a known {kind}{' in [' + section + ']' if section else ''}: "
                  f"{', '.join(allowed)}{did_you_mean(str(key), allowed)}",
                  found_text=f"unknown {kind} {key!r}")


@dataclass(frozen=True)
class _Completion:
    """The completion keys of a well or an option, validated (internal units)."""

    completion: str
    shot_angles: tuple[float, ...]
    tunnel_diameter: float | None
    hole_diameter: float | None


def _parse_completion(c: _Collector, w: Mapping[str, Any], prefix: str, units: str,
                      missing_note: str = "") -> _Completion | None:
    """``completion``, ``shot_angles``, ``tunnel_diameter`` and ``hole_diameter`` of ``w``, with
    their problems named ``<prefix>.<key>``; None when any of them is refused. The same rules
    serve ``[well]`` and every ``[[option]]`` (merged onto ``[well]``). ``missing_note`` is
    added to the expectation of a missing key (why an option must give it)."""
    conv, disp = TO_INTERNAL[units], DISPLAY_UNITS[units]
    before = len(c.problems)
    completion = w.get("completion")
    if not isinstance(completion, str) or completion not in COMPLETIONS:
        c.add(f"{prefix}.completion", completion, 'completion = "perforated" or "openhole"'
              + (did_you_mean(completion, list(COMPLETIONS))
                 if isinstance(completion, str) else ""),
              found_text="nothing (the key is missing)" if completion is None else None)
    shots: tuple[float, ...] = ()
    tunnel_d = c.number(w, prefix, "tunnel_diameter", required=completion == "perforated",
                        check=lambda v: v > 0,
                        expected=f"a perforation tunnel diameter > 0 [{disp['small_length']}]"
                        + ("" if "tunnel_diameter" in w else missing_note))
    hole_d = c.number(w, prefix, "hole_diameter", required=False, check=lambda v: v > 0,
                      expected=f"a hole diameter > 0 [{disp['small_length']}]")
    if completion == "perforated":
        raw_shots = w.get("shot_angles")
        if (not isinstance(raw_shots, list) or not raw_shots
                or not all(is_plain_number(a) for a in raw_shots)):
            c.add(f"{prefix}.shot_angles", raw_shots,
                  "a non-empty list of shot angles in degrees from the high side, "
                  "e.g. [0, 60, 120, 180, 240, 300]"
                  + (missing_note if raw_shots is None else ""),
                  found_text="nothing (the key is missing)" if raw_shots is None else None)
        elif len(raw_shots) > MAX_SHOTS:
            c.add(f"{prefix}.shot_angles", raw_shots, f"at most {MAX_SHOTS} shot directions",
                  found_text=f"{len(raw_shots):,} directions")
        else:
            reduced = [float(a) % 360.0 for a in raw_shots]
            if len(set(reduced)) != len(reduced):
                c.add(f"{prefix}.shot_angles", raw_shots,
                      "distinct directions (modulo 360 degrees)")
            shots = tuple(a * conv["angle"] for a in reduced)
    if completion == "openhole" and "tunnel_diameter" in w:
        c.add(f"{prefix}.tunnel_diameter", w["tunnel_diameter"],
              'no tunnel diameter for completion = "openhole" (use hole_diameter, or set '
              'completion = "perforated")')
    if completion == "openhole" and "shot_angles" in w:
        c.add(f"{prefix}.shot_angles", w["shot_angles"],
              'no shot angles for completion = "openhole" (remove the key, or set '
              'completion = "perforated")')
    if len(c.problems) > before:
        return None
    return _Completion(
        completion=str(completion), shot_angles=shots,
        tunnel_diameter=None if tunnel_d is None else tunnel_d * conv["small_length"],
        hole_diameter=None if hole_d is None else hole_d * conv["small_length"])


_PHASING_TEXT = ("gun phasings in degrees, each 0 (every shot in one direction) or in (0, 180] "
                 "dividing 360 exactly (a whole number of shots per turn), e.g. "
                 "[0, 60, 90, 120, 180]")


def _phasing_ok(ph: float) -> bool:
    """0, or in (0, 180] with a whole number of shots per turn (within PHASING_TOL degrees)."""
    if ph == 0.0:
        return True
    return 0.0 < ph <= 180.0 and abs(round(360.0 / ph) * ph - 360.0) <= PHASING_TOL


def _parse_phasings(c: _Collector, w: Mapping[str, Any]) -> tuple[float, ...]:
    """``[well] phasings`` [deg], or :data:`DEFAULT_PHASINGS` when not given."""
    if "phasings" not in w:
        return DEFAULT_PHASINGS
    raw = w["phasings"]
    if not isinstance(raw, list) or not raw or not all(is_plain_number(v) for v in raw):
        c.add("well.phasings", raw, f"a non-empty list of {_PHASING_TEXT}")
        return DEFAULT_PHASINGS
    if len(raw) > MAX_PHASINGS:
        c.add("well.phasings", raw, f"at most {MAX_PHASINGS} gun phasings",
              found_text=f"{len(raw):,} phasings")
        return DEFAULT_PHASINGS
    out: list[float] = []
    bad = False
    for j, v in enumerate(raw):
        ph = float(v)
        if not _phasing_ok(ph):
            shots = f" ({360.0 / ph:.6g} shots per turn)" if 0 < ph <= 180 else ""
            c.add(f"well.phasings[{j}]", v, "a gun phasing of 0 (every shot in one direction) "
                  "or in (0, 180] degrees dividing 360 exactly (a whole number of shots per "
                  "turn, e.g. 60, 90, 120, 180)", found_text=f"{v!r}{shots}")
            bad = True
        elif any(abs(ph - o) <= PHASING_TOL for o in out):
            first = next(k for k, o in enumerate(out) if abs(ph - o) <= PHASING_TOL)
            c.add(f"well.phasings[{j}]", v, f"distinct phasings (it repeats phasings[{first}])")
            bad = True
        out.append(ph)
    return DEFAULT_PHASINGS if bad else tuple(out)


def _table_keys(c: _Collector, table: Mapping[str, Any], key: str, allowed: tuple[str, ...],
                what: str) -> set[str]:
    """Refuse every key of an inline ``table`` (named ``key``) not in ``allowed``; return the
    known keys suggested for them (a key missing because it was mistyped is then not
    reported a second time as missing)."""
    suggested: set[str] = set()
    for k in table:
        if k not in allowed:
            c.add(f"{key}.{_key_text(k)}", table[k],
                  f"a known key of {what}: {', '.join(allowed)}"
                  f"{did_you_mean(str(k), allowed)}", found_text=f"unknown key {k!r}")
            if (meant := closest(str(k), allowed)) is not None:
                suggested.add(meant)
    return suggested


def _stage_rule(c: _Collector, rule: Mapping[str, Any], inputs: Mapping[str, Marginal],
                given: Mapping[str, str], depth: float | None, units: str) -> tuple[float, ...]:
    """Depletion stages by rule [MPa]: ``stages`` equally spaced reservoir pressures from
    ``from`` (a pressure, or "initial": the initial pore pressure, its median when uncertain;
    the default) down to ``to`` or ``to_fraction`` x ``from``, both ends included. Empty when
    the rule is refused, or when its "initial" pore pressure is itself refused (that problem
    is reported where it is)."""
    conv, disp = TO_INTERNAL[units], DISPLAY_UNITS[units]
    key = "production.reservoir_pressure"
    unit = disp["pressure"]
    before = len(c.problems)
    typo = _table_keys(c, rule, key, _STAGE_RULE_KEYS, "a depletion-stage rule")
    raw_from = rule.get("from", "initial")
    start: float | None = None  # in the scenario's unit, as end
    start_text = ""
    if isinstance(raw_from, str):
        if raw_from != "initial":
            c.add(f"{key}.from", raw_from, f'a first stage [{unit}] or "initial" (the initial '
                  f"pore pressure){did_you_mean(raw_from, ['initial'])}")
        elif depth is not None:
            pp = _central("pp", inputs, given, depth, disp, units)
            if pp is not None:
                start = pp[1] / conv["pressure"]
                start_text = f"the initial pore pressure, {start:.6g} {unit}"
    else:
        v = c.number(rule, key, "from", required=False, check=lambda v: v > 0,
                     expected=f'a first stage > 0 [{unit}] or "initial" (the initial pore '
                     "pressure)")
        if v is not None:
            start = v
            start_text = f"{v:.6g} {unit}"
    n = c.number(rule, key, "stages", required="stages" not in typo, integer=True,
                 check=lambda v: 2 <= v <= MAX_STAGES,
                 expected=f"a whole number of stages from 2 to {MAX_STAGES} (the first and "
                 "the last stage included)")
    has_to, has_fraction = "to" in rule, "to_fraction" in rule
    end: float | None = None
    if has_to and has_fraction:
        c.add(f"{key}.to", rule["to"], "exactly one of to (the last stage) and to_fraction "
              "(the last stage as a fraction of from)",
              found_text=f"both (to = {rule['to']!r}, to_fraction = {rule['to_fraction']!r})")
    elif not (has_to or has_fraction):
        if not typo & {"to", "to_fraction"}:
            c.add(f"{key}.to", None, f"to (the last stage [{unit}]) or to_fraction (the last "
                  "stage as a fraction of from, in (0, 1))", found_text="neither")
    elif has_to:
        v = c.number(rule, key, "to", required=True, check=lambda v: v > 0,
                     expected=f"the last stage, a reservoir pressure > 0 [{unit}] below from")
        if v is not None:
            end = v
            if start is not None and not end < start:
                c.add(f"{key}.to", v, f"a last stage below from ({start_text}): the stages "
                      "run down from `from` to `to`", found_text=f"{v:.6g} {unit}")
                end = None
    else:
        f = c.number(rule, key, "to_fraction", required=True, check=lambda v: 0 < v < 1,
                     expected="the last stage as a fraction of from, in (0, 1), e.g. 0.6")
        if f is not None and start is not None:
            end = f * start
    if len(c.problems) > before or start is None or end is None or n is None:
        return ()
    # spaced in the scenario's unit, then converted as a list's stages are (a rule with round
    # numbers gives exactly the stages of the list it spells out)
    k = int(n) - 1
    return tuple(x * conv["pressure"] for x in [start + (end - start) * i / k for i in range(k)]
                 + [end])


def _operating_point(c: _Collector, op: Mapping[str, Any], key: str, units: str
                     ) -> tuple[float, float] | None:
    """An operating point given as a table: reservoir_pressure and exactly one of drawdown
    and wall_pressure -> (reservoir pressure, wall pressure) [MPa], or None when refused."""
    conv, disp = TO_INTERNAL[units], DISPLAY_UNITS[units]
    unit = disp["pressure"]
    before = len(c.problems)
    typo = _table_keys(c, op, key, _OPERATING_POINT_KEYS, "an operating point")
    p_r = c.number(op, key, "reservoir_pressure", required="reservoir_pressure" not in typo,
                   check=lambda v: v >= 0,
                   expected=f"the reservoir pressure of the operating point, >= 0 [{unit}]")
    has_dd, has_wall = "drawdown" in op, "wall_pressure" in op
    p_w: float | None = None
    if has_dd and has_wall:
        c.add(f"{key}.drawdown", op["drawdown"], "exactly one of drawdown and wall_pressure",
              found_text=f"both (drawdown = {op['drawdown']!r}, wall_pressure = "
              f"{op['wall_pressure']!r})")
    elif not (has_dd or has_wall):
        if not typo & {"drawdown", "wall_pressure"}:
            c.add(f"{key}.drawdown", None, "drawdown (reservoir minus flowing wall pressure) "
                  f"or wall_pressure (the flowing wall pressure) [{unit}]", found_text="neither")
    elif has_dd:
        dd = c.number(op, key, "drawdown", required=True, check=lambda v: v >= 0,
                      expected=f"a drawdown >= 0 and at most the reservoir pressure [{unit}]")
        if dd is not None and p_r is not None:
            if dd > p_r:
                c.add(f"{key}.drawdown", dd, f"a drawdown at most the reservoir pressure "
                      f"({p_r:.6g} {unit}): the flowing wall pressure cannot fall below 0",
                      found_text=f"{dd:.6g} {unit}")
            else:
                p_w = p_r - dd
    else:
        wall = c.number(op, key, "wall_pressure", required=True, check=lambda v: v >= 0,
                        expected=f"a flowing wall pressure >= 0 and at most the reservoir "
                        f"pressure [{unit}]")
        if wall is not None and p_r is not None:
            if wall > p_r:
                c.add(f"{key}.wall_pressure", wall, "a flowing wall pressure at most the "
                      f"reservoir pressure ({p_r:.6g} {unit})", found_text=f"{wall:.6g} {unit}")
            else:
                p_w = wall
    if len(c.problems) > before or p_r is None or p_w is None:
        return None
    return p_r * conv["pressure"], p_w * conv["pressure"]


def _parse_options(c: _Collector, raw: Any, w: Mapping[str, Any], base_ok: bool, units: str
                   ) -> list[tuple[str, _Completion]]:
    """The ``[[option]]`` tables: (name, completion) each, in file order.

    An option is ``[well]``'s completion keys with the option's keys replacing them, validated
    by the rules of ``[well]`` (:func:`_parse_completion`) and named ``option[i].<key>``. An
    option switching to an open hole does not inherit the base's shot angles and tunnel
    diameter; one switching to perforations must give both. When ``[well]``'s own completion
    is refused, problems of keys the option only inherits are left to ``[well]``'s message.
    """
    if raw is None:
        return []
    expected = ("one or more [[option]] tables, each with a name and any of "
                f"{', '.join(COMPLETION_KEYS)} (they replace those of [well])")
    if not isinstance(raw, list) or not all(isinstance(o, dict) for o in raw):
        c.add("option", raw, expected)
        return []
    if len(raw) > MAX_OPTIONS:
        c.add("option", raw, f"at most {MAX_OPTIONS} [[option]] tables",
              found_text=f"{len(raw):,} options")
        return []
    out: list[tuple[str, _Completion]] = []
    names: dict[str, int] = {}
    base = {k: w[k] for k in COMPLETION_KEYS if k in w}
    for i, opt in enumerate(raw):
        key = f"option[{i}]"
        before = len(c.problems)
        typo: set[str] = set()
        for k in opt:
            if k not in _OPTION_KEYS:
                if (meant := closest(str(k), _OPTION_KEYS)) is not None:
                    typo.add(meant)
                c.add(f"{key}.{_key_text(k)}", opt[k],
                      f"a known key in [[option]]: {', '.join(_OPTION_KEYS)}"
                      f"{did_you_mean(str(k), _OPTION_KEYS)}"
                      + (" (phasings are given once, in [well])" if k == "phasings" else ""),
                      found_text=f"unknown key {k!r}")
        name = opt.get("name")
        name_expected = (f"a name for the option: a text on one line, at most "
                         f"{MAX_OPTION_NAME_CHARS} characters, without control characters, "
                         'used by no other option, e.g. name = "big-hole charges"')
        if name is None:
            if "name" not in typo:
                c.add(f"{key}.name", None, name_expected,
                      found_text="nothing (the key is missing)")
        else:
            bad = text_problem(f"{key}.name", name, max_chars=MAX_OPTION_NAME_CHARS,
                               what="a name for the option")
            if bad:
                c.problems.append(bad)
            elif not name.strip():
                c.add(f"{key}.name", name, name_expected, found_text=f"the blank name {name!r}")
            elif name.strip().casefold() == "as planned":
                c.add(f"{key}.name", name, 'a name other than "as planned" (the report names '
                      "the [well] completion so)")
            else:
                folded = name.strip().casefold()
                if folded in names:
                    c.add(f"{key}.name", name, f"a name used by no other option (option"
                          f"[{names[folded]}] has it too; names differing only in case or "
                          "surrounding spaces count as the same)")
                names.setdefault(folded, i)
        merged = dict(base)
        if opt.get("completion") == "openhole":
            merged.pop("shot_angles", None)
            merged.pop("tunnel_diameter", None)
        own = {k: opt[k] for k in COMPLETION_KEYS if k in opt}
        merged.update(own)
        switch = ("completion" in opt and opt["completion"] != w.get("completion")
                  and opt["completion"] in COMPLETIONS)
        note = (f" (option[{i}] switches to completion = {opt['completion']!r}: [well] has no "
                "such key to inherit)") if switch else ""
        sub = _Collector()
        completion = _parse_completion(sub, merged, key, units, missing_note=note)
        inherited = set(merged) - set(own)
        for p in sub.problems:
            part = p.key.removeprefix(f"{key}.")
            if part in typo and p.value is None:
                continue  # missing because mistyped: the unknown key's message says so
            if base_ok or part not in inherited:
                c.problems.append(p)
        if completion is not None and len(c.problems) == before:
            out.append((str(name), completion))
    return out


def parse_scenario(doc: Mapping[str, Any], *, source_name: str = "", sha256: str = ""
                   ) -> Scenario:
    """Validate a parsed TOML document and convert it to a :class:`Scenario`.

    Raises
    ------
    ScenarioError
        With every problem found (key, value found, what is expected).
    """
    c = _Collector()
    _check_keys(c, doc, "")
    title = doc.get("title", "")
    bad_title = text_problem("title", title, max_chars=MAX_TITLE_CHARS, what="a title")
    if bad_title:
        c.problems.append(bad_title)
        title = ""
    units = doc.get("units")
    if not isinstance(units, str) or units not in UNIT_SYSTEMS:
        c.add("units", units, 'units = "field" (psi, ft, in, degrees, psi/ft) or "si" '
              "(MPa, m, mm, degrees, kPa/m)"
              + (did_you_mean(units, list(UNIT_SYSTEMS)) if isinstance(units, str) else ""),
              found_text="nothing (the key is missing)" if units is None else None)
        raise ScenarioError(c.problems, source_name)
    conv = TO_INTERNAL[units]
    disp = DISPLAY_UNITS[units]

    sections: dict[str, Mapping[str, Any]] = {}
    for name in ("well", "stress", "rock", "production", "analysis", "correlation"):
        t = doc.get(name, {})
        if not isinstance(t, dict):
            c.add(name, t, f"a table [{name}]")
            t = {}
        elif name not in ("correlation", "analysis") and name not in doc:
            c.add(name, None, f"a [{name}] table", found_text="nothing (the table is missing)")
        else:
            _check_keys(c, t, name)
        sections[name] = t

    # ---- well --------------------------------------------------------------------------------
    w = sections["well"]
    depth = c.number(w, "well", "depth", required=True, check=lambda v: v > 0,
                     expected=f"a true vertical depth > 0 [{disp['length']}]")
    inc = c.number(w, "well", "inclination", required=True, check=lambda v: 0 <= v <= 180,
                   expected="an inclination from vertical in [0, 180] degrees")
    azi = c.number(w, "well", "azimuth", required=False, check=math.isfinite,
                   expected="an azimuth in degrees clockwise from north")
    base_completion = _parse_completion(c, w, "well", units)
    phasings = _parse_phasings(c, w)
    parsed_options = _parse_options(c, doc.get("option"), w, base_completion is not None, units)

    # ---- numeric inputs (stress and rock), each fixed or a distribution --------------------
    inputs: dict[str, Marginal] = {}
    for spec in INPUTS:
        table = sections[spec.section]
        if spec.name not in table:
            continue
        try:
            inputs[spec.name] = parse_input(
                f"{spec.section}.{spec.name}", table[spec.name],
                scale=conv[spec.dimension], bounds=spec.bounds, unit=disp[spec.dimension])
        except ScenarioError as err:
            c.extend(err)
    stress_given: dict[str, str] = {}
    for name in STRESS_NAMES:
        has_abs, has_grad = name in sections["stress"], f"{name}_gradient" in sections["stress"]
        if has_abs and has_grad:
            c.add(f"stress.{name}", sections["stress"][name],
                  f"exactly one of stress.{name} and stress.{name}_gradient",
                  found_text=f"both ({name} = {sections['stress'][name]!r}, {name}_gradient = "
                  f"{sections['stress'][name + '_gradient']!r})")
        elif not (has_abs or has_grad):
            c.add(f"stress.{name}_gradient", None,
                  f"stress.{name} [{disp['pressure']}] or stress.{name}_gradient "
                  f"[{disp['gradient']}]", found_text="neither")
        else:
            stress_given[name] = "absolute" if has_abs else "gradient"
    for spec in INPUTS:
        if spec.required and spec.section in doc and spec.name not in sections[spec.section]:
            c.add(f"{spec.section}.{spec.name}", None,
                  f"the {spec.description} [{disp[spec.dimension]}]",
                  found_text="nothing (the key is missing)")

    # ---- production ---------------------------------------------------------------------------
    pr = sections["production"]
    stages_raw = pr.get("reservoir_pressure")
    stages: tuple[float, ...] = ()
    if is_plain_number(stages_raw):
        stages_raw = [stages_raw]
    if isinstance(stages_raw, dict):
        stages = _stage_rule(c, stages_raw, inputs, stress_given,
                             None if depth is None else depth * conv["length"], units)
    elif (not isinstance(stages_raw, list) or not stages_raw
            or not all(is_plain_number(s) and s > 0 for s in stages_raw)):
        if "production" in doc:
            c.add("production.reservoir_pressure", stages_raw,
                  f"a list of reservoir pressures > 0 [{disp['pressure']}], one per depletion "
                  'stage, or a rule such as { from = "initial", to = 2600, stages = 4 }',
                  found_text="nothing (the key is missing)" if stages_raw is None
                  else None)
    elif len(stages_raw) > MAX_STAGES:
        c.add("production.reservoir_pressure", stages_raw,
              f"at most {MAX_STAGES} depletion stages", found_text=f"{len(stages_raw):,} stages")
    else:
        stages = tuple(float(s) * conv["pressure"] for s in stages_raw)
    max_dd = c.number(pr, "production", "max_drawdown", required="production" in doc,
                      check=lambda v: v > 0,
                      expected=f"the largest drawdown to assess, > 0 [{disp['pressure']}]")
    risk_ = c.number(pr, "production", "accepted_risk", required="production" in doc,
                     check=lambda v: 0 < v < 1,
                     expected="an accepted probability of failure in (0, 1), e.g. 0.1")

    ops: list[tuple[float, float]] = []
    raw_ops = pr.get("operating_points", [])
    if not isinstance(raw_ops, list):
        c.add("production.operating_points", raw_ops,
              f"a list of [reservoir pressure, flowing wall pressure] pairs [{disp['pressure']}] "
              "or tables { reservoir_pressure = ..., drawdown = ... }")
    elif len(raw_ops) > MAX_OPERATING_POINTS:
        c.add("production.operating_points", raw_ops,
              f"at most {MAX_OPERATING_POINTS:,} operating points",
              found_text=f"{len(raw_ops):,} operating points")
    else:
        for i, op in enumerate(raw_ops):
            if isinstance(op, dict):
                point = _operating_point(c, op, f"production.operating_points[{i}]", units)
                if point is not None:
                    ops.append(point)
            elif (isinstance(op, list) and len(op) == 2
                    and all(is_plain_number(v) and v >= 0 for v in op)
                    and op[1] <= op[0]):
                ops.append((float(op[0]) * conv["pressure"], float(op[1]) * conv["pressure"]))
            else:
                c.add(f"production.operating_points[{i}]", op,
                      "[reservoir pressure, flowing wall pressure] with 0 <= wall pressure <= "
                      f"reservoir pressure [{disp['pressure']}], or a table "
                      "{ reservoir_pressure = ..., drawdown = ... } (or wall_pressure = ...)")

    # ---- analysis -----------------------------------------------------------------------------
    an = sections["analysis"]
    criterion = an.get("criterion", "mohr-coulomb")
    if not isinstance(criterion, str) or criterion not in CRITERIA:
        names = sorted(CRITERIA)
        c.add("analysis.criterion", criterion, "one of " + ", ".join(names)
              + (did_you_mean(criterion, names) if isinstance(criterion, str) else ""))
    samples = c.number(an, "analysis", "samples", required=False, integer=True,
                       check=lambda v: 1 <= v <= MAX_SAMPLES,
                       expected=f"a whole number of samples from 1 to {MAX_SAMPLES:,}")
    seed = c.number(an, "analysis", "seed", required=False, integer=True,
                    check=lambda v: 0 <= v < 2**63,
                    expected="a whole number >= 0 (the random seed)")
    sampling = an.get("sampling", "sobol")
    if not isinstance(sampling, str) or sampling not in RULES:
        c.add("analysis.sampling", sampling, "one of " + ", ".join(RULES)
              + (did_you_mean(sampling, list(RULES))
                 if isinstance(sampling, str) else ""))
    cavity = an.get("effective_strength_cavity", "tunnel")
    if not isinstance(cavity, str) or cavity not in ("tunnel", "tip"):
        c.add("analysis.effective_strength_cavity", cavity,
              '"tunnel" (cylindrical tunnel or open-hole wall) or "tip" (spherical perforation '
              "tip)")
    if criterion == "hoek-brown" and "hb_mi" not in inputs and "hb_mi" not in sections["rock"]:
        c.add("rock.hb_mi", None, "the Hoek-Brown m_i of the intact rock (needed by "
              'criterion = "hoek-brown")', found_text="nothing (the key is missing)")

    _mechanism_inputs(c, sections, disp)

    # ---- correlation ---------------------------------------------------------------------------
    corr: list[tuple[str, str, float]] = []
    pairs = sections["correlation"].get("pairs", [])
    n_uncertain = _uncertain_count(sections)
    most_pairs = n_uncertain * (n_uncertain - 1) // 2
    if not isinstance(pairs, list):
        c.add("correlation.pairs", pairs, 'a list like [["ucs", "friction_angle", 0.5]]')
    elif len(pairs) > max(most_pairs, 1):
        c.add("correlation.pairs", pairs,
              f"at most {most_pairs:,} pair{'s' if most_pairs > 1 else ''}: each pair of the "
              f"{n_uncertain} uncertain inputs at most once" if n_uncertain > 1 else
              f"no pairs: the scenario has {n_uncertain} uncertain input"
              f"{'' if n_uncertain == 1 else 's'}, and only uncertain inputs can be correlated",
              found_text=f"{len(pairs):,} pairs")
    else:
        for i, pair in enumerate(pairs):
            if (not isinstance(pair, list) or len(pair) != 3 or not isinstance(pair[0], str)
                    or not isinstance(pair[1], str) or not isinstance(pair[2], int | float)
                    or isinstance(pair[2], bool) or not is_real(pair[2])):
                c.add(f"correlation.pairs[{i}]", pair,
                      '[name, name, rank correlation], e.g. ["ucs", "friction_angle", 0.5]')
            else:
                corr.append((pair[0], pair[1], float(pair[2])))

    # ---- cross checks on the physics (central values) -------------------------------------
    if not c.problems and depth is not None:
        _physics_checks(c, inputs, stress_given, depth * conv["length"], stages, disp, units,
                        tuple(ops))
        _strength_checks(c, inputs, disp, units)
    if not c.problems and not stages:  # a rule whose start could not be resolved
        c.add("production.reservoir_pressure", stages_raw,
              "depletion stages that can be worked out (a list, or a rule from a known "
              "initial pore pressure)")
    if c.problems:
        raise ScenarioError(c.problems, source_name)

    assert depth is not None and inc is not None and max_dd is not None and risk_ is not None
    assert base_completion is not None
    well = Well(
        depth=depth * conv["length"], inclination=inc * conv["angle"],
        azimuth=(azi or 0.0) * conv["angle"], completion=base_completion.completion,
        shot_angles=base_completion.shot_angles,
        tunnel_diameter=base_completion.tunnel_diameter,
        hole_diameter=base_completion.hole_diameter,
    )
    options = tuple(
        CompletionOption(name, dataclasses.replace(
            well, completion=o.completion, shot_angles=o.shot_angles,
            tunnel_diameter=o.tunnel_diameter, hole_diameter=o.hole_diameter))
        for name, o in parsed_options)
    scenario = Scenario(
        title=title or visible(Path(source_name).stem), units=units, well=well, inputs=inputs,
        stress_given=stress_given, reservoir_pressure=stages,
        max_drawdown=max_dd * conv["pressure"], accepted_risk=risk_,
        criterion=str(criterion), effective_strength_cavity=str(cavity),
        samples=int(samples) if samples is not None else 20_000,
        seed=int(seed) if seed is not None else 1, sampling=str(sampling),
        correlation=tuple(corr), operating_points=tuple(ops), source_name=source_name,
        sha256=sha256, raw=dict(doc),
        warnings=_input_warnings(sections, inputs, stress_given, depth * conv["length"],
                                 stages, max_dd * conv["pressure"], str(criterion), units)
        + _option_warnings(w, well, options),
        options=options, phasings=phasings,
    )
    _cavity_checks(scenario)
    if corr:
        from risk.uncertainty import build_joint  # validates names, range and definiteness

        names = list(scenario.inputs)
        try:
            build_joint(names, [scenario.inputs[n] for n in names], [list(p) for p in corr])
        except ScenarioError as err:
            raise ScenarioError(err.problems, source_name) from None
    return scenario


#: Inputs that switch a mechanism on, and the inputs it then needs.
MECHANISM_INPUTS: Final[dict[str, tuple[tuple[str, ...], tuple[str, ...]]]] = {
    "effective_strength_onset": (("twc", "twc_ratio"), ()),
    "tunnel_collapse": (("critical_plastic_strain",), ("young_modulus", "drainage_radius")),
    "pore_collapse": (("pore_collapse_pressure",), ()),
}


def _given(sections: Mapping[str, Mapping[str, Any]], name: str) -> bool:
    return name in sections.get(INPUT_SPECS[name].section, {})


def _mechanism_inputs(c: _Collector, sections: Mapping[str, Mapping[str, Any]],
                      disp: Mapping[str, str]) -> None:
    """A mechanism runs when its switching input is given; then its other inputs are needed."""
    if _given(sections, "twc") and _given(sections, "twc_ratio"):
        c.add("rock.twc", sections["rock"]["twc"], "exactly one of rock.twc and rock.twc_ratio",
              found_text="both")
    for _mech, (switches, needs) in MECHANISM_INPUTS.items():
        if any(_given(sections, k) for k in switches):
            for k in needs:
                if not _given(sections, k):
                    spec = INPUT_SPECS[k]
                    c.add(f"{spec.section}.{k}", None,
                          f"the {spec.description} [{disp[spec.dimension]}], needed with "
                          f"{' or '.join(switches)}", found_text="nothing (the key is missing)")
    if _given(sections, "twc_factor") and not (_given(sections, "twc")
                                               or _given(sections, "twc_ratio")):
        c.add("rock.twc_factor", sections["rock"]["twc_factor"],
              "rock.twc or rock.twc_ratio as well (the factor multiplies TWC)",
              found_text="twc_factor without twc")


def _cavity_checks(sc: Scenario) -> None:
    """Tunnel collapse needs a cavity radius below the drainage radius, for [well] and for
    every [[option]] (named ``option[i].<key>``)."""
    if "critical_plastic_strain" not in sc.inputs:
        return
    disp = DISPLAY_UNITS[sc.units]
    length = TO_INTERNAL[sc.units]["length"]
    m = sc.inputs["drainage_radius"]
    low = m.value if m.is_fixed else m.quantile(1e-6)
    shown = f"{low / length:.4g} {disp['length']}"
    problems: list[Problem] = []
    widest: tuple[float, str] | None = None
    wells = [("well", sc.well)] + [(f"option[{i}]", o.well) for i, o in enumerate(sc.options)]
    for prefix, w in wells:
        if w.completion == "openhole" and w.hole_diameter is None:
            problems.append(Problem(
                f"{prefix}.hole_diameter", None,
                f"the hole diameter [{disp['small_length']}] (tunnel collapse of an open hole)",
                found_text="nothing (the key is missing)"))
            continue
        diameter = w.tunnel_diameter if w.completion == "perforated" else w.hole_diameter
        r_w = 0.5 * (diameter or 0.0)
        if not low > 1.01 * r_w and (widest is None or r_w > widest[0]):
            widest = (r_w, prefix)
    if widest is not None:  # one message, for the widest cavity the drainage radius misses
        r_w, prefix = widest
        problems.append(Problem(
            "production.drainage_radius", shown,
            f"a drainage radius above the cavity radius ({r_w / length:.4g} "
            f"{disp['length']}{'' if prefix == 'well' else ', of ' + prefix}) for every "
            "sample", found_text=shown + (" (fixed)" if m.is_fixed else " at its 1e-6 quantile")))
    if problems:
        raise ScenarioError(problems, sc.source_name)


def mechanisms_of(scenario: Scenario) -> tuple[str, ...]:
    """The mechanisms a scenario's inputs switch on (yield onset always)."""
    out = ["yield_onset"]
    for mech, (switches, _) in MECHANISM_INPUTS.items():
        if any(k in scenario.inputs for k in switches):
            out.append(mech)
    return tuple(out)


def _central(name: str, inputs: Mapping[str, Marginal], given: Mapping[str, str],
             depth: float, disp: Mapping[str, str], units: str
             ) -> tuple[str, float, str] | None:
    """(key, central stress at depth [MPa], the value as written with its unit) of one of
    sv, shmax, shmin, pp: its median (its value when fixed), or None when it is not given."""
    conv = TO_INTERNAL[units]
    key = name if given.get(name) == "absolute" else f"{name}_gradient"
    m = inputs.get(key)
    if m is None:
        return None
    v = m.median if not m.is_fixed else m.value
    dim = "pressure" if key == name else "gradient"
    written = (f"{v / conv[dim]:.6g} {disp[dim]}" + ("" if m.is_fixed else " (median)"))
    return key, (v if key == name else v * depth), written


def _physics_checks(c: _Collector, inputs: Mapping[str, Marginal], given: Mapping[str, str],
                    depth: float, stages: tuple[float, ...], disp: Mapping[str, str],
                    units: str, ops: tuple[tuple[float, float], ...] = ()) -> None:
    """Checks that need several inputs together, on their medians (fixed values)."""
    conv = TO_INTERNAL[units]

    def central(name: str) -> tuple[str, float, str] | None:
        return _central(name, inputs, given, depth, disp, units)

    sv, pp = central("sv"), central("pp")
    sh, sH = central("shmin"), central("shmax")

    def show(v: float) -> str:
        return f"{v / conv['pressure']:.6g} {disp['pressure']}"

    def found(x: tuple[str, float, str]) -> str:
        if x[0].endswith("_gradient"):
            return f"{x[2]}, i.e. {show(x[1])} at the interval depth"
        return x[2]

    if sv and pp and pp[1] >= sv[1]:
        c.add(f"stress.{pp[0]}", found(pp),
              f"an initial pore pressure below the overburden stress ({found(sv)})",
              found_text=found(pp))
    if sh and sH and sh[1] > sH[1] * (1 + 1e-12):
        c.add(f"stress.{sh[0]}", found(sh),
              f"Shmin <= SHmax ({found(sH)}); swap them or check the azimuth",
              found_text=found(sh))
    if sh and pp and sh[1] <= pp[1]:
        c.add(f"stress.{sh[0]}", found(sh),
              f"Shmin above the initial pore pressure ({found(pp)}); otherwise the rock "
              "would be fracturing", found_text=found(sh))
    if sv:
        for i, st_ in enumerate(stages):
            if st_ >= sv[1]:
                c.add(f"production.reservoir_pressure[{i}]", show(st_),
                      f"a reservoir pressure below the overburden stress ({found(sv)})",
                      found_text=show(st_))
        for i, (op_r, op_w) in enumerate(ops):
            if op_r >= sv[1]:
                c.add(f"production.operating_points[{i}]", show(op_r),
                      "[reservoir pressure, flowing wall pressure] with the reservoir pressure "
                      f"below the overburden stress ({found(sv)})",
                      found_text=f"[{show(op_r)}, {show(op_w)}]")


def _strength_checks(c: _Collector, inputs: Mapping[str, Marginal], disp: Mapping[str, str],
                     units: str) -> None:
    """Rock constants that must keep an order between them.

    Rules (derived; a geomechanical reading of each is in the message):

    - tensile strength <= UCS, on the central values (median, or the value when fixed): the
      models evaluate any sample, so a wide overlap of the two ranges is accepted; a central
      tensile strength above the UCS is a unit or typing error.
    - dilation angle <= friction angle, on the central values always (associated flow, psi =
      phi, is the upper limit of plastic dilatancy); with tunnel collapse on, also in every
      sample, because the cavity model cannot evaluate a sample with psi > phi (the run would
      stop). The Gaussian copula of the run puts positive probability on every region where
      both ranges overlap whatever the correlation (|rho| < 1), so the rule is on the ranges:
      the 1 - PAIR_TAIL/2 quantile of psi must not exceed the PAIR_TAIL/2 quantile of phi,
      which bounds P(psi > phi) per sample by PAIR_TAIL (union bound). Bounded distributions
      (uniform, triangular, pert, truncnormal with low/high) whose ranges do not overlap always
      pass; a normal friction angle a dozen standard deviations above a fixed dilation angle
      passes too. Nothing is clipped.
    """
    conv = TO_INTERNAL[units]
    deg = disp["angle"]

    def central(m: Marginal) -> float:
        return m.value if m.is_fixed else m.median

    def written(m: Marginal, dim: str) -> str:
        v = f"{central(m) / conv[dim]:.6g} {disp[dim]}"
        return v if m.is_fixed else f"{v} (median)"

    ucs, t0 = inputs.get("ucs"), inputs.get("tensile_strength")
    if ucs is not None and t0 is not None and central(t0) > central(ucs):
        c.add("rock.tensile_strength", written(t0, "pressure"),
              f"a tensile strength at most the UCS ({written(ucs, 'pressure')}); one above it "
              "is usually a unit or typing error",
              found_text=written(t0, "pressure"))
    psi, phi = inputs.get("dilation_angle"), inputs.get("friction_angle")
    if psi is None or phi is None:
        return
    if central(psi) > central(phi):
        c.add("rock.dilation_angle", written(psi, "angle"),
              f"a dilation angle at most the friction angle ({written(phi, 'angle')}); "
              "associated flow (dilation = friction) is the upper limit",
              found_text=written(psi, "angle"))
    elif "critical_plastic_strain" in inputs:
        top = psi.value if psi.is_fixed else psi.quantile(1.0 - 0.5 * PAIR_TAIL)
        bottom = phi.value if phi.is_fixed else phi.quantile(0.5 * PAIR_TAIL)
        if top > bottom:
            where = f"its {0.5 * PAIR_TAIL:g} quantile"
            c.add("rock.dilation_angle", psi.describe(conv["angle"], deg),
                  "a dilation angle at most the friction angle in every sample, as tunnel "
                  "collapse needs: ranges that do not overlap (e.g. a truncnormal, uniform or "
                  "pert friction angle whose low end is above the largest dilation angle)",
                  found_text=f"dilation angle up to {top / conv['angle']:.4g} {deg}"
                  + ("" if psi.is_fixed else f" (its 1 - {0.5 * PAIR_TAIL:g} quantile)")
                  + f" and friction angle down to {bottom / conv['angle']:.4g} {deg}"
                  + ("" if phi.is_fixed else f" ({where})"))


def _uncertain_count(sections: Mapping[str, Mapping[str, Any]]) -> int:
    """How many inputs the file gives as a distribution other than fixed (before parsing)."""
    n = 0
    for spec in INPUTS:
        raw = sections.get(spec.section, {}).get(spec.name)
        if isinstance(raw, Mapping) and raw.get("dist") != "fixed":
            n += 1
    return n


def _input_warnings(sections: Mapping[str, Mapping[str, Any]], inputs: Mapping[str, Marginal],
                    given: Mapping[str, str], depth: float, stages: tuple[float, ...],
                    max_drawdown: float, criterion: str, units: str) -> tuple[str, ...]:
    """Inputs that are accepted but look unintended: one text each, starting with the key."""
    disp, conv = DISPLAY_UNITS[units], TO_INTERNAL[units]
    out: list[str] = []

    def show(v: float) -> str:
        return f"{v / conv['pressure']:.6g} {disp['pressure']}"

    if criterion != "hoek-brown":
        for name in ("hb_mi", "gsi"):
            if name in inputs:
                out.append(f"rock.{name}: given, but criterion = {criterion!r} does not use it "
                           "(only \"hoek-brown\" does); it is ignored")
    if "critical_plastic_strain" not in inputs:
        for name in ("young_modulus", "dilation_angle", "drainage_radius"):
            if name in inputs:
                out.append(f"{INPUT_SPECS[name].section}.{name}: given, but only tunnel "
                           "collapse uses it and tunnel collapse is off (no "
                           "rock.critical_plastic_strain); it is ignored")
    if ("effective_strength_cavity" in sections.get("analysis", {})
            and "twc" not in inputs and "twc_ratio" not in inputs):
        out.append("analysis.effective_strength_cavity: given, but only the effective-strength "
                   "onset uses it and that mechanism is off (no rock.twc or rock.twc_ratio); "
                   "it is ignored")
    pp = _central("pp", inputs, given, depth, disp, units)
    if pp is not None:
        for i, p_r in enumerate(stages):
            # 1% leaves room for a first stage written as the rounded initial pore pressure
            # (3 significant digits round by up to 0.5%)
            if p_r > pp[1] * (1 + STAGE_ABOVE_PP):
                out.append(f"production.reservoir_pressure[{i}]: {show(p_r)} is more than "
                           f"{STAGE_ABOVE_PP:.0%} above the initial pore pressure "
                           f"({show(pp[1])}); the stage is computed as a pressure rise (the "
                           "depletion path followed backwards)")
    seen: dict[float, int] = {}
    for i, p_r in enumerate(stages):
        if p_r in seen:
            out.append(f"production.reservoir_pressure[{i}]: {show(p_r)} repeats stage "
                       f"[{seen[p_r]}]; it is computed and reported twice")
        seen.setdefault(p_r, i)
    if stages and max_drawdown > max(stages):
        out.append(f"production.max_drawdown: {show(max_drawdown)} is above the reservoir "
                   f"pressure of every stage (largest {show(max(stages))}); a drawdown cannot "
                   "exceed the reservoir pressure, so the failure curves are flat beyond it")
    return tuple(out)


def _option_warnings(w: Mapping[str, Any], well: Well, options: tuple[CompletionOption, ...]
                     ) -> tuple[str, ...]:
    """Phasings no well can use, and options that repeat [well] or another option."""
    out: list[str] = []
    if "phasings" in w and all(x.completion == "openhole"
                               for x in (well, *(o.well for o in options))):
        out.append("well.phasings: given, but no completion of the scenario is perforated "
                   '(completion = "openhole"' + (" in [well] and every [[option]]"
                                                  if options else "")
                   + "); gun phasings are ignored")
    for i, o in enumerate(options):
        if o.well == well:
            out.append(f"option[{i}]: the same completion as [well]; it is computed and "
                       "reported as a separate option")
            continue
        for j in range(i):
            if options[j].well == o.well:
                out.append(f"option[{i}]: the same completion as option[{j}]; it is computed "
                           "and reported twice")
                break
    return tuple(out)


def load_scenario(path: str | Path) -> Scenario:
    """Read and validate a scenario file.

    Raises
    ------
    ScenarioError
        For a missing or unreadable file, a folder, a file that is not UTF-8 TOML (with line
        and column), and every problem :func:`parse_scenario` finds.
    """
    p = Path(path)
    name = str(path)
    if not p.exists():
        raise ScenarioError.single("scenario", name, "an existing scenario file (.toml)",
                                   found_text=f"no file at {name!r}")
    if p.is_dir():
        raise ScenarioError.single("scenario", name, "a scenario file, not a folder",
                                   found_text=f"the folder {name!r}")
    try:
        with p.open("rb") as f:  # at most one byte more than allowed, whatever the file is
            data = f.read(MAX_FILE_BYTES + 1)
    except OSError as exc:
        raise ScenarioError.single("scenario", name, "a readable file",
                                   found_text=f"{name!r} ({exc.strerror})") from None
    if len(data) > MAX_FILE_BYTES:
        size = p.stat().st_size if p.is_file() else 0
        raise ScenarioError.single(
            "scenario", name, f"a scenario file of at most {MAX_FILE_BYTES:,} bytes (1 MiB; a "
            "scenario is a few kB)", found_text=f"{name!r}, a file of "
            + (f"{size:,} bytes" if size > MAX_FILE_BYTES else
               f"more than {MAX_FILE_BYTES:,} bytes"))
    if not data.strip():
        raise ScenarioError.single("scenario", name, "a TOML scenario (see `risk new`)",
                                   found_text="an empty file")
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise ScenarioError.single("scenario", name, "a UTF-8 text file in TOML",
                                   found_text=f"binary or non-UTF-8 content (byte "
                                   f"{exc.start})") from None
    if text.startswith("\ufeff"):
        text = text[1:]  # a UTF-8 byte-order mark, as some editors write
    if "\x00" in text:
        raise ScenarioError.single("scenario", name, "a UTF-8 text file in TOML",
                                   found_text="binary content (NUL bytes)")
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ScenarioError.single("scenario", name, "valid TOML",
                                   found_text=f"a syntax error: {exc}") from None
    except RecursionError:
        raise ScenarioError.single("scenario", name, "a TOML scenario of sensible depth",
                                   found_text="arrays or tables nested too deeply to read"
                                   ) from None
    sha = hashlib.sha256(data).hexdigest()
    return parse_scenario(doc, source_name=name, sha256=sha)
