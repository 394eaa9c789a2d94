"""Result types of an evaluation: what the evaluate layer produces and the report layer renders.

Plain frozen dataclasses, no logic beyond small conveniences, so that report, history and plots
can depend on them without depending on evaluate.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

from gate.stats.interval import Interval

Outcome = Literal["pass", "fail", "inconclusive", "skipped"]
BoundKind = Literal["at_least", "at_most", "max_drop", "max_rise"]


@dataclass(frozen=True)
class SliceKey:
    """One slice: rows where ``column`` equals ``value`` (value kept as text for reports)."""

    column: str
    value: str


@dataclass(frozen=True)
class Bound:
    """A requirement of a check: a floor/ceiling on the candidate, or a margin against the baseline."""

    kind: BoundKind
    value: float

    @property
    def higher_is_better(self) -> bool:
        return self.kind in ("at_least", "max_drop")


@dataclass(frozen=True)
class Decision:
    """One bound compared with one interval. ``outcome`` before the inconclusive rule."""

    bound: Bound
    outcome: Literal["pass", "fail", "inconclusive"]
    estimate: float  # the value compared (candidate value, or delta for margins)
    interval: Interval
    p_value: float | None = None  # one-sided p of the test "requirement not met", when available
    adjusted_p_value: float | None = None  # after the policy's multiplicity adjustment


@dataclass(frozen=True)
class CheckResult:
    """One check in one slice (or overall when ``slice`` is None)."""

    name: str
    metric: str
    params: dict[str, float]  # the metric's parameters, e.g. {"fpr": 0.01}
    slice: SliceKey | None
    outcome: Outcome  # overall outcome for this check and slice, before the inconclusive rule
    passed: bool  # after the policy's rule for inconclusive; skipped slices do not block (True)
    value: float | None
    interval: Interval | None
    n: int = 0
    n_pos: int = 0
    n_neg: int = 0
    baseline_value: float | None = None
    delta: float | None = None  # candidate - baseline
    delta_interval: Interval | None = None
    floor: Decision | None = None  # at_least / at_most
    margin: Decision | None = None  # max_drop / max_rise
    method: str = ""  # e.g. "delong", "bootstrap-percentile", "wilson"
    threshold: float | None = None  # operating threshold, for threshold-type metrics
    reason: str = ""  # one line: why it passed / failed / was skipped
    warnings: tuple[str, ...] = ()


@dataclass(frozen=True)
class Result:
    """The whole evaluation: verdict, one CheckResult per check and slice, and provenance."""

    verdict: Literal["pass", "fail"]
    checks: tuple[CheckResult, ...]
    confidence: float
    resamples: int
    seed: int
    on_inconclusive: str
    adjust: str
    policy_source: str
    policy_hash: str
    candidate_source: str
    baseline_source: str | None
    fingerprint: str  # eval-set fingerprint of the rows evaluated
    n: int
    n_pos: int
    n_neg: int
    warnings: tuple[str, ...] = ()
    methods: str = ""  # one line stating methods, confidence, resamples and seed
    notes: dict[str, str] = field(default_factory=dict)  # e.g. baseline note, mismatch handling
