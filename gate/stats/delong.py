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
    x, y, _, _ = _own_placements(ranking)
    m, n = x.size, y.size
    auc = float(x.mean())
    x -= auc
    y -= y.mean()
    var10 = float(np.dot(x, x)) / (m - 1)
    var01 = float(np.dot(y, y)) / (n - 1)
    return AucEstimate(auc, var10 / m + var01 / n, m, n)


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
    xa, ya, pos_idx, neg_idx = _own_placements(a)
    pb = _placements(b)
    m, n = xa.size, ya.size
    if a.n != b.n or pb.m != m:
        check_same_examples(a, b)  # raises, naming what differs
    # Work in a's sorted order; b's placements need b's block of each example listed in a's
    # order (one random gather). np.take: faster than fancy indexing.
    block_b = np.take(b.block_of, a.order)
    if b.k == b.n:
        # One example per block in b, so block index = position in b's order. Equal class sizes
        # and every positive of a positive in b means the same labels everywhere.
        if not np.all(np.take(b.labels_sorted, np.take(block_b, pos_idx))):
            check_same_examples(a, b)  # raises with the count
    else:
        check_same_examples(a, b)
    xb, yb = pb.at(np.take(block_b, pos_idx), np.take(block_b, neg_idx))
    del block_b
    auc_a, auc_b = float(xa.mean()), float(xb.mean())
    xa -= auc_a
    xb -= auc_b
    ya -= ya.mean()
    yb -= yb.mean()
    var10_a, var10_b = float(np.dot(xa, xa)) / (m - 1), float(np.dot(xb, xb)) / (m - 1)
    var01_a, var01_b = float(np.dot(ya, ya)) / (n - 1), float(np.dot(yb, yb)) / (n - 1)
    cov = float(np.dot(xa, xb)) / (m - 1) / m + float(np.dot(ya, yb)) / (n - 1) / n
    xa -= xb
    ya -= yb
    var_delta = float(np.dot(xa, xa)) / (m - 1) / m + float(np.dot(ya, ya)) / (n - 1) / n
    var_a = var10_a / m + var01_a / n
    var_b = var10_b / m + var01_b / n
    delta = auc_a - auc_b
    se = math.sqrt(max(var_delta, 0.0))
    if se > 0.0:
        z = delta / se
    elif delta == 0.0:
        z = 0.0
    else:
        z = math.copysign(math.inf, delta)
    p = 2.0 * norm_cdf(-abs(z))
    return PairedAuc(
        auc_a=auc_a,
        auc_b=auc_b,
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
class _Placements:
    """Per-block placements of one ranking. ``v10[b]`` is meaningful where block b holds
    positives, ``v01[b]`` where it holds negatives."""

    v10: NDArray[np.float64]  # (negatives strictly below + half the negatives in the block) / n
    v01: NDArray[np.float64]  # (positives strictly above + half the positives in the block) / m
    m: int
    n: int

    def at(
        self, pos_blocks: NDArray[np.intp], neg_blocks: NDArray[np.intp]
    ) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        """Placements of the positives and negatives sitting in the given blocks."""
        return np.take(self.v10, pos_blocks), np.take(self.v01, neg_blocks)


def _placements(r: Ranking) -> _Placements:
    _check_unweighted(r)
    # Cumulative positives in float64: counts are integers below 2**53, so exact.
    cum_pos = np.cumsum(r.labels_sorted, dtype=np.float64)
    total = r.n
    m = int(cum_pos[-1])
    n = total - m
    _check_counts(m, n)
    if r.k == total:
        # One example per block: a positive's block holds no negative and vice versa. At sorted
        # position i, a negative has cum_pos[i] positives above it; a positive has
        # n - (i + 1 - cum_pos[i]) negatives below it.
        v01 = cum_pos / m
        v10 = cum_pos
        v10 -= np.arange(1, total + 1, dtype=np.float64)
        v10 += n
        v10 /= n
        return _Placements(v10, v01, m, n)
    ends = np.empty(r.k, dtype=np.intp)
    ends[:-1] = r.starts[1:]
    ends[-1] = total
    cum_pos = np.take(cum_pos, ends - 1)  # positives in this block and above
    cum_neg = ends - cum_pos
    pos = np.diff(cum_pos, prepend=0.0)
    neg = np.diff(cum_neg, prepend=0.0)
    v10 = ((n - cum_neg) + 0.5 * neg) / n
    v01 = (cum_pos - 0.5 * pos) / m
    return _Placements(v10, v01, m, n)


def _own_placements(
    r: Ranking,
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.intp], NDArray[np.intp]]:
    """Placements of the positives and the negatives listed in r's sorted order, and their
    sorted positions."""
    pos_idx = np.flatnonzero(r.labels_sorted)
    neg_idx = np.flatnonzero(~r.labels_sorted)
    if r.k != r.n:
        pl = _placements(r)
        x, y = pl.at(_sorted_blocks(r, pos_idx), _sorted_blocks(r, neg_idx))
        return x, y, pos_idx, neg_idx
    _check_unweighted(r)
    m, n = pos_idx.size, neg_idx.size
    _check_counts(m, n)
    # One example per block. The j-th positive (0-based) at sorted position i has i - j
    # negatives above it, so n - i + j below; the j-th negative at position i has i - j
    # positives above it.
    x = np.arange(m, dtype=np.float64)
    x -= pos_idx
    x += n
    x /= n
    y = neg_idx.astype(np.float64)
    y -= np.arange(n, dtype=np.float64)
    y /= m
    return x, y, pos_idx, neg_idx


def _check_unweighted(r: Ranking) -> None:
    if not r.unit_weights:
        w = np.asarray(r.weights_sorted)
        if w.size and not np.all(w == w[0]):
            raise UndefinedMetricError(
                "DeLong's variance counts examples and is undefined for unequal example weights; "
                "use the bootstrap for weighted tables"
            )


def _check_counts(m: int, n: int) -> None:
    if m < 2 or n < 2:
        raise UndefinedMetricError(
            f"DeLong's variance needs at least 2 positives and 2 negatives, got {m} positives and {n} negatives"
        )


def _sorted_blocks(r: Ranking, positions: NDArray[np.intp]) -> NDArray[np.intp]:
    """Block index of the examples at the given sorted positions (a ranking with ties; without
    them the block index is the position, which :func:`_own_placements` handles itself)."""
    return np.searchsorted(r.starts, positions, side="right") - 1


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
