"""Small shared helpers for the statistics modules: argument checks and normal quantiles.

Private: public functions validate their arguments once with these and name the parameter.
The normal distribution comes from the standard library, so that a CLI run need not import scipy.
"""

from __future__ import annotations

import math

import numpy as np

from gate.errors import UndefinedMetricError
from gate.ranking import Ranking


def check_probability(value: float, *, name: str) -> float:
    """Return ``value`` as a float, or raise ValueError unless 0 < value < 1."""
    v = float(value)
    if not (math.isfinite(v) and 0.0 < v < 1.0):
        raise ValueError(f"{name} must be strictly between 0 and 1, got {value!r}")
    return v


def check_confidence(confidence: float, *, name: str = "confidence") -> float:
    """Return ``confidence`` as a float, or raise ValueError unless 0 < confidence < 1."""
    return check_probability(confidence, name=name)


def check_finite(value: float, *, name: str) -> float:
    v = float(value)
    if not math.isfinite(v):
        raise ValueError(f"{name} must be a finite number, got {value!r}")
    return v


def z_two_sided(confidence: float) -> float:
    """The standard normal quantile Phi^-1((1 + confidence) / 2), e.g. 1.959963984540054 at 0.95."""
    return norm_ppf(0.5 + confidence / 2.0)


def norm_cdf(x: float) -> float:
    """Standard normal CDF, accurate in both tails (erfc), infinities allowed.

    The standard library rather than scipy.special: importing scipy costs a CLI run about 0.2 s.
    """
    if math.isnan(x):
        return math.nan
    return 0.5 * math.erfc(-x / math.sqrt(2.0))


def norm_ppf(p: float) -> float:
    """Standard normal quantile (statistics.NormalDist: Wichura's AS241, about 1e-16 relative)."""
    from statistics import NormalDist

    if p <= 0.0:
        return -math.inf if p == 0.0 else math.nan
    if p >= 1.0:
        return math.inf if p == 1.0 else math.nan
    return NormalDist().inv_cdf(p)


def check_same_examples(a: Ranking, b: Ranking) -> None:
    """Raise UndefinedMetricError unless two rankings cover the same examples with the same labels.

    The examples are matched by position in the original order (the caller aligned the tables).
    """
    if a.n != b.n:
        raise UndefinedMetricError(
            f"paired comparison needs the same examples: the rankings have {a.n} and {b.n} examples"
        )
    labels_b = np.empty(b.n, dtype=bool)
    labels_b[b.order] = b.labels_sorted
    mismatch = int(np.count_nonzero(labels_b[a.order] != a.labels_sorted))
    if mismatch:
        raise UndefinedMetricError(
            f"paired comparison needs the same labels: {mismatch} examples are labelled differently "
            "in the two rankings"
        )
