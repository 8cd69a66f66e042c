"""Field sanding history in a scenario: ``[[history]]``, ``[calibration]``, ``[[measurement]]``.

Each ``[[history]]`` table is one observation of an offset well or of this well earlier in
life: the reservoir pressure (or the depletion from the initial pore pressure), the drawdown
(or the flowing wall pressure) and what happened::

    [[history]]
    name = "R-3, 2019 rate test"
    reservoir_pressure = 3300        # or depletion = 150
    outcome = "no_sand"              # "onset" | "no_sand" (censored) | "onset_between"
    drawdown = 900                   # or wall_pressure = 2400; onset_between: drawdown_low/high
    weight = 1.0                     # confidence in (0, 1]: the likelihood is raised to it
    source = "well test report"
    overrides = { depth = 7700, shmin_gradient = 0.73, shot_angles = [0, 180] }

``overrides`` replaces keys of ``[well]`` (depth, inclination, azimuth and the completion keys)
and any numeric input (a number or a distribution) for that observation only: offset wells
differ in depth, stresses and completion.

``[calibration]`` says which inputs the history informs (``inputs``; default the uncertain
model-calibration inputs ``twc_factor``, ``critical_plastic_strain`` and
``strength_multiplier``), the model error
(``model_error``, the standard deviation of the log critical drawdown, default
:data:`DEFAULT_MODEL_ERROR`) and the method (``"auto"``, ``"reweight"`` or ``"mcmc"``).
``[[measurement]]`` names a measurement whose value of information is wanted: ``input``, and
``error`` (standard deviation, the input's unit) or ``relative_error`` (a fraction).

Everything is parsed into frozen dataclasses in internal units; every problem is gathered and
raised as one :class:`~risk.errors.ScenarioError` naming the observation and the key.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Final

from risk.conventions import DISPLAY_UNITS, TO_INTERNAL
from risk.errors import ScenarioError, did_you_mean, toml_key
from risk.uncertainty import Marginal, is_plain_number, parse_input, text_problem

if TYPE_CHECKING:  # pragma: no cover
    from risk.scenario.model import Scenario, Well

__all__ = ["Observation", "Measurement", "CalibrationSpec", "History", "OUTCOMES",
           "DEFAULT_MODEL_ERROR", "DEFAULT_CALIBRATED", "parse_history", "HISTORY_SECTIONS"]

OUTCOMES: Final = ("onset", "no_sand", "onset_between")
#: Default standard deviation of the model error on the log critical drawdown [-]: a factor
#: exp(0.3) = 1.35 either way at one standard deviation (a stated modelling choice, not a
#: published constant; the memo states it).
DEFAULT_MODEL_ERROR: Final = 0.3
#: Inputs calibrated by default when uncertain: the model-calibration constants.
DEFAULT_CALIBRATED: Final = ("twc_factor", "critical_plastic_strain", "strength_multiplier")
METHODS: Final = ("auto", "reweight", "mcmc")
MAX_OBSERVATIONS: Final = 200
MAX_MEASUREMENTS: Final = 50
#: Top-level tables this module reads (the scenario's key check allows them).
HISTORY_SECTIONS: Final = ("history", "calibration", "measurement")
_WELL_KEYS: Final = ("depth", "inclination", "azimuth", "completion", "shot_angles",
                     "tunnel_diameter", "hole_diameter")
_OBS_KEYS: Final = ("name", "reservoir_pressure", "depletion", "outcome", "drawdown",
                    "wall_pressure", "drawdown_low", "drawdown_high", "weight", "source",
                    "overrides")
_CAL_KEYS: Final = ("inputs", "model_error", "method", "min_ess", "mcmc_steps")
_MEAS_KEYS: Final = ("name", "input", "error", "relative_error", "source")


@dataclass(frozen=True)
class Observation:
    """One field observation (internal units: MPa, m, rad).

    outcome : "onset" (sand onset at ``drawdown``), "no_sand" (no sand up to ``drawdown``: a
        right-censored observation) or "onset_between" (onset in ``(low, high]``)
    drawdown : [MPa] for "onset" and "no_sand"; low, high [MPa] for "onset_between"
    weight : confidence in (0, 1] [-], the exponent of the observation's likelihood
    scenario : the scenario of the observation (one stage at its reservoir pressure, the well
        and inputs overridden)
    overridden : names of the keys the observation overrides
    """

    name: str
    reservoir_pressure: float
    outcome: str
    drawdown: float
    low: float
    high: float
    weight: float
    source: str
    scenario: Scenario
    overridden: tuple[str, ...] = ()


@dataclass(frozen=True)
class Measurement:
    """A measurement of one input: ``error`` the standard deviation [internal unit] or
    ``relative_error`` [-] of the measured value (both 0: a perfect measurement)."""

    name: str
    input: str
    error: float = 0.0
    relative_error: float = 0.0
    source: str = ""


@dataclass(frozen=True)
class CalibrationSpec:
    """``[calibration]``: the inputs the history informs, model error, method."""

    inputs: tuple[str, ...]
    model_error: float
    method: str = "auto"
    min_ess: int = 200
    mcmc_steps: int = 1000


@dataclass(frozen=True)
class History:
    """What a scenario says about field history and measurements."""

    observations: tuple[Observation, ...]
    calibration: CalibrationSpec | None
    measurements: tuple[Measurement, ...]


class _Problems:
    def __init__(self) -> None:
        self.items: list[Any] = []

    def add(self, key: str, value: Any, expected: str, found_text: str | None = None) -> None:
        from risk.errors import Problem

        self.items.append(Problem(key, value, expected, found_text))


def _number(p: _Problems, t: Mapping[str, Any], prefix: str, key: str, expected: str,
            check: Any = None, required: bool = False) -> float | None:
    if key not in t:
        if required:
            p.add(f"{prefix}.{key}", None, expected, found_text="nothing (the key is missing)")
        return None
    v = t[key]
    if not is_plain_number(v) or not math.isfinite(float(v)) or (
            check is not None and not check(float(v))):
        p.add(f"{prefix}.{key}", v, expected)
        return None
    return float(v)


def _text(p: _Problems, t: Mapping[str, Any], prefix: str, key: str, default: str) -> str:
    v = t.get(key, default)
    bad = text_problem(f"{prefix}.{key}", v, max_chars=200, what="a one-line text")
    if bad:
        p.items.append(bad)
        return default
    return str(v)


def _unknown(p: _Problems, t: Mapping[str, Any], prefix: str, allowed: tuple[str, ...]) -> None:
    for k in t:
        if k not in allowed:
            p.add(f"{prefix}.{toml_key(k)}", t[k], f"a known key: {', '.join(allowed)}"
                  + did_you_mean(str(k), allowed), found_text=f"unknown key {k!r}")


def _calibration(p: _Problems, raw: Any, scenario: Scenario) -> CalibrationSpec:
    from risk.scenario.schema import INPUT_SPECS

    t = raw if isinstance(raw, dict) else {}
    if raw is not None and not isinstance(raw, dict):
        p.add("calibration", raw, "a table [calibration]")
    _unknown(p, t, "calibration", _CAL_KEYS)
    uncertain = scenario.uncertain_names
    names: tuple[str, ...]
    if "inputs" in t:
        v = t["inputs"]
        if not isinstance(v, list) or not v or not all(isinstance(x, str) for x in v):
            p.add("calibration.inputs", v, 'a non-empty list of input names, e.g. '
                  '["twc_factor", "ucs"]')
            names = ()
        else:
            names = tuple(v)
            for x in names:
                if x not in INPUT_SPECS:
                    p.add("calibration.inputs", x, "names of scenario inputs"
                          + did_you_mean(x, list(INPUT_SPECS)), found_text=f"unknown input {x!r}")
                elif x not in uncertain:
                    p.add("calibration.inputs", x, "inputs the scenario gives a distribution "
                          "(a fixed input has nothing to update)",
                          found_text=f"{x!r}, which is fixed or not given")
            if len(set(names)) != len(names):
                p.add("calibration.inputs", v, "each input at most once")
            if len(names) > 5:
                p.add("calibration.inputs", v, "at most 5 calibrated inputs",
                      found_text=f"{len(names)} inputs")
    else:
        names = tuple(n for n in DEFAULT_CALIBRATED if n in uncertain)
    sigma = _number(p, t, "calibration", "model_error",
                    "the standard deviation of the model error on the log critical drawdown, "
                    "in (0, 2] (0.3: a factor 1.35 at one standard deviation)",
                    check=lambda v: 0 < v <= 2) or DEFAULT_MODEL_ERROR
    method = t.get("method", "auto")
    if not isinstance(method, str) or method not in METHODS:
        p.add("calibration.method", method, "one of " + ", ".join(METHODS)
              + (did_you_mean(method, METHODS) if isinstance(method, str) else ""))
        method = "auto"
    min_ess = _number(p, t, "calibration", "min_ess", "a whole number of samples from 10 to "
                      "100,000", check=lambda v: v == int(v) and 10 <= v <= 100_000)
    steps = _number(p, t, "calibration", "mcmc_steps", "a whole number of steps per walker "
                    "from 100 to 20,000", check=lambda v: v == int(v) and 100 <= v <= 20_000)
    corr_out = [(a, b) for a, b, _ in scenario.correlation
                if (a in names) != (b in names) and a in uncertain and b in uncertain]
    for a, b in corr_out:
        p.add("correlation.pairs", [a, b, {(x, y): r for x, y, r in
                                             scenario.correlation}[(a, b)]],
              "no correlation between a calibrated input and one that is not (the history "
              "updates the calibrated inputs; the others vary from well to well): calibrate "
              "both or neither", found_text=f"{a!r} and {b!r} correlated")
    return CalibrationSpec(names, float(sigma), str(method),
                           int(min_ess) if min_ess is not None else 200,
                           int(steps) if steps is not None else 1000)


def _overrides(p: _Problems, raw: Any, prefix: str, scenario: Scenario, calibrated: set[str]
               ) -> tuple[Scenario | None, tuple[str, ...]]:
    """The scenario of one observation with its overrides applied (None on a problem)."""
    from risk.scenario.collector import _Collector
    from risk.scenario.schema import INPUT_SPECS
    from risk.scenario.tables import _parse_completion

    if raw is None:
        return scenario, ()
    if not isinstance(raw, dict):
        p.add(prefix, raw, "a table of overridden keys, e.g. { depth = 7700, shmin_gradient = "
              "0.73 }")
        return None, ()
    units = scenario.units
    conv, disp = TO_INTERNAL[units], DISPLAY_UNITS[units]
    allowed = (*_WELL_KEYS, *INPUT_SPECS)
    before = len(p.items)
    _unknown(p, raw, prefix, allowed)
    well: Well = scenario.well
    if "depth" in raw:
        v = _number(p, raw, prefix, "depth", f"a true vertical depth > 0 [{disp['length']}]",
                    check=lambda v: v > 0)
        if v is not None:
            well = dataclasses.replace(well, depth=v * conv["length"])
    if "inclination" in raw:
        v = _number(p, raw, prefix, "inclination", "an inclination in [0, 180] degrees",
                    check=lambda v: 0 <= v <= 180)
        if v is not None:
            well = dataclasses.replace(well, inclination=v * conv["angle"])
    if "azimuth" in raw:
        v = _number(p, raw, prefix, "azimuth", "an azimuth in degrees clockwise from north")
        if v is not None:
            well = dataclasses.replace(well, azimuth=v * conv["angle"])
    if any(k in raw for k in ("completion", "shot_angles", "tunnel_diameter", "hole_diameter")):
        merged = dict(scenario.raw.get("well", {}))
        if raw.get("completion", merged.get("completion")) == "openhole":
            merged.pop("shot_angles", None)
            merged.pop("tunnel_diameter", None)
        merged.update({k: raw[k] for k in ("completion", "shot_angles", "tunnel_diameter",
                                           "hole_diameter") if k in raw})
        c = _Collector()
        comp = _parse_completion(c, merged, prefix, units)
        p.items.extend(c.problems)
        if comp is not None:
            well = dataclasses.replace(well, completion=comp.completion,
                                       shot_angles=comp.shot_angles,
                                       tunnel_diameter=comp.tunnel_diameter,
                                       hole_diameter=comp.hole_diameter)
    inputs: dict[str, Marginal] = dict(scenario.inputs)
    given = dict(scenario.stress_given)
    for name in raw:
        spec = INPUT_SPECS.get(name)
        if spec is None:
            continue
        if name in calibrated:
            p.add(f"{prefix}.{name}", raw[name], "no override of a calibrated input (the "
                  "history is what updates it)", found_text=f"an override of {name!r}")
            continue
        try:
            inputs[name] = parse_input(f"{prefix}.{name}", raw[name],
                                       scale=conv[spec.dimension], bounds=spec.bounds,
                                       unit=disp[spec.dimension])
        except ScenarioError as err:
            p.items.extend(err.problems)
            continue
        base = name.removesuffix("_gradient")
        if base in given:
            other = base if name.endswith("_gradient") else f"{base}_gradient"
            inputs.pop(other, None)
            given[base] = "gradient" if name.endswith("_gradient") else "absolute"
    if len(p.items) > before:
        return None, ()
    sc = dataclasses.replace(scenario, well=well, inputs=inputs, stress_given=given,
                             options=(), operating_points=())
    return sc, tuple(str(k) for k in raw)


def _initial_pp(scenario: Scenario) -> float:
    """Median initial pore pressure [MPa] (for observations given as a depletion)."""
    if scenario.stress_given["pp"] == "absolute":
        return scenario.inputs["pp"].median
    return scenario.inputs["pp_gradient"].median * scenario.well.depth


def _observation(p: _Problems, t: Any, i: int, scenario: Scenario, calibrated: set[str]
                 ) -> Observation | None:
    prefix = f"history[{i}]"
    if not isinstance(t, dict):
        p.add(prefix, t, "a table [[history]] with reservoir_pressure, outcome and drawdown")
        return None
    before = len(p.items)
    _unknown(p, t, prefix, _OBS_KEYS)
    name = _text(p, t, prefix, "name", f"history[{i}]")
    if "name" in t:
        prefix = f"history[{i}] ({name!r})"
    disp = DISPLAY_UNITS[scenario.units]["pressure"]
    to_mpa = TO_INTERNAL[scenario.units]["pressure"]
    sc, overridden = _overrides(p, t.get("overrides"), f"{prefix}.overrides", scenario,
                                calibrated)
    p_r = None
    if "reservoir_pressure" in t and "depletion" in t:
        p.add(f"{prefix}.reservoir_pressure", t["reservoir_pressure"],
              "one of reservoir_pressure and depletion", found_text="both")
    elif "depletion" in t:
        dep = _number(p, t, prefix, "depletion", f"a depletion >= 0 from the initial pore "
                      f"pressure [{disp}]", check=lambda v: v >= 0)
        if dep is not None and sc is not None:
            p_r = _initial_pp(sc) - dep * to_mpa
            if p_r <= 0:
                p.add(f"{prefix}.depletion", t["depletion"], "a depletion below the initial "
                      f"pore pressure ({_initial_pp(sc) / to_mpa:.4g} {disp}, median)")
                p_r = None
    else:
        v = _number(p, t, prefix, "reservoir_pressure", f"the reservoir pressure at the time, "
                    f"> 0 [{disp}] (or depletion = ...)", check=lambda v: v > 0, required=True)
        p_r = None if v is None else v * to_mpa
    outcome = t.get("outcome")
    if not isinstance(outcome, str) or outcome not in OUTCOMES:
        p.add(f"{prefix}.outcome", outcome, 'one of "onset" (sand onset at the drawdown), '
              '"no_sand" (no sand up to the drawdown), "onset_between" (onset between '
              'drawdown_low and drawdown_high)'
              + (did_you_mean(outcome, OUTCOMES) if isinstance(outcome, str) else ""),
              found_text="nothing (the key is missing)" if outcome is None else None)
        outcome = None
    d = lo = hi = math.nan
    if outcome in ("onset", "no_sand"):
        if "drawdown" in t and "wall_pressure" in t:
            p.add(f"{prefix}.drawdown", t["drawdown"], "one of drawdown and wall_pressure",
                  found_text="both")
        elif "wall_pressure" in t:
            pw = _number(p, t, prefix, "wall_pressure", f"a flowing wall pressure >= 0 [{disp}]",
                         check=lambda v: v >= 0)
            if pw is not None and p_r is not None:
                d = p_r - pw * to_mpa
                if d <= 0:
                    p.add(f"{prefix}.wall_pressure", t["wall_pressure"],
                          f"a wall pressure below the reservoir pressure "
                          f"({p_r / to_mpa:.6g} {disp})")
        else:
            v = _number(p, t, prefix, "drawdown", f"the drawdown > 0 [{disp}] (or wall_pressure "
                        "= ...)", check=lambda v: v > 0, required=True)
            if v is not None:
                d = v * to_mpa
        if math.isfinite(d) and p_r is not None and d > p_r * (1 + 1e-12):
            key = "drawdown" if "drawdown" in t else "wall_pressure"
            p.add(f"{prefix}.{key}", t.get(key), f"a drawdown at most the reservoir pressure "
                  f"({p_r / to_mpa:.6g} {disp})", found_text=f"a drawdown of {d / to_mpa:.6g} "
                  f"{disp}")
    elif outcome == "onset_between":
        a = _number(p, t, prefix, "drawdown_low", f"the largest drawdown known sand-free, >= 0 "
                    f"[{disp}]", check=lambda v: v >= 0, required=True)
        b = _number(p, t, prefix, "drawdown_high", f"the drawdown by which sand was seen, > 0 "
                    f"[{disp}]", check=lambda v: v > 0, required=True)
        if a is not None and b is not None:
            if b <= a:
                p.add(f"{prefix}.drawdown_high", t["drawdown_high"],
                      f"a drawdown above drawdown_low ({a:g} {disp})")
            elif p_r is not None and b * to_mpa > p_r * (1 + 1e-12):
                p.add(f"{prefix}.drawdown_high", t["drawdown_high"], f"a drawdown at most the "
                      f"reservoir pressure ({p_r / to_mpa:.6g} {disp})")
            lo, hi = a * to_mpa, b * to_mpa
    weight = _number(p, t, prefix, "weight", "a confidence in (0, 1] (1: fully trusted)",
                     check=lambda v: 0 < v <= 1)
    source = _text(p, t, prefix, "source", "")
    if len(p.items) > before or sc is None or p_r is None or outcome is None:
        return None
    obs_sc = dataclasses.replace(sc, reservoir_pressure=(p_r,))
    return Observation(name, p_r, outcome, d, lo, hi, 1.0 if weight is None else weight,
                       source, obs_sc, overridden)


def _measurement(p: _Problems, t: Any, i: int, scenario: Scenario) -> Measurement | None:
    from risk.scenario.schema import INPUT_SPECS

    prefix = f"measurement[{i}]"
    if not isinstance(t, dict):
        p.add(prefix, t, 'a table [[measurement]] with input = "..." and error or '
              "relative_error")
        return None
    before = len(p.items)
    _unknown(p, t, prefix, _MEAS_KEYS)
    name = t.get("input")
    uncertain = scenario.uncertain_names
    if not isinstance(name, str) or name not in uncertain:
        p.add(f"{prefix}.input", name, "an uncertain input of the scenario: "
              + ", ".join(uncertain) + (did_you_mean(name, uncertain)
                                        if isinstance(name, str) else ""),
              found_text="nothing (the key is missing)" if name is None else None)
        name = None
    err = rel = None
    if "error" in t and "relative_error" in t:
        p.add(f"{prefix}.error", t["error"], "one of error and relative_error",
              found_text="both")
    elif "relative_error" in t:
        rel = _number(p, t, prefix, "relative_error", "a relative standard error in [0, 1), "
                      "e.g. 0.06 (15% plug scatter over 6 plugs)", check=lambda v: 0 <= v < 1)
    elif name is not None:
        spec = INPUT_SPECS[name]
        unit = DISPLAY_UNITS[scenario.units][spec.dimension]
        err = _number(p, t, prefix, "error", f"the measurement's standard error >= 0 [{unit}]",
                      check=lambda v: v >= 0)
        if err is not None:
            err *= TO_INTERNAL[scenario.units][spec.dimension]
    label = _text(p, t, prefix, "name", f"measure {name}" if name else prefix)
    source = _text(p, t, prefix, "source", "")
    if len(p.items) > before or name is None:
        return None
    return Measurement(label, name, err or 0.0, rel or 0.0, source)


def parse_history(doc: Mapping[str, Any], scenario: Scenario) -> History | None:
    """The field history and measurements of a scenario document (None when it has none).

    Raises
    ------
    ScenarioError
        With every problem found, each naming its observation (``history[i]`` and its name)
        and key, the value found and what is expected.
    """
    raw_obs, raw_cal, raw_meas = (doc.get(k) for k in HISTORY_SECTIONS)
    if raw_obs is None and raw_cal is None and raw_meas is None:
        return None
    p = _Problems()
    spec = None
    observations: list[Observation] = []
    if raw_obs is not None or raw_cal is not None:
        spec = _calibration(p, raw_cal, scenario)
        if raw_obs is None:
            p.add("history", None, "at least one [[history]] observation for [calibration]",
                  found_text="nothing (no [[history]] table)")
        elif not isinstance(raw_obs, list) or not raw_obs:
            p.add("history", raw_obs, "[[history]] tables, one per observation")
        elif len(raw_obs) > MAX_OBSERVATIONS:
            p.add("history", raw_obs, f"at most {MAX_OBSERVATIONS} observations",
                  found_text=f"{len(raw_obs):,} observations")
        else:
            for i, t in enumerate(raw_obs):
                o = _observation(p, t, i, scenario, set(spec.inputs))
                if o is not None:
                    observations.append(o)
        from risk.scenario.schema import mechanisms_of

        if not {"effective_strength_onset", "tunnel_collapse"} & set(mechanisms_of(scenario)):
            p.add("history", "[[history]]", "a sand-production mechanism to compare the history "
                  "with (rock.twc or rock.twc_ratio; or rock.critical_plastic_strain)",
                  found_text="a history, but no sand-production mechanism")
        if not spec.inputs and not p.items:
            p.add("calibration.inputs", None, "uncertain inputs for the history to inform "
                  "(by default twc_factor, critical_plastic_strain and strength_multiplier, "
                  "when uncertain)",
                  found_text="nothing to calibrate")
    measurements: list[Measurement] = []
    if raw_meas is not None:
        if not isinstance(raw_meas, list) or not raw_meas:
            p.add("measurement", raw_meas, "[[measurement]] tables")
        elif len(raw_meas) > MAX_MEASUREMENTS:
            p.add("measurement", raw_meas, f"at most {MAX_MEASUREMENTS} measurements",
                  found_text=f"{len(raw_meas):,} measurements")
        else:
            for i, t in enumerate(raw_meas):
                m = _measurement(p, t, i, scenario)
                if m is not None:
                    measurements.append(m)
    if p.items:
        raise ScenarioError(p.items, scenario.source_name)
    return History(tuple(observations), spec if observations else None, tuple(measurements))
