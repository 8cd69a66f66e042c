"""Public entry points: one call per CLI command, usable from scripts and notebooks."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

from risk.errors import ScenarioError
from risk.scenario import MAX_SAMPLES, load_scenario

__all__ = ["RunResult", "run_scenario", "new_scenario"]


@dataclass(frozen=True)
class RunResult:
    """What :func:`run_scenario` produced: the JSON summary and where it was written."""

    summary: dict[str, Any]
    out_dir: Path
    assessment: Any


def _check_overrides(samples: int | None, seed: int | None) -> None:
    if samples is not None and not 1 <= samples <= MAX_SAMPLES:
        raise ScenarioError.single("--samples", samples,
                                   f"a whole number of samples from 1 to {MAX_SAMPLES:,}")
    if seed is not None and not 0 <= seed < 2**63:
        raise ScenarioError.single("--seed", seed, "a whole number >= 0")


def run_scenario(path: str | Path, *, out: str | Path = "reports/run", samples: int | None = None,
                 seed: int | None = None, show_progress: bool = False,
                 force: bool = False) -> RunResult:
    """Load, assess and write the outputs (``results.json`` ...) into the folder ``out``.

    Raises
    ------
    ScenarioError
        For any bad input (the file, the overrides or the output folder).
    """
    _check_overrides(samples, seed)
    scenario = load_scenario(path)
    from risk.report.writer import check_output_dir, dumps, publish

    out_dir = check_output_dir(out, force=force)
    from risk.assessment import assess
    from risk.report.results import summarize

    if show_progress:
        from rich.progress import Progress

        with Progress(transient=True) as bar:
            task = bar.add_task("evaluating samples", total=None)

            def tick(done: int, total: int) -> None:
                bar.update(task, completed=done, total=total)

            assessment = assess(scenario, samples=samples, seed=seed, progress=tick)
    else:
        assessment = assess(scenario, samples=samples, seed=seed)
    summary = summarize(assessment)
    publish(out_dir, {"results.json": dumps(summary)}, force=force)
    return RunResult(summary, out_dir, assessment)


def new_scenario(path: str | Path, *, units: str = "field", force: bool = False) -> Path:
    """Write the commented scenario template (:mod:`risk.template`) to ``path``.

    Raises
    ------
    ScenarioError
        For unknown units, an existing file (without ``force``), a folder or an unwritable place.
    """
    from risk.report.writer import replace_files
    from risk.template import scenario_template

    if units not in ("field", "si"):
        raise ScenarioError.single("--units", units, '"field" or "si"')
    p = Path(path)
    if p.is_dir():
        raise ScenarioError.single("FILE", str(path), "a file name, not a folder")
    if p.exists() and not force:
        raise ScenarioError.single("FILE", str(path), "a new file name, or --force to overwrite",
                                   found_text=f"the existing file {str(path)!r}")
    try:
        replace_files(p.parent if str(p.parent) else Path("."),
                      {p.name: scenario_template(units)})
    except OSError as exc:
        raise ScenarioError.single("FILE", str(path), "a writable place",
                                   found_text=f"{str(path)!r} ({exc.strerror})") from None
    return p
