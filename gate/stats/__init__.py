"""Confidence intervals and paired comparisons over the ranking core.

DeLong (single and paired) for the ROC AUC, bootstrap (stratified, paired) for metrics without a
closed form and for weighted data, Wilson / Clopper-Pearson intervals for proportions at a fixed
threshold, the Neyman-Pearson order-statistic threshold, Holm's adjustment, and the resolution
(half-width) of an interval. scipy is imported inside the functions that need it.
"""

from __future__ import annotations

from gate.stats.bootstrap import (
    BootstrapResult,
    PairedBootstrapResult,
    Progress,
    Statistic,
    bootstrap,
    bootstrap_many,
    paired_bootstrap,
    paired_bootstrap_many,
    replicate_counts,
)
from gate.stats.delong import AucEstimate, PairedAuc, delong, paired_delong
from gate.stats.interval import Interval, resolution
from gate.stats.multiplicity import holm
from gate.stats.neyman_pearson import NpThreshold, min_negatives, np_threshold
from gate.stats.proportion import clopper_pearson_interval, proportion_interval, wilson_interval

__all__ = [
    "AucEstimate",
    "BootstrapResult",
    "Interval",
    "NpThreshold",
    "PairedAuc",
    "PairedBootstrapResult",
    "Progress",
    "Statistic",
    "bootstrap",
    "bootstrap_many",
    "clopper_pearson_interval",
    "delong",
    "holm",
    "min_negatives",
    "np_threshold",
    "paired_bootstrap",
    "paired_bootstrap_many",
    "paired_delong",
    "proportion_interval",
    "replicate_counts",
    "resolution",
    "wilson_interval",
]
