"""Reporting: a typed :class:`~risk.result.Result` formatted as results.json, console tables,
figures and the memo; :func:`write` puts them in an output folder (the one place that writes
files is :mod:`risk.report.writer`).

Example (a notebook)::

    import risk
    sc = risk.load_scenario("examples/ravenmoor_r7_openhole.toml")
    res = risk.assess(sc, samples=4096, seed=7)
    res.limits.to_frame()
    risk.report.write(res, "reports/r7")   # results.json, memo.html/pdf, figures
"""

from __future__ import annotations

from datetime import UTC, datetime
from pathlib import Path
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # pragma: no cover
    from risk.result import Result

__all__ = ["write", "output_files", "memo_files"]


def run_info(scenario_file: str, summary: dict[str, Any]) -> dict[str, Any]:
    """run.json: the date of the run and what reproduces it (kept out of results.json so that
    reruns compare byte for byte)."""
    return {"run_date": datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC"),
            "scenario_file": scenario_file, "scenario_sha256": summary["scenario_sha256"],
            "version": summary["version"], "seed": summary["seed"],
            "samples": summary["samples"], "sampling": summary["sampling"]}


def memo_files(summary: dict[str, Any], info: dict[str, Any], *,
               reuse: dict[str, bytes] | None = None,
               previous: tuple[str, bytes] | None = None) -> dict[str, str | bytes]:
    """memo.html, memo.pdf and figures/*.png of a summary; the run date comes from run.json.
    ``reuse``: figures written before, by name (kept where they would come out the same);
    ``previous``: memo.html and memo.pdf written before (the PDF kept if the page is the
    same)."""
    from risk.report.memo import build_memo

    memo = build_memo({**summary, "run_date": info.get("run_date")}, reuse=reuse,
                      previous=previous)
    files: dict[str, str | bytes] = {"memo.html": memo.html, "memo.pdf": memo.pdf}
    files.update({f"figures/{name}.png": png for name, png in memo.figures.items()})
    return files


def output_files(summary: dict[str, Any], info: dict[str, Any]) -> dict[str, str | bytes]:
    """Every output of a run: results.json, run.json and the memo files."""
    from risk.report.writer import dumps

    files: dict[str, str | bytes] = {"results.json": dumps(summary), "run.json": dumps(info)}
    files.update(memo_files(summary, info))
    return files


def write(result: Result, out: str | Path, *, force: bool = False) -> Path:
    """Write a result's outputs (results.json, run.json, memo.html, memo.pdf, figures) into
    the output folder ``out`` under the rules of :mod:`risk.report.writer` (a folder the tool
    owns; files it did not write are never touched). Returns the folder.

    Raises
    ------
    ScenarioError
        (key ``out``) for an output folder that must not or cannot be written.
    """
    from risk.report.results import summarize
    from risk.report.writer import OutputFolder

    sc = result.scenario
    inputs = [sc.source_name] if sc.source_name and Path(sc.source_name).is_file() else []
    with OutputFolder(out, force=force, inputs=inputs, key="out") as folder:
        summary = summarize(result)
        folder.publish(output_files(summary, run_info(sc.source_name, summary)))
    return folder.path
