"""The one interval type shared by every statistic and report."""

from __future__ import annotations

import math
from dataclasses import dataclass


@dataclass(frozen=True)
class Interval:
    """A two-sided confidence interval ``[low, high]`` at ``confidence``, built by ``method``.

    ``method`` is a published name: "delong", "delong-logit", "bootstrap-percentile",
    "bootstrap-bca", "wilson", "clopper-pearson", "neyman-pearson".
    """

    low: float
    high: float
    confidence: float
    method: str

    def __post_init__(self) -> None:
        if not (math.isnan(self.low) or math.isnan(self.high)) and self.low > self.high:
            raise ValueError(f"interval low {self.low} exceeds high {self.high}")
        if not 0.0 < self.confidence < 1.0:
            raise ValueError(f"confidence must be in (0, 1), got {self.confidence}")

    @property
    def half_width(self) -> float:
        """Half the width: the smallest margin this interval can resolve."""
        return (self.high - self.low) / 2.0

    def contains(self, x: float) -> bool:
        return self.low <= x <= self.high

    def as_list(self) -> list[float]:
        return [float(self.low), float(self.high)]


def resolution(interval: Interval) -> float:
    """The smallest margin an evaluation set can resolve: the interval's half-width.

    A policy margin (``max_drop``, or the distance of a floor from the estimate) smaller than this
    cannot be shown either way by the data at the interval's confidence; reports warn about it.

    Parameters
    ----------
    interval : Interval
        Any two-sided interval (of a metric or of a paired difference).

    Returns
    -------
    float
        ``(high - low) / 2``. For asymmetric intervals (Wilson, logit-scale DeLong) this is the
        mean of the two arms, not either arm.

    Raises
    ------
    ValueError
        When an end of the interval is not finite.

    Examples
    --------
    >>> resolution(Interval(0.75, 0.875, 0.95, "delong"))
    0.0625
    """
    if not (math.isfinite(interval.low) and math.isfinite(interval.high)):
        raise ValueError(f"interval ends must be finite, got [{interval.low}, {interval.high}]")
    return interval.half_width
