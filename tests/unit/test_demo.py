"""gate.demo: the invented scenario is reproducible and tells the story it promises.

The story's claims are measured with scikit-learn (a reference outside the project), not with
gate.ranking, so a bug in our metrics cannot make the demo look right.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy.stats import spearmanr
from sklearn.metrics import roc_auc_score, roc_curve

from gate.demo import DEFAULT_SEED, DISTRICTS, FILE_NAMES, REGRESSING_DISTRICT, generate_scenario, write_scenario
from gate.errors import TableError
from gate.io import read_table

SEEDS = [DEFAULT_SEED, 1, 3]


@pytest.fixture(scope="module", params=SEEDS)
def scenario(request: pytest.FixtureRequest):  # type: ignore[no-untyped-def]
    return generate_scenario(seed=request.param)


def recall_at_fpr(labels: np.ndarray, scores: np.ndarray, fpr: float) -> float:
    """Highest TPR among sklearn's ROC points (one per distinct score) with FPR <= fpr."""
    f, t, _ = roc_curve(labels, scores, drop_intermediate=False)
    return float(t[f <= fpr].max())


def by_district(scenario, name: str):  # type: ignore[no-untyped-def]
    frame = getattr(scenario, name)
    out = {}
    for district in DISTRICTS:
        part = frame[frame["district"] == district]
        y, s = part["label"].to_numpy(), part["score"].to_numpy()
        out[district] = (roc_auc_score(y, s), recall_at_fpr(y, s, 0.05))
    return out


def test_same_seed_same_frames() -> None:
    a, b = generate_scenario(seed=11, n_segments=2000), generate_scenario(seed=11, n_segments=2000)
    for key in FILE_NAMES:
        pd.testing.assert_frame_equal(a.frames()[key], b.frames()[key])
    c = generate_scenario(seed=12, n_segments=2000)
    assert not a.production["score"].equals(c.production["score"])


def test_default_size_and_shape(scenario) -> None:  # type: ignore[no-untyped-def]
    ev = scenario.eval_set
    assert len(ev) == 20_000
    assert list(ev.columns) == ["id", "label", "district", "material", "age_years", "length_m"]
    assert ev["id"].is_unique
    assert set(ev["label"].unique()) == {0, 1}
    for name in ("production", "candidate_better", "candidate_regressing"):
        frame = getattr(scenario, name)
        assert list(frame.columns) == ["id", "label", "score", "district"]
        assert frame["id"].tolist() == ev["id"].tolist()
        assert frame["label"].tolist() == ev["label"].tolist()
        s = frame["score"].to_numpy()
        assert s.min() >= 0.0 and s.max() <= 1.0
        assert np.array_equal(np.round(s, 3), s)  # three decimals ...
        assert frame["score"].nunique() < len(frame) / 10  # ... hence many ties


def test_prevalence_about_two_percent(scenario) -> None:  # type: ignore[no-untyped-def]
    prevalence = scenario.eval_set["label"].mean()
    assert 0.015 <= prevalence <= 0.025


def test_default_seed_has_400_leaks() -> None:
    assert int(generate_scenario().eval_set["label"].sum()) == 400  # as the DEFAULT_SEED comment says


def test_every_district_present_with_enough_leaks(scenario) -> None:  # type: ignore[no-untyped-def]
    ev = scenario.eval_set
    assert set(ev["district"]) == set(DISTRICTS)
    leaks = ev.groupby("district")["label"].sum()
    assert (leaks >= 60).all()


def test_candidates_are_correlated_with_production(scenario) -> None:  # type: ignore[no-untyped-def]
    # the shared per-segment signal: what gives a paired comparison its power
    for name in ("candidate_better", "candidate_regressing"):
        rho = spearmanr(scenario.production["score"], getattr(scenario, name)["score"]).statistic
        assert rho > 0.6


def test_better_candidate_beats_production_everywhere(scenario) -> None:  # type: ignore[no-untyped-def]
    y = scenario.eval_set["label"].to_numpy()
    delta = roc_auc_score(y, scenario.candidate_better["score"]) - roc_auc_score(y, scenario.production["score"])
    assert 0.015 <= delta <= 0.04
    prod, better = by_district(scenario, "production"), by_district(scenario, "candidate_better")
    for district in DISTRICTS:
        assert better[district][0] > prod[district][0]
        # recall at FPR 5 %: about +8 points in expectation, sampling noise about 3 points per district
        assert better[district][1] >= prod[district][1] + 0.02


def test_regressing_candidate_is_worse_in_one_district_only(scenario) -> None:  # type: ignore[no-untyped-def]
    prod, regr = by_district(scenario, "production"), by_district(scenario, "candidate_regressing")
    auc_p, rec_p = prod[REGRESSING_DISTRICT]
    auc_r, rec_r = regr[REGRESSING_DISTRICT]
    assert rec_r <= rec_p - 0.15
    assert auc_r <= auc_p - 0.05
    for district in DISTRICTS:
        if district != REGRESSING_DISTRICT:
            assert regr[district][0] >= prod[district][0]
            assert regr[district][1] >= prod[district][1]


def test_regressing_candidate_hides_in_the_pooled_figures(scenario) -> None:  # type: ignore[no-untyped-def]
    y = scenario.eval_set["label"].to_numpy()
    prod, regr = scenario.production["score"].to_numpy(), scenario.candidate_regressing["score"].to_numpy()
    assert abs(roc_auc_score(y, regr) - roc_auc_score(y, prod)) <= 0.015
    assert recall_at_fpr(y, regr, 0.05) >= recall_at_fpr(y, prod, 0.05) - 0.01


def test_small_scenarios_and_bad_size() -> None:
    small = generate_scenario(seed=5, n_segments=500)
    assert len(small.eval_set) == 500
    assert small.eval_set["id"].iloc[0] == "SEG-00001"
    with pytest.raises(ValueError, match="at least 100"):
        generate_scenario(n_segments=10)


def test_write_scenario_files_read_back(tmp_path: Path) -> None:
    paths = write_scenario(tmp_path / "demo", seed=4, n_segments=3000)
    assert set(paths) == set(FILE_NAMES)
    assert sorted(p.name for p in (tmp_path / "demo").iterdir()) == sorted(FILE_NAMES.values())
    expected = generate_scenario(seed=4, n_segments=3000)
    for key in ("production", "candidate_better", "candidate_regressing"):
        table = read_table(paths[key])
        frame = expected.frames()[key]
        assert table.ids.tolist() == frame["id"].tolist()
        assert table.labels.tolist() == (frame["label"] == 1).tolist()
        assert np.array_equal(table.scores, frame["score"].to_numpy())
        assert table.columns["district"].tolist() == frame["district"].tolist()
    ev = pd.read_csv(paths["eval_set"])
    assert ev["id"].tolist() == expected.eval_set["id"].tolist()


def test_write_scenario_into_a_file_is_an_error(tmp_path: Path) -> None:
    blocker = tmp_path / "taken"
    blocker.write_text("x")
    with pytest.raises(TableError, match="cannot create the demo directory"):
        write_scenario(blocker, n_segments=200)
