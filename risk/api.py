"""Public entry points: one call per CLI command, usable from scripts and notebooks."""

from __future__ import annotations

import importlib
import threading
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from risk.errors import ScenarioError
from risk.scenario import MAX_SAMPLES, load_scenario

__all__ = ["RunResult", "run_scenario", "new_scenario", "render_memo"]


@dataclass(frozen=True)
class RunResult:
    """What :func:`run_scenario` produced: the JSON summary, where it was written, and the files
    of that folder the tool did not write (kept untouched). (The per-sample arrays are released
    before the memo is drawn, which keeps the peak memory of large runs down;
    :func:`risk.assessment.assess` returns them.)"""

    summary: dict[str, Any]
    out_dir: Path
    kept_foreign: tuple[str, ...] = ()


def _whole(option: str, value: int | str | None, expected: str, low: int, high: int
           ) -> int | None:
    """A command-line whole number (given as text or int) within [low, high], else refused."""
    if value is None:
        return None
    try:
        number = int(str(value).strip().replace("_", ""))
    except ValueError:
        raise ScenarioError.single(option, value, expected) from None
    if not low <= number <= high:
        raise ScenarioError.single(option, value, expected)
    return number


def _check_overrides(samples: int | str | None, seed: int | str | None
                     ) -> tuple[int | None, int | None]:
    return (_whole("--samples", samples, f"a whole number of samples from 1 to "
                   f"{MAX_SAMPLES:,}", 1, MAX_SAMPLES),
            _whole("--seed", seed, "a whole number >= 0 (below 2**63)", 0, 2**63 - 1))


def run_scenario(path: str | Path, *, out: str | Path = "reports/run",
                 samples: int | str | None = None, seed: int | str | None = None,
                 show_progress: bool = False, force: bool = False,
                 prepare: Callable[[], object] | None = None) -> RunResult:
    """Load, assess and write the outputs (``results.json`` ...) into the folder ``out``.

    ``prepare``, when given, is called once the scenario is read and before the computing
    starts (the command line loads the compiled kernels there: after the sensitivity step is
    forked, where a second core is idle, :func:`risk.assessment.start_sensitivity`).

    Raises
    ------
    ScenarioError
        For any bad input (the file, the overrides or the output folder).
    """
    n_samples, n_seed = _check_overrides(samples, seed)
    from risk.logs.scenario import has_logs

    if has_logs(path):  # a log scenario: risk over depth (risk.logs)
        if prepare is not None:
            prepare()
        return _run_logs(path, out, n_samples, n_seed, force)
    scenario = load_scenario(path)
    from risk.report.writer import OutputFolder

    # the folder is checked, created and locked before any work; held until the end
    with OutputFolder(out, force=force, inputs=[path]) as folder:
        summary, files = _compute(scenario, path, n_samples, n_seed, show_progress, prepare)
        kept = folder.publish(files)
    return RunResult(summary, folder.path, tuple(kept))


def _run_logs(path: str | Path, out: str | Path, n_samples: int | None, n_seed: int | None,
              force: bool) -> RunResult:
    """A scenario with a ``[logs]`` table: every mechanism over the log interval."""
    from risk.logs.depth import assess_depth
    from risk.logs.scenario import load_log_scenario
    from risk.logs.summary import summarize_depth
    from risk.report.depth_outputs import log_output_files
    from risk.report.writer import OutputFolder

    ls = load_log_scenario(path)
    with OutputFolder(out, force=force, inputs=[path, ls.las_path]) as folder:
        res = assess_depth(ls, samples=n_samples, seed=n_seed)
        summary = summarize_depth(res)
        del res
        kept = folder.publish(log_output_files(summary, _run_info(path, summary)))
    return RunResult(summary, folder.path, tuple(kept))


def _compute(scenario: Any, path: str | Path, n_samples: int | None, n_seed: int | None,
             show_progress: bool, prepare: Callable[[], object] | None = None
             ) -> tuple[dict[str, Any], dict[str, str | bytes]]:
    from risk.assessment import start_sensitivity

    job = start_sensitivity(scenario, samples=n_samples, seed=n_seed)
    try:
        if prepare is not None:
            prepare()
        return _produce(scenario, path, n_samples, n_seed, show_progress, job)
    finally:
        if job is not None:
            job.close()


def _produce(scenario: Any, path: str | Path, n_samples: int | None, n_seed: int | None,
             show_progress: bool, job: Any) -> tuple[dict[str, Any], dict[str, str | bytes]]:
    from risk.assessment import assess
    from risk.report.results import summarize

    def produce(progress: Any = None, step: Any = None) -> tuple[dict[str, Any],
                                                                 dict[str, str | bytes]]:
        loading = _preload()
        # no child forked from here on (the step was started, or not, by _compute): a fork
        # while the thread imports could leave the child an import lock it never gets
        assessment = assess(scenario, samples=n_samples, seed=n_seed, progress=progress,
                            step=step, sensitivity=job, overlap=False)
        if step is not None:
            step("figures and memo")
        summary = summarize(assessment)
        del assessment  # the per-sample arrays are not needed for the memo
        if loading is not None:
            loading.join()  # before the memo forks its figure processes
        return summary, _output_files(summary, _run_info(path, summary))

    if show_progress:
        from rich.progress import Progress

        with Progress(transient=True) as bar:
            task = bar.add_task("evaluating samples", total=None)
            summary, files = produce(
                lambda done, total: bar.update(task, completed=done, total=total),
                lambda text: bar.update(task, description=text))
    else:
        summary, files = produce()
    return summary, files


#: modules of the report stack (matplotlib, seaborn, WeasyPrint: about 2.5 s of imports) that
#: a thread imports while the run computes, where the compiled kernels and numpy's large
#: array operations leave the interpreter free (benchmarks/README.md); () imports them where
#: they are used, in turn
PRELOAD: tuple[str, ...] = ("risk.report.memo", "weasyprint")


def _preload() -> threading.Thread | None:
    """Start importing :data:`PRELOAD` on a daemon thread (None: nothing to import). A module
    that fails to import is left to the code that uses it, which then reports the error."""
    if not PRELOAD:
        return None

    def load() -> None:
        for name in PRELOAD:
            try:
                importlib.import_module(name)
            except Exception:  # noqa: BLE001 - imported again where used, which raises it
                return

    thread = threading.Thread(target=load, daemon=True, name="risk-preload")
    thread.start()
    return thread


def _run_info(path: str | Path, summary: dict[str, Any]) -> dict[str, Any]:
    from risk.report import run_info

    return run_info(str(path), summary)


def _output_files(summary: dict[str, Any], run_info: dict[str, Any]
                  ) -> dict[str, str | bytes]:
    from risk.report import output_files

    return output_files(summary, run_info)


def _memo_files(summary: dict[str, Any], run_info: dict[str, Any],
                reuse: dict[str, bytes] | None = None,
                previous: tuple[str, bytes] | None = None) -> dict[str, str | bytes]:
    if summary.get("kind") == "logs":
        from risk.report.depth_outputs import log_output_files

        files = log_output_files(summary, run_info)
        return {k: v for k, v in files.items() if k not in ("results.json", "run.json")}
    from risk.report import memo_files

    return memo_files(summary, run_info, reuse=reuse, previous=previous)


def _written_figures(folder: Path) -> dict[str, bytes]:
    """The figures of an output folder exactly as the tool wrote them (digest equal to the
    manifest's), by name: candidates for reuse when the memo is drawn again."""
    from risk.report.writer import read_manifest, sha256_of

    out: dict[str, bytes] = {}
    for rel, digest in (read_manifest(folder) or {}).items():
        if not (rel.startswith("figures/") and rel.endswith(".png")) or rel.count("/") != 1:
            continue
        path = folder / rel
        try:
            if path.is_symlink() or not path.is_file():
                continue
            png = path.read_bytes()
        except OSError:
            continue
        if sha256_of(png) == digest:
            out[rel[len("figures/"):-len(".png")]] = png
    return out


def _written_memo(folder: Path) -> tuple[str, bytes] | None:
    """memo.html and memo.pdf of an output folder exactly as the tool wrote them (digests
    equal to the manifest's), or None: the PDF is kept when the memo comes out the same."""
    from risk.report.writer import read_manifest, sha256_of

    manifest = read_manifest(folder) or {}
    found: list[bytes] = []
    for rel in ("memo.html", "memo.pdf"):
        path = folder / rel
        try:
            if path.is_symlink() or not path.is_file():
                return None
            data = path.read_bytes()
        except OSError:
            return None
        if manifest.get(rel) is None or sha256_of(data) != manifest[rel]:
            return None
        found.append(data)
    try:
        return found[0].decode("utf-8"), found[1]
    except UnicodeDecodeError:
        return None


def render_memo(out: str | Path, *, force: bool = False) -> Path:
    """Re-render the memo of a finished run from its results.json, without recomputing.

    The folder is locked while the memo is drawn, so the memo never mixes two runs; an
    interrupted swap of an earlier process is completed first.

    Raises
    ------
    ScenarioError
        When the folder holds no readable results.json of this tool, when results.json was
        changed since the run wrote it, or when the memo files were edited (unless ``force``).
    """
    import json

    from risk.report.writer import OutputFolder

    folder = Path(out)
    res = folder / "results.json"
    if not folder.is_symlink() and not res.is_file():
        raise ScenarioError.single("DIR", str(out), "a folder written by `risk run` "
                                   "(with results.json)",
                                   found_text=f"no results.json in {str(out)!r}")
    _check_results_digest(folder)  # before the lock: the clearest message for a hand edit
    with OutputFolder(folder, force=force, create=False, key="DIR") as held:
        try:
            raw = res.read_bytes()
            summary = json.loads(raw.decode("utf-8"))
        except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
            raise ScenarioError.single("results.json", str(res),
                                       "the JSON written by `risk run`",
                                       found_text=f"an unreadable file ({exc})") from None
        if not isinstance(summary, dict) or summary.get("tool") != "risk":
            raise ScenarioError.single("results.json", str(res),
                                       "the JSON written by `risk run`",
                                       found_text="another kind of JSON")
        _check_results_digest(folder)
        run_info: dict[str, Any] = {}
        info = folder / "run.json"
        if info.is_file():
            try:
                run_info = json.loads(info.read_text(encoding="utf-8"))
            except (OSError, UnicodeDecodeError, json.JSONDecodeError):
                run_info = {}
        try:
            files = _memo_files(summary, run_info, _written_figures(folder),
                                _written_memo(folder))
        except (KeyError, TypeError, ValueError) as exc:
            raise ScenarioError.single("results.json", str(res),
                                       "results.json of this version of risk",
                                       found_text=f"a file the memo cannot read ({exc!r})"
                                       ) from None
        held.publish(files, keep=("results.json", "run.json"))
    return folder / "memo.html"


def _check_results_digest(folder: Path) -> None:
    """Refuse a results.json that differs from the one the run recorded in its manifest."""
    from risk.report.writer import read_manifest, sha256_of

    recorded = (read_manifest(folder) or {}).get("results.json")
    res = folder / "results.json"
    try:
        actual = sha256_of(res.read_bytes())
    except OSError:
        return  # reported when it is read
    if recorded is not None and recorded != actual:
        raise ScenarioError.single(
            "results.json", str(res), "results.json as `risk run` wrote it (rerun the "
            "scenario to change a result; a memo is never drawn from edited numbers)",
            found_text=f"a file changed since the run (sha256 {actual[:12]}..., recorded "
                       f"{recorded[:12]}...)")


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
    if p.exists() or p.is_symlink():
        # a file the tool did not write is never overwritten: --force replaces only an
        # unedited template (byte for byte one of the two that `risk new` writes)
        unedited = p.is_file() and not p.is_symlink() and p.read_bytes() in {
            scenario_template(u).encode("utf-8") for u in ("field", "si")}
        if not (force and unedited):
            raise ScenarioError.single(
                "FILE", str(path), "a new file name (--force replaces only an unedited "
                "template of risk new)" if not force else "a new file name, or an unedited "
                "template of risk new", found_text=f"the existing file {str(path)!r}"
                + (" (edited, or not written by risk new)" if force else ""))
    try:
        replace_files(p.parent if str(p.parent) else Path("."),
                      {p.name: scenario_template(units)})
    except OSError as exc:
        raise ScenarioError.single("FILE", str(path), "a writable place",
                                   found_text=f"{str(path)!r} ({exc.strerror})") from None
    return p
