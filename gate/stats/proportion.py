"""Confidence intervals for a binomial proportion (recall, precision, FPR at a fixed threshold).

Wilson's score interval is the default: close to nominal coverage even for small counts and
proportions near 0 or 1, where the Wald interval fails. Clopper-Pearson ("exact") is available on
request; it guarantees at least nominal coverage and is wider.
"""

from __future__ import annotations

import math
import numbers
from typing import Literal

from gate.errors import UndefinedMetricError
from gate.stats._common import check_confidence, z_two_sided
from gate.stats.interval import Interval

__all__ = ["clopper_pearson_interval", "proportion_interval", "wilson_interval"]


def wilson_interval(k: int, n: int, *, confidence: float = 0.95) -> Interval:
    """Wilson score interval for ``k`` successes in ``n`` trials (no continuity correction).

    Parameters
    ----------
    k : int
        Successes, ``0 <= k <= n`` (e.g. true positives, for recall).
    n : int
        Trials, ``n >= 1`` (e.g. positives).
    confidence : float, default 0.95
        Two-sided confidence level.

    Returns
    -------
    Interval
        Method "wilson". The end is exactly 0 when ``k = 0`` and exactly 1 when ``k = n``.

    Raises
    ------
    UndefinedMetricError
        When ``n = 0`` (the proportion is undefined, e.g. recall with no positives).
    ValueError
        When ``k`` or ``n`` is not a non-negative whole number, ``k > n``, or ``confidence`` is
        outside (0, 1).

    Notes
    -----
    With ``p = k / n`` and ``z = Phi^-1((1 + confidence) / 2)`` the interval is
    ``(p + z^2 / 2n +/- z sqrt(p (1 - p) / n + z^2 / 4n^2)) / (1 + z^2 / n)``, the set of true
    proportions not rejected by the two-sided score test. Equal to
    ``scipy.stats.binomtest(k, n).proportion_ci(method="wilson")``.

    References
    ----------
    Wilson EB (1927). Probable inference, the law of succession, and statistical inference.
    J Am Stat Assoc 22:209-212. Newcombe RG (1998). Two-sided confidence intervals for the single
    proportion: comparison of seven methods. Stat Med 17:857-872.

    Examples
    --------
    >>> iv = wilson_interval(0, 20)
    >>> iv.low, round(iv.high, 6)
    (0.0, 0.161125)
    """
    k, n = _check_counts(k, n)
    c = check_confidence(confidence)
    z = z_two_sided(c)
    p = k / n
    z2 = z * z
    denom = 1.0 + z2 / n
    centre = (p + z2 / (2.0 * n)) / denom
    half = z * math.sqrt(p * (1.0 - p) / n + z2 / (4.0 * n * n)) / denom
    low = 0.0 if k == 0 else max(0.0, centre - half)
    high = 1.0 if k == n else min(1.0, centre + half)
    return Interval(low, high, c, "wilson")


def clopper_pearson_interval(k: int, n: int, *, confidence: float = 0.95) -> Interval:
    """Clopper-Pearson ("exact") interval for ``k`` successes in ``n`` trials.

    Parameters
    ----------
    k : int
        Successes, ``0 <= k <= n``.
    n : int
        Trials, ``n >= 1``.
    confidence : float, default 0.95
        Two-sided confidence level.

    Returns
    -------
    Interval
        Method "clopper-pearson".

    Raises
    ------
    UndefinedMetricError
        When ``n = 0``.
    ValueError
        When ``k`` or ``n`` is not a non-negative whole number, ``k > n``, or ``confidence`` is
        outside (0, 1).

    Notes
    -----
    With ``a = 1 - confidence``: ``low = Beta(a/2; k, n - k + 1)`` and
    ``high = Beta(1 - a/2; k + 1, n - k)`` (quantiles of beta distributions), with ``low = 0``
    when ``k = 0`` and ``high = 1`` when ``k = n``. It inverts two one-sided binomial tests, each
    at level ``a/2``, so coverage is at least ``confidence`` for every true proportion.

    References
    ----------
    Clopper CJ, Pearson ES (1934). The use of confidence or fiducial limits illustrated in the case
    of the binomial. Biometrika 26:404-413.

    Examples
    --------
    >>> iv = clopper_pearson_interval(20, 20)
    >>> round(iv.low, 6), iv.high
    (0.831567, 1.0)
    """
    from scipy.special import betaincinv

    k, n = _check_counts(k, n)
    c = check_confidence(confidence)
    a = 1.0 - c
    low = 0.0 if k == 0 else float(betaincinv(k, n - k + 1, a / 2.0))
    high = 1.0 if k == n else float(betaincinv(k + 1, n - k, 1.0 - a / 2.0))
    return Interval(low, high, c, "clopper-pearson")


def proportion_interval(
    k: int,
    n: int,
    *,
    confidence: float = 0.95,
    method: Literal["wilson", "clopper-pearson"] = "wilson",
) -> Interval:
    """Interval for a proportion by ``method``: "wilson" (default) or "clopper-pearson".

    See :func:`wilson_interval` and :func:`clopper_pearson_interval` for the formulas, errors and
    references.

    Examples
    --------
    >>> proportion_interval(45, 50, method="clopper-pearson").method
    'clopper-pearson'
    """
    if method == "wilson":
        return wilson_interval(k, n, confidence=confidence)
    if method == "clopper-pearson":
        return clopper_pearson_interval(k, n, confidence=confidence)
    raise ValueError(f"method must be 'wilson' or 'clopper-pearson', got {method!r}")


def _check_counts(k: int, n: int) -> tuple[int, int]:
    kk = _whole(k, "k")
    nn = _whole(n, "n")
    if nn == 0:
        raise UndefinedMetricError("a proportion is undefined with 0 trials (n = 0)")
    if kk > nn:
        raise ValueError(f"k must not exceed n, got k={k!r}, n={n!r}")
    return kk, nn


def _whole(x: object, name: str) -> int:
    if isinstance(x, bool) or not isinstance(x, numbers.Real):
        raise ValueError(f"{name} must be a non-negative whole number, got {x!r}")
    xf = float(x)
    if not (math.isfinite(xf) and xf >= 0 and xf == math.floor(xf)):
        raise ValueError(f"{name} must be a non-negative whole number, got {x!r}")
    return int(xf)
