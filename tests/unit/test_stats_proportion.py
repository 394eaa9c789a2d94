"""gate.stats.proportion: Wilson and Clopper-Pearson intervals, edge cases and argument checks."""

from __future__ import annotations

import math

import numpy as np
import pytest

from gate.errors import UndefinedMetricError
from gate.stats import clopper_pearson_interval, proportion_interval, wilson_interval


def test_wilson_closed_form_hand_check() -> None:
    # Wilson (1927) centre (p + z^2/2n)/(1 + z^2/n), half-width z sqrt(p(1-p)/n + z^2/4n^2)/(1 + z^2/n).
    z = 1.959963984540054
    k, n = 45, 50
    p = k / n
    centre = (p + z * z / (2 * n)) / (1 + z * z / n)
    half = z * math.sqrt(p * (1 - p) / n + z * z / (4 * n * n)) / (1 + z * z / n)
    iv = wilson_interval(k, n)
    assert iv.low == pytest.approx(centre - half, rel=1e-14)
    assert iv.high == pytest.approx(centre + half, rel=1e-14)
    assert iv.method == "wilson" and iv.confidence == 0.95


@pytest.mark.parametrize("fn", [wilson_interval, clopper_pearson_interval])
def test_ends_exact_at_zero_and_all(fn) -> None:  # type: ignore[no-untyped-def]
    assert fn(0, 17).low == 0.0
    assert fn(17, 17).high == 1.0
    assert 0.0 < fn(1, 17).low < fn(1, 17).high < 1.0


@pytest.mark.parametrize("fn", [wilson_interval, clopper_pearson_interval])
def test_wider_at_higher_confidence_and_contains_estimate(fn) -> None:  # type: ignore[no-untyped-def]
    for k, n in [(0, 5), (3, 5), (7, 300), (150, 300), (299, 300)]:
        a = fn(k, n, confidence=0.9)
        b = fn(k, n, confidence=0.99)
        assert b.low <= a.low <= k / n <= a.high <= b.high


def test_clopper_pearson_wider_than_wilson_for_small_counts() -> None:
    for k, n in [(1, 29), (5, 25), (7, 300)]:
        w, c = wilson_interval(k, n), clopper_pearson_interval(k, n)
        assert c.high - c.low > w.high - w.low


def test_proportion_interval_dispatch() -> None:
    assert proportion_interval(5, 25) == wilson_interval(5, 25)
    assert proportion_interval(5, 25, method="clopper-pearson") == clopper_pearson_interval(5, 25)
    with pytest.raises(ValueError, match="method must be 'wilson' or 'clopper-pearson'"):
        proportion_interval(5, 25, method="wald")  # type: ignore[arg-type]


def test_integer_valued_floats_and_numpy_ints_accepted() -> None:
    assert wilson_interval(np.int64(5), 25.0) == wilson_interval(5, 25)


def test_zero_trials_is_undefined() -> None:
    with pytest.raises(UndefinedMetricError, match="0 trials"):
        wilson_interval(0, 0)
    with pytest.raises(UndefinedMetricError, match="0 trials"):
        clopper_pearson_interval(0, 0)


@pytest.mark.parametrize(
    ("k", "n", "msg"),
    [
        (6, 5, "k must not exceed n"),
        (-1, 5, "k must be a non-negative whole number"),
        (2.5, 5, "k must be a non-negative whole number"),
        (1, float("nan"), "n must be a non-negative whole number"),
        (True, 5, "k must be"),
    ],
)
def test_bad_counts(k: object, n: object, msg: str) -> None:
    with pytest.raises(ValueError, match=msg):
        wilson_interval(k, n)  # type: ignore[arg-type]


def test_bad_confidence() -> None:
    with pytest.raises(ValueError, match="confidence must be strictly between 0 and 1"):
        clopper_pearson_interval(1, 2, confidence=1.5)
