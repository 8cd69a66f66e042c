"""Run the three Ravenmoor examples through the public API and compare their sand-free limits.

Usage: python examples/compare_wells.py [--samples N] [--out reports/examples]
Invented data (a fictional field), for demonstration only.
"""

from __future__ import annotations

import argparse
from pathlib import Path

from risk.api import run_scenario

HERE = Path(__file__).resolve().parent
WELLS = ("ravenmoor_r7_openhole.toml", "ravenmoor_r12_deviated_perforated.toml",
         "ravenmoor_g3_depleting_gas.toml")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--samples", type=int, default=2048)
    ap.add_argument("--out", type=Path, default=Path("reports/examples"))
    args = ap.parse_args()
    for name in WELLS:
        result = run_scenario(HERE / name, out=args.out / Path(name).stem,
                              samples=args.samples, force=True)
        s = result.summary
        unit = s["units"]["pressure"]
        print(f"\n{s['title']} ({s['samples']} samples, seed {s['seed']}, "
              f"accepted risk {s['accepted_risk']})")
        sand = s["sand_free"]
        if sand is None:  # no sand-production mechanism in this scenario
            print(f"  no sand-free limit: {s['sand_free_note']}")
        else:
            for stage in sand["stages"]:
                print(f"  p_r {stage['reservoir_pressure']:>8} {unit}: sand-free limit "
                      f"{stage['drawdown_limit']} {unit} ({stage['governing_name']}; "
                      f"P(sand with no drawdown) {stage['p_no_drawdown']:.1%})")
            zero = sand["zero_limit"]
            if zero["kind"] == "between":
                print(f"  the limit reaches zero below about {zero['estimate']} {unit}")
        choice = s.get("completion_choice")
        if choice:
            chosen = choice["chosen"]
            print(f"  gun for the life of the well: {chosen['phasing']} deg phasing, shots at "
                  f"{chosen['shot_angles']} deg: {chosen['drawdown_limits']} {unit}")
        print(f"  memo: {result.out_dir / 'memo.html'}")


if __name__ == "__main__":
    main()
