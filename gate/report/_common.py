"""What the three reports share: number formats, labels, counts, warnings, methods line.

Everything here returns raw (unescaped) text; each renderer escapes for its own format.
Warnings are the evaluate layer's: the reports render them once each and do not invent them.
The one notice added here is :func:`inconclusive_note`, which JUnit needs on the test case
itself (the evaluate layer lists that notice only in the run's warnings).

Numbers: metric values and intervals with 4 decimals, differences signed, policy bounds as
written (4 decimals when exact, else the shortest round-trip form), intervals as [low, high].
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass

from gate.results import Bound, CheckResult, Decision, Result, SliceKey
from gate.stats.interval import Interval

DECIMALS = 4
MISSING = "-"

_BOUND_TEXT = {"at_least": ">=", "at_most": "<=", "max_drop": "drop <=", "max_rise": "rise <="}


def fmt_value(x: float | None) -> str:
    """A metric value with a fixed 4 decimals; ``-`` when absent; ``nan``/``inf`` spelled out."""
    if x is None:
        return MISSING
    return f"{float(x):.{DECIMALS}f}"


def fmt_signed(x: float | None) -> str:
    """A difference with its sign (``+0.0073``, ``-0.2105``); exactly ``0.0000`` when it rounds to 0."""
    if x is None:
        return MISSING
    x = float(x)
    text = f"{x:+.{DECIMALS}f}"
    if math.isfinite(x) and float(text) == 0.0:
        return f"{0.0:.{DECIMALS}f}"
    return text


def fmt_interval(interval: Interval | None, *, signed: bool = False) -> str:
    """``[low, high]`` with the value format (signed for differences); ``-`` when absent."""
    if interval is None:
        return MISSING
    fmt = fmt_signed if signed else fmt_value
    return f"[{fmt(interval.low)}, {fmt(interval.high)}]"


def fmt_exact(x: float) -> str:
    """A policy number as written: 4 decimals when that is exact, else the shortest round-trip form."""
    x = float(x)
    fixed = f"{x:.{DECIMALS}f}"
    if math.isfinite(x) and float(fixed) == x:
        return fixed
    return repr(x)


def fmt_param(x: float) -> str:
    """A metric parameter, shortest form: ``0.01``, ``20`` (not ``20.0``)."""
    if isinstance(x, bool):
        return str(x).lower()
    if isinstance(x, int):
        return str(x)
    text = repr(float(x))
    return text[:-2] if text.endswith(".0") else text


def fmt_percent(confidence: float) -> str:
    """``0.95`` -> ``95%``; ``0.975`` -> ``97.5%``."""
    return f"{round(float(confidence) * 100, 6):g}%"


def bound_text(bound: Bound) -> str:
    """``>= 0.8500``, ``<= 0.0500``, ``drop <= 0.0050``, ``rise <= 0.0050``."""
    return f"{_BOUND_TEXT.get(bound.kind, bound.kind)} {fmt_exact(bound.value)}"


def decisions(check: CheckResult) -> list[Decision]:
    """The check's decisions in report order: floor (or ceiling) first, then the margin."""
    return [d for d in (check.floor, check.margin) if d is not None]


def metric_text(check: CheckResult) -> str:
    """``roc_auc`` or ``recall_at_fpr (fpr=0.01)``; parameters in sorted order."""
    return metric_params_text(check.metric, check.params)


def metric_params_text(metric: str, params: Mapping[str, float]) -> str:
    """:func:`metric_text` from the metric's name and parameters (for a trend series too)."""
    if not params:
        return metric
    shown = ", ".join(f"{k}={fmt_param(v)}" for k, v in sorted(params.items()))
    return f"{metric} ({shown})"


def slice_text(key: SliceKey | None) -> str:
    """``all`` for the whole evaluation set, else ``column = value``."""
    if key is None:
        return "all"
    return f"{key.column} = {key.value}"


def check_label(check: CheckResult) -> str:
    """``name`` overall, ``name [column = value]`` in a slice."""
    if check.slice is None:
        return check.name
    return f"{check.name} [{slice_text(check.slice)}]"


def rule_text(on_inconclusive: str, passed: bool) -> str:
    """How an inconclusive result was resolved, in words."""
    if on_inconclusive == "estimate":
        verb = "passed" if passed else "failed"
        return f"{verb} on the point estimate"
    return "counted as a pass by the policy" if passed else "counted as a failure by the policy"


def inconclusive_note(check: CheckResult, result: Result) -> str:
    """The warning an inconclusive check carries: the interval straddles a bound, and how it was resolved."""
    straddled = [bound_text(d.bound) for d in decisions(check) if d.outcome == "inconclusive"]
    what = f" ({'; '.join(straddled)})" if straddled else ""
    text = (
        f"inconclusive: the {fmt_percent(result.confidence)} interval straddles the bound{what}; "
        f"{rule_text(result.on_inconclusive, check.passed)}"
    )
    if result.on_inconclusive == "estimate":
        text += "; the evaluation set is too small to be sure"
    return text


def flattened(check: CheckResult, warning: str) -> str:
    """A check's warning as it reads in the run's list: ``label: warning``."""
    return f"{check_label(check)}: {warning}"


def run_warnings(result: Result) -> list[str]:
    """Every warning of the run, once: the Result's own list, then any check warning not in it.

    The evaluate layer lists each check's warnings in ``Result.warnings`` as ``label: text``
    (and adds the inconclusive and skipped notices there); a check warning already present in
    that form is not repeated, so results built either way render without duplicates.
    """
    out = unique(result.warnings)
    present = set(out)
    for check in result.checks:
        for warning in check.warnings:
            line = flattened(check, warning)
            if line not in present:
                present.add(line)
                out.append(line)
    return out


def unique(items: Iterable[str]) -> list[str]:
    """Items in order with exact repeats dropped."""
    seen: set[str] = set()
    out = []
    for item in items:
        if item not in seen:
            seen.add(item)
            out.append(item)
    return out


def notes_shown(result: Result) -> list[tuple[str, str]]:
    """Notes sorted by key, leaving out a note whose text is already one of the run's warnings."""
    warned = set(result.warnings)
    return [(k, v) for k, v in sorted(result.notes.items()) if v not in warned]


@dataclass(frozen=True)
class Counts:
    """Outcomes over all checks and slices; ``not_passed`` counts ``passed is False``."""

    total: int
    passed_outcome: int
    failed_outcome: int
    inconclusive: int
    inconclusive_passed: int
    skipped: int
    not_passed: int


def counts(result: Result) -> Counts:
    checks = result.checks
    inconclusive = [c for c in checks if c.outcome == "inconclusive"]
    return Counts(
        total=len(checks),
        passed_outcome=sum(c.outcome == "pass" for c in checks),
        failed_outcome=sum(c.outcome == "fail" for c in checks),
        inconclusive=len(inconclusive),
        inconclusive_passed=sum(c.passed for c in inconclusive),
        skipped=sum(c.outcome == "skipped" for c in checks),
        not_passed=sum(not c.passed for c in checks),
    )


def settings_text(result: Result) -> str:
    """``confidence 95%, 2000 resamples, seed 7``: what any rerun needs to reproduce the numbers."""
    return f"confidence {fmt_percent(result.confidence)}, {result.resamples} resamples, seed {result.seed}"


def methods_line(result: Result) -> str:
    """One line stating the methods, confidence level, resamples and seed.

    The evaluate layer's ``Result.methods`` (or, when that is empty, the checks' ``method``
    fields per metric with the inconclusive rule and the multiplicity adjustment), followed by
    :func:`settings_text`, so the settings are stated whatever the producer wrote.
    """
    methods = result.methods.strip().rstrip(".")
    if not methods:
        per_metric: dict[str, list[str]] = {}
        for check in result.checks:
            if check.method:
                names = per_metric.setdefault(check.metric, [])
                if check.method not in names:
                    names.append(check.method)
        parts = [f"{metric}: {', '.join(names)}" for metric, names in per_metric.items()]
        parts.append(f"inconclusive rule: {result.on_inconclusive}")
        parts.append(f"multiplicity adjustment: {result.adjust}")
        methods = "; ".join(parts)
    return f"{methods}. Settings: {settings_text(result)}"
