"""The Python API for notebooks (issue 13): only public names, nothing written unless asked.

Checks are against results.json written by the same run (the report formats the typed result,
it computes nothing: derived) and against the CLI on the same scenario and seed.
"""

from __future__ import annotations

import json
import tomllib
from pathlib import Path

import pytest

import risk

pytestmark = pytest.mark.slow  # runs the examples end to end

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "ravenmoor_r7_openhole.toml"


@pytest.fixture(scope="module")
def result():
    return risk.assess(risk.load_scenario(EXAMPLE), samples=512, seed=7)


def test_assess_writes_nothing(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    risk.assess(risk.load_scenario(EXAMPLE), samples=64, seed=1)
    assert list(tmp_path.iterdir()) == []


def test_frames_carry_units_and_agree_with_results_json(result, tmp_path):
    limits = result.limits.to_frame()
    assert "drawdown_limit [psi]" in limits.columns
    assert "drawdown_limit [MPa]" in result.limits.to_frame(units="si").columns
    out = risk.report.write(result, tmp_path / "r7")
    data = json.loads((out / "results.json").read_text())
    for key, mech in data["mechanisms"].items():
        if key == "pore_collapse":
            continue
        rows = limits[(limits["mechanism"] == key) & limits["direction [deg]"].isna()]
        assert [pytest.approx(v, rel=1e-5, abs=1e-9) for v in rows["drawdown_limit [psi]"]] \
            == [st["drawdown_limit"] for st in mech["stages"]]
    sand = limits[limits["mechanism"] == "sand_free"]
    assert list(sand["drawdown_limit [psi]"].round(3)) == [
        round(st["drawdown_limit"], 3) for st in data["sand_free"]["stages"]]
    curves = result.curves.to_frame()
    assert {"drawdown [psi]", "probability [-]", "low [-]", "high [-]"} <= set(curves.columns)
    sens = result.sensitivity.to_frame()
    assert set(sens["input"]) <= set(data["uncertain_inputs"])
    with pytest.raises(ValueError, match="units"):
        result.limits.to_frame(units="imperial")


def test_same_answer_as_the_cli(result, tmp_path):
    from typer.testing import CliRunner

    from risk.cli import app

    r = CliRunner().invoke(app, ["run", str(EXAMPLE), "--out", str(tmp_path / "cli"),
                                 "--samples", "512", "--seed", "7", "-q"])
    assert r.exit_code == 0, r.output
    api = risk.report.write(result, tmp_path / "api")
    a = json.loads((api / "results.json").read_text())
    b = json.loads((tmp_path / "cli" / "results.json").read_text())
    a.pop("scenario_file"), b.pop("scenario_file")
    assert a == b


def test_scenario_from_a_dict_equals_the_file():
    doc = tomllib.loads(EXAMPLE.read_text(encoding="utf-8"))
    from_dict = risk.load_scenario(doc)
    from_file = risk.load_scenario(EXAMPLE)
    assert from_dict.inputs == from_file.inputs
    assert from_dict.reservoir_pressure == from_file.reservoir_pressure
    bad = {**doc, "production": {**doc["production"], "accepted_risk": 2}}
    with pytest.raises(risk.ScenarioError, match="production.accepted_risk"):
        risk.load_scenario(bad)


def test_results_are_read_only(result):
    with pytest.raises(TypeError):
        result.mechanisms["extra"] = None  # type: ignore[index]
    stage = next(iter(result.mechanisms.values())).stages[0]
    with pytest.raises(ValueError):
        stage.p[0] = 0.5
    with pytest.raises(AttributeError):
        stage.drawdown_limit = 0.0  # type: ignore[misc]
