"""Field history in a scenario: parsing, refusals, the run's calibration on the example."""

from __future__ import annotations

import copy
import json
import tomllib
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from risk.errors import ScenarioError
from risk.scenario import parse_scenario

EXAMPLE = Path(__file__).parents[2] / "examples" / "ravenmoor_r5_sanding_history.toml"


def _doc() -> dict[str, Any]:
    return tomllib.loads(EXAMPLE.read_text(encoding="utf-8"))


def _problems(doc: dict[str, Any]) -> list[Any]:
    with pytest.raises(ScenarioError) as err:
        parse_scenario(doc, source_name="x.toml")
    return err.value.problems


def test_example_history_is_parsed_in_internal_units() -> None:
    sc = parse_scenario(_doc())
    h = sc.history
    assert len(h.observations) == 4 and len(h.measurements) == 3
    o = h.observations[0]
    # 3450 psi and 1200 psi in MPa (NIST SP 811: 1 psi = 6.894757e-3 MPa)
    assert o.reservoir_pressure == pytest.approx(3450 * 6.894757e-3, rel=1e-6)
    assert o.drawdown == pytest.approx(1200 * 6.894757e-3, rel=1e-6)
    assert o.scenario.reservoir_pressure == (o.reservoir_pressure,)
    r2 = h.observations[2]
    assert r2.scenario.well.depth == pytest.approx(8150 * 0.3048)  # ft -> m (exact)
    assert r2.weight == 0.8
    r4 = h.observations[3]
    assert r4.scenario.well.completion == "openhole" and r4.scenario.well.shot_angles == ()
    assert h.calibration.inputs == ("twc_factor", "ucs")


def test_no_history_leaves_the_scenario_as_before() -> None:
    doc = _doc()
    for k in ("history", "calibration", "measurement"):
        doc.pop(k)
    assert parse_scenario(doc).history is None


@pytest.mark.parametrize(("edit", "key", "fragment"), [
    (lambda d: d["history"][0].pop("outcome"), "history[0] ('R-3 clean-up').outcome",
     '"onset"'),
    (lambda d: d["history"][1].update(drawdown_high=9000), "history[1] ('R-3 rate step-up')"
     ".drawdown_high", "at most the reservoir pressure"),
    (lambda d: d["history"][0].update(drawdown=5000), "history[0] ('R-3 clean-up').drawdown",
     "at most the reservoir pressure"),
    (lambda d: d["history"][2]["overrides"].update(shmin_grad=0.7),
     "history[2] ('R-2 sand onset').overrides.shmin_grad", "a known key"),
    (lambda d: d["history"][2]["overrides"].update(twc_factor=3.0),
     "history[2] ('R-2 sand onset').overrides.twc_factor", "no override of a calibrated"),
    (lambda d: d["calibration"].update(inputs=["ucs", "tensile_strength"]),
     "calibration.inputs", "distribution"),
    (lambda d: d["measurement"][0].update(input="ucz"), "measurement[0].input", "ucs"),
])
def test_bad_history_names_observation_and_key(edit: Any, key: str, fragment: str) -> None:
    doc = _doc()
    edit(doc)
    problems = _problems(doc)
    assert len(problems) == 1, [str(p) for p in problems]
    assert problems[0].key == key
    assert fragment in problems[0].expected


def test_history_refused_without_sand_mechanism() -> None:
    doc = copy.deepcopy(_doc())
    for k in ("twc_ratio", "twc_factor"):
        doc["rock"].pop(k)
    doc["calibration"]["inputs"] = ["ucs"]
    doc.pop("measurement")
    problems = _problems(doc)
    assert [p.key for p in problems] == ["history"]


def test_unknown_key_with_a_control_character_is_named_visibly() -> None:
    # the error contract of risk.errors (every problem line starts with its key, and a key
    # never carries a control character): an unknown [calibration] key "\x1f" is named as
    # TOML would need it written (found by tests/test_fuzz_scenario.py)
    doc = _doc()
    doc["calibration"]["\x1f"] = 1
    (p,) = [q for q in _problems(doc) if q.key.startswith("calibration.")]
    assert p.key == 'calibration."\\u001f"'
    assert str(p).startswith(p.key)


@pytest.mark.slow
def test_example_calibrates_and_is_reproducible() -> None:
    from risk.assessment import assess
    from risk.report.results import summarize

    doc = _doc()
    doc["calibration"]["min_ess"] = 20  # the reweighting path at this small sample size
    sc = parse_scenario(doc)
    a = assess(sc, samples=1024)
    cal = a.calibration
    assert cal is not None and cal.method == "reweight"
    assert [o["name"] for o in cal.observations][0] == "R-3 clean-up"
    assert len(a.value_of_information) == len(sc.uncertain_names) + 3
    s1 = json.dumps(summarize(a), sort_keys=True)
    s2 = json.dumps(summarize(assess(sc, samples=1024)), sort_keys=True)
    assert s1 == s2  # same seed, bit for bit
    block = json.loads(s1)["calibration"]
    assert block["effective_sample_size"] > 0
    assert len(block["posterior"]["sand_free"]) == len(sc.reservoir_pressure)


def test_observation_the_model_cannot_produce_is_refused() -> None:
    # an onset at a drawdown where, with a rock 100 times stronger, no sample ever fails:
    # no model error can produce it
    from risk.assessment import assess

    doc = _doc()
    doc["history"][2]["overrides"] = {"ucs": 350000}
    doc["calibration"]["inputs"] = ["twc_factor"]
    sc = parse_scenario(doc)
    with pytest.raises(ScenarioError) as err:
        assess(sc, samples=256)
    assert err.value.problems[0].key == "history[2] ('R-2 sand onset').drawdown"
    assert "model can produce" in err.value.problems[0].expected


@pytest.mark.slow
def test_mcmc_path_reports_its_diagnostics() -> None:
    from risk.assessment import assess

    doc = _doc()
    from risk.report.results import summarize

    doc["calibration"].update(method="mcmc", mcmc_steps=100)
    doc["rock"]["pore_collapse_pressure"] = 5500
    doc["option"] = [{"name": "open hole", "completion": "openhole", "hole_diameter": 8.5}]
    sc = parse_scenario(doc)
    a = assess(sc, samples=512)
    m = a.calibration.mcmc
    assert a.calibration.method == "mcmc"
    assert m["walkers"] >= 32 and 0 < m["acceptance"] < 1
    assert set(m["rhat"]) == {"twc_factor", "ucs"}
    assert np.isfinite(list(m["rhat"].values())).all()
    post = a.calibration.posterior  # options and pore collapse re-evaluated on the draws
    assert len(post.options) == 1 and post.pore_collapse is not None
    assert post.phasing is not None
    # same seed, same posterior bit for bit (the MCMC path included)
    s1 = json.dumps(summarize(a), sort_keys=True)
    assert s1 == json.dumps(summarize(assess(sc, samples=512)), sort_keys=True)


@pytest.mark.slow
def test_history_no_sample_can_reproduce_together_is_refused() -> None:
    # each observation alone is possible, but with R-3's rock far weaker (UCS 1,000 psi) no
    # sample both stays sand-free to 1,200 psi there and matches the others
    from risk.assessment import assess

    doc = _doc()
    doc["calibration"].update(inputs=["twc_factor"])
    doc["history"][0]["overrides"] = {"ucs": 1000}
    with pytest.raises(ScenarioError) as err:
        assess(parse_scenario(doc), samples=512)  # (with 256, R-3 alone is already refused)
    assert err.value.problems[0].key == "history"
    assert "reproduce together" in err.value.problems[0].expected


def test_refusal_through_the_api_writes_nothing(tmp_path: Path) -> None:
    # the command-line path: one message naming file, observation and key; no output folder
    from risk.api import run_scenario

    text = EXAMPLE.read_text(encoding="utf-8").replace(
        'overrides = { depth = 8150, shmin_gradient = { dist = "normal", mean = 0.74, sd = 0.02 '
        "} }", "overrides = { ucs = 350000 }").replace(
        'inputs = ["twc_factor", "ucs"]', 'inputs = ["twc_factor"]')
    path = tmp_path / "bad.toml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(ScenarioError) as err:
        run_scenario(path, out=tmp_path / "out", samples=256)
    assert str(path) in err.value.message
    assert "history[2] ('R-2 sand onset').drawdown: found outcome 'onset' at 1600 psi" in (
        err.value.message)
    assert not (tmp_path / "out").exists()


@pytest.mark.slow
def test_prior_column_is_the_run_itself_and_posterior_covers_every_result() -> None:
    # with equal weights (the prior) the weighted functions give the run's own phasing choice,
    # completion options, per-direction limits and pore collapse, computed by the run's
    # unweighted code (risk.decision, risk.probability, risk.result): derived, the weighted
    # inverted CDF reduces to the unweighted one (Hyndman & Fan 1996, definition 1)
    from risk import probability
    from risk.assessment import assess
    from risk.result import summarize

    doc = _doc()
    doc["calibration"]["min_ess"] = 20
    doc["rock"]["pore_collapse_pressure"] = 5500
    doc["option"] = [{"name": "open hole", "completion": "openhole", "hole_diameter": 8.5}]
    sc = parse_scenario(doc)
    a = assess(sc, samples=1024)
    prior, post = a.calibration.prior, a.calibration.posterior
    assert prior.phasing is not None and a.phasing is not None
    assert prior.phasing[2] == a.phasing.chosen.directions
    assert prior.phasing[3] == a.phasing.limits
    assert prior.options[0][1] == tuple(s.limit for s in a.options[0].sand_free.stages)
    dc = np.asarray(a.mechanisms["effective_strength_onset"].by_direction, dtype=float)
    for j in range(dc.shape[1]):
        for k, p_r in enumerate(sc.reservoir_pressure):
            own = min(probability.drawdown_limit(dc[:, j, k], sc.accepted_risk)[0], p_r)
            assert prior.per_direction["effective_strength_onset"][j][k] == own
    pore = summarize(a).pore_collapse
    assert pore is not None
    assert prior.pore_collapse["p10"] == pore.far_field["p10"]
    assert prior.pore_collapse["probability"] == tuple(s["probability"] for s in pore.stages)
    # the posterior has every one of them too, on the reweighted samples
    assert post.phasing is not None and len(post.options) == 1
    assert set(post.per_direction) == set(prior.per_direction)
    assert post.pore_collapse is not None
