"""Fixtures for CLI tests: small score tables written to tmp_path, and a CLI runner.

``hm_csv`` is the Hanley & McNeil (1982) CT rating table (REFERENCES.md section 1) expanded
to one row per case, so CLI output can be checked against published / reference values.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pytest
from typer.testing import CliRunner

# Hanley & McNeil (1982), Radiology 143:29-36, the rating table of REFERENCES.md section 1:
# counts of negatives / positives at ratings 1..5.
HM_NEGATIVES = (33, 6, 6, 11, 2)
HM_POSITIVES = (3, 2, 2, 11, 33)


def hm_rows() -> list[tuple[str, int, int]]:
    """(id, label, rating) rows of the HM table: 58 negatives and 51 positives."""
    rows = []
    for rating, (neg, pos) in enumerate(zip(HM_NEGATIVES, HM_POSITIVES, strict=True), start=1):
        rows += [(f"n{rating}-{i}", 0, rating) for i in range(neg)]
        rows += [(f"p{rating}-{i}", 1, rating) for i in range(pos)]
    return rows


@pytest.fixture
def runner() -> CliRunner:
    return CliRunner()


@pytest.fixture
def make_file(tmp_path: Path) -> Callable[[str, str | bytes], Path]:
    """Write ``content`` (text or bytes) to ``tmp_path / name`` and return the path."""

    def make(name: str, content: str | bytes) -> Path:
        path = tmp_path / name
        path.parent.mkdir(parents=True, exist_ok=True)
        if isinstance(content, bytes):
            path.write_bytes(content)
        else:
            path.write_text(content, encoding="utf-8")
        return path

    return make


@pytest.fixture
def hm_csv(make_file: Callable[[str, str | bytes], Path]) -> Path:
    lines = ["id,label,score"] + [f"{i},{y},{s}" for i, y, s in hm_rows()]
    return make_file("hm.csv", "\n".join(lines) + "\n")


@pytest.fixture
def small_csv(make_file: Callable[[str, str | bytes], Path]) -> Path:
    """scikit-learn's roc_curve docstring example as 0/1 labels (REFERENCES.md section 3)."""
    return make_file("small.csv", "id,label,score,district\na,0,0.1,north\nb,0,0.4,south\nc,1,0.35,north\nd,1,0.8,south\n")


# Every bad input of the io layer, as (file name, content, a fragment of the expected message).
BAD_INPUTS: list[tuple[str, str | bytes, str]] = [
    ("unknown.txt", "id,label,score\na,1,0.5\n", "unknown file type '.txt'"),
    ("malformed.csv", "id,label,score\na,1,0.5\nb,0,0.2,9\n", "malformed CSV: line 3 has 4 fields"),
    ("quote.csv", 'id,label,score\na,1,"0.5\nb,0,0.2\n', "never closed"),
    ("latin1.csv", b"id,label,score\n\xe9,1,0.5\nb,0,0.2\n", "not UTF-8 text"),
    ("empty.csv", "", "the file is empty"),
    ("header.csv", "id,label,score\n", "the table has no rows"),
    ("nocol.csv", "id,label,prob\na,1,0.5\nb,0,0.2\n", "no score column 'score'"),
    ("dupcol.csv", "id,label,score,score\na,1,0.5,1\nb,0,0.2,1\n", "appears twice"),
    ("text.csv", "id,label,score\na,1,0.5\nb,0,high\n", "1 not a number); first at row 2 (line 3 of the file): 'high'"),
    ("nan.csv", "id,label,score\na,1,0.5\nb,0,NaN\n", "(1 NaN)"),
    ("inf.csv", "id,label,score\na,1,inf\nb,0,0.2\n", "(1 infinite)"),
    ("nolabel.csv", "id,label,score\na,1,0.5\nb,,0.2\n", "1 missing labels"),
    ("three.csv", "id,label,score\na,1,0.5\nb,0,0.2\nc,2,0.3\n", "must hold two label values, found 3"),
    ("nopos.csv", "id,label,score\na,yes,0.5\nb,no,0.2\n", "does not occur; the values are 'no', 'yes'"),
    ("dupid.csv", "id,label,score\na,1,0.5\na,0,0.2\n", "1 duplicate id; first 'a' at row 2"),
    ("negw.csv", "id,label,score,weight\na,1,0.5,1\nb,0,0.2,-1\n", "1 negative weights"),
    ("nanw.csv", "id,label,score,weight\na,1,0.5,1\nb,0,0.2,nan\n", "weights are not finite"),
    ("zerow.csv", "id,label,score,weight\na,1,0.5,0\nb,0,0.2,0\n", "all weights are zero"),
    ("oneclass.csv", "id,label,score\na,0,0.5\nb,0,0.2\n", "no positive rows"),
    ("badjson.jsonl", '{"id": "a", "label": 1, "score": 0.5}\n{"id": "b",\n', "line 2 is not valid JSON"),
    ("corrupt.parquet", b"not parquet", "not a readable Parquet file"),
]
