"""The field's answers across cases (from each case's results.json): wells ranked by their
smallest sand-free limit, the field's envelope over reservoir pressure, the inputs that matter
across the field; and the batch's output files.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from datetime import UTC, datetime
from typing import Any

from risk import __version__
from risk.batch.field import Field

__all__ = ["table", "files", "ranking", "envelope", "inputs_that_matter"]

TOP_INPUTS = 3  # an input "matters" in a case when it ranks among its first three


def _rows(fld: Field, statuses: Sequence[Any], summaries: Mapping[str, Mapping[str, Any]]
          ) -> list[dict[str, Any]]:
    from risk.batch.table import case_rows, failed_row

    rows: list[dict[str, Any]] = []
    for st in statuses:
        if st.ok:
            rows += case_rows(summaries[st.case], case=st.case, well=st.well,
                              interval=st.interval, digest=st.digest or "", reused=st.reused,
                              units=fld.units)
        else:
            rows.append(failed_row(case=st.case, well=st.well, interval=st.interval,
                                   message=st.message or "failed", digest=st.digest))
    return rows


def table(fld: Field, statuses: Sequence[Any], summaries: Mapping[str, Mapping[str, Any]]
          ) -> Any:
    """The results table (pandas DataFrame, pressures in the field's units)."""
    from risk.batch.table import frame

    return frame(_rows(fld, statuses, summaries), fld.units)


def _scale(summary: Mapping[str, Any], units: str) -> float:
    from risk.conventions import TO_INTERNAL

    own = str(summary.get("unit_system", units))
    return TO_INTERNAL[own]["pressure"] / TO_INTERNAL[units]["pressure"]


def ranking(fld: Field, summaries: Mapping[str, Mapping[str, Any]]) -> list[dict[str, Any]]:
    """Cases with a sand-free limit, smallest limit over the stages first (the most
    constraining well first); at equal limits the one reaching it earlier in depletion (at
    the higher reservoir pressure) first, then by case name."""
    out = []
    for cid, s in summaries.items():
        sf = s.get("sand_free")
        if not sf:
            continue
        k = _scale(s, fld.units)
        stages = [(st["drawdown_limit"] * k, st["reservoir_pressure"] * k, st["governing_name"],
                   None if st["drawdown_limit_lower"] is None
                   else st["drawdown_limit_lower"] * k)
                  for st in sf["stages"] if st["drawdown_limit"] is not None]
        if not stages:
            continue
        lim, p_r, gov, low = min(stages, key=lambda t: t[0])
        pts = [p["probability"] for p in sf.get("operating_points") or []
               if p.get("probability") is not None]
        out.append({"case": cid, "limit": lim, "reservoir_pressure": p_r, "governing": gov,
                    "lower": low, "p_planned_max": max(pts) if pts else None,
                    "accepted_risk": s.get("accepted_risk"),
                    "limits": [t[0] for t in stages], "pressures": [t[1] for t in stages]})
    out.sort(key=lambda r: (r["limit"], -r["reservoir_pressure"], r["case"]))
    return out


def envelope(ranked: Sequence[Mapping[str, Any]]) -> list[dict[str, Any]]:
    """The field's envelope: at every reservoir pressure some case was evaluated at, the
    smallest sand-free limit of the cases whose stages span it (linear between a case's own
    stages, never extrapolated) and the case it belongs to."""
    pressures = sorted({p for r in ranked for p in r["pressures"]}, reverse=True)
    out = []
    for p in pressures:
        best: tuple[float, str] | None = None
        for r in ranked:
            ps, ls = r["pressures"], r["limits"]
            if not min(ps) <= p <= max(ps):
                continue
            pairs = sorted(zip(ps, ls, strict=True))
            xs, ys = [a for a, _ in pairs], [b for _, b in pairs]
            v = ys[0] if len(xs) == 1 else _interp(p, xs, ys)
            if best is None or v < best[0]:
                best = (v, r["case"])
        if best is not None:
            out.append({"reservoir_pressure": p, "limit": best[0], "case": best[1]})
    return out


def _interp(x: float, xs: list[float], ys: list[float]) -> float:
    for i in range(len(xs) - 1):
        if xs[i] <= x <= xs[i + 1]:
            if xs[i + 1] == xs[i]:
                return min(ys[i], ys[i + 1])
            t = (x - xs[i]) / (xs[i + 1] - xs[i])
            return ys[i] + t * (ys[i + 1] - ys[i])
    return ys[-1]


def inputs_that_matter(summaries: Mapping[str, Mapping[str, Any]]) -> list[dict[str, Any]]:
    """Per input: in how many cases it ranks among the first :data:`TOP_INPUTS` for the
    mechanism that governs the case's first stage, and its mean index there (Shapley effect,
    else total, else first-order index, as each case's memo ranks them)."""
    seen: dict[str, list[float]] = {}
    top: dict[str, int] = {}
    for s in summaries.values():
        sf = s.get("sand_free")
        if not sf or not sf["stages"]:
            continue
        rows = (s.get("sensitivity") or {}).get(sf["stages"][0]["governing"]) or []
        for j, row in enumerate(rows):
            v = row.get("rank_value")
            if v is None or not math.isfinite(v):
                continue
            seen.setdefault(row["input"], []).append(float(v))
            if j < TOP_INPUTS:
                top[row["input"]] = top.get(row["input"], 0) + 1
    order = sorted(seen, key=lambda k: (-top.get(k, 0), -sum(seen[k]) / len(seen[k]), k))
    return [{"input": k, "cases_top": top.get(k, 0), "cases": len(seen[k]),
             "mean_index": sum(seen[k]) / len(seen[k])} for k in order]


def files(fld: Field, statuses: Sequence[Any], summaries: Mapping[str, Mapping[str, Any]],
          df: Any, *, started: float, samples: int | None, seed: int | None, memos: bool
          ) -> dict[str, str | bytes]:
    """Every file of the batch folder itself (the cases' folders are written as they finish)."""
    from risk.batch.table import to_csv, to_parquet
    from risk.conventions import DISPLAY_UNITS
    from risk.report.field_memo import field_memo
    from risk.report.writer import dumps

    ranked = ranking(fld, summaries)
    env = envelope(ranked)
    inputs = inputs_that_matter(summaries)
    run_date = datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC")
    batch = {"tool": "risk", "kind": "field batch", "status": "complete",
             "version": __version__, "field_file": fld.source_name,
             "field_sha256": fld.sha256, "run_date": run_date,
             "seconds": round(datetime.now(UTC).timestamp() - started, 1),
             "samples_override": samples, "seed_override": seed, "case_memos": memos,
             "cases": [{"case": st.case, "folder": f"cases/{st.folder}", "ok": st.ok,
                        "reused": st.reused, "message": st.message, "input_digest": st.digest,
                        "seconds": round(st.seconds, 2)} for st in statuses],
             "computed": sum(st.ok and not st.reused for st in statuses),
             "reused": sum(st.reused for st in statuses),
             "failed": sum(not st.ok for st in statuses)}
    memo = field_memo({"title": fld.title, "field_file": fld.source_name,
                       "version": __version__, "run_date": run_date,
                       "unit": DISPLAY_UNITS[fld.units]["pressure"], "ranking": ranked,
                       "envelope": env, "inputs": inputs, "batch": batch})
    out: dict[str, str | bytes] = {"results.parquet": to_parquet(df), "results.csv": to_csv(df),
                                   "batch.json": dumps(batch)}
    out.update(memo)
    return out
