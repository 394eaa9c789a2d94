"""gate.ranking against values from outside the project.

Sources: Hanley & McNeil (1982) CT rating table and the values checked in
/work/shared/REFERENCES.md sections 1 and 3 (recomputed there with numpy, scikit-learn 1.9.1 and
scipy 1.17.1); scikit-learn's metrics run live on random tie-heavy data and on its bundled
breast-cancer dataset; scipy.stats.mannwhitneyu.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from gate.ranking import (
    TieBlocks,
    average_precision,
    brier,
    confusion_at,
    hull_auc,
    optimal_cost,
    partial_auc,
    precision_at_recall,
    rank,
    recall_at_fpr,
    roc_auc,
    roc_curve,
    roc_hull,
    tie_blocks,
)

sklearn_metrics = pytest.importorskip("sklearn.metrics")

# --- Fixture HM: Hanley & McNeil (1982), Radiology 143:29-36, CT ratings 1..5 ---------------------
HM_RATINGS = np.array([1.0, 2.0, 3.0, 4.0, 5.0])
HM_NEG = np.array([33, 6, 6, 11, 2])
HM_POS = np.array([3, 2, 2, 11, 33])


def hm_rows() -> tuple[np.ndarray, np.ndarray]:
    scores = np.concatenate([np.repeat(HM_RATINGS, HM_NEG), np.repeat(HM_RATINGS, HM_POS)])
    labels = np.concatenate([np.zeros(HM_NEG.sum(), bool), np.ones(HM_POS.sum(), bool)])
    return scores, labels


@pytest.fixture(params=["rows", "blocks"])
def hm(request) -> TieBlocks:
    """HM as rows through rank(), and as hand-made tie blocks (descending ratings)."""
    if request.param == "rows":
        return tie_blocks(*hm_rows())
    return TieBlocks(HM_RATINGS[::-1].copy(), HM_POS[::-1].astype(float), HM_NEG[::-1].astype(float))


def test_hm_auc(hm) -> None:
    # REFERENCES.md 1: AUC 0.8931710615280595 = 2642/2958 (paper prints 0.893).
    assert roc_auc(hm) == pytest.approx(2642 / 2958, abs=1e-15)


def test_hm_roc_points(hm) -> None:
    # REFERENCES.md 1 (sklearn roc_curve drop_intermediate=False; thresholds inf,5,4,3,2,1).
    c = roc_curve(hm)
    assert c.thresholds.tolist() == [math.inf, 5, 4, 3, 2, 1]
    np.testing.assert_allclose(c.fpr, np.array([0, 2, 13, 19, 25, 58]) / 58, rtol=0, atol=1e-15)
    np.testing.assert_allclose(c.tpr, np.array([0, 33, 44, 46, 48, 51]) / 51, rtol=0, atol=1e-15)


@pytest.mark.parametrize(
    ("t", "tp", "fp", "tn", "fn"),
    # REFERENCES.md 1, confusion matrices, positive if rating >= t.
    [(2, 48, 25, 33, 3), (3, 46, 19, 39, 5), (4, 44, 13, 45, 7), (5, 33, 2, 56, 18)],
)
def test_hm_confusion(hm, t, tp, fp, tn, fn) -> None:
    c = confusion_at(hm, threshold=t)
    assert (c.tp, c.fp, c.tn, c.fn) == (tp, fp, tn, fn)


@pytest.mark.parametrize(
    ("alpha", "tpr", "fpr", "threshold"),
    # REFERENCES.md 1, recall at the largest threshold with FPR <= alpha.
    [
        (0.00, 0.0, 0.0, math.inf),
        (0.02, 0.0, 0.0, math.inf),
        (0.05, 33 / 51, 2 / 58, 5.0),
        (0.10, 33 / 51, 2 / 58, 5.0),
        (0.25, 44 / 51, 13 / 58, 4.0),
        (0.50, 48 / 51, 25 / 58, 2.0),
    ],
)
def test_hm_recall_at_fpr(hm, alpha, tpr, fpr, threshold) -> None:
    op = recall_at_fpr(hm, fpr=alpha)
    assert op.threshold == threshold
    assert op.recall == pytest.approx(tpr, abs=1e-15)
    assert op.fpr == pytest.approx(fpr, abs=1e-15)


@pytest.mark.parametrize(
    ("max_fpr", "raw", "mcclish"),
    # REFERENCES.md 1, partial AUC with linear interpolation at max_fpr; McClish (1989).
    [
        (0.05, 0.02133367139959433, 0.7059863733291726),
        (0.10, 0.055990534144692364, 0.7683712323404861),
        (0.20, 0.13383367139959434, 0.816204642776651),
        (0.50, 0.4060944126867048, 0.8747925502489398),
    ],
)
def test_hm_partial_auc(hm, max_fpr, raw, mcclish) -> None:
    pa = partial_auc(hm, max_fpr=max_fpr)
    assert pa.raw == pytest.approx(raw, rel=1e-13)
    assert pa.standardized == pytest.approx(mcclish, rel=1e-13)


def test_hm_average_precision(hm) -> None:
    # REFERENCES.md 1: AP 0.8576399336817078 = 9026321144/10524604545 (sklearn; exact fractions).
    assert average_precision(hm) == pytest.approx(9026321144 / 10524604545, rel=1e-14)


@pytest.mark.parametrize(
    ("cfp", "cfn", "threshold", "cost"),
    # REFERENCES.md 1, cost-optimal threshold; 1:1 is the tie case (4 and 5): our rule takes the
    # highest threshold, 5.
    [(1, 1, 5.0, 20 / 109), (1, 2, 4.0, 27 / 109), (2, 1, 5.0, 22 / 109), (1, 5, 2.0, 40 / 109)],
)
def test_hm_optimal_cost(hm, cfp, cfn, threshold, cost) -> None:
    cp = optimal_cost(hm, cost_fp=cfp, cost_fn=cfn)
    assert cp.threshold == threshold
    assert cp.cost == pytest.approx(cost, rel=1e-15)


def test_hm_hull_with_collinear_point(hm) -> None:
    # REFERENCES.md 1: vertices (0,0), (2/58,33/51), (13/58,44/51), (25/58,48/51), (1,1);
    # (19/58, 46/51) lies on the hull edge, so hull AUC = AUC.
    f, t = roc_hull(hm)
    np.testing.assert_allclose(f, np.array([0, 2, 13, 25, 58]) / 58, rtol=0, atol=1e-15)
    np.testing.assert_allclose(t, np.array([0, 33, 44, 48, 51]) / 51, rtol=0, atol=1e-15)
    assert hull_auc(hm) == pytest.approx(0.8931710615280595, rel=1e-14)


def test_hm_mann_whitney() -> None:
    # scipy.stats.mannwhitneyu: U of the positives = 2642 (REFERENCES.md 4a); U / (m n) = AUC.
    from scipy.stats import mannwhitneyu

    s, y = hm_rows()
    u = mannwhitneyu(s[y], s[~y]).statistic
    assert u == 2642
    assert roc_auc(tie_blocks(s, y)) == pytest.approx(u / (51 * 58), rel=1e-15)


# --- REFERENCES.md 3: what scikit-learn 1.9.1 does (values recorded there) -------------------------


def test_sklearn_docstring_example() -> None:
    # roc_curve([1,1,2,2], [0.1,0.4,0.35,0.8], pos_label=2): fpr [0,0,.5,.5,1], tpr [0,.5,.5,1,1],
    # thresholds [inf,.8,.4,.35,.1]; as 0/1 labels AUC 0.75, AP 0.8333333333333333.
    b = tie_blocks([0.1, 0.4, 0.35, 0.8], [0, 0, 1, 1])
    c = roc_curve(b)
    assert c.fpr.tolist() == [0, 0, 0.5, 0.5, 1] and c.tpr.tolist() == [0, 0.5, 0.5, 1, 1]
    assert c.thresholds.tolist() == [math.inf, 0.8, 0.4, 0.35, 0.1]
    assert roc_auc(b) == 0.75
    assert average_precision(b) == pytest.approx(0.8333333333333333, rel=1e-15)


def test_sklearn_ties_example() -> None:
    # y=[0,0,1,1,0,1], s=[.1,.5,.5,.9,.5,.3]: AUC 2/3; fpr [0,0,2/3,2/3,1], tpr [0,1/3,2/3,1,1];
    # AP 0.7 = 1/3*1 + 1/3*2/4 + 1/3*3/5.
    b = tie_blocks([0.1, 0.5, 0.5, 0.9, 0.5, 0.3], [0, 0, 1, 1, 0, 1])
    assert roc_auc(b) == pytest.approx(0.6666666666666667, rel=1e-15)
    c = roc_curve(b)
    np.testing.assert_allclose(c.fpr, [0, 0, 2 / 3, 2 / 3, 1], atol=1e-15)
    np.testing.assert_allclose(c.tpr, [0, 1 / 3, 2 / 3, 1, 1], atol=1e-15)
    assert average_precision(b) == pytest.approx(0.7, rel=1e-15)


def test_sklearn_all_tied() -> None:
    # [0,1,0,1] all 0.5: AUC 0.5, AP 0.5 (the prevalence).
    b = tie_blocks([0.5] * 4, [0, 1, 0, 1])
    assert roc_auc(b) == 0.5 and average_precision(b) == 0.5


def test_sklearn_weighted_example() -> None:
    # y=[1,0,1,0,1,0,0], s=[.9,.8,.7,.6,.4,.4,.2], w=[1,2,1,1,3,1,.5]: weighted AUC
    # 0.4444444444444445 (unweighted 0.7083333333333333), weighted AP 0.6333333333333333;
    # with last weight 1: AUC 0.5.
    y = [1, 0, 1, 0, 1, 0, 0]
    s = [0.9, 0.8, 0.7, 0.6, 0.4, 0.4, 0.2]
    w = [1, 2, 1, 1, 3, 1, 0.5]
    assert roc_auc(tie_blocks(s, y, w)) == pytest.approx(0.4444444444444445, rel=1e-15)
    assert roc_auc(tie_blocks(s, y)) == pytest.approx(0.7083333333333333, rel=1e-15)
    assert average_precision(tie_blocks(s, y, w)) == pytest.approx(0.6333333333333333, rel=1e-15)
    assert roc_auc(tie_blocks(s, y, w[:-1] + [1])) == pytest.approx(0.5, rel=1e-15)


def test_sklearn_max_fpr_example_mcclish_below_half() -> None:
    # y=[0,0,1,1,0,1,0,1,1,0], s=.1...,.9,.95: AUC 0.6, AP 0.5926190476190476; McClish 0.1 ->
    # 0.47368421052631576 (raw 0), 0.25 -> 0.47428571428571425 (raw .02), 0.5 -> 0.52 (raw .14).
    y = [0, 0, 1, 1, 0, 1, 0, 1, 1, 0]
    s = [0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 0.95]
    b = tie_blocks(s, y)
    assert roc_auc(b) == pytest.approx(0.6, rel=1e-15)
    assert average_precision(b) == pytest.approx(0.5926190476190476, rel=1e-15)
    for m, std, raw in [(0.1, 0.47368421052631576, 0.0), (0.25, 0.47428571428571425, 0.02), (0.5, 0.52, 0.14)]:
        pa = partial_auc(b, max_fpr=m)
        assert pa.standardized == pytest.approx(std, rel=1e-14)
        assert pa.raw == pytest.approx(raw, abs=1e-15)


# --- scikit-learn run live ----------------------------------------------------------------------


def tie_heavy(seed: int, n: int = 600) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Random data with many ties (fixed seed): scores on a grid of 0.05, integer and real weights."""
    rng = np.random.default_rng(seed)
    y = rng.random(n) < 0.3
    s = np.round(np.clip(rng.normal(0.4 + 0.2 * y, 0.2), 0, 1) / 0.05) * 0.05
    w = rng.choice([0.5, 1.0, 2.0, 3.0], size=n)
    return s, y, w


@pytest.mark.parametrize("seed", [0, 1, 2])
@pytest.mark.parametrize("weighted", [False, True])
def test_against_sklearn_on_tie_heavy_data(seed, weighted) -> None:
    s, y, w = tie_heavy(seed)
    sw = w if weighted else None
    b = tie_blocks(s, y, sw)
    # scikit-learn roc_auc_score / average_precision_score with sample_weight
    assert roc_auc(b) == pytest.approx(sklearn_metrics.roc_auc_score(y, s, sample_weight=sw), rel=1e-12)
    assert average_precision(b) == pytest.approx(
        sklearn_metrics.average_precision_score(y, s, sample_weight=sw), rel=1e-12
    )
    # scikit-learn roc_curve(drop_intermediate=False): same points and thresholds
    fpr, tpr, thr = sklearn_metrics.roc_curve(y, s, sample_weight=sw, drop_intermediate=False)
    c = roc_curve(b)
    np.testing.assert_allclose(c.fpr, fpr, rtol=0, atol=1e-12)
    np.testing.assert_allclose(c.tpr, tpr, rtol=0, atol=1e-12)
    np.testing.assert_array_equal(c.thresholds, thr)
    # scikit-learn roc_auc_score(max_fpr=...) gives the McClish value
    for m in (0.05, 0.1, 0.3, 0.77, 1.0):
        ref = sklearn_metrics.roc_auc_score(y, s, sample_weight=sw, max_fpr=m)
        assert partial_auc(b, max_fpr=m).standardized == pytest.approx(ref, rel=1e-12)


def test_against_sklearn_pr_curve() -> None:
    # scikit-learn precision_recall_curve: the same points, in the opposite order, plus its
    # appended (recall 0, precision 1) end point.
    from gate.ranking import pr_curve

    s, y, w = tie_heavy(5)
    prec, rec, thr = sklearn_metrics.precision_recall_curve(y, s, sample_weight=w)
    c = pr_curve(tie_blocks(s, y, w))
    np.testing.assert_allclose(c.precision, prec[:-1][::-1], rtol=1e-12)
    np.testing.assert_allclose(c.recall, rec[:-1][::-1], rtol=1e-12)
    np.testing.assert_array_equal(c.thresholds, thr[::-1])


def test_against_sklearn_confusion_at_thresholds() -> None:
    # scikit-learn confusion_matrix of (score >= t) with sample_weight
    s, y, w = tie_heavy(6)
    b = tie_blocks(s, y, w)
    for t in (0.0, 0.25, 0.4, 0.55, 1.0, 2.0):
        tn, fp, fn, tp = sklearn_metrics.confusion_matrix(y, s >= t, sample_weight=w, labels=[0, 1]).ravel()
        c = confusion_at(b, threshold=t)
        np.testing.assert_allclose([c.tp, c.fp, c.tn, c.fn], [tp, fp, tn, fn], rtol=1e-12)


def test_precision_at_recall_against_sklearn_curve() -> None:
    # Highest precision on scikit-learn's precision_recall_curve among points with recall >= r
    # (its appended end point has recall 0 and is excluded for r > 0).
    s, y, w = tie_heavy(7)
    b = tie_blocks(s, y, w)
    prec, rec, _ = sklearn_metrics.precision_recall_curve(y, s, sample_weight=w)
    for r in (0.1, 0.5, 0.8, 0.95, 1.0):
        best = prec[:-1][rec[:-1] >= r - 1e-12].max()
        assert precision_at_recall(b, recall=r).precision == pytest.approx(best, rel=1e-12)


def test_recall_at_fpr_against_sklearn_curve() -> None:
    # Highest TPR on scikit-learn's roc_curve(drop_intermediate=False) among points with FPR <= a.
    s, y, w = tie_heavy(8)
    b = tie_blocks(s, y, w)
    fpr, tpr, thr = sklearn_metrics.roc_curve(y, s, sample_weight=w, drop_intermediate=False)
    for a in (0.0, 0.01, 0.05, 0.1, 0.3, 1.0):
        ok = fpr <= a
        best = tpr[ok].max()
        op = recall_at_fpr(b, fpr=a)
        assert op.recall == pytest.approx(best, rel=1e-12)
        assert op.threshold == thr[ok][np.argmax(tpr[ok] >= best - 1e-12)]


# --- scikit-learn's bundled breast-cancer data (569 rows, 30 features) ----------------------------


@pytest.fixture(scope="module")
def cancer() -> tuple[np.ndarray, np.ndarray]:
    from sklearn.datasets import load_breast_cancer

    data = load_breast_cancer()
    return data.data, data.target == 0  # positive = malignant


def test_breast_cancer_every_feature_against_sklearn(cancer) -> None:
    x, y = cancer
    for j in range(x.shape[1]):
        s = x[:, j]  # one feature as the score; many features have ties
        b = tie_blocks(s, y)
        # scikit-learn roc_auc_score, average_precision_score, roc_auc_score(max_fpr=0.1)
        assert roc_auc(b) == pytest.approx(sklearn_metrics.roc_auc_score(y, s), rel=1e-12)
        assert average_precision(b) == pytest.approx(sklearn_metrics.average_precision_score(y, s), rel=1e-12)
        pa = partial_auc(b, max_fpr=0.1).standardized
        assert pa == pytest.approx(sklearn_metrics.roc_auc_score(y, s, max_fpr=0.1), rel=1e-12)


def test_breast_cancer_roc_curve_and_mann_whitney(cancer) -> None:
    from scipy.stats import mannwhitneyu

    x, y = cancer
    s = x[:, 0]  # mean radius
    b = tie_blocks(s, y)
    fpr, tpr, thr = sklearn_metrics.roc_curve(y, s, drop_intermediate=False)  # scikit-learn
    c = roc_curve(b)
    np.testing.assert_allclose(c.fpr, fpr, atol=1e-14)
    np.testing.assert_allclose(c.tpr, tpr, atol=1e-14)
    np.testing.assert_array_equal(c.thresholds, thr)
    u = mannwhitneyu(s[y], s[~y]).statistic  # scipy.stats.mannwhitneyu, ties 1/2
    assert roc_auc(b) == pytest.approx(u / (y.sum() * (~y).sum()), rel=1e-14)


@pytest.mark.parametrize("seed", [3, 4])
def test_mann_whitney_on_tie_heavy_data(seed) -> None:
    # scipy.stats.mannwhitneyu: U / (n_pos n_neg) equals the AUC with ties counted 1/2.
    from scipy.stats import mannwhitneyu

    s, y, _ = tie_heavy(seed)
    u = mannwhitneyu(s[y], s[~y]).statistic
    assert roc_auc(tie_blocks(s, y)) == pytest.approx(u / (y.sum() * (~y).sum()), rel=1e-13)


def test_rank_reuses_the_sort_for_reweighting() -> None:
    # Integer bootstrap-style weights over one rank() equal scikit-learn on the weighted rows.
    s, y, _ = tie_heavy(9)
    r = rank(s, y)
    counts = np.random.default_rng(0).integers(0, 3, size=(4, s.size)).astype(float)
    aucs = roc_auc(r.blocks(counts))
    for i in range(4):
        assert aucs[i] == pytest.approx(sklearn_metrics.roc_auc_score(y, s, sample_weight=counts[i]), rel=1e-12)


@pytest.mark.parametrize("weighted", [False, True])
def test_brier_against_sklearn(weighted: bool) -> None:
    # Reference: scikit-learn 1.9.1 brier_score_loss (mean squared difference between the predicted
    # probability and the 0/1 outcome, with sample_weight), on tie-heavy probabilities.
    from sklearn.metrics import brier_score_loss

    rng = np.random.default_rng(11)
    y = rng.random(3000) < 0.2
    p = np.round(np.clip(0.2 + 0.3 * y + rng.normal(0, 0.2, 3000), 0, 1), 2)
    w = rng.integers(0, 4, 3000).astype(float) if weighted else None
    ours = brier(tie_blocks(p, y, w))
    assert ours == pytest.approx(brier_score_loss(y, p, sample_weight=w), rel=1e-12)
