"""The run history: every ``rankgate check --history PATH`` run appended to one SQLite file.

One run is one transaction (``BEGIN IMMEDIATE`` ... ``COMMIT``): a run is stored whole or not at
all, whether the writer raises, is killed or loses power. The database runs in WAL mode with a
busy timeout, so two nightly jobs writing at once queue behind each other instead of failing;
readers never block writers. (The project's "temp file + fsync + os.replace" rule for user files
is met here by SQLite's own journal: a transaction either commits whole or rolls back.)

Schema versions are kept in ``PRAGMA user_version``; ``PRAGMA application_id`` marks the file as
a rankgate history so that another program's SQLite file is refused rather than written into.
Opening an older history applies the missing steps of :data:`MIGRATIONS` in one transaction; a
history written by a newer rankgate (a version this code does not know) is refused.

What is stored per run: the run time (UTC), a run label (``--label``, else the commit id found in
the CI environment, see :func:`default_run_label`), the verdict, the policy hash and source, the
eval-set fingerprint, confidence and provenance; per check and slice: value and interval (with its
confidence and method), n / n_pos / n_neg, baseline value, difference and its interval, outcome,
and each decision (the bound, its kind, the interval compared, p-values). That is enough to
rebuild the :class:`gate.results.Result` exactly (:func:`load_runs`) and to standardise a value by
its standard error in the trend (:mod:`gate.watch`).

Caveat: WAL needs shared memory between the writers, so the history must live on a local file
system (not a network share) when several jobs write to it at once.
"""

from __future__ import annotations

import json
import math
import os
import sqlite3
from collections.abc import Iterator, Mapping, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import datetime, timezone
from pathlib import Path
from typing import Any

from gate.errors import HistoryError
from gate.results import Bound, CheckResult, Decision, Result, SliceKey
from gate.stats.interval import Interval

#: ``PRAGMA application_id`` of a rankgate history ("rkgt" in ASCII).
APPLICATION_ID = 0x726B6774

#: How long a writer waits for another writer's transaction before giving up (seconds).
BUSY_TIMEOUT_S = 60.0

_SQLITE_HEADER = b"SQLite format 3\x00"
_TIME_FORMAT = "%Y-%m-%dT%H:%M:%S.%fZ"  # fixed width, so text order is time order

# Environment variables of CI services that hold the commit id being built, in the order tried.
CI_COMMIT_VARIABLES: tuple[str, ...] = (
    "GITHUB_SHA",  # GitHub Actions
    "CI_COMMIT_SHA",  # GitLab CI
    "BUILD_SOURCEVERSION",  # Azure Pipelines
    "GIT_COMMIT",  # Jenkins git plugin
    "CIRCLE_SHA1",  # CircleCI
    "BITBUCKET_COMMIT",  # Bitbucket Pipelines
    "BUILDKITE_COMMIT",  # Buildkite
    "TRAVIS_COMMIT",  # Travis CI
    "DRONE_COMMIT_SHA",  # Drone
)

# --- schema -------------------------------------------------------------------------------------

_V1: tuple[str, ...] = (
    """
    CREATE TABLE run (
        run_id           INTEGER PRIMARY KEY AUTOINCREMENT,
        run_time         TEXT    NOT NULL,  -- UTC, 'YYYY-MM-DDTHH:MM:SS.ffffffZ'
        label            TEXT,
        verdict          TEXT    NOT NULL CHECK (verdict IN ('pass', 'fail')),
        confidence       REAL    NOT NULL,
        resamples        INTEGER NOT NULL,
        seed             INTEGER NOT NULL,
        on_inconclusive  TEXT    NOT NULL,
        adjust           TEXT    NOT NULL,
        policy_source    TEXT    NOT NULL,
        policy_hash      TEXT    NOT NULL,
        candidate_source TEXT    NOT NULL,
        baseline_source  TEXT,
        fingerprint      TEXT    NOT NULL,
        n                INTEGER NOT NULL,
        n_pos            INTEGER NOT NULL,
        n_neg            INTEGER NOT NULL,
        methods          TEXT    NOT NULL,
        warnings         TEXT    NOT NULL,  -- JSON list of strings
        notes            TEXT    NOT NULL   -- JSON object of strings
    )
    """,
    "CREATE INDEX run_by_time ON run (run_time, run_id)",
    """
    CREATE TABLE check_result (
        run_id              INTEGER NOT NULL REFERENCES run (run_id) ON DELETE CASCADE,
        position            INTEGER NOT NULL,  -- order of the check in the run
        name                TEXT    NOT NULL,
        metric              TEXT    NOT NULL,
        params              TEXT    NOT NULL,  -- JSON object, sorted keys
        slice_column        TEXT,
        slice_value         TEXT,
        outcome             TEXT    NOT NULL,
        passed              INTEGER NOT NULL,
        value               REAL,
        interval_low        REAL,
        interval_high       REAL,
        interval_confidence REAL,
        interval_method     TEXT,
        n                   INTEGER NOT NULL,
        n_pos               INTEGER NOT NULL,
        n_neg               INTEGER NOT NULL,
        baseline_value      REAL,
        delta               REAL,
        delta_low           REAL,
        delta_high          REAL,
        delta_confidence    REAL,
        delta_method        TEXT,
        method              TEXT    NOT NULL,
        threshold           REAL,
        reason              TEXT    NOT NULL,
        warnings            TEXT    NOT NULL,  -- JSON list of strings
        PRIMARY KEY (run_id, position)
    )
    """,
    """
    CREATE TABLE decision (
        run_id              INTEGER NOT NULL,
        position            INTEGER NOT NULL,
        role                TEXT    NOT NULL CHECK (role IN ('floor', 'margin')),
        bound_kind          TEXT    NOT NULL,
        bound_value         REAL    NOT NULL,
        outcome             TEXT    NOT NULL,
        estimate            REAL    NOT NULL,
        interval_low        REAL    NOT NULL,
        interval_high       REAL    NOT NULL,
        interval_confidence REAL    NOT NULL,
        interval_method     TEXT    NOT NULL,
        p_value             REAL,
        adjusted_p_value    REAL,
        PRIMARY KEY (run_id, position, role),
        FOREIGN KEY (run_id, position) REFERENCES check_result (run_id, position) ON DELETE CASCADE
    )
    """,
)

#: Schema migrations: ``MIGRATIONS[i]`` takes a history from version ``i`` to version ``i + 1``.
#: Version 0 is an empty SQLite file (or a file created by an interrupted first run). Append a step
#: when the schema changes; never edit a released step.
MIGRATIONS: list[tuple[str, ...]] = [_V1]


def schema_version() -> int:
    """The schema version this code writes (the number of migration steps)."""
    return len(MIGRATIONS)


# --- stored runs ----------------------------------------------------------------------------------


@dataclass(frozen=True)
class StoredRun:
    """One run read back from the history: its id, UTC time, label and the full result."""

    run_id: int
    run_time: datetime
    label: str | None
    result: Result


def default_run_label(environ: Mapping[str, str]) -> str | None:
    """The commit id of the CI build, from the first non-empty variable of :data:`CI_COMMIT_VARIABLES`.

    Returns None outside CI (no such variable set), so a run without ``--label`` is unlabelled.
    """
    for name in CI_COMMIT_VARIABLES:
        value = environ.get(name, "").strip()
        if value:
            return value
    return None


def parse_time(text: str, *, what: str = "--since") -> datetime:
    """Parse an ISO 8601 date or date-time given on the command line into an aware UTC datetime.

    A date alone means midnight; a time without an offset is read as UTC (CI runners keep UTC,
    and the history stores UTC); an explicit offset such as ``+02:00`` or ``Z`` is honoured.
    Raises :class:`HistoryError` naming ``what`` and the text when it is not a date.
    """
    raw = text.strip()
    try:
        moment = datetime.fromisoformat(raw[:-1] + "+00:00" if raw.endswith(("Z", "z")) else raw)
    except ValueError:
        raise HistoryError(
            f"{what}: {text!r} is not an ISO 8601 date or date-time (e.g. 2024-06-01 or 2024-06-01T02:00Z)"
        ) from None
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=timezone.utc)
    return moment.astimezone(timezone.utc)


def _time_text(moment: datetime, what: str) -> str:
    if not isinstance(moment, datetime):
        raise HistoryError(f"{what} must be a datetime, got {type(moment).__name__}")
    if moment.tzinfo is None or moment.utcoffset() is None:
        raise HistoryError(f"{what} must be timezone-aware, got naive {moment.isoformat()}")
    return moment.astimezone(timezone.utc).strftime(_TIME_FORMAT)


def _parse_stored_time(text: str) -> datetime:
    return datetime.strptime(text, _TIME_FORMAT).replace(tzinfo=timezone.utc)


# --- connection, schema check and migrations --------------------------------------------------


def _check_header(path: Path) -> None:
    """Refuse a file that is not SQLite before sqlite3 gets to touch it."""
    try:
        with path.open("rb") as handle:
            head = handle.read(len(_SQLITE_HEADER))
    except OSError as exc:
        raise HistoryError(f"history {path}: cannot read ({exc.strerror})") from None
    if head and head != _SQLITE_HEADER:  # an empty file is a history not yet written
        raise HistoryError(f"history {path}: not an SQLite database (not a rankgate history file)")


def _open(path: str | os.PathLike[str], *, create: bool) -> tuple[sqlite3.Connection, Path]:
    target = Path(path)
    if target.is_dir():
        raise HistoryError(f"history {target}: is a directory, not a history file")
    if target.exists():
        _check_header(target)
    elif not create:
        raise HistoryError(f"history {target}: no such file")
    elif not target.parent.is_dir():
        raise HistoryError(f"history {target}: directory {target.parent} does not exist")
    try:
        # isolation_level=None: no implicit transactions; every write below is an explicit
        # BEGIN IMMEDIATE ... COMMIT, which is what makes a run all-or-nothing.
        conn = sqlite3.connect(str(target), timeout=BUSY_TIMEOUT_S, isolation_level=None)
    except sqlite3.Error as exc:
        raise HistoryError(f"history {target}: cannot open ({exc})") from None
    try:
        conn.execute(f"PRAGMA busy_timeout = {int(BUSY_TIMEOUT_S * 1000)}")
        conn.execute("PRAGMA foreign_keys = ON")
        # FULL: the commit of a run is on disk when record_run returns (WAL syncs once per commit).
        conn.execute("PRAGMA synchronous = FULL")
        _prepare(conn, target, create=create)
    except HistoryError:
        conn.close()
        raise
    except sqlite3.OperationalError as exc:  # locked past the timeout, read-only, disk full ...
        conn.close()
        raise HistoryError(f"history {target}: cannot use the database ({exc})") from None
    except sqlite3.DatabaseError as exc:  # not a database, or a damaged one
        conn.close()
        raise HistoryError(f"history {target}: not a readable SQLite database ({exc})") from None
    return conn, target


def _pragma(conn: sqlite3.Connection, name: str) -> int:
    return int(conn.execute(f"PRAGMA {name}").fetchone()[0])


def _check_identity(conn: sqlite3.Connection, path: Path) -> int:
    """Return the file's schema version after checking it is a history this code can read."""
    version = _pragma(conn, "user_version")
    app_id = _pragma(conn, "application_id")
    if app_id not in (0, APPLICATION_ID):
        raise HistoryError(
            f"history {path}: an SQLite database of another program (application id {app_id:#x}), "
            "not a rankgate history"
        )
    if version > schema_version():
        raise HistoryError(
            f"history {path}: schema version {version} is newer than this rankgate understands "
            f"(up to {schema_version()}); upgrade rankgate to read it"
        )
    if version == 0:
        tables = conn.execute("SELECT count(*) FROM sqlite_master WHERE type = 'table'").fetchone()[0]
        if tables and app_id != APPLICATION_ID:
            raise HistoryError(
                f"history {path}: an SQLite database with {tables} table(s) but no rankgate schema "
                "version; not a rankgate history"
            )
    return version


def _set_wal(conn: sqlite3.Connection, path: Path) -> None:
    mode = str(conn.execute("PRAGMA journal_mode = WAL").fetchone()[0]).lower()
    if mode != "wal":
        raise HistoryError(f"history {path}: cannot switch to WAL journal mode (got {mode!r})")


def _prepare(conn: sqlite3.Connection, path: Path, *, create: bool) -> None:
    """Check the schema version and apply missing migrations (in one transaction)."""
    version = _check_identity(conn, path)
    if version == schema_version():
        if create:
            _set_wal(conn, path)
        return
    if not create and version == 0:
        return  # an empty file read before any run was recorded: nothing to migrate for a read
    _set_wal(conn, path)  # persistent; must be set outside a transaction
    with _transaction(conn):
        # Re-read under the write lock: another writer may have migrated in the meantime.
        version = _check_identity(conn, path)
        for step in range(version, schema_version()):
            for statement in MIGRATIONS[step]:
                conn.execute(statement)
        if version < schema_version():
            conn.execute(f"PRAGMA application_id = {APPLICATION_ID}")
            conn.execute(f"PRAGMA user_version = {schema_version()}")


@contextmanager
def _transaction(conn: sqlite3.Connection) -> Iterator[None]:
    """``BEGIN IMMEDIATE`` (take the write lock now, waiting up to the busy timeout) ... ``COMMIT``.

    Any exception, including KeyboardInterrupt, rolls the whole transaction back.
    """
    conn.execute("BEGIN IMMEDIATE")
    try:
        yield
    except BaseException:
        conn.execute("ROLLBACK")
        raise
    conn.execute("COMMIT")


@contextmanager
def _connection(path: str | os.PathLike[str], *, create: bool) -> Iterator[tuple[sqlite3.Connection, Path]]:
    conn, target = _open(path, create=create)
    try:
        yield conn, target
    except sqlite3.DatabaseError as exc:
        raise HistoryError(f"history {target}: database error ({exc})") from None
    finally:
        conn.close()


# --- writing ----------------------------------------------------------------------------------


def _real(value: float | None, what: str) -> float | None:
    """A float for SQLite; NaN is refused (SQLite would store it as NULL and lose it silently)."""
    if value is None:
        return None
    number = float(value)
    if math.isnan(number):
        raise HistoryError(f"cannot record run: {what} is NaN")
    return number


def _interval_row(interval: Interval | None, what: str) -> tuple[Any, Any, Any, Any]:
    if interval is None:
        return (None, None, None, None)
    return (
        _real(interval.low, f"{what} low"),
        _real(interval.high, f"{what} high"),
        float(interval.confidence),
        str(interval.method),
    )


def _check_rows(run_id: int, position: int, check: CheckResult) -> tuple[tuple[Any, ...], list[tuple[Any, ...]]]:
    where = f"check {check.name!r}" + (
        f" slice {check.slice.column}={check.slice.value}" if check.slice is not None else ""
    )
    params = {str(key): _real(val, f"{where} parameter {key}") for key, val in check.params.items()}
    row = (
        run_id,
        position,
        check.name,
        check.metric,
        json.dumps(params, sort_keys=True),
        check.slice.column if check.slice is not None else None,
        check.slice.value if check.slice is not None else None,
        check.outcome,
        int(bool(check.passed)),
        _real(check.value, f"{where} value"),
        *_interval_row(check.interval, f"{where} interval"),
        int(check.n),
        int(check.n_pos),
        int(check.n_neg),
        _real(check.baseline_value, f"{where} baseline value"),
        _real(check.delta, f"{where} delta"),
        *_interval_row(check.delta_interval, f"{where} delta interval"),
        check.method,
        _real(check.threshold, f"{where} threshold"),
        check.reason,
        json.dumps(list(check.warnings)),
    )
    decisions = []
    for role, decision in (("floor", check.floor), ("margin", check.margin)):
        if decision is None:
            continue
        decisions.append(
            (
                run_id,
                position,
                role,
                decision.bound.kind,
                _real(decision.bound.value, f"{where} {role} bound"),
                decision.outcome,
                _real(decision.estimate, f"{where} {role} estimate"),
                *_interval_row(decision.interval, f"{where} {role} interval"),
                _real(decision.p_value, f"{where} {role} p-value"),
                _real(decision.adjusted_p_value, f"{where} {role} adjusted p-value"),
            )
        )
    return row, decisions


def _insert_run(conn: sqlite3.Connection, result: Result, *, label: str | None, run_time: datetime) -> int:
    """Insert one run; the caller holds the transaction. Returns the new run id."""
    cursor = conn.execute(
        "INSERT INTO run (run_time, label, verdict, confidence, resamples, seed, on_inconclusive, adjust,"
        " policy_source, policy_hash, candidate_source, baseline_source, fingerprint, n, n_pos, n_neg,"
        " methods, warnings, notes) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
        (
            _time_text(run_time, "run_time"),
            label,
            result.verdict,
            float(result.confidence),
            int(result.resamples),
            int(result.seed),
            result.on_inconclusive,
            result.adjust,
            result.policy_source,
            result.policy_hash,
            result.candidate_source,
            result.baseline_source,
            result.fingerprint,
            int(result.n),
            int(result.n_pos),
            int(result.n_neg),
            result.methods,
            json.dumps(list(result.warnings)),
            json.dumps(dict(result.notes), sort_keys=True),
        ),
    )
    run_id = int(cursor.lastrowid or 0)
    for position, check in enumerate(result.checks):
        row, decisions = _check_rows(run_id, position, check)
        conn.execute(f"INSERT INTO check_result VALUES ({', '.join('?' * len(row))})", row)
        conn.executemany(
            "INSERT INTO decision VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)", decisions
        )
    return run_id


def record_run(
    path: str | os.PathLike[str],
    result: Result,
    *,
    label: str | None = None,
    run_time: datetime | None = None,
) -> int:
    """Append one evaluation to the history at ``path`` (created on first use); return its run id.

    Parameters
    ----------
    path : the history file (SQLite). Created, with its directory's permission, when missing.
    result : the evaluation to store, whole.
    label : the run label; None uses :func:`default_run_label` on ``os.environ`` (the CI commit
        id), which may itself be None.
    run_time : timezone-aware time of the run; None uses the current time. Stored in UTC.

    Raises
    ------
    HistoryError
        The file is not a rankgate history, has a newer schema, cannot be written, or the result
        holds a NaN. Nothing is stored then: the run is one transaction.
    """
    if not isinstance(result, Result):
        raise HistoryError(f"cannot record run: expected a Result, got {type(result).__name__}")
    moment = run_time if run_time is not None else datetime.now(timezone.utc)
    _time_text(moment, "run_time")  # validate before touching the file
    run_label = label if label is not None else default_run_label(os.environ)
    with _connection(path, create=True) as (conn, target):
        try:
            with _transaction(conn):
                return _insert_run(conn, result, label=run_label, run_time=moment)
        except sqlite3.OperationalError as exc:
            raise HistoryError(f"history {target}: cannot record run ({exc})") from None


# --- reading ----------------------------------------------------------------------------------


def _interval(low: Any, high: Any, confidence: Any, method: Any) -> Interval | None:
    if low is None or high is None or confidence is None:
        return None
    return Interval(float(low), float(high), float(confidence), str(method))


def _decision(row: sqlite3.Row) -> Decision:
    interval = _interval(row["interval_low"], row["interval_high"], row["interval_confidence"], row["interval_method"])
    assert interval is not None  # NOT NULL columns
    return Decision(
        bound=Bound(kind=row["bound_kind"], value=float(row["bound_value"])),
        outcome=row["outcome"],
        estimate=float(row["estimate"]),
        interval=interval,
        p_value=None if row["p_value"] is None else float(row["p_value"]),
        adjusted_p_value=None if row["adjusted_p_value"] is None else float(row["adjusted_p_value"]),
    )


def _check(row: sqlite3.Row, decisions: Mapping[str, Decision]) -> CheckResult:
    column = row["slice_column"]
    return CheckResult(
        name=row["name"],
        metric=row["metric"],
        params={str(k): float(v) for k, v in json.loads(row["params"]).items()},
        slice=None if column is None else SliceKey(column=column, value=row["slice_value"]),
        outcome=row["outcome"],
        passed=bool(row["passed"]),
        value=None if row["value"] is None else float(row["value"]),
        interval=_interval(row["interval_low"], row["interval_high"], row["interval_confidence"], row["interval_method"]),
        n=int(row["n"]),
        n_pos=int(row["n_pos"]),
        n_neg=int(row["n_neg"]),
        baseline_value=None if row["baseline_value"] is None else float(row["baseline_value"]),
        delta=None if row["delta"] is None else float(row["delta"]),
        delta_interval=_interval(row["delta_low"], row["delta_high"], row["delta_confidence"], row["delta_method"]),
        floor=decisions.get("floor"),
        margin=decisions.get("margin"),
        method=row["method"],
        threshold=None if row["threshold"] is None else float(row["threshold"]),
        reason=row["reason"],
        warnings=tuple(json.loads(row["warnings"])),
    )


def load_runs(
    path: str | os.PathLike[str],
    *,
    since: datetime | None = None,
    last: int | None = None,
) -> list[StoredRun]:
    """Read runs from the history, oldest first (by run time, then run id).

    Parameters
    ----------
    path : an existing history file.
    since : keep runs at or after this timezone-aware time.
    last : keep only the last ``last`` runs (after ``since``); must be >= 1.

    Raises
    ------
    HistoryError
        The file is missing, not SQLite, not a rankgate history, or of a newer schema version; or
        ``since`` is naive, or ``last`` is below 1.
    """
    clauses, args = [], []
    if since is not None:
        clauses.append("run_time >= ?")
        args.append(_time_text(since, "since"))
    if last is not None and (isinstance(last, bool) or not isinstance(last, int) or last < 1):
        raise HistoryError(f"--last must be a whole number >= 1, got {last!r}")
    where = f"WHERE {' AND '.join(clauses)}" if clauses else ""
    if last is not None:
        selected = f"SELECT run_id FROM run {where} ORDER BY run_time DESC, run_id DESC LIMIT ?"
        args.append(last)
    else:
        selected = f"SELECT run_id FROM run {where}"

    with _connection(path, create=False) as (conn, _target):
        if _pragma(conn, "user_version") == 0:
            return []  # an empty file: no run recorded yet
        conn.row_factory = sqlite3.Row
        conn.execute("BEGIN")  # one read snapshot for the three queries
        try:
            runs = conn.execute(
                f"SELECT * FROM run WHERE run_id IN ({selected}) ORDER BY run_time, run_id", args
            ).fetchall()
            checks = conn.execute(
                f"SELECT * FROM check_result WHERE run_id IN ({selected}) ORDER BY run_id, position", args
            ).fetchall()
            decisions = conn.execute(
                f"SELECT * FROM decision WHERE run_id IN ({selected})", args
            ).fetchall()
        finally:
            conn.execute("COMMIT")

    by_check: dict[tuple[int, int], dict[str, Decision]] = {}
    for row in decisions:
        by_check.setdefault((row["run_id"], row["position"]), {})[row["role"]] = _decision(row)
    by_run: dict[int, list[CheckResult]] = {}
    for row in checks:
        by_run.setdefault(row["run_id"], []).append(
            _check(row, by_check.get((row["run_id"], row["position"]), {}))
        )
    stored = []
    for row in runs:
        result = Result(
            verdict=row["verdict"],
            checks=tuple(by_run.get(row["run_id"], [])),
            confidence=float(row["confidence"]),
            resamples=int(row["resamples"]),
            seed=int(row["seed"]),
            on_inconclusive=row["on_inconclusive"],
            adjust=row["adjust"],
            policy_source=row["policy_source"],
            policy_hash=row["policy_hash"],
            candidate_source=row["candidate_source"],
            baseline_source=row["baseline_source"],
            fingerprint=row["fingerprint"],
            n=int(row["n"]),
            n_pos=int(row["n_pos"]),
            n_neg=int(row["n_neg"]),
            warnings=tuple(json.loads(row["warnings"])),
            methods=row["methods"],
            notes={str(k): str(v) for k, v in json.loads(row["notes"]).items()},
        )
        stored.append(
            StoredRun(
                run_id=int(row["run_id"]),
                run_time=_parse_stored_time(row["run_time"]),
                label=row["label"],
                result=result,
            )
        )
    return stored


def count_runs(path: str | os.PathLike[str]) -> int:
    """The number of runs stored in an existing history."""
    with _connection(path, create=False) as (conn, _target):
        if _pragma(conn, "user_version") == 0:
            return 0
        return int(conn.execute("SELECT count(*) FROM run").fetchone()[0])


__all__: Sequence[str] = (
    "APPLICATION_ID",
    "CI_COMMIT_VARIABLES",
    "MIGRATIONS",
    "StoredRun",
    "count_runs",
    "default_run_label",
    "load_runs",
    "parse_time",
    "record_run",
    "schema_version",
)
