"""Completion options compared in one run (issue 12): each [[option]] is evaluated on the run's
own samples, so it must equal a separate run of the scenario with that completion and the same
seed (an independent path through the loader and the assessment: derived), and the life-of-well
gun must be computed for perforated options only.
"""

from __future__ import annotations

import pytest

from risk.assessment import assess
from risk.scenario import parse_scenario

try:
    import tomllib
except ModuleNotFoundError:  # pragma: no cover
    import tomli as tomllib  # type: ignore[no-redef]

BASE = """
title = "Options test (fictional)"
units = "field"
[well]
depth = 7850
inclination = 30
azimuth = 40
completion = "perforated"
shot_angles = [0, 90, 180, 270]
tunnel_diameter = 0.5
[stress]
sv_gradient = 0.98
shmax_gradient = { dist = "uniform", low = 0.80, high = 0.92 }
shmin_gradient = 0.72
shmax_azimuth = 40
pp_gradient = 0.44
[rock]
ucs = { dist = "lognormal", median = 2600, cov = 0.2 }
friction_angle = 32
tensile_strength = 150
poisson_ratio = 0.25
biot = 0.9
twc_ratio = { dist = "uniform", low = 1.1, high = 1.7 }
young_modulus = 1.2e6
critical_plastic_strain = { dist = "uniform", low = 0.01, high = 0.03 }
[production]
reservoir_pressure = [3450, 3000, 2500]
max_drawdown = 2000
accepted_risk = 0.1
drainage_radius = 2.0
[analysis]
samples = 512
seed = 5
"""

OPTIONS = """
[[option]]
name = "open hole"
completion = "openhole"
hole_diameter = 8.5

[[option]]
name = "pairs"
shot_angles = [90, 270]
tunnel_diameter = 0.7
"""


def _load(text: str):
    return parse_scenario(tomllib.loads(text), source_name="options.toml")


def _limits(sf):
    return [row.limit for row in sf.stages]


@pytest.fixture(scope="module")
def with_options():
    return assess(_load(BASE.replace("[analysis]", OPTIONS + "\n[analysis]")))


def test_each_option_equals_its_own_run(with_options):
    a = with_options
    assert [o.name for o in a.options] == ["open hole", "pairs"]
    alone = {
        "open hole": BASE.replace('completion = "perforated"\nshot_angles = [0, 90, 180, 270]\n'
                                  "tunnel_diameter = 0.5", 'completion = "openhole"\n'
                                  "hole_diameter = 8.5"),
        "pairs": BASE.replace("shot_angles = [0, 90, 180, 270]\ntunnel_diameter = 0.5",
                              "shot_angles = [90, 270]\ntunnel_diameter = 0.7"),
    }
    for o in a.options:
        b = assess(_load(alone[o.name]))
        assert b.sand_free is not None and o.sand_free is not None
        assert _limits(o.sand_free) == _limits(b.sand_free)  # same samples, bit for bit
        assert [r.governing for r in o.sand_free.stages] == \
            [r.governing for r in b.sand_free.stages]
        assert (o.phasing is None) == (o.well.completion == "openhole")


def test_options_leave_the_planned_well_unchanged(with_options):
    plain = assess(_load(BASE))
    assert _limits(with_options.sand_free) == _limits(plain.sand_free)
    assert with_options.phasing is not None and plain.phasing is not None
    assert with_options.phasing.limits == plain.phasing.limits


def test_options_in_results_json(with_options):
    from risk.report.results import summarize

    s = summarize(with_options)
    names = [o["name"] for o in s["completion_options"]]
    assert names == ["open hole", "pairs"]
    hole = s["completion_options"][0]
    assert hole["completion"] == "openhole" and hole["hole_diameter"] == 8.5
    assert hole["completion_choice"] is None
    pairs = s["completion_options"][1]
    assert pairs["shot_angles"] == [90.0, 270.0] and pairs["tunnel_diameter"] == 0.7
    assert len(pairs["sand_free"]["stages"]) == 3
