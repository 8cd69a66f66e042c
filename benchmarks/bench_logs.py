"""Risk over depth: the issue-16 case against the single-interval path, per case.

Usage: ``python benchmarks/bench_logs.py [--depths 3000] [--samples 4096] [--workers N]``. Builds a
synthetic LAS file (0.5 ft steps, invented logs) in a temporary folder and a perforated
scenario with 6 shots and 4 stages (Mohr-Coulomb, yield onset and the TWC onset), runs
:func:`risk.logs.depth.assess_depth` on it and :func:`risk.assessment.assess` on the
equivalent single interval with depths x samples samples (no sensitivity work counted: the
single-interval time is that of its evaluation loop only), and prints wall times, the ratio
per (depth, sample, shot, stage) case, and the peak resident memory of the process. Goal of
issue 16: the full case under 60 s on two cores and under 2 GB. Nothing here is a test.
"""

from __future__ import annotations

import argparse
import os
import resource
import tempfile
import time
from pathlib import Path

import numpy as np

SCENARIO = """
title = "Ravenmoor benchmark well (fictional)"
units = "field"
[well]
depth = 8000
inclination = 0
azimuth = 0
completion = "perforated"
shot_angles = [0, 60, 120, 180, 240, 300]
tunnel_diameter = 0.5
[stress]
shmax_gradient = {{ dist = "uniform", low = 0.80, high = 0.90 }}
shmin_gradient = {{ dist = "normal", mean = 0.72, sd = 0.02 }}
shmax_azimuth = {{ dist = "normal", mean = 40, sd = 8 }}
pp_gradient = 0.44
[rock]
friction_angle = {{ dist = "normal", mean = 32, sd = 2 }}
tensile_strength = 150
poisson_ratio = {{ dist = "uniform", low = 0.22, high = 0.30 }}
biot = 0.9
twc_ratio = {{ dist = "uniform", low = 1.1, high = 1.7 }}
[production]
reservoir_pressure = [3500, 3200, 2900, 2600]
max_drawdown = 2000
accepted_risk = 0.1
[analysis]
samples = {samples}
seed = 3
[logs]
file = "bench.las"
top = 7250
base = {base}
ucs_transform = "mcnally_1987"
ucs_cov = 0.3
correlation_length = 5
overburden = "density"
overburden_gradient_above = 0.95
planned_drawdown = 500
"""


def _las(path: Path, depths: int) -> float:
    rng = np.random.default_rng(1)
    z = 7250.0 + 0.5 * np.arange(depths)
    dt = 92.0 + np.convolve(rng.standard_normal(depths + 9), np.ones(10) / 3.0, "valid")
    rows = "".join(f"{a:.1f} {b:.3f} {2.65 - 1.65 * (0.12 + (b - 80) * 0.004):.4f}\n"
                   for a, b in zip(z, dt, strict=True))
    path.write_text("~VERSION INFORMATION\n VERS. 2.0 : CWLS LAS 2.0\n WRAP. NO : ONE LINE\n"
                    "~WELL INFORMATION\n NULL. -999.25 : NULL\n~CURVE INFORMATION\n"
                    " DEPT.FT : DEPTH\n DTC .US/FT : SONIC\n RHOB.G/CC : DENSITY\n~A\n" + rows)
    return float(z[-1])


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--depths", type=int, default=3000)
    ap.add_argument("--samples", type=int, default=4096)
    ap.add_argument("--workers", type=int, default=None,
                    help="threads over depth blocks (default: the usable cores)")
    args = ap.parse_args()
    load0 = os.getloadavg()
    from risk.assessment import CHUNK, evaluate
    from risk.logs.depth import assess_depth, default_workers
    from risk.logs.scenario import load_log_scenario
    from risk.uncertainty import UnitSampler, build_joint, input_columns, to_inputs

    with tempfile.TemporaryDirectory() as tmp:
        base = _las(Path(tmp) / "bench.las", args.depths)
        sc_path = Path(tmp) / "bench.toml"
        sc_path.write_text(SCENARIO.format(samples=args.samples, base=base))
        ls = load_log_scenario(sc_path)
        assess_depth(ls, samples=64)  # compile / load the kernel outside the timing
        t0, c0 = time.perf_counter(), time.process_time()
        res = assess_depth(ls, workers=args.workers)
        t_depth, cpu_depth = time.perf_counter() - t0, time.process_time() - c0
        cases = res.depth.size * res.samples * 6 * 4
        sc = ls.scenario
        names = list(sc.inputs)
        joint = build_joint(names, [sc.inputs[k] for k in names],
                            [list(p) for p in sc.correlation])
        sampler = UnitSampler(sc.sampling, joint.d, np.random.default_rng(0))
        n_single = min(cases // 24, 2**20)  # the same cases per call, capped for memory
        t0 = time.perf_counter()
        done = 0
        while done < n_single:
            m = min(CHUNK * 8, n_single - done)
            x, _ = to_inputs(joint, sampler.draw(m))
            evaluate(input_columns(joint, x), sc)
            done += m
        t_single = (time.perf_counter() - t0) * (cases / 24) / n_single
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024**2  # Linux: kB -> GB
    workers = default_workers() if args.workers is None else args.workers
    print(f"load average (1 min) at the start {load0[0]:.1f}, at the end "
          f"{os.getloadavg()[0]:.1f}; {workers} worker thread(s) for the depth path")
    print(f"depths x samples x shots x stages: {res.depth.size} x {res.samples} x 6 x 4 = "
          f"{cases:,} cases")
    print(f"risk over depth: {t_depth:.1f} s ({1e9 * t_depth / cases:.0f} ns per case; "
          f"goal < 60 s: {'met' if t_depth < 60 else 'NOT met'})")
    print(f"  CPU time of the process over all its threads {cpu_depth:.1f} s "
          f"({1e9 * cpu_depth / cases:.0f} ns per case; on {workers} uncontended cores about "
          f"{cpu_depth / workers:.0f} s)")
    print(f"single-interval evaluation of as many cases (extrapolated from {n_single:,} "
          f"samples): {t_single:.1f} s; ratio depth/single = {t_depth / t_single:.2f}")
    print(f"peak resident memory: {peak:.2f} GB (goal < 2 GB: "
          f"{'met' if peak < 2 else 'NOT met'})")


if __name__ == "__main__":
    main()
