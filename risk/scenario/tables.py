"""Completion options, gun phasings, stage rules and operating points of a scenario."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from risk.conventions import DISPLAY_UNITS, TO_INTERNAL
from risk.errors import closest, did_you_mean
from risk.scenario.checks import _central
from risk.scenario.collector import _Collector, _key_text
from risk.scenario.model import (
    _OPERATING_POINT_KEYS,
    _OPTION_KEYS,
    _STAGE_RULE_KEYS,
    COMPLETION_KEYS,
    COMPLETIONS,
    DEFAULT_PHASINGS,
    MAX_OPTION_NAME_CHARS,
    MAX_OPTIONS,
    MAX_PHASINGS,
    MAX_SHOTS,
    MAX_STAGES,
    PHASING_TOL,
)
from risk.uncertainty import (
    Marginal,
    is_plain_number,
    text_problem,
)


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
