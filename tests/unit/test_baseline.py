"""Unit tests for gate/baseline.py: adopt, load_baseline, integrity and crash safety."""

from __future__ import annotations

import fcntl
import hashlib
import json
import os
import random
import signal
import subprocess
import sys
import textwrap
import threading
import time
from datetime import UTC, datetime, timedelta, timezone
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

import gate
from gate import baseline as bl
from gate.baseline import CRASH_STAGES, MANIFEST_NAME, Manifest, adopt, load_baseline
from gate.errors import BaselineError, GateError
from gate.io import ScoreTable

# Invented toy tables: the checks below are round trips and integrity rules, never metric values.


def make_table(
    n: int = 40,
    *,
    seed: int = 0,
    prefix: str = "seg-",
    weighted: bool = False,
    source: str = "/ci/run/candidate.parquet",
) -> ScoreTable:
    rng = np.random.default_rng(seed)
    labels = np.zeros(n, dtype=np.bool_)
    labels[: max(1, n // 4)] = True
    rng.shuffle(labels)
    return ScoreTable(
        ids=np.array([f"{prefix}{i:04d}" for i in range(n)], dtype=object),
        labels=labels,
        scores=rng.normal(size=n) + labels,
        weights=rng.uniform(0.5, 2.0, size=n) if weighted else None,
        columns={"district": np.array(["north", "south"] * (n // 2), dtype=object)},
        source=source,
    )


def manifest_json(directory: Path) -> dict:
    return json.loads((directory / MANIFEST_NAME).read_text(encoding="utf-8"))


def write_manifest(directory: Path, data: object) -> None:
    (directory / MANIFEST_NAME).write_text(json.dumps(data), encoding="utf-8")


def scores_files(directory: Path) -> list[str]:
    return sorted(p.name for p in directory.iterdir() if p.name.startswith("scores-"))


def assert_same_table(loaded: ScoreTable, original: ScoreTable) -> None:
    assert loaded.ids.tolist() == original.ids.tolist()
    np.testing.assert_array_equal(loaded.labels, original.labels)
    assert loaded.labels.dtype == np.bool_
    np.testing.assert_array_equal(loaded.scores, original.scores)  # float64 stored exactly
    assert loaded.scores.dtype == np.float64
    if original.weights is None:
        assert loaded.weights is None
    else:
        assert loaded.weights is not None
        np.testing.assert_array_equal(loaded.weights, original.weights)


# --- round trip and manifest ---------------------------------------------------------------------


@pytest.mark.parametrize("weighted", [False, True])
def test_round_trip(tmp_path: Path, weighted: bool) -> None:
    table = make_table(weighted=weighted)
    manifest = adopt(table, tmp_path / "base", note="nightly model 7")
    loaded = load_baseline(tmp_path / "base")
    assert_same_table(loaded.table, table)
    assert loaded.manifest == manifest
    assert loaded.directory == str(tmp_path / "base")
    assert loaded.table.columns == {}  # slices belong to the candidate, not the stored baseline
    assert loaded.table.source == str(tmp_path / "base" / manifest.scores_file)


def test_manifest_fields(tmp_path: Path) -> None:
    table = make_table(n=40, weighted=True)
    # 08:07:08 at UTC+02:00 is 06:07:08 UTC.
    when = datetime(2024, 3, 5, 8, 7, 8, 999, tzinfo=timezone(timedelta(hours=2)))
    manifest = adopt(table, tmp_path, note="retrained on <May> & \"June\"", now=when)
    data = manifest_json(tmp_path)
    assert data == manifest.to_json()
    assert set(data) == {
        "schema", "tool", "tool_version", "created_utc", "fingerprint", "n", "n_positive",
        "n_negative", "weighted", "scores_file", "scores_sha256", "note", "source",
    }
    assert data["schema"] == bl.SCHEMA == 1
    assert data["tool"] == "rankgate"
    assert data["tool_version"] == gate.__version__
    assert data["created_utc"] == "2024-03-05T06:07:08Z"
    assert data["n"] == 40 and data["n_positive"] == 10 and data["n_negative"] == 30
    assert data["weighted"] is True
    assert data["note"] == "retrained on <May> & \"June\""  # stored as given; escaped by reports
    assert data["source"] == "candidate.parquet"  # the file name, not the runner's path
    # sha256 of the file's bytes, recomputed here with hashlib.
    stored = (tmp_path / data["scores_file"]).read_bytes()
    assert data["scores_sha256"] == hashlib.sha256(stored).hexdigest()
    assert data["scores_file"] == f"scores-{data['scores_sha256'][:16]}.parquet"
    assert scores_files(tmp_path) == [data["scores_file"]]
    from gate.io import fingerprint

    assert data["fingerprint"] == fingerprint(table)


def test_default_created_time_is_now_utc(tmp_path: Path) -> None:
    before = datetime.now(UTC).replace(microsecond=0)
    manifest = adopt(make_table(), tmp_path)
    after = datetime.now(UTC)
    created = datetime.strptime(manifest.created_utc, "%Y-%m-%dT%H:%M:%SZ").replace(tzinfo=UTC)
    assert before <= created <= after
    assert manifest.note is None and manifest_json(tmp_path)["note"] is None


def test_naive_now_is_a_caller_bug(tmp_path: Path) -> None:
    with pytest.raises(ValueError, match="timezone-aware"):
        adopt(make_table(), tmp_path, now=datetime(2024, 1, 1))


def test_stored_columns_and_types(tmp_path: Path) -> None:
    manifest = adopt(make_table(weighted=True), tmp_path)
    stored = pq.read_table(tmp_path / manifest.scores_file)
    assert stored.column_names == ["id", "label", "score", "weight"]
    assert stored.schema.field("id").type == pa.string()
    assert stored.schema.field("label").type == pa.bool_()
    assert stored.schema.field("score").type == pa.float64()
    assert stored.schema.field("weight").type == pa.float64()


def test_readopt_replaces_scores_and_removes_superseded(tmp_path: Path) -> None:
    table = make_table()
    first = adopt(table, tmp_path)
    (tmp_path / ".tmp-scores-leftover").write_bytes(b"partial")  # as a killed adopt leaves it
    retrained = ScoreTable(ids=table.ids, labels=table.labels, scores=-table.scores, weights=None)
    second = adopt(retrained, tmp_path)
    assert second.scores_file != first.scores_file
    assert scores_files(tmp_path) == [second.scores_file]
    assert not any(p.name.startswith(".tmp-") for p in tmp_path.iterdir())


def test_readopt_same_eval_set_new_scores(tmp_path: Path) -> None:
    table = make_table(seed=3)
    adopt(table, tmp_path)
    retrained = ScoreTable(
        ids=table.ids, labels=table.labels, scores=table.scores * 2 + 1, weights=None,
        source="retrained.csv",
    )
    manifest = adopt(retrained, tmp_path, note="second")
    loaded = load_baseline(tmp_path)
    assert_same_table(loaded.table, retrained)
    assert loaded.manifest.note == "second" and manifest.source == "retrained.csv"


def test_readopt_identical_table_keeps_one_file(tmp_path: Path) -> None:
    table = make_table()
    a = adopt(table, tmp_path, now=datetime(2024, 1, 1, tzinfo=UTC))
    b = adopt(table, tmp_path, now=datetime(2024, 1, 2, tzinfo=UTC))
    assert a.scores_file == b.scores_file
    assert scores_files(tmp_path) == [a.scores_file]
    assert load_baseline(tmp_path).manifest.created_utc == "2024-01-02T00:00:00Z"


# --- eval-set changes ----------------------------------------------------------------------------


def test_different_eval_set_refused_without_flag(tmp_path: Path) -> None:
    old = make_table(n=40)
    adopt(old, tmp_path)
    other = ScoreTable(  # the same 40 segments plus 4 new ones
        ids=np.concatenate([old.ids, np.array([f"seg-{i:04d}" for i in range(40, 44)], dtype=object)]),
        labels=np.concatenate([old.labels, [True, False, False, False]]),
        scores=np.concatenate([old.scores, [0.1, 0.2, 0.3, 0.4]]),
        weights=None,
        source="next-quarter.csv",
    )
    with pytest.raises(
        BaselineError,
        match=r"next-quarter\.csv is on a different eval set than the current baseline "
        r"\(44 rows, fingerprint [0-9a-f]{12} vs 40 rows, fingerprint [0-9a-f]{12}; "
        r"4 candidate ids not in the baseline \(e\.g\. 'seg-0040', 'seg-0041', 'seg-0042'\)\)"
        r".*--new-eval-set",
    ):
        adopt(other, tmp_path)
    assert_same_table(load_baseline(tmp_path).table, old)  # untouched


def test_label_change_is_a_different_eval_set(tmp_path: Path) -> None:
    old = make_table()
    adopt(old, tmp_path)
    labels = old.labels.copy()
    labels[0] = not labels[0]
    relabelled = ScoreTable(ids=old.ids, labels=labels, scores=old.scores, weights=None)
    with pytest.raises(BaselineError, match=r"1 id with a different label \(e\.g\. 'seg-0000'\)"):
        adopt(relabelled, tmp_path)


def test_different_eval_set_allowed_with_flag(tmp_path: Path) -> None:
    adopt(make_table(n=40), tmp_path)
    other = make_table(n=60, prefix="pipe-")
    manifest = adopt(other, tmp_path, new_eval_set=True)
    loaded = load_baseline(tmp_path)
    assert_same_table(loaded.table, other)
    assert loaded.manifest.fingerprint == manifest.fingerprint
    assert len(scores_files(tmp_path)) == 1


def test_adopt_over_unreadable_manifest_needs_flag(tmp_path: Path) -> None:
    adopt(make_table(), tmp_path)
    (tmp_path / MANIFEST_NAME).write_text("{not json", encoding="utf-8")
    with pytest.raises(BaselineError, match=r"manifest\.json is not valid JSON.*--new-eval-set"):
        adopt(make_table(), tmp_path)
    adopt(make_table(), tmp_path, new_eval_set=True)
    load_baseline(tmp_path)


def test_adopt_over_tampered_scores_same_eval_set_repairs(tmp_path: Path) -> None:
    table = make_table()
    manifest = adopt(table, tmp_path)
    (tmp_path / manifest.scores_file).write_bytes(b"garbage")
    adopt(table, tmp_path)  # the manifest still records the eval set, so no flag is needed
    assert_same_table(load_baseline(tmp_path).table, table)


def test_adopt_refuses_foreign_directory(tmp_path: Path) -> None:
    (tmp_path / "notes.txt").write_text("mine", encoding="utf-8")
    with pytest.raises(BaselineError, match=r"not a rankgate baseline \(no manifest\.json\) and not empty \(holds 'notes\.txt'\)"):
        adopt(make_table(), tmp_path)
    assert sorted(p.name for p in tmp_path.iterdir()) == [".lock", "notes.txt"]


def test_adopt_creates_nested_directory(tmp_path: Path) -> None:
    adopt(make_table(), tmp_path / "a" / "b")
    load_baseline(tmp_path / "a" / "b")


def test_adopt_refuses_a_file_as_directory(tmp_path: Path) -> None:
    (tmp_path / "f").write_text("x", encoding="utf-8")
    with pytest.raises(BaselineError, match=r"f: exists and is not a directory"):
        adopt(make_table(), tmp_path / "f")


def one_class(positive: bool) -> ScoreTable:
    return ScoreTable(
        ids=np.array(["a", "b"], dtype=object), labels=np.array([positive, positive]),
        scores=np.array([0.1, 0.2]), weights=None, source="one.csv",
    )


@pytest.mark.parametrize(
    ("table", "message"),
    [
        (one_class(True), r"cannot adopt one\.csv: the table has no negatives"),
        (one_class(False), r"cannot adopt one\.csv: the table has no positives"),
        (
            ScoreTable(ids=np.array([], dtype=object), labels=np.array([], dtype=bool),
                       scores=np.array([]), weights=None, source="empty.csv"),
            r"cannot adopt empty\.csv: the table has no rows",
        ),
        (
            ScoreTable(ids=np.array(["a", "a"], dtype=object), labels=np.array([True, False]),
                       scores=np.array([0.1, 0.2]), weights=None, source="dup.csv"),
            r"cannot adopt dup\.csv: ids are not unique",
        ),
        (
            ScoreTable(ids=np.array(["a", "b"], dtype=object), labels=np.array([True, False]),
                       scores=np.array([np.nan, 0.2]), weights=None, source="nan.csv"),
            r"cannot adopt nan\.csv: scores must be finite",
        ),
        (
            ScoreTable(ids=np.array(["a", "b"], dtype=object), labels=np.array([True, False]),
                       scores=np.array([0.1, 0.2]), weights=np.array([1.0, -1.0]), source="w.csv"),
            r"cannot adopt w\.csv: weights must be finite, non-negative",
        ),
    ],
)
def test_adopt_refuses_unusable_tables(tmp_path: Path, table: ScoreTable, message: str) -> None:
    with pytest.raises(BaselineError, match=message):
        adopt(table, tmp_path / "base")
    assert not (tmp_path / "base" / MANIFEST_NAME).exists()


# --- load: integrity -----------------------------------------------------------------------------


def test_missing_directory(tmp_path: Path) -> None:
    where = tmp_path / "nowhere"
    with pytest.raises(BaselineError, match=r"nowhere: baseline directory does not exist; create it with rankgate adopt"):
        load_baseline(where)


def test_directory_is_a_file(tmp_path: Path) -> None:
    (tmp_path / "f").write_text("x", encoding="utf-8")
    with pytest.raises(BaselineError, match=r"f: not a directory"):
        load_baseline(tmp_path / "f")


def test_directory_without_manifest(tmp_path: Path) -> None:
    with pytest.raises(BaselineError, match=r"no manifest\.json \(not a rankgate baseline"):
        load_baseline(tmp_path)


def test_tampered_scores_file_refused(tmp_path: Path) -> None:
    table = make_table()
    manifest = adopt(table, tmp_path)
    # A well-formed Parquet file with one score changed: only the hash can tell.
    stored = pq.read_table(tmp_path / manifest.scores_file)
    scores = stored.column("score").to_numpy().copy()
    scores[3] += 0.5
    pq.write_table(stored.set_column(2, "score", pa.array(scores)), tmp_path / manifest.scores_file)
    with pytest.raises(
        BaselineError,
        match=rf"{manifest.scores_file} sha256 does not match manifest\.json \(the stored scores were "
        r"changed after adoption\); re-adopt with rankgate adopt",
    ):
        load_baseline(tmp_path)


def test_truncated_scores_file_refused(tmp_path: Path) -> None:
    manifest = adopt(make_table(), tmp_path)
    path = tmp_path / manifest.scores_file
    path.write_bytes(path.read_bytes()[:-10])
    with pytest.raises(BaselineError, match="sha256 does not match"):
        load_baseline(tmp_path)


def test_missing_scores_file_refused(tmp_path: Path) -> None:
    manifest = adopt(make_table(), tmp_path)
    (tmp_path / manifest.scores_file).unlink()
    with pytest.raises(BaselineError, match=rf"{manifest.scores_file} named by manifest\.json is missing"):
        load_baseline(tmp_path)


def rewrite_consistently(directory: Path, stored: pa.Table, **manifest_changes: object) -> None:
    """Replace the scores file and fix up the manifest's hash: a deliberate, careful edit."""
    data = manifest_json(directory)
    (directory / data["scores_file"]).unlink()
    sink = pa.BufferOutputStream()
    pq.write_table(stored, sink)
    payload = sink.getvalue().to_pybytes()
    digest = hashlib.sha256(payload).hexdigest()
    data["scores_sha256"] = digest
    data["scores_file"] = f"scores-{digest[:16]}.parquet"
    (directory / data["scores_file"]).write_bytes(payload)
    data.update(manifest_changes)
    write_manifest(directory, data)


def test_fingerprint_mismatch_refused(tmp_path: Path) -> None:
    manifest = adopt(make_table(), tmp_path)
    stored = pq.read_table(tmp_path / manifest.scores_file)
    ids = stored.column("id").to_pylist()
    ids[0] = "seg-9999"
    rewrite_consistently(tmp_path, stored.set_column(0, "id", pa.array(ids, pa.string())))
    with pytest.raises(BaselineError, match=r"eval-set fingerprint does not match the one in manifest\.json"):
        load_baseline(tmp_path)


def test_counts_mismatch_refused(tmp_path: Path) -> None:
    manifest = adopt(make_table(n=40), tmp_path)
    stored = pq.read_table(tmp_path / manifest.scores_file)
    rewrite_consistently(tmp_path, stored.slice(0, 39))
    with pytest.raises(BaselineError, match=r"holds n=39, .* but manifest\.json records n=40"):
        load_baseline(tmp_path)


@pytest.mark.parametrize(
    ("change", "message"),
    [
        (lambda t: t.drop_columns(["label"]), r"has columns \['id', 'score'\], expected \['id', 'label', 'score'\]"),
        (lambda t: t.set_column(1, "label", pa.array([1] * t.num_rows, pa.int64())), r"column 'label' has type int64"),
        (lambda t: t.set_column(2, "score", pa.array([None] * t.num_rows, pa.float64())), r"column 'score' has 40 missing values"),
    ],
)
def test_malformed_stored_table_refused(tmp_path: Path, change, message: str) -> None:
    manifest = adopt(make_table(n=40), tmp_path)
    rewrite_consistently(tmp_path, change(pq.read_table(tmp_path / manifest.scores_file)))
    with pytest.raises(BaselineError, match=message):
        load_baseline(tmp_path)


def test_unreadable_parquet_with_matching_hash_refused(tmp_path: Path) -> None:
    adopt(make_table(), tmp_path)
    data = manifest_json(tmp_path)
    (tmp_path / data["scores_file"]).unlink()
    payload = b"not parquet at all"
    digest = hashlib.sha256(payload).hexdigest()
    data["scores_sha256"], data["scores_file"] = digest, f"scores-{digest[:16]}.parquet"
    (tmp_path / data["scores_file"]).write_bytes(payload)
    write_manifest(tmp_path, data)
    with pytest.raises(BaselineError, match=r"is not readable Parquet"):
        load_baseline(tmp_path)


def _edit(key: str, value: object):
    def apply(data: dict) -> dict:
        data[key] = value
        return data

    return apply


def _drop(key: str):
    def apply(data: dict) -> dict:
        del data[key]
        return data

    return apply


@pytest.mark.parametrize(
    ("edit", "message"),
    [
        (lambda d: [d], r"manifest\.json must hold a JSON object, not list"),
        (_drop("schema"), r"manifest\.json has no 'schema' key"),
        (_edit("schema", "1"), r"key 'schema' must be an integer, got '1'"),
        (_edit("schema", True), r"key 'schema' must be an integer, got True"),
        (_edit("schema", 2), r"manifest\.json has schema 2, this rankgate \(.+\) reads schema 1"),
        (_drop("scores_sha256"), r"manifest\.json has no 'scores_sha256' key"),
        (_drop("note"), r"manifest\.json has no 'note' key"),
        (_edit("n", "40"), r"key 'n' must be int, got '40'"),
        (_edit("n", True), r"key 'n' must be int, got True"),
        (_edit("weighted", 0), r"key 'weighted' must be bool, got 0"),
        (_edit("note", 5), r"key 'note' must be str or null, got 5"),
        (_edit("extra", 1), r"manifest\.json has unknown key 'extra'"),
        (_edit("tool", "other"), r"key 'tool' must be 'rankgate'"),
        (_edit("created_utc", "yesterday"), r"key 'created_utc' must be like"),
        (_edit("fingerprint", "abc"), r"key 'fingerprint' must be 64 lowercase hex digits"),
        (_edit("scores_file", "../../elsewhere.parquet"), r"key 'scores_file' must be like scores-<16 hex>\.parquet"),
        (_edit("scores_file", "scores-0000000000000000.parquet"), r"key 'scores_file' does not match key 'scores_sha256'"),
        (_edit("n_positive", 11), r"counts are inconsistent \(n=40, n_positive=11, n_negative=30\)"),
    ],
)
def test_tampered_manifest_refused(tmp_path: Path, edit, message: str) -> None:
    adopt(make_table(n=40), tmp_path)
    write_manifest(tmp_path, edit(manifest_json(tmp_path)))
    with pytest.raises(BaselineError, match=message):
        load_baseline(tmp_path)


@pytest.mark.parametrize(
    ("raw", "message"),
    [
        (b'{"schema": 1,', r"manifest\.json is not valid JSON \(line 1 column 14: "),
        (b"\xff\xfe{}", r"manifest\.json is not UTF-8 text \(byte 0\)"),
        (b"", r"manifest\.json is not valid JSON"),
    ],
)
def test_unparsable_manifest_refused(tmp_path: Path, raw: bytes, message: str) -> None:
    adopt(make_table(), tmp_path)
    (tmp_path / MANIFEST_NAME).write_bytes(raw)
    with pytest.raises(BaselineError, match=message):
        load_baseline(tmp_path)


def test_errors_are_gate_errors_naming_the_directory(tmp_path: Path) -> None:
    adopt(make_table(), tmp_path / "prod")
    (tmp_path / "prod" / MANIFEST_NAME).write_text("[]", encoding="utf-8")
    with pytest.raises(GateError) as info:
        load_baseline(tmp_path / "prod")
    assert str(info.value).startswith(f"{tmp_path / 'prod'}: manifest.json")
    assert "\n" not in str(info.value)


def test_load_without_lock_file(tmp_path: Path) -> None:
    # A baseline copied without its .lock (e.g. checked out from version control) still loads.
    table = make_table()
    adopt(table, tmp_path)
    (tmp_path / ".lock").unlink()
    assert_same_table(load_baseline(tmp_path).table, table)


def test_manifest_from_json_round_trip(tmp_path: Path) -> None:
    manifest = adopt(make_table(), tmp_path, note="x")
    assert Manifest(**manifest.to_json()) == manifest


# --- failures and crashes during adopt -----------------------------------------------------------


def test_write_error_during_adopt_keeps_previous(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    old = make_table()
    adopt(old, tmp_path)
    real_replace = os.replace

    def failing_replace(src, dst):
        if Path(dst).name == MANIFEST_NAME:
            raise OSError(28, "No space left on device")
        return real_replace(src, dst)

    monkeypatch.setattr(bl.os, "replace", failing_replace)
    with pytest.raises(BaselineError, match=r"cannot write the baseline \(No space left on device\)"):
        adopt(ScoreTable(ids=old.ids, labels=old.labels, scores=-old.scores, weights=None), tmp_path)
    monkeypatch.undo()
    assert_same_table(load_baseline(tmp_path).table, old)
    assert not any(p.name.startswith(".tmp-") for p in tmp_path.iterdir())


ADOPT_SCRIPT = textwrap.dedent(
    """
    import sys
    import numpy as np
    from gate.baseline import adopt
    from gate.io import ScoreTable

    n = int(sys.argv[2])
    rng = np.random.default_rng(int(sys.argv[3]))
    labels = np.zeros(n, dtype=bool)
    labels[: n // 4] = True
    table = ScoreTable(
        ids=np.array([f"seg-{i:06d}" for i in range(n)], dtype=object),
        labels=labels,
        scores=rng.normal(size=n),
        weights=None,
        source="candidate.csv",
    )
    open(sys.argv[4], "w").close()  # tell the parent that adopt is about to run
    adopt(table, sys.argv[1], note="new")
    """
)


def run_adopt(directory: Path, *, n: int, seed: int, crash_at: str | None = None, ready: Path | None = None,
              wait: bool = True) -> subprocess.Popen:
    env = dict(os.environ)
    env.pop(bl._CRASH_ENV, None)
    if crash_at is not None:
        env[bl._CRASH_ENV] = crash_at
    ready = ready or directory.parent / "ready"
    with open(directory.parent / "adopt-stderr.txt", "wb") as stderr:
        proc = subprocess.Popen(
            [sys.executable, "-c", ADOPT_SCRIPT, str(directory), str(n), str(seed), str(ready)],
            env=env,
            stderr=stderr,
        )
    if wait:
        proc.wait(timeout=60)
    return proc


def child_stderr(directory: Path) -> str:
    return (directory.parent / "adopt-stderr.txt").read_text(errors="replace")


def old_table(n: int) -> ScoreTable:
    labels = np.zeros(n, dtype=np.bool_)
    labels[: n // 4] = True
    return ScoreTable(
        ids=np.array([f"seg-{i:06d}" for i in range(n)], dtype=object), labels=labels,
        scores=np.linspace(0.0, 1.0, n), weights=None, source="old.csv",
    )


@pytest.mark.parametrize("stage", CRASH_STAGES)
def test_interrupted_adopt_leaves_a_valid_baseline(tmp_path: Path, stage: str) -> None:
    # The child process SIGKILLs itself at the named stage, as a power cut or OOM kill would.
    base = tmp_path / "base"
    old = old_table(200)
    old_manifest = adopt(old, base, note="old")
    proc = run_adopt(base, n=200, seed=5, crash_at=stage)
    assert proc.returncode == -signal.SIGKILL, child_stderr(base)
    loaded = load_baseline(base)  # verifies hash and fingerprint
    if stage == "after-commit":
        assert loaded.manifest.note == "new"
        assert loaded.manifest.scores_file != old_manifest.scores_file
    else:
        assert loaded.manifest == old_manifest
        assert_same_table(loaded.table, old)
    # The next adopt clears what the killed one left behind.
    adopt(old, base, note="again")
    assert scores_files(base) == [old_manifest.scores_file]
    assert not any(p.name.startswith(".tmp-") for p in base.iterdir())


def test_interrupted_first_adopt_leaves_no_baseline(tmp_path: Path) -> None:
    base = tmp_path / "base"
    proc = run_adopt(base, n=50, seed=1, crash_at="after-manifest-temp")
    assert proc.returncode == -signal.SIGKILL, child_stderr(base)
    with pytest.raises(BaselineError, match="no manifest.json"):
        load_baseline(base)
    adopt(old_table(50), base)  # leftovers of our own are not "foreign" files
    load_baseline(base)


@pytest.mark.slow
def test_sigkill_at_random_moments(tmp_path: Path) -> None:
    # No injected stage: kill the child at a random moment while it writes a sizeable table.
    rng = random.Random(20240601)
    base = tmp_path / "base"
    old = old_table(200_000)
    old_manifest = adopt(old, base, note="old")
    outcomes = {"old": 0, "new": 0}
    for attempt in range(30):
        ready = tmp_path / f"ready-{attempt}"
        proc = run_adopt(base, n=200_000, seed=attempt, ready=ready, wait=False)
        while not ready.exists() and proc.poll() is None:
            time.sleep(0.001)
        time.sleep(rng.uniform(0.0, 0.4))
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=60)
        loaded = load_baseline(base)
        if loaded.manifest.note == "old":
            assert loaded.manifest == old_manifest
            outcomes["old"] += 1
        else:
            assert loaded.manifest.note == "new"
            outcomes["new"] += 1
            adopt(old, base, note="old", now=datetime.strptime(old_manifest.created_utc, "%Y-%m-%dT%H:%M:%SZ").replace(tzinfo=UTC))
            assert load_baseline(base).manifest == old_manifest
    assert outcomes["old"] > 0  # some kills must land before the commit, or the test proves nothing


def test_concurrent_adopt_waits_for_the_lock(tmp_path: Path) -> None:
    base = tmp_path / "base"
    adopt(old_table(100), base, note="old")
    fd = os.open(base / ".lock", os.O_RDWR)
    fcntl.flock(fd, fcntl.LOCK_EX)  # as another adopt in progress would hold it
    try:
        ready = tmp_path / "ready"
        proc = run_adopt(base, n=100, seed=2, ready=ready, wait=False)
        deadline = time.monotonic() + 30
        while not ready.exists() and time.monotonic() < deadline:
            time.sleep(0.01)
        time.sleep(0.5)
        assert proc.poll() is None  # still blocked on the lock
        assert manifest_json(base)["note"] == "old"
    finally:
        fcntl.flock(fd, fcntl.LOCK_UN)
        os.close(fd)
    assert proc.wait(timeout=60) == 0, child_stderr(base)
    assert load_baseline(base).manifest.note == "new"


def test_load_waits_while_adopt_holds_the_lock(tmp_path: Path) -> None:
    adopt(make_table(), tmp_path)
    fd = os.open(tmp_path / ".lock", os.O_RDWR)
    fcntl.flock(fd, fcntl.LOCK_EX)
    done = threading.Event()

    def load() -> None:
        load_baseline(tmp_path)
        done.set()

    thread = threading.Thread(target=load)
    thread.start()
    try:
        assert not done.wait(0.3)
    finally:
        fcntl.flock(fd, fcntl.LOCK_UN)
        os.close(fd)
    thread.join(timeout=30)
    assert done.is_set()


def test_note_and_source_must_be_storable_text(tmp_path: Path) -> None:
    # A command-line argument that is not valid UTF-8 reaches Python as lone surrogates.
    with pytest.raises(BaselineError, match=r"the note is not valid UTF-8 text"):
        adopt(make_table(), tmp_path, note="bad \udcff byte")
    table = make_table(source="/ci/cand-\udcff.csv")
    manifest = adopt(table, tmp_path, note="ünïcode ok")
    assert manifest.source == "cand-\\udcff.csv"
    assert load_baseline(tmp_path).manifest.note == "ünïcode ok"
