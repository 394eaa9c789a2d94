"""gate.stats.bootstrap: replicates as count vectors over presorted rankings, stratified and paired."""

from __future__ import annotations

import numpy as np
import pytest
from sklearn.metrics import average_precision_score, roc_auc_score

from gate.errors import UndefinedMetricError
from gate.ranking import TieBlocks, average_precision, rank, recall_at_fpr_values, roc_auc
from gate.stats import (
    bootstrap,
    bootstrap_many,
    delong,
    paired_bootstrap,
    paired_bootstrap_many,
    replicate_counts,
)


def _data(seed: int = 0, n: int = 120, prevalence: float = 0.3) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    y = rng.random(n) < prevalence
    y[:3] = True
    y[3:6] = False
    base = rng.normal(size=n) + y
    s1 = np.round(base, 1)  # ties
    s2 = np.round(0.8 * base + 0.6 * rng.normal(size=n), 1)
    return s1, s2, y


def _positive_share_top(blocks: TieBlocks) -> np.ndarray:
    """A small statistic of our own: share of positive weight in the top 3 tie blocks."""
    return blocks.pos[..., :3].sum(axis=-1) / blocks.pos.sum(axis=-1)


# --- replicates are weight vectors over the presorted order -----------------------------------


def test_replicate_blocks_equal_ranking_blocks_of_the_counts() -> None:
    s1, _, y = _data(1)
    r = rank(s1, y)
    counts = replicate_counts(r, resamples=25, seed=7)
    res = bootstrap(r, roc_auc, resamples=25, seed=7)
    expected = roc_auc(r.blocks(counts.astype(float)))
    np.testing.assert_allclose(res.replicates, expected, rtol=0, atol=1e-14)


@pytest.mark.parametrize("stratified", [True, False])
def test_replicates_match_sklearn_on_the_resampled_weights(stratified: bool) -> None:
    # Reference: scikit-learn's roc_auc_score / average_precision_score with sample_weight = the
    # replicate counts (integer weights are equivalent to repeating rows).
    s1, _, y = _data(2)
    r = rank(s1, y)
    counts = replicate_counts(r, resamples=15, seed=3, stratified=stratified)
    auc = bootstrap(r, roc_auc, resamples=15, seed=3, stratified=stratified)
    ap = bootstrap(r, average_precision, resamples=15, seed=3, stratified=stratified)
    for i in range(15):
        assert auc.replicates[i] == pytest.approx(roc_auc_score(y, s1, sample_weight=counts[i]), abs=1e-12)
        assert ap.replicates[i] == pytest.approx(average_precision_score(y, s1, sample_weight=counts[i]), abs=1e-12)


def test_stratified_keeps_class_counts_unstratified_keeps_total() -> None:
    s1, _, y = _data(3)
    r = rank(s1, y)
    c = replicate_counts(r, resamples=50, seed=1)
    assert np.all(c[:, y].sum(axis=1) == y.sum())
    assert np.all(c[:, ~y].sum(axis=1) == (~y).sum())
    u = replicate_counts(r, resamples=50, seed=1, stratified=False)
    assert np.all(u.sum(axis=1) == y.size)
    assert len(set(u[:, y].sum(axis=1).tolist())) > 1  # the class mix varies


def test_weighted_replicates_multiply_table_weights() -> None:
    # Reference: sklearn with sample_weight = counts * table weights.
    s1, _, y = _data(4)
    w = np.random.default_rng(0).uniform(0.5, 2.0, size=y.size)
    r = rank(s1, y, w)
    counts = replicate_counts(r, resamples=10, seed=5)
    res = bootstrap(r, roc_auc, resamples=10, seed=5)
    assert res.estimate == pytest.approx(roc_auc_score(y, s1, sample_weight=w), abs=1e-12)
    for i in range(10):
        assert res.replicates[i] == pytest.approx(roc_auc_score(y, s1, sample_weight=counts[i] * w), abs=1e-12)


# --- determinism and chunking -----------------------------------------------------------------


def test_seed_determinism_and_seed_matters() -> None:
    s1, _, y = _data(5)
    r = rank(s1, y)
    a = bootstrap(r, roc_auc, resamples=200, seed=42)
    b = bootstrap(r, roc_auc, resamples=200, seed=42)
    c = bootstrap(r, roc_auc, resamples=200, seed=43)
    np.testing.assert_array_equal(a.replicates, b.replicates)
    assert not np.array_equal(a.replicates, c.replicates)


@pytest.mark.parametrize("chunk", [1, 7, 64, 1000])
def test_results_independent_of_chunk_size(chunk: int) -> None:
    s1, s2, y = _data(6)
    a, b = rank(s1, y), rank(s2, y)
    ref = paired_bootstrap(a, b, average_precision, resamples=130, seed=9)
    got = paired_bootstrap(a, b, average_precision, resamples=130, seed=9, chunk_size=chunk)
    np.testing.assert_array_equal(got.replicates_a, ref.replicates_a)
    np.testing.assert_array_equal(got.replicates_b, ref.replicates_b)
    assert got.delta_interval(method="bca") == ref.delta_interval(method="bca")


def test_chunk_independence_on_the_row_by_row_path() -> None:
    # Above 2**16 examples draws and block sums go replicate by replicate; still the same numbers,
    # and the same as the ranking's own block sums of the counts.
    rng = np.random.default_rng(25)
    n = 70_000
    y = rng.random(n) < 0.1
    s1 = np.round(rng.normal(size=n) + y, 2)  # tied
    s2 = rng.normal(size=n) + y  # untied
    a, b = rank(s1, y), rank(s2, y)
    ref = paired_bootstrap(a, b, roc_auc, resamples=5, seed=3, chunk_size=1)
    got = paired_bootstrap(a, b, roc_auc, resamples=5, seed=3, chunk_size=3)
    np.testing.assert_array_equal(ref.replicates_a, got.replicates_a)
    np.testing.assert_array_equal(ref.replicates_b, got.replicates_b)
    counts = replicate_counts(a, resamples=5, seed=3).astype(float)
    np.testing.assert_allclose(ref.replicates_b, roc_auc(b.blocks(counts)), atol=1e-13)
    np.testing.assert_allclose(ref.replicates_a, roc_auc(a.blocks(counts)), atol=1e-13)


def test_progress_called_per_chunk_up_to_total() -> None:
    s1, _, y = _data(7)
    calls: list[tuple[int, int]] = []
    bootstrap(rank(s1, y), roc_auc, resamples=10, seed=0, chunk_size=4, progress=lambda d, t: calls.append((d, t)))
    assert calls == [(4, 10), (8, 10), (10, 10)]


def test_paired_uses_the_draws_of_the_single_bootstrap_of_a() -> None:
    s1, s2, y = _data(8)
    a, b = rank(s1, y), rank(s2, y)
    single = bootstrap(a, roc_auc, resamples=40, seed=2)
    paired = paired_bootstrap(a, b, roc_auc, resamples=40, seed=2)
    np.testing.assert_array_equal(paired.replicates_a, single.replicates)
    counts = replicate_counts(a, resamples=40, seed=2)
    np.testing.assert_allclose(paired.replicates_b, roc_auc(b.blocks(counts.astype(float))), atol=1e-14)


def test_many_statistics_share_replicates_and_equal_single_runs() -> None:
    s1, s2, y = _data(23)
    a, b = rank(s1, y), rank(s2, y)
    stats = {"auc": roc_auc, "ap": average_precision, "top": _positive_share_top}
    many = paired_bootstrap_many(a, b, stats, resamples=60, seed=4, chunk_size=16)
    for name, f in stats.items():
        one = paired_bootstrap(a, b, f, resamples=60, seed=4)
        np.testing.assert_array_equal(many[name].replicates_a, one.replicates_a)
        np.testing.assert_array_equal(many[name].replicates_b, one.replicates_b)
        assert many[name].delta_interval(method="bca") == one.delta_interval(method="bca")
    single = bootstrap_many(a, stats, resamples=60, seed=4)
    np.testing.assert_array_equal(single["top"].replicates, many["top"].replicates_a)
    with pytest.raises(ValueError, match="non-empty mapping"):
        bootstrap_many(a, {}, resamples=10)
    with pytest.raises(ValueError, match=r"statistics\['x'\] must be callable"):
        bootstrap_many(a, {"x": 3}, resamples=10)  # type: ignore[dict-item]


def test_untied_and_tied_rankings_give_the_same_replicate_blocks() -> None:
    # Continuous scores (one example per block: the scatter path) against the ranking's own sums.
    rng = np.random.default_rng(24)
    y = rng.random(300) < 0.3
    s = rng.normal(size=300) + y
    r = rank(s, y)
    assert r.k == r.n
    counts = replicate_counts(r, resamples=12, seed=8)
    res = bootstrap(r, average_precision, resamples=12, seed=8)
    np.testing.assert_allclose(res.replicates, average_precision(r.blocks(counts.astype(float))), atol=1e-14)


# --- results ----------------------------------------------------------------------------------


def test_paired_identical_models_zero_difference() -> None:
    s1, _, y = _data(9)
    r = rank(s1, y)
    res = paired_bootstrap(r, r, average_precision, resamples=300, seed=1)
    assert res.delta == 0.0
    assert np.all(res.replicates_delta == 0.0)
    assert res.se_delta == 0.0
    assert res.delta_interval().as_list() == [0.0, 0.0]
    # a zero-difference interval cannot rule out "no drop" either way
    assert res.p_value_below(0.0) == 1.0


def test_paired_same_model_different_sort_order_also_zero() -> None:
    # The same scores given to a reordered-but-aligned copy: rankings built separately.
    s1, _, y = _data(10)
    res = paired_bootstrap(rank(s1, y), rank(s1.copy(), y.copy()), roc_auc, resamples=50, seed=0)
    assert np.all(res.replicates_delta == 0.0)


def test_percentile_interval_is_replicate_quantiles() -> None:
    s1, _, y = _data(11)
    res = bootstrap(rank(s1, y), roc_auc, resamples=500, seed=3, confidence=0.9)
    iv = res.interval()
    assert iv.confidence == 0.9 and iv.method == "bootstrap-percentile"
    assert iv.low == pytest.approx(np.quantile(res.replicates, 0.05))
    assert iv.high == pytest.approx(np.quantile(res.replicates, 0.95))
    iv99 = res.interval(confidence=0.99)
    assert iv99.low <= iv.low and iv99.high >= iv.high
    assert res.se == pytest.approx(np.std(res.replicates, ddof=1))


def test_bca_with_zero_acceleration_and_no_bias_is_percentile() -> None:
    # A symmetric statistic of our own whose replicates straddle the estimate evenly:
    # z0 = 0 and a = 0 reduce BCa to the percentile interval (Efron & Tibshirani 1993, ch. 14).
    s1, _, y = _data(12)
    res = bootstrap(rank(s1, y), roc_auc, resamples=400, seed=4)
    res._cache["a"] = 0.0
    object.__setattr__(res, "estimate", float(np.median(res.replicates)))
    bca = res.interval(method="bca")
    pct = res.interval(method="percentile")
    assert bca.low == pytest.approx(pct.low, abs=1e-3) and bca.high == pytest.approx(pct.high, abs=1e-3)
    assert bca.method == "bootstrap-bca"


def test_bca_acceleration_delete_one_jackknife_small_n() -> None:
    # n <= 200: delete-one jackknife; check against a direct leave-one-out of sklearn's AUC.
    s1, _, y = _data(13, n=60)
    res = bootstrap(rank(s1, y), roc_auc, resamples=50, seed=0)
    jk = np.array([roc_auc_score(np.delete(y, i), np.delete(s1, i)) for i in range(y.size)])
    d = jk.mean() - jk
    expected = np.sum(d**3) / (6 * np.sum(d**2) ** 1.5)
    assert res.acceleration == pytest.approx(expected, rel=1e-9, abs=1e-15)


def test_bca_grouped_jackknife_large_n_is_deterministic() -> None:
    s1, _, y = _data(14, n=1500)
    r = rank(s1, y)
    a1 = bootstrap(r, roc_auc, resamples=100, seed=5)
    a2 = bootstrap(r, roc_auc, resamples=100, seed=5)
    assert a1.acceleration == a2.acceleration
    assert abs(a1.acceleration) < 0.1  # AUC's acceleration is small (order 1/sqrt(n))
    iv = a1.interval(method="bca")
    assert iv.low < a1.estimate < iv.high


def test_bca_undefined_when_all_replicates_on_one_side() -> None:
    s1, _, y = _data(15)
    res = bootstrap(rank(s1, y), roc_auc, resamples=20, seed=0)
    object.__setattr__(res, "estimate", float(res.replicates.max()) + 1.0)
    with pytest.raises(UndefinedMetricError, match="one side of the estimate"):
        res.interval(method="bca")


def test_bootstrap_se_near_delong_se_on_large_sample() -> None:
    # Common practice: on large samples the bootstrap SE of the AUC agrees with DeLong's to a few %.
    rng = np.random.default_rng(20)
    n = 4000
    y = rng.random(n) < 0.5
    s = rng.normal(size=n) + y
    r = rank(s, y)
    boot = bootstrap(r, roc_auc, resamples=400, seed=1)
    assert boot.se == pytest.approx(delong(r).se, rel=0.12)  # MC error of an SD from 400 reps ~ 3.5%


def test_p_values_of_paired_bootstrap() -> None:
    s1, s2, y = _data(16)
    res = paired_bootstrap(rank(s1, y), rank(s2, y), roc_auc, resamples=199, seed=0)
    d = res.replicates_delta
    m = 0.01
    assert res.p_value_below(m) == pytest.approx((1 + np.sum(d >= -m)) / 200)
    assert res.p_value_above(m) == pytest.approx((1 + np.sum(d <= -m)) / 200)


def test_recall_at_fpr_statistic_runs_and_interval_contains_estimate() -> None:
    s1, s2, y = _data(17, n=400)
    res = paired_bootstrap(rank(s1, y), rank(s2, y), lambda b: recall_at_fpr_values(b, fpr=0.1), resamples=200)
    ia = res.interval_a()
    assert ia.low <= res.estimate_a <= ia.high
    assert res.interval_b().method == "bootstrap-percentile"


# --- errors -----------------------------------------------------------------------------------


def test_statistic_must_return_one_value_per_replicate() -> None:
    s1, _, y = _data(18)
    with pytest.raises(ValueError, match="one value per replicate"):
        bootstrap(rank(s1, y), lambda b: np.zeros(3), resamples=10)


def test_non_finite_statistic_is_an_error() -> None:
    s1, _, y = _data(19)

    def bad(b: TieBlocks) -> np.ndarray:
        out = np.zeros(b.pos.shape[0])
        if b.pos.shape[0] > 1:
            out[-1] = np.nan
        return out

    with pytest.raises(UndefinedMetricError, match=r"bootstrap replicates 1-10: the statistic is not finite"):
        bootstrap(rank(s1, y), bad, resamples=10)


def test_unstratified_replicate_without_positives_is_named() -> None:
    # 1 positive in 40: an unstratified replicate misses it with probability (39/40)^40 ~ 0.36.
    y = np.zeros(40, dtype=bool)
    y[0] = True
    s = np.arange(40.0)
    with pytest.raises(UndefinedMetricError, match="bootstrap replicates .*no positive"):
        bootstrap(rank(s, y), roc_auc, resamples=50, stratified=False)
    bootstrap(rank(s, y), roc_auc, resamples=50, stratified=True)  # stratified keeps the positive


def test_one_class_only_is_an_error() -> None:
    with pytest.raises(UndefinedMetricError, match="both classes, got 0 positives"):
        bootstrap(rank(np.arange(5.0), np.zeros(5, bool)), roc_auc, resamples=10)


@pytest.mark.parametrize(
    ("kwargs", "msg"),
    [
        ({"resamples": 1}, "resamples must be an integer >= 2"),
        ({"resamples": 10.0}, "resamples"),
        ({"seed": -1}, "seed must be a non-negative integer"),
        ({"confidence": 0.0}, "confidence"),
        ({"chunk_size": 0}, "chunk_size"),
    ],
)
def test_bad_options(kwargs: dict, msg: str) -> None:
    s1, _, y = _data(20)
    with pytest.raises(ValueError, match=msg):
        bootstrap(rank(s1, y), roc_auc, **kwargs)


def test_paired_mismatched_labels() -> None:
    s1, s2, y = _data(21)
    y2 = y.copy()
    y2[[7, 8]] = ~y2[[7, 8]]
    with pytest.raises(UndefinedMetricError, match="2 examples are labelled differently"):
        paired_bootstrap(rank(s1, y), rank(s2, y2), roc_auc, resamples=10)


def test_bad_interval_method() -> None:
    s1, _, y = _data(22)
    res = bootstrap(rank(s1, y), roc_auc, resamples=10)
    with pytest.raises(ValueError, match="method"):
        res.interval(method="basic")  # type: ignore[arg-type]
