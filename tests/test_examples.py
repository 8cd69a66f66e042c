"""The shipped examples stay valid and runnable (regression of the files, not of numbers)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from risk.assessment import assess
from risk.report.results import summarize
from risk.scenario import load_scenario

EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "examples").glob("*.toml"))


def test_three_examples_ship():
    assert len(EXAMPLES) >= 3
    units = {load_scenario(p).units for p in EXAMPLES}
    assert units == {"field", "si"}


# an example with a field history runs its MCMC at this tiny sample size (about a minute)
@pytest.mark.parametrize("path", [pytest.param(p, marks=pytest.mark.slow)
                                  if "history" in p.stem else p for p in EXAMPLES],
                         ids=lambda p: p.stem)
def test_example_runs(path):
    s = summarize(assess(load_scenario(path), samples=64))
    json.dumps(s, allow_nan=False)
    assert s["samples"] == 64 and s["scenario_sha256"]
    assert "Ravenmoor" in s["title"]  # the fictional field of the examples
