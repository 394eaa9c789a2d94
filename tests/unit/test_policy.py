"""Policy layer: loading, defaults, derived views and every error path (one line, key path, from None)."""

from __future__ import annotations

import hashlib
import re
from pathlib import Path

import pytest
from pydantic import ValidationError

from gate.errors import PolicyError
from gate.io import ColumnSpec
from gate.policy import (
    DEFAULT_SEED,
    HIGHER_IS_BETTER,
    LOWER_IS_BETTER,
    METRIC_PARAMS,
    METRICS,
    BaselineSection,
    Check,
    DataSection,
    Policy,
    StatsSection,
    WatchSection,
    load_policy,
    parse_policy,
    starter_policy_text,
    write_starter_policy,
)
from gate.results import Bound

REPO = Path(__file__).resolve().parents[2]
SRC = "policies/x.toml"

# Valid values for every metric parameter, used to build checks in the matrices below.
PARAM_VALUES = {"fpr": 0.05, "max_fpr": 0.2, "recall": 0.8, "threshold": 0.5, "cost_fp": 1, "cost_fn": 10}


def toml_check(metric: str, **keys: object) -> str:
    """One [[check]] table as TOML text (strings quoted, booleans lower-case)."""
    lines = ["[[check]]", f'metric = "{metric}"']
    for key, value in keys.items():
        if isinstance(value, bool):
            text = "true" if value else "false"
        elif isinstance(value, str):
            text = f'"{value}"'
        else:
            text = repr(value)
        lines.append(f"{key} = {text}")
    return "\n".join(lines) + "\n"


def valid_check(metric: str, **extra: object) -> str:
    keys: dict[str, object] = {p: PARAM_VALUES[p] for p in METRIC_PARAMS[metric]}
    keys["at_least" if metric in HIGHER_IS_BETTER else "at_most"] = 0.5
    keys.update(extra)
    return toml_check(metric, **keys)


MINIMAL = toml_check("roc_auc", at_least=0.8)


def error_of(text: str) -> PolicyError:
    with pytest.raises(PolicyError) as info:
        parse_policy(text, source=SRC)
    return info.value


def assert_error(text: str, expected: str) -> PolicyError:
    """The whole message must be exactly ``policies/x.toml: <expected>`` on one line."""
    exc = error_of(text)
    assert str(exc) == f"{SRC}: {expected}"
    assert "\n" not in str(exc)
    assert_unchained(exc)
    return exc


def assert_unchained(exc: BaseException) -> None:
    """No chained traceback: raised ``from None`` (or outside any ``except``)."""
    assert exc.__cause__ is None
    assert exc.__context__ is None or exc.__suppress_context__


# --- shipped policies ---------------------------------------------------------------------------


@pytest.mark.parametrize("name", ["starter.toml", "leak-watch.toml"])
def test_shipped_policies_load(name: str) -> None:
    path = REPO / "policies" / name
    policy = load_policy(path)
    assert policy.checks
    assert policy.source == str(path)
    assert policy.hash == hashlib.sha256(path.read_bytes()).hexdigest()


def test_packaged_starter_is_the_repo_starter() -> None:
    packaged = starter_policy_text()
    assert packaged == (REPO / "policies" / "starter.toml").read_text(encoding="utf-8")
    assert packaged == (REPO / "gate" / "data" / "starter.toml").read_text(encoding="utf-8")


def test_starter_runs_without_a_baseline_and_states_the_defaults() -> None:
    policy = parse_policy(starter_policy_text())
    assert not policy.needs_baseline  # a first run has no production baseline yet
    defaults = parse_policy(MINIMAL)
    # every section the starter writes out equals the built-in defaults, so its comments are true
    assert policy.data == defaults.data
    assert policy.stats == defaults.stats
    assert policy.baseline == defaults.baseline
    assert policy.watch == defaults.watch


def test_starter_mentions_every_key() -> None:
    text = starter_policy_text()
    for model in (DataSection, StatsSection, BaselineSection, WatchSection, Check):
        for key in model.model_fields:
            assert re.search(rf"\b{key}\b", text), (model.__name__, key)


def test_reference_doc_describes_every_key_and_its_example_parses() -> None:
    doc = (REPO / "docs" / "policy.md").read_text(encoding="utf-8")
    for model in (DataSection, StatsSection, BaselineSection, WatchSection, Check):
        for key in model.model_fields:
            assert f"`{key}`" in doc, (model.__name__, key)
    for metric in METRICS:
        assert f"`{metric}`" in doc, metric
    example = doc.split("```toml\n", 1)[1].split("```", 1)[0]
    assert parse_policy(example).checks[0].name == "leaks found at 5% false alarms"


def test_leak_watch_policy_shape() -> None:
    policy = load_policy(REPO / "policies" / "leak-watch.toml")
    by_metric = {(c.metric, c.by): c for c in policy.checks}
    auc = by_metric[("roc_auc", None)]
    assert auc.floor == Bound("at_least", 0.80) and auc.margin == Bound("max_drop", 0.01)
    overall = by_metric[("recall_at_fpr", None)]
    district = by_metric[("recall_at_fpr", "district")]
    for check in (overall, district):
        assert check.params == {"fpr": 0.05}
        assert check.margin == Bound("max_drop", 0.05)
        assert check.floor is not None and check.floor.kind == "at_least"
    ap = by_metric[("average_precision", None)]
    assert ap.floor is None and ap.margin == Bound("max_drop", 0.03)
    assert policy.needs_baseline
    assert policy.by_columns == ("district",)


# --- defaults -----------------------------------------------------------------------------------


def test_defaults() -> None:
    policy = parse_policy(MINIMAL)
    assert vars(policy.data.column_spec()) == vars(ColumnSpec())  # ColumnSpec compares by identity
    assert (policy.data.id, policy.data.label, policy.data.score) == ("id", "label", "score")
    assert policy.data.weight is None and policy.data.positive == 1
    stats = policy.stats
    assert stats.confidence == 0.95 and stats.resamples == 2000 and stats.seed == DEFAULT_SEED
    assert (stats.on_inconclusive, stats.adjust, stats.interval, stats.proportion_method, stats.auc_scale) == (
        "estimate",
        "none",
        "delong",
        "wilson",
        "auc",
    )
    assert policy.baseline.on_mismatch == "error"
    watch = policy.watch
    assert (watch.cusum_k, watch.cusum_h, watch.reference_runs, watch.min_runs) == (0.5, 4.0, 5, 6)
    (check,) = policy.checks
    assert check.name == "roc_auc" and check.by is None and check.min_positives == 20
    assert policy.source == "<policy>"


def test_min_runs_follows_reference_runs_unless_given() -> None:
    assert parse_policy("[watch]\nreference_runs = 10\n" + MINIMAL).watch.min_runs == 11
    assert parse_policy("[watch]\nreference_runs = 10\nmin_runs = 30\n" + MINIMAL).watch.min_runs == 30


def test_integer_accepted_where_a_number_is_expected() -> None:
    policy = parse_policy(toml_check("roc_auc", at_least=1, max_drop=0))
    (check,) = policy.checks
    assert isinstance(check.at_least, float) and check.at_least == 1.0
    assert check.margin == Bound("max_drop", 0.0)


@pytest.mark.parametrize(
    ("toml_value", "expected"), [("1", 1), ('"leak"', "leak"), ("true", True), ("0", 0)]
)
def test_positive_label_keeps_its_toml_type(toml_value: str, expected: object) -> None:
    policy = parse_policy(f"[data]\npositive = {toml_value}\n" + MINIMAL)
    assert policy.data.positive == expected
    assert type(policy.data.positive) is type(expected)  # 1 stays an int, true stays a bool
    assert policy.data.column_spec().positive == expected


def test_column_spec_carries_every_data_key() -> None:
    text = '[data]\nid = "segment"\nlabel = "leak"\nscore = "p"\nweight = "w"\npositive = "yes"\n'
    spec = parse_policy(text + MINIMAL).data.column_spec()
    assert isinstance(spec, ColumnSpec)
    assert (spec.id, spec.label, spec.score, spec.weight, spec.positive) == ("segment", "leak", "p", "w", "yes")


# --- derived views ------------------------------------------------------------------------------


@pytest.mark.parametrize("metric", METRICS)
def test_every_metric_with_exactly_its_parameters_is_valid(metric: str) -> None:
    (check,) = parse_policy(valid_check(metric)).checks
    assert check.params == {p: float(PARAM_VALUES[p]) for p in METRIC_PARAMS[metric]}
    assert list(check.params) == list(METRIC_PARAMS[metric])
    assert all(isinstance(v, float) for v in check.params.values())
    assert check.higher_is_better == (metric in HIGHER_IS_BETTER)
    kind = "at_least" if check.higher_is_better else "at_most"
    assert check.floor == Bound(kind, 0.5) and check.margin is None
    assert check.floor.higher_is_better == check.higher_is_better


def test_metric_directions_partition_the_metrics() -> None:
    assert HIGHER_IS_BETTER | LOWER_IS_BETTER == set(METRICS)
    assert not HIGHER_IS_BETTER & LOWER_IS_BETTER
    assert LOWER_IS_BETTER == {"fpr_at_threshold", "expected_cost", "brier"}


def test_floor_and_margin_views() -> None:
    text = toml_check("brier", at_most=0.2, max_rise=0.01) + toml_check("roc_auc", max_drop=0.02)
    policy = parse_policy(text)
    brier, auc = policy.checks
    assert brier.floor == Bound("at_most", 0.2) and brier.margin == Bound("max_rise", 0.01)
    assert auc.floor is None and auc.margin == Bound("max_drop", 0.02)
    assert policy.needs_baseline
    assert not parse_policy(MINIMAL).needs_baseline


@pytest.mark.parametrize(
    ("text", "name"),
    [
        (toml_check("recall_at_fpr", fpr=0.05, at_least=0.5), "recall_at_fpr(0.05)"),
        (toml_check("partial_auc", max_fpr=0.1, at_least=0.5), "partial_auc(0.1)"),
        (toml_check("average_precision", at_least=0.5), "average_precision"),
        (
            toml_check("expected_cost", threshold=0.5, cost_fp=1, cost_fn=20.0, at_most=1),
            "expected_cost(threshold=0.5, cost_fp=1, cost_fn=20)",
        ),
        (toml_check("recall_at_fpr", fpr=0.01, at_least=0.5, by="district"), "recall_at_fpr(0.01) by district"),
        (toml_check("roc_auc", at_least=0.5, name="my check"), "my check"),
    ],
)
def test_check_names(text: str, name: str) -> None:
    assert parse_policy(text).checks[0].name == name


def test_sliced_and_overall_checks_get_distinct_default_names() -> None:
    text = toml_check("roc_auc", at_least=0.7) + toml_check("roc_auc", at_least=0.7, by="district")
    assert [c.name for c in parse_policy(text).checks] == ["roc_auc", "roc_auc by district"]


def test_check_built_in_python_is_validated_too() -> None:
    assert Check(metric="recall_at_fpr", fpr=0.05, at_least=0.5).name == "recall_at_fpr(0.05)"
    with pytest.raises(ValidationError):
        Check(metric="roc_auc", at_most=0.5)


def test_policy_is_immutable() -> None:
    policy = parse_policy(MINIMAL)
    with pytest.raises(ValidationError):
        policy.stats.confidence = 0.9  # type: ignore[misc]
    assert isinstance(policy, Policy)


def test_hash_and_source() -> None:
    policy = parse_policy(MINIMAL, source="inline")
    assert policy.source == "inline"
    assert policy.hash == hashlib.sha256(MINIMAL.encode("utf-8")).hexdigest()
    other = parse_policy(MINIMAL + "# a comment changes the hash\n")
    assert other.hash != policy.hash


def test_load_hashes_the_bytes_and_keeps_the_path_as_given(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    data = b"\xef\xbb\xbf" + MINIMAL.encode("utf-8")  # with a byte-order mark, which is tolerated
    (tmp_path / "p.toml").write_bytes(data)
    monkeypatch.chdir(tmp_path)
    policy = load_policy("p.toml")
    assert policy.source == "p.toml"
    assert policy.hash == hashlib.sha256(data).hexdigest()


# --- file errors --------------------------------------------------------------------------------


def test_missing_file(tmp_path: Path) -> None:
    path = tmp_path / "nope.toml"
    with pytest.raises(PolicyError, match=rf"^{re.escape(str(path))}: policy file not found$") as info:
        load_policy(path)
    assert_unchained(info.value)


def test_directory_is_not_a_policy(tmp_path: Path) -> None:
    with pytest.raises(PolicyError, match="is a directory"):
        load_policy(tmp_path)


def test_non_utf8_file(tmp_path: Path) -> None:
    path = tmp_path / "latin.toml"
    path.write_bytes(b'[data]\nlabel = "d\xe9fect"\n')
    with pytest.raises(PolicyError, match=r"latin\.toml: not UTF-8 text \(invalid byte at offset 17\)$"):
        load_policy(path)


@pytest.mark.parametrize(
    ("text", "where"),
    [
        ('[data]\nid = "id"\nlabel "label"\n', "line 3, column 7"),
        ("[[check]\n", "line 1, column 8"),
        ('[stats]\nseed = 1\nseed = 2\n', "line 3, column 9"),
        ('[data]\nid = "unterminated\n', "line 2, column 19"),
    ],
)
def test_toml_syntax_errors_name_line_and_column(text: str, where: str, tmp_path: Path) -> None:
    path = tmp_path / "bad.toml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(PolicyError) as info:
        load_policy(path)
    message = str(info.value)
    assert message.startswith(f"{path}: {where}: invalid TOML: ")
    assert "\n" not in message and "(at line" not in message
    assert_unchained(info.value)


# --- key errors: unknown keys with suggestions ----------------------------------------------------


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        (toml_check("roc_auc", at_lest=0.8), "check[1].at_lest: unknown key; did you mean 'at_least'?"),
        (MINIMAL + toml_check("roc_auc", max_dorp=0.1), "check[2].max_dorp: unknown key; did you mean 'max_drop'?"),
        ("[stats]\nconfidance = 0.9\n" + MINIMAL, "stats.confidance: unknown key; did you mean 'confidence'?"),
        ('[data]\nlable = "y"\n' + MINIMAL, "data.lable: unknown key; did you mean 'label'?"),
        ('[baseline]\non_mismtch = "error"\n' + MINIMAL, "baseline.on_mismtch: unknown key; did you mean 'on_mismatch'?"),
        ("[watch]\ncusum_hh = 5.0\n" + MINIMAL, "watch.cusum_hh: unknown key; did you mean 'cusum_h'?"),
        ("[stat]\nseed = 1\n" + MINIMAL, "stat: unknown key; did you mean 'stats'?"),
        (toml_check("roc_auc", at_least=0.8, confidence=0.9), "check[1].confidence: unknown key here; 'confidence' belongs in [stats]"),
        ("[stats]\nthreshold = 0.5\n" + MINIMAL, "stats.threshold: unknown key here; 'threshold' belongs in [[check]]"),
        ("[stats]\nzzz = 1\n" + MINIMAL,
         "stats.zzz: unknown key; valid keys: confidence, resamples, seed, on_inconclusive, adjust, interval,"
         " proportion_method, auc_scale"),
        ('source = "x"\n' + MINIMAL, "source: unknown key; valid keys: data, stats, baseline, watch, check"),
        ('hash = "x"\n' + MINIMAL, "hash: unknown key; valid keys: data, stats, baseline, watch, check"),
        ('[[checks]]\nmetric = "roc_auc"\nat_least = 0.8\n', "checks: unknown key; checks are written as [[check]] tables"),
        (MINIMAL + '"at least" = 0.8\n', "check[1].\"at least\": unknown key; did you mean 'at_least'?"),
    ],
)
def test_unknown_keys(text: str, expected: str) -> None:
    assert_error(text, expected)


def test_unknown_key_with_a_newline_stays_on_one_line() -> None:
    exc = error_of(MINIMAL + '"bad\\nkey" = 1\n')
    assert str(exc) == f'{SRC}: check[1]."bad\\nkey": unknown key; valid keys: ' + ", ".join(Check.model_fields)


# --- key errors: types ----------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        (toml_check("roc_auc", at_least="0.8"), "check[1].at_least: must be a number, got '0.8' (string)"),
        (toml_check("roc_auc", at_least=True), "check[1].at_least: must be a number, got true (boolean)"),
        ("[stats]\nresamples = 2000.0\n" + MINIMAL, "stats.resamples: must be an integer, got 2000.0 (float)"),
        ("[stats]\nseed = true\n" + MINIMAL, "stats.seed: must be an integer, got true (boolean)"),
        ("[data]\nid = 3\n" + MINIMAL, "data.id: must be a string, got 3 (integer)"),
        (toml_check("roc_auc", at_least=0.8) + 'by = ["a"]\n', "check[1].by: must be a string, got an array"),
        (toml_check("roc_auc", at_least=0.8, name=7), "check[1].name: must be a string, got 7 (integer)"),
        ("[data]\npositive = 1.0\n" + MINIMAL, "data.positive: must be an integer, a string or a boolean, got 1.0 (float)"),
        ("[data]\npositive = [1]\n" + MINIMAL, "data.positive: must be an integer, a string or a boolean, got an array"),
        ("[data]\nid = 1979-05-27\n" + MINIMAL, "data.id: must be a string, got 1979-05-27 (date/time)"),
        (toml_check("roc_auc", at_least=0.8, min_positives=20.0, by="d"), "check[1].min_positives: must be an integer, got 20.0 (float)"),
        (toml_check("partial_auc", max_fpr=float("inf"), at_least=0.8).replace("inf", "inf"),
         "check[1].max_fpr: must be a finite number, got inf"),
        (toml_check("recall_at_threshold", at_least=0.8) + "threshold = nan\n", "check[1].threshold: must be a finite number, got nan"),
        (toml_check("roc_auc", at_least=0.8).replace('"roc_auc"', "3"), "check[1].metric: must be a string naming a metric, got 3 (integer)"),
        ("data = 3\n" + MINIMAL, "data: must be a table ([data]), got 3 (integer)"),
        ('stats = "fast"\n' + MINIMAL, "stats: must be a table ([stats]), got 'fast' (string)"),
        ('[check]\nmetric = "roc_auc"\nat_least = 0.8\n', "check: must be an array of tables: write [[check]], not [check]"),
        ("check = [1]\n", "check[1]: must be a table ([[check]]), got 1 (integer)"),
        ("check = 1\n", "check: must be an array of tables ([[check]]), got 1 (integer)"),
    ],
)
def test_wrong_types(text: str, expected: str) -> None:
    assert_error(text, expected)


@pytest.mark.parametrize(
    ("value", "expected"),
    [
        ('[stats]\non_inconclusive = "estimat"\n', "stats.on_inconclusive: must be one of 'estimate', 'fail', 'pass', got 'estimat' (string); did you mean 'estimate'?"),
        ('[stats]\nadjust = "bonferroni"\n', "stats.adjust: must be one of 'none', 'holm', got 'bonferroni' (string)"),
        ('[stats]\ninterval = "de long"\n', "stats.interval: must be one of 'delong', 'bootstrap', got 'de long' (string); did you mean 'delong'?"),
        ('[stats]\nauc_scale = "log"\n', "stats.auc_scale: must be one of 'auc', 'logit', got 'log' (string); did you mean 'logit'?"),
        ('[stats]\nproportion_method = "clopper_pearson"\n', "stats.proportion_method: must be one of 'wilson', 'clopper-pearson', got 'clopper_pearson' (string); did you mean 'clopper-pearson'?"),
        ('[baseline]\non_mismatch = "ignore"\n', "baseline.on_mismatch: must be one of 'error', 'intersect', got 'ignore' (string)"),
        ("[stats]\non_inconclusive = 1\n", "stats.on_inconclusive: must be one of 'estimate', 'fail', 'pass', got 1 (integer)"),
    ],
)
def test_choices(value: str, expected: str) -> None:
    assert_error(value + MINIMAL, expected)


@pytest.mark.parametrize(
    ("metric", "expected"),
    [
        ("roc", "unknown metric 'roc'; did you mean 'roc_auc'?"),
        ("auc", "unknown metric 'auc'; did you mean 'roc_auc'?"),
        ("AP", "unknown metric 'AP'; did you mean 'average_precision'?"),
        ("recall_at_fp", "unknown metric 'recall_at_fp'; did you mean 'recall_at_fpr'?"),
        ("f1", "unknown metric 'f1'"),
    ],
)
def test_unknown_metric(metric: str, expected: str) -> None:
    listing = f" (one of: {', '.join(METRICS)})"
    assert_error(toml_check(metric, at_least=0.5), f"check[1].metric: {expected}{listing}")


def test_missing_metric() -> None:
    assert_error(
        "[[check]]\nat_least = 0.5\n",
        f"check[1].metric: missing; every check needs a metric (one of: {', '.join(METRICS)})",
    )


# --- key errors: ranges ---------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        (MINIMAL + toml_check("recall_at_fpr", fpr=1.5, at_least=0.3), "check[2].fpr: must be in (0, 1), got 1.5"),
        (toml_check("recall_at_fpr", fpr=0, at_least=0.3), "check[1].fpr: must be in (0, 1), got 0"),
        (toml_check("recall_at_fpr", fpr=1, at_least=0.3), "check[1].fpr: must be in (0, 1), got 1"),
        (toml_check("precision_at_recall", recall=0.0, at_least=0.3), "check[1].recall: must be in (0, 1), got 0"),
        (toml_check("partial_auc", max_fpr=0.0, at_least=0.3), "check[1].max_fpr: must be in (0, 1], got 0"),
        (toml_check("partial_auc", max_fpr=1.01, at_least=0.3), "check[1].max_fpr: must be in (0, 1], got 1.01"),
        (toml_check("roc_auc", at_least=1.2), "check[1].at_least: must be in [0, 1], got 1.2"),
        (toml_check("roc_auc", at_least=-0.1), "check[1].at_least: must be in [0, 1], got -0.1"),
        (toml_check("roc_auc", max_drop=-0.01), "check[1].max_drop: must be in [0, 1], got -0.01"),
        (toml_check("roc_auc", max_drop=2), "check[1].max_drop: must be in [0, 1], got 2"),
        (toml_check("brier", at_most=1.5), "check[1].at_most: must be in [0, 1] for brier, got 1.5"),
        (toml_check("fpr_at_threshold", threshold=0.5, max_rise=1.5), "check[1].max_rise: must be in [0, 1] for fpr_at_threshold, got 1.5"),
        (toml_check("brier", at_most=-0.5), "check[1].at_most: must be >= 0, got -0.5"),
        (toml_check("brier", max_rise=-0.5), "check[1].max_rise: must be >= 0, got -0.5"),
        (toml_check("expected_cost", threshold=0.5, cost_fp=-1, cost_fn=1, at_most=1), "check[1].cost_fp: must be >= 0, got -1"),
        (toml_check("expected_cost", threshold=0.5, cost_fp=0, cost_fn=0, at_most=1),
         "check[1].cost_fn: cost_fp and cost_fn are both 0; at least one must be > 0"),
        (toml_check("roc_auc", at_least=0.8, by="d", min_positives=0), "check[1].min_positives: must be >= 1, got 0"),
        ("[stats]\nconfidence = 0.5\n" + MINIMAL, "stats.confidence: must be in (0.5, 1), got 0.5"),
        ("[stats]\nconfidence = 1\n" + MINIMAL, "stats.confidence: must be in (0.5, 1), got 1"),
        ("[stats]\nconfidence = 95\n" + MINIMAL, "stats.confidence: must be in (0.5, 1), got 95; write it as a fraction, e.g. 0.95"),
        ("[stats]\nresamples = 99\n" + MINIMAL, "stats.resamples: must be in 100..100000, got 99"),
        ("[stats]\nresamples = 100001\n" + MINIMAL, "stats.resamples: must be in 100..100000, got 100001"),
        ("[stats]\nseed = -1\n" + MINIMAL, "stats.seed: must be >= 0, got -1"),
        ("[watch]\ncusum_k = -0.5\n" + MINIMAL, "watch.cusum_k: must be >= 0, got -0.5"),
        ("[watch]\ncusum_h = 0\n" + MINIMAL, "watch.cusum_h: must be > 0, got 0"),
        ("[watch]\nreference_runs = 0\n" + MINIMAL, "watch.reference_runs: must be >= 1, got 0"),
        ("[watch]\nreference_runs = 5\nmin_runs = 5\n" + MINIMAL, "watch.min_runs: must exceed watch.reference_runs (5), got 5"),
    ],
)
def test_out_of_range(text: str, expected: str) -> None:
    assert_error(text, expected)


@pytest.mark.parametrize(
    "text",
    [
        toml_check("recall_at_fpr", fpr=1e-9, at_least=0.0),
        toml_check("partial_auc", max_fpr=1, at_least=1),
        toml_check("expected_cost", threshold=-3.5, cost_fp=0, cost_fn=5, at_most=40, max_rise=2.5),
        toml_check("recall_at_threshold", threshold=1e6, at_least=0.1),
        "[stats]\nconfidence = 0.999\nresamples = 100\nseed = 0\n" + MINIMAL,
        "[stats]\nresamples = 100000\n[watch]\ncusum_k = 0\n" + MINIMAL,
    ],
)
def test_edges_of_the_ranges_are_accepted(text: str) -> None:
    parse_policy(text)


# --- key errors: parameters, directions, bounds ---------------------------------------------------


@pytest.mark.parametrize(
    ("metric", "missing"), [(m, p) for m, ps in METRIC_PARAMS.items() for p in ps]
)
def test_missing_parameter(metric: str, missing: str) -> None:
    keys = {p: PARAM_VALUES[p] for p in METRIC_PARAMS[metric] if p != missing}
    keys["at_least" if metric in HIGHER_IS_BETTER else "at_most"] = 0.5
    takes = ", ".join(METRIC_PARAMS[metric])
    assert_error(toml_check(metric, **keys), f"check[1].{missing}: required by metric '{metric}' (it takes: {takes})")


@pytest.mark.parametrize(
    ("metric", "extra"),
    [(m, p) for m in METRICS for p in PARAM_VALUES if p not in METRIC_PARAMS[m]],
)
def test_extra_parameter(metric: str, extra: str) -> None:
    takes = f"it takes: {', '.join(METRIC_PARAMS[metric])}" if METRIC_PARAMS[metric] else "it takes no parameters"
    assert_error(
        valid_check(metric, **{extra: PARAM_VALUES[extra]}),
        f"check[1].{extra}: not a parameter of metric '{metric}' ({takes})",
    )


@pytest.mark.parametrize(
    ("metric", "wrong", "right"),
    [(m, w, r) for m in sorted(HIGHER_IS_BETTER) for w, r in (("at_most", "at_least"), ("max_rise", "max_drop"))]
    + [(m, w, r) for m in sorted(LOWER_IS_BETTER) for w, r in (("at_least", "at_most"), ("max_drop", "max_rise"))],
)
def test_wrong_direction_names_the_key_to_use(metric: str, wrong: str, right: str) -> None:
    keys: dict[str, object] = {p: PARAM_VALUES[p] for p in METRIC_PARAMS[metric]}
    keys[wrong] = 0.1
    direction = "higher" if metric in HIGHER_IS_BETTER else "lower"
    assert_error(
        toml_check(metric, **keys),
        f"check[1].{wrong}: {metric} is {direction}-is-better; use '{right}' instead",
    )


@pytest.mark.parametrize("metric", METRICS)
def test_a_check_needs_a_floor_or_a_margin(metric: str) -> None:
    keys = {p: PARAM_VALUES[p] for p in METRIC_PARAMS[metric]}
    floor, margin = ("at_least", "max_drop") if metric in HIGHER_IS_BETTER else ("at_most", "max_rise")
    assert_error(
        toml_check(metric, **keys),
        f"check[1]: needs a floor ({floor}), a non-regression margin ({margin}), or both",
    )


def test_min_positives_only_with_by() -> None:
    assert_error(
        toml_check("roc_auc", at_least=0.8, min_positives=30),
        "check[1].min_positives: only applies to sliced checks; set 'by' or remove it",
    )
    (check,) = parse_policy(toml_check("roc_auc", at_least=0.8, min_positives=30, by="district")).checks
    assert check.min_positives == 30


# --- whole-policy errors -------------------------------------------------------------------------


def test_no_checks() -> None:
    assert_error('[data]\nid = "id"\n', "check: the policy has no [[check]]; add at least one")
    assert_error("", "check: the policy has no [[check]]; add at least one")


def test_duplicate_names() -> None:
    assert_error(
        MINIMAL + toml_check("roc_auc", max_drop=0.01),
        "check[2].name: duplicate check name 'roc_auc' (also check[1]); give each check a unique name",
    )
    assert_error(
        toml_check("roc_auc", at_least=0.8, name="a") + MINIMAL + toml_check("brier", at_most=0.2, name="a"),
        "check[3].name: duplicate check name 'a' (also check[1]); give each check a unique name",
    )


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        (toml_check("roc_auc", name="", at_least=0.8), "check[1].name: must be a name, got an empty string"),
        (toml_check("roc_auc", name="  ", at_least=0.8), "check[1].name: must be a name, got an empty string"),
        (toml_check("roc_auc", at_least=0.8) + 'name = "a\\nb"\n', "check[1].name: must be a name on one line, got 'a\\nb'"),
        (toml_check("roc_auc", at_least=0.8, by=""), "check[1].by: must be a column name, got an empty string"),
        ('[data]\nscore = ""\n' + MINIMAL, "data.score: must be a column name, got an empty string"),
    ],
)
def test_blank_or_multiline_text(text: str, expected: str) -> None:
    assert_error(text, expected)


@pytest.mark.parametrize(
    ("data", "expected"),
    [
        ('id = "x"\nlabel = "x"\n', "data.label: names the same column as data.id ('x')"),
        ('score = "label"\n', "data.score: names the same column as data.label ('label')"),
        ('weight = "score"\n', "data.weight: names the same column as data.score ('score')"),
    ],
)
def test_data_columns_must_differ(data: str, expected: str) -> None:
    assert_error("[data]\n" + data + MINIMAL, expected)


@pytest.mark.parametrize(
    ("data", "by", "role"),
    [("", "label", "data.label"), ("", "score", "data.score"), ('id = "segment"\n', "segment", "data.id"),
     ('weight = "w"\n', "w", "data.weight")],
)
def test_cannot_slice_by_a_data_column(data: str, by: str, role: str) -> None:
    assert_error(
        "[data]\n" + data + MINIMAL + toml_check("brier", at_most=0.2, by=by),
        f"check[2].by: '{by}' is the {role} column; slice by another column",
    )


def test_first_error_is_reported_with_its_one_based_index() -> None:
    text = MINIMAL + MINIMAL.replace("0.8", "0.9").replace('"roc_auc"', '"brier"') + toml_check("roc_auc", at_lest=1)
    exc = error_of(text)
    assert str(exc).startswith(f"{SRC}: check[2].")  # brier with at_least: the second [[check]]


def test_load_policy_errors_name_the_file_as_given(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    (tmp_path / "policies").mkdir()
    (tmp_path / "policies" / "x.toml").write_text(
        MINIMAL + toml_check("recall_at_fpr", fpr=1.5, at_least=0.3), encoding="utf-8"
    )
    monkeypatch.chdir(tmp_path)
    with pytest.raises(PolicyError) as info:
        load_policy("policies/x.toml")
    assert str(info.value) == "policies/x.toml: check[2].fpr: must be in (0, 1), got 1.5"


# --- write_starter_policy ------------------------------------------------------------------------


def test_write_starter_policy(tmp_path: Path) -> None:
    target = tmp_path / "policy.toml"
    written = write_starter_policy(target)
    assert written == target
    assert target.read_text(encoding="utf-8") == starter_policy_text()
    assert load_policy(target).hash == hashlib.sha256(target.read_bytes()).hexdigest()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["policy.toml"]  # no temp file left


def test_write_starter_policy_refuses_to_overwrite(tmp_path: Path) -> None:
    target = tmp_path / "policy.toml"
    target.write_text("mine", encoding="utf-8")
    with pytest.raises(PolicyError, match=r"policy\.toml: already exists; not overwriting it$") as info:
        write_starter_policy(target)
    assert_unchained(info.value)
    assert target.read_text(encoding="utf-8") == "mine"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["policy.toml"]


def test_write_starter_policy_into_a_missing_directory(tmp_path: Path) -> None:
    with pytest.raises(PolicyError, match="does not exist"):
        write_starter_policy(tmp_path / "missing" / "policy.toml")


def test_write_starter_policy_relative_path(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    write_starter_policy("policy.toml")
    assert load_policy("policy.toml").source == "policy.toml"
