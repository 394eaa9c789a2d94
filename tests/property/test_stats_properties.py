"""Property tests of gate.stats (hypothesis): invariances of DeLong, interval sanity, Holm, NP."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from gate.ranking import rank, roc_auc
from gate.stats import (
    bootstrap,
    clopper_pearson_interval,
    delong,
    holm,
    np_threshold,
    paired_bootstrap,
    paired_delong,
    wilson_interval,
)
from tests.oracles_delong import delong_oracle

SETTINGS = settings(max_examples=60, deadline=None)


@st.composite
def labelled_scores(draw: st.DrawFn, min_size: int = 4, max_size: int = 40) -> tuple[np.ndarray, np.ndarray]:
    """Small integer scores (so ties are common) with at least 2 of each class."""
    n = draw(st.integers(min_size, max_size))
    scores = np.array(draw(st.lists(st.integers(-6, 6), min_size=n, max_size=n)), dtype=float)
    labels = np.array(draw(st.lists(st.booleans(), min_size=n, max_size=n)))
    assume(labels.sum() >= 2 and (~labels).sum() >= 2)
    return scores, labels


@st.composite
def paired_scores(draw: st.DrawFn) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    s1, y = draw(labelled_scores())
    s2 = np.array(draw(st.lists(st.integers(-6, 6), min_size=y.size, max_size=y.size)), dtype=float)
    return s1, s2, y


@SETTINGS
@given(labelled_scores())
def test_delong_equals_pairwise_oracle(data: tuple[np.ndarray, np.ndarray]) -> None:
    s, y = data
    theta, cov = delong_oracle([s], y)
    est = delong(rank(s, y))
    assert est.value == pytest.approx(theta[0], abs=1e-13)
    assert est.variance == pytest.approx(cov[0, 0], rel=1e-9, abs=1e-15)


@SETTINGS
@given(labelled_scores(), st.sampled_from(["affine", "cube", "exp"]))
def test_delong_invariant_under_monotone_transform(data: tuple[np.ndarray, np.ndarray], kind: str) -> None:
    s, y = data
    t = {"affine": 3.0 * s + 7.0, "cube": s**3, "exp": np.exp(s)}[kind]  # strictly increasing on these ints
    a, b = delong(rank(s, y)), delong(rank(t, y))
    assert b.value == pytest.approx(a.value, abs=1e-14)
    assert b.variance == pytest.approx(a.variance, rel=1e-12, abs=1e-16)


@SETTINGS
@given(labelled_scores())
def test_delong_negated_scores_complement(data: tuple[np.ndarray, np.ndarray]) -> None:
    s, y = data
    a, b = delong(rank(s, y)), delong(rank(-s, y))
    assert b.value == pytest.approx(1.0 - a.value, abs=1e-14)
    assert b.variance == pytest.approx(a.variance, rel=1e-12, abs=1e-16)


@SETTINGS
@given(labelled_scores(), st.randoms(use_true_random=False))
def test_delong_order_invariant(data: tuple[np.ndarray, np.ndarray], rnd) -> None:  # type: ignore[no-untyped-def]
    s, y = data
    perm = np.array(rnd.sample(range(s.size), s.size))
    a, b = delong(rank(s, y)), delong(rank(s[perm], y[perm]))
    assert b.value == pytest.approx(a.value, abs=1e-15)
    assert b.variance == pytest.approx(a.variance, rel=1e-12, abs=1e-16)


@SETTINGS
@given(labelled_scores())
def test_all_scores_tied_gives_half(data: tuple[np.ndarray, np.ndarray]) -> None:
    _, y = data
    est = delong(rank(np.zeros(y.size), y))
    assert est.value == 0.5 and est.variance == 0.0


@SETTINGS
@given(labelled_scores(), st.sampled_from([0.8, 0.9, 0.95, 0.99]), st.sampled_from(["auc", "logit"]))
def test_auc_interval_contains_estimate_inside_unit(
    data: tuple[np.ndarray, np.ndarray], confidence: float, scale: str
) -> None:
    s, y = data
    est = delong(rank(s, y))
    iv = est.interval(confidence=confidence, scale=scale)  # type: ignore[arg-type]
    assert 0.0 <= iv.low <= est.value <= iv.high <= 1.0


@SETTINGS
@given(paired_scores())
def test_paired_delong_oracle_and_antisymmetry(data: tuple[np.ndarray, np.ndarray, np.ndarray]) -> None:
    s1, s2, y = data
    theta, cov = delong_oracle([s1, s2], y)
    ab = paired_delong(rank(s1, y), rank(s2, y))
    ba = paired_delong(rank(s2, y), rank(s1, y))
    assert ab.cov == pytest.approx(cov[0, 1], rel=1e-9, abs=1e-15)
    var_d = max(cov[0, 0] + cov[1, 1] - 2 * cov[0, 1], 0.0)
    assert ab.se == pytest.approx(math.sqrt(var_d), rel=1e-7, abs=1e-9)
    assert ba.delta == pytest.approx(-ab.delta, abs=1e-14)
    assert ba.se == pytest.approx(ab.se, rel=1e-12, abs=1e-15)
    assert 0.0 <= ab.p_value <= 1.0
    iv = ab.delta_interval()
    assert -1.0 <= iv.low <= ab.delta <= iv.high <= 1.0
    # the two one-sided p-values at the same margin add to 1 (continuous normal approximation)
    if ab.se > 0:
        assert ab.p_value_below(0.02) + ab.p_value_above(0.02) == pytest.approx(1.0, abs=1e-12)


@settings(max_examples=25, deadline=None)
@given(paired_scores(), st.integers(1, 40), st.integers(0, 2**31))
def test_bootstrap_chunk_invariance_and_range(
    data: tuple[np.ndarray, np.ndarray, np.ndarray], chunk: int, seed: int
) -> None:
    s1, s2, y = data
    a, b = rank(s1, y), rank(s2, y)
    ref = paired_bootstrap(a, b, roc_auc, resamples=40, seed=seed)
    got = paired_bootstrap(a, b, roc_auc, resamples=40, seed=seed, chunk_size=chunk)
    np.testing.assert_array_equal(ref.replicates_a, got.replicates_a)
    np.testing.assert_array_equal(ref.replicates_b, got.replicates_b)
    assert np.all((ref.replicates_a >= 0) & (ref.replicates_a <= 1))
    iv = bootstrap(a, roc_auc, resamples=40, seed=seed).interval()
    assert 0.0 <= iv.low <= iv.high <= 1.0


@SETTINGS
@given(st.integers(1, 500).flatmap(lambda n: st.tuples(st.integers(0, n), st.just(n))), st.sampled_from([0.8, 0.95, 0.999]))
def test_proportion_intervals_contain_estimate(kn: tuple[int, int], confidence: float) -> None:
    k, n = kn
    for iv in (wilson_interval(k, n, confidence=confidence), clopper_pearson_interval(k, n, confidence=confidence)):
        assert 0.0 <= iv.low <= k / n <= iv.high <= 1.0
    # At k = 0 both have closed forms: Wilson high = z^2 / (n + z^2); Clopper-Pearson high =
    # 1 - (a/2)^(1/n), the Beta(1 - a/2; 1, n) quantile (Clopper & Pearson 1934).
    if k == 0:
        from scipy.special import ndtri

        z = ndtri(0.5 + confidence / 2)
        assert wilson_interval(0, n, confidence=confidence).high == pytest.approx(z * z / (n + z * z), rel=1e-12)
        a = 1 - confidence
        assert clopper_pearson_interval(0, n, confidence=confidence).high == pytest.approx(
            1 - (a / 2) ** (1 / n), rel=1e-10
        )


@SETTINGS
@given(st.lists(st.floats(0.0, 1.0), min_size=1, max_size=30))
def test_holm_properties(p: list[float]) -> None:
    raw = np.array(p)
    adj = holm(raw)
    assert np.all(adj >= raw - 1e-15) and np.all(adj <= 1.0)
    order = np.argsort(raw, kind="stable")
    assert np.all(np.diff(adj[order]) >= 0)  # monotone in the raw p-values
    assert np.all(adj <= np.minimum(1.0, raw.size * raw) + 1e-15)  # never above Bonferroni


@SETTINGS
@given(
    st.integers(30, 3000),
    st.sampled_from([0.01, 0.05, 0.1, 0.2]),
    st.sampled_from([0.01, 0.05, 0.1, 0.3]),
)
def test_np_rank_is_minimal(n: int, alpha: float, delta: float) -> None:
    from scipy.stats import binom

    from gate.errors import UndefinedMetricError

    scores = np.arange(float(n))
    try:
        t = np_threshold(scores, alpha=alpha, delta=delta)
    except UndefinedMetricError:
        assert (1 - alpha) ** n > delta * (1 - 1e-12)
        return
    assert t.violation_bound <= delta
    assert t.rank == 1 or binom.sf(t.rank - 2, n, 1 - alpha) > delta
