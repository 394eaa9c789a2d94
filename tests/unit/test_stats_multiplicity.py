"""gate.stats.multiplicity (Holm) and gate.stats.interval.resolution."""

from __future__ import annotations

import math

import numpy as np
import pytest

from gate.stats import Interval, holm, resolution


def test_holm_hand_worked() -> None:
    # m = 3: sorted 0.001, 0.02, 0.04 -> 3*0.001, 2*0.02, 1*0.04 -> monotone max: 0.003, 0.04, 0.04
    np.testing.assert_allclose(holm([0.04, 0.001, 0.02]), [0.04, 0.003, 0.04], rtol=1e-12)


def test_holm_single_and_empty() -> None:
    assert holm([0.3]).tolist() == [0.3]
    assert holm([]).shape == (0,)


def test_holm_caps_at_one_and_is_at_least_raw() -> None:
    p = np.array([0.5, 0.6, 0.7, 0.01])
    adj = holm(p)
    assert np.all(adj >= p) and np.all(adj <= 1.0)
    assert adj[0] == 1.0


def test_holm_ties_keep_input_order() -> None:
    np.testing.assert_allclose(holm([0.02, 0.02, 0.5]), [0.06, 0.06, 0.5], rtol=1e-12)


@pytest.mark.parametrize("bad", [[0.1, 1.2], [-0.1], [math.nan]])
def test_holm_rejects_bad_values(bad: list[float]) -> None:
    with pytest.raises(ValueError, match=r"p_values\[\d\] must be in \[0, 1\]"):
        holm(bad)


def test_holm_rejects_2d() -> None:
    with pytest.raises(ValueError, match="one-dimensional"):
        holm([[0.1, 0.2]])


def test_resolution_is_half_width() -> None:
    assert resolution(Interval(0.75, 0.875, 0.95, "delong")) == 0.0625
    assert resolution(Interval(-0.02, 0.01, 0.95, "bootstrap-percentile")) == pytest.approx(0.015)
    assert resolution(Interval(0.3, 0.3, 0.95, "delong")) == 0.0


def test_resolution_rejects_non_finite() -> None:
    with pytest.raises(ValueError, match="finite"):
        resolution(Interval(math.nan, 0.5, 0.95, "delong"))
