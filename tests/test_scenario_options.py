"""Issue 12, input side: completion options, gun phasings, depletion stages by rule, operating
points by drawdown, and ``risk check`` at 80 columns.

Every case is the valid field test document (tests/conftest.py FIELD_DOC, the fictional
Ravenmoor test well) with one change. Refusals of single defects are in tests/data/bad/; here
are the accepted forms, what they are stored as, and the rules that need several cases.
"""

from __future__ import annotations

import math
import re
import tomllib
from typing import Any

import pytest
from rich.console import Console
from typer.testing import CliRunner

from risk.cli import app
from risk.conventions import PSI_TO_MPA
from risk.decision import COMMON_PHASINGS
from risk.errors import ScenarioError
from risk.report.console import angle_reference, print_scenario
from risk.scenario import (
    DEFAULT_PHASINGS,
    INPUTS,
    MAX_OPTIONS,
    CompletionOption,
    Scenario,
    parse_scenario,
)
from risk.template import scenario_template
from tests.conftest import FIELD_DOC

RUNNER = CliRunner()
SPEC = {spec.name: spec for spec in INPUTS}
PERF = ('completion = "perforated"\nshot_angles = [0, 60, 120, 180, 240, 300]\n'
        "tunnel_diameter = 0.5\n")
OPENHOLE_DOC = FIELD_DOC.replace(PERF, 'completion = "openhole"\nhole_diameter = 8.5\n')
COLLAPSE = ("biot = 0.9\nyoung_modulus = 1.0e6\ncritical_plastic_strain = 0.02\n",
            "accepted_risk = 0.10\ndrainage_radius = 1.0\n")


def _load(text: str) -> Scenario:
    return parse_scenario(tomllib.loads(text))


def _problems(text: str) -> list[tuple[str, str]]:
    with pytest.raises(ScenarioError) as ei:
        _load(text)
    return [(p.key, str(p)) for p in ei.value.problems]


def _stages(rule: str, doc: str = FIELD_DOC) -> list[float]:
    sc = _load(doc.replace("reservoir_pressure = [4140, 3800, 3400]",
                           f"reservoir_pressure = {rule}"))
    return [p / PSI_TO_MPA for p in sc.reservoir_pressure]


def test_controls_are_valid():
    # the documents every case changes load cleanly, with no option and the default phasings
    for doc in (FIELD_DOC, OPENHOLE_DOC):
        sc = _load(doc)
        assert sc.options == () and sc.phasings == DEFAULT_PHASINGS and sc.warnings == ()


# --------------------------------------------------------------------------------------------
# Completion options
# --------------------------------------------------------------------------------------------


def test_option_replaces_only_its_keys():
    sc = _load(FIELD_DOC + '[[option]]\nname = "big-hole charges"\ntunnel_diameter = 0.75\n'
               '[[option]]\nname = "three shots"\nshot_angles = [0, 120, 240]\n')
    assert [o.name for o in sc.options] == ["big-hole charges", "three shots"]
    assert all(isinstance(o, CompletionOption) for o in sc.options)
    big, three = (o.well for o in sc.options)
    # derived: 0.75 in x 0.0254 m/in (exact)
    assert big.tunnel_diameter == pytest.approx(0.75 * 0.0254, rel=1e-15)
    assert big.shot_angles == sc.well.shot_angles
    assert (big.depth, big.inclination, big.azimuth) == (
        sc.well.depth, sc.well.inclination, sc.well.azimuth)
    assert three.shot_angles == pytest.approx(tuple(math.radians(a) for a in (0, 120, 240)))
    assert three.tunnel_diameter == sc.well.tunnel_diameter
    assert sc.warnings == ()


def test_option_to_openhole_does_not_inherit_perforations():
    sc = _load(FIELD_DOC + '[[option]]\nname = "open hole"\ncompletion = "openhole"\n'
               "hole_diameter = 8.5\n")
    w = sc.options[0].well
    assert (w.completion, w.shot_angles, w.tunnel_diameter) == ("openhole", (), None)
    assert w.hole_diameter == pytest.approx(8.5 * 0.0254)  # derived: in -> m, exact factor
    assert sc.well.completion == "perforated"  # the base is unchanged


def test_option_to_perforated_needs_both_keys():
    doc = OPENHOLE_DOC + '[[option]]\nname = "perforated"\ncompletion = "perforated"\n'
    assert [k for k, _ in _problems(doc)] == ["option[0].tunnel_diameter",
                                              "option[0].shot_angles"]
    sc = _load(doc + "shot_angles = [0, 180]\ntunnel_diameter = 0.5\n")
    w = sc.options[0].well
    assert w.completion == "perforated" and len(w.shot_angles) == 2
    assert w.hole_diameter == sc.well.hole_diameter  # inherited from [well]


def test_option_is_checked_by_the_rules_of_well():
    # the same value refused in [well] is refused in an option, named there
    bad = ("tunnel_diameter = -1", "shot_angles = [0, 360]", 'completion = "perf"')
    for line in bad:
        keys = [k for k, _ in _problems(FIELD_DOC + f'[[option]]\nname = "x"\n{line}\n')]
        assert keys == [f"option[0].{line.split(' =')[0]}"], (line, keys)


def test_base_problem_is_not_repeated_for_each_option():
    # [well] has a bad tunnel diameter; options that inherit it add no problem of their own
    doc = FIELD_DOC.replace("tunnel_diameter = 0.5", "tunnel_diameter = -0.5")
    doc += '[[option]]\nname = "a"\nshot_angles = [0, 180]\n[[option]]\nname = "b"\n' \
           "tunnel_diameter = 0\n"
    assert [k for k, _ in _problems(doc)] == ["well.tunnel_diameter",
                                              "option[1].tunnel_diameter"]


def test_options_limit_and_names():
    opts = "".join(f'[[option]]\nname = "charge {i}"\ntunnel_diameter = {0.6 + 0.01 * i:.2f}\n'
                   for i in range(MAX_OPTIONS))
    assert len(_load(FIELD_DOC + opts).options) == MAX_OPTIONS
    for name, fragment in [("", "blank name"), ("  ", "blank name"),
                           ("tab\there", "control character"), ("x" * 81, "81 characters")]:
        problems = _problems(FIELD_DOC + f'[[option]]\nname = {name!r}\n'.replace("'", '"')
                             .replace("\t", "\\t") + "tunnel_diameter = 0.6\n")
        assert [k for k, _ in problems] == ["option[0].name"], name
        assert fragment in problems[0][1], problems
    assert _load(FIELD_DOC + f'[[option]]\nname = "{"x" * 80}"\ntunnel_diameter = 0.6\n')


def test_option_name_and_completion_typos_reported_once():
    # a mistyped key is one problem, not also "missing"
    doc = OPENHOLE_DOC + ('[[option]]\nnmae = "p"\ncompletion = "perforated"\n'
                          "shot_angle = [0]\ntunnel_diameter = 0.5\n")
    assert sorted(k for k, _ in _problems(doc)) == ["option[0].nmae", "option[0].shot_angle"]


def test_phasings_in_an_option_are_refused_with_a_pointer():
    problems = _problems(FIELD_DOC + '[[option]]\nname = "x"\nphasings = [60]\n')
    assert problems[0][0] == "option[0].phasings" and "once, in [well]" in problems[0][1]


def test_openhole_option_with_tunnel_collapse_needs_a_hole_diameter():
    doc = FIELD_DOC.replace("biot = 0.9\n", COLLAPSE[0]).replace("accepted_risk = 0.10\n",
                                                                COLLAPSE[1])
    assert _load(doc).options == ()  # control: tunnel collapse on, base perforated
    keys = [k for k, _ in _problems(doc + '[[option]]\nname = "oh"\ncompletion = "openhole"\n')]
    assert keys == ["option[0].hole_diameter"]
    # derived: a 30 in hole has a 1.25 ft radius, above the 1 ft drainage radius
    problems = _problems(doc + '[[option]]\nname = "oh"\ncompletion = "openhole"\n'
                         "hole_diameter = 30\n")
    assert [k for k, _ in problems] == ["production.drainage_radius"]
    assert "of option[0]" in problems[0][1]


def test_option_repeating_the_base_is_a_warning():
    sc = _load(FIELD_DOC + '[[option]]\nname = "same"\ntunnel_diameter = 0.5\n'
               '[[option]]\nname = "same again"\n')
    assert [w.split(":")[0] for w in sc.warnings] == ["option[0]", "option[1]"]


# --------------------------------------------------------------------------------------------
# Gun phasings
# --------------------------------------------------------------------------------------------


def test_default_phasings_are_those_of_the_decision():
    assert DEFAULT_PHASINGS == COMMON_PHASINGS


@pytest.mark.parametrize("given,ok", [
    # derived: 360 / p must be a whole number of shots, 0 = one direction
    ("[0, 60, 90, 120, 180]", True), ("[45, 72, 40, 22.5]", True), ("[180]", True),
    ("[50]", False), ("[181]", False), ("[-60]", False), ("[360]", False), ("[0, 0]", False),
    ("[]", False), ('["60"]', False), ("60", False),
])
def test_phasings(given, ok):
    doc = FIELD_DOC.replace("tunnel_diameter = 0.5\n", f"tunnel_diameter = 0.5\nphasings = "
                            f"{given}\n")
    if ok:
        assert _load(doc).phasings == tuple(float(x) for x in tomllib.loads(
            f"x = {given}")["x"])
    else:
        assert all(k.startswith("well.phasings") for k, _ in _problems(doc))


def test_phasings_with_an_open_hole_warn_unless_an_option_is_perforated():
    doc = OPENHOLE_DOC.replace("hole_diameter = 8.5\n", "hole_diameter = 8.5\nphasings = [60]\n")
    sc = _load(doc)
    assert sc.phasings == (60.0,)
    assert len(sc.warnings) == 1 and sc.warnings[0].startswith("well.phasings: given, but")
    sc = _load(doc + '[[option]]\nname = "p"\ncompletion = "perforated"\nshot_angles = [0]\n'
               "tunnel_diameter = 0.5\n")
    assert sc.warnings == ()


# --------------------------------------------------------------------------------------------
# Depletion stages by rule
# --------------------------------------------------------------------------------------------


def test_rule_gives_the_list_it_spells_out():
    # derived: 3 equally spaced stages from 4140 to 3400 psi are 4140, 3770, 3400
    assert _stages("{ from = 4140, to = 3400, stages = 3 }") == _stages("[4140, 3770, 3400]")


def test_rule_from_the_initial_pore_pressure():
    # derived: pp = 0.45 psi/ft x 9200 ft = 4140 psi; 0.6 x 4140 = 2484; spacing 552 psi
    got = _stages('{ from = "initial", to_fraction = 0.6, stages = 4 }')
    assert got == pytest.approx([4140, 3588, 3036, 2484], rel=1e-12)
    assert _stages("{ to = 3400, stages = 2 }") == pytest.approx([4140, 3400], rel=1e-12)


def test_rule_from_an_uncertain_initial_pore_pressure_uses_its_median():
    doc = FIELD_DOC.replace("pp_gradient = 0.45",
                            'pp_gradient = { dist = "lognormal", median = 0.45, cov = 0.05 }')
    # derived: the lognormal's median is its `median` parameter
    assert _stages('{ from = "initial", to = 3400, stages = 2 }', doc) == pytest.approx(
        [4140, 3400], rel=1e-12)


def test_rule_stages_pass_the_list_checks():
    # a rule from above the initial pore pressure warns as the list would (derived: 4500 psi
    # is 8.7% above 4140 psi)
    doc = FIELD_DOC.replace("reservoir_pressure = [4140, 3800, 3400]",
                            "reservoir_pressure = { from = 4500, to = 3400, stages = 3 }")
    assert _load(doc).warnings[0].startswith("production.reservoir_pressure[0]: 4500 psi")


def test_rule_errors_name_their_key():
    keys = [k for k, _ in _problems(FIELD_DOC.replace(
        "reservoir_pressure = [4140, 3800, 3400]",
        'reservoir_pressure = { from = true, stages = 2.5, to = "low" }'))]
    assert keys == ["production.reservoir_pressure.from", "production.reservoir_pressure.stages",
                    "production.reservoir_pressure.to"]


def test_risk_check_prints_the_expanded_stages(tmp_path):
    p = tmp_path / "rule.toml"
    p.write_text(FIELD_DOC.replace("reservoir_pressure = [4140, 3800, 3400]",
                                   'reservoir_pressure = { from = "initial", to_fraction = 0.6, '
                                   "stages = 4 }"), encoding="utf-8")
    r = RUNNER.invoke(app, ["check", str(p)], env={"COLUMNS": "200"})
    assert r.exit_code == 0, r.output
    assert "4,140, 3,588, 3,036, 2,484 psi (4 stages by rule)" in r.output


# --------------------------------------------------------------------------------------------
# Operating points by drawdown
# --------------------------------------------------------------------------------------------


def test_operating_point_forms_store_the_same_pair():
    def ops(text: str) -> Any:
        return _load(FIELD_DOC.replace("accepted_risk = 0.10\n", f"accepted_risk = 0.10\n"
                                       f"operating_points = [{text}]\n")).operating_points

    pair = ops("[3000, 2500]")
    assert ops("{ reservoir_pressure = 3000, drawdown = 500 }") == pair
    assert ops("{ reservoir_pressure = 3000, wall_pressure = 2500 }") == pair
    # derived: a drawdown equal to the reservoir pressure is a wall pressure of 0 (allowed)
    assert ops("{ reservoir_pressure = 3000, drawdown = 3000 }") == ((3000 * PSI_TO_MPA, 0.0),)
    assert ops("{ reservoir_pressure = 3000, drawdown = 0 }") == ((3000 * PSI_TO_MPA,) * 2,)


# --------------------------------------------------------------------------------------------
# risk check at 80 columns
# --------------------------------------------------------------------------------------------

RICH = (FIELD_DOC
        .replace("tunnel_diameter = 0.5\n",
                 "tunnel_diameter = 0.5\nphasings = [0, 60, 120, 180]\n")
        .replace("depletion_path = 0.6\n", "depletion_path = 0.6\ndepletion_path_shmax = 0.7\n")
        .replace("ucs = 9000", 'ucs = { dist = "lognormal", median = 9000, cov = 0.25, source = '
                 '"core plugs of the Ravenmoor R-7 well, lower shoreface, plug set 3 of 4" }')
        .replace("friction_angle = 30", 'friction_angle = { dist = "truncnormal", mean = 30, '
                 "sd = 2, low = 25, high = 35 }")
        .replace("biot = 0.9\n", COLLAPSE[0] + "pore_collapse_pressure = 5000\n")
        .replace("accepted_risk = 0.10\n", COLLAPSE[1] + "operating_points = [[4140, 3600], "
                 "{ reservoir_pressure = 3800, drawdown = 400 }]\n")
        + '[correlation]\npairs = [["ucs", "friction_angle", 0.5]]\n'
        '[[option]]\nname = "big-hole charges, 0.75 in entry hole"\ntunnel_diameter = 0.75\n'
        '[[option]]\nname = "open hole"\ncompletion = "openhole"\nhole_diameter = 8.5\n')


def _printed(sc: Scenario, width: int = 80) -> list[str]:
    con = Console(width=width, record=True)
    print_scenario(sc, con)
    return con.export_text().splitlines()


def test_risk_check_fits_80_columns_with_every_key_whole():
    sc = _load(RICH)
    lines = _printed(sc)
    assert max(len(line) for line in lines) <= 80
    keys = [f"{SPEC[n].section}.{n}" for n in sc.inputs]
    keys += ["well.depth", "well.shot_angles", "well.phasings", "production.reservoir_pressure",
             "production.operating_points", "production.max_drawdown"]
    for key in keys:  # a key broken over two lines would not be found on one line
        assert any(re.search(rf"(^|\s){re.escape(key)}(\s|$)", line) for line in lines), key
    text = "\n".join(lines)
    assert "rock.critical_plastic_strain" in text  # the longest input key (28 characters)
    for fragment in ("big-hole charges", "open hole", "as planned ([well])",
                     "0, 60, 120, 180 deg", "rank correlation", "friction_angle",
                     "from the high side"):
        assert fragment in text, fragment


def test_risk_check_angle_reference():
    # README "Scenario files": vertical well from `azimuth`, clockwise seen from above;
    # otherwise from the high side
    assert angle_reference(0.0, math.radians(120)).startswith(
        "from the direction azimuth (120 deg from north), clockwise seen from above")
    assert angle_reference(math.radians(35), 0.0).startswith("from the high side")
    # derived from risk.conventions: inclination 180 has x = -(cos a, sin a, 0)
    assert "azimuth + 180 (300 deg" in angle_reference(math.pi, math.radians(120))
    vertical = _load(RICH.replace("inclination = 35", "inclination = 0"))
    assert "clockwise seen from above" in " ".join(_printed(vertical, 200))


def test_default_phasings_shown_for_a_perforated_well_only():
    assert any("(default)" in line for line in _printed(_load(FIELD_DOC), 200))
    assert not any("well.phasings" in line for line in _printed(_load(OPENHOLE_DOC), 200))


# --------------------------------------------------------------------------------------------
# The template's commented examples
# --------------------------------------------------------------------------------------------


def _uncommented(units: str) -> list[str]:
    """The template with each new commented example switched on, one variant per example."""
    text = scenario_template(units)
    lines = text.splitlines(keepends=True)
    rule = next(ln for ln in lines if ln.startswith("# reservoir_pressure = {"))
    plain = next(ln for ln in lines if ln.startswith("reservoir_pressure = ["))
    ops = next(ln for ln in lines if ln.startswith("# operating_points = "))
    phasings = next(ln for ln in lines if ln.startswith("# phasings = "))
    start = text.index("# [[option]]")
    options = "".join(ln[2:] for ln in text[start:].splitlines(keepends=True))
    return [text.replace(plain, rule[2:]), text.replace(ops, ops[2:]),
            text.replace(phasings, phasings[2:]), text[:start] + options]


@pytest.mark.parametrize("units", ["field", "si"])
def test_template_examples_load(units):
    variants = [_load(t) for t in _uncommented(units)]
    rule, ops, phasings, options = variants
    assert len(rule.reservoir_pressure) == 3
    assert len(ops.operating_points) == 2
    assert phasings.phasings == (0.0, 60.0, 90.0, 120.0, 180.0)
    assert [o.name for o in options.options] == ["big-hole charges", "open hole"]
    assert all(v.warnings == () for v in variants)


def test_template_examples_agree_between_units():
    # the SI numbers are the field ones converted, to their rounding (about 1%)
    f, s = (_uncommented(u) for u in ("field", "si"))
    for a, b in zip(f, s, strict=True):
        fa, sb = _load(a), _load(b)
        assert fa.reservoir_pressure == pytest.approx(sb.reservoir_pressure, rel=0.01)
        flat = [[x for pair in sc.operating_points for x in pair] for sc in (fa, sb)]
        assert flat[0] == pytest.approx(flat[1], rel=0.01)
        for x, y in zip(fa.options, sb.options, strict=True):
            assert (x.well.tunnel_diameter or 0) == pytest.approx(y.well.tunnel_diameter or 0,
                                                                 rel=0.01)
            assert (x.well.hole_diameter or 0) == pytest.approx(y.well.hole_diameter or 0,
                                                               rel=0.01)
