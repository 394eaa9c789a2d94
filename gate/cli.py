"""The ``rankgate`` command line: parse options, call the library, render, map errors to exit codes.

Exit codes: 0 every check passed; 1 at least one check failed (or an alarm fired); 2 cannot
evaluate (a user mistake, printed as one ``error: ...`` line); 3 an unexpected exception (a bug,
printed with its traceback so it can never be read as a verdict).

Only this module writes to the terminal. Heavy modules are imported inside the commands.
"""

from __future__ import annotations

import functools
import sys
import traceback
from pathlib import Path
from collections.abc import Callable
from typing import Any, TypeVar

import typer

from gate.errors import GateError

EXIT_PASS = 0
EXIT_FAIL = 1
EXIT_ERROR = 2
EXIT_BUG = 3

app = typer.Typer(
    name="rankgate",
    help="Release gate for retrained binary scoring classifiers.",
    add_completion=False,
    no_args_is_help=True,
    pretty_exceptions_enable=False,
)

F = TypeVar("F", bound=Callable[..., Any])


def guarded(fn: F) -> F:
    """Map GateError to ``error: ...`` + exit 2 and any other exception to a traceback + exit 3."""

    @functools.wraps(fn)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        try:
            return fn(*args, **kwargs)
        except typer.Exit:
            raise
        except GateError as exc:
            message = " ".join(str(exc).split())  # one line, whatever the cause contained
            typer.echo(f"error: {message}", err=True)
            raise typer.Exit(EXIT_ERROR) from None
        except KeyboardInterrupt:
            typer.echo("error: interrupted", err=True)
            raise typer.Exit(EXIT_ERROR) from None
        except Exception:  # a bug: never a verdict
            typer.echo("internal error (a bug in rankgate, please report it):", err=True)
            typer.echo(traceback.format_exc(), err=True)
            raise typer.Exit(EXIT_BUG) from None

    return wrapper  # type: ignore[return-value]


def _version_callback(value: bool) -> None:
    if value:
        from gate import __version__

        typer.echo(f"rankgate {__version__}")
        raise typer.Exit(0)


@app.callback()
def _root(
    version: bool = typer.Option(
        False, "--version", help="Print the version and exit.", callback=_version_callback, is_eager=True
    ),
) -> None:
    """Release gate for retrained binary scoring classifiers."""


# --- commands are registered below this line -------------------------------------------------


# --- inspect / demo (io, summary and demo scenario) --------------------------------------------


def _summary_of(
    path: Path,
    spec: Any,
    *,
    cost_fp: float,
    cost_fn: float,
) -> dict[str, Any]:
    """Read one table and summarize it; option mistakes become GateErrors (exit 2)."""
    import math

    from gate.io import read_table
    from gate.summary import summarize

    for option, value in (("--cost-fp", cost_fp), ("--cost-fn", cost_fn)):
        if not math.isfinite(value) or value < 0:
            raise GateError(f"{option} must be a finite non-negative number, got {value:g}")
    if cost_fp == 0 and cost_fn == 0:
        raise GateError("--cost-fp and --cost-fn cannot both be 0")
    table = read_table(path, spec)
    return summarize(table, cost_fp=cost_fp, cost_fn=cost_fn)


@app.command("inspect")
@guarded
def inspect_command(
    file: Path = typer.Argument(..., help="Score table: .csv, .csv.gz, .parquet, .pq, .jsonl or .ndjson."),
    id_col: str = typer.Option("id", "--id-col", help="Column of example ids."),
    label_col: str = typer.Option("label", "--label-col", help="Column of true labels."),
    score_col: str = typer.Option("score", "--score-col", help="Column of scores (higher = more likely positive)."),
    weight_col: str | None = typer.Option(
        None, "--weight-col", help='Column of example weights (default: "weight" when present, else unweighted).'
    ),
    positive: str = typer.Option("1", "--positive", help="Label value of the positive class."),
    cost_fp: float = typer.Option(1.0, "--cost-fp", help="Cost of a false alarm, for the cost-optimal threshold."),
    cost_fn: float = typer.Option(1.0, "--cost-fn", help="Cost of a missed positive, for the cost-optimal threshold."),
    json_out: Path | None = typer.Option(None, "--json", help="Also write the summary as JSON to this file."),
) -> None:
    """Summarize one score table: counts, ROC AUC, average precision, operating points."""
    import json

    from gate.io import ColumnSpec
    from gate.summary import render_summary_text

    spec = ColumnSpec(id=id_col, label=label_col, score=score_col, weight=weight_col, positive=positive)
    summary = _summary_of(file, spec, cost_fp=cost_fp, cost_fn=cost_fn)
    if json_out is not None:
        from gate.report.output import write_report

        write_report(json_out, json.dumps(summary, indent=2, allow_nan=False) + "\n")
    typer.echo(render_summary_text(summary), nl=False)


@app.command("demo")
@guarded
def demo_command(
    out: Path = typer.Option(Path("rankgate-demo"), "--out", help="Directory for the demo files."),
) -> None:
    """Generate the invented leak-scoring scenario and inspect the better candidate."""
    from gate.demo import write_scenario
    from gate.io import ColumnSpec
    from gate.summary import render_summary_text

    paths = write_scenario(out)
    for path in paths.values():
        typer.echo(f"wrote {path}")
    typer.echo("")
    summary = _summary_of(paths["candidate_better"], ColumnSpec(), cost_fp=1.0, cost_fn=1.0)
    typer.echo(render_summary_text(summary), nl=False)


@app.command("trend")
@guarded
def trend_command(
    history: Path = typer.Option(..., "--history", help="Run history database written by check --history."),
    policy: Path | None = typer.Option(
        None, "--policy", help="Policy whose [watch] section sets the CUSUM (default k = 0.5, h = 4, 5 reference runs)."
    ),
    since: str | None = typer.Option(
        None, "--since", help="Only runs at or after this ISO 8601 date or time (UTC unless an offset is given)."
    ),
    last: int | None = typer.Option(None, "--last", help="Only the last N runs (after --since)."),
    summary: Path | None = typer.Option(None, "--summary", help="Write the markdown summary to this file."),
    json_out: Path | None = typer.Option(None, "--json", help="Write the trend as JSON to this file."),
    quiet: bool = typer.Option(False, "--quiet", help="Do not print the summary on stdout."),
    title: str | None = typer.Option(None, "--title", help="Title of the summary."),
) -> None:
    """Watch the run history: every check's series, bound and drift alarms. Exit 1 on an alarm, else 0."""
    from gate.history import load_runs, parse_time
    from gate.report.output import write_report
    from gate.report.trend import render_trend_json, render_trend_markdown
    from gate.watch import compute_trend

    settings: dict[str, Any] = {}
    if policy is not None:
        from gate.policy import load_policy

        watch = load_policy(policy).watch
        settings = {
            "cusum_k": watch.cusum_k,
            "cusum_h": watch.cusum_h,
            "reference_runs": watch.reference_runs,
            "min_runs": watch.min_runs,
        }
    window_start = parse_time(since, what="--since") if since is not None else None
    trend = compute_trend(load_runs(history, since=window_start, last=last), **settings)
    markdown = render_trend_markdown(trend, title=title)
    if summary is not None:
        write_report(summary, markdown)
    if json_out is not None:
        write_report(json_out, render_trend_json(trend))
    if not quiet:
        typer.echo(markdown, nl=not markdown.endswith("\n"))
    raise typer.Exit(EXIT_FAIL if trend.alarmed else EXIT_PASS)


def main() -> None:
    """Console-script entry point."""
    try:
        app(standalone_mode=True)
    except SystemExit as exc:
        code = exc.code if isinstance(exc.code, int) else (0 if exc.code is None else EXIT_ERROR)
        sys.exit(code)
