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
        except BrokenPipeError:
            # The reader of stdout went away (``rankgate demo | head``): stop quietly. Not 0: the
            # command did not finish, and a verdict must never be read into it.
            _quiet_broken_pipe()
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
    nights: int = typer.Option(30, "--nights", min=6, max=120, help="Nights of the simulated nightly watch."),
) -> None:
    """Run the invented leak-scoring scenario end to end: adopt, two gate checks, a month of nightly watching.

    Exit 0 when the demo told its story (better candidate passes, regressing one fails; the nightly
    trend raises an alarm over a full month, and stays quiet when --nights ends before the slow
    decay begins); 1 if any of those came out otherwise.
    """
    from datetime import datetime, timedelta, timezone
    from importlib.resources import files

    from gate import demo
    from gate.baseline import adopt
    from gate.evaluation import evaluate
    from gate.history import load_runs, record_run
    from gate.io import read_table
    from gate.policy import load_policy
    from gate.report import render_json, render_junit, render_markdown
    from gate.report.output import write_report
    from gate.report.trend import render_trend_markdown
    from gate.watch import compute_trend

    def say(text: str = "") -> None:
        typer.echo(text)

    paths = demo.write_scenario(out)
    for name in ("leak-watch.toml", "nightly-watch.toml"):
        write_report(out / name, files("gate.data").joinpath(name).read_text(encoding="utf-8"))
    policy = load_policy(out / "leak-watch.toml")
    spec = policy.data.column_spec()
    say(f"Demo scenario (invented, fixed seed) written to {out}/: {', '.join(p.name for p in paths.values())}")
    say("")

    say("== 1. rankgate adopt: store the production model's scores as the baseline")
    manifest = adopt(
        read_table(paths["production"], spec), out / "baseline", note="demo production model", new_eval_set=True
    )
    say(f"baseline {out / 'baseline'}: {manifest.n} segments, {manifest.n_positive} confirmed leaks")
    say("")

    verdicts: dict[str, str] = {}
    for step, key in ((2, "candidate_better"), (3, "candidate_regressing")):
        name = paths[key].stem
        say(f"== {step}. rankgate check --policy leak-watch.toml --candidate {paths[key].name} --baseline baseline/")
        result = evaluate(policy, paths[key], out / "baseline", progress=_progress_callback())
        markdown = render_markdown(result, title=f"rankgate: {name}")
        write_report(out / f"{name}-summary.md", markdown)
        write_report(out / f"{name}-report.json", render_json(result))
        write_report(out / f"{name}-junit.xml", render_junit(result))
        say(markdown.rstrip("\n"))
        code = EXIT_PASS if result.verdict == "pass" else EXIT_FAIL
        say(f"-> exit code {code} ({result.verdict})")
        say("")
        verdicts[key] = result.verdict

    say(f"== 4. {nights} nights of rankgate check --history, then rankgate trend")
    nightly = load_policy(out / "nightly-watch.toml")
    history = out / "history.sqlite"
    if history.exists():
        history.unlink()
    start = datetime(2026, 11, 1, 2, 30, tzinfo=timezone.utc)
    for night in range(nights):
        frame = demo.nightly_scores(night)
        run = evaluate(nightly, frame)
        record_run(history, run, label=f"night-{night + 1:02d}", run_time=start + timedelta(days=night))
    trend = compute_trend(load_runs(history), **_watch_settings(nightly))
    markdown = render_trend_markdown(trend, title="rankgate trend: nightly leak scoring")
    write_report(out / "trend.md", markdown)
    say(markdown.rstrip("\n"))
    say(f"-> exit code {EXIT_FAIL if trend.alarmed else EXIT_PASS} ({'alarm' if trend.alarmed else 'no alarm'})")
    say("")

    # The decay begins on night DECAY_START + 1: a shorter watch must stay quiet (no false alarm),
    # a full month must raise the alarm; in between the alarm may or may not have come yet.
    decay_begins = demo.DECAY_START + 1
    if nights < decay_begins:
        trend_ok = not trend.alarmed
        trend_story = (
            f"the nightly watch stayed quiet over {nights} nights, before the slow decay in "
            f"{demo.DECAY_DISTRICT} begins (night {decay_begins}; run --nights {demo.NIGHTS} to see its alarm)"
        )
    elif nights >= demo.NIGHTS:
        trend_ok = trend.alarmed
        trend_story = f"the nightly watch raised an alarm for the slow decay in {demo.DECAY_DISTRICT}"
    else:
        trend_ok = True
        trend_story = (
            f"the nightly watch {'raised an alarm' if trend.alarmed else 'has not raised an alarm yet'} "
            f"for the slow decay in {demo.DECAY_DISTRICT} that began on night {decay_begins}"
        )
    story = (
        verdicts["candidate_better"] == "pass" and verdicts["candidate_regressing"] == "fail" and trend_ok
    )
    say(
        "Demo done: the better candidate passed, the one that regresses in "
        f"{demo.REGRESSING_DISTRICT} failed, and {trend_story}. Reports are in {out}/."
        if story
        else "Demo finished, but its story did not hold (see the summaries above): please report this."
    )
    raise typer.Exit(EXIT_PASS if story else EXIT_FAIL)


# --- the gate: check / adopt / init ------------------------------------------------------------


def _progress_callback() -> Any:
    """A bootstrap progress line on stderr, only when stderr is a terminal."""
    if not sys.stderr.isatty():
        return None
    import time

    start = time.monotonic()
    state = {"shown": False}

    def progress(done: int, total: int) -> None:
        if time.monotonic() - start < 1.0 and not state["shown"]:
            return  # short work: no bar
        state["shown"] = True
        width = 30
        filled = int(width * done / max(total, 1))
        sys.stderr.write(f"\rbootstrap [{'#' * filled}{'.' * (width - filled)}] {done}/{total}")
        if done >= total:
            sys.stderr.write("\r" + " " * (width + 30) + "\r")
        sys.stderr.flush()

    return progress


def _need_plots() -> None:
    from gate.plots import require_matplotlib

    require_matplotlib()


def _chart_directory(directory: Path, option: str) -> None:
    """Create the charts directory; a path that is a file, or cannot be made, is a user mistake."""
    if directory.exists() and not directory.is_dir():
        raise GateError(f"{option} {directory}: exists and is not a directory")
    try:
        directory.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise GateError(f"{option} {directory}: cannot create the directory ({exc.strerror or exc})") from None


def _watch_settings(policy: Any) -> dict[str, Any]:
    """The policy's [watch] section as keyword arguments of gate.watch.compute_trend."""
    watch = policy.watch
    return {
        "cusum_k": watch.cusum_k,
        "cusum_h": watch.cusum_h,
        "reference_runs": watch.reference_runs,
        "min_runs": watch.min_runs,
    }


def _chart_tables(policy: Any, candidate: Any, baseline: Any) -> tuple[Any, Any]:
    """Candidate and baseline tables paired by id (as the gate pairs them), for the charts."""
    if baseline is None:
        return candidate, None
    from gate.baseline import align

    al = align(candidate, baseline, on_mismatch=policy.baseline.on_mismatch)
    return al.candidate, al.baseline


def _check_plots(
    policy: Any, candidate: Any, baseline: Any, directory: Path, *, option: str = "--plots"
) -> list[Path]:
    """ROC and precision-recall charts of candidate (and baseline) for the policy's checks."""
    from gate import ranking as rk
    from gate.plots import plot_pr, plot_roc, slugify

    _chart_directory(directory, option)
    curves = {"candidate": rk.tie_blocks(candidate.scores, candidate.labels, candidate.weights)}
    if baseline is not None:
        curves["baseline"] = rk.tie_blocks(baseline.scores, baseline.labels, baseline.weights)
    caps = sorted({c.fpr for c in policy.checks if c.metric == "recall_at_fpr" and c.fpr is not None})
    images: list[Path] = []
    images += plot_roc(
        curves,
        title="ROC curve" + (f" (FPR cap {caps[0]:g})" if caps else ""),
        fpr_cap=caps[0] if caps else None,
        hull=True,
        path=directory / "roc",
    )
    images += plot_pr(curves, title="Precision-recall curve", path=directory / "precision-recall")
    from gate.evaluation import slice_masks
    from gate.io import subset

    for column in policy.by_columns:
        if column not in candidate.columns:
            continue
        for value, mask in slice_masks(candidate, column):
            sub = {"candidate": subset(candidate, mask)}
            if baseline is not None:
                sub["baseline"] = subset(baseline, mask)
            if min(t.n_pos for t in sub.values()) == 0 or min(t.n_neg for t in sub.values()) == 0:
                continue
            blocks = {k: rk.tie_blocks(t.scores, t.labels, t.weights) for k, t in sub.items()}
            images += plot_roc(
                blocks,
                title=f"ROC curve, {column} = {value}",
                fpr_cap=caps[0] if caps else None,
                path=directory / f"roc-{slugify(column)}-{slugify(value)}",
            )
    return images


@app.command("check")
@guarded
def check_command(
    policy: Path = typer.Option(..., "--policy", help="Policy file (TOML)."),
    candidate: Path = typer.Option(..., "--candidate", help="The candidate's score table."),
    baseline: Path | None = typer.Option(
        None, "--baseline", help="Baseline directory (from rankgate adopt) or a score table of the production model."
    ),
    summary: Path | None = typer.Option(None, "--summary", help="Write the markdown summary to this file."),
    append: bool = typer.Option(False, "--append", help="Append to --summary instead of replacing it (CI job summaries)."),
    json_out: Path | None = typer.Option(None, "--json", help="Write the JSON report to this file."),
    junit_out: Path | None = typer.Option(None, "--junit", help="Write a JUnit XML report to this file."),
    quiet: bool = typer.Option(False, "--quiet", help="Do not print the summary on stdout."),
    history: Path | None = typer.Option(None, "--history", help="Append this run to a history database (SQLite)."),
    label: str | None = typer.Option(None, "--label", help="Run label for --history (default: the CI commit id)."),
    plots: Path | None = typer.Option(None, "--plots", help="Write ROC and precision-recall charts to this directory."),
    html: Path | None = typer.Option(None, "--html", help="Write one self-contained HTML page (summary and charts)."),
    title: str | None = typer.Option(None, "--title", help="Title of the summary."),
) -> None:
    """Run the gate: exit 0 if every check passed, 1 if one failed, 2 if the inputs cannot be evaluated."""
    from gate.evaluation import baseline_table, evaluate, load_inputs
    from gate.policy import load_policy
    from gate.report import render_json, render_junit, render_markdown
    from gate.report.output import write_report

    if append and summary is None:
        raise GateError("--append needs --summary FILE (the file to append the summary to)")
    if label is not None and history is None:
        raise GateError("--label needs --history PATH (the label names a recorded run)")
    if plots is not None or html is not None:
        _need_plots()
    if plots is not None:  # before any report or history row is written
        _chart_directory(plots, "--plots")
    pol = load_policy(policy)
    cand_table, base_obj = load_inputs(pol, candidate, baseline)
    base_table = baseline_table(base_obj)
    result = evaluate(pol, cand_table, base_obj, progress=_progress_callback())
    markdown = render_markdown(result, title=title)
    if summary is not None:
        write_report(summary, markdown, append=append)
    if json_out is not None:
        write_report(json_out, render_json(result))
    if junit_out is not None:
        write_report(junit_out, render_junit(result))
    if history is not None:
        from gate.history import record_run

        record_run(history, result, label=label)
    if plots is not None or html is not None:
        import tempfile

        cand_aligned, base_aligned = _chart_tables(pol, cand_table, base_table)
        with tempfile.TemporaryDirectory() as scratch:
            directory = plots if plots is not None else Path(scratch)
            images = _check_plots(pol, cand_aligned, base_aligned, directory)
            if html is not None:
                from gate.report.html import write_html

                write_html(html, title=title or "rankgate check", summary_markdown=markdown, images=images)
    if not quiet:
        try:
            typer.echo(markdown, nl=not markdown.endswith("\n"))
        except BrokenPipeError:  # the verdict below still decides the exit code
            _quiet_broken_pipe()
    raise typer.Exit(EXIT_PASS if result.verdict == "pass" else EXIT_FAIL)


@app.command("adopt")
@guarded
def adopt_command(
    candidate: Path = typer.Option(..., "--candidate", help="Score table of the model that becomes the baseline."),
    baseline: Path = typer.Option(..., "--baseline", help="Baseline directory (created on first use)."),
    policy: Path | None = typer.Option(None, "--policy", help="Policy whose [data] section names the columns."),
    note: str | None = typer.Option(None, "--note", help="A note stored in the manifest (e.g. the commit)."),
    new_eval_set: bool = typer.Option(
        False, "--new-eval-set", help="Allow a candidate scored on a different evaluation set than the current baseline."
    ),
) -> None:
    """Store the candidate's scores as the production baseline (atomically)."""
    from gate.baseline import adopt
    from gate.io import ColumnSpec, read_table

    spec = ColumnSpec()
    if policy is not None:
        from gate.policy import load_policy

        spec = load_policy(policy).data.column_spec()
    table = read_table(candidate, spec)
    manifest = adopt(table, baseline, note=note, new_eval_set=new_eval_set)
    typer.echo(
        f"adopted {candidate} as the baseline in {baseline}: {manifest.n} examples "
        f"({manifest.n_positive} positive), eval set {manifest.fingerprint[:12]}"
    )


@app.command("init")
@guarded
def init_command(
    path: Path = typer.Argument(Path("rankgate.toml"), help="Where to write the starter policy."),
) -> None:
    """Write a commented starter policy (refuses to overwrite an existing file)."""
    from gate.policy import write_starter_policy

    written = write_starter_policy(path)
    typer.echo(f"wrote {written}; edit its [data] and [[check]] sections, then run rankgate check")


@app.command("plot")
@guarded
def plot_command(
    candidate: Path = typer.Option(..., "--candidate", help="The candidate's score table."),
    out: Path = typer.Option(Path("rankgate-plots"), "--out", help="Directory for the charts."),
    baseline: Path | None = typer.Option(None, "--baseline", help="Baseline directory or score table to compare with."),
    policy: Path | None = typer.Option(None, "--policy", help="Policy (columns, FPR cap, slices)."),
    html: Path | None = typer.Option(None, "--html", help="Also write one self-contained HTML page with the charts."),
) -> None:
    """Draw ROC (with convex hull and the policy's FPR cap) and precision-recall curves."""
    _need_plots()
    from gate.evaluation import baseline_table, load_inputs
    from gate.policy import parse_policy

    if policy is not None:
        from gate.policy import load_policy

        pol = load_policy(policy)
    else:
        pol = parse_policy('[[check]]\nmetric = "roc_auc"\nat_least = 0.5\n', source="<default>")
    cand_table, base_obj = load_inputs(pol, candidate, baseline)
    cand_table, base_aligned = _chart_tables(pol, cand_table, baseline_table(base_obj))
    images = _check_plots(pol, cand_table, base_aligned, out, option="--out")
    for image in images:
        typer.echo(f"wrote {image}")
    if html is not None:
        from gate.report.html import write_html

        lines = [f"Charts of `{candidate.name}`" + (f" against `{baseline.name}`" if baseline else "") + "."]
        written = write_html(html, title="rankgate plot", summary_markdown="\n".join(lines), images=images)
        typer.echo(f"wrote {written}")


def _trend_plots(trend: Any, directory: Path, floors: dict[str, Any] | None = None) -> list[Path]:
    """One chart per check and slice: values with interval bars, the bound, alarms marked.

    ``floors`` maps check names to their floor (at_least / at_most) from the policy, when given.
    """
    from gate.plots import plot_trend, slugify, trend_points

    _chart_directory(directory, "--plots")
    images: list[Path] = []
    for series in trend.series:
        where = "" if series.slice is None else f", {series.slice.column} = {series.slice.value}"
        name = series.name + where
        drift = getattr(series, "drift", None)
        images += plot_trend(
            trend_points(series),
            title=name,
            path=directory / f"trend-{slugify(name)}",
            bound=(floors or {}).get(series.name),
            ylabel=series.metric,
            reference=getattr(drift, "reference", None),
        )
    return images


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
    append: bool = typer.Option(False, "--append", help="Append to --summary instead of replacing it."),
    quiet: bool = typer.Option(False, "--quiet", help="Do not print the summary on stdout."),
    title: str | None = typer.Option(None, "--title", help="Title of the summary."),
    plots: Path | None = typer.Option(None, "--plots", help="Write one trend chart per check and slice to this directory."),
    html: Path | None = typer.Option(None, "--html", help="Write one self-contained HTML page (summary and charts)."),
) -> None:
    """Watch the run history: every check's series, bound and drift alarms. Exit 1 on an alarm, else 0."""
    from gate.history import load_runs, parse_time
    from gate.report.output import write_report
    from gate.report.trend import render_trend_json, render_trend_markdown
    from gate.watch import compute_trend

    settings: dict[str, Any] = {}
    floors: dict[str, Any] = {}
    if policy is not None:
        from gate.policy import load_policy

        pol = load_policy(policy)
        floors = {c.name: c.floor for c in pol.checks if c.floor is not None}
        settings = _watch_settings(pol)
    if append and summary is None:
        raise GateError("--append needs --summary FILE (the file to append the summary to)")
    if plots is not None or html is not None:
        _need_plots()
    if plots is not None:
        _chart_directory(plots, "--plots")
    window_start = parse_time(since, what="--since") if since is not None else None
    trend = compute_trend(load_runs(history, since=window_start, last=last), **settings)
    markdown = render_trend_markdown(trend, title=title)
    if summary is not None:
        write_report(summary, markdown, append=append)
    if json_out is not None:
        write_report(json_out, render_trend_json(trend))
    if plots is not None or html is not None:
        import tempfile

        with tempfile.TemporaryDirectory() as scratch:
            images = _trend_plots(trend, plots if plots is not None else Path(scratch), floors)
            if html is not None:
                from gate.report.html import write_html

                write_html(html, title=title or "rankgate trend", summary_markdown=markdown, images=images)
    if not quiet:
        typer.echo(markdown, nl=not markdown.endswith("\n"))
    raise typer.Exit(EXIT_FAIL if trend.alarmed else EXIT_PASS)


def main() -> None:
    """Console-script entry point: usage mistakes become one ``error:`` line and exit 2."""
    try:  # typer >= 0.25 carries its own copy of click
        from typer._click import exceptions as click_exceptions
    except ImportError:  # pragma: no cover - older typer on top of click
        from click import exceptions as click_exceptions

    try:
        code = app(standalone_mode=False)
    except click_exceptions.UsageError as exc:
        command = exc.ctx.command_path if exc.ctx is not None else "rankgate"
        message = " ".join(exc.format_message().split())
        typer.echo(f"error: {message} (see '{command} --help')", err=True)
        sys.exit(EXIT_ERROR)
    except typer.Abort:
        typer.echo("error: interrupted", err=True)
        sys.exit(EXIT_ERROR)
    except click_exceptions.ClickException as exc:
        typer.echo(f"error: {' '.join(exc.format_message().split())}", err=True)
        sys.exit(EXIT_ERROR)
    sys.exit(code if isinstance(code, int) else EXIT_PASS)


def _quiet_broken_pipe() -> None:
    """The reader of stdout went away (``rankgate demo | head``): stop quietly, like other tools."""
    import os

    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except OSError:
        pass
