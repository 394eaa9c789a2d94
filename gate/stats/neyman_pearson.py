"""Neyman-Pearson threshold: a score cut whose true false-positive rate exceeds alpha with
probability at most delta, chosen as an order statistic of the negatives' scores."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from gate.errors import UndefinedMetricError
from gate.stats._common import check_probability

__all__ = ["NpThreshold", "min_negatives", "np_threshold"]


@dataclass(frozen=True)
class NpThreshold:
    """The Neyman-Pearson order-statistic threshold.

    Attributes
    ----------
    rank : int
        ``k*``, the 1-based rank of the chosen negative score in ascending order.
    rank_from_top : int
        ``n - k* + 1`` (1 = the highest negative score).
    threshold : float
        ``t_(k*)``. Flag an example when its score is **strictly greater** than this.
    violation_bound : float
        ``v(k*) = P(Binomial(n, 1 - alpha) >= k*)``, the bound on P(true FPR > alpha); <= delta.
    n_negatives : int
        ``n``, the number of negative scores used.
    alpha, delta : float
        The FPR cap and the allowed probability of exceeding it.
    empirical_fpr : float
        Share of the ``n`` negatives strictly above the threshold (``(n - k*) / n`` without ties).
    """

    rank: int
    rank_from_top: int
    threshold: float
    violation_bound: float
    n_negatives: int
    alpha: float
    delta: float
    empirical_fpr: float

    @property
    def ge_threshold(self) -> float:
        """The same cut in the "flag when score >= threshold" convention of :mod:`gate.ranking`:
        the next float above ``threshold``."""
        return float(np.nextafter(self.threshold, np.inf))

    def flags(self, scores: ArrayLike) -> NDArray[np.bool_]:
        """Which ``scores`` the threshold flags (``score > threshold``)."""
        return np.asarray(scores, dtype=np.float64) > self.threshold


def min_negatives(alpha: float, delta: float) -> int:
    """Smallest number of negatives for which a Neyman-Pearson threshold exists.

    Parameters
    ----------
    alpha : float
        FPR cap, in (0, 1).
    delta : float
        Allowed probability that the true FPR exceeds ``alpha``, in (0, 1).

    Returns
    -------
    int
        The smallest ``n`` with ``(1 - alpha)^n <= delta``, i.e. ``ceil(ln delta / ln(1 - alpha))``
        (up to rounding, which is settled by evaluating the bound itself).

    Raises
    ------
    ValueError
        When ``alpha`` or ``delta`` is outside (0, 1).

    Notes
    -----
    Even the largest negative score, ``t_(n)``, has violation bound ``(1 - alpha)^n``: the chance
    that all ``n`` negatives fall below the true ``(1 - alpha)`` quantile.

    References
    ----------
    Tong X, Feng Y, Li JJ (2018). Neyman-Pearson classification algorithms and NP receiver operating
    characteristics. Science Advances 4:eaao1659.

    Examples
    --------
    >>> min_negatives(0.05, 0.05)
    59
    """
    a = check_probability(alpha, name="alpha")
    d = check_probability(delta, name="delta")
    n = max(1, math.ceil(math.log(d) / math.log1p(-a)))
    while _v(n, n, a) > d:
        n += 1
    while n > 1 and _v(n - 1, n - 1, a) <= d:
        n -= 1
    return n


def np_threshold(negative_scores: ArrayLike, *, alpha: float, delta: float) -> NpThreshold:
    """Neyman-Pearson umbrella threshold from held-out negative scores.

    Parameters
    ----------
    negative_scores : array_like of float
        Scores of the negative examples (finite).
    alpha : float
        FPR cap, in (0, 1).
    delta : float
        Allowed probability that the true FPR of the threshold exceeds ``alpha``, in (0, 1).

    Returns
    -------
    NpThreshold
        ``rank``, ``rank_from_top``, ``threshold``, ``violation_bound``, ``n_negatives``.

    Raises
    ------
    UndefinedMetricError
        When there are fewer negatives than :func:`min_negatives` requires (the message names that
        number), or no negatives at all.
    ValueError
        When ``alpha`` or ``delta`` is outside (0, 1), or a score is not finite.

    Notes
    -----
    Sort the negatives ascending, ``t_(1) <= ... <= t_(n)``, and flag a score when it is greater
    than ``t_(k)``. For continuous scores ``P(FPR(t_(k)) > alpha) = v(k) =
    P(Binomial(n, 1 - alpha) >= k)``; the rule takes ``k* = min{k : v(k) <= delta}``, the lowest
    threshold (most recall) that keeps the bound.

    Ties. The flag is strict (``score > t_(k*)``), so negatives tied with ``t_(k*)`` are never
    flagged, even those ranked above ``k*``. With that rule the bound still holds for any score
    distribution, continuous or not: the FPR exceeds alpha only if ``t_(k*) < q``, the smallest
    score with ``P(Y <= q) >= 1 - alpha``, which needs ``k*`` of the ``n`` negatives below ``q``,
    and each negative is below ``q`` with probability at most ``1 - alpha``. With ties the bound
    is conservative (the probability is at most, no longer exactly, ``v(k*)``) and the cut may flag
    fewer examples than ``n - k*`` negatives' worth; ``empirical_fpr`` reports the actual share.
    Flagging ``score >= t_(k*)`` instead would break the guarantee when scores are tied.

    References
    ----------
    Tong X, Feng Y, Li JJ (2018). Neyman-Pearson classification algorithms and NP receiver operating
    characteristics. Science Advances 4:eaao1659.

    Examples
    --------
    With 59 negatives, alpha = delta = 0.05, only the maximum works: v(59) = 0.95^59 = 0.0485.

    >>> t = np_threshold(np.arange(59.0), alpha=0.05, delta=0.05)
    >>> t.rank, t.rank_from_top, t.threshold
    (59, 1, 58.0)
    """
    a = check_probability(alpha, name="alpha")
    d = check_probability(delta, name="delta")
    s = np.asarray(negative_scores, dtype=np.float64).ravel()
    if s.size and not np.all(np.isfinite(s)):
        raise ValueError("negative_scores must be finite")
    n = int(s.size)
    need = min_negatives(a, d)
    if n < need:
        raise UndefinedMetricError(
            f"a Neyman-Pearson threshold with alpha={a:g}, delta={d:g} needs at least {need} negatives, "
            f"got {n}"
        )
    from scipy.stats import binom

    # k* - 1 = smallest j with P(Bin <= j) >= 1 - delta; then settle rounding with v itself.
    k = int(binom.ppf(1.0 - d, n, 1.0 - a)) + 1
    k = min(max(k, 1), n)
    while k > 1 and _v(k - 1, n, a) <= d:
        k -= 1
    while _v(k, n, a) > d:
        k += 1
    t = float(np.partition(s, k - 1)[k - 1])
    return NpThreshold(
        rank=k,
        rank_from_top=n - k + 1,
        threshold=t,
        violation_bound=_v(k, n, a),
        n_negatives=n,
        alpha=a,
        delta=d,
        empirical_fpr=float(np.count_nonzero(s > t)) / n,
    )


def _v(k: int, n: int, alpha: float) -> float:
    """P(Binomial(n, 1 - alpha) >= k)."""
    from scipy.stats import binom

    return float(binom.sf(k - 1, n, 1.0 - alpha))
