"""Slow but obviously correct DeLong oracle: the 1988 definitions over the full pair matrix.

DeLong, DeLong & Clarke-Pearson (1988), Biometrics 44:837-845: for k scores on m positives X and
n negatives Y, psi(x, y) = 1 if x > y, 1/2 if x == y, 0 otherwise;
V10_r(X_i) = (1/n) sum_j psi(X_ri, Y_rj),  V01_r(Y_j) = (1/m) sum_i psi(X_ri, Y_rj),
theta_r = mean of psi, S10 and S01 the sample covariance matrices (divisors m - 1 and n - 1) of
the V10 and V01 rows, S = S10 / m + S01 / n.  O(k m n) time and memory: for tests only.

Import as ``from tests.oracles_delong import delong_oracle`` (the repository root is on sys.path
under ``python -m pytest``).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray


def psi(x: NDArray[np.float64], y: NDArray[np.float64]) -> NDArray[np.float64]:
    """The (m, n) kernel matrix: 1 where x_i > y_j, 1/2 where equal, 0 where below."""
    xx = np.asarray(x, dtype=np.float64)[:, None]
    yy = np.asarray(y, dtype=np.float64)[None, :]
    return (xx > yy).astype(np.float64) + 0.5 * (xx == yy)


def delong_oracle(
    scores: list[NDArray[np.float64]] | NDArray[np.float64], labels: NDArray[np.bool_]
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """AUCs (k,) and the DeLong covariance matrix S (k, k) of k score vectors on the same labels."""
    s = np.atleast_2d(np.asarray(scores, dtype=np.float64))
    y = np.asarray(labels, dtype=bool)
    m = int(y.sum())
    n = int((~y).sum())
    v10 = np.empty((s.shape[0], m))
    v01 = np.empty((s.shape[0], n))
    theta = np.empty(s.shape[0])
    for r in range(s.shape[0]):
        k = psi(s[r][y], s[r][~y])
        theta[r] = k.mean()
        v10[r] = k.mean(axis=1)
        v01[r] = k.mean(axis=0)
    s10 = np.atleast_2d(np.cov(v10, ddof=1))
    s01 = np.atleast_2d(np.cov(v01, ddof=1))
    return theta, s10 / m + s01 / n
