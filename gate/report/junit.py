"""The JUnit XML report, so CI systems show the gate as test results.

One ``<testcase>`` per check and slice: ``classname`` is the check name, ``name`` the check
name with its slice. A check that did not pass carries ``<failure>`` with the reason; a skipped
slice carries ``<skipped>``; an inconclusive result that the policy resolved as a pass is a
passing test case whose ``<system-out>`` holds the warning. The figures behind the outcome
(value, interval, baseline, difference, bounds, warnings) are the failure's text, or else the
test case's ``<system-out>``. Counts (``tests``, ``failures``,
``errors``, ``skipped``) are on ``<testsuites>`` and ``<testsuite>``; run settings are
``<properties>``. No timestamps or host names, so equal inputs give identical bytes.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET

from gate.report import _common as c
from gate.report.escape import one_line, xml_safe
from gate.results import CheckResult, Result
from gate.stats.interval import Interval

__all__ = ["render_junit"]

SUITE_NAME = "rankgate"


def _attr(text: object) -> str:
    """Attribute text: one line, invisible characters shown as escapes, nothing XML forbids."""
    return xml_safe(one_line(str(text)))


def _interval_suffix(interval: Interval | None, *, signed: bool = False) -> str:
    """`` [low, high] (method, 95%)`` after a value; empty without an interval."""
    if interval is None:
        return ""
    return (
        f" {c.fmt_interval(interval, signed=signed)}"
        f" ({one_line(interval.method)}, {c.fmt_percent(interval.confidence)})"
    )


def _details(check: CheckResult, result: Result) -> list[str]:
    lines = [f"check: {one_line(check.name)}", f"metric: {one_line(c.metric_text(check))}"]
    lines.append(f"slice: {one_line(c.slice_text(check.slice))}")
    lines.append(f"rows: {check.n} ({check.n_pos} positive, {check.n_neg} negative)")
    outcome = check.outcome
    if outcome == "inconclusive":
        outcome += f" ({c.rule_text(result.on_inconclusive, check.passed)})"
    lines.append(f"outcome: {outcome}")
    if check.value is not None:
        lines.append(f"candidate: {c.fmt_value(check.value)}{_interval_suffix(check.interval)}")
    if check.baseline_value is not None:
        lines.append(f"baseline: {c.fmt_value(check.baseline_value)}")
    if check.delta is not None:
        lines.append(
            f"difference: {c.fmt_signed(check.delta)}{_interval_suffix(check.delta_interval, signed=True)}"
        )
    for decision in c.decisions(check):
        lines.append(f"bound: {c.bound_text(decision.bound)}: {decision.outcome}")
    if check.threshold is not None:
        lines.append(f"threshold: {c.fmt_exact(check.threshold)}")
    if check.reason:
        lines.append(f"reason: {one_line(check.reason)}")
    warnings = list(check.warnings)
    if check.outcome == "inconclusive":
        warnings.insert(0, c.inconclusive_note(check, result))
    lines.extend(f"warning: {one_line(w)}" for w in c.unique(warnings))
    return lines


def _message(check: CheckResult, result: Result) -> str:
    if check.reason:
        return check.reason
    if check.outcome == "inconclusive":
        return f"inconclusive, {c.rule_text(result.on_inconclusive, check.passed)}"
    failing = [c.bound_text(d.bound) for d in c.decisions(check) if d.outcome != "pass"]
    return f"{check.outcome}: {'; '.join(failing)}" if failing else check.outcome


def _testcase(parent: ET.Element, check: CheckResult, result: Result) -> None:
    case = ET.SubElement(
        parent,
        "testcase",
        {"classname": _attr(check.name), "name": _attr(c.check_label(check)), "time": "0"},
    )
    details = xml_safe("\n".join(_details(check, result)))
    if check.outcome == "skipped":
        ET.SubElement(case, "skipped", {"message": _attr(check.reason or "skipped")})
    elif not check.passed:
        attrs = {"message": _attr(_message(check, result)), "type": _attr(check.outcome)}
        ET.SubElement(case, "failure", attrs).text = details
        return  # the failure text holds the details; no need to repeat them in system-out
    ET.SubElement(case, "system-out").text = details


def _counts(result: Result) -> dict[str, str]:
    k = c.counts(result)
    failures = sum(1 for check in result.checks if check.outcome != "skipped" and not check.passed)
    return {
        "tests": str(k.total),
        "failures": str(failures),
        "errors": "0",
        "skipped": str(k.skipped),
        "time": "0",
    }


def render_junit(result: Result) -> str:
    """Render ``result`` as JUnit XML (one test suite), with an XML declaration, ending in a newline.

    Counts: ``tests`` = checks x slices, ``failures`` = those that did not pass (including
    inconclusive results the policy counts as failures), ``skipped`` = slices not judged,
    ``errors`` = 0 (an evaluation that cannot run produces no report; the CLI exits 2).
    """
    counts = _counts(result)
    root = ET.Element("testsuites", {"name": SUITE_NAME, **counts})
    suite = ET.SubElement(root, "testsuite", {"name": SUITE_NAME, **counts})
    properties = ET.SubElement(suite, "properties")
    settings = [
        ("verdict", result.verdict),
        ("confidence", repr(float(result.confidence))),
        ("resamples", str(result.resamples)),
        ("seed", str(result.seed)),
        ("on_inconclusive", result.on_inconclusive),
        ("adjust", result.adjust),
        ("policy_source", result.policy_source),
        ("policy_hash", result.policy_hash),
        ("candidate_source", result.candidate_source),
        ("baseline_source", "" if result.baseline_source is None else result.baseline_source),
        ("fingerprint", result.fingerprint),
        ("methods", c.methods_line(result)),
    ]
    for key, value in settings:
        ET.SubElement(properties, "property", {"name": key, "value": _attr(value)})
    for check in result.checks:
        _testcase(suite, check, result)
    summary = [f"verdict: {result.verdict}", f"methods: {one_line(c.methods_line(result))}"]
    summary.extend(f"warning: {one_line(w)}" for w in c.run_warnings(result))
    summary.extend(f"note: {one_line(k)}: {one_line(v)}" for k, v in sorted(result.notes.items()))
    ET.SubElement(suite, "system-out").text = xml_safe("\n".join(summary))
    ET.indent(root, space="  ")
    body = ET.tostring(root, encoding="unicode")
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + body + "\n"
