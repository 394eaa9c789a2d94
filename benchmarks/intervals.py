"""Benchmark: paired DeLong and the paired bootstrap on 1 million paired rows, against the naive peer.

Scenario (invented, fixed seed): one night's scores for 1,000,000 pipe segments from the
production model (baseline) and a retrained one (candidate), about 2 % confirmed leaks.

Measured in the same run:
  * one ``np.argsort`` of the candidate's scores (the unit for the DeLong target),
  * ``rank()`` of each model (the one sort per model everything else reuses),
  * ``paired_delong`` given the two rankings (target: <= 3 x one argsort), and end to end,
  * a 1000-replicate paired bootstrap of recall_at_fpr(0.01) and of average precision,
  * the naive peer a practitioner writes: per replicate, resample row indices (stratified, like
    ours), re-run scikit-learn's ``roc_curve`` / ``average_precision_score`` on both models;
    20 replicates timed and scaled to 1000 (target: ours >= 20 x faster per replicate),
  * peak memory: tracemalloc peak of each phase (numpy reports its buffers to tracemalloc) and
    the process's peak RSS before the naive peer runs (target < 2 GB).

Run:  python benchmarks/intervals.py [--rows N] [--resamples B] [--naive-reps R]
scikit-learn is needed only here, for the naive peer.
"""

from __future__ import annotations

import argparse
import gc
import resource
import sys
import time
import tracemalloc
from collections.abc import Callable
from typing import Any

import numpy as np

from gate.ranking import average_precision, rank, recall_at_fpr_values
from gate.stats import paired_bootstrap, paired_bootstrap_many, paired_delong

SEED = 20240611
FPR_CAP = 0.01


def make_scores(n: int, seed: int = SEED) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    leak = rng.random(n) < 0.02
    signal = rng.normal(size=n) + 2.0 * leak
    baseline = signal + 0.9 * rng.normal(size=n)
    candidate = signal + 0.7 * rng.normal(size=n)
    return candidate, baseline, leak


def best_of(fn: Callable[[], Any], repeat: int = 3) -> tuple[float, Any]:
    best = float("inf")
    out = None
    for _ in range(repeat):
        gc.collect()
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def traced(fn: Callable[[], Any]) -> tuple[float, float, Any]:
    """Wall time and tracemalloc peak (bytes) of one call."""
    gc.collect()
    tracemalloc.start()
    tracemalloc.reset_peak()
    t0 = time.perf_counter()
    out = fn()
    dt = time.perf_counter() - t0
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return dt, float(peak), out


def naive_recall_at_fpr(y: np.ndarray, s: np.ndarray, cap: float) -> float:
    from sklearn.metrics import roc_curve

    fpr, tpr, _ = roc_curve(y, s)
    return float(tpr[fpr <= cap].max())


def naive_replicates(
    cand: np.ndarray, base: np.ndarray, y: np.ndarray, reps: int, seed: int
) -> tuple[np.ndarray, np.ndarray]:
    """The practitioner's loop: resample indices within each class, re-run scikit-learn."""
    from sklearn.metrics import average_precision_score

    rng = np.random.default_rng(seed)
    pos = np.flatnonzero(y)
    neg = np.flatnonzero(~y)
    rec = np.empty((reps, 2))
    ap = np.empty((reps, 2))
    for i in range(reps):
        idx = np.concatenate([rng.choice(pos, pos.size), rng.choice(neg, neg.size)])
        yy = y[idx]
        for j, s in enumerate((cand, base)):
            ss = s[idx]
            rec[i, j] = naive_recall_at_fpr(yy, ss, FPR_CAP)
            ap[i, j] = average_precision_score(yy, ss)
    return rec, ap


def main(argv: list[str] | None = None) -> int:
    ap_ = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap_.add_argument("--rows", type=int, default=1_000_000)
    ap_.add_argument("--resamples", type=int, default=1000)
    ap_.add_argument("--naive-reps", type=int, default=20)
    args = ap_.parse_args(argv)
    n, b_count, naive_reps = args.rows, args.resamples, args.naive_reps

    cand, base, y = make_scores(n)
    print(f"rows {n:,}  positives {int(y.sum()):,}  resamples {b_count}  naive replicates {naive_reps}")
    print(f"numpy {np.__version__}, python {sys.version.split()[0]}")
    print()

    t_sort, _ = best_of(lambda: np.argsort(cand))
    t_rank, (ra, rb) = best_of(lambda: (rank(cand, y), rank(base, y)))
    t_delong, res = best_of(lambda: paired_delong(ra, rb), repeat=5)
    _, mem_delong, _ = traced(lambda: paired_delong(ra, rb))
    print("paired DeLong")
    print(f"  one argsort of one model's scores   {t_sort:8.3f} s")
    print(f"  rank() of both models               {t_rank:8.3f} s")
    print(f"  paired_delong given the rankings    {t_delong:8.3f} s   = {t_delong / t_sort:5.2f} x argsort (target <= 3)")
    print(f"  end to end (rank both + DeLong)     {t_rank + t_delong:8.3f} s   = {(t_rank + t_delong) / t_sort:5.2f} x argsort")
    print(f"  tracemalloc peak of paired_delong   {mem_delong / 2**20:8.1f} MiB")
    print(f"  delta {res.delta:+.5f}  se {res.se:.5f}  p {res.p_value:.3g}")
    print()

    def recall_stat(blocks: Any) -> Any:
        return recall_at_fpr_values(blocks, fpr=FPR_CAP)

    last = [time.perf_counter()]

    def progress(done: int, total: int) -> None:
        now = time.perf_counter()
        if sys.stderr.isatty() and (now - last[0] > 1.0 or done == total):
            last[0] = now
            print(f"\r  bootstrap {done}/{total}", end="\n" if done == total else "", file=sys.stderr, flush=True)

    t_rec, mem_rec, boot_rec = traced(
        lambda: paired_bootstrap(ra, rb, recall_stat, resamples=b_count, seed=1, progress=progress)
    )
    t_ap, mem_ap, boot_ap = traced(
        lambda: paired_bootstrap(ra, rb, average_precision, resamples=b_count, seed=1, progress=progress)
    )
    t_both, mem_both, boot_both = traced(
        lambda: paired_bootstrap_many(
            ra, rb, {"recall": recall_stat, "ap": average_precision}, resamples=b_count, seed=1, progress=progress
        )
    )
    assert np.array_equal(boot_both["ap"].replicates_delta, boot_ap.replicates_delta)
    rss_ours = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024.0  # Linux: KiB

    t_naive, (nrec, nap) = best_of(lambda: naive_replicates(cand, base, y, naive_reps, seed=1), repeat=1)
    naive_per = t_naive / naive_reps
    ours_sep = (t_rec + t_ap) / b_count
    ours_both = t_both / b_count
    print(f"paired bootstrap, {b_count} replicates (each replicate: both models)")
    print(f"  recall_at_fpr({FPR_CAP}) alone          {t_rec:8.2f} s   ({t_rec / b_count * 1e3:6.1f} ms / replicate)")
    print(f"  average_precision alone             {t_ap:8.2f} s   ({t_ap / b_count * 1e3:6.1f} ms / replicate)")
    print(f"  both, two separate runs             {ours_sep * 1e3:8.1f} ms / replicate")
    print(f"  both, one run (paired_bootstrap_many) {t_both:6.2f} s   ({ours_both * 1e3:6.1f} ms / replicate)")
    print(f"  naive peer (sklearn, {naive_reps} reps)       {naive_per * 1e3:8.1f} ms / replicate  "
          f"-> {naive_per * b_count:7.1f} s scaled to {b_count}")
    print(f"  speed-up per replicate, one run     {naive_per / ours_both:8.1f} x   (target >= 20)")
    print(f"  speed-up per replicate, two runs    {naive_per / ours_sep:8.1f} x")
    print(f"  tracemalloc peak, recall bootstrap  {mem_rec / 2**20:8.1f} MiB")
    print(f"  tracemalloc peak, AP bootstrap      {mem_ap / 2**20:8.1f} MiB")
    print(f"  tracemalloc peak, both in one run   {mem_both / 2**20:8.1f} MiB")
    print(f"  process peak RSS before the naive   {rss_ours / 2**30:8.2f} GiB   (target < 2)")
    print()
    iv_r = boot_rec.delta_interval()
    iv_a = boot_ap.delta_interval()
    print("sanity (same quantities, ours vs naive replicates; the replicates differ, the spread should not)")
    print(f"  recall delta {boot_rec.delta:+.4f}  ours se {boot_rec.se_delta:.4f}  naive se "
          f"{np.std(nrec[:, 0] - nrec[:, 1], ddof=1):.4f}  interval [{iv_r.low:+.4f}, {iv_r.high:+.4f}]")
    print(f"  AP delta     {boot_ap.delta:+.4f}  ours se {boot_ap.se_delta:.4f}  naive se "
          f"{np.std(nap[:, 0] - nap[:, 1], ddof=1):.4f}  interval [{iv_a.low:+.4f}, {iv_a.high:+.4f}]")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
