"""The run history (gate/history.py): round trip, windows, labels, bad files, schema versions,
concurrent writers and interrupted writes."""

from __future__ import annotations

import math
import os
import signal
import sqlite3
import subprocess
import sys
import textwrap
from datetime import datetime, timedelta, timezone
from pathlib import Path

import pytest

from gate import history
from gate.errors import HistoryError
from gate.history import (
    APPLICATION_ID,
    count_runs,
    default_run_label,
    load_runs,
    parse_time,
    record_run,
    schema_version,
)
from gate.results import Bound, CheckResult, Decision, Result, SliceKey
from gate.stats.interval import Interval

T0 = datetime(2024, 6, 1, 2, 0, tzinfo=timezone.utc)


def make_result(value: float = 0.9, *, verdict: str = "pass", fingerprint: str = "f" * 64) -> Result:
    """A result with the fields a real evaluation fills: slices, a baseline, both bound kinds."""
    iv = Interval(value - 0.02, value + 0.02, 0.95, "delong")
    div = Interval(-0.004, 0.012, 0.95, "delong")
    overall = CheckResult(
        name="auc holds",
        metric="roc_auc",
        params={},
        slice=None,
        outcome="pass",
        passed=True,
        value=value,
        interval=iv,
        n=5000,
        n_pos=100,
        n_neg=4900,
        baseline_value=value - 0.004,
        delta=0.004,
        delta_interval=div,
        floor=Decision(Bound("at_least", 0.8), "pass", value, iv, p_value=1e-9, adjusted_p_value=3e-9),
        margin=Decision(Bound("max_drop", 0.005), "pass", 0.004, div, p_value=0.01),
        method="delong",
        reason="interval above 0.8",
    )
    sliced = CheckResult(
        name="recall at 1% FPR",
        metric="recall_at_fpr",
        params={"fpr": 0.01},
        slice=SliceKey(column="district", value="north | <b>east</b>"),
        outcome="inconclusive",
        passed=True,
        value=0.61,
        interval=Interval(0.48, 0.73, 0.95, "wilson"),
        n=800,
        n_pos=31,
        n_neg=769,
        floor=Decision(Bound("at_least", 0.6), "inconclusive", 0.61, Interval(0.48, 0.73, 0.95, "wilson")),
        method="wilson",
        threshold=0.8125,
        warnings=("evaluation set too small to be sure",),
    )
    skipped = CheckResult(
        name="recall at 1% FPR",
        metric="recall_at_fpr",
        params={"fpr": 0.01},
        slice=SliceKey(column="district", value="west"),
        outcome="skipped",
        passed=True,
        value=None,
        interval=None,
        n=90,
        n_pos=3,
        n_neg=87,
        threshold=math.inf,  # "flag nothing"
        reason="3 positives < min_positives 20",
    )
    return Result(
        verdict=verdict,  # type: ignore[arg-type]
        checks=(overall, sliced, skipped),
        confidence=0.95,
        resamples=2000,
        seed=7,
        on_inconclusive="estimate",
        adjust="holm",
        policy_source="policies/leaks.toml",
        policy_hash="a" * 64,
        candidate_source="scores/candidate.parquet",
        baseline_source="baseline/",
        fingerprint=fingerprint,
        n=5000,
        n_pos=100,
        n_neg=4900,
        warnings=("one warning",),
        methods="DeLong intervals at 95%",
        notes={"baseline": "adopted 2024-05-01"},
    )


# --- round trip and windows ---------------------------------------------------------------------


def test_round_trip_rebuilds_the_result_exactly(tmp_path: Path) -> None:
    db = tmp_path / "history.sqlite"
    result = make_result()
    run_id = record_run(db, result, label="abc123", run_time=T0)
    (stored,) = load_runs(db)
    assert stored.run_id == run_id
    assert stored.label == "abc123"
    assert stored.run_time == T0 and stored.run_time.tzinfo is not None
    assert stored.result == result
    assert stored.result.checks[2].threshold == math.inf


def test_run_time_is_stored_in_utc(tmp_path: Path) -> None:
    db = tmp_path / "h.sqlite"
    local = datetime(2024, 6, 1, 4, 30, tzinfo=timezone(timedelta(hours=2)))
    record_run(db, make_result(), label="x", run_time=local)
    (stored,) = load_runs(db)
    assert stored.run_time == local
    assert stored.run_time.utcoffset() == timedelta(0)
    assert stored.run_time.hour == 2


def test_naive_run_time_is_refused(tmp_path: Path) -> None:
    with pytest.raises(HistoryError, match="run_time must be timezone-aware"):
        record_run(tmp_path / "h.sqlite", make_result(), label="x", run_time=datetime(2024, 6, 1))
    assert not (tmp_path / "h.sqlite").exists()


def test_runs_come_back_in_time_order_and_windows_select(tmp_path: Path) -> None:
    db = tmp_path / "h.sqlite"
    # written out of time order on purpose
    for day in (3, 0, 4, 1, 2):
        record_run(db, make_result(0.9 + day / 1000), label=f"d{day}", run_time=T0 + timedelta(days=day))
    assert [r.label for r in load_runs(db)] == ["d0", "d1", "d2", "d3", "d4"]
    assert [r.label for r in load_runs(db, last=2)] == ["d3", "d4"]
    assert [r.label for r in load_runs(db, since=T0 + timedelta(days=2))] == ["d2", "d3", "d4"]
    assert [r.label for r in load_runs(db, since=T0 + timedelta(days=1), last=1)] == ["d4"]
    assert load_runs(db, since=T0 + timedelta(days=9)) == []
    assert count_runs(db) == 5


def test_equal_run_times_keep_insertion_order(tmp_path: Path) -> None:
    db = tmp_path / "h.sqlite"
    ids = [record_run(db, make_result(), label=str(i), run_time=T0) for i in range(3)]
    assert [r.run_id for r in load_runs(db)] == ids
    assert [r.run_id for r in load_runs(db, last=2)] == ids[1:]


@pytest.mark.parametrize("bad", [0, -1, 1.5, True])
def test_bad_last_is_refused(tmp_path: Path, bad: object) -> None:
    db = tmp_path / "h.sqlite"
    record_run(db, make_result(), label="x", run_time=T0)
    with pytest.raises(HistoryError, match="--last must be a whole number >= 1"):
        load_runs(db, last=bad)  # type: ignore[arg-type]


def test_naive_since_is_refused(tmp_path: Path) -> None:
    db = tmp_path / "h.sqlite"
    record_run(db, make_result(), label="x", run_time=T0)
    with pytest.raises(HistoryError, match="since must be timezone-aware"):
        load_runs(db, since=datetime(2024, 6, 1))


def test_nan_is_refused_and_nothing_is_stored(tmp_path: Path) -> None:
    db = tmp_path / "h.sqlite"
    record_run(db, make_result(), label="ok", run_time=T0)
    good = make_result()
    bad_check = CheckResult(**{**good.checks[0].__dict__, "value": math.nan})
    bad = Result(**{**good.__dict__, "checks": (bad_check,)})
    with pytest.raises(HistoryError, match="check 'auc holds' value is NaN"):
        record_run(db, bad, label="bad", run_time=T0)
    assert [r.label for r in load_runs(db)] == ["ok"]


# --- labels ---------------------------------------------------------------------------------


def test_default_label_reads_the_ci_commit_variables() -> None:
    assert default_run_label({}) is None
    assert default_run_label({"GITHUB_SHA": " 0123abc \n"}) == "0123abc"
    assert default_run_label({"CI_COMMIT_SHA": "gl1"}) == "gl1"
    assert default_run_label({"BUILD_SOURCEVERSION": "az1"}) == "az1"
    assert default_run_label({"GIT_COMMIT": "jk1"}) == "jk1"
    # empty values are skipped; the first service in the list wins
    assert default_run_label({"GITHUB_SHA": "", "GIT_COMMIT": "jk1"}) == "jk1"
    assert default_run_label({"GIT_COMMIT": "jk1", "GITHUB_SHA": "gh1"}) == "gh1"


def test_record_run_uses_the_ci_commit_when_no_label(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    for name in history.CI_COMMIT_VARIABLES:
        monkeypatch.delenv(name, raising=False)
    db = tmp_path / "h.sqlite"
    record_run(db, make_result(), run_time=T0)
    monkeypatch.setenv("CI_COMMIT_SHA", "feedbeef")
    record_run(db, make_result(), run_time=T0)
    record_run(db, make_result(), label="nightly-7", run_time=T0)
    assert [r.label for r in load_runs(db)] == [None, "feedbeef", "nightly-7"]


def test_default_run_time_is_now_in_utc(tmp_path: Path) -> None:
    db = tmp_path / "h.sqlite"
    before = datetime.now(timezone.utc)
    record_run(db, make_result(), label="x")
    after = datetime.now(timezone.utc)
    (stored,) = load_runs(db)
    assert before - timedelta(microseconds=1) <= stored.run_time <= after


# --- parse_time -------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("2024-06-01", datetime(2024, 6, 1, tzinfo=timezone.utc)),
        ("2024-06-01T02:30", datetime(2024, 6, 1, 2, 30, tzinfo=timezone.utc)),
        ("2024-06-01T02:30Z", datetime(2024, 6, 1, 2, 30, tzinfo=timezone.utc)),
        ("2024-06-01T04:30+02:00", datetime(2024, 6, 1, 2, 30, tzinfo=timezone.utc)),
    ],
)
def test_parse_time(text: str, expected: datetime) -> None:
    parsed = parse_time(text)
    assert parsed == expected and parsed.utcoffset() == timedelta(0)


def test_parse_time_names_the_option_and_text() -> None:
    with pytest.raises(HistoryError, match=r"--since: 'last tuesday' is not an ISO 8601 date"):
        parse_time("last tuesday")


# --- bad files ---------------------------------------------------------------------------------


def test_missing_history_is_an_error_for_reading(tmp_path: Path) -> None:
    with pytest.raises(HistoryError, match=r"history .*nope\.sqlite: no such file"):
        load_runs(tmp_path / "nope.sqlite")
    assert not (tmp_path / "nope.sqlite").exists()


def test_missing_directory_is_an_error_for_writing(tmp_path: Path) -> None:
    with pytest.raises(HistoryError, match=r"directory .*absent does not exist"):
        record_run(tmp_path / "absent" / "h.sqlite", make_result(), label="x", run_time=T0)


def test_directory_is_not_a_history(tmp_path: Path) -> None:
    with pytest.raises(HistoryError, match="is a directory"):
        record_run(tmp_path, make_result(), label="x", run_time=T0)


@pytest.mark.parametrize("content", [b"id,label,score\n1,0,0.5\n", b"SQLite", b"\x00" * 4096])
def test_non_sqlite_file_is_refused_and_left_untouched(tmp_path: Path, content: bytes) -> None:
    path = tmp_path / "scores.csv"
    path.write_bytes(content)
    with pytest.raises(HistoryError, match=r"history .*scores\.csv: not an SQLite database"):
        record_run(path, make_result(), label="x", run_time=T0)
    with pytest.raises(HistoryError, match=r"scores\.csv"):
        load_runs(path)
    assert path.read_bytes() == content
    assert sorted(p.name for p in tmp_path.iterdir()) == ["scores.csv"]


def test_corrupt_sqlite_file_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "h.sqlite"
    path.write_bytes(b"SQLite format 3\x00" + os.urandom(8000))
    with pytest.raises(HistoryError, match=r"history .*h\.sqlite"):
        load_runs(path)


def test_another_programs_database_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "other.db"
    conn = sqlite3.connect(path)
    conn.execute("CREATE TABLE inventory (item TEXT)")
    conn.commit()
    conn.close()
    with pytest.raises(HistoryError, match=r"other\.db: an SQLite database with 1 table\(s\) but no rankgate"):
        record_run(path, make_result(), label="x", run_time=T0)
    conn = sqlite3.connect(path)
    conn.execute("PRAGMA application_id = 1234")
    conn.commit()
    conn.close()
    with pytest.raises(HistoryError, match="application id 0x4d2"):
        load_runs(path)


def test_newer_schema_is_refused(tmp_path: Path) -> None:
    db = tmp_path / "h.sqlite"
    record_run(db, make_result(), label="x", run_time=T0)
    conn = sqlite3.connect(db)
    conn.execute(f"PRAGMA user_version = {schema_version() + 1}")
    conn.commit()
    conn.close()
    with pytest.raises(HistoryError, match=rf"schema version {schema_version() + 1} is newer"):
        load_runs(db)
    with pytest.raises(HistoryError, match="newer"):
        record_run(db, make_result(), label="y", run_time=T0)


# --- schema versions and migrations ---------------------------------------------------------


def test_new_history_is_marked_and_in_wal_mode(tmp_path: Path) -> None:
    db = tmp_path / "h.sqlite"
    record_run(db, make_result(), label="x", run_time=T0)
    conn = sqlite3.connect(db)
    assert conn.execute("PRAGMA user_version").fetchone()[0] == schema_version() == 1
    assert conn.execute("PRAGMA application_id").fetchone()[0] == APPLICATION_ID
    assert conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    conn.close()


def test_empty_file_is_version_zero_and_is_migrated_on_first_write(tmp_path: Path) -> None:
    db = tmp_path / "h.sqlite"
    db.write_bytes(b"")  # e.g. created by `touch`
    assert load_runs(db) == []
    assert count_runs(db) == 0
    assert db.read_bytes() == b""  # reading does not write
    record_run(db, make_result(), label="x", run_time=T0)
    assert [r.label for r in load_runs(db)] == ["x"]


def test_version_zero_sqlite_file_without_tables_is_migrated(tmp_path: Path) -> None:
    db = tmp_path / "h.sqlite"
    conn = sqlite3.connect(db)
    conn.execute("PRAGMA page_size = 4096")
    conn.execute("VACUUM")  # writes a valid, empty database file at version 0
    conn.close()
    assert db.stat().st_size > 0
    record_run(db, make_result(), label="x", run_time=T0)
    assert count_runs(db) == 1


V2_STEP = (
    "ALTER TABLE run ADD COLUMN host TEXT NOT NULL DEFAULT ''",
    "UPDATE run SET host = 'migrated'",
)


def test_v1_history_is_migrated_by_a_later_step(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    db = tmp_path / "h.sqlite"
    record_run(db, make_result(0.91), label="old", run_time=T0)
    monkeypatch.setattr(history, "MIGRATIONS", [*history.MIGRATIONS, V2_STEP])
    assert history.schema_version() == 2
    # a read opens the v1 file with the v2 code: migrated in place, the old run intact
    (old,) = load_runs(db)
    assert old.label == "old" and old.result == make_result(0.91)
    record_run(db, make_result(0.92), label="new", run_time=T0 + timedelta(days=1))
    conn = sqlite3.connect(db)
    assert conn.execute("PRAGMA user_version").fetchone()[0] == 2
    assert conn.execute("SELECT label, host FROM run ORDER BY run_id").fetchall() == [
        ("old", "migrated"),
        ("new", ""),
    ]
    conn.close()


def test_failing_migration_leaves_the_history_as_it_was(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    db = tmp_path / "h.sqlite"
    record_run(db, make_result(), label="old", run_time=T0)
    broken = ("ALTER TABLE run ADD COLUMN host TEXT", "UPDATE no_such_table SET x = 1")
    monkeypatch.setattr(history, "MIGRATIONS", [*history.MIGRATIONS, broken])
    with pytest.raises(HistoryError, match="no such table"):
        load_runs(db)
    conn = sqlite3.connect(db)
    assert conn.execute("PRAGMA user_version").fetchone()[0] == 1
    columns = [row[1] for row in conn.execute("PRAGMA table_info(run)")]
    conn.close()
    assert "host" not in columns  # the first statement of the step was rolled back too
    monkeypatch.setattr(history, "MIGRATIONS", history.MIGRATIONS[:1])
    assert [r.label for r in load_runs(db)] == ["old"]


# --- interrupted writes and concurrent writers -------------------------------------------------


def test_exception_inside_the_transaction_stores_no_partial_run(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    db = tmp_path / "h.sqlite"
    record_run(db, make_result(), label="before", run_time=T0)
    real = history._check_rows
    calls = {"n": 0}

    def failing(run_id: int, position: int, check: CheckResult):  # type: ignore[no-untyped-def]
        calls["n"] += 1
        if calls["n"] == 2:  # the run row and the first check are already inserted
            raise KeyboardInterrupt
        return real(run_id, position, check)

    monkeypatch.setattr(history, "_check_rows", failing)
    with pytest.raises(KeyboardInterrupt):
        record_run(db, make_result(), label="interrupted", run_time=T0)
    monkeypatch.setattr(history, "_check_rows", real)
    conn = sqlite3.connect(db)
    assert conn.execute("SELECT count(*) FROM run").fetchone()[0] == 1
    assert conn.execute("SELECT count(*) FROM check_result").fetchone()[0] == 3
    assert conn.execute("SELECT count(*) FROM decision").fetchone()[0] == 3
    conn.close()
    record_run(db, make_result(), label="after", run_time=T0)
    assert [r.label for r in load_runs(db)] == ["before", "after"]


# The writer for the subprocess tests: a result built inline (the subprocess cannot import tests/).
WRITER = textwrap.dedent(
    """
    import sys, time
    from datetime import datetime, timezone
    from gate import history
    from gate.results import Bound, CheckResult, Decision, Result, SliceKey
    from gate.stats.interval import Interval

    def result(i):
        checks = []
        for j, district in enumerate(["north", "south", "east"]):
            iv = Interval(0.8, 0.9, 0.95, "wilson")
            checks.append(CheckResult(
                name="recall", metric="recall_at_fpr", params={"fpr": 0.01},
                slice=SliceKey("district", district), outcome="pass", passed=True,
                value=0.85 + i * 1e-6, interval=iv, n=100, n_pos=40, n_neg=60, method="wilson",
                floor=Decision(Bound("at_least", 0.7), "pass", 0.85, iv)))
        return Result(verdict="pass", checks=tuple(checks), confidence=0.95, resamples=0, seed=0,
                      on_inconclusive="estimate", adjust="none", policy_source="p.toml",
                      policy_hash="a" * 64, candidate_source="c.csv", baseline_source=None,
                      fingerprint="f" * 64, n=300, n_pos=120, n_neg=180)

    path, tag, count, mode = sys.argv[1], sys.argv[2], int(sys.argv[3]), sys.argv[4]
    if mode == "append":
        go = path + ".go"  # start together, so that the two writers overlap
        print("ready", flush=True)
        deadline = time.monotonic() + 60
        while not __import__("os").path.exists(go) and time.monotonic() < deadline:
            time.sleep(0.005)
        for i in range(count):
            history.record_run(path, result(i), label=f"{tag}-{i}")
    else:  # hang inside the transaction of one run, after the run row and its checks went in
        conn, _ = history._open(path, create=True)
        conn.execute("BEGIN IMMEDIATE")
        history._insert_run(conn, result(0), label="killed", run_time=datetime.now(timezone.utc))
        print("inside", flush=True)
        time.sleep(60)
    """
)


def _writer(tmp_path: Path, *args: str) -> subprocess.Popen[str]:
    script = tmp_path / "writer.py"
    if not script.exists():
        script.write_text(WRITER)
    return subprocess.Popen(
        [sys.executable, str(script), *args],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )


def test_two_concurrent_writers_lose_no_run(tmp_path: Path) -> None:
    db = tmp_path / "shared.sqlite"  # not created yet: both writers race to create it too
    # 250 runs each; both writers are started and held at a barrier, so they contend for the
    # write lock from the first run on (SQLite's busy handler is not fair: commits may still come
    # in long stretches from one writer, which is fine; what matters is that none is lost).
    count = 250
    writers = [_writer(tmp_path, str(db), tag, str(count), "append") for tag in ("A", "B")]
    for proc in writers:
        assert proc.stdout is not None and proc.stdout.readline().strip() == "ready"
    Path(str(db) + ".go").touch()
    for proc in writers:
        _out, err = proc.communicate(timeout=120)
        assert proc.returncode == 0, err
    runs = load_runs(db)
    labels = {run.label for run in runs}
    assert len(runs) == 2 * count
    assert labels == {f"{tag}-{i}" for tag in ("A", "B") for i in range(count)}
    assert all(len(run.result.checks) == 3 for run in runs)
    assert all(run.result.checks[0].floor is not None for run in runs)
    assert len({run.run_id for run in runs}) == 2 * count


@pytest.mark.skipif(not hasattr(signal, "SIGKILL"), reason="needs SIGKILL")
def test_writer_killed_mid_transaction_leaves_no_partial_run(tmp_path: Path) -> None:
    db = tmp_path / "h.sqlite"
    record_run(db, make_result(), label="before", run_time=T0)
    proc = _writer(tmp_path, str(db), "K", "1", "hang")
    try:
        assert proc.stdout is not None
        line = proc.stdout.readline()
        assert line.strip() == "inside", proc.stderr.read() if proc.stderr else ""
    finally:
        proc.kill()  # SIGKILL: no Python cleanup, no rollback by the writer
        proc.communicate(timeout=30)
    assert proc.returncode == -signal.SIGKILL
    assert [r.label for r in load_runs(db)] == ["before"]
    record_run(db, make_result(), label="after", run_time=T0)  # the lock died with the writer
    conn = sqlite3.connect(db)
    assert conn.execute("SELECT count(*) FROM check_result").fetchone()[0] == 6
    conn.close()
    assert [r.label for r in load_runs(db)] == ["before", "after"]
