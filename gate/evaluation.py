"""Policy x score tables -> Result: one CheckResult per check and slice, with its decision.

This is the gate's engine. For each ``[[check]]`` of the policy, and for each slice of its ``by``
column, it computes the candidate's metric with a two-sided confidence interval and, for checks with
a non-regression margin, the paired difference against the baseline (same examples, paired by id).

Methods
-------
- ``roc_auc``: DeLong's variance (one model) and paired DeLong (difference), unless the policy asks
  for the bootstrap or the table is weighted (DeLong's structural components assume unit weights).
- ``recall_at_threshold`` / ``fpr_at_threshold`` without a baseline and without weights: a binomial
  interval (Wilson by default, Clopper-Pearson on request).
- every other metric, weighted data and every other paired difference: the stratified bootstrap
  (paired: the same resampled examples for candidate and baseline), percentile intervals.

Decision rule (DESIGN.md): the interval wholly on the passing side of a bound passes, wholly on the
failing side fails, straddling is inconclusive, then resolved by ``[stats] on_inconclusive``.
With ``[stats] adjust = "holm"`` a failure must also survive Holm's adjustment across every bound
that can fail (each a one-sided test of "the requirement holds", p from the normal approximation
with the interval's standard error); one that does not becomes inconclusive.

Seeds and sharing: every check on the same rows (the whole set, or one slice) is judged on the same
bootstrap replicates, drawn once from a seed derived from ``[stats] seed`` and the slice (column
and value), so a report does not change when checks are added, renamed or reordered, and the work
grows with the number of slices rather than with the number of checks.
"""

from __future__ import annotations

import math
import zlib
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from os import PathLike
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
from numpy.typing import NDArray

from gate import ranking as rk
from gate.errors import BaselineError, TableError, UndefinedMetricError
from gate.results import Bound, CheckResult, Decision, Result, SliceKey
from gate.stats._common import norm_cdf, z_two_sided
from gate.stats.interval import Interval

if TYPE_CHECKING:  # pragma: no cover
    from gate.baseline import Alignment, Baseline
    from gate.io import ScoreTable
    from gate.policy import Check, Policy

Progress = Callable[[int, int], None]

MISSING_SLICE = "(missing)"

def _statistic(check: Check) -> Callable[[rk.TieBlocks], Any]:
    """The check's metric as a function of (possibly batched) tie blocks."""
    m = check.metric
    p = check.params
    if m == "roc_auc":
        return rk.roc_auc
    if m == "average_precision":
        return rk.average_precision
    if m == "partial_auc":
        return lambda b: rk.partial_auc(b, max_fpr=p["max_fpr"]).standardized
    if m == "recall_at_fpr":
        return lambda b: rk.recall_at_fpr_values(b, fpr=p["fpr"])
    if m == "precision_at_recall":
        return lambda b: rk.precision_at_recall_values(b, recall=p["recall"])
    if m == "recall_at_threshold":
        return lambda b: rk.recall_at_threshold(b, threshold=p["threshold"])
    if m == "fpr_at_threshold":
        return lambda b: rk.fpr_at_threshold(b, threshold=p["threshold"])
    if m == "expected_cost":
        return lambda b: rk.expected_cost(
            b, threshold=p["threshold"], cost_fp=p["cost_fp"], cost_fn=p["cost_fn"]
        )
    if m == "brier":
        return rk.brier
    raise UndefinedMetricError(f"unknown metric {m!r}")  # the policy layer rejects these first


def _seed_for(base_seed: int, key: SliceKey | None, kind: str) -> int:
    """The seed of one slice's bootstrap ("single" or "paired"), independent of evaluation order.

    Keyed by the slice (column and value), not by a check's position or name: every check on the
    same rows shares one set of replicates, so inserting, renaming or reordering checks changes no
    other check's numbers, and checks on the same slice are judged on the same resamples.
    """
    text = "\x00overall" if key is None else f"{key.column}\x00{key.value}"
    tag = zlib.crc32(text.encode("utf-8", "surrogatepass"))
    kind_tag = zlib.crc32(kind.encode("ascii"))
    ss = np.random.SeedSequence([int(base_seed) % (2**63), tag, kind_tag])
    return int(ss.generate_state(1, dtype=np.uint64)[0] % (2**63))


def _decide(bound: Bound, estimate: float, interval: Interval, confidence: float) -> Decision:
    """Compare one interval with one bound (the DESIGN.md rule) and give the one-sided p of failing."""
    if bound.kind == "at_least":
        limit = bound.value
        ok_side_low = True  # passing side is above the limit
    elif bound.kind == "at_most":
        limit = bound.value
        ok_side_low = False
    elif bound.kind == "max_drop":
        limit = -bound.value  # delta = candidate - baseline must stay >= -max_drop
        ok_side_low = True
    else:  # max_rise
        limit = bound.value  # delta must stay <= max_rise
        ok_side_low = False
    if ok_side_low:
        if interval.low >= limit:
            outcome = "pass"
        elif interval.high < limit:
            outcome = "fail"
        else:
            outcome = "inconclusive"
    else:
        if interval.high <= limit:
            outcome = "pass"
        elif interval.low > limit:
            outcome = "fail"
        else:
            outcome = "inconclusive"
    # One-sided p of H0 "the requirement holds" from the normal approximation with the interval's SE.
    se = interval.half_width / z_two_sided(confidence)
    if se > 0:
        zstat = (estimate - limit) / se if ok_side_low else (limit - estimate) / se
        p_fail = norm_cdf(zstat)
    else:
        p_fail = 0.0 if outcome == "fail" else 1.0
    return Decision(bound=bound, outcome=outcome, estimate=float(estimate), interval=interval, p_value=p_fail)


def _estimate_passes(decision: Decision) -> bool:
    b = decision.bound
    if b.kind == "at_least":
        return decision.estimate >= b.value
    if b.kind == "at_most":
        return decision.estimate <= b.value
    if b.kind == "max_drop":
        return decision.estimate >= -b.value
    return decision.estimate <= b.value


def _combine(decisions: list[Decision]) -> str:
    outcomes = [d.outcome for d in decisions]
    if "fail" in outcomes:
        return "fail"
    if "inconclusive" in outcomes:
        return "inconclusive"
    return "pass"


def _resolve(outcome: str, decisions: list[Decision], rule: str) -> bool:
    if outcome == "pass":
        return True
    if outcome == "fail":
        return False
    if rule == "pass":
        return True
    if rule == "fail":
        return False
    # "estimate": every bound judged on its point estimate (a decided bound keeps its verdict).
    return all(
        d.outcome == "pass" or (d.outcome == "inconclusive" and _estimate_passes(d)) for d in decisions
    )


# --- input coercion -----------------------------------------------------------------------------


def _as_policy(policy: Policy | str | PathLike[str]) -> Policy:
    from gate.policy import Policy, load_policy

    if isinstance(policy, Policy):
        return policy
    return load_policy(Path(policy))


def _as_table(obj: Any, policy: Policy, what: str) -> ScoreTable:
    from gate.io import ScoreTable, read_table, table_from_frame

    spec = policy.data.column_spec()
    if isinstance(obj, ScoreTable):
        return obj
    if isinstance(obj, (str, PathLike)):
        return read_table(Path(obj), spec)
    try:
        import pandas as pd
    except ImportError:  # pragma: no cover - pandas is a runtime dependency
        pd = None
    if pd is not None and isinstance(obj, pd.DataFrame):
        return table_from_frame(obj, spec, source=f"<{what} DataFrame>")
    raise TypeError(f"{what} must be a ScoreTable, a pandas DataFrame or a path, got {type(obj).__name__}")


def _as_baseline(obj: Any, policy: Policy) -> tuple[ScoreTable, str, str | None]:
    """(table, source description, note) of the baseline."""
    from gate.baseline import Baseline, load_baseline

    if isinstance(obj, Baseline):
        return obj.table, obj.directory or obj.table.source, obj.manifest.note
    if isinstance(obj, (str, PathLike)) and _names_baseline_directory(obj):
        b = load_baseline(Path(obj))
        return b.table, str(obj), b.manifest.note
    table = _as_table(obj, policy, "baseline")
    return table, table.source, None


def _names_baseline_directory(path: str | PathLike[str]) -> bool:
    """True for a directory, and for a missing path that is not a score-table file name.

    ``--baseline baseline/`` before the first ``rankgate adopt`` must say that the baseline
    directory does not exist (load_baseline's message), not that '(none)' is an unknown file type.
    """
    from gate.io import table_format

    p = Path(path)
    if p.is_dir():
        return True
    if p.exists():
        return False
    try:
        table_format(p)
    except TableError:
        return True
    return False


# --- per check ----------------------------------------------------------------------------------


@dataclass
class _Context:
    policy: Policy
    progress: Progress | None
    # Per slice: the statistics (by check name) whose bootstrap is drawn together, and the results.
    planned: dict[tuple[SliceKey | None, str], dict[str, Callable[[rk.TieBlocks], Any]]] = field(
        default_factory=dict
    )
    drawn: dict[tuple[SliceKey | None, str], dict[str, Any]] = field(default_factory=dict)
    rankings: dict[tuple[SliceKey | None, str], tuple[rk.Ranking, rk.TieBlocks]] = field(default_factory=dict)

    def ranking(self, key: SliceKey | None, which: str, table: ScoreTable) -> tuple[rk.Ranking, rk.TieBlocks]:
        """One model's ranking on one slice and its tie blocks, computed once for every check."""
        slot = (key, which)
        if slot not in self.rankings:
            ranking = rk.rank(table.scores, table.labels, table.weights)
            self.rankings[slot] = (ranking, ranking.blocks())
        return self.rankings[slot]

    def replicates(
        self, key: SliceKey | None, kind: str, c_rank: rk.Ranking, b_rank: rk.Ranking | None
    ) -> dict[str, Any]:
        """The shared bootstrap of every planned statistic on this slice (drawn on first use)."""
        from gate import stats as st

        slot = (key, kind)
        if slot not in self.drawn:
            stats = self.planned[slot]
            options = dict(
                resamples=self.policy.stats.resamples,
                seed=_seed_for(self.policy.stats.seed, key, kind),
                confidence=self.policy.stats.confidence,
                progress=self.progress,
            )
            if kind == "paired":
                assert b_rank is not None
                self.drawn[slot] = st.paired_bootstrap_many(c_rank, b_rank, stats, **options)
            else:
                self.drawn[slot] = st.bootstrap_many(c_rank, stats, stratified=True, **options)
        return self.drawn[slot]


def slice_masks(table: ScoreTable, column: str, *, check_name: str | None = None) -> list[tuple[str, NDArray[np.bool_]]]:
    """(value as text, row mask) for every distinct value of ``column``, values in sorted order.

    Missing values (empty, null, NaN) form their own slice, shown as "(missing)".
    """
    if column not in table.columns:
        have = ", ".join(sorted(table.columns)) or "(none besides id / label / score)"
        what = f" (check {check_name!r}, by)" if check_name else ""
        raise TableError(f"{table.source}: column {column!r}{what} not found; other columns: {have}")
    text = np.array([_slice_text(v) for v in table.columns[column]], dtype=object)
    return [(value, text == value) for value in sorted(set(text.tolist()))]


def _slices(check: Check, table: ScoreTable) -> list[tuple[SliceKey | None, NDArray[np.bool_] | None]]:
    if check.by is None:
        return [(None, None)]
    return [(SliceKey(check.by, v), m) for v, m in slice_masks(table, check.by, check_name=check.name)]


def _slice_text(v: Any) -> str:
    if v is None:
        return MISSING_SLICE
    if isinstance(v, float):
        if math.isnan(v):
            return MISSING_SLICE
        if v.is_integer():
            return str(int(v))
    try:
        import pandas as pd

        if v is pd.NA or v is pd.NaT:
            return MISSING_SLICE
    except ImportError:  # pragma: no cover
        pass
    return str(v)


def _sub(table: ScoreTable, mask: NDArray[np.bool_] | None) -> ScoreTable:
    if mask is None:
        return table
    from gate.io import subset

    return subset(table, mask)


def _weighted_counts(table: ScoreTable) -> tuple[float, float]:
    if table.weights is None:
        return float(table.n_pos), float(table.n_neg)
    w = table.weights
    return float(w[table.labels].sum()), float(w[~table.labels].sum())


def _use_delong(check: Check, policy: Policy, *tables: ScoreTable) -> bool:
    return (
        check.metric == "roc_auc"
        and policy.stats.interval == "delong"
        and all(t.weights is None for t in tables)
    )


def _skip_reason(check: Check, key: SliceKey | None, cand: ScoreTable) -> str | None:
    """Why a slice is not judged (None when it is); the overall set never skips, it errors."""
    pos_w, neg_w = _weighted_counts(cand)
    if key is not None and cand.n_pos < check.min_positives:
        return f"skipped: {cand.n_pos} positives, fewer than min_positives = {check.min_positives}"
    if pos_w <= 0 or neg_w <= 0:
        missing = "positives" if pos_w <= 0 else "negatives"
        if key is not None:
            return f"skipped: no {missing} in this slice"
        raise UndefinedMetricError(
            f"{cand.source}: check {check.name!r}: {check.metric} is undefined, no {missing} in the evaluation set"
        )
    return None


def _bootstrap_kind(check: Check, policy: Policy, cand: ScoreTable, base: ScoreTable | None) -> str | None:
    """"paired", "single" or None (a closed-form interval) for this check on this slice."""
    if check.margin is not None:
        assert base is not None
        return None if _use_delong(check, policy, cand, base) else "paired"
    if _use_delong(check, policy, cand):
        return None
    if check.metric in ("recall_at_threshold", "fpr_at_threshold") and cand.weights is None:
        return None
    return "single"


def _evaluate_one(
    ctx: _Context,
    check: Check,
    key: SliceKey | None,
    cand: ScoreTable,
    base: ScoreTable | None,
) -> CheckResult:
    from gate import stats as st

    pol = ctx.policy
    conf = pol.stats.confidence
    common = dict(
        name=check.name,
        metric=check.metric,
        params=check.params,
        slice=key,
        n=cand.n,
        n_pos=cand.n_pos,
        n_neg=cand.n_neg,
    )
    skip = _skip_reason(check, key, cand)
    if skip is not None:
        return CheckResult(**common, outcome="skipped", passed=True, value=None, interval=None, reason=skip)

    statistic = _statistic(check)
    c_rank, c_blocks = ctx.ranking(key, "candidate", cand)
    value = float(statistic(c_blocks))
    threshold = _operating_threshold(check, c_blocks)

    interval: Interval
    method: str
    warnings: list[str] = []
    baseline_value = delta = None
    delta_interval: Interval | None = None

    margin = check.margin
    if margin is not None:
        assert base is not None
        b_rank, b_blocks = ctx.ranking(key, "baseline", base)
        baseline_value = float(statistic(b_blocks))
        if _use_delong(check, pol, cand, base):
            est = st.delong(c_rank)
            interval = est.interval(confidence=conf, scale=_auc_scale(pol))
            paired = st.paired_delong(c_rank, b_rank)
            delta = float(paired.delta)
            delta_interval = paired.delta_interval(confidence=conf)
            method = "delong"
        else:
            pb = ctx.replicates(key, "paired", c_rank, b_rank)[check.name]
            interval = pb.interval_a(method="percentile")
            delta = float(pb.delta)
            delta_interval = pb.delta_interval(method="percentile")
            method = "bootstrap-percentile"
    else:
        interval, method = _single_interval(ctx, check, key, c_rank, cand)

    decisions: list[Decision] = []
    if check.floor is not None:
        decisions.append(_decide(check.floor, value, interval, conf))
    if margin is not None:
        assert delta is not None and delta_interval is not None
        decisions.append(_decide(margin, delta, delta_interval, conf))
        if margin.value < delta_interval.half_width:
            warnings.append(
                f"{margin.kind} = {margin.value:g} is below what this evaluation set can resolve "
                f"(difference interval half-width {delta_interval.half_width:.4f})"
            )
    floor_d = next((d for d in decisions if d.bound.kind in ("at_least", "at_most")), None)
    margin_d = next((d for d in decisions if d.bound.kind in ("max_drop", "max_rise")), None)
    outcome = _combine(decisions)
    return CheckResult(
        **common,
        outcome=outcome,  # type: ignore[arg-type]
        passed=_resolve(outcome, decisions, pol.stats.on_inconclusive),
        value=value,
        interval=interval,
        baseline_value=baseline_value,
        delta=delta,
        delta_interval=delta_interval,
        floor=floor_d,
        margin=margin_d,
        method=method,
        threshold=threshold,
        reason="",
        warnings=tuple(warnings),
    )


def _single_interval(
    ctx: _Context,
    check: Check,
    key: SliceKey | None,
    c_rank: rk.Ranking,
    cand: ScoreTable,
) -> tuple[Interval, str]:
    from gate import stats as st

    pol = ctx.policy
    conf = pol.stats.confidence
    if _use_delong(check, pol, cand):
        return st.delong(c_rank).interval(confidence=conf, scale=_auc_scale(pol)), "delong"
    if check.metric in ("recall_at_threshold", "fpr_at_threshold") and cand.weights is None:
        t = check.params["threshold"]
        flagged = cand.scores >= t
        if check.metric == "recall_at_threshold":
            k, n = int(np.count_nonzero(flagged & cand.labels)), cand.n_pos
        else:
            k, n = int(np.count_nonzero(flagged & ~cand.labels)), cand.n_neg
        method = pol.stats.proportion_method
        return st.proportion_interval(k, n, confidence=conf, method=method), method
    boot = ctx.replicates(key, "single", c_rank, None)[check.name]
    return boot.interval(method="percentile"), "bootstrap-percentile"


def _operating_threshold(check: Check, blocks: rk.TieBlocks) -> float | None:
    if check.metric == "recall_at_fpr":
        t = rk.recall_at_fpr(blocks, fpr=check.params["fpr"]).threshold
    elif check.metric == "precision_at_recall":
        t = rk.precision_at_recall(blocks, recall=check.params["recall"]).threshold
    elif "threshold" in check.params:
        t = check.params["threshold"]
    else:
        return None
    return float(t)


# --- multiplicity and reasons -------------------------------------------------------------------


def _holm_adjust(checks: list[CheckResult], policy: Policy) -> list[CheckResult]:
    """Holm across every bound that can fail: a failure must survive the adjustment."""
    from gate.stats import holm

    alpha = (1.0 - policy.stats.confidence) / 2.0
    slots: list[tuple[int, str]] = []
    pvals: list[float] = []
    for i, c in enumerate(checks):
        for attr in ("floor", "margin"):
            d = getattr(c, attr)
            if d is not None and d.p_value is not None:
                slots.append((i, attr))
                pvals.append(d.p_value)
    if not pvals:
        return checks
    adjusted = holm(np.asarray(pvals, dtype=np.float64))
    out = list(checks)
    for (i, attr), p_adj in zip(slots, adjusted, strict=True):
        c = out[i]
        d: Decision = getattr(c, attr)
        new_outcome = d.outcome
        if d.outcome == "fail" and p_adj >= alpha:
            new_outcome = "inconclusive"
        out[i] = replace(c, **{attr: replace(d, adjusted_p_value=float(p_adj), outcome=new_outcome)})
    for i, c in enumerate(out):
        if c.outcome == "skipped":
            continue
        decisions = [d for d in (c.floor, c.margin) if d is not None]
        outcome = _combine(decisions)
        out[i] = replace(
            c,
            outcome=outcome,  # type: ignore[arg-type]
            passed=_resolve(outcome, decisions, policy.stats.on_inconclusive),
        )
    return out


def _held_by_holm(c: CheckResult, policy: Policy) -> bool:
    """True when a bound would have failed without the adjustment and is inconclusive with it."""
    for d in (c.floor, c.margin):
        if d is not None and d.adjusted_p_value is not None and d.outcome == "inconclusive":
            if _decide(d.bound, d.estimate, d.interval, policy.stats.confidence).outcome == "fail":
                return True
    return False


def _fmt(x: float) -> str:
    return f"{x:.4f}"


def _reason(c: CheckResult, rule: str) -> str:
    if c.outcome == "skipped":
        return c.reason
    parts = []
    for d in (c.floor, c.margin):
        if d is None:
            continue
        b = d.bound
        iv = f"[{_fmt(d.interval.low)}, {_fmt(d.interval.high)}]"
        if b.kind == "at_least":
            req = f"{c.metric} >= {b.value:g}"
            got = f"value {_fmt(d.estimate)} {iv}"
        elif b.kind == "at_most":
            req = f"{c.metric} <= {b.value:g}"
            got = f"value {_fmt(d.estimate)} {iv}"
        elif b.kind == "max_drop":
            req = f"drop vs baseline <= {b.value:g}"
            got = f"difference {_fmt(d.estimate)} {iv}"
        else:
            req = f"rise vs baseline <= {b.value:g}"
            got = f"difference {_fmt(d.estimate)} {iv}"
        word = {"pass": "met", "fail": "not met", "inconclusive": "undecided"}[d.outcome]
        parts.append(f"{req}: {word} ({got})")
    text = "; ".join(parts)
    if c.outcome == "inconclusive":
        how = {
            "estimate": "resolved by the point estimate",
            "fail": "counted as a failure",
            "pass": "counted as a pass",
        }[rule]
        text += f"; inconclusive, {how}: {'pass' if c.passed else 'fail'}"
    return text


def _methods_line(policy: Policy, checks: list[CheckResult]) -> str:
    used = sorted({c.method for c in checks if c.method})
    conf = policy.stats.confidence
    parts = [f"{conf * 100:g}% two-sided intervals"]
    names = {
        "delong": "DeLong (paired DeLong for differences)",
        "bootstrap-percentile": (
            f"stratified bootstrap, percentile (paired for differences), {policy.stats.resamples} resamples, "
            f"seed {policy.stats.seed}"
        ),
        "wilson": "Wilson score interval",
        "clopper-pearson": "Clopper-Pearson exact interval",
    }
    parts += [names.get(m, m) for m in used]
    rule = {
        "estimate": "inconclusive checks decided by the point estimate",
        "fail": "inconclusive checks fail",
        "pass": "inconclusive checks pass",
    }[policy.stats.on_inconclusive]
    parts.append(rule)
    parts.append("Holm adjustment across failing bounds" if policy.stats.adjust == "holm" else "no multiplicity adjustment")
    return "; ".join(parts)


# --- public API ---------------------------------------------------------------------------------


def load_inputs(
    policy: Policy, candidate: str | PathLike[str], baseline: str | PathLike[str] | None
) -> tuple[ScoreTable, Baseline | ScoreTable | None]:
    """Read the candidate table and the baseline (a baseline directory or a score table) for ``policy``."""
    cand = _as_table(candidate, policy, "candidate")
    if baseline is None:
        return cand, None
    from gate.baseline import load_baseline

    if _names_baseline_directory(baseline):
        return cand, load_baseline(Path(baseline))
    return cand, _as_table(baseline, policy, "baseline")


def baseline_table(baseline: Baseline | ScoreTable | None) -> ScoreTable | None:
    """The score table inside a loaded baseline (or the table itself)."""
    from gate.baseline import Baseline

    if isinstance(baseline, Baseline):
        return baseline.table
    return baseline


def evaluate(
    policy: Policy | str | PathLike[str],
    candidate: Any,
    baseline: Any = None,
    *,
    progress: Progress | None = None,
) -> Result:
    """Evaluate a candidate's scores against a policy (and a baseline).

    Parameters
    ----------
    policy : a :class:`gate.policy.Policy` or the path of a policy TOML file.
    candidate : a ScoreTable, a pandas DataFrame or the path of a score table.
    baseline : None, a baseline directory (see ``rankgate adopt``), a :class:`gate.baseline.Baseline`,
        a ScoreTable, a DataFrame or a score-table path. Required when any check has a margin.
    progress : optional callback ``(done, total)`` for long bootstraps.

    Returns
    -------
    Result
        One CheckResult per check and slice; ``verdict`` is "pass" when every check passed.

    Raises
    ------
    GateError
        On any input that cannot be evaluated (exit 2 in the CLI).
    """
    pol = _as_policy(policy)
    cand = _as_table(candidate, pol, "candidate")
    warnings: list[str] = []
    notes: dict[str, str] = {}
    base: ScoreTable | None = None
    base_source: str | None = None
    if baseline is not None:
        from gate.baseline import align

        base_table, base_source, note = _as_baseline(baseline, pol)
        if note:
            notes["baseline_note"] = note
        al: Alignment = align(cand, base_table, on_mismatch=pol.baseline.on_mismatch)
        cand, base = al.candidate, al.baseline
        if cand.weights is not None or base.weights is not None:
            # Paired comparisons weigh each example the same for both models: the evaluation set's
            # weights, as the candidate's table carries them.
            base = replace(base, weights=cand.weights)
        if al.intersected:
            warnings.append(al.note)
            notes["mismatch"] = al.note
    elif pol.needs_baseline:
        first = next(c for c in pol.checks if c.margin is not None)
        raise BaselineError(
            f"{pol.source}: check {first.name!r} has {first.margin.kind} (a non-regression margin) "
            "but no baseline was given; pass --baseline DIR (store one with rankgate adopt)"
        )

    ctx = _Context(policy=pol, progress=progress)
    work: list[tuple[Check, SliceKey | None, ScoreTable, ScoreTable | None]] = []
    subsets: dict[SliceKey | None, tuple[ScoreTable, ScoreTable | None]] = {}
    for check in pol.checks:
        for key, mask in _slices(check, cand):
            if key not in subsets:
                subsets[key] = (_sub(cand, mask), None if base is None else _sub(base, mask))
            c_sub, b_sub = subsets[key]
            work.append((check, key, c_sub, b_sub if check.margin is not None else None))
    # Plan first, so that every check on a slice shares one bootstrap (drawn once, on first use).
    for check, key, c_sub, b_sub in work:
        if _skip_reason(check, key, c_sub) is None:
            kind = _bootstrap_kind(check, pol, c_sub, b_sub)
            if kind is not None:
                ctx.planned.setdefault((key, kind), {})[check.name] = _statistic(check)
    results = [_evaluate_one(ctx, check, key, c_sub, b_sub) for check, key, c_sub, b_sub in work]

    if pol.stats.adjust == "holm":
        results = _holm_adjust(results, pol)
    results = [replace(c, reason=_reason(c, pol.stats.on_inconclusive)) for c in results]

    for c in results:
        where = c.name if c.slice is None else f"{c.name} [{c.slice.column} = {c.slice.value}]"
        if c.outcome == "inconclusive" and _held_by_holm(c, pol):
            warnings.append(
                f"{where}: inconclusive after Holm's adjustment (the interval lies on the failing side, "
                f"but not by enough across {len(results)} check results); "
                f"{'passed' if c.passed else 'failed'} by the {pol.stats.on_inconclusive!r} rule"
            )
        elif c.outcome == "inconclusive":
            warnings.append(
                f"{where}: inconclusive (the interval straddles the bound); the evaluation set is too "
                f"small to be sure, {'passed' if c.passed else 'failed'} by the {pol.stats.on_inconclusive!r} rule"
            )
        elif c.outcome == "skipped":
            warnings.append(f"{where}: {c.reason}")
        for w in c.warnings:
            warnings.append(f"{where}: {w}")

    from gate.io import fingerprint

    verdict = "pass" if all(c.passed for c in results) else "fail"
    return Result(
        verdict=verdict,
        checks=tuple(results),
        confidence=pol.stats.confidence,
        resamples=pol.stats.resamples,
        seed=pol.stats.seed,
        on_inconclusive=pol.stats.on_inconclusive,
        adjust=pol.stats.adjust,
        policy_source=pol.source,
        policy_hash=pol.hash,
        candidate_source=cand.source,
        baseline_source=base_source,
        fingerprint=fingerprint(cand),
        n=cand.n,
        n_pos=cand.n_pos,
        n_neg=cand.n_neg,
        warnings=tuple(warnings),
        methods=_methods_line(pol, results),
        notes=notes,
    )


def _auc_scale(policy: Policy) -> str:
    """Scale of the DeLong interval for one AUC: "auc" (Wald, clipped to [0, 1]) or "logit"."""
    return str(getattr(policy.stats, "auc_scale", "auc"))
