"""The JSON report: gate/report/json.py. Parsed back with the standard library's json module."""

from __future__ import annotations

import dataclasses
import json
import math

import numpy as np
import pytest

from gate.report import SCHEMA_VERSION, render_json, render_markdown
from gate.results import CheckResult
from tests import fixtures_results as fx

TOP_KEYS = [
    "schema", "verdict", "counts", "checks", "warnings", "notes", "methods", "confidence",
    "resamples", "seed", "on_inconclusive", "adjust", "policy_source", "policy_hash",
    "candidate_source", "baseline_source", "fingerprint", "n", "n_pos", "n_neg",
]
CHECK_KEYS = [
    "name", "metric", "params", "slice", "outcome", "passed", "value", "interval",
    "baseline_value", "delta", "delta_interval", "floor", "margin", "n", "n_pos", "n_neg",
    "method", "threshold", "reason", "warnings",
]
DECISION_KEYS = ["kind", "bound", "outcome", "estimate", "interval", "method", "p_value", "adjusted_p_value"]


def strict_loads(text: str) -> dict:
    """json.loads that refuses NaN / Infinity (which Python's json would otherwise accept)."""

    def refuse(name: str) -> None:
        raise AssertionError(f"non-finite constant {name} in the JSON report")

    return json.loads(text, parse_constant=refuse)


def is_interval(value: object) -> bool:
    return (
        isinstance(value, list)
        and len(value) == 2
        and all(isinstance(x, float) for x in value)
        and value[0] <= value[1]
    )


@pytest.mark.parametrize(
    "build", [fx.leak_gate_result, fx.passing_result, fx.hostile_result, fx.empty_result, fx.nonfinite_result]
)
def test_fixed_keys_and_types(build) -> None:
    result = build()
    report = strict_loads(render_json(result))
    assert list(report) == TOP_KEYS
    assert report["schema"] == SCHEMA_VERSION == 1
    assert report["verdict"] in ("pass", "fail") and report["verdict"] == result.verdict
    assert isinstance(report["checks"], list) and len(report["checks"]) == len(result.checks)
    for entry in report["checks"]:
        assert list(entry) == CHECK_KEYS
        assert isinstance(entry["name"], str) and isinstance(entry["metric"], str)
        assert entry["slice"] is None or (
            set(entry["slice"]) == {"column", "value"} and all(isinstance(v, str) for v in entry["slice"].values())
        )
        assert entry["outcome"] in ("pass", "fail", "inconclusive", "skipped")
        assert isinstance(entry["passed"], bool)
        assert entry["value"] is None or isinstance(entry["value"], float)
        assert entry["interval"] is None or isinstance(entry["interval"], list)
        for key in ("floor", "margin"):
            assert entry[key] is None or list(entry[key]) == DECISION_KEYS
        assert all(isinstance(entry[k], int) for k in ("n", "n_pos", "n_neg"))
        assert isinstance(entry["warnings"], list)


def test_values_match_the_result_exactly() -> None:
    result = fx.leak_gate_result()
    report = strict_loads(render_json(result))
    for entry, check in zip(report["checks"], result.checks, strict=True):
        assert entry["value"] == check.value  # repr round-trips a float exactly
        if check.interval is None:
            assert entry["interval"] is None
        else:
            assert is_interval(entry["interval"])
            assert entry["interval"] == [check.interval.low, check.interval.high]
        assert entry["passed"] is check.passed
        assert entry["outcome"] == check.outcome


def test_baseline_fields_for_checks_against_the_baseline_only() -> None:
    report = strict_loads(render_json(fx.leak_gate_result()))
    by_label = {(e["name"], None if e["slice"] is None else e["slice"]["value"]): e for e in report["checks"]}
    auc = by_label[("overall AUC", None)]
    assert auc["baseline_value"] == 0.905
    assert auc["delta"] == 0.0073
    assert auc["delta_interval"] == [-0.0031, 0.0177]
    north = by_label[("recall at 1% FPR", "north")]
    assert math.isclose(north["delta"], north["value"] - north["baseline_value"], abs_tol=1e-12)
    assert north["slice"] == {"column": "district", "value": "north"}
    assert north["params"] == {"fpr": 0.01}
    assert north["threshold"] == 0.8125
    floor_only = by_label[("average precision floor", None)]
    assert floor_only["baseline_value"] is None
    assert floor_only["delta"] is None
    assert floor_only["delta_interval"] is None
    assert floor_only["margin"] is None
    assert floor_only["floor"]["kind"] == "at_least" and floor_only["floor"]["bound"] == 0.3
    skipped = by_label[("recall at 1% FPR", "west")]
    assert skipped["outcome"] == "skipped" and skipped["passed"] is True
    assert skipped["value"] is None and skipped["interval"] is None


def test_counts_warnings_notes_and_provenance() -> None:
    result = fx.leak_gate_result()
    report = strict_loads(render_json(result))
    assert report["counts"] == {
        "total": 7, "pass": 4, "fail": 1, "inconclusive": 1, "inconclusive_passed": 1,
        "skipped": 1, "not_passed": 1,
    }
    assert report["warnings"] == list(result.warnings)
    assert report["notes"] == dict(sorted(result.notes.items()))
    assert report["methods"].endswith("Settings: confidence 95%, 2000 resamples, seed 20240611")
    assert (report["confidence"], report["resamples"], report["seed"]) == (0.95, 2000, 20240611)
    assert report["fingerprint"] == fx.FINGERPRINT and report["policy_hash"] == fx.POLICY_HASH
    assert report["baseline_source"] == "baselines/production"
    assert strict_loads(render_json(fx.passing_result()))["baseline_source"] is None


def test_everything_the_markdown_lists_is_in_the_json() -> None:
    # The run's warning list is the same in both; the hostile fixture's check warnings are not in
    # Result.warnings, and both reports add them once, labelled.
    result = fx.hostile_result()
    report = strict_loads(render_json(result))
    assert len(report["warnings"]) == len(result.warnings) + sum(len(c.warnings) for c in result.checks)
    markdown = render_markdown(result)
    assert markdown.count("\n- ") == (
        len(report["warnings"]) + len(report["notes"]) + sum(not c["passed"] for c in report["checks"])
    )


def test_non_finite_floats_become_null() -> None:
    text = render_json(fx.nonfinite_result())
    for token in ("NaN", "Infinity", "nan", "inf"):
        assert token not in text
    entry = strict_loads(text)["checks"][0]
    assert entry["value"] is None and entry["interval"] == [None, None]
    assert entry["baseline_value"] is None and entry["delta"] is None and entry["threshold"] is None
    assert entry["params"] == {"x": None}
    assert entry["margin"]["estimate"] is None and entry["margin"]["p_value"] is None
    assert entry["margin"]["bound"] == 0.01


def test_hostile_text_round_trips_exactly() -> None:
    result = fx.hostile_result()
    text = render_json(result)
    assert text.isascii()  # non-ASCII and control characters are \u escapes
    report = strict_loads(text)
    assert [e["slice"]["value"] for e in report["checks"]] == list(fx.HOSTILE_VALUES)
    assert report["candidate_source"] == result.candidate_source
    assert report["notes"] == dict(sorted(result.notes.items()))


def test_numpy_scalars_serialise_like_python_numbers() -> None:
    plain = fx.floor_only_ap()
    numpy_check = dataclasses.replace(
        plain,
        value=np.float64(plain.value),
        threshold=np.float32(0.5),
        n=np.int64(plain.n),
        n_pos=np.int32(plain.n_pos),
        params={"fpr": np.float64(0.01)},
    )
    python_check = dataclasses.replace(plain, threshold=0.5, params={"fpr": 0.01})

    def render(check: CheckResult) -> str:
        return render_json(dataclasses.replace(fx.passing_result(), checks=(check,)))

    assert render(numpy_check) == render(python_check)


def test_a_non_integer_count_is_refused() -> None:
    bad = dataclasses.replace(fx.floor_only_ap(), n=10000.5)
    with pytest.raises(TypeError, match="integer"):
        render_json(dataclasses.replace(fx.passing_result(), checks=(bad,)))


def test_deterministic_and_newline_terminated() -> None:
    for build in (fx.leak_gate_result, fx.hostile_result, fx.nonfinite_result):
        first, second = render_json(build()), render_json(build())
        assert first == second
        assert first.endswith("}\n")


def test_dict_order_of_the_input_does_not_matter() -> None:
    a = fx.leak_gate_result()
    b = dataclasses.replace(a, notes=dict(reversed(list(a.notes.items()))))
    cost = a.checks[-1]
    flipped = dataclasses.replace(cost, params=dict(reversed(list(cost.params.items()))))
    b = dataclasses.replace(b, checks=(*a.checks[:-1], flipped))
    assert render_json(a) == render_json(b)
