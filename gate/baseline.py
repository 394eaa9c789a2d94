"""The stored baseline: the production model's scores on the eval set, plus a manifest.

A baseline directory holds

    manifest.json                   the commit point: names the scores file and its sha256
    scores-<sha256[:16]>.parquet    columns id (string), label (bool, True = positive),
                                    score (float64) and weight (float64, when weighted)
    .lock                           an empty file, locked with flock while adopting / loading

``adopt`` writes the scores under a temporary name, fsyncs it, renames it to its content-addressed
final name and fsyncs the directory; only then does it replace ``manifest.json`` (temporary file,
fsync, ``os.replace``, directory fsync), and only after that does it remove superseded scores files
and stale temporary files. A crash at any moment therefore leaves either the old manifest pointing at
the old, intact scores file, or the new manifest pointing at the new one.

``load_baseline`` verifies everything it reads (manifest schema and keys, the scores file's sha256,
the stored table's eval-set fingerprint and counts) and raises :class:`gate.errors.BaselineError`
naming the directory, the file and the cause on any doubt. ``align`` pairs a candidate table with
the baseline by id.

Locking uses ``fcntl.flock`` (POSIX); on network file systems without flock support, concurrent
adopts into one directory are not protected.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import re
import signal
from collections.abc import Iterator
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path, PurePath
from typing import TYPE_CHECKING, Any, Literal

import numpy as np

from gate._files import fsync_directory, write_bytes_atomic
from gate.errors import BaselineError
from gate.io import ScoreTable, fingerprint, take  # one fingerprint definition: gate.io's

if TYPE_CHECKING:
    from numpy.typing import NDArray

__all__ = [
    "MANIFEST_NAME",
    "SCHEMA",
    "Alignment",
    "Baseline",
    "Manifest",
    "adopt",
    "align",
    "load_baseline",
]

SCHEMA = 1  # bump when the stored format or the fingerprint definition changes
MANIFEST_NAME = "manifest.json"
LOCK_NAME = ".lock"
_TMP_PREFIX = ".tmp-"  # every temporary file adopt creates starts with this
_SCORES_RE = re.compile(r"scores-[0-9a-f]{16}\.parquet")
_HEX64_RE = re.compile(r"[0-9a-f]{64}")
_CREATED_RE = re.compile(r"\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}Z")
_HINT_READOPT = "re-adopt with rankgate adopt"
_HINT_READOPT_NEW = "re-adopt with rankgate adopt --new-eval-set"
_EXAMPLES = 3  # example ids per kind of mismatch in messages

# Test-only crash injection (tests/unit/test_baseline.py): when this variable names a stage of
# adopt, the process kills itself with SIGKILL at that stage, as a power cut would.
_CRASH_ENV = "RANKGATE_TEST_CRASH_AT"
CRASH_STAGES = (
    "after-scores-temp",  # scores written and fsynced under a temporary name
    "after-scores-rename",  # scores file at its final name, old manifest still in place
    "after-manifest-temp",  # new manifest written and fsynced under a temporary name
    "after-commit",  # manifest replaced, superseded files not yet removed
)


@dataclass(frozen=True)
class Manifest:
    """What ``manifest.json`` records about an adopted baseline.

    ``note`` and ``source`` are untrusted text: escape them before they reach markdown or XML.
    """

    schema: int
    tool: str
    tool_version: str
    created_utc: str  # ISO 8601, seconds, "Z" suffix
    fingerprint: str  # gate.io.fingerprint of the stored table
    n: int
    n_positive: int
    n_negative: int
    weighted: bool
    scores_file: str  # file name inside the baseline directory
    scores_sha256: str  # hex sha256 of the scores file's bytes
    note: str | None
    source: str  # file name of the candidate that was adopted

    def to_json(self) -> dict[str, Any]:
        """The manifest as a JSON-ready dict (the keys of ``manifest.json``)."""
        return {
            "schema": self.schema,
            "tool": self.tool,
            "tool_version": self.tool_version,
            "created_utc": self.created_utc,
            "fingerprint": self.fingerprint,
            "n": self.n,
            "n_positive": self.n_positive,
            "n_negative": self.n_negative,
            "weighted": self.weighted,
            "scores_file": self.scores_file,
            "scores_sha256": self.scores_sha256,
            "note": self.note,
            "source": self.source,
        }


_MANIFEST_KEYS: dict[str, tuple[type, ...]] = {
    "schema": (int,),
    "tool": (str,),
    "tool_version": (str,),
    "created_utc": (str,),
    "fingerprint": (str,),
    "n": (int,),
    "n_positive": (int,),
    "n_negative": (int,),
    "weighted": (bool,),
    "scores_file": (str,),
    "scores_sha256": (str,),
    "note": (str, type(None)),
    "source": (str,),
}


@dataclass(frozen=True, eq=False)
class Baseline:
    """A verified baseline: the stored table and its manifest."""

    table: ScoreTable
    manifest: Manifest
    directory: str = ""  # the directory as the caller named it (for messages and reports)


@dataclass(frozen=True, eq=False)
class Alignment:
    """A candidate and a baseline paired by id, in the same row order.

    Attributes
    ----------
    candidate, baseline : the two tables restricted to the paired ids, row ``i`` of each being the
        same id. The candidate keeps its extra columns (slices); rows follow the candidate's order.
    n_common : number of paired rows.
    missing_ids_count : ids in the baseline that are not in the candidate.
    extra_ids_count : ids in the candidate that are not in the baseline.
    label_disagreements : ids in both whose labels differ.
    examples : up to 3 example ids per kind: keys "missing", "extra", "label".
    intersected : True when rows were dropped to pair the tables (``on_mismatch="intersect"``).
    note : one line for the report saying how the tables were paired.
    """

    candidate: ScoreTable
    baseline: ScoreTable
    n_common: int
    missing_ids_count: int
    extra_ids_count: int
    label_disagreements: int
    examples: dict[str, tuple[str, ...]] = field(default_factory=dict)
    intersected: bool = False
    note: str = ""

    @property
    def missing(self) -> int:
        """Alias of ``missing_ids_count``."""
        return self.missing_ids_count

    @property
    def extra(self) -> int:
        """Alias of ``extra_ids_count``."""
        return self.extra_ids_count


# --- adopt -------------------------------------------------------------------------------------


def adopt(
    table: ScoreTable,
    directory: str | os.PathLike[str],
    *,
    note: str | None = None,
    new_eval_set: bool = False,
    now: datetime | None = None,
) -> Manifest:
    """Store ``table`` as the baseline in ``directory``, atomically, and return its manifest.

    The directory is created if needed. If it already holds a baseline on a different eval set
    (another fingerprint), or one whose manifest cannot be read, adoption is refused unless
    ``new_eval_set`` is True. A directory that holds other files but no manifest is refused, so
    that a mistyped path cannot turn an unrelated directory into a baseline.

    Raises
    ------
    BaselineError
        The directory cannot be used, the table cannot serve as a baseline (empty, one class, bad
        values), or the eval set differs from the current baseline's without ``new_eval_set``.
    """
    where = os.fspath(directory)
    path = Path(directory)
    created = _created_utc(now)
    _check_table_for_adoption(table, where)
    if note is not None and not _is_utf8(note):
        raise BaselineError(f"{where}: the note is not valid UTF-8 text: {_short(note)}")
    # A file name undecodable in the locale keeps its stray bytes as escapes, not as surrogates.
    source = (PurePath(table.source).name or table.source).encode("utf-8", "backslashreplace").decode()
    fp = fingerprint(table)
    _ensure_directory(path, where)

    with _lock(path, where, exclusive=True):
        _check_replacement(path, where, table, fp, new_eval_set=new_eval_set)
        payload = _parquet_bytes(table)
        digest = hashlib.sha256(payload).hexdigest()
        scores_name = f"scores-{digest[:16]}.parquet"
        manifest = Manifest(
            schema=SCHEMA,
            tool="rankgate",
            tool_version=_tool_version(),
            created_utc=created,
            fingerprint=fp,
            n=table.n,
            n_positive=table.n_pos,
            n_negative=table.n_neg,
            weighted=table.weights is not None,
            scores_file=scores_name,
            scores_sha256=digest,
            note=note,
            source=source,
        )
        text = json.dumps(manifest.to_json(), indent=2, ensure_ascii=False) + "\n"
        try:
            _write_atomic(path, scores_name, payload, where, stage="scores")
            _write_atomic(path, MANIFEST_NAME, text.encode("utf-8"), where, stage="manifest")
        except OSError as exc:
            raise BaselineError(f"{where}: cannot write the baseline ({_os_cause(exc)})") from None
        _crash_point("after-commit")
        _remove_superseded(path, keep=scores_name)
    return manifest


def _created_utc(now: datetime | None) -> str:
    if now is None:
        now = datetime.now(UTC)
    elif now.tzinfo is None or now.utcoffset() is None:
        raise ValueError("adopt(now=...) must be a timezone-aware datetime")
    return now.astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def _check_table_for_adoption(table: ScoreTable, where: str) -> None:
    src = table.source
    n = table.n
    if n == 0:
        raise BaselineError(f"{where}: cannot adopt {src}: the table has no rows")
    if table.ids.shape != (n,) or table.labels.shape != (n,) or table.scores.shape != (n,):
        raise BaselineError(f"{where}: cannot adopt {src}: id, label and score lengths differ")
    if table.n_pos == 0 or table.n_neg == 0:
        kind = "positives" if table.n_pos == 0 else "negatives"
        raise BaselineError(
            f"{where}: cannot adopt {src}: the table has no {kind}; a baseline needs both classes"
        )
    if not np.all(np.isfinite(table.scores)):
        raise BaselineError(f"{where}: cannot adopt {src}: scores must be finite")
    if table.weights is not None:
        w = table.weights
        if w.shape != (n,) or not np.all(np.isfinite(w)) or np.any(w < 0) or not w.sum() > 0:
            raise BaselineError(
                f"{where}: cannot adopt {src}: weights must be finite, non-negative, with a positive sum"
            )
    if not all(isinstance(i, str) for i in table.ids):
        raise BaselineError(f"{where}: cannot adopt {src}: ids must be text")
    if len(set(table.ids.tolist())) != n:
        raise BaselineError(f"{where}: cannot adopt {src}: ids are not unique")


def _ensure_directory(path: Path, where: str) -> None:
    if path.exists() and not path.is_dir():
        raise BaselineError(f"{where}: exists and is not a directory")
    if not path.exists():
        try:
            path.mkdir(parents=True)
            fsync_directory(path.resolve().parent, strict=True)
        except FileExistsError:
            if not path.is_dir():
                raise BaselineError(f"{where}: exists and is not a directory") from None
        except OSError as exc:
            raise BaselineError(f"{where}: cannot create the directory ({_os_cause(exc)})") from None


def _check_replacement(
    path: Path, where: str, table: ScoreTable, fp: str, *, new_eval_set: bool
) -> None:
    """Refuse to replace a baseline on another eval set (or an unreadable one) without consent."""
    if not (path / MANIFEST_NAME).exists():
        foreign = sorted(
            p.name
            for p in path.iterdir()
            if p.name != LOCK_NAME
            and not p.name.startswith(_TMP_PREFIX)
            and not _SCORES_RE.fullmatch(p.name)
        )
        if foreign:
            raise BaselineError(
                f"{where}: not a rankgate baseline (no {MANIFEST_NAME}) and not empty "
                f"(holds {_quote_list(foreign)}); choose an empty or new directory"
            )
        return
    if new_eval_set:
        return
    # An unreadable manifest raises here, its hint naming --new-eval-set: the eval set it
    # recorded is unknown, so only an explicit replacement may go ahead.
    current = _read_manifest(path, where)
    if current.fingerprint == fp:
        return
    detail = f"{current.n} rows, fingerprint {current.fingerprint[:12]}"
    try:
        old = _read_scores(path, where, current)
    except BaselineError:
        old = None
    if old is not None:
        diff = _compare_ids(table, old)
        detail = f"{detail}; {_describe_differences(diff)}"
    raise BaselineError(
        f"{where}: {table.source} is on a different eval set than the current baseline "
        f"({table.n} rows, fingerprint {fp[:12]} vs {detail}); "
        "pass --new-eval-set to replace the baseline anyway"
    )


def _parquet_bytes(table: ScoreTable) -> bytes:
    import pyarrow as pa
    import pyarrow.parquet as pq

    arrays: dict[str, Any] = {
        "id": pa.array(table.ids, type=pa.string()),
        "label": pa.array(np.asarray(table.labels, dtype=np.bool_), type=pa.bool_()),
        "score": pa.array(np.asarray(table.scores, dtype=np.float64), type=pa.float64()),
    }
    if table.weights is not None:
        arrays["weight"] = pa.array(np.asarray(table.weights, dtype=np.float64), type=pa.float64())
    sink = pa.BufferOutputStream()
    pq.write_table(pa.table(arrays), sink)
    return sink.getvalue().to_pybytes()


def _write_atomic(path: Path, name: str, payload: bytes, where: str, *, stage: str) -> None:
    """Write ``payload`` to ``path / name``: temp file in the same directory, fsync, rename, fsync dir."""
    write_bytes_atomic(
        path / name,
        payload,
        prefix=f"{_TMP_PREFIX}{stage}-",
        suffix="",
        before_replace=lambda: _crash_point(f"after-{stage}-temp"),
        sync_directory=False,
    )
    fsync_directory(path, strict=True)
    if stage == "scores":
        _crash_point("after-scores-rename")


def _remove_superseded(path: Path, *, keep: str) -> None:
    # The new manifest is committed; what remains is housekeeping. A failure here leaves only
    # harmless unreferenced files, removed by the next adopt, so it must not turn a committed
    # adoption into an error.
    with contextlib.suppress(OSError):
        for entry in path.iterdir():
            name = entry.name
            if (_SCORES_RE.fullmatch(name) and name != keep) or name.startswith(_TMP_PREFIX):
                with contextlib.suppress(OSError):
                    entry.unlink()
        fsync_directory(path, strict=True)


def _crash_point(stage: str) -> None:
    if os.environ.get(_CRASH_ENV) == stage:
        os.kill(os.getpid(), signal.SIGKILL)


def _tool_version() -> str:
    from gate import __version__

    return __version__


# --- load --------------------------------------------------------------------------------------


def load_baseline(directory: str | os.PathLike[str]) -> Baseline:
    """Read and verify the baseline stored in ``directory``.

    Checks, in order: the directory exists; ``manifest.json`` parses, has the schema this version
    knows and every key with the right type; the scores file it names exists and its sha256
    matches; the stored table is well formed and its counts and eval-set fingerprint match the
    manifest.

    Raises
    ------
    BaselineError
        On any failed check, naming the directory, the file and the cause.
    """
    where = os.fspath(directory)
    path = Path(directory)
    if not path.exists():
        raise BaselineError(
            f"{where}: baseline directory does not exist; "
            f"create it with rankgate adopt --candidate FILE --baseline {where}"
        )
    if not path.is_dir():
        raise BaselineError(f"{where}: not a directory (a baseline is a directory made by rankgate adopt)")
    with _lock(path, where, exclusive=False):
        manifest = _read_manifest(path, where)
        table = _read_scores(path, where, manifest)
    return Baseline(table=table, manifest=manifest, directory=where)


def _read_manifest(path: Path, where: str) -> Manifest:
    file = path / MANIFEST_NAME
    try:
        raw = file.read_bytes()
    except FileNotFoundError:
        raise BaselineError(
            f"{where}: no {MANIFEST_NAME} (not a rankgate baseline, or it was never adopted); "
            "adopt one with rankgate adopt"
        ) from None
    except OSError as exc:
        raise BaselineError(f"{where}: cannot read {MANIFEST_NAME} ({_os_cause(exc)})") from None

    def bad(cause: str) -> BaselineError:
        return BaselineError(f"{where}: {MANIFEST_NAME} {cause}; {_HINT_READOPT_NEW}")

    try:
        data = json.loads(raw.decode("utf-8"))
    except UnicodeDecodeError as exc:
        raise bad(f"is not UTF-8 text (byte {exc.start})") from None
    except json.JSONDecodeError as exc:
        raise bad(f"is not valid JSON (line {exc.lineno} column {exc.colno}: {exc.msg})") from None
    if not isinstance(data, dict):
        raise bad(f"must hold a JSON object, not {type(data).__name__}")
    if "schema" not in data:
        raise bad("has no 'schema' key")
    schema = data["schema"]
    if not isinstance(schema, int) or isinstance(schema, bool):
        raise bad(f"key 'schema' must be an integer, got {_short(schema)}")
    if schema != SCHEMA:
        raise BaselineError(
            f"{where}: {MANIFEST_NAME} has schema {schema}, this rankgate ({_tool_version()}) "
            f"reads schema {SCHEMA}; use a matching rankgate or {_HINT_READOPT_NEW}"
        )
    for key, types in _MANIFEST_KEYS.items():
        if key not in data:
            raise bad(f"has no {key!r} key")
        value = data[key]
        is_bool = isinstance(value, bool)
        ok = isinstance(value, types) and (bool in types or not is_bool)
        if not ok:
            want = " or ".join("null" if t is type(None) else t.__name__ for t in types)
            raise bad(f"key {key!r} must be {want}, got {_short(value)}")
    unknown = sorted(set(data) - set(_MANIFEST_KEYS))
    if unknown:
        raise bad(f"has unknown key {unknown[0]!r}")
    if data["tool"] != "rankgate":
        raise bad(f"key 'tool' must be 'rankgate', got {_short(data['tool'])}")
    if not _CREATED_RE.fullmatch(data["created_utc"]):
        raise bad(f"key 'created_utc' must be like 2024-01-31T12:00:00Z, got {_short(data['created_utc'])}")
    for key in ("fingerprint", "scores_sha256"):
        if not _HEX64_RE.fullmatch(data[key]):
            raise bad(f"key {key!r} must be 64 lowercase hex digits, got {_short(data[key])}")
    # The file name is joined to the directory: anything but our own pattern (a path, "..") is refused.
    if not _SCORES_RE.fullmatch(data["scores_file"]):
        got = _short(data["scores_file"])
        raise bad(f"key 'scores_file' must be like scores-<16 hex>.parquet, got {got}")
    if data["scores_file"] != f"scores-{data['scores_sha256'][:16]}.parquet":
        raise bad("key 'scores_file' does not match key 'scores_sha256'")
    n, n_pos, n_neg = data["n"], data["n_positive"], data["n_negative"]
    if min(n, n_pos, n_neg) < 0 or n_pos + n_neg != n:
        raise bad(f"counts are inconsistent (n={n}, n_positive={n_pos}, n_negative={n_neg})")
    return Manifest(**data)


def _read_scores(path: Path, where: str, manifest: Manifest) -> ScoreTable:
    import pyarrow as pa
    import pyarrow.parquet as pq

    name = manifest.scores_file
    file = path / name
    try:
        # Read once and hash and parse the same bytes, so what is verified is what is used.
        payload = file.read_bytes()
    except FileNotFoundError:
        raise BaselineError(
            f"{where}: {name} named by {MANIFEST_NAME} is missing; {_HINT_READOPT}"
        ) from None
    except OSError as exc:
        raise BaselineError(f"{where}: cannot read {name} ({_os_cause(exc)})") from None
    if hashlib.sha256(payload).hexdigest() != manifest.scores_sha256:
        raise BaselineError(
            f"{where}: {name} sha256 does not match {MANIFEST_NAME} "
            f"(the stored scores were changed after adoption); {_HINT_READOPT}"
        )

    def bad(cause: str) -> BaselineError:
        return BaselineError(f"{where}: {name} {cause}; {_HINT_READOPT}")

    try:
        stored = pq.read_table(pa.BufferReader(payload))
    except (pa.ArrowException, OSError, ValueError) as exc:
        raise bad(f"is not readable Parquet ({' '.join(str(exc).split())})") from None
    expected = ["id", "label", "score"] + (["weight"] if manifest.weighted else [])
    if stored.column_names != expected:
        raise bad(f"has columns {stored.column_names}, expected {expected}")
    types = {
        "id": lambda t: pa.types.is_string(t) or pa.types.is_large_string(t),
        "label": pa.types.is_boolean,
        "score": lambda t: t == pa.float64(),
        "weight": lambda t: t == pa.float64(),
    }
    for col in expected:
        column = stored.column(col)
        if not types[col](column.type):
            raise bad(f"column {col!r} has type {column.type}")
        if column.null_count:
            raise bad(f"column {col!r} has {column.null_count} missing values")

    ids = np.asarray(stored.column("id").to_numpy(zero_copy_only=False), dtype=object)
    labels = np.asarray(stored.column("label").to_numpy(zero_copy_only=False), dtype=np.bool_)
    scores = np.asarray(stored.column("score").to_numpy(), dtype=np.float64)
    weights: NDArray[np.float64] | None = None
    if manifest.weighted:
        weights = np.asarray(stored.column("weight").to_numpy(), dtype=np.float64)
    table = ScoreTable(
        ids=ids, labels=labels, scores=scores, weights=weights, columns={}, source=str(file)
    )
    if (table.n, table.n_pos, table.n_neg) != (manifest.n, manifest.n_positive, manifest.n_negative):
        raise bad(
            f"holds n={table.n}, n_positive={table.n_pos}, n_negative={table.n_neg} but "
            f"{MANIFEST_NAME} records n={manifest.n}, n_positive={manifest.n_positive}, "
            f"n_negative={manifest.n_negative}"
        )
    if not np.all(np.isfinite(scores)):
        raise bad("has non-finite scores")
    if weights is not None and (not np.all(np.isfinite(weights)) or np.any(weights < 0)):
        raise bad("has negative or non-finite weights")
    if len(set(ids.tolist())) != ids.shape[0]:
        raise bad("has duplicate ids")
    if fingerprint(table) != manifest.fingerprint:
        raise bad(
            f"eval-set fingerprint does not match the one in {MANIFEST_NAME} "
            "(the manifest was edited, or written by a rankgate with another fingerprint definition)"
        )
    return table


@contextlib.contextmanager
def _lock(path: Path, where: str, *, exclusive: bool) -> Iterator[None]:
    """flock on ``path/.lock``: exclusive for adopt, shared for load (so a load never sees a
    scores file removed under it). Loading from a read-only directory without a lock file
    proceeds unlocked: nothing can be adopting there."""
    import fcntl

    lock_file = path / LOCK_NAME
    fd: int | None = None
    try:
        if exclusive:
            fd = os.open(lock_file, os.O_RDWR | os.O_CREAT, 0o644)
        else:
            fd = os.open(lock_file, os.O_RDONLY)
    except OSError as exc:
        if exclusive:
            raise BaselineError(f"{where}: cannot create {LOCK_NAME} ({_os_cause(exc)})") from None
    if fd is None:
        yield
        return
    try:
        fcntl.flock(fd, fcntl.LOCK_EX if exclusive else fcntl.LOCK_SH)
        yield
    finally:
        os.close(fd)  # closing releases the lock


# --- align -------------------------------------------------------------------------------------


@dataclass(frozen=True)
class _IdComparison:
    cand_index: NDArray[np.intp]  # candidate rows whose id is in the baseline
    base_index: NDArray[np.intp]  # the matching baseline rows, same order
    agree: NDArray[np.bool_]  # labels agree, per matched pair
    missing: int
    extra: int
    disagreements: int
    examples: dict[str, tuple[str, ...]]


def _compare_ids(candidate: ScoreTable, baseline: ScoreTable) -> _IdComparison:
    import pandas as pd

    position = pd.Index(baseline.ids).get_indexer(pd.Index(candidate.ids))
    found = position >= 0
    cand_index = np.flatnonzero(found)
    base_index = position[found].astype(np.intp)
    agree = candidate.labels[cand_index] == baseline.labels[base_index]
    in_candidate = np.zeros(baseline.n, dtype=np.bool_)
    in_candidate[base_index] = True
    missing_rows = np.flatnonzero(~in_candidate)
    extra_rows = np.flatnonzero(~found)
    disagree_rows = cand_index[~agree]
    examples = {
        "missing": tuple(str(i) for i in baseline.ids[missing_rows[:_EXAMPLES]]),
        "extra": tuple(str(i) for i in candidate.ids[extra_rows[:_EXAMPLES]]),
        "label": tuple(str(i) for i in candidate.ids[disagree_rows[:_EXAMPLES]]),
    }
    return _IdComparison(
        cand_index=cand_index,
        base_index=base_index,
        agree=agree,
        missing=int(missing_rows.shape[0]),
        extra=int(extra_rows.shape[0]),
        disagreements=int(disagree_rows.shape[0]),
        examples=examples,
    )


def _describe_differences(diff: _IdComparison) -> str:
    parts = []
    if diff.missing:
        parts.append(
            f"{_count(diff.missing, 'baseline id')} missing from the candidate "
            f"(e.g. {_quote_list(diff.examples['missing'])})"
        )
    if diff.extra:
        parts.append(
            f"{_count(diff.extra, 'candidate id')} not in the baseline "
            f"(e.g. {_quote_list(diff.examples['extra'])})"
        )
    if diff.disagreements:
        parts.append(
            f"{_count(diff.disagreements, 'id')} with a different label "
            f"(e.g. {_quote_list(diff.examples['label'])})"
        )
    return ", ".join(parts) if parts else "same ids and labels"


def _count(k: int, noun: str) -> str:
    return f"{k} {noun}" if k == 1 else f"{k} {noun}s"


def align(
    candidate: ScoreTable,
    baseline: ScoreTable,
    *,
    on_mismatch: Literal["error", "intersect"] = "error",
) -> Alignment:
    """Pair ``candidate`` and ``baseline`` by id.

    With ``on_mismatch="error"`` the two must hold exactly the same ids with the same labels;
    any difference raises. With ``"intersect"`` the pairing keeps the ids present in both whose
    labels agree (disagreeing rows are dropped from both and the note says so); no common id left
    raises. Rows follow the candidate's order; the candidate keeps its extra columns.

    Raises
    ------
    BaselineError
        The tables differ under ``"error"`` (message with counts and up to 3 example ids per kind),
        or nothing is left to pair under ``"intersect"``.
    ValueError
        ``on_mismatch`` is neither "error" nor "intersect".
    """
    if on_mismatch not in ("error", "intersect"):
        raise ValueError(f"on_mismatch must be 'error' or 'intersect', got {on_mismatch!r}")
    diff = _compare_ids(candidate, baseline)
    differs = bool(diff.missing or diff.extra or diff.disagreements)
    described = _describe_differences(diff)
    if differs and on_mismatch == "error":
        raise BaselineError(
            f"candidate {candidate.source} and baseline {baseline.source} are not on the same eval set: "
            f"{described}; re-adopt the baseline on this eval set, or pair on the common ids "
            "with on_mismatch = \"intersect\" in the policy's [baseline] section"
        )
    keep = diff.agree
    cand_index = diff.cand_index[keep]
    base_index = diff.base_index[keep]
    n_common = int(cand_index.shape[0])
    if n_common == 0:
        raise BaselineError(
            f"candidate {candidate.source} and baseline {baseline.source} have no ids with the same "
            f"label in common ({described}); nothing to compare"
        )
    if not differs:
        identity = bool(np.array_equal(diff.base_index, np.arange(baseline.n)))
        cand = candidate
        base = baseline if identity else take(baseline, base_index)
        note = f"candidate and baseline paired on all {n_common} ids"
    else:
        cand = take(candidate, cand_index)
        base = take(baseline, base_index)
        note = (
            f"paired on the {n_common} ids common to candidate and baseline with the same label; "
            f"left out {described}"
        )
    return Alignment(
        candidate=cand,
        baseline=base,
        n_common=n_common,
        missing_ids_count=diff.missing,
        extra_ids_count=diff.extra,
        label_disagreements=diff.disagreements,
        examples=diff.examples,
        intersected=differs,
        note=note,
    )


# --- small helpers -----------------------------------------------------------------------------


def _is_utf8(text: str) -> bool:
    try:
        text.encode("utf-8")
    except UnicodeEncodeError:
        return False
    return True


def _quote_list(items: tuple[str, ...] | list[str]) -> str:
    return ", ".join(_short(i) for i in items)


def _short(value: object, limit: int = 40) -> str:
    text = repr(value)
    return text if len(text) <= limit else text[: limit - 3] + "..."


def _os_cause(exc: OSError) -> str:
    return exc.strerror or type(exc).__name__
