"""Small shared helpers for the statistics modules: argument checks and normal quantiles.

Private: public functions validate their arguments once with these and name the parameter.
scipy.special is imported inside the functions so that importing gate stays fast.
"""

from __future__ import annotations

import math

import numpy as np

from gate.errors import UndefinedMetricError
from gate.ranking import Ranking


def check_confidence(confidence: float, *, name: str = "confidence") -> float:
    """Return ``confidence`` as a float, or raise ValueError unless 0 < confidence < 1."""
    c = float(confidence)
    if not (math.isfinite(c) and 0.0 < c < 1.0):
        raise ValueError(f"{name} must be strictly between 0 and 1, got {confidence!r}")
    return c


def check_probability(value: float, *, name: str) -> float:
    """Return ``value`` as a float, or raise ValueError unless 0 < value < 1."""
    v = float(value)
    if not (math.isfinite(v) and 0.0 < v < 1.0):
        raise ValueError(f"{name} must be strictly between 0 and 1, got {value!r}")
    return v


def check_finite(value: float, *, name: str) -> float:
    v = float(value)
    if not math.isfinite(v):
        raise ValueError(f"{name} must be a finite number, got {value!r}")
    return v


def z_two_sided(confidence: float) -> float:
    """The standard normal quantile Phi^-1((1 + confidence) / 2), e.g. 1.959963984540054 at 0.95."""
    from scipy.special import ndtri

    return float(ndtri(0.5 + confidence / 2.0))


def norm_cdf(x: float) -> float:
    """Standard normal CDF, accurate in the tails (scipy.special.ndtr), infinities allowed."""
    from scipy.special import ndtr

    return float(ndtr(x))


def norm_ppf(p: float) -> float:
    from scipy.special import ndtri

    return float(ndtri(p))


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
