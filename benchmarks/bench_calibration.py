"""Calibration and value of information: what they add to a run, and the MCMC path's time.

Prints ratios (issue 17 goals): (1) the extra time of calibration by reweighting plus the value
of information over a 20,000-sample run of examples/ravenmoor_r5_sanding_history.toml without
history (goal <= 0.30); (2) the time of a 5-parameter MCMC posterior over 120 s (goal < 1),
with its model-run count. Run: PYTHONPATH=. python benchmarks/bench_calibration.py [samples]
"""

from __future__ import annotations

import sys
import time
import tomllib
from pathlib import Path
from typing import Any

from risk import assessment
from risk.assessment import assess
from risk.scenario import parse_scenario

EXAMPLE = Path(__file__).parents[1] / "examples" / "ravenmoor_r5_sanding_history.toml"


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 20_000
    doc = tomllib.loads(EXAMPLE.read_text(encoding="utf-8"))
    plain = {k: v for k, v in doc.items() if k not in ("history", "calibration", "measurement")}
    assess(parse_scenario(plain), samples=256)  # load the compiled kernel once
    t0 = time.process_time()
    assess(parse_scenario(plain), samples=n)
    base = time.process_time() - t0
    doc["calibration"] = {**doc["calibration"], "method": "reweight"}
    # the calibration step timed inside the same run (less exposed to the load of other
    # processes than two runs compared with each other)
    inner = {"t": 0.0}
    original = assessment._calibration

    def timed(*args: Any, **kwargs: Any) -> Any:
        t = time.process_time()
        try:
            return original(*args, **kwargs)
        finally:
            inner["t"] += time.process_time() - t

    assessment._calibration = timed
    t0 = time.process_time()
    a = assess(parse_scenario(doc), samples=n)
    with_cal = time.process_time() - t0
    assessment._calibration = original
    print(f"run without history: {base:.1f} s CPU; with calibration + VoI: {with_cal:.1f} s, "
          f"of which calibration + VoI {inner['t']:.2f} s; ESS {a.calibration.ess:.0f}")
    print(f"ratio of added time, two runs (goal <= 0.30): {(with_cal - base) / base:.3f}")
    print(f"ratio of added time, within the run (goal <= 0.30): "
          f"{inner['t'] / (with_cal - inner['t']):.3f}")

    five = dict(doc)
    five["calibration"] = {"inputs": ["twc_factor", "ucs", "twc_ratio", "friction_angle",
                                      "poisson_ratio"], "method": "mcmc"}
    sc = parse_scenario(five)
    t0 = time.perf_counter()
    b = assess(sc, samples=4096)
    t_all = time.perf_counter() - t0
    m = b.calibration.mcmc
    print(f"5-parameter MCMC: {m['walkers']} walkers x {m['steps']} steps, acceptance "
          f"{m['acceptance']:.2f}, max R-hat {max(m['rhat'].values()):.3f}, "
          f"{m['model_runs']:,} model runs; whole 4,096-sample run {t_all:.1f} s wall")
    print(f"ratio of wall time to 120 s (goal < 1): {t_all / 120.0:.3f}")


if __name__ == "__main__":
    main()
