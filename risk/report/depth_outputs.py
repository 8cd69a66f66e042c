"""The files of a log run: results.json, run.json, the per-depth table as CSV and Parquet,
the depth-track figure and the memo (all handed to the writer's OutputFolder by risk.api)."""

from __future__ import annotations

import io
from collections.abc import Mapping
from typing import Any

import pandas as pd

__all__ = ["depth_frame", "log_output_files"]


def depth_frame(summary: Mapping[str, Any]) -> pd.DataFrame:
    """The per-depth table (one row per depth; units in the column names)."""
    return pd.DataFrame({k: pd.array(v, dtype="boolean" if isinstance(v[0], bool) else "Float64")
                         for k, v in summary["table"].items()})


def log_output_files(summary: dict[str, Any], info: dict[str, Any]) -> dict[str, str | bytes]:
    """Every output of a log run by file name."""
    from risk.report.figures.depth import depth_png
    from risk.report.memo.logs import log_memo_html
    from risk.report.memo.render import render_pdf
    from risk.report.writer import dumps

    frame = depth_frame(summary)
    csv = frame.to_csv(index=False, lineterminator="\n", na_rep="")
    buf = io.BytesIO()
    frame.to_parquet(buf, index=False, engine="pyarrow")
    png = depth_png(summary)
    memo = log_memo_html(summary, png, info.get("run_date"),
                         scenario_file=info.get("scenario_file"))
    return {"results.json": dumps(summary), "run.json": dumps(info), "depth.csv": csv,
            "depth.parquet": buf.getvalue(), "figures/depth.png": png, "memo.html": memo,
            "memo.pdf": render_pdf(memo)}
