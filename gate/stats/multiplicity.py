"""Multiplicity adjustment for a family of tests (Holm's step-down procedure)."""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

__all__ = ["holm"]


def holm(p_values: ArrayLike) -> NDArray[np.float64]:
    """Holm-adjusted p-values, in the input order.

    Parameters
    ----------
    p_values : array_like of float
        One p-value per test of the family (e.g. the one-sided p of "requirement not met" of each
        check and slice), each in [0, 1].

    Returns
    -------
    ndarray of float64
        Adjusted p-values. Rejecting every test whose adjusted p is ``<= alpha`` controls the
        family-wise error rate at ``alpha`` under any dependence between the tests.

    Raises
    ------
    ValueError
        When ``p_values`` is not one-dimensional or a value is outside [0, 1] or not finite.

    Notes
    -----
    Sort ascending, ``p_(1) <= ... <= p_(m)``; the adjusted value of ``p_(j)`` is
    ``max_{i <= j} min(1, (m - i + 1) p_(i))``. Equal p-values keep their input order in the sort
    (a stable sort), which does not change the result. An empty family gives an empty array.

    References
    ----------
    Holm S (1979). A simple sequentially rejective multiple test procedure. Scand J Statist
    6:65-70.

    Examples
    --------
    >>> holm([0.01, 0.04, 0.03, 0.005]).round(12).tolist()
    [0.03, 0.06, 0.06, 0.02]
    """
    p = np.asarray(p_values, dtype=np.float64)
    if p.ndim != 1:
        raise ValueError(f"p_values must be one-dimensional, got shape {p.shape}")
    bad = ~(np.isfinite(p) & (p >= 0.0) & (p <= 1.0))
    if np.any(bad):
        i = int(np.flatnonzero(bad)[0])
        raise ValueError(f"p_values[{i}] must be in [0, 1], got {p[i]!r}")
    m = p.size
    order = np.argsort(p, kind="stable")
    scaled = np.minimum(1.0, (m - np.arange(m)) * p[order])
    adjusted_sorted = np.maximum.accumulate(scaled)
    out = np.empty(m, dtype=np.float64)
    out[order] = adjusted_sorted
    return out
