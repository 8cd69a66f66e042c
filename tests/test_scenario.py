"""Scenario loading: unit conversion, validation messages, all problems at once."""

from __future__ import annotations

import math

import pytest

from risk.conventions import PSI_PER_FT_TO_MPA_PER_M, PSI_TO_MPA
from risk.errors import ScenarioError
from risk.scenario import load_scenario


def test_field_units_converted_once(write, field_doc):
    sc = load_scenario(write(field_doc))
    # NIST SP 811 exact factors: 1 psi = 6.894757293168 kPa, 1 ft = 0.3048 m
    assert sc.well.depth == pytest.approx(9200 * 0.3048)
    assert sc.inputs["ucs"].value == pytest.approx(9000 * 6.894757293168e-3)
    assert sc.inputs["sv_gradient"].value == pytest.approx(1.0 * PSI_PER_FT_TO_MPA_PER_M)
    # common practice: 1 psi/ft = 22.620594 kPa/m
    assert PSI_PER_FT_TO_MPA_PER_M == pytest.approx(22.620594e-3, rel=1e-7)
    assert sc.well.tunnel_diameter == pytest.approx(0.5 * 0.0254)
    assert sc.well.shot_angles[1] == pytest.approx(math.radians(60))
    assert sc.reservoir_pressure[0] == pytest.approx(4140 * PSI_TO_MPA)
    assert sc.stress_given == {"sv": "gradient", "shmax": "gradient", "shmin": "gradient",
                               "pp": "gradient"}
    assert len(sc.sha256) == 64


def test_si_units(write, field_doc):
    doc = (field_doc.replace('units = "field"', 'units = "si"')
           .replace("depth = 9200", "depth = 2800")
           .replace("sv_gradient = 1.0", "sv_gradient = 22.6")
           .replace("shmax_gradient = 0.88", "shmax_gradient = 19.9")
           .replace("shmin_gradient = 0.74", "shmin_gradient = 16.7")
           .replace("pp_gradient = 0.45", "pp_gradient = 10.2")
           .replace("ucs = 9000", "ucs = 62")
           .replace("tensile_strength = 800", "tensile_strength = 5")
           .replace("[4140, 3800, 3400]", "[28.5, 26, 23]")
           .replace("max_drawdown = 2500", "max_drawdown = 17")
           .replace("tunnel_diameter = 0.5", "tunnel_diameter = 12.7"))
    sc = load_scenario(write(doc))
    assert sc.inputs["sv_gradient"].value == pytest.approx(0.0226)  # kPa/m -> MPa/m
    assert sc.inputs["ucs"].value == 62.0
    assert sc.well.tunnel_diameter == pytest.approx(0.0127)  # mm -> m
    assert sc.well.depth == 2800.0


def _problems(path):
    with pytest.raises(ScenarioError) as ei:
        load_scenario(path)
    return ei.value


@pytest.mark.parametrize("old,new,key,fragment", [
    ("ucs = 9000", "ucs = -5", "rock.ucs", "> 0"),
    ("friction_angle = 30", "friction_angle = 95", "rock.friction_angle", "(0, 90)"),
    ("poisson_ratio = 0.25", "poisson_ratio = 0.5", "rock.poisson_ratio", "[0, 0.5)"),
    ("biot = 0.9", "biot = 0", "rock.biot", "(0, 1]"),
    ('criterion = "mohr-coulomb"', 'criterion = "mohr-colomb"', "analysis.criterion",
     "did you mean 'mohr-coulomb'"),
    ("sv_gradient = 1.0", "sv_gradient = 1.0\nsv = 9000", "stress.sv", "exactly one"),
    ("[rock]", "[rocks]", "rocks", "did you mean 'rock'"),
    ("depth = 9200", "depht = 9200", "well.depht", "did you mean 'depth'"),
    ("samples = 2000", "samples = 1000000000", "analysis.samples", "10,000,000"),
    ("pp_gradient = 0.45", "pp_gradient = 1.2", "stress.pp_gradient", "below the overburden"),
    ("reservoir_pressure = [4140, 3800, 3400]", "reservoir_pressure = [4140, -3]",
     "production.reservoir_pressure", "> 0"),
    ("ucs = 9000", 'ucs = { dist = "normal", mean = 9000, sd = 5000 }', "rock.ucs",
     "physical range"),
    ("accepted_risk = 0.10", "accepted_risk = 1.5", "production.accepted_risk", "(0, 1)"),
    ('units = "field"', 'units = "imperial"', "units", '"field"'),
])
def test_bad_values_name_key_value_expectation(write, field_doc, old, new, key, fragment):
    err = _problems(write(field_doc.replace(old, new)))
    text = str(err)
    assert key in text and fragment in text


def test_all_problems_reported_at_once(write, field_doc):
    doc = field_doc.replace("ucs = 9000", "ucs = -1").replace("biot = 0.9", "biot = 2")
    err = _problems(write(doc))
    keys = {p.key for p in err.problems}
    assert {"rock.ucs", "rock.biot"} <= keys


def test_missing_required_key(write, field_doc):
    err = _problems(write(field_doc.replace("tensile_strength = 800\n", "")))
    assert "rock.tensile_strength" in str(err) and "missing" in str(err)


def test_toml_syntax_error_has_line(write):
    err = _problems(write('title = "x"\nunits = "field"\n[well\n'))
    assert "line 3" in str(err)


@pytest.mark.parametrize("content", [b"", b"\x00\x01\x02binary"])
def test_empty_or_binary_file(tmp_path, content):
    p = tmp_path / "s.toml"
    p.write_bytes(content)
    err = _problems(p)
    assert "scenario" in str(err)


def test_missing_file_and_folder(tmp_path):
    assert "no file" in str(_problems(tmp_path / "nope.toml"))
    assert "folder" in str(_problems(tmp_path))


def test_correlation_unknown_name(write, field_doc):
    doc = field_doc.replace("ucs = 9000", 'ucs = { dist = "normal", mean = 9000, sd = 900 }')
    doc += '[correlation]\npairs = [["ucs", "fricton_angle", 0.5]]\n'
    err = _problems(write(doc))
    assert "correlation.pairs" in str(err) and "friction_angle" in str(err)


def test_openhole_needs_no_shots(write, field_doc):
    doc = field_doc.replace('completion = "perforated"', 'completion = "openhole"')
    err = _problems(write(doc))
    assert "well.shot_angles" in str(err)
    doc = doc.replace("shot_angles = [0, 60, 120, 180, 240, 300]\n", "")
    assert "well.tunnel_diameter" in str(_problems(write(doc)))
    doc = doc.replace("tunnel_diameter = 0.5\n", "hole_diameter = 8.5\n")
    assert load_scenario(write(doc)).well.shot_angles == ()


# --------------------------------------------------------------------------------------------
# Cross checks of rock constants and operating points (issue 11, part 5)
# --------------------------------------------------------------------------------------------

_COLLAPSE = ("biot = 0.9\nyoung_modulus = 1.0e6\ncritical_plastic_strain = 0.02\n",
             "accepted_risk = 0.10\ndrainage_radius = 1.0\n")


def _rock(field_doc: str, *, friction: str = "30", dilation: str | None = None,
          collapse: bool = True, extra: str = "") -> str:
    doc = field_doc.replace("friction_angle = 30", f"friction_angle = {friction}")
    rock = "biot = 0.9\n" + (f"dilation_angle = {dilation}\n" if dilation else "") + extra
    if collapse:
        rock += _COLLAPSE[0].removeprefix("biot = 0.9\n")
        doc = doc.replace("accepted_risk = 0.10\n", _COLLAPSE[1])
    return doc.replace("biot = 0.9\n", rock)


def _keys(write, text: str) -> list[str]:
    try:
        load_scenario(write(text))
    except ScenarioError as err:
        return [p.key for p in err.problems]
    return []


def test_dilation_rule_on_a_normal_friction_angle(write, field_doc):
    # the dilation angle may reach the friction angle's 5e-14 quantile and no further
    # (PAIR_TAIL = 1e-13 split between the two tails); reference: scipy's normal quantile
    from scipy.stats import norm

    edge = 30 + 2 * norm.ppf(5e-14)  # about 15.1 deg
    friction = '{ dist = "normal", mean = 30, sd = 2 }'
    assert _keys(write, _rock(field_doc, friction=friction, dilation=f"{edge - 0.01}")) == []
    assert _keys(write, _rock(field_doc, friction=friction, dilation=f"{edge + 0.01}")) == [
        "rock.dilation_angle"]
    # without tunnel collapse the angle is unused: the central values alone are checked
    sc = load_scenario(write(_rock(field_doc, friction=friction, dilation=f"{edge + 0.01}",
                                   collapse=False)))
    assert sc.warnings and sc.warnings[0].startswith("rock.dilation_angle: given, but")


@pytest.mark.parametrize("friction,dilation,keys", [
    ("30", "30", []),  # associated flow: dilation = friction is allowed (derived)
    ("30", "30.001", ["rock.dilation_angle"]),
    # ranges that touch at 20 deg never give dilation > friction (derived)
    ('{ dist = "uniform", low = 20, high = 40 }', '{ dist = "uniform", low = 0, high = 20 }',
     []),
    ('{ dist = "uniform", low = 20, high = 40 }', '{ dist = "uniform", low = 0, high = 21 }',
     ["rock.dilation_angle"]),
    ('{ dist = "truncnormal", mean = 30, sd = 3, low = 22, high = 40 }',
     '{ dist = "pert", low = 0, mode = 5, high = 22 }', []),
])
def test_dilation_rule_on_ranges(write, field_doc, friction, dilation, keys):
    assert _keys(write, _rock(field_doc, friction=friction, dilation=dilation)) == keys


def test_dilation_median_above_friction_refused_without_tunnel_collapse(write, field_doc):
    assert _keys(write, _rock(field_doc, dilation="31", collapse=False)) == [
        "rock.dilation_angle"]


def test_tensile_strength_rule_is_on_central_values(write, field_doc):
    # UCS 9000 psi: equal passes, above is refused; a tensile range reaching above the UCS
    # passes when its median is below (the models evaluate any such sample)
    base = field_doc.replace("tensile_strength = 800", "tensile_strength = {}")
    assert _keys(write, base.format("9000")) == []
    assert _keys(write, base.format("9001")) == ["rock.tensile_strength"]
    assert _keys(write, base.format('{ dist = "uniform", low = 100, high = 9500 }')) == []
    assert _keys(write, base.format('{ dist = "uniform", low = 8000, high = 12000 }')) == [
        "rock.tensile_strength"]


def test_critical_plastic_strain_at_most_one(write, field_doc):
    base = _rock(field_doc).replace("critical_plastic_strain = 0.02",
                                    "critical_plastic_strain = {}")
    assert _keys(write, base.format("1")) == []
    assert _keys(write, base.format("1.01")) == ["rock.critical_plastic_strain"]
    assert _keys(write, base.format('{ dist = "uniform", low = 0.5, high = 1.5 }')) == [
        "rock.critical_plastic_strain"]


def test_operating_point_below_overburden(write, field_doc):
    # derived: sv = 1.0 psi/ft x 9200 ft = 9200 psi; like the stages, equal is refused
    def ops(p_r: int) -> str:
        return field_doc.replace("accepted_risk = 0.10",
                                 f"accepted_risk = 0.10\noperating_points = [[{p_r}, 3000]]")

    assert _keys(write, ops(9199)) == []
    assert _keys(write, ops(9200)) == ["production.operating_points[0]"]
