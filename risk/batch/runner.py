"""Run a field: every case as a Dask task, outputs written as cases finish, reruns incremental.

Where the work runs: a local cluster of processes (one thread each, sized to the machine or
``workers``) started and stopped here; an existing ``dask.distributed`` scheduler
(``scheduler``); or a :class:`distributed.Client` the caller already holds (``client``, a
notebook's). Workers need no shared filesystem: they receive each case's scenario document and
return its output files; this process writes them.

A case above ``split_samples`` samples is split into ranges of sample chunks evaluated as
separate tasks (:func:`risk.assessment.evaluate_chunks`) and finished from them
(``assess(chunks=...)``): bit-identical to one process with the same seed.

Faults: a case whose scenario is bad, whose evaluation raises, or whose worker dies more often
than the scheduler allows (``distributed.scheduler.allowed-failures``, 3 by default: a task on a
killed worker is first rerun elsewhere) is a failed case: its message goes in the table and
the others go on. A case whose subfolder holds intact outputs (every file as its manifest
records it) whose ``run.json`` names the same input digest (scenario, software version,
samples, seed, outputs) is reused, not recomputed: a rerun recomputes only what changed, and a
batch interrupted part-way resumes where it stopped.
"""

from __future__ import annotations

import collections
import hashlib
import json
import os
import time
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Final

from risk import __version__
from risk.batch.field import Case, Field, load_field
from risk.batch.tasks import (
    PROGRESS_TOPIC,
    CaseOutcome,
    CaseTask,
    finish_case,
    run_case,
    run_chunks,
    scenario_of,
)
from risk.errors import ScenarioError

__all__ = ["run_field", "FieldResult", "CaseStatus", "ProgressEvent", "EXIT_CASES_FAILED",
           "SPLIT_SAMPLES", "CASES_DIR", "local_cluster", "LOCAL_CONFIG"]

#: Exit code of ``risk batch`` when the batch ran but at least one case failed (bad input to
#: the field file or the options is 2, before anything runs).
EXIT_CASES_FAILED: Final = 3
#: Cases above this many samples are split over workers in ranges of sample chunks.
SPLIT_SAMPLES: Final = 131_072
CASES_DIR: Final = "cases"


@dataclass(frozen=True)
class CaseStatus:
    """How one case ended."""

    case: str
    well: str
    interval: str
    folder: str
    ok: bool
    reused: bool          # its earlier outputs matched the inputs' digest: not recomputed
    message: str | None   # why it failed
    digest: str | None
    seconds: float


@dataclass(frozen=True)
class ProgressEvent:
    """``kind="case"``: samples ``done`` of ``total`` of ``case``; ``kind="batch"``: cases
    finished (``status`` of the last one: "ok", "failed", "reused")."""

    kind: str
    case: str | None
    done: int
    total: int
    status: str = ""


@dataclass(frozen=True)
class FieldResult:
    """What :func:`run_field` produced. ``table`` is the results table (pandas)."""

    field: Field
    out_dir: Path | None
    cases: tuple[CaseStatus, ...]
    table: Any
    summaries: Mapping[str, Mapping[str, Any]]  # results.json of every finished case
    kept_foreign: tuple[str, ...] = ()

    @property
    def computed(self) -> int:
        return sum(c.ok and not c.reused for c in self.cases)

    @property
    def reused(self) -> int:
        return sum(c.reused for c in self.cases)

    @property
    def failed(self) -> tuple[CaseStatus, ...]:
        return tuple(c for c in self.cases if not c.ok)

    @property
    def exit_code(self) -> int:
        """0 when every case finished, else :data:`EXIT_CASES_FAILED`."""
        return EXIT_CASES_FAILED if self.failed else 0


def _whole(key: str, value: Any, low: int, high: int, what: str) -> int | None:
    if value is None:
        return None
    try:
        n = int(str(value).strip().replace("_", ""))
    except ValueError:
        raise ScenarioError.single(key, value, what) from None
    if not low <= n <= high:
        raise ScenarioError.single(key, value, what)
    return n


def _digest(case: Case, scenario: Any, samples: int | None, seed: int | None, memos: bool
            ) -> str:
    """What a case's outputs depend on: its scenario, the software version, samples, seed
    and which outputs were asked for."""
    key = {"scenario_sha256": case.sha256, "source": case.source_name, "version": __version__,
           "samples": scenario.samples if samples is None else samples,
           "seed": scenario.seed if seed is None else seed, "memos": memos}
    return hashlib.sha256(json.dumps(key, sort_keys=True).encode()).hexdigest()


def _reusable(folder: Path, digest: str) -> dict[str, Any] | None:
    """The results.json of a case folder whose outputs are intact and were made from inputs
    with this digest; None otherwise (then the case is recomputed)."""
    from risk.report.writer import read_manifest, sha256_of

    manifest = read_manifest(folder)
    if not manifest or "results.json" not in manifest or "run.json" not in manifest:
        return None
    try:
        for rel, sha in manifest.items():
            p = folder / rel
            if p.is_symlink() or sha256_of(p.read_bytes()) != sha:
                return None
        info = json.loads((folder / "run.json").read_text(encoding="utf-8"))
        if not isinstance(info, dict) or info.get("input_digest") != digest:
            return None
        summary = json.loads((folder / "results.json").read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError):
        return None
    return summary if isinstance(summary, dict) else None


#: Worker settings of the local cluster. Measured (benchmarks/bench_batch.py, README there):
#: with distributed's defaults a case took 1.6-2.2x as long on a worker as in a plain process
#: on a loaded two-core machine: the statistical profiler (a thread waking every 10 ms) and
#: the GIL monitor take the GIL from the computing thread, and MALLOC_TRIM_THRESHOLD_ turns
#: off glibc's dynamic mmap threshold so that every sample-sized temporary array is mapped
#: and unmapped again (15-25% alone). Off, a case costs what it costs in a plain process.
LOCAL_CONFIG: Final[dict[str, Any]] = {
    "distributed.worker.profile.enabled": False,
    "distributed.admin.system-monitor.gil.enabled": False,
    "distributed.nanny.pre-spawn-environ.MALLOC_TRIM_THRESHOLD_": None,
}


def local_cluster(workers: int | None = None, **kwargs: Any) -> Any:
    """A local Dask cluster for cases: ``workers`` processes (default: the CPUs this process
    may use) of one thread each, numerical libraries single-threaded, the settings of
    :data:`LOCAL_CONFIG`. Extra keyword arguments go to :class:`distributed.LocalCluster`."""
    import logging

    import dask
    from distributed import LocalCluster

    n = workers or max(1, len(os.sched_getaffinity(0)))
    one = dict.fromkeys(("NUMBA_NUM_THREADS", "OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS",
                         "MKL_NUM_THREADS"), "1")
    options: dict[str, Any] = {"n_workers": n, "threads_per_worker": 1, "processes": True,
                               "dashboard_address": None, "silence_logs": logging.CRITICAL,
                               "env": one, **kwargs}
    with dask.config.set(LOCAL_CONFIG):
        return LocalCluster(**options)


class _Cluster:
    """The client to submit to, and what to close afterwards."""

    def __init__(self, workers: int | None, scheduler: str | None, client: Any) -> None:
        from distributed import Client

        self.cluster: Any = None
        self.own = client is None
        if client is not None:
            self.client = client
        elif scheduler is not None:
            try:
                self.client = Client(scheduler, timeout="10s")
            except (OSError, TimeoutError, ValueError) as exc:
                raise ScenarioError.single(
                    "--scheduler", scheduler, "the address of a running dask.distributed "
                    "scheduler (such as tcp://10.0.0.5:8786)",
                    found_text=f"{scheduler!r} (no scheduler answered: {exc})") from None
        else:
            self.cluster = local_cluster(workers)
            self.client = Client(self.cluster)
        try:
            versions = self.client.run(_version)
        except Exception:  # noqa: BLE001 - no worker yet: checked by the tasks' results
            versions = {}
        other = {v for v in versions.values() if v != __version__}
        if other:
            self.close()
            raise ScenarioError.single("--scheduler", scheduler, f"workers running risk "
                                       f"{__version__} (the same version gives the same "
                                       "results)", found_text=f"workers with risk "
                                       f"{', '.join(sorted(map(str, other)))}")

    def close(self) -> None:
        if self.own:
            self.client.close()
            if self.cluster is not None:
                self.cluster.close()


def _version() -> str:
    import risk

    return risk.__version__


def _write_case(top: Path, case: Case, files: Mapping[str, str | bytes], force: bool) -> None:
    from risk.report.writer import OutputFolder

    with OutputFolder(top / CASES_DIR / case.folder, force=force,
                      key=f"case {case.id!r} folder") as folder:
        folder.publish(files)


def run_field(field: str | Path | Mapping[str, Any] | Field, *, out: str | Path | None = None,
              workers: int | str | None = None, scheduler: str | None = None,
              client: Any = None, samples: int | str | None = None,
              seed: int | str | None = None, memos: bool = True,
              split_samples: int = SPLIT_SAMPLES, force: bool = False,
              progress: Callable[[ProgressEvent], None] | None = None) -> FieldResult:
    """Run every case of a field file and gather the results table.

    Parameters
    ----------
    field
        A field file, a dict with its keys, or a loaded :class:`~risk.batch.field.Field`.
    out
        Output folder (rules of :mod:`risk.report.writer`): ``results.parquet``,
        ``results.csv``, ``field_memo.html`` / ``.pdf``, ``batch.json``, and each case's own
        outputs in ``cases/<well>__<interval>/``. None: nothing is written (a notebook's
        quick look; nothing is reused either).
    workers
        Processes of the local cluster (default: the CPUs this process may use).
    scheduler, client
        Run on an existing cluster instead (its address, or a connected Client).
    samples, seed
        Override every case's ``[analysis]`` samples and seed.
    memos
        Each case's memo and figures too (False: results.json and run.json only; ``risk memo``
        draws a memo later).
    split_samples
        Cases above this many samples are split over workers in ranges of sample chunks.
    force
        Replace outputs of earlier runs even if they were edited since.
    progress
        Told of each case's samples and of each finished case.

    Raises
    ------
    ScenarioError
        Bad input to the batch itself: the field file, an option, the output folder. A bad
        case is not raised: it is reported in the table (``FieldResult.failed``).
    """
    from risk.api import _check_overrides
    from risk.assessment import CHUNK

    n_samples, n_seed = _check_overrides(samples, seed)
    n_workers = _whole("--workers", workers, 1, 1024, "a whole number of worker processes "
                       "from 1 to 1024")
    if not isinstance(split_samples, int) or split_samples < CHUNK:
        raise ValueError(f"split_samples must be a whole number >= {CHUNK}")
    fld = field if isinstance(field, Field) else load_field(field)
    if out is None:
        return _run(fld, None, n_workers, scheduler, client, n_samples, n_seed, memos,
                    split_samples, force, progress)
    from risk.report.writer import OutputFolder

    with OutputFolder(out, force=force, inputs=fld.files) as top:
        return _run(fld, top, n_workers, scheduler, client, n_samples, n_seed, memos,
                    split_samples, force, progress)


def _run(fld: Field, top: Any, workers: int | None, scheduler: str | None, client: Any,
         samples: int | None, seed: int | None, memos: bool, split_samples: int, force: bool,
         progress: Callable[[ProgressEvent], None] | None) -> FieldResult:
    from risk.assessment import CHUNK, chunk_count
    from risk.batch import summary as field_summary
    from risk.report.writer import read_manifest

    started = time.time()
    status: dict[str, CaseStatus] = {}
    summaries: dict[str, dict[str, Any]] = {}
    tasks: dict[str, tuple[Case, CaseTask, Any]] = {}
    n_done = 0

    def tell(event: ProgressEvent) -> None:
        if progress is not None:
            progress(event)

    def finish(case: Case, ok: bool, reused: bool, message: str | None, digest: str | None,
               seconds: float) -> None:
        nonlocal n_done
        status[case.id] = CaseStatus(case.id, case.well, case.interval, case.folder, ok, reused,
                                     message, digest, seconds)
        n_done += 1
        tell(ProgressEvent("batch", case.id, n_done, len(fld.cases),
                           "reused" if reused else "ok" if ok else "failed"))

    if top is not None:  # own the folder from the start, so an interrupted batch resumes
        owned = read_manifest(top.path) or {}
        top.publish({"batch.json": _dumps({"tool": "risk", "kind": "field batch",
                                           "status": "running", "field_file": fld.source_name,
                                           "version": __version__})},
                    keep=[k for k in owned if k != "batch.json"])
    for case in fld.cases:
        task = CaseTask(case.id, dict(case.document), case.source_name, case.sha256,
                        samples, seed, "", memos, {"case": case.id, "field_file":
                                                    fld.source_name})
        try:
            scenario = scenario_of(task)
        except ScenarioError as err:
            finish(case, False, False, err.message, None, 0.0)
            continue
        digest = _digest(case, scenario, samples, seed, memos)
        task = CaseTask(**{**task.__dict__, "digest": digest})
        if top is not None:
            old = _reusable(top.path / CASES_DIR / case.folder, digest)
            if old is not None:
                summaries[case.id] = old
                finish(case, True, True, None, digest, 0.0)
                continue
        n = chunk_count(scenario, samples=samples)
        wanted = scenario.samples if samples is None else samples
        tasks[case.id] = (case, task, wanted > split_samples and n > 1)
    if tasks:
        _compute(tasks, workers, scheduler, client, split_samples // CHUNK, top, force,
                 summaries, finish, tell)
    ordered = tuple(status[c.id] for c in fld.cases)
    table = field_summary.table(fld, ordered, summaries)
    kept: tuple[str, ...] = ()
    if top is not None:
        files = field_summary.files(fld, ordered, summaries, table, started=started,
                                    samples=samples, seed=seed, memos=memos)
        foreign = top.publish(files)
        kept = tuple(f for f in foreign if not f.startswith(CASES_DIR + "/"))
    return FieldResult(fld, None if top is None else top.path, ordered, table, summaries, kept)


def _compute(tasks: dict[str, tuple[Case, CaseTask, Any]], workers: int | None,
             scheduler: str | None, client: Any, per_part: int, top: Any, force: bool,
             summaries: dict[str, dict[str, Any]], finish: Any, tell: Any) -> None:
    """Submit the cases, write each one's outputs as it finishes."""
    from distributed import wait

    events: collections.deque[Any] = collections.deque()
    split_done: dict[str, dict[int, int]] = {}  # case -> first chunk of a range -> samples done
    split_total: dict[str, int] = {}
    held = _Cluster(workers, scheduler, client)
    c = held.client
    futures: dict[Any, str] = {}
    try:
        try:
            c.subscribe_topic(PROGRESS_TOPIC, events.append)
        except Exception:  # noqa: BLE001 - progress is a nicety
            pass
        for cid, (_case, task, split) in tasks.items():
            if split:
                from risk.assessment import chunk_count

                scenario = scenario_of(task)
                n = chunk_count(scenario, samples=task.samples)
                parts = [c.submit(run_chunks, task, a, min(a + per_part, n), pure=False)
                         for a in range(0, n, per_part)]
                split_done[cid] = {}
                split_total[cid] = scenario.samples if task.samples is None else task.samples
                fut = c.submit(finish_case, task, *parts, pure=False)
            else:
                fut = c.submit(run_case, task, pure=False)
            futures[fut] = cid
        pending = set(futures)
        while pending:
            try:
                done, pending = wait(pending, timeout=0.5, return_when="FIRST_COMPLETED")
            except TimeoutError:
                done = set()
            while events:
                ev = events.popleft()
                msg = ev[1] if isinstance(ev, tuple) and len(ev) == 2 else ev
                if isinstance(msg, dict):
                    tell(_case_event(msg, split_done, split_total))
            for fut in done:
                cid = futures.pop(fut)
                case, task, _ = tasks[cid]
                _collect(fut, case, task, top, force, summaries, finish)
                fut.release()
    except BaseException:
        for fut in futures:
            fut.cancel()
        raise
    finally:
        try:
            c.unsubscribe_topic(PROGRESS_TOPIC)
        except Exception:  # noqa: BLE001
            pass
        held.close()


def _case_event(msg: dict[str, Any], split_done: dict[str, dict[int, int]],
                split_total: dict[str, int]) -> ProgressEvent:
    """A worker's progress message as the client's event: for a split case, the samples done
    summed over its ranges (each range reports its own count, so a range retried on another
    worker restarts its count rather than adding to it)."""
    cid = msg.get("case")
    done, total = int(msg.get("done", 0)), int(msg.get("total", 0))
    if "part" in msg and cid in split_done:
        split_done[cid][int(msg["part"])] = done
        done, total = sum(split_done[cid].values()), split_total[cid]
    return ProgressEvent("case", cid, done, total, "running")


def _collect(fut: Any, case: Case, task: CaseTask, top: Any, force: bool,
             summaries: dict[str, dict[str, Any]], finish: Any) -> None:
    from distributed import KilledWorker

    try:
        outcome: CaseOutcome = fut.result()
    except KilledWorker as exc:
        finish(case, False, False, "the worker running this case died each time it was "
               f"tried (killed, or out of memory): {exc}", task.digest, 0.0)
        return
    except Exception as exc:  # noqa: BLE001 - one case's fault must not stop the field
        finish(case, False, False, f"internal error ({type(exc).__name__}: {exc})",
               task.digest, 0.0)
        return
    if not outcome.ok:
        finish(case, False, False, outcome.message, task.digest, outcome.seconds)
        return
    if top is not None:
        try:
            _write_case(top.path, case, outcome.files, force)
        except ScenarioError as err:
            finish(case, False, False, err.message, task.digest, outcome.seconds)
            return
    assert outcome.summary is not None
    summaries[case.id] = outcome.summary
    finish(case, True, False, None, task.digest, outcome.seconds)


def _dumps(data: Any) -> str:
    from risk.report.writer import dumps

    return dumps(data)
