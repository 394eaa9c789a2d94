"""gate.summary: the one-table summary against scikit-learn and the HM reference values."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from sklearn.metrics import average_precision_score, roc_auc_score, roc_curve

from gate.demo import generate_scenario
from gate.errors import UndefinedMetricError
from gate.io import table_from_frame
from gate.summary import render_summary_text, summarize


def hm_table():  # type: ignore[no-untyped-def]
    # Hanley & McNeil (1982) rating table, REFERENCES.md section 1
    neg, pos = (33, 6, 6, 11, 2), (3, 2, 2, 11, 33)
    scores = np.concatenate([np.repeat(np.arange(1, 6), neg), np.repeat(np.arange(1, 6), pos)]).astype(float)
    labels = np.r_[np.zeros(sum(neg), int), np.ones(sum(pos), int)]
    frame = pd.DataFrame({"id": [f"c{i}" for i in range(labels.size)], "label": labels, "score": scores})
    return table_from_frame(frame, source="hm")


def test_hm_reference_values() -> None:
    s = summarize(hm_table(), fpr_points=(0.0, 0.02, 0.05, 0.10, 0.25, 0.50))
    # REFERENCES.md section 1: AUC 2642/2958, AP (sklearn), pAUC 0.1 raw / McClish (sklearn + numpy)
    assert s["roc_auc"] == pytest.approx(0.8931710615280595, abs=1e-12)
    assert s["average_precision"] == pytest.approx(0.8576399336817078, abs=1e-12)
    assert s["partial_auc"]["raw"] == pytest.approx(0.055990534144692364, abs=1e-12)
    assert s["partial_auc"]["standardized"] == pytest.approx(0.7683712323404861, abs=1e-12)
    # REFERENCES.md section 1, "Recall (TPR) at the largest threshold with FPR <= alpha"
    expected = {0.0: (None, 0.0), 0.02: (None, 0.0), 0.05: (5.0, 33 / 51), 0.10: (5.0, 33 / 51),
                0.25: (4.0, 44 / 51), 0.50: (2.0, 48 / 51)}
    for p in s["operating_points"]:
        threshold, recall = expected[p["fpr_cap"]]
        assert p["threshold"] == threshold
        assert p["recall"] == pytest.approx(recall, abs=1e-15)
        assert p["fpr"] <= p["fpr_cap"]
    assert s["cost_optimal"]["threshold"] == 5.0  # 4 and 5 tie at 20/109: the highest threshold wins
    assert s["cost_optimal"]["expected_cost"] == pytest.approx(20 / 109, abs=1e-15)
    assert (s["rows"], s["positives"], s["negatives"], s["distinct_scores"]) == (109, 51, 58, 5)


def test_demo_table_against_sklearn() -> None:
    frame = generate_scenario(seed=9, n_segments=4000).candidate_better
    s = summarize(table_from_frame(frame), fpr_points=(0.01, 0.05))
    y, score = frame["label"].to_numpy(), frame["score"].to_numpy()
    assert s["roc_auc"] == pytest.approx(roc_auc_score(y, score), abs=1e-12)  # scikit-learn 1.9.1
    assert s["average_precision"] == pytest.approx(average_precision_score(y, score), abs=1e-12)
    # sklearn returns the McClish value for max_fpr
    assert s["partial_auc"]["standardized"] == pytest.approx(roc_auc_score(y, score, max_fpr=0.1), abs=1e-12)
    fpr, tpr, thr = roc_curve(y, score, drop_intermediate=False)
    for p in s["operating_points"]:
        ok = fpr <= p["fpr_cap"]
        assert p["recall"] == pytest.approx(tpr[ok].max(), abs=1e-15)


def test_weighted_table_against_sklearn() -> None:
    # REFERENCES.md section 3 (sample_weight row): weighted AUC 0.4444444444444445, AP 0.6333333333333333
    frame = pd.DataFrame(
        {
            "id": list("abcdefg"),
            "label": [1, 0, 1, 0, 1, 0, 0],
            "score": [0.9, 0.8, 0.7, 0.6, 0.4, 0.4, 0.2],
            "weight": [1, 2, 1, 1, 3, 1, 0.5],
        }
    )
    s = summarize(table_from_frame(frame))
    assert s["roc_auc"] == pytest.approx(0.4444444444444445, abs=1e-12)
    assert s["average_precision"] == pytest.approx(0.6333333333333333, abs=1e-12)
    assert s["weighted"] is True
    assert (s["weight_positives"], s["weight_negatives"]) == (5.0, 4.5)
    assert s["prevalence"] == pytest.approx(5 / 9.5, abs=1e-15)
    assert "weight 5 positive, 4.50 negative" in render_summary_text(s)


def test_summary_is_strict_json() -> None:
    s = summarize(hm_table())
    assert json.loads(json.dumps(s, allow_nan=False)) == s  # no NaN or infinity anywhere


def test_text_rendering() -> None:
    text = render_summary_text(summarize(hm_table(), cost_fp=1.0, cost_fn=5.0))
    lines = text.splitlines()
    assert lines[0] == "score table  hm"
    assert text.endswith("\n")
    assert "  ROC AUC                  0.8932" in lines
    header = next(line for line in lines if "FPR cap" in line)
    rows = lines[lines.index(header) + 1 : lines.index(header) + 5]
    assert [r.split()[0] for r in rows] == ["0.001", "0.01", "0.05", "0.1"]
    assert rows[0].split()[1] == "none" and rows[0].split()[3] == "-"  # nothing flagged: no precision
    assert rows[2].split()[1:3] == ["5", "0.6471"]  # 33/51
    assert len({len(r) for r in rows}) == 1  # right-aligned columns
    assert "false alarm costs 1, missed positive 5" in text
    assert "threshold 2, expected cost 0.366972 per example" in text  # 40/109, REFERENCES.md section 1


def test_invalid_arguments() -> None:
    table = hm_table()
    with pytest.raises(ValueError, match="cost_fp must be a finite non-negative number"):
        summarize(table, cost_fp=-1.0)
    with pytest.raises(ValueError, match="cannot both be 0"):
        summarize(table, cost_fp=0.0, cost_fn=0.0)
    with pytest.raises(ValueError, match=r"fpr_points must lie in \[0, 1\]"):
        summarize(table, fpr_points=(0.5, 1.5))


def test_one_class_table_is_undefined() -> None:
    frame = pd.DataFrame({"id": ["a", "b"], "label": [0, 0], "score": [0.1, 0.2]})
    with pytest.raises(UndefinedMetricError):
        summarize(table_from_frame(frame, require_both_classes=False))
