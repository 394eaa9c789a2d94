"""A one-table summary: counts, ranking metrics, operating points and the cost-optimal threshold.

The library function behind ``rankgate inspect``. :func:`summarize` returns a plain dict that
``json.dumps`` accepts as is (no NaN, no infinity: a "flag nothing" threshold is ``None``);
:func:`render_summary_text` turns it into aligned text for a terminal.

Every figure comes from :mod:`gate.ranking` over one sort of the table's scores; weighted tables
give weighted metrics (weighted counts are reported beside the row counts). No intervals here:
``inspect`` describes one table; ``check`` is where uncertainty is judged.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np

from gate import ranking as rk
from gate.io import ScoreTable, fingerprint

DEFAULT_FPR_POINTS = (0.001, 0.01, 0.05, 0.1)
PARTIAL_AUC_MAX_FPR = 0.1


def _threshold(value: float) -> float | None:
    return None if math.isinf(value) else float(value)


def _check_costs(cost_fp: float, cost_fn: float) -> None:
    for name, value in (("cost_fp", cost_fp), ("cost_fn", cost_fn)):
        if not (isinstance(value, int | float) and math.isfinite(value) and value >= 0):
            raise ValueError(f"{name} must be a finite non-negative number, got {value!r}")
    if cost_fp == 0 and cost_fn == 0:
        raise ValueError("cost_fp and cost_fn cannot both be 0")


def summarize(
    table: ScoreTable,
    *,
    cost_fp: float = 1.0,
    cost_fn: float = 1.0,
    fpr_points: Sequence[float] = DEFAULT_FPR_POINTS,
    max_fpr: float = PARTIAL_AUC_MAX_FPR,
) -> dict[str, Any]:
    """Summarize one score table.

    Parameters
    ----------
    table : a validated table with both classes.
    cost_fp, cost_fn : cost of a false alarm and of a missed positive, for the cost-optimal
        threshold (non-negative, not both 0).
    fpr_points : false-positive-rate caps of the operating-point table, each in [0, 1].
    max_fpr : upper FPR limit of the partial AUC.

    Returns
    -------
    dict
        ``source``, ``fingerprint`` (of the ids and labels, :func:`gate.io.fingerprint`),
        ``rows``, ``positives``, ``negatives``, ``weighted``, ``weight_positives``,
        ``weight_negatives`` (equal to the counts when unweighted), ``prevalence`` (weighted),
        ``distinct_scores``, ``score_min``, ``score_max``, ``other_columns``, ``roc_auc``,
        ``average_precision``, ``partial_auc`` {``max_fpr``, ``raw``, ``standardized``,
        ``standardization``: "mcclish"}, ``operating_points`` (one dict per cap: ``fpr_cap``,
        ``threshold``, ``recall``, ``precision``, ``fpr`` achieved, ``tp``, ``fp``, ``tn``,
        ``fn``, ``flagged``), and ``cost_optimal`` {``cost_fp``, ``cost_fn``, ``threshold``,
        ``expected_cost`` per example, ``tp``, ``fp``, ``tn``, ``fn``, ``flagged``}.
        A threshold of ``None`` means "flag nothing"; ``precision`` is ``None`` when nothing is
        flagged. Counts are weighted when the table is.

    Raises
    ------
    UndefinedMetricError
        The table lacks positive or negative weight.
    ValueError
        Invalid costs, caps or ``max_fpr``.

    Notes
    -----
    Operating points follow :func:`gate.ranking.recall_at_fpr` (flagged = score >= threshold,
    tie blocks never split, so the achieved FPR can sit well under the cap); the cost-optimal
    threshold follows :func:`gate.ranking.optimal_cost` (among equal costs the highest
    threshold).

    Examples
    --------
    >>> import pandas as pd
    >>> from gate.io import table_from_frame
    >>> t = table_from_frame(pd.DataFrame({"id": list("abcd"), "label": [1, 1, 0, 0],
    ...                                    "score": [0.8, 0.35, 0.4, 0.1]}))
    >>> s = summarize(t)
    >>> s["roc_auc"], s["cost_optimal"]["threshold"], s["cost_optimal"]["expected_cost"]
    (0.75, 0.8, 0.25)
    """
    _check_costs(cost_fp, cost_fn)
    caps = [float(f) for f in fpr_points]
    for cap in caps:
        if not (0.0 <= cap <= 1.0):
            raise ValueError(f"fpr_points must lie in [0, 1], got {cap!r}")

    blocks = rk.rank(table.scores, table.labels, table.weights).blocks()
    weight_pos = float(np.sum(blocks.pos))
    weight_neg = float(np.sum(blocks.neg))
    pauc = rk.partial_auc(blocks, max_fpr=max_fpr)

    points = []
    for cap in caps:
        op = rk.recall_at_fpr(blocks, fpr=cap)
        points.append(
            {
                "fpr_cap": cap,
                "threshold": _threshold(op.threshold),
                "recall": float(op.recall),
                "precision": None if op.precision is None else float(op.precision),
                "fpr": float(op.fpr),
                "tp": float(op.tp),
                "fp": float(op.fp),
                "tn": float(op.tn),
                "fn": float(op.fn),
                "flagged": float(op.tp + op.fp),
            }
        )

    best = rk.optimal_cost(blocks, cost_fp=cost_fp, cost_fn=cost_fn)
    total = weight_pos + weight_neg
    return {
        "source": table.source,
        "fingerprint": fingerprint(table),
        "rows": table.n,
        "positives": table.n_pos,
        "negatives": table.n_neg,
        "weighted": table.weights is not None,
        "weight_positives": weight_pos,
        "weight_negatives": weight_neg,
        "prevalence": weight_pos / total if total > 0 else None,
        "distinct_scores": int(blocks.thresholds.shape[0]),
        "score_min": float(blocks.thresholds[-1]),
        "score_max": float(blocks.thresholds[0]),
        "other_columns": list(table.columns),
        "roc_auc": float(rk.roc_auc(blocks)),
        "average_precision": float(rk.average_precision(blocks)),
        "partial_auc": {
            "max_fpr": float(pauc.max_fpr),
            "raw": float(pauc.raw),
            "standardized": float(pauc.standardized),
            "standardization": "mcclish",
        },
        "operating_points": points,
        "cost_optimal": {
            "cost_fp": float(cost_fp),
            "cost_fn": float(cost_fn),
            "threshold": _threshold(best.threshold),
            "expected_cost": float(best.cost),
            "tp": float(best.tp),
            "fp": float(best.fp),
            "tn": float(best.tn),
            "fn": float(best.fn),
            "flagged": float(best.tp + best.fp),
        },
    }


# --- text ---------------------------------------------------------------------------------------


def _num(value: float | None, digits: int = 4) -> str:
    return "-" if value is None else f"{value:.{digits}f}"


def _count(value: float) -> str:
    """Counts: integers without decimals, fractional (weighted) counts with two."""
    return f"{int(value)}" if float(value).is_integer() else f"{value:.2f}"


def _thr(value: float | None) -> str:
    return "none (flag nothing)" if value is None else f"{value:.6g}"


def _table(header: list[str], rows: list[list[str]], indent: str = "  ") -> list[str]:
    widths = [max(len(r[i]) for r in [header, *rows]) for i in range(len(header))]
    lines = [indent + "  ".join(h.rjust(w) for h, w in zip(header, widths, strict=True)).rstrip()]
    for r in rows:
        lines.append(indent + "  ".join(c.rjust(w) for c, w in zip(r, widths, strict=True)).rstrip())
    return lines


def render_summary_text(summary: dict[str, Any]) -> str:
    """Human-readable, aligned text of a :func:`summarize` result (ends with a newline)."""
    s = summary
    lines = [f"score table  {s['source']}"]
    pairs: list[tuple[str, str]] = [
        ("rows", f"{s['rows']}  ({s['positives']} positive, {s['negatives']} negative)"),
    ]
    if s["weighted"]:
        pairs.append(
            ("weighted", f"yes  (weight {_count(s['weight_positives'])} positive, "
                         f"{_count(s['weight_negatives'])} negative)")
        )
    else:
        pairs.append(("weighted", "no"))
    pairs += [
        ("prevalence", _num(s["prevalence"])),
        ("scores", f"{s['distinct_scores']} distinct, from {s['score_min']:.6g} to {s['score_max']:.6g}"),
        ("other columns", ", ".join(s["other_columns"]) or "(none)"),
        ("eval set id", f"sha256 {s['fingerprint']}"),
    ]
    pauc = s["partial_auc"]
    metrics: list[tuple[str, str]] = [
        ("ROC AUC", _num(s["roc_auc"])),
        ("average precision", _num(s["average_precision"])),
        (
            f"partial AUC, FPR <= {pauc['max_fpr']:g}",
            f"{_num(pauc['raw'])} raw, {_num(pauc['standardized'])} standardized (McClish)",
        ),
    ]
    width = max(len(k) for k, _ in pairs + metrics)
    lines += [f"  {k.ljust(width)}  {v}" for k, v in pairs]
    lines += ["", "ranking"]
    lines += [f"  {k.ljust(width)}  {v}" for k, v in metrics]

    lines += ["", "operating points (flagged = score >= threshold; tied scores are flagged together)"]
    rows = []
    for p in s["operating_points"]:
        rows.append(
            [
                f"{p['fpr_cap']:g}",
                "none" if p["threshold"] is None else f"{p['threshold']:.6g}",
                _num(p["recall"]),
                _num(p["precision"]),
                _num(p["fpr"]),
                _count(p["flagged"]),
            ]
        )
    lines += _table(["FPR cap", "threshold", "recall", "precision", "FPR", "flagged"], rows)

    c = s["cost_optimal"]
    lines += [
        "",
        f"cost-optimal threshold (false alarm costs {c['cost_fp']:g}, missed positive {c['cost_fn']:g})",
        f"  threshold {_thr(c['threshold'])}, expected cost {c['expected_cost']:.6g} per example; "
        f"flags {_count(c['flagged'])} ({_count(c['tp'])} true, {_count(c['fp'])} false), "
        f"misses {_count(c['fn'])}",
    ]
    return "\n".join(lines) + "\n"
