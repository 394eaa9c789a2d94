"""Unit tests for gate.baseline.align: pairing candidate and baseline rows by id."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from gate.baseline import Alignment, align
from gate.errors import BaselineError
from gate.io import ScoreTable


def table(
    ids: list[str],
    labels: list[int],
    *,
    scores: list[float] | None = None,
    weights: list[float] | None = None,
    source: str = "cand.csv",
    district: list[str] | None = None,
) -> ScoreTable:
    n = len(ids)
    return ScoreTable(
        ids=np.array(ids, dtype=object),
        labels=np.array(labels, dtype=np.bool_),
        scores=np.array(scores if scores is not None else np.arange(n, dtype=float) / max(n, 1)),
        weights=None if weights is None else np.array(weights, dtype=np.float64),
        columns={} if district is None else {"district": np.array(district, dtype=object)},
        source=source,
    )


def assert_paired(al: Alignment, candidate: ScoreTable, baseline: ScoreTable) -> None:
    """Row i of both aligned tables is the same id, with the values each table had for it."""
    assert al.candidate.ids.tolist() == al.baseline.ids.tolist()
    assert al.candidate.n == al.baseline.n == al.n_common
    cand_score = dict(zip(candidate.ids.tolist(), candidate.scores.tolist(), strict=True))
    base_score = dict(zip(baseline.ids.tolist(), baseline.scores.tolist(), strict=True))
    for i, s_c, s_b in zip(al.candidate.ids, al.candidate.scores, al.baseline.scores, strict=True):
        assert cand_score[i] == s_c and base_score[i] == s_b
    np.testing.assert_array_equal(al.candidate.labels, al.baseline.labels)


# --- same eval set ------------------------------------------------------------------------------


def test_identical_tables_pass_through() -> None:
    cand = table(["a", "b", "c"], [1, 0, 0], district=["n", "s", "n"])
    base = table(["a", "b", "c"], [1, 0, 0], scores=[0.9, 0.1, 0.2], source="base")
    al = align(cand, base)
    assert al.candidate is cand and al.baseline is base
    assert (al.n_common, al.missing_ids_count, al.extra_ids_count, al.label_disagreements) == (3, 0, 0, 0)
    assert al.missing == 0 and al.extra == 0
    assert not al.intersected
    assert al.note == "candidate and baseline paired on all 3 ids"


def test_same_ids_in_another_order_are_reordered_to_the_candidate() -> None:
    cand = table(["c", "a", "b"], [0, 1, 0], scores=[0.3, 0.1, 0.2], district=["x", "y", "z"])
    base = table(["a", "b", "c"], [1, 0, 0], scores=[0.9, 0.8, 0.7], weights=[1.0, 2.0, 3.0])
    al = align(cand, base)
    assert al.candidate is cand
    assert al.baseline.ids.tolist() == ["c", "a", "b"]
    assert al.baseline.scores.tolist() == [0.7, 0.9, 0.8]
    assert al.baseline.weights is not None and al.baseline.weights.tolist() == [3.0, 1.0, 2.0]
    assert not al.intersected
    assert_paired(al, cand, base)


# --- mismatches with on_mismatch="error" ---------------------------------------------------------


def test_missing_ids_are_an_error() -> None:
    base = table(["a", "b", "c", "d"], [1, 0, 0, 1], source="prod/base")
    cand = table(["a", "c"], [1, 0], source="cand.csv")
    with pytest.raises(
        BaselineError,
        match=r"candidate cand\.csv and baseline prod/base are not on the same eval set: "
        r"2 baseline ids missing from the candidate \(e\.g\. 'b', 'd'\); re-adopt the baseline",
    ):
        align(cand, base)


def test_extra_ids_are_an_error() -> None:
    base = table(["a", "b"], [1, 0])
    cand = table(["a", "b", "x"], [1, 0, 1])
    with pytest.raises(BaselineError, match=r"1 candidate id not in the baseline \(e\.g\. 'x'\)"):
        align(cand, base, on_mismatch="error")


def test_label_disagreements_are_an_error() -> None:
    base = table(["a", "b", "c"], [1, 0, 0])
    cand = table(["a", "b", "c"], [1, 1, 0])
    with pytest.raises(BaselineError, match=r"1 id with a different label \(e\.g\. 'b'\)"):
        align(cand, base)


def test_error_lists_every_kind_with_at_most_three_examples() -> None:
    base_ids = [f"b{i}" for i in range(10)] + ["s0", "s1", "s2", "s3", "s4"]
    cand_ids = [f"c{i}" for i in range(6)] + ["s0", "s1", "s2", "s3", "s4"]
    base = table(base_ids, [0] * 10 + [1, 1, 1, 1, 0])
    cand = table(cand_ids, [0] * 6 + [0, 0, 0, 0, 1])
    with pytest.raises(
        BaselineError,
        match=r"10 baseline ids missing from the candidate \(e\.g\. 'b0', 'b1', 'b2'\), "
        r"6 candidate ids not in the baseline \(e\.g\. 'c0', 'c1', 'c2'\), "
        r"5 ids with a different label \(e\.g\. 's0', 's1', 's2'\); .*on_mismatch = \"intersect\"",
    ):
        align(cand, base)


def test_example_ids_are_quoted_and_shortened() -> None:
    long_id = "x" * 100
    base = table(["a", "b"], [1, 0])
    cand = table(["a", "b", "line\nbreak", long_id], [1, 0, 0, 0])
    with pytest.raises(BaselineError) as info:
        align(cand, base)
    message = str(info.value)
    assert "'line\\nbreak'" in message and "\n" not in message
    assert long_id not in message and "'xxxxxxxx" in message


# --- on_mismatch="intersect" ---------------------------------------------------------------------


def test_intersect_keeps_common_ids_with_agreeing_labels() -> None:
    base = table(["a", "b", "c", "d", "e"], [1, 0, 0, 1, 0], scores=[0.9, 0.8, 0.7, 0.6, 0.5], source="base")
    cand = table(
        ["x", "e", "d", "c", "a"], [0, 0, 0, 0, 1], scores=[0.1, 0.2, 0.3, 0.4, 0.5],
        weights=[1.0, 2.0, 3.0, 4.0, 5.0], district=["n", "s", "n", "s", "n"],
    )
    al = align(cand, base, on_mismatch="intersect")
    # b: missing from the candidate; x: extra; d: labels differ (base 1, candidate 0) and is dropped.
    assert (al.n_common, al.missing_ids_count, al.extra_ids_count, al.label_disagreements) == (3, 1, 1, 1)
    assert al.examples == {"missing": ("b",), "extra": ("x",), "label": ("d",)}
    assert al.intersected
    assert al.candidate.ids.tolist() == ["e", "c", "a"]  # candidate order kept
    assert al.candidate.columns["district"].tolist() == ["s", "s", "n"]  # slices follow the rows
    assert al.candidate.weights is not None and al.candidate.weights.tolist() == [2.0, 4.0, 5.0]
    assert_paired(al, cand, base)
    assert al.note == (
        "paired on the 3 ids common to candidate and baseline with the same label; left out "
        "1 baseline id missing from the candidate (e.g. 'b'), 1 candidate id not in the baseline "
        "(e.g. 'x'), 1 id with a different label (e.g. 'd')"
    )
    assert "\n" not in al.note


def test_intersect_without_differences_is_not_intersected() -> None:
    base = table(["a", "b"], [1, 0])
    al = align(table(["b", "a"], [0, 1]), base, on_mismatch="intersect")
    assert not al.intersected and al.n_common == 2


def test_intersect_with_no_common_ids_is_an_error() -> None:
    base = table(["a", "b"], [1, 0], source="base")
    cand = table(["c", "d"], [1, 0], source="cand.csv")
    with pytest.raises(
        BaselineError,
        match=r"candidate cand\.csv and baseline base have no ids with the same label in common "
        r"\(2 baseline ids missing from the candidate \(e\.g\. 'a', 'b'\), 2 candidate ids not in "
        r"the baseline \(e\.g\. 'c', 'd'\)\); nothing to compare",
    ):
        align(cand, base, on_mismatch="intersect")


def test_intersect_with_only_disagreeing_labels_is_an_error() -> None:
    base = table(["a", "b"], [1, 0])
    cand = table(["a", "b"], [0, 1])
    with pytest.raises(BaselineError, match=r"no ids with the same label in common \(2 ids with a different label"):
        align(cand, base, on_mismatch="intersect")


def test_unknown_mode_is_a_caller_bug() -> None:
    base = table(["a", "b"], [1, 0])
    with pytest.raises(ValueError, match=r"on_mismatch must be 'error' or 'intersect', got 'union'"):
        align(base, base, on_mismatch="union")  # type: ignore[arg-type]


# --- property: counts agree with plain set arithmetic --------------------------------------------

ID_POOL = [f"p{i}" for i in range(12)]


@st.composite
def labelled_subset(draw: st.DrawFn) -> dict[str, bool]:
    ids = draw(st.lists(st.sampled_from(ID_POOL), unique=True, max_size=len(ID_POOL)))
    return {i: draw(st.booleans()) for i in draw(st.permutations(ids))}


@settings(max_examples=200, deadline=None)
@given(cand_rows=labelled_subset(), base_rows=labelled_subset())
def test_intersect_counts_match_set_arithmetic(cand_rows: dict[str, bool], base_rows: dict[str, bool]) -> None:
    # Oracle: Python sets and dicts, independent of the pandas indexer used by align.
    common = cand_rows.keys() & base_rows.keys()
    agree = [i for i in cand_rows if i in common and cand_rows[i] == base_rows[i]]  # candidate order
    cand = table(list(cand_rows), [int(v) for v in cand_rows.values()])
    base = table(list(base_rows), [int(v) for v in base_rows.values()], scores=[float(k) for k in range(len(base_rows))])
    if not agree:
        with pytest.raises(BaselineError, match="nothing to compare"):
            align(cand, base, on_mismatch="intersect")
        return
    al = align(cand, base, on_mismatch="intersect")
    assert al.n_common == len(agree)
    assert al.missing_ids_count == len(base_rows.keys() - cand_rows.keys())
    assert al.extra_ids_count == len(cand_rows.keys() - base_rows.keys())
    assert al.label_disagreements == sum(cand_rows[i] != base_rows[i] for i in common)
    assert al.candidate.ids.tolist() == agree
    assert_paired(al, cand, base)
    differs = cand_rows.keys() != base_rows.keys() or al.label_disagreements > 0
    assert al.intersected == differs
    if differs:
        with pytest.raises(BaselineError, match="not on the same eval set"):
            align(cand, base, on_mismatch="error")
