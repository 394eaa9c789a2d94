"""Coverage of the 95 % AUC intervals on the binormal model, whose true AUC is known.

Binormal model (REFERENCES.md section 6): negatives N(0, 1), positives N(mu, sigma^2), with
a = mu / sigma and b = 1 / sigma the true AUC is Phi(a / sqrt(1 + b^2)); for a = b = 1 it is
0.7602499389 (checked there by numerical integration). Each repetition draws a fresh evaluation
set with fixed class counts (prevalence * n positives) and asks whether the interval covers the
true AUC. Monte Carlo error of an observed coverage over R repetitions: sqrt(p (1 - p) / R).

The long grid is marked slow (run with ``python -m pytest -m slow tests/simulation``).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from gate.ranking import rank, roc_auc
from gate.stats import bootstrap, delong

A, B = 1.0, 1.0
TRUE_AUC = 0.7602499389  # REFERENCES.md section 6, a = 1, b = 1
NOMINAL = 0.95


def _sample(rng: np.random.Generator, n: int, prevalence: float) -> tuple[np.ndarray, np.ndarray]:
    m = int(round(prevalence * n))
    sigma = 1.0 / B
    mu = A * sigma
    s = np.concatenate([rng.normal(mu, sigma, m), rng.normal(0.0, 1.0, n - m)])
    y = np.concatenate([np.ones(m, bool), np.zeros(n - m, bool)])
    return s, y


def _mc_se(reps: int, p: float = NOMINAL) -> float:
    return math.sqrt(p * (1.0 - p) / reps)


def test_true_auc_formula() -> None:
    # Phi(a / sqrt(1 + b^2)) for a = b = 1 (REFERENCES.md section 6: 0.7602499389, 10 dp).
    from scipy.stats import norm

    assert norm.cdf(A / math.sqrt(1 + B * B)) == pytest.approx(TRUE_AUC, abs=5e-11)


def test_delong_coverage_n2000_balanced() -> None:
    # The modest, always-run check: 400 repetitions, tolerance 3 Monte Carlo standard errors
    # (0.033) around the nominal 95 %.
    reps = 400
    rng = np.random.default_rng(2024)
    hits = 0
    for _ in range(reps):
        s, y = _sample(rng, 2000, 0.5)
        hits += delong(rank(s, y)).interval(confidence=NOMINAL).contains(TRUE_AUC)
    coverage = hits / reps
    assert abs(coverage - NOMINAL) <= 3 * _mc_se(reps), coverage


# --- the long grid ------------------------------------------------------------------------------
# Measured with the seeds below (recorded so that a change is visible), 95 % intervals:
#   n, prevalence     DeLong auc  DeLong logit   bootstrap percentile   bootstrap BCa
#   200, 5 %           0.897       0.925          0.890                  0.909
#   200, 50 %          0.946       0.953          0.946                  0.949
#   2000, 5 %          0.947       0.954          0.945                  0.943
#   2000, 50 %         0.947       0.946          0.940                  0.942
# (DeLong over 4000 repetitions, MC standard error 0.0034; bootstrap over 1000 with 1000
# resamples each, MC standard error 0.0069.)
# n = 200 at 5 % prevalence has only 10 positives, and every interval undercovers there: the
# normal approximation (and the bootstrap's resampling of 10 positives) is not good enough at
# that size. The logit scale and BCa help but stay below 93 %. Those cells are strict xfails:
# we report the shortfall rather than widen the 93-97 % band.
SMALL_RARE_REASON = "10 positives (n=200, 5 %): coverage measured below 93 %, see the comment above"

GRID = [
    pytest.param(200, 0.05, marks=pytest.mark.xfail(reason=SMALL_RARE_REASON, strict=True)),
    (200, 0.5),
    (2000, 0.05),
    (2000, 0.5),
]


@pytest.mark.slow
@pytest.mark.parametrize("scale", ["auc", "logit"])
@pytest.mark.parametrize(("n", "prevalence"), GRID)
def test_delong_coverage_grid(n: int, prevalence: float, scale: str) -> None:
    reps = 4000  # MC standard error 0.0034: the 93-97 % band is about +/-6 of them
    rng = np.random.default_rng([n, int(prevalence * 100), 1])
    hits = 0
    for _ in range(reps):
        s, y = _sample(rng, n, prevalence)
        hits += delong(rank(s, y)).interval(confidence=NOMINAL, scale=scale).contains(TRUE_AUC)  # type: ignore[arg-type]
    coverage = hits / reps
    assert 0.93 <= coverage <= 0.97, coverage


@pytest.mark.slow
@pytest.mark.parametrize("method", ["percentile", "bca"])
@pytest.mark.parametrize(("n", "prevalence"), GRID)
def test_bootstrap_coverage_grid(n: int, prevalence: float, method: str) -> None:
    reps = 1000  # MC standard error 0.0069: the band is about +/-2.9 of them
    resamples = 1000
    rng = np.random.default_rng([n, int(prevalence * 100), 2])
    hits = 0
    for i in range(reps):
        s, y = _sample(rng, n, prevalence)
        res = bootstrap(rank(s, y), roc_auc, resamples=resamples, seed=i, confidence=NOMINAL)
        hits += res.interval(method=method).contains(TRUE_AUC)  # type: ignore[arg-type]
    coverage = hits / reps
    assert 0.93 <= coverage <= 0.97, coverage


@pytest.mark.slow
def test_bootstrap_se_matches_delong_se_on_average() -> None:
    # Both estimate the same sampling SD; averaged over repetitions they agree to a few percent
    # (common practice expectation for large samples), and both are near the Monte Carlo SD of
    # the AUC itself.
    rng = np.random.default_rng(77)
    boot_se, delong_se, aucs = [], [], []
    for i in range(200):
        s, y = _sample(rng, 2000, 0.5)
        r = rank(s, y)
        est = delong(r)
        aucs.append(est.value)
        delong_se.append(est.se)
        boot_se.append(bootstrap(r, roc_auc, resamples=500, seed=i).se)
    sd = float(np.std(aucs, ddof=1))  # MC error of an SD from 200 draws: about 5 %
    assert np.mean(boot_se) == pytest.approx(np.mean(delong_se), rel=0.03)
    assert np.mean(delong_se) == pytest.approx(sd, rel=0.15)
