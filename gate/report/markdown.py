"""The markdown summary: compact enough for a pull-request comment or a CI job summary.

Layout: a heading with the verdict, one line of counts, one line naming the inputs, a table
with one row per check and slice, then (when there are any) the failures with their reasons,
the run's warnings (inconclusive checks, skipped slices, margins below resolution, mismatch
handling: as the evaluate layer wrote them) and notes, and last the methods line and the
policy. Every piece of untrusted text goes through :func:`gate.report.escape.escape_markdown`.
"""

from __future__ import annotations

from gate.report import _common as c
from gate.report.escape import escape_markdown
from gate.results import CheckResult, Result, SliceKey

__all__ = ["render_markdown"]

# User text is cut at these lengths (cells and labels / free-text lines) so one long slice
# value or note cannot swamp the summary; the JSON report keeps the full text.
CELL_MAX = 80
LINE_MAX = 300
FINGERPRINT_SHOWN = 12

_OUTCOME_MARK = {"pass": "PASS", "fail": "FAIL", "skipped": "SKIPPED"}


def _esc(text: str, *, cell: bool = False) -> str:
    return escape_markdown(text, max_length=CELL_MAX if cell else LINE_MAX)


def _label(check: CheckResult) -> str:
    """The check name with its slice, each part cut to the cell length."""
    return _name_label(check.name, check.slice)


def _name_label(name: str, key: SliceKey | None) -> str:
    """Escaped ``name`` or ``name [column = value]`` (for a trend series too)."""
    escaped = _esc(name, cell=True)
    if key is None:
        return escaped
    return f"{escaped} \\[{_esc(c.slice_text(key), cell=True)}\\]"


def _outcome_cell(check: CheckResult) -> str:
    if check.outcome == "inconclusive":
        return f"{'PASS' if check.passed else 'FAIL'} (inconclusive)"
    mark = _OUTCOME_MARK.get(check.outcome, check.outcome.upper())
    if check.outcome == "pass" and not check.passed:  # inconsistent input: show both, hide nothing
        mark += " (not passed)"
    return mark


def _bound_cell(check: CheckResult) -> str:
    decisions = c.decisions(check)
    if not decisions:
        return c.MISSING
    if len(decisions) == 1:
        return c.bound_text(decisions[0].bound)
    return "; ".join(f"{c.bound_text(d.bound)} {d.outcome}" for d in decisions)


def _with_interval(value: str, interval: str) -> str:
    if interval == c.MISSING:
        return value
    return f"{value} {interval}"


def _row(check: CheckResult, result: Result) -> str:
    candidate = _with_interval(c.fmt_value(check.value), c.fmt_interval(check.interval))
    if check.interval is not None and abs(check.interval.confidence - result.confidence) > 1e-12:
        candidate += f" ({c.fmt_percent(check.interval.confidence)})"
    difference = _with_interval(c.fmt_signed(check.delta), c.fmt_interval(check.delta_interval, signed=True))
    if check.delta_interval is not None and abs(check.delta_interval.confidence - result.confidence) > 1e-12:
        difference += f" ({c.fmt_percent(check.delta_interval.confidence)})"
    cells = [
        _esc(check.name, cell=True),
        _esc(c.metric_text(check), cell=True),
        _esc(c.slice_text(check.slice), cell=True),
        f"{check.n} ({check.n_pos})",
        candidate,
        c.fmt_value(check.baseline_value),
        difference,
        _bound_cell(check),
        _outcome_cell(check),
    ]
    return "| " + " | ".join(cells) + " |"


def _failure_reason(check: CheckResult) -> str:
    if check.reason:
        return check.reason
    failing = [d for d in c.decisions(check) if d.outcome != "pass"]
    if not failing:
        return "did not pass"
    parts = []
    for d in failing:
        what = "difference" if d.bound.kind in ("max_drop", "max_rise") else "value"
        parts.append(
            f"{what} {c.fmt_value(d.estimate)} {c.fmt_interval(d.interval, signed=what == 'difference')} "
            f"against {c.bound_text(d.bound)}: {d.outcome}"
        )
    return "; ".join(parts)


def _counts_line(result: Result) -> str:
    k = c.counts(result)
    parts = [f"{k.passed_outcome} pass", f"{k.failed_outcome} fail"]
    if k.inconclusive:
        n_failed = k.inconclusive - k.inconclusive_passed
        if n_failed == 0:
            how = c.rule_text(result.on_inconclusive, True)
        elif k.inconclusive_passed == 0:
            how = c.rule_text(result.on_inconclusive, False)
        else:  # only the "estimate" rule can split them
            how = f"{k.inconclusive_passed} passed, {n_failed} failed on the point estimate"
        parts.append(f"{k.inconclusive} inconclusive ({how})")
    parts.append(f"{k.skipped} skipped")
    plural = "" if k.total == 1 else "s"
    return f"**{result.verdict.upper()}**: {k.total} check result{plural}: {', '.join(parts)}."


def _inputs_line(result: Result) -> str:
    text = (
        f"Candidate {_esc(result.candidate_source)}: {result.n} rows, "
        f"{result.n_pos} positive, {result.n_neg} negative"
    )
    if result.baseline_source is not None:
        text += f"; baseline {_esc(result.baseline_source)}"
    else:
        text += "; no baseline"
    if result.fingerprint:
        text += f"; evaluation set {_esc(result.fingerprint[:FINGERPRINT_SHOWN])}"
    return text + "."


def _section(title: str, items: list[str]) -> list[str]:
    if not items:
        return []
    return [f"**{title}**", "", *(f"- {item}" for item in items), ""]


def render_markdown(result: Result, *, title: str | None = None) -> str:
    """Render ``result`` as a markdown summary; the verdict is on the first line.

    Parameters
    ----------
    result : the evaluation result.
    title : optional heading text (untrusted: escaped); default ``rankgate``.

    Returns
    -------
    str
        GitHub-flavoured markdown ending in a newline; byte-identical for equal inputs.
    """
    heading = _esc(title) if title is not None else "rankgate"
    conf = c.fmt_percent(result.confidence)
    lines = [f"### {heading}: {result.verdict.upper()}", "", _counts_line(result), "", _inputs_line(result), ""]

    if result.checks:
        lines.append(
            f"| check | metric | slice | n (pos) | candidate [{conf} CI] | baseline "
            f"| difference [{conf} CI] | bound | outcome |"
        )
        lines.append("| --- | --- | --- | ---: | --- | --- | --- | --- | --- |")
        lines.extend(_row(check, result) for check in result.checks)
        lines.append("")
    else:
        lines.extend(["No checks were evaluated.", ""])

    failures = [
        f"{_label(check)}: {_esc(_failure_reason(check))}"
        for check in result.checks
        if not check.passed
    ]
    lines.extend(_section("Failed", failures))

    lines.extend(_section("Warnings", [_esc(w) for w in c.run_warnings(result)]))
    lines.extend(_section("Notes", [f"{_esc(k)}: {_esc(v)}" for k, v in c.notes_shown(result)]))

    lines.append(f"Methods: {_esc(c.methods_line(result))}.")
    policy = f"Policy {_esc(result.policy_source)}"
    if result.policy_hash:
        policy += f", sha256 {_esc(result.policy_hash[:FINGERPRINT_SHOWN])}"
    lines.extend(["", policy + "."])
    return "\n".join(lines) + "\n"
