"""Slow, obviously correct oracles for the ranking core (tests only, never imported by gate/).

Each works on raw rows (scores, labels, weights) by the definition, with no tie blocks, no
cumulative sums and no vectorised tricks: a loop over candidate thresholds, or every
(positive, negative) pair. Exact ``Fraction`` arithmetic where the inputs are integers or
integer-weighted, so ties and collinearity are decided exactly.

Conventions as in gate.ranking: flagged = score >= threshold; +inf flags nothing. A rate
parameter (fpr cap, recall floor, max_fpr) means the decimal it is written as: 0.9 is 9/10, not
the binary double nearest to it (gate.ranking gets this by comparing correctly rounded quotients).
"""

from __future__ import annotations

import math
from fractions import Fraction
from typing import Any

import numpy as np


def _param(x: float) -> Fraction:
    return Fraction(repr(float(x)))


def _rows(scores: Any, labels: Any, weights: Any = None) -> list[tuple[float, bool, Fraction]]:
    s = [float(x) for x in np.asarray(scores, dtype=float)]
    y = [bool(v) for v in np.asarray(labels)]
    w = [Fraction(1)] * len(s) if weights is None else [Fraction(float(v)) for v in np.asarray(weights)]
    return list(zip(s, y, w, strict=True))


def candidate_thresholds(scores: Any) -> list[float]:
    """+inf (flag nothing), then every distinct score, descending."""
    return [math.inf] + sorted({float(x) for x in np.asarray(scores, dtype=float)}, reverse=True)


def confusion(scores: Any, labels: Any, weights: Any, threshold: float) -> tuple[Fraction, Fraction, Fraction, Fraction]:
    """(tp, fp, tn, fn) by summing the weights of the rows on each side of the threshold."""
    tp = fp = tn = fn = Fraction(0)
    for s, y, w in _rows(scores, labels, weights):
        flagged = s >= threshold
        if y and flagged:
            tp += w
        elif y:
            fn += w
        elif flagged:
            fp += w
        else:
            tn += w
    return tp, fp, tn, fn


def pair_auc(scores: Any, labels: Any, weights: Any = None) -> Fraction:
    """AUC as the weighted share of (positive, negative) pairs in the right order, ties 1/2."""
    rows = _rows(scores, labels, weights)
    num = Fraction(0)
    for sp, yp, wp in rows:
        if not yp:
            continue
        for sn, yn, wn in rows:
            if yn:
                continue
            if sp > sn:
                num += wp * wn
            elif sp == sn:
                num += wp * wn / 2
    p = sum((w for _, y, w in rows if y), Fraction(0))
    n = sum((w for _, y, w in rows if not y), Fraction(0))
    return num / (p * n)


def discordant_pairs(scores: Any, labels: Any, weights: Any = None) -> Fraction:
    """Weighted count of (positive, negative) pairs with the negative above, ties 1/2."""
    rows = _rows(scores, labels, weights)
    d = Fraction(0)
    for sp, yp, wp in rows:
        for sn, yn, wn in rows:
            if yp and not yn:
                if sn > sp:
                    d += wp * wn
                elif sn == sp:
                    d += wp * wn / 2
    return d


def roc_points(scores: Any, labels: Any, weights: Any = None) -> list[tuple[float, Fraction, Fraction]]:
    """(threshold, fpr, tpr) for every candidate threshold, by direct counting."""
    out = []
    for t in candidate_thresholds(scores):
        tp, fp, tn, fn = confusion(scores, labels, weights, t)
        out.append((t, fp / (fp + tn), tp / (tp + fn)))
    return out


def average_precision(scores: Any, labels: Any, weights: Any = None) -> Fraction:
    """sum (R_n - R_{n-1}) P_n over the distinct thresholds, descending (no interpolation)."""
    ap = Fraction(0)
    prev_recall = Fraction(0)
    for t in candidate_thresholds(scores)[1:]:
        tp, fp, tn, fn = confusion(scores, labels, weights, t)
        recall = tp / (tp + fn)
        if recall > prev_recall:
            ap += (recall - prev_recall) * tp / (tp + fp)
        prev_recall = recall
    return ap


def partial_auc_raw(scores: Any, labels: Any, weights: Any, max_fpr: float) -> Fraction:
    """Area under the ROC polyline from FPR 0 to max_fpr, each segment integrated exactly."""
    m = _param(max_fpr)
    pts = roc_points(scores, labels, weights)
    area = Fraction(0)
    for (_, f0, t0), (_, f1, t1) in zip(pts[:-1], pts[1:], strict=True):
        if f0 >= m or f1 == f0:
            continue
        right = min(f1, m)
        t_right = t0 + (t1 - t0) * (right - f0) / (f1 - f0)
        area += (right - f0) * (t0 + t_right) / 2
    return area


def mcclish(raw: Fraction, max_fpr: float) -> Fraction:
    m = _param(max_fpr)
    lo = m * m / 2
    return (1 + (raw - lo) / (m - lo)) / 2


def recall_at_fpr(scores: Any, labels: Any, weights: Any, alpha: float) -> tuple[float, Fraction, Fraction]:
    """(threshold, recall, fpr): highest recall with fpr <= alpha; ties: the highest threshold."""
    best = None
    for t in candidate_thresholds(scores):  # descending: the first of equals is the highest
        tp, fp, tn, fn = confusion(scores, labels, weights, t)
        fpr, recall = fp / (fp + tn), tp / (tp + fn)
        if fpr <= _param(alpha) and (best is None or recall > best[1]):
            best = (t, recall, fpr)
    assert best is not None
    return best


def precision_at_recall(scores: Any, labels: Any, weights: Any, r: float) -> tuple[float, Fraction, Fraction]:
    """(threshold, precision, recall): highest precision with recall >= r; ties: highest recall,
    then the highest threshold. Thresholds flagging nothing (precision undefined) are skipped."""
    best = None
    for t in candidate_thresholds(scores):
        tp, fp, tn, fn = confusion(scores, labels, weights, t)
        if tp + fp == 0:
            continue
        recall, precision = tp / (tp + fn), tp / (tp + fp)
        if recall >= _param(r) and (best is None or (precision, recall) > (best[1], best[2])):
            best = (t, precision, recall)
    assert best is not None
    return best


def optimal_cost(scores: Any, labels: Any, weights: Any, cost_fp: float, cost_fn: float) -> tuple[float, Fraction]:
    """(threshold, cost per example): least (c_fp FP + c_fn FN) / W; ties: the highest threshold."""
    best = None
    for t in candidate_thresholds(scores):
        tp, fp, tn, fn = confusion(scores, labels, weights, t)
        cost = (Fraction(cost_fp) * fp + Fraction(cost_fn) * fn) / (tp + fp + tn + fn)
        if best is None or cost < best[1]:
            best = (t, cost)
    assert best is not None
    return best


def brier(scores: Any, labels: Any, weights: Any = None) -> Fraction:
    rows = _rows(scores, labels, weights)
    num = sum((w * (Fraction(int(y)) - Fraction(s)) ** 2 for s, y, w in rows), Fraction(0))
    return num / sum((w for _, _, w in rows), Fraction(0))


def hull(points: list[tuple[Fraction, Fraction]]) -> tuple[list[tuple[Fraction, Fraction]], Fraction]:
    """Vertices and area of the upper concave envelope of ``points`` (which include (0,0), (1,1)).

    By definition: the envelope at x is the highest point reachable by mixing two points whose
    x-coordinates bracket x. It is piecewise linear with kinks only at point abscissae, so it is
    evaluated at each distinct x (all O(k^2) pairs) and the kinks are the vertices.
    """
    xs = sorted({x for x, _ in points})

    def env(x: Fraction) -> Fraction:
        best = max(y for px, y in points if px == x) if any(px == x for px, _ in points) else Fraction(-1)
        for ax, ay in points:
            for bx, by in points:
                if ax < x < bx:
                    best = max(best, ay + (by - ay) * (x - ax) / (bx - ax))
        return best

    h = [(x, env(x)) for x in xs]
    area = sum(((b[0] - a[0]) * (a[1] + b[1]) / 2 for a, b in zip(h[:-1], h[1:], strict=True)), Fraction(0))
    vertices = [(Fraction(0), Fraction(0))]
    if h[0][1] > 0:
        vertices.append(h[0])
    for a, b, c in zip(h[:-2], h[1:-1], h[2:], strict=True):
        # a kink: b strictly above the chord from a to c
        if b[1] > a[1] + (c[1] - a[1]) * (b[0] - a[0]) / (c[0] - a[0]):
            vertices.append(b)
    if vertices[-1] != h[-1]:
        vertices.append(h[-1])
    return vertices, area


def roc_hull(scores: Any, labels: Any, weights: Any = None) -> tuple[list[tuple[Fraction, Fraction]], Fraction]:
    pts = [(f, t) for _, f, t in roc_points(scores, labels, weights)]
    return hull(pts)
