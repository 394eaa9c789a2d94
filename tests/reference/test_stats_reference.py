"""gate.stats against outside values: REFERENCES.md (Hanley & McNeil 1982, binomial intervals,
Neyman-Pearson table, Holm), scipy and scikit-learn."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import binomtest, mannwhitneyu

from gate.ranking import rank, roc_auc
from gate.stats import (
    bootstrap,
    clopper_pearson_interval,
    delong,
    holm,
    min_negatives,
    np_threshold,
    paired_bootstrap,
    paired_delong,
    wilson_interval,
)

# --- Fixture HM: Hanley & McNeil (1982), Radiology 143:29-36, CT ratings (REFERENCES.md s.1) ----
HM_NEG = [33, 6, 6, 11, 2]
HM_POS = [3, 2, 2, 11, 33]


def _hm() -> tuple[np.ndarray, np.ndarray]:
    ratings = np.arange(1, 6, dtype=float)
    s = np.concatenate([np.repeat(ratings, HM_NEG), np.repeat(ratings, HM_POS)])
    y = np.concatenate([np.zeros(58, bool), np.ones(51, bool)])
    return s, y


def test_hm_delong_variance_se_and_ci() -> None:
    s, y = _hm()
    est = delong(rank(s, y))
    # REFERENCES.md s.1: AUC 0.8931710615280595 (= 2642/2958), verified three ways.
    assert est.value == pytest.approx(2642 / 2958, abs=1e-15)
    # REFERENCES.md s.1: DeLong variance 0.0009439892702629848, SE 0.030724408379381122
    # (verified three ways, incl. an independent R implementation).
    assert est.variance == pytest.approx(0.0009439892702629848, rel=1e-13)
    assert est.se == pytest.approx(0.030724408379381122, rel=1e-13)
    # REFERENCES.md s.1: DeLong 95% Wald CI [0.8329523276581718, 0.9533897953979471].
    iv = est.interval(confidence=0.95)
    assert iv.low == pytest.approx(0.8329523276581718, abs=1e-12)
    assert iv.high == pytest.approx(0.9533897953979471, abs=1e-12)
    assert (est.n_pos, est.n_neg) == (51, 58)


def test_hm_auc_equals_mann_whitney_u() -> None:
    # REFERENCES.md s.4a: scipy.stats.mannwhitneyu(pos, neg).statistic = U = 2642; U/(m n) = AUC.
    s, y = _hm()
    u = mannwhitneyu(s[y], s[~y]).statistic
    assert u == 2642
    assert delong(rank(s, y)).value == pytest.approx(u / (51 * 58), abs=1e-15)


def test_hm_paired_with_itself() -> None:
    s, y = _hm()
    res = paired_delong(rank(s, y), rank(s, y))
    assert res.var_a == pytest.approx(0.0009439892702629848, rel=1e-13)
    assert res.cov == pytest.approx(0.0009439892702629848, rel=1e-13)
    assert res.se == 0.0 and res.p_value == 1.0


def test_hm_stratified_bootstrap_within_tolerance() -> None:
    # REFERENCES.md s.1: numpy, stratified, B = 20000, default_rng(20240601), percentile:
    # SE 0.03054, CI [0.8289, 0.9476]. RNG-dependent: +/-0.01 on CI ends, +/-10% on SE (as stated).
    s, y = _hm()
    res = bootstrap(rank(s, y), roc_auc, resamples=20000, seed=20240601, stratified=True)
    assert res.estimate == pytest.approx(0.8931710615280595, abs=1e-15)
    assert res.se == pytest.approx(0.03054, rel=0.10)
    iv = res.interval(method="percentile")
    assert iv.low == pytest.approx(0.8289, abs=0.01)
    assert iv.high == pytest.approx(0.9476, abs=0.01)


def test_hm_paired_bootstrap_of_identical_scores() -> None:
    s, y = _hm()
    res = paired_bootstrap(rank(s, y), rank(s, y), roc_auc, resamples=500, seed=1)
    assert res.se_delta == 0.0
    assert res.interval_a().low == pytest.approx(0.8289, abs=0.02)  # 500 reps: a looser tolerance


# --- Binomial intervals (REFERENCES.md s.4b; scipy 1.17.1 binomtest(...).proportion_ci) --------
# columns: k, n, Wilson low, Wilson high, Clopper-Pearson low, Clopper-Pearson high (6 dp)
BINOMIAL_TABLE = [
    (45, 50, 0.786398, 0.956524, 0.781865, 0.966725),
    (0, 20, 0.000000, 0.161125, 0.000000, 0.168433),
    (20, 20, 0.838875, 1.000000, 0.831567, 1.000000),
    (7, 300, 0.011348, 0.047372, 0.009432, 0.047483),
    (81, 263, 0.255289, 0.366210, 0.252737, 0.367622),
    (15, 148, 0.062386, 0.160487, 0.057844, 0.161650),
    (1, 29, 0.006113, 0.171755, 0.000873, 0.177644),
    (29, 29, 0.883030, 1.000000, 0.880555, 1.000000),
    (5, 25, 0.088606, 0.391310, 0.068311, 0.407037),
    (33, 51, 0.509861, 0.763655, 0.500682, 0.775694),
    (44, 51, 0.742783, 0.931889, 0.737448, 0.942988),
    (45, 58, 0.653389, 0.864063, 0.647276, 0.874911),
    (56, 58, 0.882709, 0.990492, 0.880923, 0.995796),
    (104, 107, 0.920792, 0.990420, 0.920245, 0.994180),
]


@pytest.mark.parametrize(("k", "n", "wl", "wh", "cl", "ch"), BINOMIAL_TABLE)
def test_binomial_intervals_table(k: int, n: int, wl: float, wh: float, cl: float, ch: float) -> None:
    # REFERENCES.md s.4b, 6 dp: tolerance half a unit in the 6th place.
    w = wilson_interval(k, n)
    c = clopper_pearson_interval(k, n)
    assert (w.low, w.high) == (pytest.approx(wl, abs=5e-7), pytest.approx(wh, abs=5e-7))
    assert (c.low, c.high) == (pytest.approx(cl, abs=5e-7), pytest.approx(ch, abs=5e-7))


@pytest.mark.parametrize(("k", "n"), [(k, n) for k, n, *_ in BINOMIAL_TABLE] + [(3, 7), (500, 1000), (1, 2)])
@pytest.mark.parametrize("confidence", [0.90, 0.95, 0.99])
def test_binomial_intervals_equal_scipy(k: int, n: int, confidence: float) -> None:
    # scipy.stats.binomtest(k, n).proportion_ci: "wilson" (no continuity correction), "exact".
    bt = binomtest(k, n)
    sw = bt.proportion_ci(confidence_level=confidence, method="wilson")
    se = bt.proportion_ci(confidence_level=confidence, method="exact")
    w = wilson_interval(k, n, confidence=confidence)
    c = clopper_pearson_interval(k, n, confidence=confidence)
    assert w.low == pytest.approx(sw.low, abs=1e-12) and w.high == pytest.approx(sw.high, abs=1e-12)
    assert c.low == pytest.approx(se.low, abs=1e-12) and c.high == pytest.approx(se.high, abs=1e-12)


def test_binomial_90_percent_row() -> None:
    # REFERENCES.md s.4b, 90% level, 7/300: Wilson [0.012699590611973031, 0.04248784752831583],
    # exact [0.011001063631057895, 0.0433786756431722].
    w = wilson_interval(7, 300, confidence=0.90)
    c = clopper_pearson_interval(7, 300, confidence=0.90)
    assert w.low == pytest.approx(0.012699590611973031, rel=1e-12)
    assert w.high == pytest.approx(0.04248784752831583, rel=1e-12)
    assert c.low == pytest.approx(0.011001063631057895, rel=1e-10)
    assert c.high == pytest.approx(0.0433786756431722, rel=1e-10)


def test_clopper_pearson_conover_5_of_25() -> None:
    # REFERENCES.md s.4b: Conover's tables give the exact interval for 5/25 as 0.068 to 0.407.
    c = clopper_pearson_interval(5, 25)
    assert round(c.low, 3) == 0.068 and round(c.high, 3) == 0.407


# --- Neyman-Pearson threshold (REFERENCES.md s.5; Tong, Feng & Li 2018) --------------------------
NP_TABLE = [
    # alpha, delta, n, k*, rank from top, v(k*), v(k*-1), empirical FPR
    (0.05, 0.05, 59, 59, 1, 0.04849452524942311, 0.19908278786605288, 0.0),
    (0.05, 0.05, 100, 99, 2, 0.037081209327355064, 0.11826298118512056, 0.01),
    (0.05, 0.05, 200, 196, 5, 0.026446800009119954, 0.062342495042294936, 0.02),
    (0.05, 0.05, 500, 484, 17, 0.03429018659839532, 0.05591556048919474, 0.032),
    (0.05, 0.05, 1000, 962, 39, 0.043348190606909254, 0.059814879051902685, 0.038),
    (0.10, 0.05, 100, 96, 5, 0.023711082663476803, 0.05757688648703389, 0.04),
    (0.10, 0.05, 1000, 916, 85, 0.04850250689914628, 0.06069373051796519, 0.084),
    (0.05, 0.10, 200, 195, 6, 0.062342495042294936, 0.12374302602009431, 0.025),
    (0.05, 0.10, 1000, 960, 41, 0.08063657325669013, 0.10629617073627441, 0.04),
]


@pytest.mark.parametrize(("alpha", "delta", "n", "k", "top", "v", "v_prev", "fpr"), NP_TABLE)
def test_neyman_pearson_table(
    alpha: float, delta: float, n: int, k: int, top: int, v: float, v_prev: float, fpr: float
) -> None:
    from scipy.stats import binom

    scores = np.random.default_rng(n).permutation(np.linspace(0.0, 1.0, n))  # continuous, distinct
    t = np_threshold(scores, alpha=alpha, delta=delta)
    assert (t.rank, t.rank_from_top) == (k, top)
    assert t.violation_bound == pytest.approx(v, rel=1e-12)
    assert float(binom.sf(k - 2, n, 1 - alpha)) == pytest.approx(v_prev, rel=1e-12)  # v(k*-1) > delta
    assert t.empirical_fpr == pytest.approx(fpr, abs=1e-15)
    assert t.threshold == np.sort(scores)[k - 1]


def test_neyman_pearson_too_few() -> None:
    # REFERENCES.md s.5: alpha = delta = 0.05, n = 58 -> none.
    from gate.errors import UndefinedMetricError

    with pytest.raises(UndefinedMetricError, match="at least 59"):
        np_threshold(np.arange(58.0), alpha=0.05, delta=0.05)


@pytest.mark.parametrize(
    ("alpha", "delta", "n"), [(0.05, 0.05, 59), (0.10, 0.05, 29), (0.05, 0.10, 45), (0.01, 0.05, 299)]
)
def test_neyman_pearson_minimum_n(alpha: float, delta: float, n: int) -> None:
    # REFERENCES.md s.5: minimum n.
    assert min_negatives(alpha, delta) == n


# --- Holm (REFERENCES.md s.7; Holm 1979; statsmodels multipletests(method="holm")) ---------------
@pytest.mark.parametrize(
    ("p", "adjusted", "reject"),
    [
        ([0.01, 0.04, 0.03, 0.005], [0.03, 0.06, 0.06, 0.02], [True, False, False, True]),
        ([0.01, 0.02, 0.03, 0.04, 0.05], [0.05, 0.08, 0.09, 0.09, 0.09], [True, False, False, False, False]),
        ([0.2, 0.001, 0.04], [0.2, 0.003, 0.08], [False, True, False]),
    ],
)
def test_holm_table(p: list[float], adjusted: list[float], reject: list[bool]) -> None:
    adj = holm(p)
    np.testing.assert_allclose(adj, adjusted, rtol=0, atol=1e-12)
    # Row 2's 0.05 is a boundary case (REFERENCES.md): compare with a tolerance.
    assert (adj <= 0.05 + 1e-12).tolist() == reject
