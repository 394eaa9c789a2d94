"""gate.stats.neyman_pearson: order-statistic threshold, minimum sample size, ties."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.stats import binom

from gate.errors import UndefinedMetricError
from gate.stats import min_negatives, np_threshold


def test_min_negatives_matches_log_formula() -> None:
    # (1 - alpha)^n <= delta  <=>  n >= ln(delta) / ln(1 - alpha)  (Tong, Feng & Li 2018)
    for alpha, delta in [(0.05, 0.05), (0.1, 0.05), (0.01, 0.01), (0.2, 0.3), (0.001, 0.05)]:
        n = min_negatives(alpha, delta)
        assert (1 - alpha) ** n <= delta * (1 + 1e-12)
        assert (1 - alpha) ** (n - 1) > delta
        assert n == math.ceil(math.log(delta) / math.log(1 - alpha))


def test_rank_is_smallest_with_bound_at_most_delta() -> None:
    # Reference: the binomial tail v(k) = P(Bin(n, 1 - alpha) >= k) from scipy.stats.binom.
    rng = np.random.default_rng(0)
    for n, alpha, delta in [(80, 0.05, 0.05), (333, 0.1, 0.2), (1234, 0.01, 0.05)]:
        t = np_threshold(rng.normal(size=n), alpha=alpha, delta=delta)
        k = t.rank
        assert binom.sf(k - 1, n, 1 - alpha) <= delta
        assert binom.sf(k - 2, n, 1 - alpha) > delta
        assert t.violation_bound == pytest.approx(binom.sf(k - 1, n, 1 - alpha), rel=1e-12)
        assert t.rank_from_top == n - k + 1
        assert t.n_negatives == n


def test_threshold_is_the_kth_smallest_and_flags_strictly_above() -> None:
    s = np.random.default_rng(1).permutation(np.arange(100.0))
    t = np_threshold(s, alpha=0.05, delta=0.05)
    assert t.rank == 99 and t.threshold == 98.0  # REFERENCES.md section 5: n=100 -> k*=99
    assert t.flags(s).sum() == 1
    assert t.empirical_fpr == 0.01
    assert not t.flags([98.0])[0] and t.flags([98.5])[0]
    assert t.ge_threshold > 98.0 and np.nextafter(t.ge_threshold, -np.inf) == 98.0


def test_ties_at_the_threshold_are_not_flagged() -> None:
    # 200 negatives where the top 10 share one score: k* = 196 lands inside the tied block, and
    # none of the tied negatives are flagged (empirical FPR 0 rather than 4/200).
    s = np.concatenate([np.arange(190.0), np.full(10, 500.0)])
    t = np_threshold(s, alpha=0.05, delta=0.05)
    assert t.rank == 196 and t.threshold == 500.0
    assert t.empirical_fpr == 0.0
    assert t.flags(s).sum() == 0


def test_too_few_negatives_names_the_minimum() -> None:
    with pytest.raises(UndefinedMetricError, match="needs at least 59 negatives, got 58"):
        np_threshold(np.arange(58.0), alpha=0.05, delta=0.05)
    with pytest.raises(UndefinedMetricError, match="needs at least 299 negatives, got 0"):
        np_threshold([], alpha=0.01, delta=0.05)


@pytest.mark.parametrize(("alpha", "delta", "msg"), [(0.0, 0.05, "alpha"), (0.05, 1.0, "delta"), (math.nan, 0.1, "alpha")])
def test_bad_arguments(alpha: float, delta: float, msg: str) -> None:
    with pytest.raises(ValueError, match=msg):
        np_threshold(np.arange(100.0), alpha=alpha, delta=delta)
    with pytest.raises(ValueError, match=msg):
        min_negatives(alpha, delta)


def test_non_finite_scores_rejected() -> None:
    s = np.arange(100.0)
    s[3] = np.inf
    with pytest.raises(ValueError, match="finite"):
        np_threshold(s, alpha=0.05, delta=0.05)
