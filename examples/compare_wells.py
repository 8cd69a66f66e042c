"""Run the three Ravenmoor examples through the Python API and compare their sand-free limits.

Usage: python examples/compare_wells.py [--samples N] [--out reports/examples]
Uses only the public API (risk.load_scenario, risk.assess, the typed result, risk.report.write).
Invented data (a fictional field), for demonstration only.
"""

from __future__ import annotations

import argparse
from pathlib import Path

import risk

HERE = Path(__file__).resolve().parent
WELLS = ("ravenmoor_r7_openhole.toml", "ravenmoor_r12_deviated_perforated.toml",
         "ravenmoor_g3_depleting_gas.toml")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--samples", type=int, default=2048)
    ap.add_argument("--out", type=Path, default=Path("reports/examples"))
    args = ap.parse_args()
    for name in WELLS:
        scenario = risk.load_scenario(HERE / name)
        res = risk.assess(scenario, samples=args.samples)
        print(f"\n{scenario.title} ({args.samples} samples, seed {res.seed}, accepted risk "
              f"{scenario.accepted_risk})")
        limits = res.limits.to_frame()
        sand = limits[limits["mechanism"] == "sand_free"]
        if sand.empty:
            print("  no sand-production mechanism enabled: no sand-free limit")
        else:
            print(sand.filter(regex="^(reservoir_pressure|drawdown_limit|zero_drawdown)")
                  .to_string(index=False))
        if res.phasing is not None:
            chosen = res.phasing.chosen
            print(f"  gun for the life of the well: {chosen.phasing} deg phasing, "
                  f"{len(chosen.directions)} shot direction(s)")
        out = risk.report.write(res, args.out / Path(name).stem)
        print(f"  memo: {out / 'memo.html'}")


if __name__ == "__main__":
    main()
