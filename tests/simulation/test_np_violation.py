"""Neyman-Pearson threshold by simulation: P(true FPR > alpha) stays at most delta.

Tong, Feng & Li (2018): for continuous negatives the violation probability of t_(k*) is exactly
v(k*) = P(Binomial(n, 1 - alpha) >= k*) (REFERENCES.md section 5, which also reports a Monte Carlo
run of 0.0487 / 0.0378 / 0.0267 for n = 59 / 100 / 200). For tied (discrete) scores our strict
"score > t" rule keeps the bound, conservatively (gate/stats/neyman_pearson.py, Notes).
Tolerances: 3 Monte Carlo standard errors sqrt(v (1 - v) / R) above v(k*).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from gate.stats import np_threshold

ALPHA = DELTA = 0.05


def _violation_rate(rng: np.random.Generator, n: int, reps: int) -> tuple[float, float]:
    """Uniform(0, 1) negatives: the true FPR of the cut t (flag > t) is 1 - t."""
    bad = 0
    bound = math.nan
    for _ in range(reps):
        t = np_threshold(rng.random(n), alpha=ALPHA, delta=DELTA)
        bound = t.violation_bound
        bad += (1.0 - t.threshold) > ALPHA
    return bad / reps, bound


def test_violation_rate_continuous_n100() -> None:
    reps = 3000
    rate, bound = _violation_rate(np.random.default_rng(5), 100, reps)
    assert bound == pytest.approx(0.037081209327355064, rel=1e-12)  # REFERENCES.md section 5
    assert rate <= bound + 3 * math.sqrt(bound * (1 - bound) / reps)
    assert rate >= bound - 3 * math.sqrt(bound * (1 - bound) / reps)  # exact for continuous scores


def test_violation_rate_with_tied_scores_stays_below_delta() -> None:
    # Negatives on 30 distinct values with unequal probabilities (heavy ties). The true FPR of
    # "flag > t" is P(Y > t), computed exactly from the distribution.
    rng = np.random.default_rng(6)
    values = np.arange(30.0)
    probs = rng.dirichlet(np.ones(30))
    tail = 1.0 - np.cumsum(probs)  # P(Y > values[i])
    reps = 3000
    bad = 0
    bound = math.nan
    for _ in range(reps):
        neg = rng.choice(values, size=200, p=probs)
        t = np_threshold(neg, alpha=ALPHA, delta=DELTA)
        bound = t.violation_bound
        bad += tail[int(t.threshold)] > ALPHA
    rate = bad / reps
    assert rate <= bound + 3 * math.sqrt(bound * (1 - bound) / reps), (rate, bound)


@pytest.mark.slow
@pytest.mark.parametrize(("n", "expected"), [(59, 0.04849452524942311), (200, 0.026446800009119954), (1000, 0.043348190606909254)])
def test_violation_rate_continuous_grid(n: int, expected: float) -> None:
    reps = 20000
    rate, bound = _violation_rate(np.random.default_rng(n), n, reps)
    assert bound == pytest.approx(expected, rel=1e-12)  # REFERENCES.md section 5
    se = math.sqrt(bound * (1 - bound) / reps)
    assert abs(rate - bound) <= 3 * se, (rate, bound)
