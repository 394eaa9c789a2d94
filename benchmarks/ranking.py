"""Benchmark: every point metric of the ranking core against one argsort and against scikit-learn.

    python benchmarks/ranking.py [--rows N] [--repeat R] [--seed S] [--full-precision] [--weighted]

Synthetic data (fixed seed): labels ~ Bernoulli(0.02) as in the demo scenario, scores from two
overlapping normals squashed to (0, 1) and rounded to 4 decimals, so there are many ties.
``--full-precision`` keeps all 53 bits (almost no ties): rank() then cannot pack indices into
the sort keys and falls back to an argsort, the slow path. ``--weighted`` adds real weights.

Timed, in the same run and on the same arrays (best of ``--repeat``):
  ours     rank() once, blocks(), then ROC AUC, average precision, partial AUC at 0.1,
           recall / precision / threshold at FPR 0.001, 0.01, 0.05, 0.1, cost-optimal threshold
  argsort  one numpy.argsort of the scores (the floor any sort-based method pays)
  sklearn  roc_auc_score + average_precision_score + roc_curve (when scikit-learn is installed)
Peak memory of ours is measured with tracemalloc in a separate pass (numpy reports its buffers to
tracemalloc) and compared with the bytes of the input arrays.

Targets: ours <= 2.0 x argsort; >= 3 x faster than the scikit-learn trio; peak < 4 x input bytes.
"""

from __future__ import annotations

import argparse
import gc
import resource
import sys
import time
import tracemalloc
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from gate import ranking  # noqa: E402

FPRS = (0.001, 0.01, 0.05, 0.1)


def make_data(rows: int, seed: int, *, full_precision: bool = False, weighted: bool = False):
    rng = np.random.default_rng(seed)
    labels = rng.random(rows) < 0.02
    z = rng.standard_normal(rows) + 1.5 * labels
    scores = 1.0 / (1.0 + np.exp(-(z - 2.0)))
    if not full_precision:
        scores = np.round(scores, 4)
    weights = rng.uniform(0.5, 2.0, rows) if weighted else None
    return scores, labels, weights


def ours(scores: np.ndarray, labels: np.ndarray, weights: np.ndarray | None = None) -> dict[str, Any]:
    r = ranking.rank(scores, labels, weights)
    b = r.blocks()
    out: dict[str, Any] = {
        "roc_auc": ranking.roc_auc(b),
        "average_precision": ranking.average_precision(b),
        "partial_auc_0.1": ranking.partial_auc(b, max_fpr=0.1).standardized,
    }
    for a in FPRS:
        op = ranking.recall_at_fpr(b, fpr=a)
        out[f"at_fpr_{a}"] = (op.recall, op.precision, op.threshold)
    out["cost_optimal"] = ranking.optimal_cost(b, cost_fp=1.0, cost_fn=20.0).threshold
    return out


def one_argsort(scores: np.ndarray, labels: np.ndarray, weights: np.ndarray | None = None) -> Any:
    return np.argsort(scores)


def sklearn_trio(scores: np.ndarray, labels: np.ndarray, weights: np.ndarray | None = None) -> Any:
    from sklearn.metrics import average_precision_score, roc_auc_score, roc_curve

    return (
        roc_auc_score(labels, scores, sample_weight=weights),
        average_precision_score(labels, scores, sample_weight=weights),
        roc_curve(labels, scores, sample_weight=weights),
    )


def best_time(fn: Callable[..., Any], args: tuple[Any, ...], repeat: int) -> tuple[float, Any]:
    best, result = float("inf"), None
    for _ in range(repeat):
        gc.collect()
        t0 = time.perf_counter()
        result = fn(*args)
        best = min(best, time.perf_counter() - t0)
    return best, result


def peak_bytes(fn: Callable[..., Any], args: tuple[Any, ...]) -> int:
    gc.collect()
    tracemalloc.start()
    try:
        fn(*args)
        return tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--rows", type=int, default=10_000_000)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--seed", type=int, default=20240601)
    ap.add_argument("--no-sklearn", action="store_true", help="skip the scikit-learn comparison")
    ap.add_argument("--full-precision", action="store_true", help="unrounded scores (the argsort path)")
    ap.add_argument("--weighted", action="store_true", help="real-valued example weights")
    opts = ap.parse_args(argv)

    scores, labels, weights = make_data(
        opts.rows, opts.seed, full_precision=opts.full_precision, weighted=opts.weighted
    )
    data = (scores, labels, weights)
    input_bytes = scores.nbytes + labels.nbytes + (0 if weights is None else weights.nbytes)
    n_distinct = int(np.unique(scores).size)
    print(f"rows {opts.rows:,}  positives {int(labels.sum()):,}  distinct scores {n_distinct:,}  "
          f"weighted {weights is not None}  input {input_bytes / 2**20:.1f} MiB  numpy {np.__version__}")

    # Interleaved repeats (ours, argsort, scikit-learn, ours, ...) so that a change in machine
    # load affects all three alike; the best time of each is kept.
    peers: dict[str, Callable[..., Any]] = {"ours": ours, "argsort": one_argsort}
    have_sklearn = False
    if not opts.no_sklearn:
        try:
            import sklearn

            have_sklearn = True
            peers["sklearn"] = sklearn_trio
        except ImportError:
            print("scikit-learn not installed: comparison skipped")
    best = {name: float("inf") for name in peers}
    results: dict[str, Any] = {}
    for _ in range(opts.repeat):
        for name, fn in peers.items():
            t, results[name] = best_time(fn, data, 1)
            best[name] = min(best[name], t)
    t_ours, t_sort, res = best["ours"], best["argsort"], results["ours"]
    print(f"ours (rank + all point metrics) {t_ours:8.3f} s")
    print(f"one numpy.argsort               {t_sort:8.3f} s")
    ratio_sort = t_ours / t_sort
    print(f"ratio ours / argsort            {ratio_sort:8.2f}   target <= 2.0   "
          f"{'met' if ratio_sort <= 2.0 else 'MISSED'}")
    ok = ratio_sort <= 2.0
    if have_sklearn:
        t_sk, sk = best["sklearn"], results["sklearn"]
        speedup = t_sk / t_ours
        print(f"scikit-learn {sklearn.__version__} trio          {t_sk:8.3f} s")
        print(f"speed-up sklearn / ours         {speedup:8.2f}   target >= 3.0   "
              f"{'met' if speedup >= 3.0 else 'MISSED'}")
        ok = ok and speedup >= 3.0
        # The two must agree, or the timing means nothing.
        agree = abs(sk[0] - res["roc_auc"]) < 1e-9 and abs(sk[1] - res["average_precision"]) < 1e-9
        print(f"agreement with scikit-learn     roc_auc {res['roc_auc']:.12f} vs {sk[0]:.12f}, "
              f"AP {res['average_precision']:.12f} vs {sk[1]:.12f}: {'yes' if agree else 'NO'}")
        ok = ok and agree

    peak = peak_bytes(ours, data)
    peak_ratio = peak / input_bytes
    print(f"peak traced memory (ours)       {peak / 2**20:8.1f} MiB = {peak_ratio:.2f} x input   "
          f"target < 4.0   {'met' if peak_ratio < 4.0 else 'MISSED'}")
    ok = ok and peak_ratio < 4.0
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # KiB on Linux
    print(f"process max RSS (whole run)     {rss:8.1f} MiB")
    print("metrics:", {k: v for k, v in res.items()})
    return 0 if ok else 1


if __name__ == "__main__":
    raise SystemExit(main())
