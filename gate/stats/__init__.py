"""Confidence intervals and paired comparisons over the ranking core."""

from __future__ import annotations

from gate.stats.interval import Interval

__all__ = ["Interval"]
