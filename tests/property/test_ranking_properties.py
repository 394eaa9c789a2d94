"""Hypothesis properties of gate.ranking: agreement with the exact oracles (tests/oracles.py),
invariance under strictly increasing score transforms, AUC(-s) = 1 - AUC, all tied = chance,
integer weights = repeated rows, ranges, batched = unbatched, row order irrelevant."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from gate import ranking as rk
from tests import oracles

# Per-test settings (a loaded profile would change every other module's tests too): no deadline
# on a shared CI machine, and enough examples to find tie and zero-weight corner cases quickly.
quick = settings(deadline=None, max_examples=60, suppress_health_check=[HealthCheck.too_slow])

FPRS = (0.0, 0.1, 0.25, 0.5, 1.0)
RECALLS = (0.0, 0.3, 0.5, 0.9, 1.0)
MAX_FPRS = (0.05, 0.2, 0.5, 0.9, 1.0)
COSTS = ((1.0, 1.0), (1.0, 3.0), (5.0, 1.0), (0.5, 2.0))


@st.composite
def samples(draw, *, max_n: int = 24, weights: str = "none", grid: bool = True, unit: bool = False):
    """(scores, labels, weights) with at least one positive and one negative of positive weight.

    grid: integer scores in [-4, 4] (many ties); else any finite floats. unit: scores in [0, 1].
    weights: "none", "int" (0..3) or "real".
    """
    n = draw(st.integers(2, max_n))
    if unit:
        elem = st.integers(0, 8).map(lambda v: v / 8)
    elif grid:
        elem = st.integers(-4, 4).map(float)
    else:
        elem = st.floats(-1e6, 1e6, allow_nan=False, allow_infinity=False)
    s = draw(arrays(np.float64, n, elements=elem))
    y = draw(arrays(np.bool_, n))
    y[0], y[1] = True, False
    if weights == "none":
        w = None
    elif weights == "int":
        w = draw(arrays(np.float64, n, elements=st.integers(0, 3).map(float)))
        w[0] = max(w[0], 1.0)
        w[1] = max(w[1], 1.0)
    else:
        w = draw(arrays(np.float64, n, elements=st.floats(0.01, 10.0)))
    return s, y, w


def close(a, b, tol: float = 1e-12) -> bool:
    return math.isclose(float(a), float(b), rel_tol=tol, abs_tol=tol)


# --- agreement with the exact oracles ------------------------------------------------------------


@quick
@given(samples(weights="int"))
def test_auc_and_discordant_equal_pair_counts(data) -> None:
    s, y, w = data
    b = rk.tie_blocks(s, y, w)
    assert close(rk.roc_auc(b), oracles.pair_auc(s, y, w))
    assert close(rk.discordant_pairs(b), oracles.discordant_pairs(s, y, w))
    p, q = float(np.sum(b.pos)), float(np.sum(b.neg))
    assert close(rk.roc_auc(b), 1 - rk.discordant_pairs(b) / (p * q))


@quick
@given(samples(weights="int"))
def test_roc_curve_equals_direct_counts(data) -> None:
    s, y, w = data
    c = rk.roc_curve(rk.tie_blocks(s, y, w))
    pts = oracles.roc_points(s, y, w)
    assert c.thresholds.tolist() == [t for t, _, _ in pts]
    np.testing.assert_allclose(c.fpr, [float(f) for _, f, _ in pts], rtol=0, atol=1e-12)
    np.testing.assert_allclose(c.tpr, [float(t) for _, _, t in pts], rtol=0, atol=1e-12)


@quick
@given(samples(weights="int"))
def test_average_precision_and_pr_curve_equal_oracle(data) -> None:
    s, y, w = data
    b = rk.tie_blocks(s, y, w)
    assert close(rk.average_precision(b), oracles.average_precision(s, y, w))
    c = rk.pr_curve(b)
    for t, r, p in zip(c.thresholds, c.recall, c.precision, strict=True):
        tp, fp, tn, fn = oracles.confusion(s, y, w, t)
        assert close(r, tp / (tp + fn)) and close(p, tp / (tp + fp))


@quick
@given(samples(weights="int"), st.sampled_from(MAX_FPRS))
def test_partial_auc_equals_oracle(data, m) -> None:
    s, y, w = data
    pa = rk.partial_auc(rk.tie_blocks(s, y, w), max_fpr=m)
    raw = oracles.partial_auc_raw(s, y, w, m)
    assert close(pa.raw, raw)
    assert close(pa.standardized, oracles.mcclish(raw, m))


@quick
@given(samples(weights="int"), st.sampled_from(FPRS))
def test_recall_at_fpr_equals_oracle(data, a) -> None:
    s, y, w = data
    b = rk.tie_blocks(s, y, w)
    op = rk.recall_at_fpr(b, fpr=a)
    t, recall, fpr = oracles.recall_at_fpr(s, y, w, a)
    assert op.threshold == t and close(op.recall, recall) and close(op.fpr, fpr)
    assert op.fpr <= a
    assert close(rk.recall_at_fpr_values(b, fpr=a), recall)


@quick
@given(samples(weights="int"), st.sampled_from(RECALLS))
def test_precision_at_recall_equals_oracle(data, r) -> None:
    s, y, w = data
    b = rk.tie_blocks(s, y, w)
    op = rk.precision_at_recall(b, recall=r)
    t, precision, recall = oracles.precision_at_recall(s, y, w, r)
    assert op.threshold == t and close(op.precision, precision) and close(op.recall, recall)
    assert close(rk.precision_at_recall_values(b, recall=r), precision)


@quick
@given(samples(weights="int"), st.sampled_from(COSTS))
def test_optimal_cost_equals_oracle(data, costs) -> None:
    s, y, w = data
    b = rk.tie_blocks(s, y, w)
    cp = rk.optimal_cost(b, cost_fp=costs[0], cost_fn=costs[1])
    t, cost = oracles.optimal_cost(s, y, w, *costs)
    assert cp.threshold == t and close(cp.cost, cost)
    assert close(rk.expected_cost(b, threshold=t, cost_fp=costs[0], cost_fn=costs[1]), cost)
    assert close(rk.optimal_cost_values(b, cost_fp=costs[0], cost_fn=costs[1]), cost)


@quick
@given(samples(weights="int"), st.integers(-5, 5).map(lambda v: v / 2))
def test_confusion_equals_oracle(data, t) -> None:
    s, y, w = data
    c = rk.confusion_at(rk.tie_blocks(s, y, w), threshold=t)
    for got, want in zip((c.tp, c.fp, c.tn, c.fn), oracles.confusion(s, y, w, t), strict=True):
        assert close(got, want)


@quick
@given(samples(weights="int", unit=True))
def test_brier_equals_oracle(data) -> None:
    s, y, w = data
    assert close(rk.brier(rk.tie_blocks(s, y, w)), oracles.brier(s, y, w))


@quick
@given(samples(weights="int"))
def test_hull_equals_brute_force_envelope(data) -> None:
    s, y, w = data
    b = rk.tie_blocks(s, y, w)
    f, t = rk.roc_hull(b)
    vertices, area = oracles.roc_hull(s, y, w)
    assert len(f) == len(vertices)
    for fx, ty, (vx, vy) in zip(f, t, vertices, strict=True):
        assert close(fx, vx) and close(ty, vy)
    assert close(rk.hull_auc(b), area)
    assert rk.hull_auc(b) >= rk.roc_auc(b) - 1e-12


# --- invariances ---------------------------------------------------------------------------------

TRANSFORMS = {
    "affine": lambda s: 3.0 * s + 7.0,
    "exp": np.exp,
    "cube": lambda s: s**3 + s,
    "logistic": lambda s: 1.0 / (1.0 + np.exp(-s)),
}


def point_metrics(b: rk.TieBlocks) -> list[float]:
    out = [rk.roc_auc(b), rk.average_precision(b), rk.discordant_pairs(b), rk.hull_auc(b)]
    out += [rk.partial_auc(b, max_fpr=m).standardized for m in MAX_FPRS]
    out += [rk.recall_at_fpr(b, fpr=a).recall for a in FPRS]
    out += [rk.precision_at_recall(b, recall=r).precision for r in RECALLS]
    out += [rk.optimal_cost(b, cost_fp=c[0], cost_fn=c[1]).cost for c in COSTS]
    return [float(v) for v in out]


@quick
@given(samples(weights="int"), st.sampled_from(sorted(TRANSFORMS)))
def test_strictly_increasing_transform_changes_nothing_but_thresholds(data, name) -> None:
    s, y, w = data  # integer grid scores: each transform is strictly increasing on them in float64
    b0 = rk.tie_blocks(s, y, w)
    b1 = rk.tie_blocks(TRANSFORMS[name](s), y, w)
    np.testing.assert_array_equal(b0.pos, b1.pos)
    np.testing.assert_array_equal(b0.neg, b1.neg)
    assert point_metrics(b0) == point_metrics(b1)
    c0, c1 = rk.roc_curve(b0), rk.roc_curve(b1)
    np.testing.assert_array_equal(c0.fpr, c1.fpr)
    np.testing.assert_array_equal(c0.tpr, c1.tpr)


@quick
@given(samples(weights="real", grid=False))
def test_negated_scores_give_one_minus_auc(data) -> None:
    s, y, w = data
    assert close(rk.roc_auc(rk.tie_blocks(-s, y, w)), 1.0 - rk.roc_auc(rk.tie_blocks(s, y, w)), 1e-10)


@quick
@given(samples(weights="real"), st.floats(-100, 100))
def test_all_tied_scores_are_chance(data, value) -> None:
    _, y, w = data
    b = rk.tie_blocks(np.full(y.size, value), y, w)
    weights = np.ones(y.size) if w is None else w
    assert rk.roc_auc(b) == 0.5
    assert rk.hull_auc(b) == pytest.approx(0.5, abs=1e-15)
    assert close(rk.average_precision(b), weights[y].sum() / weights.sum())
    for m in MAX_FPRS:
        assert rk.partial_auc(b, max_fpr=m).standardized == pytest.approx(0.5, abs=1e-12)
    assert rk.recall_at_fpr(b, fpr=0.5).recall == 0.0
    assert rk.recall_at_fpr(b, fpr=1.0).recall == 1.0


@quick
@given(samples(weights="int"))
def test_integer_weights_equal_repeated_rows(data) -> None:
    s, y, w = data
    reps = w.astype(int)
    bw = rk.tie_blocks(s, y, w)
    br = rk.tie_blocks(np.repeat(s, reps), np.repeat(y, reps))
    for a, b in zip(point_metrics(bw), point_metrics(br), strict=True):
        assert close(a, b)
    for a in FPRS:
        assert rk.recall_at_fpr(bw, fpr=a).threshold == rk.recall_at_fpr(br, fpr=a).threshold
    for c in COSTS:
        assert rk.optimal_cost(bw, cost_fp=c[0], cost_fn=c[1]).threshold == rk.optimal_cost(
            br, cost_fp=c[0], cost_fn=c[1]
        ).threshold
    sb = (s + 4.0) / 8.0  # into [0, 1] for the Brier score
    assert close(rk.brier(rk.tie_blocks(sb, y, w)), rk.brier(rk.tie_blocks(np.repeat(sb, reps), np.repeat(y, reps))))


@quick
@given(samples(weights="real", grid=False, max_n=40), st.randoms(use_true_random=False))
def test_row_order_does_not_matter(data, rnd) -> None:
    s, y, w = data
    perm = np.array(rnd.sample(range(s.size), s.size))
    b0, b1 = rk.tie_blocks(s, y, w), rk.tie_blocks(s[perm], y[perm], w[perm])
    np.testing.assert_array_equal(b0.thresholds, b1.thresholds)
    np.testing.assert_allclose(b0.pos, b1.pos, rtol=1e-14)
    np.testing.assert_allclose(b0.neg, b1.neg, rtol=1e-14)


@quick
@given(samples(weights="real", grid=False))
def test_metrics_stay_in_range(data) -> None:
    s, y, w = data
    b = rk.tie_blocks(s, y, w)
    for v in (rk.roc_auc(b), rk.average_precision(b), rk.hull_auc(b)):
        assert 0.0 <= v <= 1.0
    pairs = float(np.sum(b.pos) * np.sum(b.neg))
    assert 0.0 <= rk.discordant_pairs(b) <= pairs * (1 + 1e-12)
    for cfp, cfn in COSTS:
        cost = rk.optimal_cost(b, cost_fp=cfp, cost_fn=cfn).cost
        assert 0.0 <= cost <= max(cfp, cfn) * (1 + 1e-12)
        assert cost <= rk.expected_cost(b, threshold=math.inf, cost_fp=cfp, cost_fn=cfn) * (1 + 1e-12)
    for m in MAX_FPRS:
        pa = rk.partial_auc(b, max_fpr=m)
        assert 0.0 <= pa.raw <= m and 0.0 <= pa.standardized <= 1.0
    c = rk.roc_curve(b)
    assert c.fpr[-1] == 1.0 and c.tpr[-1] == 1.0
    assert np.all((0 <= c.fpr) & (c.fpr <= 1) & (0 <= c.tpr) & (c.tpr <= 1))
    assert np.all(np.diff(c.fpr) >= 0) and np.all(np.diff(c.tpr) >= 0)
    for a in FPRS:
        op = rk.recall_at_fpr(b, fpr=a)
        assert 0 <= op.recall <= 1 and 0 <= op.fpr <= a
    for r in RECALLS:
        op = rk.precision_at_recall(b, recall=r)
        assert 0 <= op.precision <= 1 and op.recall >= r
    p = rk.pr_curve(b)
    assert np.all((0 <= p.precision) & (p.precision <= 1) & (0 <= p.recall) & (p.recall <= 1))


# --- batched == unbatched ------------------------------------------------------------------------

BATCHED = {
    "roc_auc": rk.roc_auc,
    "average_precision": rk.average_precision,
    "discordant_pairs": rk.discordant_pairs,
    "partial_auc_raw": lambda b: rk.partial_auc(b, max_fpr=0.3).raw,
    "partial_auc_std": lambda b: rk.partial_auc(b, max_fpr=0.3).standardized,
    "recall_at_fpr": lambda b: rk.recall_at_fpr_values(b, fpr=0.2),
    "precision_at_recall": lambda b: rk.precision_at_recall_values(b, recall=0.6),
    "tp": lambda b: rk.confusion_at(b, threshold=0.5).tp,
    "fp": lambda b: rk.confusion_at(b, threshold=0.5).fp,
    "tn": lambda b: rk.confusion_at(b, threshold=0.5).tn,
    "fn": lambda b: rk.confusion_at(b, threshold=0.5).fn,
    "recall_at_threshold": lambda b: rk.recall_at_threshold(b, threshold=0.5),
    "fpr_at_threshold": lambda b: rk.fpr_at_threshold(b, threshold=0.5),
    "expected_cost": lambda b: rk.expected_cost(b, threshold=0.5, cost_fp=1.0, cost_fn=4.0),
    "optimal_cost": lambda b: rk.optimal_cost_values(b, cost_fp=1.0, cost_fn=4.0),
    "brier": rk.brier,
}


@quick
@given(
    samples(weights="none", unit=True, max_n=30),
    st.integers(1, 5),
    st.integers(0, 2**32 - 1),
)
def test_batched_equals_unbatched_row_by_row(data, n_rows, seed) -> None:
    s, y, _ = data
    r = rk.rank(s, y)
    rng = np.random.default_rng(seed)
    wts = rng.integers(0, 3, size=(n_rows, s.size)).astype(float) * rng.choice([1.0, 0.37], size=(n_rows, 1))
    wts[:, 0] += 1.0  # every replicate keeps a positive and a negative
    wts[:, 1] += 1.0
    batch = r.blocks(wts)
    assert batch.pos.shape == (n_rows, r.k)
    for name, fn in BATCHED.items():
        got = np.asarray(fn(batch))
        assert got.shape == (n_rows,), name
        for i in range(n_rows):
            want = fn(r.blocks(wts[i]))
            assert close(got[i], want, 1e-13), (name, i)
    # more than one leading axis
    b3 = rk.TieBlocks(batch.thresholds, np.stack([batch.pos] * 2), np.stack([batch.neg] * 2))
    for name, fn in BATCHED.items():
        got3 = np.asarray(fn(b3))
        assert got3.shape == (2, n_rows), name
        np.testing.assert_allclose(got3[1], np.asarray(fn(batch)), rtol=1e-13, atol=1e-13)


# --- the sort itself -----------------------------------------------------------------------------


@quick
@given(
    arrays(
        np.float64,
        st.integers(1, 60),
        elements=st.one_of(
            st.floats(allow_nan=False, allow_infinity=False),
            st.sampled_from([0.0, -0.0, 1.0, np.nextafter(1.0, 2.0), 5e-324, -5e-324]),
        ),
    ),
    st.integers(0, 2**32 - 1),
)
def test_rank_sorts_and_blocks_any_finite_scores(s, seed) -> None:
    y = np.random.default_rng(seed).random(s.size) < 0.5
    r = rk.rank(s, y)
    assert sorted(r.order.tolist()) == list(range(s.size))
    assert np.all(np.diff(s[r.order]) <= 0)
    assert np.all(np.diff(r.thresholds) < 0)
    np.testing.assert_array_equal(r.thresholds[r.block_of] == s, np.ones(s.size, bool))
    np.testing.assert_array_equal(r.labels_sorted, y[r.order])
    np.testing.assert_array_equal(r.block_of[r.order][r.starts], np.arange(r.k))
    b = r.blocks()
    assert b.pos.sum() == y.sum() and b.neg.sum() == (~y).sum()
