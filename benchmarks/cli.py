"""Wall-clock of the commands a CI job runs, against naive peers measured in the same run.

    python benchmarks/cli.py [--repeats 3] [--peer-replicates 100]

Figures:
- ``rankgate --help``: against a bare ``python -c pass`` (interpreter start-up), target < 0.5 s;
- ``rankgate check`` on the demo scenario with its policy (policies/leak-watch.toml, 2000 paired
  bootstrap resamples per check and slice, baseline adopted beforehand), target < 3 s wall;
- the naive peer a practitioner writes for the same checks: read the CSVs with pandas, then for each
  replicate resample row indices within each class and re-run scikit-learn's metrics on candidate
  and baseline (timed on ``--peer-replicates`` replicates per check and slice, scaled to 2000).

Every process is started fresh (``subprocess``), so import time counts, as it does in CI.
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
POLICY = ROOT / "policies" / "leak-watch.toml"

PEER = r'''
import sys, time
import numpy as np, pandas as pd
from sklearn.metrics import roc_auc_score, roc_curve, average_precision_score

cand = pd.read_csv(sys.argv[1]); base = pd.read_csv(sys.argv[2])
base = base.set_index("id").loc[cand["id"]].reset_index()
B = int(sys.argv[3])
rng = np.random.default_rng(0)

def recall_at_fpr(y, s, cap=0.05):
    fpr, tpr, _ = roc_curve(y, s)
    return tpr[fpr <= cap].max()

def paired(y, a, b, metric):
    pos, neg = np.flatnonzero(y == 1), np.flatnonzero(y == 0)
    out = []
    for _ in range(B):
        idx = np.concatenate([rng.choice(pos, pos.size), rng.choice(neg, neg.size)])
        out.append(metric(y[idx], a[idx]) - metric(y[idx], b[idx]))
    return np.percentile(out, [2.5, 97.5])

y, a, b = cand["label"].to_numpy(), cand["score"].to_numpy(), base["score"].to_numpy()
paired(y, a, b, roc_auc_score)
paired(y, a, b, recall_at_fpr)
paired(y, a, b, average_precision_score)
for d in sorted(cand["district"].unique()):
    m = (cand["district"] == d).to_numpy()
    paired(y[m], a[m], b[m], recall_at_fpr)
'''


def wall(cmd: list[str], repeats: int) -> tuple[float, int]:
    times = []
    code = 0
    for _ in range(repeats):
        start = time.perf_counter()
        proc = subprocess.run(cmd, capture_output=True, text=True)
        times.append(time.perf_counter() - start)
        code = proc.returncode
        if code not in (0, 1):
            sys.exit(f"command failed ({code}): {' '.join(cmd)}\n{proc.stderr}")
    return statistics.median(times), code


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--peer-replicates", type=int, default=100)
    args = parser.parse_args()
    rankgate = [sys.executable, "-m", "gate"]

    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp)
        from gate.demo import write_scenario

        paths = write_scenario(out)
        subprocess.run(
            [*rankgate, "adopt", "--policy", str(POLICY), "--candidate", str(paths["production"]),
             "--baseline", str(out / "baseline")],
            check=True, capture_output=True,
        )

        bare, _ = wall([sys.executable, "-c", "pass"], args.repeats)
        helptime, _ = wall([*rankgate, "--help"], args.repeats)
        check, code = wall(
            [*rankgate, "check", "--policy", str(POLICY), "--candidate", str(paths["candidate_better"]),
             "--baseline", str(out / "baseline"), "--quiet"],
            args.repeats,
        )
        peer_b = args.peer_replicates
        peer, _ = wall(
            [sys.executable, "-c", PEER, str(paths["candidate_better"]), str(paths["production"]), str(peer_b)], 1
        )
        peer_scaled = peer * 2000 / peer_b

    print(f"python -c pass                 {bare:7.3f} s")
    print(f"rankgate --help                {helptime:7.3f} s   target < 0.5 s   "
          f"({helptime - bare:.3f} s above interpreter start-up)")
    print(f"rankgate check (demo, 2000 resamples x 6 check results)")
    print(f"                               {check:7.3f} s   target < 3 s   exit code {code}")
    print(f"naive peer, {peer_b} replicates     {peer:7.3f} s   -> scaled to 2000 replicates: {peer_scaled:.1f} s")
    print(f"ratio naive / rankgate check   {peer_scaled / check:7.1f} x")


if __name__ == "__main__":
    main()
