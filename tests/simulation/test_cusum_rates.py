"""Error rates of the drift alarm (gate/watch.py): false alarms on stable series, detection delay
on a slow decay, each compared with a value derived outside the code under test.

The oracle is the Brook & Evans (1972) Markov-chain approximation of the one-sided CUSUM: the
statistic S in [0, h] is cut into N cells, each step moves S by a normal increment z - k, and the
probability of having crossed h after n steps is 1 - (R^n 1)[0] for the substochastic matrix R
between the cells. Time-varying increment means (a drift) just use one R per step. The oracle is
itself checked against Siegmund's (1985) closed-form approximation of the average run length
and against textbook ARLs recalled from memory.

Model of a night: the value scatters around its true level by its standard error SE, the
interval is the Wald interval value +/- z SE (as DeLong's is), nights are independent. This is
the worst case for false alarms (an evaluation set drawn afresh each night); see gate/watch.py.

How the trend standardises (gate/watch.py): reference = mean of the first m runs, and
z_t = (reference - x_t) / sqrt(SE^2 + SE^2/m). With every SE equal (1 in SE units), write the
reference error e ~ N(0, 1/m) and the night's error eps_t ~ N(0, 1): given e, the z_t are
independent N((e + drift_t) / s, 1 / s^2) with s = sqrt(1 + 1/m). So the false-alarm
probability of a window is the chain's probability averaged over e (Gauss-Hermite quadrature).
"""

from __future__ import annotations

import math
from datetime import datetime, timedelta, timezone

import numpy as np
import pytest
from numpy.typing import NDArray

from gate.history import StoredRun
from gate.results import Bound, CheckResult, Decision, Result
from gate.stats.interval import Interval
from gate.watch import compute_trend, cusum

Z975 = 1.959963984540054  # z(0.975), REFERENCES.md conventions
K, H = 0.5, 4.0
T0 = datetime(2024, 1, 1, 2, 0, tzinfo=timezone.utc)


# --- oracle (Brook & Evans 1972) -------------------------------------------------------------


def _chain(k: float, h: float, mean: float, sd: float, cells: int) -> NDArray[np.float64]:
    """Transition matrix between the cells of [0, h] for S' = max(0, S + X - k), X ~ N(mean, sd^2).

    Cell 0 is the atom at 0 (width w/2); cell j >= 1 is centred on j w, w = 2h / (2 cells - 1),
    so the last cell ends exactly at h. Mass beyond h is absorption (the alarm). From cell i the
    upper edge of cell j lies (j - i + 1/2) w above the start, so the matrix is Toeplitz in j - i.
    """
    from scipy.special import ndtr  # the standard normal CDF

    w = 2.0 * h / (2 * cells - 1)
    offsets = np.arange(-(cells - 1), cells)  # j - i
    upper = ndtr(((offsets + 0.5) * w + k - mean) / sd)
    index = np.arange(cells)[None, :] - np.arange(cells)[:, None] + (cells - 1)
    cdf_upper = upper[index]
    cdf_lower = np.concatenate([np.zeros((cells, 1)), cdf_upper[:, :-1]], axis=1)
    return cdf_upper - cdf_lower


def fire_cdf(
    means: NDArray[np.float64], sd: float = 1.0, *, k: float = K, h: float = H, cells: int = 200
) -> NDArray[np.float64]:
    """P(the CUSUM started at S = 0 has fired by step t), t = 1..len(means); step t's increment
    is N(means[t-1], sd^2) - k. The distribution over the cells is carried forward step by step."""
    mass = np.zeros(cells)
    mass[0] = 1.0
    out = np.empty(len(means))
    for t, mean in enumerate(means):
        mass = mass @ _chain(k, h, float(mean), sd, cells)
        out[t] = 1.0 - mass.sum()
    return out


def chain_arl(mean: float, *, k: float = K, h: float = H, cells: int = 300) -> float:
    """Average run length from S = 0: ((I - R)^-1 1)[0]."""
    matrix = _chain(k, h, mean, 1.0, cells)
    return float(np.linalg.solve(np.eye(cells) - matrix, np.ones(cells))[0])


def siegmund_arl(mean: float, *, k: float = K, h: float = H) -> float:
    """Siegmund (1985) approximation of the one-sided CUSUM ARL for N(mean, 1) increments."""
    delta, b = mean - k, h + 1.166
    return (math.exp(-2 * delta * b) + 2 * delta * b - 1) / (2 * delta * delta)


def estimated_reference_fire_cdf(monitored: int, m: int, *, drift: float = 0.0, h: float = H, nodes: int = 24) -> NDArray[np.float64]:
    """P(fired by watched run t) for the trend's z with a reference of m runs (module notes)."""
    u, weights = np.polynomial.hermite_e.hermegauss(nodes)  # probabilists' Hermite: N(0, 1)
    weights = weights / weights.sum()
    s = math.sqrt(1.0 + 1.0 / m)
    steps = drift * np.arange(1, monitored + 1)
    total = np.zeros(monitored)
    for node, weight in zip(u, weights):
        e = node / math.sqrt(m)
        total += weight * fire_cdf((e + steps) / s, 1.0 / s, h=h, cells=150)
    return total


# --- the trend over simulated nights ---------------------------------------------------------


def _night(run_id: int, value: float, se: float) -> StoredRun:
    iv = Interval(value - Z975 * se, value + Z975 * se, 0.95, "delong")
    check = CheckResult(
        name="leak recall", metric="roc_auc", params={}, slice=None, outcome="pass", passed=True,
        value=value, interval=iv, n=4000, n_pos=80, n_neg=3920, method="delong",
        floor=Decision(Bound("at_least", 0.5), "pass", value, iv),
    )
    result = Result(
        verdict="pass", checks=(check,), confidence=0.95, resamples=0, seed=0, on_inconclusive="estimate",
        adjust="none", policy_source="p.toml", policy_hash="a" * 64, candidate_source="c.csv",
        baseline_source=None, fingerprint="f" * 64, n=4000, n_pos=80, n_neg=3920,
    )
    return StoredRun(run_id=run_id, run_time=T0 + timedelta(days=run_id), label=None, result=result)


def simulate_windows(
    windows: int, nights: int, *, reference_runs: int, drift: float = 0.0, h: float = H, seed: int
) -> NDArray[np.int64]:
    """Run compute_trend on ``windows`` simulated windows; return the watched-run index (1-based)
    at which the drift alarm fired, 0 when it did not fire."""
    rng = np.random.default_rng(seed)
    se = 0.01
    fired = np.zeros(windows, dtype=np.int64)
    decay = np.concatenate([np.zeros(reference_runs), drift * np.arange(1, nights - reference_runs + 1)])
    for w in range(windows):
        values = 0.85 + se * (rng.standard_normal(nights) - decay)
        trend = compute_trend(
            [_night(i + 1, float(v), se) for i, v in enumerate(values)],
            cusum_k=K, cusum_h=h, reference_runs=reference_runs,
        )
        drift_state = trend.series[0].drift
        assert not any(a.kind == "bound" for _, a in trend.alarms)
        if drift_state.fired_run_id is not None:
            fired[w] = drift_state.fired_run_id - reference_runs
            assert drift_state.onset_run_id is not None and drift_state.onset_run_id <= drift_state.fired_run_id
    return fired


def _within(observed: float, expected: float, n: int, sigmas: float = 4.0) -> bool:
    return abs(observed - expected) <= sigmas * math.sqrt(expected * (1 - expected) / n)


# --- the oracle against outside values -----------------------------------------------------------


def test_oracle_reproduces_known_average_run_lengths() -> None:
    # Siegmund (1985) approximation: one-sided, k = 0.5. Montgomery, Introduction to Statistical
    # Quality Control, tabulates the two-sided ARL0 168 (h = 4) and 465 (h = 5) and the ARLs for a
    # 1-sigma shift 8.38 and 10.4 [memory]; a one-sided ARL0 is twice the two-sided one.
    assert chain_arl(0.0) == pytest.approx(siegmund_arl(0.0), rel=0.015)
    assert chain_arl(0.0) == pytest.approx(2 * 168, rel=0.01)  # [memory]
    assert chain_arl(0.0, h=5.0) == pytest.approx(2 * 465, rel=0.01)  # [memory]
    assert chain_arl(1.0) == pytest.approx(8.38, abs=0.02)  # [memory]
    assert chain_arl(1.0, h=5.0) == pytest.approx(10.4, abs=0.05)  # [memory]
    assert chain_arl(1.0) == pytest.approx(siegmund_arl(1.0), rel=0.01)


def test_cusum_false_alarms_with_a_known_reference_match_the_oracle() -> None:
    # 25 watched nights, iid N(0, 1) z: the chain gives P(alarm) = 0.0609.
    rng = np.random.default_rng(20240601)
    windows = 12000
    z = rng.standard_normal((windows, 25))
    rate = float(np.mean([cusum(row, k=K, h=H).fired_at is not None for row in z]))
    expected = float(fire_cdf(np.zeros(25))[-1])
    assert expected == pytest.approx(0.0609, abs=0.001)
    assert _within(rate, expected, windows), (rate, expected)


# --- false alarms of the trend in 30-night windows --------------------------------------------


def test_false_alarm_rate_of_stable_30_night_windows_with_default_settings() -> None:
    # Defaults (k = 0.5, h = 4, 5 reference runs): the chain averaged over the reference error
    # predicts 16% of stable 30-night windows raise a drift alarm, far above the 6% of a known
    # reference; the simulation through compute_trend must agree with that prediction.
    windows = 1500
    fired = simulate_windows(windows, 30, reference_runs=5, seed=11)
    expected = float(estimated_reference_fire_cdf(25, 5)[-1])
    assert expected == pytest.approx(0.16, abs=0.005)
    rate = float(np.mean(fired > 0))
    assert _within(rate, expected, windows), (rate, expected)
    # dividing by SE_t alone (the reference treated as known) would predict 21%: reject it
    assert rate < 0.2085 - 2.0 * math.sqrt(0.2085 * 0.7915 / windows)


def test_false_alarm_rate_is_a_few_percent_with_a_longer_reference() -> None:
    # 15 reference runs and h = 5 (the settings gate/watch.py suggests for fresh nightly samples):
    # the chain predicts 2.9% of stable 30-night windows alarm.
    windows = 1000
    fired = simulate_windows(windows, 30, reference_runs=15, h=5.0, seed=12)
    expected = float(estimated_reference_fire_cdf(15, 15, h=5.0)[-1])
    assert expected == pytest.approx(0.029, abs=0.002)
    rate = float(np.mean(fired > 0))
    assert _within(rate, expected, windows), (rate, expected)
    assert rate < 0.05


# --- detection of a slow decay -----------------------------------------------------------------


def _deterministic_crossing(drift: float, m: int, *, k: float = K, h: float = H) -> int:
    """The watched run at which the noise-free path S_t = max(0, S + drift t / s - k) exceeds h."""
    s, t, path = math.sqrt(1 + 1 / m), 0, 0.0
    while path <= h:
        t += 1
        path = max(0.0, path + drift * t / s - k)
    return t


def test_slow_decay_fires_within_the_expected_number_of_runs() -> None:
    # A decay of 0.2 SE per night after the 5 reference nights (one SE lost every five nights).
    # By hand: s = sqrt(1.2) = 1.0954, increments 0.2 t / s - 0.5 are negative for t <= 2, then
    # S = 0.0477, 0.2780, 0.6910, 1.2866, 2.0648, 3.0256, 4.1690 > 4 at t = 9: the noise-free path
    # fires on the 9th watched night. With noise the median is near that crossing.
    assert _deterministic_crossing(0.2, 5) == 9
    windows = 1000
    fired = simulate_windows(windows, 5 + 30, reference_runs=5, drift=0.2, seed=13)
    assert np.all(fired > 0)  # 30 watched nights: the decay is 6 SE by then
    expected = estimated_reference_fire_cdf(30, 5, drift=0.2)
    for t in (5, 7, 9, 11, 13):
        observed = float(np.mean(fired <= t))
        assert _within(observed, float(expected[t - 1]), windows), (t, observed, expected[t - 1])
    median = float(np.median(fired))
    assert 7 <= median <= 10
    assert expected[8] > 0.5 > expected[6]  # the chain agrees: median between nights 8 and 9
    assert float(np.mean(fired <= 14)) > 0.95
    # and not before the decay has had time to build up: alarms on watched nights 1-2 are as
    # rare as the chain says (P(fired by night 2) = 0.2%)
    assert expected[1] < 0.005
    assert float(np.mean(fired <= 2)) <= expected[1] + 4 * math.sqrt(expected[1] / windows)


# --- long versions -------------------------------------------------------------------------------


@pytest.mark.slow
def test_in_control_average_run_length_by_simulation() -> None:
    # ARL0 of the bare CUSUM with a known reference, k = 0.5, h = 4: about 336 (oracle above).
    rng = np.random.default_rng(7)
    chains, lengths = 3000, []
    for _ in range(chains):
        s, t = 0.0, 0
        while True:
            # carry S across blocks: a first step of z = s + k gives S_1 = s (and s <= h: no alarm)
            block = rng.standard_normal(1024)
            path = cusum(np.concatenate([[s + K], block]), k=K, h=H)
            if path.fired_at is not None:
                lengths.append(t + path.fired_at)
                break
            s, t = path.statistic[-1], t + len(block)
    arl = float(np.mean(lengths))
    sd = float(np.std(lengths)) / math.sqrt(chains)
    assert abs(arl - chain_arl(0.0)) < 4 * sd, (arl, sd)


@pytest.mark.slow
def test_false_alarm_rates_of_the_documented_settings_long() -> None:
    # the rates gate/watch.py states for stable 30-night windows, by 10000 simulated windows each
    for m, h, stated in ((5, 4.0, 0.16), (10, 4.0, 0.10), (10, 5.0, 0.058), (15, 5.0, 0.029)):
        windows = 10000
        fired = simulate_windows(windows, 30, reference_runs=m, h=h, seed=100 + m + int(h))
        expected = float(estimated_reference_fire_cdf(30 - m, m, h=h)[-1])
        assert expected == pytest.approx(stated, abs=0.005)
        assert _within(float(np.mean(fired > 0)), expected, windows)
