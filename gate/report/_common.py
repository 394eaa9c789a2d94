"""What the three reports share: number formats, labels, counts, derived warnings, methods line.

Everything here returns raw (unescaped) text; each renderer escapes for its own format. The
warnings the reports add are derived from the structured fields of a CheckResult (outcome,
decisions, intervals), so they appear even when the evaluate layer did not write them; the
evaluate layer's own warnings follow, with exact repeats dropped.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
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
    if not check.params:
        return check.metric
    params = ", ".join(f"{k}={fmt_param(v)}" for k, v in sorted(check.params.items()))
    return f"{check.metric} ({params})"


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


def _finite(x: float | None) -> bool:
    return x is not None and math.isfinite(float(x))


def resolution_gap(check: CheckResult) -> float | None:
    """The difference interval's half-width when it exceeds the margin, else None.

    Such a margin is below the resolution of the evaluation set: even with no true change the
    difference interval would usually straddle it.
    """
    margin = check.margin
    if margin is None or not (_finite(margin.interval.low) and _finite(margin.interval.high)):
        return None
    half = margin.interval.half_width
    return half if half > float(margin.bound.value) else None


def resolution_text(check: CheckResult, half: float) -> str:
    assert check.margin is not None
    return (
        f"margin {fmt_exact(check.margin.bound.value)} is below the resolution {fmt_value(half)} "
        "of this evaluation set (half-width of the difference interval)"
    )


def derived_warnings(check: CheckResult, result: Result, *, resolution: bool = True) -> list[str]:
    """Warnings implied by the structured fields of one check and slice.

    - inconclusive: the interval straddles a bound; says how the policy resolved it;
    - skipped: the slice was not judged, with the reason;
    - margin below resolution (unless ``resolution=False``): see :func:`resolution_gap`.
    """
    out: list[str] = []
    if check.outcome == "inconclusive":
        straddled = [bound_text(d.bound) for d in decisions(check) if d.outcome == "inconclusive"]
        what = f" ({'; '.join(straddled)})" if straddled else ""
        text = (
            f"inconclusive: the {fmt_percent(result.confidence)} interval straddles the bound{what}; "
            f"{rule_text(result.on_inconclusive, check.passed)}"
        )
        if result.on_inconclusive == "estimate":
            text += "; the evaluation set is too small to be sure"
        out.append(text)
    elif check.outcome == "skipped":
        out.append(f"skipped: {check.reason}" if check.reason else "skipped: not judged")
    if resolution:
        half = resolution_gap(check)
        if half is not None:
            out.append(resolution_text(check, half))
    return out


def check_warnings(check: CheckResult, result: Result, *, resolution: bool = True) -> list[str]:
    """Derived warnings, then the evaluate layer's own, without exact repeats."""
    return _unique([*derived_warnings(check, result, resolution=resolution), *check.warnings])


def _unique(items: Iterable[str]) -> list[str]:
    seen: set[str] = set()
    out = []
    for item in items:
        if item not in seen:
            seen.add(item)
            out.append(item)
    return out


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


def methods_line(result: Result) -> str:
    """One line stating methods, confidence level, resamples and seed.

    The evaluate layer's ``Result.methods`` when it gave one; otherwise built from the checks'
    ``method`` fields (per metric, in order of first appearance) and the run settings.
    """
    if result.methods.strip():
        return result.methods
    per_metric: dict[str, list[str]] = {}
    for check in result.checks:
        if check.method:
            methods = per_metric.setdefault(check.metric, [])
            if check.method not in methods:
                methods.append(check.method)
    listed = "; ".join(f"{metric}: {', '.join(ms)}" for metric, ms in per_metric.items())
    parts = [listed] if listed else []
    parts.append(f"confidence {fmt_percent(result.confidence)}")
    parts.append(f"{result.resamples} bootstrap resamples, seed {result.seed}")
    parts.append(f"inconclusive rule: {result.on_inconclusive}")
    parts.append(f"multiplicity adjustment: {result.adjust}")
    return "; ".join(parts)
