"""The strength multiplier: a model-calibration input on UCS (default 1, no spread)."""

from __future__ import annotations

import copy
import tomllib
from pathlib import Path
from typing import Any

import numpy as np

from risk.assessment import assess
from risk.scenario import parse_scenario

HISTORY = Path(__file__).parents[2] / "examples" / "ravenmoor_r5_sanding_history.toml"


def _doc() -> dict[str, Any]:
    doc = tomllib.loads(HISTORY.read_text(encoding="utf-8"))
    for k in ("history", "calibration", "measurement"):
        doc.pop(k, None)
    return doc


def _by_direction(doc: dict[str, Any]) -> dict[str, np.ndarray]:
    a = assess(parse_scenario(doc), samples=256)
    return {k: np.asarray(m.by_direction) for k, m in a.mechanisms.items()}


def test_multiplier_is_ucs_scaled() -> None:
    # derived from the definition: a fixed multiplier m on UCS gives every mechanism the
    # results of the rock with UCS x m (a UCS given as a median scales with it; its draws are
    # m times as large, to rounding)
    doc = _doc()
    scaled = copy.deepcopy(doc)
    scaled["rock"]["ucs"] = {**doc["rock"]["ucs"], "median": doc["rock"]["ucs"]["median"] * 1.3}
    doc["rock"]["strength_multiplier"] = 1.3
    a, b = _by_direction(doc), _by_direction(scaled)
    assert a.keys() == b.keys() and "effective_strength_onset" in a
    for k in a:
        np.testing.assert_allclose(a[k], b[k], rtol=1e-9, atol=1e-9)


def test_multiplier_one_changes_nothing_and_spread_moves_the_limits() -> None:
    # 1 with no spread is the default: bit for bit as without it (derived); a stronger rock
    # has a later sanding onset (common practice), so a multiplier 1.5 raises every
    # effective-strength critical drawdown that was below the reservoir pressure
    doc = _doc()
    plain = _by_direction(doc)
    doc["rock"]["strength_multiplier"] = 1.0
    one = _by_direction(doc)
    for k in plain:
        assert plain[k].tobytes() == one[k].tobytes()
    doc["rock"]["strength_multiplier"] = 1.5
    strong = _by_direction(doc)["effective_strength_onset"]
    weak = plain["effective_strength_onset"]
    moved = np.isfinite(weak) & (weak > 0)
    assert np.all(strong[moved] > weak[moved])


def test_twc_given_directly_is_not_scaled() -> None:
    # a TWC test is a measurement of its own: the effective-strength onset keeps it (the
    # documented scope of the multiplier)
    doc = _doc()
    doc["rock"].pop("twc_ratio")
    doc["rock"]["twc"] = 5000
    base = _by_direction(doc)["effective_strength_onset"]
    doc["rock"]["strength_multiplier"] = 1.5
    assert base.tobytes() == _by_direction(doc)["effective_strength_onset"].tobytes()


def test_uncertain_multiplier_is_calibrated_by_default() -> None:
    doc = tomllib.loads(HISTORY.read_text(encoding="utf-8"))
    doc["rock"]["strength_multiplier"] = {"dist": "lognormal", "median": 1.0, "cov": 0.2}
    del doc["calibration"]["inputs"]
    sc = parse_scenario(doc)
    assert sc.history.calibration.inputs == ("twc_factor", "strength_multiplier")
    fixed = copy.deepcopy(doc)
    fixed["rock"]["strength_multiplier"] = 1.0  # no spread: not calibrated
    assert parse_scenario(fixed).history.calibration.inputs == ("twc_factor",)
