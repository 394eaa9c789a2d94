"""The JUnit XML report: gate/report/junit.py. Parsed back with xml.etree.ElementTree."""

from __future__ import annotations

import dataclasses
import xml.etree.ElementTree as ET

import pytest

from gate.report import render_junit
from gate.report import _common as common
from gate.report.escape import one_line, xml_safe
from tests import fixtures_results as fx


def parse(text: str) -> ET.Element:
    assert text.startswith('<?xml version="1.0" encoding="UTF-8"?>\n')
    return ET.fromstring(text.encode("utf-8"))


def cases(root: ET.Element) -> list[ET.Element]:
    return root.findall("./testsuite/testcase")


@pytest.mark.parametrize("build", [fx.leak_gate_result, fx.passing_result, fx.hostile_result, fx.empty_result])
def test_counts_match_the_test_cases(build) -> None:
    result = build()
    root = parse(render_junit(result))
    assert root.tag == "testsuites"
    (suite,) = root.findall("testsuite")
    found = cases(root)
    failures = [c for c in found if c.find("failure") is not None]
    skipped = [c for c in found if c.find("skipped") is not None]
    for element in (root, suite):
        assert element.get("tests") == str(len(result.checks)) == str(len(found))
        assert element.get("failures") == str(len(failures))
        assert element.get("skipped") == str(len(skipped))
        assert element.get("errors") == "0"
    assert len(failures) == sum(not c.passed for c in result.checks)
    assert len(skipped) == sum(c.outcome == "skipped" for c in result.checks)


def test_one_case_per_check_and_slice_with_readable_names() -> None:
    result = fx.leak_gate_result()
    found = cases(parse(render_junit(result)))
    assert [c.get("name") for c in found] == [
        "overall AUC",
        "recall at 1% FPR [district = north]",
        "recall at 1% FPR [district = south]",
        "recall at 1% FPR [district = east]",
        "recall at 1% FPR [district = west]",
        "average precision floor",
        "field-crew cost",
    ]
    assert [c.get("classname") for c in found] == [c.name for c in result.checks]


def test_failure_carries_the_reason_and_the_figures() -> None:
    east = cases(parse(render_junit(fx.leak_gate_result())))[3]
    failure = east.find("failure")
    assert failure is not None
    assert failure.get("type") == "fail"
    assert failure.get("message") == fx.recall_by_district()[2].reason
    assert "candidate: 0.4211 [0.2895, 0.5526] (bootstrap-percentile, 95%)" in failure.text
    assert "difference: -0.2105 [-0.3421, -0.0789]" in failure.text
    assert "bound: >= 0.6000: fail" in failure.text


def test_skipped_slice_is_skipped_with_its_reason() -> None:
    west = cases(parse(render_junit(fx.leak_gate_result())))[4]
    skipped = west.find("skipped")
    assert skipped is not None
    assert skipped.get("message") == "skipped: 11 positives, fewer than min_positives = 30"
    assert west.find("failure") is None


def test_inconclusive_resolved_to_pass_passes_with_the_warning_in_system_out() -> None:
    south = cases(parse(render_junit(fx.leak_gate_result())))[2]
    assert south.find("failure") is None and south.find("skipped") is None
    out = south.find("system-out").text
    assert "outcome: inconclusive (passed on the point estimate)" in out
    assert "warning: inconclusive: the 95% interval straddles the bound" in out
    assert "the evaluation set is too small to be sure" in out


def test_inconclusive_counted_as_failure_is_a_failure() -> None:
    result = fx.leak_gate_result()
    checks = tuple(dataclasses.replace(c, passed=False) if c.outcome == "inconclusive" else c for c in result.checks)
    result = dataclasses.replace(result, checks=checks, on_inconclusive="fail", verdict="fail")
    root = parse(render_junit(result))
    south = cases(root)[2]
    failure = south.find("failure")
    assert failure is not None and failure.get("type") == "inconclusive"
    assert root.get("failures") == "2"


def test_run_settings_are_properties_and_suite_output() -> None:
    result = fx.leak_gate_result()
    suite = parse(render_junit(result)).find("testsuite")
    properties = {p.get("name"): p.get("value") for p in suite.findall("./properties/property")}
    assert properties["verdict"] == "fail"
    assert properties["confidence"] == "0.95"
    assert properties["resamples"] == "2000"
    assert properties["seed"] == "20240611"
    assert properties["fingerprint"] == fx.FINGERPRINT
    assert properties["methods"] == common.methods_line(result)
    out = suite.find("system-out").text
    assert out.splitlines()[0] == "verdict: fail"
    assert f"warning: {fx.MISMATCH_NOTE}" in out


def test_hostile_text_parses_and_stays_visible() -> None:
    result = fx.hostile_result()
    text = render_junit(result)
    assert "<script" not in text and "<img" not in text  # escaped by ElementTree
    root = parse(text)
    found = cases(root)
    for case, check in zip(found, result.checks, strict=True):
        assert case.get("name") == xml_safe(one_line(common.check_label(check)))
        assert "\n" not in case.get("name")
    # Characters XML forbids never reach the file; in names they show as escapes.
    nul_case = found[fx.HOSTILE_VALUES.index("nul\x00esc\x1b\ufffe\ud800bell\x07")]
    assert "nul\\x00esc\\x1b\\ufffe\\ud800bell\\x07" in nul_case.get("name")
    props = {p.get("name"): p.get("value") for p in root.findall("./testsuite/properties/property")}
    assert props["candidate_source"] == "cand](http://x)\\x00.csv"
    assert props["baseline_source"] == "<img src=x onerror=alert(1)>"  # as text, after parsing


def test_deterministic() -> None:
    for build in (fx.leak_gate_result, fx.hostile_result, fx.nonfinite_result, fx.empty_result):
        assert render_junit(build()) == render_junit(build())
    assert "time=\"0\"" in render_junit(fx.leak_gate_result())
    assert "timestamp" not in render_junit(fx.leak_gate_result())
