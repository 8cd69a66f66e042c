"""Run the three Ravenmoor examples through the public API and compare their limits.

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


def governing(stage_rows: dict[str, dict]) -> tuple[str, float | None]:
    """The mechanism with the smallest drawdown limit at one stage, and that limit."""
    best = min(stage_rows.items(),
               key=lambda kv: (kv[1]["drawdown_limit"] is None, kv[1]["drawdown_limit"] or 0))
    return best[0], best[1]["drawdown_limit"]


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
        drawdown_mechs = {k: m for k, m in s["mechanisms"].items() if k != "pore_collapse"}
        for i, stage in enumerate(next(iter(drawdown_mechs.values()))["stages"]):
            rows = {k: m["stages"][i] for k, m in drawdown_mechs.items()}
            mech, limit = governing(rows)
            print(f"  p_r {stage['reservoir_pressure']:>8} {unit}: limit {limit} {unit} "
                  f"({s['mechanisms'][mech]['name']})")
        print(f"  memo: {result.out_dir / 'memo.html'}")


if __name__ == "__main__":
    main()
