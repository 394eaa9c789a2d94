"""DeLong's variance of the ROC AUC, for one model and for two models scored on the same examples.

The variance comes from the structural components (placements) of DeLong, DeLong & Clarke-Pearson
(1988): each positive's share of negatives scored below it and each negative's share of positives
scored above it, a tie counting one half. Sun & Xu (2014) obtain them from midranks in O(n log n);
here the sort is the one already done by :func:`gate.ranking.rank`, and the midrank differences are
read off the tie blocks: for a positive in block b, ``T_Z - T_X`` is the number of negatives in
blocks below b plus half the negatives in b, so a placement depends only on the example's block.
Given the rankings the work is O(n); the O(n_pos * n_neg) pair matrix is never formed.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import NDArray

from gate.errors import UndefinedMetricError
from gate.ranking import Ranking
from gate.stats._common import check_confidence, check_finite, check_same_examples, norm_cdf, z_two_sided
from gate.stats.interval import Interval

__all__ = ["AucEstimate", "PairedAuc", "delong", "paired_delong"]


@dataclass(frozen=True)
class AucEstimate:
    """A ROC AUC with its DeLong variance.

    Attributes
    ----------
    value : float
        The AUC (ties count one half).
    variance : float
        DeLong's variance estimate ``S10 / n_pos + S01 / n_neg``.
    n_pos, n_neg : int
        Number of positive and negative examples.
    """

    value: float
    variance: float
    n_pos: int
    n_neg: int

    @property
    def se(self) -> float:
        """Standard error, ``sqrt(variance)``."""
        return math.sqrt(self.variance)

    def interval(self, *, confidence: float = 0.95, scale: Literal["auc", "logit"] = "auc") -> Interval:
        """Two-sided Wald interval for the AUC.

        Parameters
        ----------
        confidence : float, default 0.95
            Two-sided confidence level.
        scale : {"auc", "logit"}
            ``"auc"``: ``value +/- z * se``, then **clipped to [0, 1]** (near 1 the Wald interval can
            pass 1; the clipped end is reported as 0 or 1, method "delong"). ``"logit"``: the Wald
            interval of ``log(A / (1 - A))`` with the delta-method error ``se / (A (1 - A))``, mapped
            back, so it always lies inside (0, 1) and is asymmetric (method "delong-logit").

        Returns
        -------
        Interval

        Notes
        -----
        When the AUC is exactly 0 or 1 every placement is 0 or 1, the variance is 0 and both scales
        return the degenerate interval ``[A, A]``; so does any data whose placements are constant
        (e.g. a model giving every example the same score: ``[0.5, 0.5]``). Such an interval states
        the estimate, not certainty; reports should say how few examples there are.
        """
        c = check_confidence(confidence)
        z = z_two_sided(c)
        a = self.value
        if scale == "auc":
            half = z * self.se
            return Interval(max(0.0, a - half), min(1.0, a + half), c, "delong")
        if scale == "logit":
            if a <= 0.0 or a >= 1.0 or self.variance == 0.0:
                return Interval(a, a, c, "delong-logit")
            centre = math.log(a / (1.0 - a))
            half = z * self.se / (a * (1.0 - a))
            return Interval(_expit(centre - half), _expit(centre + half), c, "delong-logit")
        raise ValueError(f"scale must be 'auc' or 'logit', got {scale!r}")

    def p_value_below(self, value: float) -> float:
        """One-sided p of H0: AUC >= ``value`` against H1: AUC < ``value`` (normal approximation)."""
        return _one_sided(self.value - check_finite(value, name="value"), self.se, below=True)

    def p_value_above(self, value: float) -> float:
        """One-sided p of H0: AUC <= ``value`` against H1: AUC > ``value`` (normal approximation)."""
        return _one_sided(self.value - check_finite(value, name="value"), self.se, below=False)


@dataclass(frozen=True)
class PairedAuc:
    """Two AUCs on the same examples, their DeLong covariance, and the test of their difference.

    Attributes
    ----------
    auc_a, auc_b : float
        AUC of model a (the candidate) and model b (the baseline).
    var_a, var_b, cov : float
        DeLong variances and covariance of the two AUCs.
    delta : float
        ``auc_a - auc_b``.
    se : float
        Standard error of ``delta``: ``sqrt(var_a + var_b - 2 cov)``.
    z : float
        ``delta / se`` (0 when both are 0; +/-inf when ``se`` is 0 and ``delta`` is not).
    p_value : float
        Two-sided p of H0: delta = 0, ``2 (1 - Phi(|z|))``.
    n_pos, n_neg : int
        Number of positive and negative examples.
    """

    auc_a: float
    auc_b: float
    var_a: float
    var_b: float
    cov: float
    delta: float
    se: float
    z: float
    p_value: float
    n_pos: int
    n_neg: int

    @property
    def correlation(self) -> float:
        """Correlation of the two AUC estimates (0 when either variance is 0)."""
        denom = math.sqrt(self.var_a * self.var_b)
        return self.cov / denom if denom > 0.0 else 0.0

    def delta_interval(self, *, confidence: float = 0.95) -> Interval:
        """Two-sided Wald interval for ``delta = auc_a - auc_b``, clipped to [-1, 1] (method "delong")."""
        c = check_confidence(confidence)
        half = z_two_sided(c) * self.se
        return Interval(max(-1.0, self.delta - half), min(1.0, self.delta + half), c, "delong")

    def p_value_below(self, margin: float) -> float:
        """One-sided p of H0: delta >= -margin against H1: delta < -margin.

        Small when the candidate is shown to have dropped by more than ``margin`` (a regression).
        """
        return _one_sided(self.delta + check_finite(margin, name="margin"), self.se, below=True)

    def p_value_above(self, margin: float) -> float:
        """One-sided p of H0: delta <= -margin against H1: delta > -margin.

        Small when the candidate is shown to be non-inferior within ``margin``.
        """
        return _one_sided(self.delta + check_finite(margin, name="margin"), self.se, below=False)


def delong(ranking: Ranking) -> AucEstimate:
    """ROC AUC of one model with DeLong's variance.

    Parameters
    ----------
    ranking : Ranking
        One model's scores, sorted once by :func:`gate.ranking.rank`. Unweighted (or all weights
        equal).

    Returns
    -------
    AucEstimate
        ``value``, ``variance``, ``n_pos``, ``n_neg``; ``.interval(confidence=..., scale=...)``.

    Raises
    ------
    UndefinedMetricError
        With fewer than 2 positives or 2 negatives (the ``ddof=1`` covariances of the placements
        are undefined), or when the examples carry unequal weights (DeLong's method counts
        examples; weighted tables use :func:`gate.stats.bootstrap`).

    Notes
    -----
    With ``m`` positives and ``n`` negatives, positive ``i`` in tie block ``b`` has placement
    ``V10_i = (negatives in blocks below b + negatives in b / 2) / n`` and negative ``j`` has
    ``V01_j = (positives in blocks above b + positives in b / 2) / m``. The AUC is the mean of
    either set of placements; ``S10`` and ``S01`` are their sample variances (divisor ``m - 1``,
    ``n - 1``) and ``var = S10 / m + S01 / n``. These equal the midrank formulas of Sun & Xu
    (2014), ``V10_i = (T_Z(i) - T_X(i)) / n``, since midranks give ties one half. Because a
    placement depends only on the block, the sums run over tie blocks: O(k) after the sort.

    References
    ----------
    DeLong ER, DeLong DM, Clarke-Pearson DL (1988). Comparing the areas under two or more correlated
    receiver operating characteristic curves: a nonparametric approach. Biometrics 44:837-845.
    Sun X, Xu W (2014). Fast implementation of DeLong's algorithm for comparing the areas under
    correlated receiver operating characteristic curves. IEEE Signal Process Lett 21:1389-1393.
    Hanley JA, McNeil BJ (1982). The meaning and use of the area under a ROC curve. Radiology
    143:29-36.

    Examples
    --------
    Two positives (0.9, 0.4) and two negatives (0.6, 0.1): placements 1, 1/2 and 1/2, 1;
    AUC 3/4, S10 = S01 = 1/8, variance 1/8/2 + 1/8/2 = 1/8.

    >>> import numpy as np
    >>> from gate.ranking import rank
    >>> est = delong(rank(np.array([0.9, 0.4, 0.6, 0.1]), np.array([True, True, False, False])))
    >>> est.value, est.variance
    (0.75, 0.125)
    """
    comp = _components(ranking)
    return AucEstimate(comp.auc, comp.var10 / comp.m + comp.var01 / comp.n, comp.m, comp.n)


def paired_delong(a: Ranking, b: Ranking) -> PairedAuc:
    """Paired DeLong comparison of two models scored on the same examples.

    Parameters
    ----------
    a, b : Ranking
        The candidate's and the baseline's rankings of the same examples, in the same original
        order (``gate.baseline.align`` produces such tables). Unweighted.

    Returns
    -------
    PairedAuc
        Both AUCs, their variances and covariance, ``delta = auc_a - auc_b`` with its standard
        error, ``z`` and the two-sided ``p_value``; ``.delta_interval()``, ``.p_value_below(margin)``
        and ``.p_value_above(margin)`` for non-inferiority margins.

    Raises
    ------
    UndefinedMetricError
        When the two rankings do not cover the same examples with the same labels, with fewer than
        2 positives or 2 negatives, or with unequal example weights.

    Notes
    -----
    ``cov = S10_ab / m + S01_ab / n`` where ``S10_ab`` is the sample covariance (divisor ``m - 1``)
    of the two models' placements of the same positives, and ``S01_ab`` likewise over negatives.
    The variance of the difference is ``var_a + var_b - 2 cov`` (minus: positively correlated
    models make the difference more precise); it is computed directly as the variance of the
    placement differences, so identical models give exactly 0. Then ``z = delta / se`` and
    ``p = 2 (1 - Phi(|z|))``. With ``se = 0``, ``z`` is 0 if ``delta`` is 0 (p = 1) and +/-inf
    otherwise (p = 0).

    References
    ----------
    DeLong ER, DeLong DM, Clarke-Pearson DL (1988). Biometrics 44:837-845.
    Sun X, Xu W (2014). IEEE Signal Process Lett 21:1389-1393.

    Examples
    --------
    A model compared with itself: delta 0, se 0, z 0, p 1.

    >>> import numpy as np
    >>> from gate.ranking import rank
    >>> r = rank(np.array([0.9, 0.4, 0.6, 0.1]), np.array([True, True, False, False]))
    >>> res = paired_delong(r, r)
    >>> res.delta, res.se, res.p_value
    (0.0, 0.0, 1.0)
    """
    ca = _components(a)
    cb = _components(b)
    check_same_examples(a, b)
    # Work in a's sorted order: a's placements are a monotone gather, b's need one permutation
    # (b's block of each example, listed in a's order). np.take: faster than fancy indexing.
    labels = a.labels_sorted
    pos_idx = np.flatnonzero(labels)
    neg_idx = np.flatnonzero(~labels)
    block_b = np.take(b.block_of, a.order)
    if a.starts.size == a.n:  # no ties in a: block index = sorted position
        pa, na = pos_idx, neg_idx
    else:
        block_a = np.repeat(np.arange(a.starts.size), np.diff(a.starts, append=a.n))
        pa, na = np.take(block_a, pos_idx), np.take(block_a, neg_idx)
    xa = np.take(ca.v10, pa) - ca.auc
    xb = np.take(cb.v10, np.take(block_b, pos_idx)) - cb.auc
    ya = np.take(ca.v01, na) - ca.auc
    yb = np.take(cb.v01, np.take(block_b, neg_idx)) - cb.auc
    m, n = ca.m, ca.n
    cov = float(np.dot(xa, xb)) / (m - 1) / m + float(np.dot(ya, yb)) / (n - 1) / n
    xa -= xb
    ya -= yb
    var_delta = float(np.dot(xa, xa)) / (m - 1) / m + float(np.dot(ya, ya)) / (n - 1) / n
    var_a = ca.var10 / m + ca.var01 / n
    var_b = cb.var10 / m + cb.var01 / n
    delta = ca.auc - cb.auc
    se = math.sqrt(max(var_delta, 0.0))
    if se > 0.0:
        z = delta / se
    elif delta == 0.0:
        z = 0.0
    else:
        z = math.copysign(math.inf, delta)
    p = 2.0 * norm_cdf(-abs(z))
    return PairedAuc(
        auc_a=ca.auc,
        auc_b=cb.auc,
        var_a=var_a,
        var_b=var_b,
        cov=cov,
        delta=delta,
        se=se,
        z=z,
        p_value=min(1.0, p),
        n_pos=m,
        n_neg=n,
    )


@dataclass(frozen=True, eq=False)
class _Components:
    auc: float
    v10: NDArray[np.float64]  # positive placement, per tie block
    v01: NDArray[np.float64]  # negative placement, per tie block
    var10: float  # sample variance (ddof=1) of the positive placements
    var01: float
    m: int
    n: int


def _components(r: Ranking) -> _Components:
    w = r.weights_sorted
    if w.size and not np.all(w == w[0]):
        raise UndefinedMetricError(
            "DeLong's variance counts examples and is undefined for unequal example weights; "
            "use the bootstrap for weighted tables"
        )
    # Counts (not weights), as exact integers: cumulative positives at the end of each block.
    cum_pos = np.cumsum(r.labels_sorted, dtype=np.int64)
    if r.starts.size == r.n:  # no ties: every block is one example
        ends = np.arange(1, r.n + 1)
    else:
        ends = np.empty(r.starts.size, dtype=np.int64)
        ends[:-1] = r.starts[1:]
        ends[-1] = r.n
        cum_pos = np.take(cum_pos, ends - 1)
    cum_neg = ends - cum_pos
    m = int(cum_pos[-1])
    n = int(cum_neg[-1])
    if m < 2 or n < 2:
        raise UndefinedMetricError(
            f"DeLong's variance needs at least 2 positives and 2 negatives, got {m} positives and {n} negatives"
        )
    pos = np.diff(cum_pos, prepend=0).astype(np.float64)
    neg = np.diff(cum_neg, prepend=0).astype(np.float64)
    # Placements: negatives strictly below the block plus half those in it, and likewise.
    v10 = ((n - cum_neg) + 0.5 * neg) / n
    v01 = (cum_pos - 0.5 * pos) / m
    auc = float(np.dot(pos, v10)) / m
    d = v10 - auc
    d *= d
    var10 = float(np.dot(pos, d)) / (m - 1)
    d = v01 - auc
    d *= d
    var01 = float(np.dot(neg, d)) / (n - 1)
    return _Components(auc, v10, v01, var10, var01, m, n)


def _one_sided(diff: float, se: float, *, below: bool) -> float:
    """p of H1: true value < bound (below) or > bound, with ``diff = estimate - bound``."""
    if se > 0.0:
        zz = diff / se
        return norm_cdf(zz) if below else norm_cdf(-zz)
    if below:
        return 0.0 if diff < 0.0 else 1.0
    return 0.0 if diff > 0.0 else 1.0


def _expit(x: float) -> float:
    if x >= 0:
        return 1.0 / (1.0 + math.exp(-x))
    e = math.exp(x)
    return e / (1.0 + e)
