"""Command line: parse, call one library function, map the domain error to exit code 2.

Exit codes: 0 success; 2 bad input (scenario, options, paths) with one message and no
traceback; 1 an internal error (a bug: please report it with the scenario).
Heavy libraries are imported inside the commands so that ``risk --help`` answers fast.
"""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Annotated, Any

import typer

app = typer.Typer(
    add_completion=False, no_args_is_help=True, pretty_exceptions_enable=False,
    help="Sand-production and perforation-tunnel failure risk: drawdown limits over depletion "
         "from uncertain rock strength, stresses and pressures.",
)

EXIT_BAD_INPUT = 2
EXIT_INTERNAL = 1


def _fail(message: str, code: int) -> None:
    from rich.console import Console

    Console(stderr=True, highlight=False, soft_wrap=True).print(
        f"[bold red]error:[/] {message}", markup=True)
    raise typer.Exit(code)


def _guard(fn: Any, *args: Any, **kwargs: Any) -> Any:
    import warnings

    from risk.errors import ScenarioError

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # numerical warnings are for developers, not users
            return fn(*args, **kwargs)
    except ScenarioError as err:
        _fail(_escape(err.message), EXIT_BAD_INPUT)
    except typer.Exit:
        raise
    except KeyboardInterrupt:
        _fail("interrupted; no output was changed", 130)
    except Exception as exc:  # noqa: BLE001 - last line of defence: no traceback for users
        _fail(f"internal error ({type(exc).__name__}: {_escape(str(exc))}). This is a bug in "
              "risk; please report it with the scenario file.", EXIT_INTERNAL)


def _escape(text: str) -> str:
    from rich.markup import escape

    return escape(text)


@app.command()
def new(
    file: Annotated[Path, typer.Argument(help="Scenario file to create (TOML).")],
    units: Annotated[str, typer.Option(help='"field" (psi, ft) or "si" (MPa, m).')] = "field",
    force: Annotated[bool, typer.Option("--force", help="Overwrite an existing file.")] = False,
) -> None:
    """Write a commented scenario template to edit."""
    from risk.api import new_scenario

    _guard(new_scenario, file, units=units, force=force)
    typer.echo(f"wrote {file}; edit it, then: risk check {file}")


@app.command()
def check(file: Annotated[Path, typer.Argument(help="Scenario file (TOML).")]) -> None:
    """Validate a scenario and print its inputs in its own units."""
    from risk.scenario import load_scenario

    scenario = _guard(load_scenario, file)
    from risk.report.console import print_scenario

    _guard(print_scenario, scenario)


@app.command()
def run(
    file: Annotated[Path, typer.Argument(help="Scenario file (TOML).")],
    out: Annotated[Path, typer.Option("--out", "-o", help="Output folder (replaced whole).")
                   ] = Path("reports/run"),
    samples: Annotated[str | None, typer.Option(
        help="Override [analysis] samples (a whole number).")] = None,
    seed: Annotated[str | None, typer.Option(
        help="Override [analysis] seed (a whole number).")] = None,
    quiet: Annotated[bool, typer.Option("--quiet", "-q", help="Print nothing.")] = False,
    as_json: Annotated[bool, typer.Option("--json", help="Print results.json.")] = False,
    force: Annotated[bool, typer.Option(
        "--force", help="Replace an output folder that risk did not write.")] = False,
) -> None:
    """Run every analysis of a scenario and write results.json into the output folder."""
    from risk.api import run_scenario

    result = _guard(run_scenario, file, out=out, samples=samples, seed=seed, force=force,
                    show_progress=not quiet and not as_json and sys.stderr.isatty())
    if as_json:
        from risk.report.writer import dumps

        sys.stdout.write(dumps(result.summary))
    elif not quiet:
        from risk.report.console import print_summary

        _guard(print_summary, result.summary, result.out_dir)


@app.command()
def memo(out: Annotated[Path, typer.Argument(help="Output folder of a finished `risk run`.")]
         ) -> None:
    """Re-render memo.html, memo.pdf and the figures from a run's results.json."""
    from risk.api import render_memo

    path = _guard(render_memo, out)
    typer.echo(f"memo: {path}")


def main() -> None:  # pragma: no cover - console entry point
    app()
