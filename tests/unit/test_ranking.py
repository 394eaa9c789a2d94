"""Unit tests of gate.ranking: toy inputs with hand-worked answers, errors, tie rules, internals."""

from __future__ import annotations

import doctest
import math

import numpy as np
import pytest

import gate.ranking as rk
from gate.errors import UndefinedMetricError
from gate.ranking import (
    Confusion,
    TieBlocks,
    average_precision,
    brier,
    confusion_at,
    discordant_pairs,
    expected_cost,
    fpr_at_threshold,
    hull_auc,
    optimal_cost,
    optimal_cost_values,
    partial_auc,
    pr_curve,
    precision_at_recall,
    precision_at_recall_values,
    precision_at_threshold,
    rank,
    recall_at_fpr,
    recall_at_fpr_values,
    recall_at_threshold,
    roc_auc,
    roc_curve,
    roc_hull,
    tie_blocks,
)


def tb(thresholds, pos, neg) -> TieBlocks:
    return TieBlocks(np.asarray(thresholds, float), np.asarray(pos, float), np.asarray(neg, float))


# Hand-worked toy: scores 3 > 2 > 1 with (pos, neg) = (2, 0), (1, 1), (1, 3); P = 4, N = 4.
# Cumulative (TP, FP): (2, 0), (3, 1), (4, 4).
TOY = tb([3, 2, 1], [2, 1, 1], [0, 1, 3])


def test_module_examples_run() -> None:
    result = doctest.testmod(rk, optionflags=doctest.NORMALIZE_WHITESPACE)
    assert result.attempted > 20 and result.failed == 0


# --- rank and the Ranking spine ----------------------------------------------------------------


def test_rank_fields_on_a_toy() -> None:
    r = rank([0.2, 0.9, 0.2, 0.5, 0.2], [0, 1, 1, 0, 1])
    assert r.thresholds.tolist() == [0.9, 0.5, 0.2]
    assert r.starts.tolist() == [0, 1, 2]
    assert r.block_of.tolist() == [2, 0, 2, 1, 2]
    assert r.order.tolist() == [1, 3, 0, 2, 4]  # ties by ascending index on the fast path
    assert r.labels_sorted.tolist() == [True, False, False, True, True]
    assert r.unit_weights and r.weights_sorted.tolist() == [1.0] * 5
    assert r.n == 5 and r.k == 3 and r.block_sizes.tolist() == [1, 1, 3]
    b = r.blocks()
    assert b.pos.tolist() == [1.0, 0.0, 2.0] and b.neg.tolist() == [0.0, 1.0, 1.0]


def test_unit_weights_take_no_memory() -> None:
    r = rank(np.arange(1000.0), np.arange(1000) % 2 == 0)
    assert r.weights_sorted.strides == (0,)
    assert not r.weights_sorted.flags.writeable


def test_rank_weighted_blocks() -> None:
    r = rank([0.2, 0.9, 0.2, 0.5], [0, 1, 1, 0], weights=[2.0, 0.5, 3.0, 1.0])
    assert not r.unit_weights
    assert r.weights_sorted.tolist() == [0.5, 1.0, 2.0, 3.0]
    b = r.blocks()
    assert b.pos.tolist() == [0.5, 0.0, 3.0] and b.neg.tolist() == [0.0, 1.0, 2.0]


def test_blocks_under_batched_weights_match_each_row() -> None:
    r = rank([0.2, 0.9, 0.2, 0.5, 0.1], [0, 1, 1, 0, 1])
    w = np.array([[1, 2, 0, 1, 3], [0, 0, 1, 1, 1]], dtype=float)
    b = r.blocks(w)
    assert b.batched and b.pos.shape == (2, 4)
    for i in range(2):
        row = r.blocks(w[i])
        np.testing.assert_array_equal(b.pos[i], row.pos)
        np.testing.assert_array_equal(b.neg[i], row.neg)
    assert b.pos[0].tolist() == [2.0, 0.0, 0.0, 3.0] and b.neg[0].tolist() == [0.0, 1.0, 1.0, 0.0]


def test_negative_zero_and_zero_share_a_block() -> None:
    r = rank([0.0, -0.0, 1.0, -1.0], [1, 0, 1, 0])
    assert r.k == 3
    assert r.block_of[0] == r.block_of[1]


def test_dense_scores_take_the_argsort_path_and_agree() -> None:
    # Distinct scores one ulp apart cannot be packed with an index: the fallback path is used.
    base = np.nextafter(0.5, 1.0)
    s = np.array([0.5, base, np.nextafter(base, 1.0), 0.5, -3.0, 7.0, base])
    y = np.array([1, 0, 1, 0, 1, 0, 1], bool)
    r = rank(s, y)
    assert r.k == 5
    assert np.all(np.diff(s[r.order]) <= 0)
    np.testing.assert_array_equal(r.thresholds[r.block_of], s)
    np.testing.assert_array_equal(r.labels_sorted, y[r.order])
    assert sorted(r.order.tolist()) == list(range(7))


def _check_sorted(r, s, y) -> None:
    assert np.all(np.diff(s[r.order]) <= 0)
    np.testing.assert_array_equal(np.sort(r.order), np.arange(s.size))
    np.testing.assert_array_equal(r.thresholds[r.block_of], s)
    np.testing.assert_array_equal(r.labels_sorted, y[r.order])


def test_key_collisions_are_re_sorted_without_argsort(monkeypatch) -> None:
    # Rounded scores plus a few full-precision ones: some distinct scores share the high key
    # bits; only those short ranges are re-sorted, ties stay by ascending index.
    rng = np.random.default_rng(11)
    s = np.concatenate([np.round(rng.random(20_000), 2), 0.5 + rng.random(300) * 1e-12])
    y = rng.random(s.size) < 0.3

    def no_argsort(_s):
        raise AssertionError("the argsort path should not be needed here")

    monkeypatch.setattr(rk, "_argsort_keys", no_argsort)
    r = rank(s, y)
    _check_sorted(r, s, y)
    for b in range(r.k):  # within a tie block: ascending index
        block = r.order[r.starts[b] : (r.starts[b + 1] if b + 1 < r.k else r.n)]
        assert np.all(np.diff(block) > 0)


def test_dense_collisions_fall_back_to_argsort(monkeypatch) -> None:
    # Full-precision scores packed into a range of 1e-9: nearly every key collides.
    rng = np.random.default_rng(12)
    s = 1.0 + rng.random(5000) * 1e-9
    y = rng.random(s.size) < 0.3
    calls = []
    real = rk._argsort_keys
    monkeypatch.setattr(rk, "_argsort_keys", lambda x: calls.append(1) or real(x))
    r = rank(s, y)
    assert calls == [1]
    _check_sorted(r, s, y)


def test_rank_many_rows_both_paths_consistent() -> None:
    rng = np.random.default_rng(7)
    for s in (np.round(rng.random(5000), 2), rng.standard_normal(5000)):  # packed path, then argsort
        y = rng.random(5000) < 0.3
        r = rank(s, y)
        assert np.all(np.diff(s[r.order]) <= 0)
        np.testing.assert_array_equal(r.thresholds[r.block_of], s)
        np.testing.assert_array_equal(r.thresholds, np.unique(s)[::-1])
        np.testing.assert_array_equal(r.block_sizes, np.unique(s, return_counts=True)[1][::-1])


@pytest.mark.parametrize("decimals", [0, 1, 5])
def test_block_counts_across_chunk_boundaries(decimals) -> None:
    # More rows than one chunk of the block-index / counting loops, blocks spanning chunks.
    rng = np.random.default_rng(decimals)
    n = rk._BLOCK_CHUNK + 1234
    s = np.round(rng.random(n), decimals)
    y = rng.random(n) < 0.4
    r = rank(s, y)
    b = r.blocks()
    values, inverse = np.unique(s, return_inverse=True)
    want_pos = np.bincount(inverse, weights=y, minlength=values.size)[::-1]
    want_all = np.bincount(inverse, minlength=values.size)[::-1]
    np.testing.assert_array_equal(b.pos, want_pos)
    np.testing.assert_array_equal(b.pos + b.neg, want_all)
    np.testing.assert_array_equal(r.thresholds[r.block_of], s)
    weighted = r.blocks(np.ones(n))
    np.testing.assert_array_equal(weighted.pos, b.pos)
    np.testing.assert_array_equal(weighted.neg, b.neg)


@pytest.mark.parametrize(
    ("scores", "labels", "weights", "match"),
    [
        ([0.1, np.nan], [0, 1], None, r"score\[1\] = nan"),
        ([np.inf, 0.1], [0, 1], None, r"score\[0\] = inf"),
        ([0.1, -np.inf], [0, 1], None, r"score\[1\] = -inf"),
        ([0.1, 0.2], [0, 1, 1], None, "equal length"),
        ([[0.1, 0.2]], [[0, 1]], None, "1-D"),
        ([0.1, 0.2], [0, 1], [1.0], "weights must have the shape"),
        ([0.1, 0.2], [0, 1], [1.0, -0.5], r"weight\[1\] = -0.5"),
        ([0.1, 0.2], [0, 1], [np.nan, 1.0], r"weight\[0\] = nan"),
    ],
)
def test_rank_rejects_bad_input(scores, labels, weights, match) -> None:
    with pytest.raises(ValueError, match=match):
        rank(scores, labels, weights)


def test_rank_rejects_no_examples() -> None:
    with pytest.raises(UndefinedMetricError, match="no examples"):
        rank([], [])


def test_blocks_rejects_wrong_weight_shape() -> None:
    r = rank([0.1, 0.2, 0.3], [0, 1, 1])
    with pytest.raises(ValueError, match=r"shape \(n,\) or \(B, n\) with n = 3"):
        r.blocks(np.ones(4))


def test_tie_blocks_shape_checks() -> None:
    with pytest.raises(ValueError, match="non-empty 1-D"):
        tb([], [], [])
    with pytest.raises(ValueError, match="share one shape"):
        tb([2, 1], [1, 1], [1, 1, 1])


# --- ROC ----------------------------------------------------------------------------------------


def test_roc_curve_toy() -> None:
    c = roc_curve(TOY)
    assert c.thresholds.tolist() == [math.inf, 3.0, 2.0, 1.0]
    assert c.fpr.tolist() == [0.0, 0.0, 0.25, 1.0]
    assert c.tpr.tolist() == [0.0, 0.5, 0.75, 1.0]


def test_roc_auc_toy_and_ties_count_half() -> None:
    # Pairs: block 3 positives (2) beat all 4 negatives: 8; block 2 positive beats 3, ties 1: 3.5;
    # block 1 positive ties 3: 1.5. (8 + 3.5 + 1.5) / 16 = 13/16.
    assert roc_auc(TOY) == 13 / 16
    assert discordant_pairs(TOY) == 3.0  # 16 - 13
    assert roc_auc(tb([1.0], [3], [5])) == 0.5


def test_roc_auc_batched_and_undefined_row_named() -> None:
    b = tb([2, 1], [[1, 0], [0, 1], [1, 1]], [[0, 1], [1, 0], [1, 1]])
    np.testing.assert_array_equal(roc_auc(b), [1.0, 0.0, 0.5])
    bad = tb([2, 1], [[1, 0], [0, 0]], [[0, 1], [1, 0]])
    with pytest.raises(UndefinedMetricError, match=r"roc_auc is undefined: no positive .* \(batch row 1\)"):
        roc_auc(bad)
    with pytest.raises(UndefinedMetricError, match="no negative examples"):
        roc_auc(tb([1.0], [2], [0]))


def test_curves_refuse_batched_blocks() -> None:
    b = tb([2, 1], [[1, 0], [0, 1]], [[0, 1], [1, 0]])
    for fn in (roc_curve, pr_curve, roc_hull):
        with pytest.raises(ValueError, match="unbatched"):
            fn(b)
    with pytest.raises(ValueError, match="unbatched"):
        recall_at_fpr(b, fpr=0.1)


def test_partial_auc_toy_with_interpolation() -> None:
    # ROC (0,0) (0,.5) (.25,.75) (1,1). Up to 0.5: .25*(.5+.75)/2 + .25*(.75 + 5/6)/2.
    pa = partial_auc(TOY, max_fpr=0.5)
    raw = 0.25 * 1.25 / 2 + 0.25 * (0.75 + 0.75 + (0.25 / 0.75) * 0.25) / 2
    assert pa.raw == pytest.approx(raw, rel=1e-15)
    assert pa.standardized == pytest.approx(0.5 * (1 + (raw - 0.125) / 0.375), rel=1e-15)
    full = partial_auc(TOY, max_fpr=1.0)
    assert full.raw == full.standardized == roc_auc(TOY)
    # max_fpr exactly at a ROC point, and inside a vertical segment's FPR
    assert partial_auc(TOY, max_fpr=0.25).raw == pytest.approx(0.25 * 1.25 / 2, rel=1e-15)


def test_partial_auc_below_chance_goes_under_half() -> None:
    worst = tb([2, 1], [0, 1], [1, 0])  # every negative above every positive
    pa = partial_auc(worst, max_fpr=0.5)
    assert pa.raw == 0.0 and pa.standardized == pytest.approx(1 / 3)


@pytest.mark.parametrize("bad", [0.0, -0.1, 1.5, math.nan])
def test_partial_auc_rejects_max_fpr(bad) -> None:
    with pytest.raises(ValueError, match=r"max_fpr must lie in \(0, 1\]"):
        partial_auc(TOY, max_fpr=bad)


# --- precision-recall ---------------------------------------------------------------------------


def test_pr_curve_and_average_precision_toy() -> None:
    c = pr_curve(TOY)
    assert c.recall.tolist() == [0.5, 0.75, 1.0]
    assert c.precision.tolist() == [1.0, 0.75, 0.5]
    assert c.thresholds.tolist() == [3.0, 2.0, 1.0]
    assert average_precision(TOY) == pytest.approx(0.5 * 1 + 0.25 * 0.75 + 0.25 * 0.5, rel=1e-15)


def test_pr_curve_skips_unweighted_leading_block() -> None:
    b = tb([3, 2, 1], [0, 1, 1], [0, 1, 1])
    c = pr_curve(b)
    assert c.thresholds.tolist() == [2.0, 1.0]
    assert average_precision(b) == pytest.approx(0.5)


def test_average_precision_edge_cases() -> None:
    assert average_precision(tb([1.0], [1], [3])) == 0.25  # all tied: the prevalence
    assert average_precision(tb([2, 1], [1, 2], [0, 0])) == 1.0  # no negatives
    with pytest.raises(UndefinedMetricError, match="average_precision is undefined: no positive"):
        average_precision(tb([2, 1], [0, 0], [1, 2]))


# --- operating points ---------------------------------------------------------------------------


def test_recall_at_fpr_toy() -> None:
    op = recall_at_fpr(TOY, fpr=0.1)
    assert (op.threshold, op.recall, op.fpr, op.precision) == (3.0, 0.5, 0.0, 1.0)
    assert (op.tp, op.fp, op.tn, op.fn) == (2.0, 0.0, 4.0, 2.0)
    op = recall_at_fpr(TOY, fpr=0.25)
    assert (op.threshold, op.recall, op.fpr) == (2.0, 0.75, 0.25)
    op = recall_at_fpr(TOY, fpr=1.0)
    assert (op.threshold, op.recall, op.fpr) == (1.0, 1.0, 1.0)


def test_recall_at_fpr_flags_nothing_when_top_block_breaks_the_cap() -> None:
    op = recall_at_fpr(tb([2, 1], [1, 1], [1, 1]), fpr=0.2)
    assert op.threshold == math.inf and op.recall == 0.0 and op.fpr == 0.0 and op.precision is None
    assert recall_at_fpr_values(tb([2, 1], [1, 1], [1, 1]), fpr=0.2) == 0.0


def test_recall_at_fpr_tie_rule_highest_threshold() -> None:
    # Block at 2.5 adds only negatives within the cap: same recall, so the higher threshold 3 wins.
    b = tb([3, 2.5, 2, 1], [2, 0, 1, 1], [0, 1, 5, 4])
    op = recall_at_fpr(b, fpr=0.2)
    assert op.threshold == 3.0 and op.fpr == 0.0
    # Zero-weight top block: recall 0 everywhere feasible, flag nothing beats the empty block.
    b = tb([3, 2], [0, 1], [0, 1])
    assert recall_at_fpr(b, fpr=0.5).threshold == math.inf


def test_recall_at_fpr_cap_equal_to_an_attainable_fraction() -> None:
    b = tb([2, 1], [1, 1], [3, 97])  # FPR at the top block: 3/100
    assert recall_at_fpr(b, fpr=0.03).threshold == 2.0


def test_recall_at_fpr_values_batched() -> None:
    b = tb([3, 2, 1], [[2, 1, 1], [0, 1, 3]], [[0, 1, 3], [2, 1, 1]])
    np.testing.assert_array_equal(recall_at_fpr_values(b, fpr=0.25), [0.75, 0.0])
    with pytest.raises(ValueError, match=r"fpr must lie in \[0, 1\]"):
        recall_at_fpr_values(b, fpr=1.2)


def test_precision_at_recall_toy() -> None:
    op = precision_at_recall(TOY, recall=0.6)
    assert (op.threshold, op.recall, op.precision) == (2.0, 0.75, 0.75)
    op = precision_at_recall(TOY, recall=0.0)
    assert (op.threshold, op.precision) == (3.0, 1.0)
    assert precision_at_recall_values(TOY, recall=1.0) == 0.5


def test_precision_at_recall_floor_equal_to_an_attainable_fraction() -> None:
    # recall 9/10 at the top block meets a floor written as 0.9
    op = precision_at_recall(tb([1, 0], [9, 1], [0, 1]), recall=0.9)
    assert op.threshold == 1.0 and op.precision == 1.0


def test_precision_at_recall_tie_rule_highest_recall() -> None:
    # Precision 1/2 at recall 1/3 (threshold 3) and at recall 1 (threshold 1): recall 1 wins.
    b = tb([3, 2, 1], [1, 0, 2], [1, 2, 0])  # cumulative (TP, FP): (1, 1), (1, 3), (3, 3)
    op = precision_at_recall(b, recall=0.2)
    assert op.threshold == 1.0 and op.precision == 0.5 and op.recall == 1.0
    with pytest.raises(ValueError, match=r"recall must lie in \[0, 1\]"):
        precision_at_recall(b, recall=-0.1)
    with pytest.raises(UndefinedMetricError, match="no negative"):
        precision_at_recall(tb([2, 1], [1, 1], [0, 0]), recall=0.5)
    assert precision_at_recall_values(tb([2, 1], [1, 1], [0, 0]), recall=0.5) == 1.0


# --- a fixed threshold --------------------------------------------------------------------------


def test_confusion_at_thresholds() -> None:
    c = confusion_at(TOY, threshold=2.0)
    assert (c.tp, c.fp, c.tn, c.fn) == (3.0, 1.0, 3.0, 1.0)
    assert (c.recall, c.precision, c.fpr) == (0.75, 0.75, 0.25)
    c = confusion_at(TOY, threshold=2.5)  # between blocks: same as >= 3
    assert (c.tp, c.fp) == (2.0, 0.0)
    c = confusion_at(TOY, threshold=math.inf)
    assert (c.tp, c.fp, c.tn, c.fn) == (0.0, 0.0, 4.0, 4.0)
    with pytest.raises(UndefinedMetricError, match="precision is undefined: nothing is flagged"):
        _ = c.precision
    c = confusion_at(TOY, threshold=-math.inf)
    assert (c.tp, c.fp) == (4.0, 4.0)
    assert recall_at_threshold(TOY, threshold=1.0) == 1.0
    assert fpr_at_threshold(TOY, threshold=2.0) == 0.25
    assert precision_at_threshold(TOY, threshold=3.0) == 1.0
    with pytest.raises(ValueError, match="threshold must be a number"):
        confusion_at(TOY, threshold=math.nan)


def test_confusion_batched_fields_and_undefined() -> None:
    b = tb([2, 1], [[1, 1], [0, 2]], [[1, 0], [0, 0]])
    c = confusion_at(b, threshold=2.0)
    np.testing.assert_array_equal(c.tp, [1.0, 0.0])
    np.testing.assert_array_equal(c.recall, [0.5, 0.0])
    with pytest.raises(UndefinedMetricError, match=r"no negative .* \(batch row 1\)"):
        _ = c.fpr
    with pytest.raises(UndefinedMetricError, match=r"recall is undefined"):
        _ = Confusion(0.0, 1.0, 1.0, 0.0).recall


# --- costs ----------------------------------------------------------------------------------------


def test_expected_cost_toy() -> None:
    # threshold 2: FP 1, FN 1, W 8
    assert expected_cost(TOY, threshold=2.0, cost_fp=1.0, cost_fn=3.0) == 0.5
    b = tb([2, 1], [[1, 1], [2, 0]], [[1, 0], [0, 1]])
    np.testing.assert_array_equal(expected_cost(b, threshold=2.0, cost_fp=1.0, cost_fn=1.0), [2 / 3, 0.0])
    with pytest.raises(UndefinedMetricError, match="no examples with positive weight"):
        expected_cost(tb([1.0], [0], [0]), threshold=1.0, cost_fp=1.0, cost_fn=1.0)


@pytest.mark.parametrize(
    ("cfp", "cfn", "match"),
    [(-1.0, 1.0, "cost_fp must be finite"), (1.0, math.inf, "cost_fn must be finite"), (0.0, 0.0, "both 0")],
)
def test_costs_validated(cfp, cfn, match) -> None:
    with pytest.raises(ValueError, match=match):
        optimal_cost(TOY, cost_fp=cfp, cost_fn=cfn)


def test_optimal_cost_toy_and_tie_rule() -> None:
    # Candidates (FP, FN): inf (0, 4), 3 (0, 2), 2 (1, 1), 1 (4, 0). With 1:1 costs 2 at 3 and 2.
    cp = optimal_cost(TOY, cost_fp=1.0, cost_fn=1.0)
    assert (cp.threshold, cp.cost, cp.tp, cp.fp, cp.tn, cp.fn) == (3.0, 0.25, 2.0, 0.0, 4.0, 2.0)
    cp = optimal_cost(TOY, cost_fp=1.0, cost_fn=10.0)
    assert cp.threshold == 1.0 and cp.cost == 0.5
    cp = optimal_cost(TOY, cost_fp=100.0, cost_fn=1.0)
    assert cp.threshold == 3.0
    assert optimal_cost_values(TOY, cost_fp=1.0, cost_fn=1.0) == 0.25


def test_optimal_cost_tie_survives_rounding() -> None:
    # 0.1 * 3 != 0.3 * 1 in floating point, though equal in exact arithmetic: still a tie.
    b = tb([2, 1], [0, 1], [3, 0])
    assert 0.1 * 3 != 0.3 * 1
    # candidates: flag nothing (FN 1: 0.3), >= 2 (FP 3, FN 1), >= 1 (FP 3: 0.1 * 3)
    cp = optimal_cost(b, cost_fp=0.1, cost_fn=0.3)
    assert cp.threshold == math.inf


def test_optimal_cost_flag_nothing() -> None:
    cp = optimal_cost(tb([2, 1], [0, 1], [5, 5]), cost_fp=1.0, cost_fn=1.0)
    assert cp.threshold == math.inf and cp.cost == 1 / 11


# --- hull -----------------------------------------------------------------------------------------


def test_roc_hull_drops_a_concave_point() -> None:
    # ROC (0,0) (0,.5) (.5,.5) (1,1): (.5,.5) lies under the chord from (0,.5) to (1,1).
    b = tb([3, 2, 1], [2, 0, 2], [0, 2, 2])
    f, t = roc_hull(b)
    assert f.tolist() == [0.0, 0.0, 1.0] and t.tolist() == [0.0, 0.5, 1.0]
    assert hull_auc(b) == 0.75 and roc_auc(b) == 0.625


def test_roc_hull_collinear_and_duplicate_points_are_not_vertices() -> None:
    # Points (0,0) (.25,.25) (.5,.5) (.5,.5) (1,1): all on the diagonal.
    b = tb([4, 3, 2, 1], [1, 1, 0, 2], [1, 1, 0, 2])
    f, t = roc_hull(b)
    assert f.tolist() == [0.0, 1.0] and t.tolist() == [0.0, 1.0]
    assert hull_auc(b) == 0.5


def test_roc_hull_long_staircase_uses_both_passes() -> None:
    # Alternating single positives and negatives: many locally convex corners, few hull vertices.
    k = 400
    pos = np.tile([1.0, 0.0], k)
    neg = np.tile([0.0, 1.0], k)
    b = tb(np.arange(2 * k, 0, -1), pos, neg)
    f, t = roc_hull(b)
    assert np.all(np.diff(f) >= 0) and np.all(np.diff(t) >= 0)
    assert f[0] == 0 and t[0] == 0 and f[-1] == 1 and t[-1] == 1
    assert hull_auc(b) >= roc_auc(b)


def test_roc_hull_cascade_beyond_the_vectorised_passes() -> None:
    # A concave run of 200 points ending in a tall jump: each vectorised pass can drop only the
    # last interior point, so the monotone-chain finish does the rest. Every point lies under the
    # diagonal chord, so the hull is the chance line.
    m = 200
    b = tb(np.arange(m + 1, 0, -1), np.append(np.arange(m, 0, -1.0), 1e6), np.ones(m + 1))
    f, t = roc_hull(b)
    assert f.tolist() == [0.0, 1.0] and t.tolist() == [0.0, 1.0]
    assert hull_auc(b) == 0.5 and roc_auc(b) < 0.5


# --- Brier ----------------------------------------------------------------------------------------


def test_brier_toy_and_range_check() -> None:
    b = tb([0.75, 0.5, 0.0], [1, 1, 0], [0, 1, 1])
    # (0.0625 + 0.25 + 0.25 + 0) / 4
    assert brier(b) == pytest.approx(0.140625, rel=1e-15)
    np.testing.assert_allclose(brier(tb([0.75, 0.5, 0.0], [[1, 1, 0], [0, 0, 2]], [[0, 1, 1], [1, 0, 0]])),
                               [0.140625, (0.5625 + 2.0) / 3])
    with pytest.raises(UndefinedMetricError, match=r"probabilities in \[0, 1\]; found score 1.5"):
        brier(tb([1.5, 0.5], [1, 0], [0, 1]))
    with pytest.raises(UndefinedMetricError, match="found score -0.25"):
        brier(tb([0.5, -0.25], [1, 0], [0, 1]))


def test_tie_blocks_shorthand() -> None:
    b = tie_blocks([1.0, 2.0, 2.0], [1, 0, 1], [1.0, 2.0, 3.0])
    assert b.thresholds.tolist() == [2.0, 1.0]
    assert b.pos.tolist() == [3.0, 1.0] and b.neg.tolist() == [2.0, 0.0]
