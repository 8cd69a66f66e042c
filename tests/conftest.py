"""Shared fixtures: small scenario documents written to temporary files."""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from hypothesis import settings

# Property tests draw the same examples on every run, so CI cannot turn red by chance;
# HYPOTHESIS_PROFILE=explore draws new ones (run it locally now and then).
settings.register_profile("deterministic", derandomize=True, database=None)
settings.register_profile("explore", derandomize=False)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "deterministic"))

FIELD_DOC = """
title = "Test well (field units)"
units = "field"
[well]
depth = 9200
inclination = 35
azimuth = 120
completion = "perforated"
shot_angles = [0, 60, 120, 180, 240, 300]
tunnel_diameter = 0.5
[stress]
sv_gradient = 1.0
shmax_gradient = 0.88
shmin_gradient = 0.74
shmax_azimuth = 45
pp_gradient = 0.45
depletion_path = 0.6
[rock]
ucs = 9000
friction_angle = 30
tensile_strength = 800
poisson_ratio = 0.25
biot = 0.9
[production]
reservoir_pressure = [4140, 3800, 3400]
max_drawdown = 2500
accepted_risk = 0.10
[analysis]
criterion = "mohr-coulomb"
samples = 2000
seed = 1
"""


@pytest.fixture
def write(tmp_path: Path):
    def _write(text: str, name: str = "scenario.toml") -> Path:
        p = tmp_path / name
        p.write_text(text, encoding="utf-8")
        return p

    return _write


@pytest.fixture
def field_doc() -> str:
    return FIELD_DOC
