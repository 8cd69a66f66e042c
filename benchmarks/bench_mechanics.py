"""Cost of the issue-15 mechanics on the shipped examples (prints ratios; not a test).

For each example, one block of 4,096 sampled inputs, best of three:

1. ``evaluate`` with the tunnel-root parts (what ``assess`` computes for its results) over
   ``evaluate`` without them (what the sensitivity and small-risk steps call);
2. ``evaluate_compaction`` with the compaction cap over the mean-stress form (both include
   the wall at the largest drawdown);
3. ``evaluate`` with water weakening in the last stage over without.

Ratios, not seconds, are the result: the machine is shared.
Run: .venv/bin/python benchmarks/bench_mechanics.py
"""

from __future__ import annotations

import dataclasses
import time
from collections.abc import Callable
from pathlib import Path

import numpy as np

from risk.limit_states import evaluate, evaluate_compaction
from risk.scenario import load_scenario
from risk.uncertainty import UnitSampler, build_joint, input_columns, to_inputs

EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "examples").glob("*.toml"))
N = 4096


def best_of(fn: Callable[[], object], repeat: int = 3) -> float:
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times)


def bench(path: Path) -> str:
    """One example's ratios as a line of text."""
    sc = load_scenario(path)
    names = list(sc.inputs)
    joint = build_joint(names, [sc.inputs[k] for k in names],
                        [list(p) for p in sc.correlation])
    x, _ = to_inputs(joint, UnitSampler("sobol", joint.d, np.random.default_rng(0)).draw(N))
    cols = input_columns(joint, x)
    plain = best_of(lambda: evaluate(cols, sc))
    parts = best_of(lambda: evaluate(cols, sc, parts=True))
    line = f"{path.stem}: evaluate with root parts / without = {parts / plain:.2f}"
    if "pore_collapse_pressure" in sc.inputs:
        mean = dataclasses.replace(sc, compaction_cap="mean-stress")
        t_mean = best_of(lambda: evaluate_compaction(cols, mean))
        t_cap = best_of(lambda: evaluate_compaction(cols, sc))
        line += f"; compaction cap / mean-stress = {t_cap / t_mean:.2f}"
    k = len(sc.reservoir_pressure)
    wet = dataclasses.replace(sc, water_saturation=(0.0,) * (k - 1) + (0.5,))
    wet_cols = {**cols, "wet_strength_ratio": np.full(N, 0.7)}
    line += (f"; water weakening / none = "
             f"{best_of(lambda: evaluate(wet_cols, wet)) / plain:.2f}")
    return line


def main() -> None:
    for path in EXAMPLES:
        print(bench(path), flush=True)


if __name__ == "__main__":
    main()
