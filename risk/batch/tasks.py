"""What runs on a Dask worker: one case whole, or a range of one case's sample chunks and the
case's finish from them. Pure functions of picklable inputs; nothing here writes a file (the
client writes every output, so workers need no shared filesystem).
"""

from __future__ import annotations

import os
import signal
import time
import traceback
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Final

from risk.errors import ScenarioError

__all__ = ["CaseTask", "CaseOutcome", "run_case", "run_chunks", "finish_case", "PROGRESS_TOPIC",
           "scenario_of"]

PROGRESS_TOPIC: Final = "risk-batch-progress"
# Test hook: ``RISK_TEST_KILL_CASE=<case id>=<marker file>`` kills the worker process (SIGKILL)
# the first time it starts that case (the marker file records that it did).
_KILL_ENV: Final = "RISK_TEST_KILL_CASE"


@dataclass(frozen=True)
class CaseTask:
    """Everything a worker needs for one case (no file is read on the worker)."""

    case: str
    document: dict[str, Any]
    source_name: str
    sha256: str
    samples: int | None
    seed: int | None
    digest: str
    memos: bool
    info: dict[str, Any] = field(default_factory=dict)  # extra keys of run.json


@dataclass(frozen=True)
class CaseOutcome:
    """A case's outputs (file name -> content) or its failure message."""

    case: str
    ok: bool
    files: dict[str, str | bytes]
    summary: dict[str, Any] | None
    message: str | None
    seconds: float


def scenario_of(task: CaseTask) -> Any:
    """The validated scenario of a case (ScenarioError for a bad one)."""
    from risk.scenario import parse_scenario

    return parse_scenario(task.document, source_name=task.source_name, sha256=task.sha256)


def _progress(case: str, part: int | None = None) -> Any:
    """A progress callback that tells the client (a worker event), or None off a worker.

    ``part`` (the first chunk of a range of a split case) marks the counts as those of that
    range: the client adds up the ranges of a case."""
    try:
        from distributed import get_worker

        worker = get_worker()
    except (ImportError, ValueError):
        return None
    last = [0.0]

    def tell(done: int, total: int) -> None:
        now = time.monotonic()
        if done == total or now - last[0] > 0.25:
            last[0] = now
            event: dict[str, Any] = {"case": case, "done": done, "total": total}
            if part is not None:
                event["part"] = part
            worker.log_event(PROGRESS_TOPIC, event)
    return tell


def _kill_hook(case: str) -> None:
    spec = os.environ.get(_KILL_ENV, "")
    target, _, marker = spec.partition("=")
    if target == case and marker and not Path(marker).exists():
        Path(marker).write_text(str(os.getpid()))
        os.kill(os.getpid(), signal.SIGKILL)


def _files(task: CaseTask, summary: dict[str, Any]) -> dict[str, str | bytes]:
    from risk.report import memo_files, run_info
    from risk.report.writer import dumps

    info = {**run_info(task.source_name, summary), **task.info, "input_digest": task.digest}
    files: dict[str, str | bytes] = {"results.json": dumps(summary), "run.json": dumps(info)}
    if task.memos:
        files.update(memo_files(summary, info))
    return files


def _guarded(task: CaseTask, work: Any) -> CaseOutcome:
    import warnings

    import numpy as np

    start = time.perf_counter()
    try:
        with warnings.catch_warnings(), np.errstate(all="ignore"):
            warnings.simplefilter("ignore")
            summary = work()
            files = _files(task, summary)
    except ScenarioError as err:
        return CaseOutcome(task.case, False, {}, None, err.message,
                           time.perf_counter() - start)
    except Exception as exc:  # noqa: BLE001 - one case's bug must not stop the field
        last = traceback.extract_tb(exc.__traceback__)[-1:]
        where = f" at {Path(last[0].filename).name}:{last[0].lineno}" if last else ""
        return CaseOutcome(task.case, False, {}, None,
                           f"internal error ({type(exc).__name__}: {exc}{where}); this is a "
                           "bug in risk, please report it with the case",
                           time.perf_counter() - start)
    return CaseOutcome(task.case, True, files, summary, None, time.perf_counter() - start)


def run_case(task: CaseTask) -> CaseOutcome:
    """Assess one case whole and format its outputs."""
    _kill_hook(task.case)

    def work() -> dict[str, Any]:
        from risk.assessment import assess
        from risk.report.results import summarize

        scenario = scenario_of(task)
        return summarize(assess(scenario, samples=task.samples, seed=task.seed,
                                progress=_progress(task.case)))
    return _guarded(task, work)


def run_chunks(task: CaseTask, start: int, stop: int) -> list[Any]:
    """Sample chunks ``start`` to ``stop - 1`` of one case
    (:func:`risk.assessment.evaluate_chunks`)."""
    import warnings

    import numpy as np

    from risk.assessment import evaluate_chunks

    _kill_hook(task.case)
    with warnings.catch_warnings(), np.errstate(all="ignore"):
        warnings.simplefilter("ignore")
        return evaluate_chunks(scenario_of(task), samples=task.samples, seed=task.seed,
                               start=start, stop=stop, progress=_progress(task.case, start))


def finish_case(task: CaseTask, *parts: list[Any]) -> CaseOutcome:
    """Continue a split case from its evaluated chunks (``assess(chunks=...)``)."""
    # each chunk is let go once assess has copied it in (its arrays are not held twice)
    chunks = {c.index: c for part in parts for c in part}

    def work() -> dict[str, Any]:
        from risk.assessment import assess
        from risk.report.results import summarize

        return summarize(assess(scenario_of(task), samples=task.samples, seed=task.seed,
                                chunks=chunks.pop))
    return _guarded(task, work)
