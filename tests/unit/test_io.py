"""gate.io: reading, validation messages, fingerprint, selection and atomic writes.

Toy tables with hand-checked answers; the expected messages are the ones a user would read.
"""

from __future__ import annotations

import gzip
import hashlib
import os
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from gate.errors import GateError, TableError
from gate.io import (
    ColumnSpec,
    ScoreTable,
    fingerprint,
    read_table,
    subset,
    table_format,
    table_from_frame,
    table_to_frame,
    take,
    write_frame,
    write_table,
)

BASIC_CSV = "id,label,score,district\n007,1,0.9,north\n8,0,0.25,south\n9,1,0.5,north\n10,0,0.5,south\n"


def write(tmp_path: Path, name: str, text: str) -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def error_of(path: Path | str, spec: ColumnSpec = ColumnSpec(), **kw: object) -> str:
    with pytest.raises(TableError) as info:
        read_table(path, spec, **kw)  # type: ignore[arg-type]
    message = str(info.value)
    assert "\n" not in message, "a TableError message is one line"
    assert str(path) in message, "a TableError message names the file"
    return message


# --- reading -------------------------------------------------------------------------------------


def test_csv_reads_ids_as_text_labels_as_bool_scores_as_float(tmp_path: Path) -> None:
    table = read_table(write(tmp_path, "s.csv", BASIC_CSV))
    assert table.ids.tolist() == ["007", "8", "9", "10"]  # leading zero kept: ids are text
    assert table.ids.dtype == object
    assert table.labels.tolist() == [True, False, True, False]
    assert table.scores.dtype == np.float64
    assert table.scores.tolist() == [0.9, 0.25, 0.5, 0.5]
    assert table.weights is None
    assert list(table.columns) == ["district"]
    assert table.columns["district"].tolist() == ["north", "south", "north", "south"]
    assert (table.n, table.n_pos, table.n_neg) == (4, 2, 2)
    assert table.source == str(tmp_path / "s.csv")


def _basic_frame() -> pd.DataFrame:
    return pd.DataFrame(
        {
            "id": ["a", "b", "c", "d"],
            "label": [1, 0, 1, 0],
            "score": [0.9, 0.25, 0.5, 1 / 3],
            "district": ["north", "south", "north", "south"],
        }
    )


@pytest.mark.parametrize("name", ["t.csv", "t.csv.gz", "t.parquet", "t.pq", "t.jsonl", "t.ndjson", "t.jsonl.gz", "T.CSV"])
def test_every_format_reads_the_same_table(tmp_path: Path, name: str) -> None:
    frame = _basic_frame()
    path = write_frame(frame, tmp_path / name)
    table = read_table(path)
    assert table.ids.tolist() == ["a", "b", "c", "d"]
    assert table.labels.tolist() == [True, False, True, False]
    assert table.scores.tolist() == frame["score"].tolist()  # bit for bit, 1/3 included
    assert table.columns["district"].tolist() == ["north", "south", "north", "south"]


def test_table_format_by_extension() -> None:
    assert table_format("a/b.csv") == "csv"
    assert table_format("b.csv.gz") == "csv"
    assert table_format("b.PARQUET") == "parquet"
    assert table_format("b.pq") == "parquet"
    assert table_format("b.ndjson") == "jsonl"
    with pytest.raises(TableError, match=r"b\.txt: unknown file type '\.txt'; expected one of \.csv"):
        table_format("b.txt")
    with pytest.raises(TableError, match=r"unknown file type '\(none\)'"):
        table_format("scores")
    with pytest.raises(TableError, match="unknown file type"):
        table_format(".csv")  # a hidden file named only by the extension is not a table name


def test_missing_file_and_directory(tmp_path: Path) -> None:
    assert error_of(tmp_path / "nope.csv").endswith("nope.csv: file not found")
    folder = tmp_path / "dir.csv"
    folder.mkdir()
    assert "is a directory" in error_of(folder)


@pytest.mark.skipif(not hasattr(os, "geteuid") or os.geteuid() == 0, reason="root reads any file")
def test_unreadable_file(tmp_path: Path) -> None:
    path = write(tmp_path, "s.csv", BASIC_CSV)
    path.chmod(0)
    try:
        assert "permission denied" in error_of(path)
    finally:
        path.chmod(0o644)


def test_unknown_extension_is_checked_before_existence(tmp_path: Path) -> None:
    assert "unknown file type '.xlsx'" in error_of(tmp_path / "scores.xlsx")


def test_malformed_csv_too_many_fields_names_the_line(tmp_path: Path) -> None:
    path = write(tmp_path, "s.csv", "id,label,score\na,1,0.5\n\nb,0,0.2,9\n")
    assert error_of(path).endswith("malformed CSV: line 4 has 4 fields, the header has 3")


def test_malformed_csv_unclosed_quote(tmp_path: Path) -> None:
    path = write(tmp_path, "s.csv", 'id,label,score\na,1,0.5\nb,0,"0.2\nc,1,0.3\n')
    assert error_of(path).endswith("the quoted field starting on line 3 is never closed")


def test_not_utf8(tmp_path: Path) -> None:
    path = tmp_path / "s.csv"
    path.write_bytes(b"id,label,score\na,1,0.5\nb\xff,0,0.2\n")
    assert "not UTF-8 text (byte 0xff" in error_of(path)


def test_bad_gzip(tmp_path: Path) -> None:
    path = tmp_path / "s.csv.gz"
    path.write_bytes(b"this is not gzip")
    assert "not a readable gzip file" in error_of(path)


def test_utf8_bom_is_ignored(tmp_path: Path) -> None:
    path = tmp_path / "s.csv"
    path.write_bytes(b"\xef\xbb\xbf" + BASIC_CSV.encode())
    assert read_table(path).ids.tolist() == ["007", "8", "9", "10"]


def test_empty_file_and_header_only(tmp_path: Path) -> None:
    assert error_of(write(tmp_path, "e.csv", "")).endswith("the file is empty (no header line)")
    assert error_of(write(tmp_path, "h.csv", "id,label,score\n")).endswith("the table has no rows")
    assert "the file is empty" in error_of(write(tmp_path, "e.jsonl", "\n\n"))


def test_duplicate_header_name(tmp_path: Path) -> None:
    path = write(tmp_path, "s.csv", "id,label,score,score\na,1,0.5,0.4\nb,0,0.1,0.2\n")
    assert error_of(path).endswith("column name 'score' appears twice in the header")


def test_missing_column_lists_the_columns_and_suggests(tmp_path: Path) -> None:
    path = write(tmp_path, "s.csv", "id,label,scores\na,1,0.5\nb,0,0.1\n")
    message = error_of(path)
    assert message.endswith(
        "no score column 'score' (did you mean 'scores'?); the columns are: 'id', 'label', 'scores'"
    )
    message = error_of(path, ColumnSpec(score="scores", weight="w"))
    assert "no weight column 'w'" in message


def test_one_column_for_two_roles(tmp_path: Path) -> None:
    path = write(tmp_path, "s.csv", BASIC_CSV)
    assert "column 'id' is named for both the id and the score" in error_of(path, ColumnSpec(score="id"))


def test_columns_configurable(tmp_path: Path) -> None:
    path = write(tmp_path, "s.csv", "segment,leak,prob,w\nx,yes,0.7,2\ny,no,0.1,1\n")
    table = read_table(path, ColumnSpec(id="segment", label="leak", score="prob", weight="w", positive="yes"))
    assert table.ids.tolist() == ["x", "y"]
    assert table.labels.tolist() == [True, False]
    assert table.weights is not None and table.weights.tolist() == [2.0, 1.0]
    assert table.columns == {}


# --- scores --------------------------------------------------------------------------------------


def test_bad_scores_are_counted_and_the_first_is_named(tmp_path: Path) -> None:
    path = write(tmp_path, "s.csv", "id,label,score\na,1,0.5\n\nb,0,abc\nc,0,nan\nd,1,inf\ne,0,\nf,1,-Infinity\n")
    assert error_of(path).endswith(
        "column 'score': 5 of 6 scores are not finite numbers "
        "(1 missing, 1 not a number, 1 NaN, 2 infinite); first at row 2 (line 4 of the file): 'abc'"
    )


def test_score_row_numbers_follow_quoted_newlines(tmp_path: Path) -> None:
    # row 2's id spans lines 3-4, so row 3 starts on line 5
    path = write(tmp_path, "s.csv", 'id,label,score\na,1,0.5\n"b\nb",0,0.2\nc,1,oops\n')
    assert error_of(path).endswith("first at row 3 (line 5 of the file): 'oops'")


def test_missing_score_shows_no_value(tmp_path: Path) -> None:
    path = write(tmp_path, "s.csv", "id,label,score\na,1,0.5\nb,0,\n")
    assert error_of(path).endswith("(1 missing); first at row 2 (line 3 of the file)")


def test_parquet_scores_nan_null_and_bool(tmp_path: Path) -> None:
    frame = pd.DataFrame({"id": ["a", "b", "c"], "label": [1, 0, 1], "score": [0.1, float("nan"), np.inf]})
    path = tmp_path / "s.parquet"
    frame.to_parquet(path)
    # pandas writes NaN to Parquet as a null, so it reads back as missing
    assert error_of(path).endswith("2 of 3 scores are not finite numbers (1 missing, 1 infinite); first at row 2")
    frame["score"] = [True, False, True]
    frame.to_parquet(path)
    assert error_of(path).endswith("column 'score' holds true/false values, not scores")


def test_jsonl_numbers_as_text_are_read(tmp_path: Path) -> None:
    path = write(tmp_path, "s.jsonl", '{"id": "a", "label": 1, "score": "0.5"}\n{"id": "b", "label": 0, "score": 0.25}\n')
    assert read_table(path).scores.tolist() == [0.5, 0.25]


def test_jsonl_bool_score_is_not_a_number(tmp_path: Path) -> None:
    path = write(tmp_path, "s.jsonl", '{"id": "a", "label": 1, "score": true}\n{"id": "b", "label": 0, "score": 0.25}\n')
    assert error_of(path).endswith("(1 not a number); first at row 1 (line 1 of the file): True")


# --- labels --------------------------------------------------------------------------------------


def test_missing_labels(tmp_path: Path) -> None:
    path = write(tmp_path, "s.csv", "id,label,score\na,1,0.5\nb,,0.1\nc,,0.2\n")
    assert error_of(path).endswith("column 'label': 2 missing labels; first at row 2 (line 3 of the file)")


def test_label_column_with_three_values(tmp_path: Path) -> None:
    path = write(tmp_path, "s.csv", "id,label,score\na,0,0.5\nb,1,0.1\nc,2,0.3\n")
    assert error_of(path).endswith("column 'label' must hold two label values, found 3: '0', '1', '2'")


def test_positive_value_absent(tmp_path: Path) -> None:
    path = write(tmp_path, "s.csv", "id,label,score\na,yes,0.5\nb,no,0.1\n")
    assert error_of(path).endswith(
        "column 'label': the positive label value 1 does not occur; the values are 'no', 'yes'"
    )
    assert read_table(path, ColumnSpec(positive="yes")).labels.tolist() == [True, False]
    # strict beyond the int / text identity: case matters
    assert "the positive label value 'Yes' does not occur" in error_of(path, ColumnSpec(positive="Yes"))


@pytest.mark.parametrize("positive", [1, "1", True])
def test_int_and_its_text_form_match_in_csv(tmp_path: Path, positive: object) -> None:
    path = write(tmp_path, "s.csv", "id,label,score\na,1,0.5\nb,0,0.1\n")
    assert read_table(path, ColumnSpec(positive=positive)).labels.tolist() == [True, False]  # type: ignore[arg-type]


@pytest.mark.parametrize("positive", [0, "0", False])
def test_zero_as_positive(tmp_path: Path, positive: object) -> None:
    path = write(tmp_path, "s.csv", "id,label,score\na,1,0.5\nb,0,0.1\n")
    assert read_table(path, ColumnSpec(positive=positive)).labels.tolist() == [False, True]  # type: ignore[arg-type]


def test_int_text_forgiveness_is_canonical_form_only(tmp_path: Path) -> None:
    path = write(tmp_path, "s.csv", "id,label,score\na,1.0,0.5\nb,0.0,0.1\n")
    assert "the positive label value 1 does not occur; the values are '0.0', '1.0'" in error_of(path)
    path = write(tmp_path, "t.csv", "id,label,score\na,01,0.5\nb,00,0.1\n")
    assert "the positive label value '1' does not occur" in error_of(path, ColumnSpec(positive="1"))


def test_numeric_labels_in_jsonl_and_parquet_match_text_positive(tmp_path: Path) -> None:
    path = write(tmp_path, "s.jsonl", '{"id": "a", "label": 1, "score": 0.5}\n{"id": "b", "label": 0, "score": 0.1}\n')
    assert read_table(path, ColumnSpec(positive="1")).labels.tolist() == [True, False]
    frame = pd.DataFrame({"id": ["a", "b"], "label": [True, False], "score": [0.5, 0.1]})
    frame.to_parquet(tmp_path / "b.parquet")
    assert read_table(tmp_path / "b.parquet").labels.tolist() == [True, False]  # True counts as 1
    frame["label"] = [1.0, 0.0]
    frame.to_parquet(tmp_path / "f.parquet")
    assert read_table(tmp_path / "f.parquet").labels.tolist() == [True, False]


def test_one_class_only(tmp_path: Path) -> None:
    negatives = write(tmp_path, "n.csv", "id,label,score\na,0,0.5\nb,0,0.1\n")
    assert error_of(negatives).endswith(
        "column 'label': no positive rows (positive label value 1); the metrics need both classes"
    )
    assert read_table(negatives, require_both_classes=False).n_pos == 0
    positives = write(tmp_path, "p.csv", "id,label,score\na,1,0.5\nb,1,0.1\n")
    assert "no negative rows (every label is the positive value 1)" in error_of(positives)
    assert read_table(positives, require_both_classes=False).n_neg == 0


# --- ids -----------------------------------------------------------------------------------------


def test_duplicate_ids_are_counted(tmp_path: Path) -> None:
    path = write(tmp_path, "s.csv", "id,label,score\na,0,0.5\nb,1,0.1\nb,0,0.2\n\na,1,0.3\na,0,0.3\n")
    assert error_of(path).endswith(
        "column 'id': 3 duplicate ids; first 'b' at row 3 (line 4 of the file), already at row 2 (line 3 of the file)"
    )


def test_missing_id(tmp_path: Path) -> None:
    path = write(tmp_path, "s.csv", "id,label,score\na,0,0.5\n,1,0.1\n")
    assert error_of(path).endswith("column 'id': 1 missing ids; first at row 2 (line 3 of the file)")


def test_numeric_ids_become_text(tmp_path: Path) -> None:
    frame = pd.DataFrame({"id": [7, 8], "label": [1, 0], "score": [0.5, 0.1]})
    frame.to_parquet(tmp_path / "i.parquet")
    assert read_table(tmp_path / "i.parquet").ids.tolist() == ["7", "8"]
    frame["id"] = [7.0, 8.5]
    assert table_from_frame(frame).ids.tolist() == ["7", "8.5"]
    path = write(tmp_path, "s.jsonl", '{"id": 7, "label": 1, "score": 0.5}\n{"id": "x", "label": 0, "score": 0.1}\n')
    assert read_table(path).ids.tolist() == ["7", "x"]  # mixed JSON types go through the line reader


def test_jsonl_text_ids_that_look_like_dates_stay_text(tmp_path: Path) -> None:
    path = write(tmp_path, "s.jsonl", '{"id": "2024-01-01", "label": 1, "score": 0.5}\n{"id": "2024-01-02", "label": 0, "score": 0.1}\n')
    assert read_table(path).ids.tolist() == ["2024-01-01", "2024-01-02"]


def test_parquet_null_id(tmp_path: Path) -> None:
    frame = pd.DataFrame({"id": pd.array([1, None, 3], dtype="Int64"), "label": [1, 0, 1], "score": [0.5, 0.1, 0.2]})
    frame.to_parquet(tmp_path / "n.parquet")
    assert error_of(tmp_path / "n.parquet").endswith("column 'id': 1 missing ids; first at row 2")


# --- weights -------------------------------------------------------------------------------------


def test_weight_column_used_when_present(tmp_path: Path) -> None:
    path = write(tmp_path, "s.csv", "id,label,score,weight\na,1,0.5,2\nb,0,0.1,0.5\n")
    table = read_table(path)
    assert table.weights is not None and table.weights.tolist() == [2.0, 0.5]
    assert "weight" not in table.columns


def test_bad_weights(tmp_path: Path) -> None:
    path = write(tmp_path, "s.csv", "id,label,score,weight\na,1,0.5,1\nb,0,0.1,-2\nc,0,0.1,-1\n")
    assert error_of(path).endswith("column 'weight': 2 negative weights; first at row 2 (line 3 of the file): '-2'")
    path = write(tmp_path, "n.csv", "id,label,score,weight\na,1,0.5,1\nb,0,0.1,nan\n")
    assert "column 'weight': 1 of 2 weights are not finite numbers (1 NaN); first at row 2" in error_of(path)
    path = write(tmp_path, "z.csv", "id,label,score,weight\na,1,0.5,0\nb,0,0.1,0\n")
    assert error_of(path).endswith("column 'weight': all weights are zero")
    path = write(tmp_path, "p.csv", "id,label,score,weight\na,1,0.5,0\nb,0,0.1,1\n")
    assert error_of(path).endswith("column 'weight': every positive row has weight zero")
    assert read_table(path, require_both_classes=False).weights is not None


# --- JSON Lines specifics ------------------------------------------------------------------------


def test_jsonl_invalid_line(tmp_path: Path) -> None:
    path = write(tmp_path, "s.jsonl", '{"id": "a", "label": 1, "score": 0.5}\n\n{"id": "b", "label": 0\n')
    assert error_of(path).endswith("line 3 is not valid JSON (Expecting ',' delimiter at column 23)")
    path = write(tmp_path, "t.jsonl", '{"id": "a", "label": 1, "score": 0.5}\n[1, 2]\n')
    assert error_of(path).endswith("line 2 is a JSON list, not an object of column values")


def test_jsonl_missing_key_is_a_missing_value(tmp_path: Path) -> None:
    path = write(tmp_path, "s.jsonl", '{"id": "a", "label": 1, "score": 0.5}\n\n{"id": "b", "score": 0.1}\n')
    assert error_of(path).endswith("column 'label': 1 missing labels; first at row 2 (line 3 of the file)")
    path = write(tmp_path, "n.jsonl", '{"label": 1, "score": 0.5}\n{"label": 0, "score": 0.1}\n')
    assert "no id column 'id'; the columns are: 'label', 'score'" in error_of(path)


def test_jsonl_row_and_line_numbers_skip_blank_lines(tmp_path: Path) -> None:
    lines = ['{"id": "a", "label": 1, "score": 0.5}', "", '{"id": "b", "label": 0, "score": 0.2}', "   ",
             '{"id": "c", "label": 0, "score": 0.1}', '{"id": "c", "label": 1, "score": 0.3}']
    for name in ("s.jsonl", "s.jsonl.gz"):  # the Arrow reader and the line-by-line reader agree
        path = tmp_path / name
        data = ("\n".join(lines) + "\n").encode()
        path.write_bytes(gzip.compress(data) if name.endswith(".gz") else data)
        assert error_of(path).endswith(
            "column 'id': 1 duplicate id; first 'c' at row 4 (line 6 of the file), already at row 3 (line 5 of the file)"
        )


def test_parquet_columns_are_writable_copies(tmp_path: Path) -> None:
    _basic_frame().assign(age=[1, 2, 3, 4]).to_parquet(tmp_path / "s.parquet")
    table = read_table(tmp_path / "s.parquet")
    assert table.columns["age"].tolist() == [1, 2, 3, 4]
    assert table.columns["age"].flags.writeable and table.scores.flags.writeable


def test_corrupt_parquet(tmp_path: Path) -> None:
    path = tmp_path / "s.parquet"
    path.write_bytes(b"PAR1 but not really")
    assert "not a readable Parquet file" in error_of(path)


# --- frames --------------------------------------------------------------------------------------


def test_table_from_frame_names_rows_by_position() -> None:
    frame = pd.DataFrame({"id": ["a", "b", "c"], "label": [1, 0, 1], "score": [0.5, 0.1, "x"]}, index=[10, 20, 30])
    with pytest.raises(TableError, match=r"^<DataFrame>: column 'score': 1 of 3 scores .* first at row 3: 'x'$"):
        table_from_frame(frame)


def test_table_from_frame_extension_dtypes() -> None:
    frame = pd.DataFrame(
        {
            "id": pd.array(["a", "b"], dtype="string"),
            "label": pd.array([1, 0], dtype="Int64"),
            "score": pd.array([0.5, 0.25], dtype="Float64"),
            "district": pd.Categorical(["x", "y"]),
        }
    )
    table = table_from_frame(frame, source="scores")
    assert table.ids.tolist() == ["a", "b"]
    assert table.labels.tolist() == [True, False]
    assert table.scores.tolist() == [0.5, 0.25]
    assert table.columns["district"].tolist() == ["x", "y"]
    frame.loc[1, "score"] = pd.NA
    with pytest.raises(TableError, match=r"^scores: column 'score': .*\(1 missing\); first at row 2$"):
        table_from_frame(frame, source="scores")


def test_table_from_frame_copies_its_input() -> None:
    frame = _basic_frame()
    table = table_from_frame(frame)
    frame.loc[0, "score"] = -1.0
    assert table.scores[0] == 0.9


# --- fingerprint ---------------------------------------------------------------------------------


def test_fingerprint_matches_the_documented_bytes() -> None:
    table = table_from_frame(pd.DataFrame({"id": ["b", "a"], "label": [0, 1], "score": [0.1, 0.2]}))
    # the docstring's worked example, hashed here by hashlib directly
    expected = hashlib.sha256(bytes.fromhex("0000000000000001 61 01 0000000000000001 62 00".replace(" ", "")))
    assert fingerprint(table) == expected.hexdigest()


def test_fingerprint_multibyte_ids_use_utf8_length() -> None:
    table = table_from_frame(pd.DataFrame({"id": ["é", "z"], "label": [1, 0], "score": [0.1, 0.2]}))
    # code-point order puts "z" (U+007A) before "é" (U+00E9), whose UTF-8 form is 2 bytes
    data = (1).to_bytes(8, "big") + b"z\x00" + (2).to_bytes(8, "big") + "é".encode() + b"\x01"
    assert fingerprint(table) == hashlib.sha256(data).hexdigest()


def test_fingerprint_ignores_order_scores_and_weights_but_not_labels_or_ids() -> None:
    base = table_from_frame(_basic_frame())
    reordered = take(base, np.array([3, 1, 0, 2]))
    rescored = ScoreTable(base.ids, base.labels, base.scores[::-1].copy(), np.ones(4), {}, "x")
    relabelled = ScoreTable(base.ids, ~base.labels, base.scores, None, {}, "x")
    renamed = ScoreTable(np.array(["a", "b", "c", "e"], dtype=object), base.labels, base.scores, None, {}, "x")
    assert fingerprint(base) == fingerprint(reordered) == fingerprint(rescored)
    assert fingerprint(base) != fingerprint(relabelled)
    assert fingerprint(base) != fingerprint(renamed)
    # no ambiguity between ("ab", "c") and ("a", "bc"): the lengths are part of the bytes
    one = ScoreTable(np.array(["ab", "c"], dtype=object), np.array([True, False]), np.zeros(2), None, {}, "x")
    two = ScoreTable(np.array(["a", "bc"], dtype=object), np.array([True, False]), np.zeros(2), None, {}, "x")
    assert fingerprint(one) != fingerprint(two)


# --- subset / take -------------------------------------------------------------------------------


def test_subset_and_take_keep_rows_aligned() -> None:
    table = table_from_frame(_basic_frame().assign(weight=[1.0, 2.0, 3.0, 4.0]))
    north = subset(table, table.columns["district"] == "north")
    assert north.ids.tolist() == ["a", "c"]
    assert north.weights is not None and north.weights.tolist() == [1.0, 3.0]
    assert north.columns["district"].tolist() == ["north", "north"]
    picked = take(table, np.array([2, -1]))
    assert picked.ids.tolist() == ["c", "d"]
    assert picked.scores.tolist() == [0.5, 1 / 3]
    assert take(table, np.array([], dtype=int)).n == 0
    with pytest.raises(ValueError, match="boolean array of shape"):
        subset(table, np.array([1, 0, 1, 0]))
    with pytest.raises(ValueError, match="repeat a row"):
        take(table, np.array([0, 0]))
    with pytest.raises(ValueError, match="out of range"):
        take(table, np.array([4]))


# --- writing -------------------------------------------------------------------------------------


@pytest.mark.parametrize("name", ["w.csv", "w.csv.gz", "w.parquet", "w.jsonl", "w.ndjson.gz"])
def test_write_table_round_trip(tmp_path: Path, name: str) -> None:
    rng = np.random.default_rng(0)
    scores = rng.random(50)
    table = ScoreTable(
        ids=np.array([f"s{i:03d}" for i in range(50)], dtype=object),
        labels=np.arange(50) % 3 == 0,
        scores=scores,
        weights=rng.random(50) + 0.1,
        columns={"district": np.array(["n", "s"] * 25, dtype=object)},
        source="mem",
    )
    back = read_table(write_table(table, tmp_path / name))
    assert back.ids.tolist() == table.ids.tolist()
    assert np.array_equal(back.labels, table.labels)
    assert np.array_equal(back.scores, table.scores)  # exact, not approximately
    assert back.weights is not None and np.array_equal(back.weights, table.weights)
    assert back.columns["district"].tolist() == table.columns["district"].tolist()
    assert fingerprint(back) == fingerprint(table)
    assert [p.name for p in tmp_path.iterdir()] == [name]  # no temporary file left


def test_write_is_atomic_on_failure(tmp_path: Path) -> None:
    target = tmp_path / "kept.parquet"
    target.write_bytes(b"previous content")
    bad = pd.DataFrame({"id": ["a"], "mixed": [object()]})  # pyarrow cannot store a bare object
    with pytest.raises(TableError, match="cannot write as Parquet"):
        write_frame(bad, target)
    assert target.read_bytes() == b"previous content"
    assert [p.name for p in tmp_path.iterdir()] == ["kept.parquet"]


def test_write_errors(tmp_path: Path) -> None:
    table = table_from_frame(_basic_frame())
    with pytest.raises(TableError, match="does not exist"):
        write_table(table, tmp_path / "missing" / "t.csv")
    with pytest.raises(TableError, match="unknown file type"):
        write_table(table, tmp_path / "t.xlsx")
    clash = ScoreTable(table.ids, table.labels, table.scores, np.ones(4), {"weight": np.zeros(4)}, "mem")
    with pytest.raises(TableError, match="cannot write column 'weight'"):
        table_to_frame(clash)


def test_gzip_output_is_reproducible(tmp_path: Path) -> None:
    table = table_from_frame(_basic_frame())
    a = write_table(table, tmp_path / "a.csv.gz").read_bytes()
    b = write_table(table, tmp_path / "b.csv.gz").read_bytes()
    assert a == b
    assert gzip.decompress(a).decode().splitlines()[0] == "id,label,score,district"


def test_table_error_is_a_gate_error() -> None:
    assert issubclass(TableError, GateError)
