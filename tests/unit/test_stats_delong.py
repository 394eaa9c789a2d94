"""gate.stats.delong: DeLong variance (single, paired) from tie blocks vs the O(m n) definitions."""

from __future__ import annotations

import math

import numpy as np
import pytest

from gate.errors import UndefinedMetricError
from gate.ranking import rank, roc_auc
from gate.stats import AucEstimate, PairedAuc, delong, paired_delong
from tests.oracles_delong import delong_oracle

RNG_SEEDS = [0, 1, 2, 3, 4, 5, 6, 7]


def _tied_data(seed: int, n: int = 60) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Two correlated models on coarse integer scores (many ties, within and across classes)."""
    rng = np.random.default_rng(seed)
    y = rng.random(n) < 0.4
    y[:2] = True
    y[2:4] = False
    base = rng.normal(size=n) + 0.8 * y
    s1 = np.round(base * 2.0)
    s2 = np.round((0.7 * base + 0.7 * rng.normal(size=n)) * 1.5)
    return s1, s2, y


# --- single AUC -------------------------------------------------------------------------------


@pytest.mark.parametrize("seed", RNG_SEEDS)
def test_variance_equals_pairwise_definition_with_ties(seed: int) -> None:
    # Oracle: the 1988 definitions computed over the full pair matrix (tests/oracles_delong.py).
    s1, _, y = _tied_data(seed)
    theta, cov = delong_oracle([s1], y)
    est = delong(rank(s1, y))
    assert est.value == pytest.approx(theta[0], abs=1e-14)
    assert est.variance == pytest.approx(cov[0, 0], rel=1e-12, abs=1e-16)
    assert est.n_pos == int(y.sum()) and est.n_neg == int((~y).sum())


def test_value_equals_ranking_auc_continuous_scores() -> None:
    rng = np.random.default_rng(11)
    y = rng.random(500) < 0.3
    s = rng.normal(size=500) + y
    r = rank(s, y)
    theta, cov = delong_oracle([s], y)
    est = delong(r)
    assert est.value == pytest.approx(roc_auc(r.blocks()), abs=1e-15)
    assert est.variance == pytest.approx(cov[0, 0], rel=1e-12)


def test_hand_worked_example() -> None:
    # Positives 0.9, 0.4; negatives 0.6, 0.1. Placements of positives 1, 1/2; of negatives 1/2, 1.
    # AUC 3/4; S10 = S01 = ((1/4)^2 * 2) / 1 = 1/8; var = 1/8/2 + 1/8/2 = 1/8.
    est = delong(rank(np.array([0.9, 0.4, 0.6, 0.1]), np.array([True, True, False, False])))
    assert est.value == 0.75
    assert est.variance == 0.125
    assert est.se == math.sqrt(0.125)


def test_all_tied_scores_give_half_and_zero_variance() -> None:
    est = delong(rank(np.full(6, 0.3), np.array([1, 0, 1, 0, 1, 0], dtype=bool)))
    assert est.value == 0.5
    assert est.variance == 0.0
    iv = est.interval()
    assert (iv.low, iv.high) == (0.5, 0.5)


def test_perfect_separation_degenerate_interval_both_scales() -> None:
    est = delong(rank(np.array([4.0, 3.0, 2.0, 1.0]), np.array([True, True, False, False])))
    assert est.value == 1.0 and est.variance == 0.0
    assert est.interval().as_list() == [1.0, 1.0]
    assert est.interval(scale="logit").as_list() == [1.0, 1.0]


def test_auc_scale_interval_is_clipped_at_one() -> None:
    est = AucEstimate(value=0.98, variance=0.02**2, n_pos=10, n_neg=10)
    iv = est.interval()
    assert iv.high == 1.0  # 0.98 + 1.96 * 0.02 = 1.019 before clipping
    assert iv.low == pytest.approx(0.98 - 1.959963984540054 * 0.02)
    assert iv.method == "delong"


def test_logit_interval_stays_inside_and_is_asymmetric() -> None:
    est = AucEstimate(value=0.98, variance=0.02**2, n_pos=10, n_neg=10)
    iv = est.interval(scale="logit")
    assert 0.0 < iv.low < 0.98 < iv.high < 1.0
    assert (0.98 - iv.low) > (iv.high - 0.98)
    assert iv.method == "delong-logit"
    # delta method: logit(0.98) +/- z * se / (A (1 - A)), mapped back
    c = math.log(0.98 / 0.02)
    h = 1.959963984540054 * 0.02 / (0.98 * 0.02)
    assert iv.low == pytest.approx(1 / (1 + math.exp(-(c - h))), rel=1e-12)
    assert iv.high == pytest.approx(1 / (1 + math.exp(-(c + h))), rel=1e-12)


def test_interval_confidence_and_bad_arguments() -> None:
    est = AucEstimate(value=0.7, variance=0.001, n_pos=50, n_neg=50)
    assert est.interval(confidence=0.9).confidence == 0.9
    assert est.interval(confidence=0.99).half_width > est.interval(confidence=0.9).half_width
    with pytest.raises(ValueError, match="confidence"):
        est.interval(confidence=1.0)
    with pytest.raises(ValueError, match="scale"):
        est.interval(scale="probit")  # type: ignore[arg-type]


@pytest.mark.parametrize(
    ("labels", "msg"),
    [
        ([True, False, False, False], "at least 2 positives and 2 negatives, got 1 positives and 3 negatives"),
        ([True, True, True, False], "got 3 positives and 1 negatives"),
    ],
)
def test_too_few_of_a_class_is_an_error(labels: list[bool], msg: str) -> None:
    with pytest.raises(UndefinedMetricError, match=msg):
        delong(rank(np.array([0.1, 0.2, 0.3, 0.4]), np.array(labels)))


def test_unequal_weights_are_refused_constant_weights_accepted() -> None:
    s = np.array([0.9, 0.4, 0.6, 0.1])
    y = np.array([True, True, False, False])
    with pytest.raises(UndefinedMetricError, match="unequal example weights.*bootstrap"):
        delong(rank(s, y, np.array([1.0, 2.0, 1.0, 1.0])))
    assert delong(rank(s, y, np.full(4, 3.0))) == delong(rank(s, y))


def test_one_sided_p_values_single() -> None:
    est = AucEstimate(value=0.80, variance=0.02**2, n_pos=100, n_neg=100)
    # z = (0.80 - 0.75) / 0.02 = 2.5; Phi(-2.5) = 0.006209665325776132 (scipy.stats.norm.sf(2.5))
    assert est.p_value_above(0.75) == pytest.approx(0.006209665325776132, rel=1e-12)
    assert est.p_value_below(0.75) == pytest.approx(1 - 0.006209665325776132, rel=1e-12)


# --- paired -----------------------------------------------------------------------------------


@pytest.mark.parametrize("seed", RNG_SEEDS)
def test_paired_covariance_equals_pairwise_definition(seed: int) -> None:
    # Oracle: the 1988 covariance matrix over the full pair matrices (tests/oracles_delong.py).
    s1, s2, y = _tied_data(seed)
    theta, cov = delong_oracle([s1, s2], y)
    res = paired_delong(rank(s1, y), rank(s2, y))
    assert res.auc_a == pytest.approx(theta[0], abs=1e-14)
    assert res.auc_b == pytest.approx(theta[1], abs=1e-14)
    assert res.var_a == pytest.approx(cov[0, 0], rel=1e-12)
    assert res.var_b == pytest.approx(cov[1, 1], rel=1e-12)
    assert res.cov == pytest.approx(cov[0, 1], rel=1e-10, abs=1e-16)
    var_d = cov[0, 0] + cov[1, 1] - 2 * cov[0, 1]
    assert res.se == pytest.approx(math.sqrt(var_d), rel=1e-10)
    assert res.delta == pytest.approx(theta[0] - theta[1], abs=1e-14)
    assert res.z == pytest.approx((theta[0] - theta[1]) / math.sqrt(var_d), rel=1e-10)
    # two-sided p = 2 (1 - Phi(|z|)) (REFERENCES.md section 2)
    from scipy.stats import norm

    assert res.p_value == pytest.approx(2 * norm.sf(abs(res.z)), rel=1e-10)


def test_paired_strongly_correlated_uses_minus_two_covariance() -> None:
    # Two models that nearly agree: the difference is far more precise than either AUC.
    # With +2 S12 (the pitfall in REFERENCES.md section 2) se would be about 2 * se_a.
    rng = np.random.default_rng(5)
    n = 400
    y = rng.random(n) < 0.5
    base = rng.normal(size=n) + y
    s1 = base + 0.05 * rng.normal(size=n)
    s2 = base + 0.05 * rng.normal(size=n)
    theta, cov = delong_oracle([s1, s2], y)
    res = paired_delong(rank(s1, y), rank(s2, y))
    assert res.correlation > 0.95
    right = math.sqrt(cov[0, 0] + cov[1, 1] - 2 * cov[0, 1])
    wrong = math.sqrt(cov[0, 0] + cov[1, 1] + 2 * cov[0, 1])
    assert res.se == pytest.approx(right, rel=1e-10)
    assert res.se < 0.25 * math.sqrt(res.var_a)
    assert wrong > 1.9 * math.sqrt(res.var_a)
    iv = res.delta_interval()
    assert iv.half_width == pytest.approx(1.959963984540054 * right, rel=1e-10)


def test_paired_identical_models() -> None:
    s1, _, y = _tied_data(3)
    r = rank(s1, y)
    res = paired_delong(r, r)
    assert (res.delta, res.se, res.z, res.p_value) == (0.0, 0.0, 0.0, 1.0)
    assert res.cov == pytest.approx(res.var_a, rel=1e-12)
    assert res.delta_interval().as_list() == [0.0, 0.0]


def test_paired_zero_se_nonzero_delta_gives_infinite_z() -> None:
    # a separates perfectly (all placements 1); b ties everything (all placements 1/2):
    # the placement differences are constant, so se = 0 while delta = 1/2.
    y = np.array([True, True, False, False])
    res = paired_delong(rank(np.array([4.0, 3.0, 2.0, 1.0]), y), rank(np.zeros(4), y))
    assert res.delta == 0.5 and res.se == 0.0
    assert res.z == math.inf and res.p_value == 0.0


def test_paired_swap_negates_delta() -> None:
    s1, s2, y = _tied_data(6)
    ab = paired_delong(rank(s1, y), rank(s2, y))
    ba = paired_delong(rank(s2, y), rank(s1, y))
    assert ba.delta == pytest.approx(-ab.delta, abs=1e-15)
    assert ba.se == pytest.approx(ab.se, rel=1e-12)
    assert ba.p_value == pytest.approx(ab.p_value, rel=1e-10)


def test_paired_one_sided_p_values() -> None:
    res = PairedAuc(
        auc_a=0.80, auc_b=0.81, var_a=1e-4, var_b=1e-4, cov=0.5e-4, delta=-0.01, se=0.01, z=-1.0,
        p_value=0.3173105078629141, n_pos=100, n_neg=100,
    )
    # margin 0.005: (delta + margin) / se = -0.5; Phi(-0.5) = 0.3085375387259869 (scipy.stats.norm.cdf)
    assert res.p_value_below(0.005) == pytest.approx(0.3085375387259869, rel=1e-12)
    assert res.p_value_above(0.005) == pytest.approx(1 - 0.3085375387259869, rel=1e-12)
    # margin 0.03: (delta + margin) / se = 2; Phi(-2) = 0.022750131948179195
    assert res.p_value_above(0.03) == pytest.approx(0.022750131948179195, rel=1e-12)
    with pytest.raises(ValueError, match="margin"):
        res.p_value_below(float("nan"))


def test_paired_delta_interval_clipped() -> None:
    res = PairedAuc(0.99, 0.02, 0, 0, 0, 0.97, 0.05, 19.4, 0.0, 10, 10)
    assert res.delta_interval().high == 1.0


def test_paired_label_mismatch_and_size_mismatch() -> None:
    s1, s2, y = _tied_data(2)
    y2 = y.copy()
    y2[10] = not y2[10]
    with pytest.raises(UndefinedMetricError, match="1 examples are labelled differently"):
        paired_delong(rank(s1, y), rank(s2, y2))
    with pytest.raises(UndefinedMetricError, match="60 and 59 examples"):
        paired_delong(rank(s1, y), rank(s2[:-1], y[:-1]))


def test_paired_depends_on_example_alignment_not_on_sort_order() -> None:
    # Shuffling the examples of both tables the same way changes nothing.
    s1, s2, y = _tied_data(4)
    perm = np.random.default_rng(9).permutation(y.size)
    r1 = paired_delong(rank(s1, y), rank(s2, y))
    r2 = paired_delong(rank(s1[perm], y[perm]), rank(s2[perm], y[perm]))
    assert r2.delta == pytest.approx(r1.delta, abs=1e-15)
    assert r2.se == pytest.approx(r1.se, rel=1e-12)
    assert r2.cov == pytest.approx(r1.cov, rel=1e-12)
