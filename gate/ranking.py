"""The spine: scores sorted once, grouped into tie blocks with weighted class counts.

Every curve metric in this module is a function of a :class:`TieBlocks` (plus a parameter).
Sorting is the only O(n log n) step; it is done once per model by :func:`rank`. Tie blocks do
not change when examples are reweighted, so a bootstrap replicate is a new weight vector over the
presorted order (:meth:`Ranking.blocks`), with no re-sort.

Batching: ``TieBlocks.pos`` / ``TieBlocks.neg`` may carry leading batch dimensions
(shape ``(..., k)``); metrics documented as batched operate along the last axis and return an
array of the batch shape (a float for unbatched input).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from gate.errors import UndefinedMetricError


@dataclass(frozen=True, eq=False)
class TieBlocks:
    """Distinct scores in descending order with the weighted positives / negatives at each.

    Attributes
    ----------
    thresholds : (k,) float64, strictly decreasing distinct scores.
    pos, neg : (..., k) float64 weighted counts of positives / negatives at each score.
    """

    thresholds: NDArray[np.float64]
    pos: NDArray[np.float64]
    neg: NDArray[np.float64]

    @property
    def total_pos(self) -> NDArray[np.float64] | float:
        return self.pos.sum(axis=-1)

    @property
    def total_neg(self) -> NDArray[np.float64] | float:
        return self.neg.sum(axis=-1)

    @property
    def batched(self) -> bool:
        return self.pos.ndim > 1


@dataclass(frozen=True, eq=False)
class Ranking:
    """One model's scores sorted once (descending) and cut into tie blocks.

    Attributes
    ----------
    order : (n,) indices of the examples, highest score first.
    starts : (k,) position in ``order`` where each tie block begins.
    block_of : (n,) tie-block index of each example, in the original (unsorted) order.
    thresholds : (k,) the block scores, strictly decreasing.
    labels_sorted : (n,) bool labels in sorted order.
    weights_sorted : (n,) float64 weights in sorted order (ones when unweighted).
    """

    order: NDArray[np.intp]
    starts: NDArray[np.intp]
    block_of: NDArray[np.intp]
    thresholds: NDArray[np.float64]
    labels_sorted: NDArray[np.bool_]
    weights_sorted: NDArray[np.float64]

    @property
    def n(self) -> int:
        return int(self.order.shape[0])

    def blocks(self, weights: NDArray[np.float64] | None = None) -> TieBlocks:
        """Tie blocks under ``weights`` given in the original example order.

        ``weights`` may be ``(n,)`` or ``(B, n)`` (a batch of bootstrap replicates); ``None`` uses
        the table's own weights. The product with the table's own weights is the caller's job.
        """
        if weights is None:
            w = self.weights_sorted
        else:
            w = np.asarray(weights, dtype=np.float64)[..., self.order]
        # float64 sums: integer-valued counts stay exact up to 2**53, well past any eval set.
        pos = np.add.reduceat(np.where(self.labels_sorted, w, 0.0), self.starts, axis=-1)
        neg = np.add.reduceat(np.where(self.labels_sorted, 0.0, w), self.starts, axis=-1)
        return TieBlocks(self.thresholds, pos, neg)


def rank(
    scores: NDArray[np.float64],
    labels: NDArray[np.bool_],
    weights: NDArray[np.float64] | None = None,
) -> Ranking:
    """Sort ``scores`` once, descending, and cut the order into tie blocks.

    Scores must be finite (``gate.io`` guarantees it for tables it reads).
    """
    s = np.asarray(scores, dtype=np.float64)
    y = np.asarray(labels, dtype=bool)
    if s.ndim != 1 or y.shape != s.shape:
        raise ValueError("scores and labels must be 1-D arrays of equal length")
    if s.size == 0:
        raise UndefinedMetricError("no examples to rank")
    order = np.argsort(-s, kind="quicksort")
    s_sorted = s[order]
    new_block = np.empty(s.size, dtype=bool)
    new_block[0] = True
    np.not_equal(s_sorted[1:], s_sorted[:-1], out=new_block[1:])
    starts = np.flatnonzero(new_block)
    block_sorted = np.cumsum(new_block) - 1
    block_of = np.empty(s.size, dtype=np.intp)
    block_of[order] = block_sorted
    if weights is None:
        w_sorted = np.ones(s.size, dtype=np.float64)
    else:
        w_sorted = np.asarray(weights, dtype=np.float64)[order]
    return Ranking(
        order=order,
        starts=starts,
        block_of=block_of,
        thresholds=s_sorted[starts],
        labels_sorted=y[order],
        weights_sorted=w_sorted,
    )


def tie_blocks(
    scores: NDArray[np.float64],
    labels: NDArray[np.bool_],
    weights: NDArray[np.float64] | None = None,
) -> TieBlocks:
    """Shorthand for ``rank(scores, labels, weights).blocks()``."""
    return rank(scores, labels, weights).blocks()


def _require_both_classes(blocks: TieBlocks, metric: str) -> None:
    if np.any(np.asarray(blocks.total_pos) <= 0):
        raise UndefinedMetricError(f"{metric} is undefined: no positive examples (or zero positive weight)")
    if np.any(np.asarray(blocks.total_neg) <= 0):
        raise UndefinedMetricError(f"{metric} is undefined: no negative examples (or zero negative weight)")


def roc_auc(blocks: TieBlocks) -> NDArray[np.float64] | float:
    """ROC AUC by the trapezoid over tie blocks (a tied positive/negative pair counts one half). Batched.

    AUC = sum_b pos_b * (neg strictly below b + neg_b / 2) / (P * N).
    """
    _require_both_classes(blocks, "roc_auc")
    neg_above = np.cumsum(blocks.neg, axis=-1) - blocks.neg
    total_neg = blocks.neg.sum(axis=-1, keepdims=True)
    neg_below = total_neg - neg_above - blocks.neg
    num = np.sum(blocks.pos * (neg_below + 0.5 * blocks.neg), axis=-1)
    out = num / (blocks.pos.sum(axis=-1) * total_neg[..., 0])
    return float(out) if np.ndim(out) == 0 else out
