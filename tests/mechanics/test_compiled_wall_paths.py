"""The compiled paths of the single-interval run's mechanics against their numpy reference
paths, on blocks of the examples' samples: the same operations in the same order, so the same
results bit for bit (the examples' results.json do not change with the compiled paths)."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pytest

from risk.limit_states import evaluate_compaction
from risk.scenario import load_scenario
from risk.uncertainty import UnitSampler, build_joint, input_columns, to_inputs

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"


def _block(name: str, n: int = 384) -> tuple[dict[str, np.ndarray], object]:
    sc = load_scenario(EXAMPLES / name)
    names = list(sc.inputs)
    joint = build_joint(names, [sc.inputs[k] for k in names], [list(p) for p in sc.correlation])
    x, _ = to_inputs(joint, UnitSampler(sc.sampling, joint.d, np.random.default_rng(7)).draw(n))
    return input_columns(joint, x), sc


@pytest.mark.parametrize("name", ["ravenmoor_g3_depleting_gas.toml",
                                  "ravenmoor_r7_openhole.toml"])
@pytest.mark.parametrize(("cap", "p_star_factor"), [("modified-cam-clay", 3.0),
                                                   ("mean-stress", 1.0)])
def test_compiled_wall_cap_equals_numpy_reference_path(name: str, cap: str,
                                                       p_star_factor: float) -> None:
    # the fused wall kernel against the numpy reference path (generalized Kirsch wall
    # stresses, Fjaer et al. 2008, eqs. 4.81-4.86, and the modified Cam clay excess, Roscoe &
    # Burland 1968, on 48 wall angles per frame): bit for bit, including the root found by
    # bracketing on it and the wall state at the largest drawdown of each stage
    cols, sc = _block(name)
    sc = dataclasses.replace(sc, compaction_cap=cap)
    # the examples' rock compacts at every wall on the cap already at p0: a stronger rock
    # (P* x 3 on the cap) puts the walls' critical pressures inside (0, p0), where they are
    # solved for
    cols = dict(cols)
    cols["pore_collapse_pressure"] = cols["pore_collapse_pressure"] * p_star_factor
    ref = evaluate_compaction(cols, sc, wall_path="numpy")
    got = evaluate_compaction(cols, sc)
    assert ref.wall_at_max_drawdown is not None and got.wall_at_max_drawdown is not None
    assert np.array_equal(got.wall, ref.wall)
    assert np.array_equal(got.far_field, ref.far_field)
    assert np.array_equal(got.wall_at_max_drawdown, ref.wall_at_max_drawdown)
    # the check can fail: the block has compacting and intact walls at the largest drawdown,
    # and critical pressures found by the root solve (strictly inside (0, p0))
    assert np.any(ref.wall_at_max_drawdown >= 0.0) and np.any(ref.wall_at_max_drawdown < 0.0)
    assert ref.initial is not None
    assert np.any((ref.wall > 0.0) & (ref.wall < ref.initial))


def test_wall_path_refuses_unknown_names() -> None:
    cols, sc = _block("ravenmoor_r7_openhole.toml", 16)
    with pytest.raises(ValueError, match="wall_path"):
        evaluate_compaction(cols, sc, wall_path="fortran")
