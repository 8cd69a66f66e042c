"""Input warnings (issue 11, part 5): inputs accepted but unused by the chosen options, and
stages that look mistyped. Each is stored on the scenario, printed by ``risk check`` and
``risk run``, written into results.json and shown in the memo.

Every case is the valid field test document with one change; the unchanged document has no
warning (the control of every case below).
"""

from __future__ import annotations

import io
import json
import tomllib
from pathlib import Path
from typing import Any

import pytest
from rich.console import Console
from typer.testing import CliRunner

from risk.cli import app
from risk.report.console import print_scenario
from risk.scenario import load_scenario, parse_scenario
from risk.template import scenario_template
from tests.conftest import FIELD_DOC

RUNNER = CliRunner()
COLLAPSE = {"rock__young_modulus": 1.0e6, "rock__critical_plastic_strain": 0.02,
            "production__drainage_radius": 1.0}


def _doc(**changes: Any) -> dict[str, Any]:
    doc = tomllib.loads(FIELD_DOC)
    for dotted, value in changes.items():
        *path, last = dotted.split("__")
        table = doc
        for part in path:
            table = table[part]
        table[last] = value
    return doc


def _warnings(**changes: Any) -> tuple[str, ...]:
    return parse_scenario(_doc(**changes)).warnings


def test_valid_document_has_no_warning():
    assert _warnings() == ()


# (change, key the warning starts with, a fragment of what it says) -- derived from the
# options: README "Mechanisms" says which inputs switch which mechanism on
CASES = [
    ({"rock__hb_mi": 12}, "rock.hb_mi", "criterion = 'mohr-coulomb' does not use it"),
    ({"rock__gsi": 80}, "rock.gsi", "only \"hoek-brown\" does"),
    ({"rock__young_modulus": 1.0e6}, "rock.young_modulus", "tunnel collapse is off"),
    ({"rock__dilation_angle": 5}, "rock.dilation_angle", "tunnel collapse is off"),
    ({"production__drainage_radius": 1.0}, "production.drainage_radius",
     "tunnel collapse is off"),
    ({"analysis__effective_strength_cavity": "tip"}, "analysis.effective_strength_cavity",
     "no rock.twc or rock.twc_ratio"),
    ({"analysis__effective_strength_cavity": "tunnel"}, "analysis.effective_strength_cavity",
     "it is ignored"),
    # derived: pp = 0.45 psi/ft x 9200 ft = 4140 psi, and 1% above it is 4181.4 psi
    ({"production__reservoir_pressure": [4500, 3800, 3400]}, "production.reservoir_pressure[0]",
     "4500 psi is more than 1% above the initial pore pressure (4140 psi)"),
    ({"production__reservoir_pressure": [4182, 3800, 3400]}, "production.reservoir_pressure[0]",
     "4182 psi is more than 1% above"),
    ({"production__reservoir_pressure": [4140, 3800, 3800]}, "production.reservoir_pressure[2]",
     "3800 psi repeats stage [1]"),
    ({"production__max_drawdown": 5000}, "production.max_drawdown",
     "5000 psi is above the reservoir pressure of every stage (largest 4140 psi)"),
]


@pytest.mark.parametrize("changes,key,says", CASES, ids=[c[1] + "-" + str(i)
                                                          for i, c in enumerate(CASES)])
def test_each_warning(changes, key, says):
    warnings = _warnings(**changes)
    assert len(warnings) == 1, warnings
    assert warnings[0].startswith(key + ": ")
    assert says in warnings[0]


@pytest.mark.parametrize("changes", [
    # the same inputs where the chosen options use them: no warning (GSI 100: a GSI below
    # 100 at perforation scale has its own warning, tests/test_mechanics_extensions.py)
    {"rock__hb_mi": 12, "rock__gsi": 100, "analysis__criterion": "hoek-brown"},
    {"rock__dilation_angle": 5, **COLLAPSE},
    {"rock__twc": 4000, "analysis__effective_strength_cavity": "tip"},
    {"rock__twc_ratio": 1.5, "analysis__effective_strength_cavity": "tip"},
    # the boundaries (derived): a stage at the initial pore pressure, a drawdown equal to it;
    # a stage 1% above it (4181.4 psi, a rounded initial pressure) is not warned about
    {"production__reservoir_pressure": [4140], "production__max_drawdown": 4140},
    {"production__reservoir_pressure": [4181, 3800]},
])
def test_no_warning_where_the_input_is_used(changes):
    assert _warnings(**changes) == ()


def test_warnings_keep_a_fixed_order():
    changes = {"rock__gsi": 80, "rock__hb_mi": 12, "production__max_drawdown": 5000,
               "production__reservoir_pressure": [4500, 4500]}
    w = _warnings(**changes)
    assert [x.split(":")[0] for x in w] == [
        "rock.hb_mi", "rock.gsi", "production.reservoir_pressure[0]",
        "production.reservoir_pressure[1]", "production.reservoir_pressure[1]",
        "production.max_drawdown"]
    assert _warnings(**changes) == w


def test_print_scenario_lists_warnings():
    sc = parse_scenario(_doc(rock__hb_mi=12))
    buf = io.StringIO()
    print_scenario(sc, Console(file=buf, width=400, color_system=None))
    lines = [x for x in buf.getvalue().splitlines() if x.startswith("warning: ")]
    assert lines == [f"warning: {sc.warnings[0]}"]


def test_risk_check_prints_warnings(write):
    path = write(FIELD_DOC.replace("biot = 0.9", "biot = 0.9\ngsi = 80"))
    r = RUNNER.invoke(app, ["check", str(path)])
    assert r.exit_code == 0, r.output
    text = " ".join(r.output.split())  # the console wraps long lines
    assert "warning: rock.gsi: given, but criterion = 'mohr-coulomb' does not use it" in text
    assert "scenario is valid" in text


@pytest.mark.slow
def test_run_writes_warnings_everywhere_and_stays_byte_identical(tmp_path):
    scenario = tmp_path / "warned.toml"
    scenario.write_text(FIELD_DOC.replace("max_drawdown = 2500", "max_drawdown = 5000"),
                        encoding="utf-8")
    outs = []
    for name in ("a", "b"):
        out = tmp_path / name
        r = RUNNER.invoke(app, ["run", str(scenario), "--out", str(out), "--samples", "64"])
        assert r.exit_code == 0, r.output
        assert "warning: production.max_drawdown: 5000 psi is above" in " ".join(r.output.split())
        outs.append(out)
    data = [(o / "results.json").read_bytes() for o in outs]
    assert data[0] == data[1]  # same scenario and seed: byte-identical (README)
    res = json.loads(data[0])
    assert len(res["warnings"]) == 1 and res["warnings"][0].startswith("production.max_drawdown")
    html = (outs[0] / "memo.html").read_text(encoding="utf-8")
    assert "Input warnings" in html
    assert "production.max_drawdown: 5000 psi is above the reservoir pressure" in html


@pytest.mark.slow
def test_results_carry_an_empty_warning_list(tmp_path):
    scenario = tmp_path / "clean.toml"
    scenario.write_text(FIELD_DOC, encoding="utf-8")
    out = tmp_path / "o"
    r = RUNNER.invoke(app, ["run", str(scenario), "--out", str(out), "--samples", "64", "-q"])
    assert r.exit_code == 0, r.output
    assert json.loads((out / "results.json").read_text())["warnings"] == []
    assert "Input warnings" not in (out / "memo.html").read_text(encoding="utf-8")


EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "examples").glob("*.toml"))


@pytest.mark.parametrize("path", EXAMPLES, ids=[p.name for p in EXAMPLES])
def test_shipped_examples_have_no_warning(path):
    # the examples and templates are what engineers copy: they must not teach ignored inputs
    assert load_scenario(path).warnings == ()


@pytest.mark.parametrize("units", ["field", "si"])
def test_templates_have_no_warning(units):
    assert parse_scenario(tomllib.loads(scenario_template(units))).warnings == ()
