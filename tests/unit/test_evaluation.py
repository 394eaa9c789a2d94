"""gate/evaluation.py: the decision rule, the inconclusive rule, Holm, slices, baselines, methods, seeds.

Outside references: the Hanley & McNeil (1982) rating table with its DeLong 95% interval
(REFERENCES.md section 1), scikit-learn's roc_auc_score (with sample_weight), scipy's normal CDF
and Wilson interval (scipy.stats.binomtest(...).proportion_ci(method="wilson")). Holm's step-down
adjustment is worked by hand (Holm 1979: the smallest of m p-values is multiplied by m).
The synthetic tables below are inputs only, never check values.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy.stats import binomtest, norm
from sklearn.metrics import roc_auc_score

from gate.errors import BaselineError, GateError, UndefinedMetricError
from gate.evaluation import MISSING_SLICE, _decide, _holm_adjust, _resolve, evaluate
from gate.policy import parse_policy
from gate.results import Bound, CheckResult, Decision
from gate.stats.interval import Interval

Z975 = 1.959963984540054  # REFERENCES.md conventions

# Hanley & McNeil (1982) rating table (REFERENCES.md section 1): negatives / positives at ratings 1..5.
HM_NEG = (33, 6, 6, 11, 2)
HM_POS = (3, 2, 2, 11, 33)
HM_AUC = 0.8931710615280595  # REFERENCES.md 1: 2642/2958
HM_DELONG_CI = (0.8329523276581718, 0.9533897953979471)  # REFERENCES.md 1: DeLong 95% Wald CI
HM_DELONG_SE = 0.030724408379381122  # REFERENCES.md 1


def hm_frame() -> pd.DataFrame:
    rows = []
    for rating, (neg, pos) in enumerate(zip(HM_NEG, HM_POS, strict=True), start=1):
        rows += [(f"n{rating}-{i}", 0, float(rating)) for i in range(neg)]
        rows += [(f"p{rating}-{i}", 1, float(rating)) for i in range(pos)]
    return pd.DataFrame(rows, columns=["id", "label", "score"])


def policy(checks: str, *, stats: str = "", extra: str = ""):  # noqa: ANN201
    return parse_policy(f"[stats]\nresamples = 200\n{stats}\n{extra}\n{checks}", source="test.toml")


def toy(n: int = 400, *, seed: int = 3, separation: float = 1.5, prevalence: float = 0.3) -> pd.DataFrame:
    """A binormal toy table with a district column (an input, not a check value)."""
    rng = np.random.default_rng(seed)
    label = (rng.random(n) < prevalence).astype(int)
    return pd.DataFrame(
        {
            "id": [f"r{i}" for i in range(n)],
            "label": label,
            "score": separation * label + rng.normal(size=n),
            "district": rng.choice(["north", "south"], size=n),
        }
    )


def iv(low: float, high: float) -> Interval:
    return Interval(low, high, 0.95, "test")


# --- the decision rule on hand-built intervals ---------------------------------------------------

DECISIONS = [
    # kind, bound, interval (low, high), outcome: passing side above for at_least / max_drop
    ("at_least", 0.8, (0.82, 0.90), "pass"),
    ("at_least", 0.8, (0.80, 0.90), "pass"),  # touching the bound from the passing side
    ("at_least", 0.8, (0.70, 0.78), "fail"),
    ("at_least", 0.8, (0.75, 0.85), "inconclusive"),
    ("at_most", 0.1, (0.02, 0.08), "pass"),
    ("at_most", 0.1, (0.02, 0.10), "pass"),
    ("at_most", 0.1, (0.12, 0.20), "fail"),
    ("at_most", 0.1, (0.05, 0.15), "inconclusive"),
    # margins judge the difference candidate - baseline: max_drop needs delta >= -bound
    ("max_drop", 0.01, (-0.005, 0.02), "pass"),
    ("max_drop", 0.01, (-0.01, 0.02), "pass"),
    ("max_drop", 0.01, (-0.05, -0.02), "fail"),
    ("max_drop", 0.01, (-0.02, 0.01), "inconclusive"),
    ("max_drop", 0.01, (0.005, 0.03), "pass"),  # a clear improvement
    # max_rise needs delta <= bound
    ("max_rise", 0.01, (-0.02, 0.005), "pass"),
    ("max_rise", 0.01, (-0.02, 0.01), "pass"),
    ("max_rise", 0.01, (0.02, 0.05), "fail"),
    ("max_rise", 0.01, (-0.01, 0.02), "inconclusive"),
]


@pytest.mark.parametrize(("kind", "bound", "interval", "outcome"), DECISIONS)
def test_decision_rule(kind: str, bound: float, interval: tuple[float, float], outcome: str) -> None:
    low, high = interval
    d = _decide(Bound(kind, bound), (low + high) / 2, iv(low, high), 0.95)  # type: ignore[arg-type]
    assert d.outcome == outcome


@pytest.mark.parametrize(("kind", "bound", "interval", "outcome"), DECISIONS)
def test_one_sided_p_of_failing(kind: str, bound: float, interval: tuple[float, float], outcome: str) -> None:
    low, high = interval
    estimate = (low + high) / 2
    d = _decide(Bound(kind, bound), estimate, iv(low, high), 0.95)  # type: ignore[arg-type]
    # Reference: scipy's normal CDF with the interval's standard error (half-width / z(0.975)).
    se = (high - low) / 2 / Z975
    limit = -bound if kind == "max_drop" else bound
    z = (estimate - limit) / se if kind in ("at_least", "max_drop") else (limit - estimate) / se
    assert d.p_value == pytest.approx(norm.cdf(z), rel=1e-9, abs=1e-15)
    # A symmetric interval: fail exactly when p < alpha/2, pass when p > 1 - alpha/2.
    if outcome == "fail":
        assert d.p_value < 0.025
    if outcome == "inconclusive":
        assert 0.025 <= d.p_value <= 0.975


def _decision(kind: str, bound: float, estimate: float, low: float, high: float) -> Decision:
    return _decide(Bound(kind, bound), estimate, iv(low, high), 0.95)  # type: ignore[arg-type]


def test_inconclusive_rule_on_hand_built_decisions() -> None:
    above = _decision("at_least", 0.8, 0.81, 0.75, 0.87)  # straddles, estimate passes
    below = _decision("at_least", 0.8, 0.79, 0.73, 0.85)  # straddles, estimate fails
    fine = _decision("max_drop", 0.01, 0.0, -0.005, 0.005)
    assert above.outcome == below.outcome == "inconclusive" and fine.outcome == "pass"
    assert _resolve("inconclusive", [above, fine], "estimate") is True
    assert _resolve("inconclusive", [below, fine], "estimate") is False
    assert _resolve("inconclusive", [above, below], "estimate") is False  # every bound must pass
    for decisions in ([above, fine], [below, fine]):
        assert _resolve("inconclusive", decisions, "fail") is False
        assert _resolve("inconclusive", decisions, "pass") is True
    assert _resolve("pass", [fine], "fail") is True
    assert _resolve("fail", [fine], "pass") is False


# --- evaluate on the Hanley & McNeil table: values, intervals, the inconclusive rule -------------


def test_hm_value_and_delong_interval() -> None:
    result = evaluate(policy('[[check]]\nname = "auc"\nmetric = "roc_auc"\nat_least = 0.8\n'), hm_frame())
    (check,) = result.checks
    assert check.value == pytest.approx(HM_AUC, abs=1e-15)  # REFERENCES.md 1
    assert (check.interval.low, check.interval.high) == pytest.approx(HM_DELONG_CI, abs=1e-12)  # REFERENCES.md 1
    assert check.method == "delong" and check.outcome == "pass" and result.verdict == "pass"
    assert (result.n, result.n_pos, result.n_neg) == (109, 51, 58)


@pytest.mark.parametrize(
    ("at_least", "rule", "outcome", "passed"),
    [
        (0.96, "estimate", "fail", False),  # wholly below the interval's top 0.9534
        (0.82, "pass", "pass", True),  # wholly above its bottom 0.8330
        (0.85, "estimate", "inconclusive", True),  # estimate 0.8932 >= 0.85
        (0.85, "fail", "inconclusive", False),
        (0.85, "pass", "inconclusive", True),
        (0.90, "estimate", "inconclusive", False),  # estimate 0.8932 < 0.90
        (0.90, "fail", "inconclusive", False),
        (0.90, "pass", "inconclusive", True),
    ],
)
def test_hm_inconclusive_rule(at_least: float, rule: str, outcome: str, passed: bool) -> None:
    pol = policy(
        f'[[check]]\nname = "auc"\nmetric = "roc_auc"\nat_least = {at_least}\n', stats=f'on_inconclusive = "{rule}"'
    )
    result = evaluate(pol, hm_frame())
    (check,) = result.checks
    assert (check.outcome, check.passed) == (outcome, passed)
    assert result.verdict == ("pass" if passed else "fail")
    warned = [w for w in result.warnings if "inconclusive" in w]
    if outcome == "inconclusive":
        assert len(warned) == 1 and "too small to be sure" in warned[0] and repr(rule) in warned[0]
    else:
        assert not warned


def test_holm_turns_a_marginal_fail_into_inconclusive() -> None:
    # A floor just above the DeLong interval's top (REFERENCES.md 1): a fail, but only just.
    floor = 0.95349
    checks = (
        f'[[check]]\nname = "auc"\nmetric = "roc_auc"\nat_least = {floor}\n'
        '[[check]]\nname = "auc floor"\nmetric = "roc_auc"\nat_least = 0.5\n'
    )
    # Reference: the one-sided p from scipy's normal CDF with the DeLong SE of REFERENCES.md 1.
    p = norm.cdf((HM_AUC - floor) / HM_DELONG_SE)
    assert 0.02 < p < 0.025  # marginal: below alpha/2 = 0.025 alone, above it once doubled
    plain = evaluate(policy(checks, stats='on_inconclusive = "pass"'), hm_frame())
    assert plain.checks[0].outcome == "fail" and plain.verdict == "fail"
    assert plain.checks[0].floor.p_value == pytest.approx(p, rel=1e-6)

    holm = evaluate(policy(checks, stats='on_inconclusive = "pass"\nadjust = "holm"'), hm_frame())
    first = holm.checks[0]
    # By hand (Holm 1979): two p-values; the smallest is multiplied by m = 2.
    assert first.floor.adjusted_p_value == pytest.approx(2 * p, rel=1e-6)
    assert first.outcome == "inconclusive" and first.passed is True
    assert holm.verdict == "pass"
    assert holm.checks[1].outcome == "pass"
    assert "Holm" in holm.methods
    assert any("inconclusive after Holm's adjustment" in w for w in holm.warnings)
    assert not any("auc: inconclusive (the interval straddles" in w for w in holm.warnings)
    # With the default rule the point estimate still decides: 0.8932 < 0.95349 fails.
    estimate = evaluate(policy(checks, stats='adjust = "holm"'), hm_frame())
    assert estimate.checks[0].outcome == "inconclusive" and estimate.verdict == "fail"


def test_holm_keeps_a_clear_fail_on_hand_built_results() -> None:
    def result(name: str, d: Decision) -> CheckResult:
        return CheckResult(
            name=name, metric="roc_auc", params={}, slice=None, outcome=d.outcome, passed=d.outcome != "fail",
            value=d.estimate, interval=d.interval, floor=d,
        )  # fmt: skip

    clear = _decision("at_least", 0.9, 0.80, 0.76, 0.84)  # z = -0.1 / (0.04 / 1.96) = -4.9
    marginal = _decision("at_least", 0.8, 0.76, 0.7195, 0.7995)  # just below
    passing = _decision("at_least", 0.5, 0.8, 0.75, 0.85)
    assert clear.outcome == marginal.outcome == "fail"
    pol = policy('[[check]]\nmetric = "roc_auc"\nat_least = 0.5\n', stats='adjust = "holm"\non_inconclusive = "pass"')
    out = _holm_adjust([result("a", clear), result("b", marginal), result("c", passing)], pol)
    # By hand: p sorted = clear, marginal, passing; Holm multiplies them by 3, 2, 1 (running maximum).
    assert out[0].floor.adjusted_p_value == pytest.approx(3 * clear.p_value, rel=1e-12)
    assert out[1].floor.adjusted_p_value == pytest.approx(max(3 * clear.p_value, 2 * marginal.p_value), rel=1e-12)
    assert [c.outcome for c in out] == ["fail", "inconclusive", "pass"]
    assert [c.passed for c in out] == [False, True, True]


# --- slices and min_positives ------------------------------------------------------------------


def test_slices_values_skips_and_missing() -> None:
    frame = toy(600, seed=5)
    frame.loc[:9, "district"] = "tiny"  # 10 rows: fewer positives than min_positives
    assert int(frame.loc[:9, "label"].sum()) < 10
    negatives = frame.index[frame["label"] == 0][20:40]
    frame.loc[negatives, "district"] = "sound"  # negatives only
    frame["district"] = frame["district"].astype(object)
    frame.loc[[100, 101, 102], "district"] = None
    pol = policy('[[check]]\nname = "auc"\nmetric = "roc_auc"\nat_least = 0.5\nby = "district"\nmin_positives = 10\n')
    result = evaluate(pol, frame)
    by_value = {c.slice.value: c for c in result.checks}
    assert list(by_value) == sorted([MISSING_SLICE, "north", "south", "sound", "tiny"])
    tiny = by_value["tiny"]
    assert (tiny.outcome, tiny.passed, tiny.value) == ("skipped", True, None)
    assert "min_positives = 10" in tiny.reason
    # "(missing)" (3 rows) and "sound" (no positives) are skipped too; "sound" for having no positives.
    assert by_value[MISSING_SLICE].outcome == "skipped"
    assert by_value["sound"].outcome == "skipped"
    for value in ("north", "south"):
        rows = frame["district"] == value
        # Reference: scikit-learn's roc_auc_score on the slice's rows.
        assert by_value[value].value == pytest.approx(roc_auc_score(frame.label[rows], frame.score[rows]), abs=1e-12)
        assert by_value[value].n == int(rows.sum())
        assert by_value[value].outcome == "pass"
    assert result.verdict == "pass"  # skipped slices do not block
    assert sum("skipped" in w for w in result.warnings) == 3


def test_slice_column_must_exist() -> None:
    pol = policy('[[check]]\nname = "auc"\nmetric = "roc_auc"\nat_least = 0.5\nby = "region"\n')
    with pytest.raises(Exception, match="column 'region'.*not found"):
        evaluate(pol, toy())


def test_overall_check_without_weighted_positives_fails_closed() -> None:
    frame = toy()
    pol = policy('[[check]]\nname = "ap"\nmetric = "average_precision"\nat_least = 0.5\n')
    frame["weight"] = np.where(frame["label"] == 1, 0.0, 1.0)  # every positive weighs nothing
    with pytest.raises(GateError, match="weight zero"):
        evaluate(pol, frame)


def test_slice_without_weighted_positives_is_skipped() -> None:
    frame = toy(600, seed=5)
    frame["weight"] = np.where((frame["label"] == 1) & (frame["district"] == "south"), 0.0, 1.0)
    pol = policy('[[check]]\nname = "ap"\nmetric = "average_precision"\nat_least = 0.1\nby = "district"\nmin_positives = 5\n')
    by_value = {c.slice.value: c for c in evaluate(pol, frame).checks}
    assert by_value["south"].outcome == "skipped" and "no positives" in by_value["south"].reason
    assert by_value["north"].outcome == "pass"


# --- baselines: missing, mismatched, intersected --------------------------------------------------

MARGIN = '[[check]]\nname = "auc"\nmetric = "roc_auc"\nat_least = 0.5\nmax_drop = 0.05\n'


def test_margin_without_baseline_is_a_baseline_error() -> None:
    with pytest.raises(BaselineError, match="'auc' has max_drop.*no baseline"):
        evaluate(policy(MARGIN), toy())


def test_floor_only_policy_needs_no_baseline() -> None:
    assert evaluate(policy('[[check]]\nmetric = "roc_auc"\nat_least = 0.5\n'), toy()).baseline_source is None


def test_mismatch_is_an_error_and_intersect_a_note() -> None:
    cand = toy(400, seed=3)
    base = cand.copy()
    base["score"] = base["score"] * 0.5 + np.random.default_rng(9).normal(size=400)
    short = base.iloc[:350]
    with pytest.raises(BaselineError, match=r"not on the same eval set: 50 candidate ids not in the baseline \(e.g. 'r350'"):
        evaluate(policy(MARGIN), cand, short)
    result = evaluate(policy(MARGIN, extra='[baseline]\non_mismatch = "intersect"'), cand, short)
    assert result.n == 350
    assert "paired on the 350 ids" in result.notes["mismatch"]
    assert result.notes["mismatch"] in result.warnings
    (check,) = result.checks
    # Reference: scikit-learn on the 350 common rows.
    assert check.value == pytest.approx(roc_auc_score(cand.label[:350], cand.score[:350]), abs=1e-12)
    assert check.baseline_value == pytest.approx(roc_auc_score(short.label, short.score), abs=1e-12)
    assert check.delta == pytest.approx(check.value - check.baseline_value, abs=1e-15)


def test_paired_rows_follow_ids_not_file_order() -> None:
    cand = toy(300, seed=4)
    base = cand.copy()
    base["score"] = -base["score"]  # a model that ranks backwards
    shuffled = base.sample(frac=1.0, random_state=1)
    (check,) = evaluate(policy(MARGIN), cand, shuffled).checks
    # Reference: scikit-learn; AUC(-s) = 1 - AUC(s) for untied scores.
    assert check.baseline_value == pytest.approx(1 - roc_auc_score(cand.label, cand.score), abs=1e-12)


# --- methods: DeLong, Wilson, bootstrap for weighted tables -------------------------------------


def test_weighted_tables_use_the_bootstrap() -> None:
    frame = toy(400, seed=6)
    frame["weight"] = np.random.default_rng(2).uniform(0.5, 2.0, size=400)
    checks = (
        '[[check]]\nname = "auc"\nmetric = "roc_auc"\nat_least = 0.5\n'
        '[[check]]\nname = "recall"\nmetric = "recall_at_threshold"\nthreshold = 0.75\nat_least = 0.1\n'
    )
    weighted = evaluate(policy(checks), frame)
    assert [c.method for c in weighted.checks] == ["bootstrap-percentile", "bootstrap-percentile"]
    # Reference: scikit-learn's roc_auc_score with sample_weight.
    assert weighted.checks[0].value == pytest.approx(
        roc_auc_score(frame.label, frame.score, sample_weight=frame.weight), abs=1e-12
    )
    unweighted = evaluate(policy(checks), frame.drop(columns="weight"))
    assert [c.method for c in unweighted.checks] == ["delong", "wilson"]
    # Reference: scipy's Wilson score interval for the recall at the threshold.
    positives = frame[frame.label == 1]
    k, n = int((positives.score >= 0.75).sum()), len(positives)
    wilson = binomtest(k, n).proportion_ci(confidence_level=0.95, method="wilson")
    recall = unweighted.checks[1]
    assert recall.value == pytest.approx(k / n, abs=1e-15)
    assert (recall.interval.low, recall.interval.high) == pytest.approx((wilson.low, wilson.high), abs=1e-12)


def test_weighted_margin_uses_the_paired_bootstrap() -> None:
    cand = toy(300, seed=7)
    cand["weight"] = np.random.default_rng(3).uniform(0.5, 2.0, size=300)
    base = cand.drop(columns="weight").copy()
    base["score"] = base["score"] + np.random.default_rng(4).normal(size=300)
    (check,) = evaluate(policy(MARGIN), cand, base).checks
    assert check.method == "bootstrap-percentile"
    assert check.margin.interval.method.startswith("bootstrap")
    # The candidate's weights are applied to both models (reference: scikit-learn with sample_weight).
    assert check.baseline_value == pytest.approx(
        roc_auc_score(base.label, base.score, sample_weight=cand.weight), abs=1e-12
    )


# --- seeds: reproducible, per check, independent of order ----------------------------------------

AP = '[[check]]\nname = "ap"\nmetric = "average_precision"\nat_least = 0.3\n'
REC = '[[check]]\nname = "recall"\nmetric = "recall_at_fpr"\nfpr = 0.1\nat_least = 0.2\n'
PAUC = '[[check]]\nname = "pauc"\nmetric = "partial_auc"\nmax_fpr = 0.2\nat_least = 0.5\n'


def _intervals(result) -> dict[tuple[str, str | None], tuple[float, float]]:  # noqa: ANN001
    return {
        (c.name, None if c.slice is None else c.slice.value): (c.interval.low, c.interval.high)
        for c in result.checks
        if c.interval is not None
    }


def test_same_inputs_same_numbers_and_the_seed_matters() -> None:
    frame = toy()
    first, again = (_intervals(evaluate(policy(AP + REC), frame)) for _ in range(2))
    assert first == again
    other = _intervals(evaluate(policy(AP + REC, stats="seed = 7"), frame))
    assert other != first


def test_per_check_seeds_do_not_depend_on_check_order() -> None:
    frame = toy()
    base = _intervals(evaluate(policy(AP + REC), frame))
    assert _intervals(evaluate(policy(REC + AP), frame)) == base
    # Adding a check elsewhere in the list changes nothing for the others.
    more = _intervals(evaluate(policy(PAUC + REC + AP), frame))
    assert {k: v for k, v in more.items() if k[0] != "pauc"} == base
    alone = _intervals(evaluate(policy(AP), frame))
    assert alone[("ap", None)] == base[("ap", None)]


def test_checks_on_the_same_rows_share_their_resamples() -> None:
    # Every check on one slice is judged on the same bootstrap replicates (drawn once), whatever
    # its name: two checks that differ only in name get the same interval, and the shared draw
    # equals a single-metric bootstrap with the slice's seed.
    frame = toy()
    twin = REC.replace('name = "recall"', 'name = "recall again"')
    got = _intervals(evaluate(policy(REC + twin), frame))
    assert got[("recall", None)] == got[("recall again", None)]


def test_slice_seeds_do_not_depend_on_the_other_slices() -> None:
    frame = toy(600, seed=8)
    by = REC.replace("at_least = 0.2\n", 'at_least = 0.2\nby = "district"\nmin_positives = 5\n')
    both = _intervals(evaluate(policy(by), frame))
    north_only = _intervals(evaluate(policy(by), frame[frame.district == "north"]))
    assert north_only == {k: v for k, v in both.items() if k[1] == "north"}
    assert both[("recall", "north")] != both[("recall", "south")]


def test_intersection_without_positives_is_undefined() -> None:
    cand = toy(300, seed=9)
    negatives = cand[cand.label == 0]
    stray = pd.DataFrame({"id": ["elsewhere"], "label": [1], "score": [2.0], "district": ["north"]})
    base = pd.concat([negatives, stray], ignore_index=True)  # shares only negatives with the candidate
    pol = policy(MARGIN, extra='[baseline]\non_mismatch = "intersect"')
    with pytest.raises(UndefinedMetricError, match="'auc'.*no positives"):
        evaluate(pol, cand, base)
