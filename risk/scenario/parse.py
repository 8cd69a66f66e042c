"""TOML document -> validated Scenario in internal units (all problems at once)."""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from risk.conventions import DISPLAY_UNITS, TO_INTERNAL, UNIT_SYSTEMS
from risk.errors import ScenarioError, did_you_mean, visible
from risk.mechanics.criteria import CRITERIA
from risk.scenario.checks import (
    _cavity_checks,
    _input_warnings,
    _mechanism_inputs,
    _option_warnings,
    _physics_checks,
    _strength_checks,
    _uncertain_count,
)
from risk.scenario.collector import _check_keys, _Collector
from risk.scenario.model import (
    COMPACTION_CAPS,
    MAX_OPERATING_POINTS,
    MAX_SAMPLES,
    MAX_STAGES,
    MAX_TITLE_CHARS,
    STRESS_NAMES,
    TUNNEL_STRESS,
    CompletionOption,
    Scenario,
    Well,
)
from risk.scenario.schema import INPUTS
from risk.scenario.tables import (
    _operating_point,
    _parse_completion,
    _parse_options,
    _parse_phasings,
    _stage_rule,
)
from risk.uncertainty import (
    RULES,
    Marginal,
    is_plain_number,
    is_real,
    parse_input,
    text_problem,
)


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

    water: tuple[float, ...] = ()
    raw_water = pr.get("water_saturation")
    if raw_water is not None:
        water_expected = ("the rise in water saturation of the near-well rock over the one its "
                          "strength was measured at, a fraction in [0, 1], one per depletion "
                          f"stage ({len(stages)} stage{'s' if len(stages) != 1 else ''}), e.g. "
                          "[0, 0, 0.4]")
        if (not isinstance(raw_water, list) or not raw_water
                or not all(is_plain_number(v) and 0.0 <= v <= 1.0 for v in raw_water)):
            c.add("production.water_saturation", raw_water, water_expected)
        elif stages and len(raw_water) != len(stages):
            c.add("production.water_saturation", raw_water, water_expected,
                  found_text=f"{len(raw_water)} value{'s' if len(raw_water) != 1 else ''}")
        else:
            water = tuple(float(v) for v in raw_water)
        if "wet_strength_ratio" not in sections["rock"]:
            c.add("rock.wet_strength_ratio", None,
                  "the strength of the water-saturated rock over the as-tested one, in (0, 1] "
                  "(needed by production.water_saturation; give a distribution when it is "
                  "uncertain)", found_text="nothing (the key is missing)")

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
    tunnel_stress = an.get("tunnel_stress", TUNNEL_STRESS[0])
    if not isinstance(tunnel_stress, str) or tunnel_stress not in TUNNEL_STRESS:
        c.add("analysis.tunnel_stress", tunnel_stress,
              '"far-field" (a perforation tunnel\'s sanding onset governed by the far-field '
              'stress, the default) or "root-and-far-field" (the worse of the far field and '
              'the wellbore\'s stress field at the tunnel root)'
              + (did_you_mean(tunnel_stress, list(TUNNEL_STRESS))
                 if isinstance(tunnel_stress, str) else ""))
    compaction_cap = an.get("compaction_cap", COMPACTION_CAPS[0])
    if not isinstance(compaction_cap, str) or compaction_cap not in COMPACTION_CAPS:
        c.add("analysis.compaction_cap", compaction_cap,
              '"modified-cam-clay" (pore collapse on a cap in the p\'-q plane through P*, '
              'the default) or "mean-stress" (the mean effective stress reaches P*)'
              + (did_you_mean(compaction_cap, list(COMPACTION_CAPS))
                 if isinstance(compaction_cap, str) else ""))
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
        options=options, phasings=phasings, tunnel_stress=str(tunnel_stress),
        compaction_cap=str(compaction_cap), water_saturation=water,
    )
    _cavity_checks(scenario)
    if corr:
        from risk.uncertainty import build_joint  # validates names, range and definiteness

        names = list(scenario.inputs)
        try:
            build_joint(names, [scenario.inputs[n] for n in names], [list(p) for p in corr])
        except ScenarioError as err:
            raise ScenarioError(err.problems, source_name) from None
    if any(k in doc for k in ("history", "calibration", "measurement")):
        from risk.calibration.history import parse_history

        scenario = dataclasses.replace(scenario, history=parse_history(doc, scenario))
    return scenario
