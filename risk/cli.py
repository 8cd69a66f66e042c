"""Command line: parse, call one library function, map the domain error to exit code 2.

Exit codes: 0 success; 2 bad input (scenario, options, paths) with one message and no
traceback; 1 an internal error (a bug: please report it with the scenario); 3 (``risk batch``
only) the batch ran but at least one case failed: the others finished and the results table
names the failed cases and why; 130 interrupted.
Heavy libraries are imported inside the commands so that ``risk --help`` answers fast.
"""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Annotated, Any

import typer

app = typer.Typer(
    add_completion=False, no_args_is_help=True, pretty_exceptions_enable=False,
    rich_markup_mode=None,  # plain help like any Unix tool: no type tags on flags
    context_settings={"help_option_names": ["-h", "--help"]},
    help="Sand-production and perforation-tunnel failure risk: drawdown limits over depletion "
         "from uncertain rock strength, stresses and pressures.",
)


def _show_version(value: bool) -> None:
    if value:
        from risk import __version__

        typer.echo(f"risk {__version__}")
        raise typer.Exit()


@app.callback()
def _main(
    version: Annotated[bool, typer.Option(
        "--version", help="Print the version and exit.", is_eager=True, metavar="",
        callback=_show_version)] = False,
) -> None:
    """Sand-production and perforation-tunnel failure risk: drawdown limits over depletion
    from uncertain rock strength, stresses and pressures."""

EXIT_BAD_INPUT = 2
EXIT_INTERNAL = 1


def _fail(message: str, code: int) -> None:
    from rich.console import Console

    Console(stderr=True, highlight=False, soft_wrap=True).print(
        f"[bold red]error:[/] {message}", markup=True)
    raise typer.Exit(code)


def _on_sigterm(signum: int, frame: Any) -> None:
    raise KeyboardInterrupt  # the same clean ending as Ctrl-C (temporary files removed)


def _interrupted_message() -> str:
    from risk.report.writer import committed_folders

    if committed_folders:
        return (f"interrupted; the new outputs in {_escape(repr(str(committed_folders[-1])))} "
                "were already complete")
    return "interrupted; no output was changed"


def _guard(fn: Any, *args: Any, **kwargs: Any) -> Any:
    import signal
    import warnings

    from risk.errors import ScenarioError

    try:
        signal.signal(signal.SIGTERM, _on_sigterm)
    except ValueError:  # not the main thread (an embedding program): leave its handlers
        pass
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # numerical warnings are for developers, not users
            return fn(*args, **kwargs)
    except ScenarioError as err:
        _fail(_escape(err.message), EXIT_BAD_INPUT)
    except typer.Exit:
        raise
    except KeyboardInterrupt:
        _fail(_interrupted_message(), 130)
    except Exception as exc:  # noqa: BLE001 - last line of defence: no traceback for users
        _fail(f"internal error ({type(exc).__name__}: {_escape(str(exc))}). This is a bug in "
              "risk; please report it with the scenario file.", EXIT_INTERNAL)


def _escape(text: str) -> str:
    """User text made safe for the console: markup printed literally, control characters
    (other than line breaks) shown as escapes instead of reaching the terminal."""
    from rich.markup import escape

    from risk.errors import visible

    return escape(visible(text, keep="\n"))


def _plain(value: object) -> str:
    """A path or name for plain output (no markup there): control characters made visible."""
    from risk.errors import visible

    return visible(str(value))


@app.command()
def new(
    file: Annotated[Path, typer.Argument(help="Scenario file to create (TOML).",
                                         metavar="FILE")],
    units: Annotated[str, typer.Option(help='"field" (psi, ft) or "si" (MPa, m).',
                                       metavar="UNITS")] = "field",
    force: Annotated[bool, typer.Option(
        "--force", help="Overwrite a template risk wrote that was not edited since.",
        metavar="")] = False,
) -> None:
    """Write a commented scenario template to edit."""
    from risk.api import new_scenario

    _guard(new_scenario, file, units=units, force=force)
    typer.echo(f"wrote {_plain(file)}; edit it, then: risk check {_plain(file)}")


@app.command()
def check(file: Annotated[Path, typer.Argument(help="Scenario file (TOML).", metavar="FILE")]
          ) -> None:
    """Validate a scenario and print its inputs in its own units."""
    from risk.logs.scenario import has_logs
    from risk.scenario import load_scenario

    if has_logs(file):  # a log scenario: the scenario, then its logs
        from risk.logs.scenario import load_log_scenario

        ls = _guard(load_log_scenario, file)
        typer.echo(f"logs: {_plain(ls.logs.source)}, {ls.logs.depth.size:,} depths, curves "
                   + ", ".join(f"{r} = {_plain(m)}" for r, m in ls.logs.mnemonics.items()))
        for note in ls.logs.notes:
            typer.echo(f"note: {_plain(note)}")
        _guard(_print_scenario, ls.scenario)
        return

    scenario = _guard(load_scenario, file)
    _guard(_print_scenario, scenario)


def _print_scenario(scenario: Any) -> None:
    from risk.report.console import print_scenario

    print_scenario(scenario)


@app.command()
def run(
    file: Annotated[Path, typer.Argument(help="Scenario file (TOML).", metavar="FILE")],
    out: Annotated[Path, typer.Option(
        "--out", "-o", help="Output folder: new, empty, or written by risk before (only its "
        "own files are replaced; other files are never touched).", metavar="DIR"
    )] = Path("reports/run"),
    samples: Annotated[str | None, typer.Option(
        help="Override analysis.samples (a whole number).", metavar="N")] = None,
    seed: Annotated[str | None, typer.Option(
        help="Override analysis.seed (a whole number).", metavar="N")] = None,
    quiet: Annotated[bool, typer.Option("--quiet", "-q", help="Print nothing.", metavar="")
                     ] = False,
    as_json: Annotated[bool, typer.Option("--json", help="Print results.json.", metavar="")
                       ] = False,
    force: Annotated[bool, typer.Option(
        "--force", help="Replace outputs of an earlier run even if they were edited since "
        "(files risk did not write are never replaced).", metavar="")] = False,
) -> None:
    """Run a scenario: results.json, figures and the memo in the output folder."""
    from risk.api import run_scenario
    from risk.kernel_cache import first_use_note

    note = first_use_note()
    if note and not quiet:
        typer.echo(f"note: {_plain(note)}", err=True)
    # the kernels are loaded once the scenario is read (and the sensitivity step forked,
    # where a core is idle: risk.assessment.start_sensitivity)
    result = _guard(run_scenario, file, out=out, samples=samples, seed=seed, force=force,
                    show_progress=not quiet and not as_json and sys.stderr.isatty(),
                    prepare=lambda: _load_kernels(quiet=quiet))
    if result.kept_foreign and not quiet:
        _warn_kept(result.out_dir, result.kept_foreign)
    if as_json:
        from risk.report.writer import dumps

        sys.stdout.write(dumps(result.summary))
    elif not quiet:
        from risk.report.console import print_summary

        _guard(print_summary, result.summary, result.out_dir)


def _load_kernels(*, quiet: bool) -> float:
    """Load the compiled kernels before the run, saying so on stderr when they are being
    compiled (the first run on a machine), so the wait is never silent inside the run."""
    from risk.kernel_cache import warm_up

    def say(message: str) -> None:
        typer.echo(f"note: {message}", err=True)

    return float(_guard(warm_up, notify=None if quiet else say))


@app.command("warm-up")
def warm_up() -> None:
    """Compile (or load) the yield-onset kernels now: once per machine, about 2-3 minutes; later
    runs load them in about a second. `make demo` and `make test` call it after installing."""
    from risk.kernel_cache import configure

    choice = configure()
    where = "beside the package" if choice.path is None else _plain(choice.path)
    seconds = _load_kernels(quiet=False)
    typer.echo(f"kernels ready in {seconds:.1f} s (cached {where})")


def _warn_kept(out_dir: Path, kept: tuple[str, ...]) -> None:
    from rich.console import Console

    shown = ", ".join(_escape(repr(k)) for k in kept[:5])
    more = f" and {len(kept) - 5} more" if len(kept) > 5 else ""
    Console(stderr=True, highlight=False, soft_wrap=True).print(
        f"[yellow]warning:[/] kept {len(kept)} file(s) in {_escape(repr(str(out_dir)))} that "
        f"risk did not write: {shown}{more}", markup=True)


@app.command()
def memo(
    out: Annotated[Path, typer.Argument(help="Output folder of a finished `risk run`.",
                                        metavar="DIR")],
    force: Annotated[bool, typer.Option(
        "--force", help="Replace memo files even if they were edited since.", metavar="")
    ] = False,
) -> None:
    """Re-draw the memo and figures of a run from its results.json."""
    from risk.api import render_memo

    path = _guard(render_memo, out, force=force)
    typer.echo(f"memo: {_plain(path)}")


@app.command()
def batch(
    field: Annotated[Path, typer.Argument(help="Field file (TOML): shared defaults and, per "
                                          "well and interval, what differs.",
                                          metavar="FIELD")],
    out: Annotated[Path, typer.Option(
        "--out", "-o", help="Output folder: results.parquet, results.csv, field_memo.html, "
        "and each case's outputs in cases/ (new, empty, or written by risk before).",
        metavar="DIR")] = Path("reports/field"),
    workers: Annotated[str | None, typer.Option(
        help="Worker processes of the local cluster (default: one per CPU).",
        metavar="N")] = None,
    scheduler: Annotated[str | None, typer.Option(
        help="Run on an existing dask.distributed scheduler instead (tcp://host:8786).",
        metavar="ADDRESS")] = None,
    samples: Annotated[str | None, typer.Option(
        help="Override every case's analysis.samples.", metavar="N")] = None,
    seed: Annotated[str | None, typer.Option(
        help="Override every case's analysis.seed.", metavar="N")] = None,
    memos: Annotated[bool, typer.Option(
        "--memos/--no-memos", help="Write each case's memo and figures (--no-memos: "
        "results.json and run.json only; `risk memo` draws one later).")] = True,
    quiet: Annotated[bool, typer.Option("--quiet", "-q", help="Print nothing.", metavar="")
                     ] = False,
    force: Annotated[bool, typer.Option(
        "--force", help="Replace outputs of earlier runs even if they were edited since "
        "(files risk did not write are never replaced).", metavar="")] = False,
) -> None:
    """Run every well and interval of a field file (Dask; reruns recompute only what changed).

    Exit 0: every case finished; 3: at least one case failed (named in the table, the others
    finished); 2: bad input to the batch itself (nothing run)."""
    from risk.batch import EXIT_CASES_FAILED, run_field

    show = not quiet and sys.stderr.isatty()
    result = _guard(_batch_run, run_field, field, show=show, out=out, workers=workers,
                    scheduler=scheduler, samples=samples, seed=seed, memos=memos, force=force)
    if result.kept_foreign and not quiet:
        _warn_kept(result.out_dir, result.kept_foreign)
    if not quiet:
        n = len(result.cases)
        typer.echo(f"{n} case(s): {result.computed} computed, {result.reused} reused "
                   f"unchanged, {len(result.failed)} failed; results: "
                   f"{_plain(result.out_dir)}/results.parquet")
        for st in result.failed:
            typer.echo(f"failed: {_plain(st.case)}: {_plain(st.message)}", err=True)
    if result.failed:
        raise typer.Exit(EXIT_CASES_FAILED)


def _batch_run(run: Any, field: Path, *, show: bool, **kwargs: Any) -> Any:
    """The batch (with progress bars when shown); an interruption keeps the finished cases."""
    try:
        return _batch_with_progress(run, field, **kwargs) if show else run(field, **kwargs)
    except KeyboardInterrupt:
        _fail("interrupted; the cases that finished are kept in "
              f"{_escape(repr(str(kwargs['out'])))}/cases and the same command resumes from "
              "them", 130)


def _batch_with_progress(run: Any, field: Path, **kwargs: Any) -> Any:
    """The batch with a bar for the field and one per running case."""
    from rich.progress import Progress

    with Progress(transient=True) as bar:
        total = bar.add_task("cases", total=None)
        per_case: dict[str, Any] = {}
        finished: set[str] = set()

        def show(ev: Any) -> None:
            if ev.kind == "batch":
                bar.update(total, completed=ev.done, total=ev.total)
                finished.add(ev.case)
                task = per_case.pop(ev.case, None)
                if task is not None:
                    bar.remove_task(task)
            elif ev.case is not None and ev.case not in finished:
                if ev.case not in per_case:
                    per_case[ev.case] = bar.add_task(_escape(str(ev.case)), total=ev.total)
                bar.update(per_case[ev.case], completed=ev.done, total=ev.total)

        return run(field, progress=show, **kwargs)


def main() -> None:  # pragma: no cover - console entry point
    app()
