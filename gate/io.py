"""Read and validate score tables (CSV, Parquet, JSON Lines) into a :class:`ScoreTable`.

CONTRACT (the io helper implements the reading; the dataclass shape is fixed):
every bad input raises :class:`gate.errors.TableError` with a one-line message naming the file
and the column / row / value.

Formats, chosen by the file extension (case-insensitive): ``.csv`` and ``.csv.gz``; ``.parquet``
and ``.pq``; ``.jsonl`` and ``.ndjson`` (also with ``.gz``).

Conventions
-----------
Rows are numbered from 1 in file order; a CSV header is not a row. For CSV and JSON Lines a
message also gives the line of the file, e.g. "row 7 (line 8 of the file)" (CSV line numbers
account for the header, blank lines and quoted fields spanning lines).

Every cell of a CSV file is read as text: ids keep their exact spelling ("007" stays "007") and
other columns kept for slicing are text too. Parquet and JSON Lines keep their own types; their
ids are turned into text (an integer id 7, or an integral float 7.0, becomes "7").

Label matching is forgiving between an integer and its canonical decimal text (label ``1``,
``1.0`` and ``"1"`` all match ``positive=1`` or ``positive="1"``; ``True`` counts as ``1``, as
in Python), and strict otherwise (``"01"``, ``"1.0"`` as text, ``" 1"`` and ``"yes"`` are
different values from ``1``).

pandas and pyarrow are imported inside the functions that need them.
"""

from __future__ import annotations

import collections
import contextlib
import csv
import difflib
import gzip
import json
import math
import os
import re
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import IO, TYPE_CHECKING, Any

import numpy as np
from numpy.typing import NDArray

from gate._files import write_bytes_atomic
from gate.errors import TableError

if TYPE_CHECKING:  # pragma: no cover
    import pandas as pd


@dataclass(frozen=True, eq=False)
class ColumnSpec:
    """Column names and the positive label value (the policy's ``[data]`` section)."""

    id: str = "id"
    label: str = "label"
    score: str = "score"
    weight: str | None = None  # None: use a column named "weight" if present, else unweighted
    positive: int | str | bool = 1


@dataclass(frozen=True, eq=False)
class ScoreTable:
    """A validated score table.

    Attributes
    ----------
    ids : (n,) object array of ``str`` ids (ids are compared as text), unique.
    labels : (n,) bool, True = positive.
    scores : (n,) float64, finite; higher = more likely positive.
    weights : (n,) float64 non-negative with a positive sum, or None when unweighted.
    columns : other columns of the file, by name, as numpy arrays (used for slicing).
    source : the file name it came from, or a description such as "<DataFrame>".
    """

    ids: NDArray[np.object_]
    labels: NDArray[np.bool_]
    scores: NDArray[np.float64]
    weights: NDArray[np.float64] | None
    columns: dict[str, NDArray] = field(default_factory=dict)
    source: str = "<table>"

    @property
    def n(self) -> int:
        return int(self.scores.shape[0])

    @property
    def n_pos(self) -> int:
        return int(np.count_nonzero(self.labels))

    @property
    def n_neg(self) -> int:
        return self.n - self.n_pos


# --- formats -----------------------------------------------------------------------------------

_FORMATS: dict[str, str] = {
    ".csv": "csv",
    ".csv.gz": "csv",
    ".parquet": "parquet",
    ".pq": "parquet",
    ".jsonl": "jsonl",
    ".ndjson": "jsonl",
    ".jsonl.gz": "jsonl",
    ".ndjson.gz": "jsonl",
}
_EXTENSIONS_TEXT = ", ".join(_FORMATS)


def table_format(path: str | os.PathLike[str]) -> str:
    """The format of ``path`` from its extension: "csv", "parquet" or "jsonl".

    Raises :class:`TableError` for an extension rankgate does not read.
    """
    name = Path(path).name.lower()
    for ext in sorted(_FORMATS, key=len, reverse=True):
        if name.endswith(ext) and len(name) > len(ext):
            return _FORMATS[ext]
    suffix = "".join(Path(name).suffixes[-2:]) or "(none)"
    raise TableError(f"{os.fspath(path)}: unknown file type {suffix!r}; expected one of {_EXTENSIONS_TEXT}")


def _is_gzip(path: str | os.PathLike[str]) -> bool:
    return Path(path).name.lower().endswith(".gz")


@contextlib.contextmanager
def _open_text(path: Path, *, newline: str | None = None) -> Iterator[IO[str]]:
    if _is_gzip(path):
        with gzip.open(path, "rt", encoding="utf-8-sig", newline=newline) as fh:
            yield fh
    else:
        with open(path, encoding="utf-8-sig", newline=newline) as fh:
            yield fh


# --- raw columns before validation -------------------------------------------------------------

RowNamer = Callable[[int], str]


def _plain_rows(i: int) -> str:
    return f"row {i + 1}"


@dataclass
class _Raw:
    """Columns as read, before validation, with a way to name a row as the user sees it."""

    columns: dict[str, NDArray[Any]]
    n_rows: int
    source: str
    row: RowNamer = _plain_rows


class _LineRows:
    """Names rows "row i (line L of the file)" from a lazily computed map of start lines."""

    def __init__(self, compute: Callable[[], list[int] | None], n_rows: int) -> None:
        self._compute = compute
        self._n_rows = n_rows
        self._lines: list[int] | None = None
        self._done = False

    def __call__(self, i: int) -> str:
        if not self._done:
            self._done = True
            try:
                lines = self._compute()
            except (OSError, UnicodeDecodeError, csv.Error, EOFError):
                lines = None
            self._lines = lines if lines is not None and len(lines) == self._n_rows else None
        if self._lines is None:
            return f"row {i + 1}"
        return f"row {i + 1} (line {self._lines[i]} of the file)"


def _check_file(path: Path, source: str) -> None:
    try:
        if not path.exists():
            raise TableError(f"{source}: file not found")
        if path.is_dir():
            raise TableError(f"{source}: is a directory, not a score table file")
    except OSError as exc:  # e.g. a path component without search permission
        raise TableError(f"{source}: cannot read the file ({exc.strerror or exc})") from None


def _os_error(source: str, exc: BaseException) -> TableError:
    if isinstance(exc, PermissionError):
        return TableError(f"{source}: cannot read the file (permission denied)")
    if isinstance(exc, gzip.BadGzipFile | EOFError):
        return TableError(f"{source}: not a readable gzip file ({exc})")
    text = getattr(exc, "strerror", None) or str(exc)
    return TableError(f"{source}: cannot read the file ({text})")


def _decode_error(source: str, exc: UnicodeDecodeError) -> TableError:
    byte = exc.object[exc.start : exc.start + 1].hex() if isinstance(exc.object, bytes | bytearray) else "?"
    return TableError(f"{source}: not UTF-8 text (byte 0x{byte} at offset {exc.start})")


def _read_csv(path: Path, source: str) -> _Raw:
    import pandas as pd

    # The header through the csv module: pandas silently renames a repeated name to "name.1".
    try:
        with _open_text(path, newline="") as fh:
            header = next((rec for rec in csv.reader(fh) if rec), None)
    except UnicodeDecodeError as exc:
        raise _decode_error(source, exc) from None
    except csv.Error as exc:
        raise TableError(f"{source}: malformed CSV header ({exc})") from None
    except (OSError, EOFError) as exc:
        raise _os_error(source, exc) from None
    if header is None:
        raise TableError(f"{source}: the file is empty (no header line)")
    seen: set[str] = set()
    for name in header:
        if name in seen:
            raise TableError(f"{source}: column name {name!r} appears twice in the header")
        seen.add(name)

    try:
        frame = pd.read_csv(
            path,
            dtype=str,
            keep_default_na=False,
            na_filter=False,
            index_col=False,
            skip_blank_lines=True,
            encoding="utf-8",
            compression="gzip" if _is_gzip(path) else None,
        )
    except pd.errors.EmptyDataError:
        raise TableError(f"{source}: the file is empty (no header line)") from None
    except pd.errors.ParserError as exc:
        raise _csv_parser_error(source, str(exc)) from None
    except UnicodeDecodeError as exc:
        raise _decode_error(source, exc) from None
    except (OSError, EOFError) as exc:
        raise _os_error(source, exc) from None

    n = len(frame)
    columns = {str(c): frame[c].to_numpy(dtype=object) for c in frame.columns}
    return _Raw(columns, n, source, _LineRows(lambda: _csv_start_lines(path), n))


def _csv_parser_error(source: str, message: str) -> TableError:
    m = re.search(r"Expected (\d+) fields in line (\d+), saw (\d+)", message)
    if m:
        expected, line, saw = m.groups()
        return TableError(f"{source}: malformed CSV: line {line} has {saw} fields, the header has {expected}")
    m = re.search(r"EOF inside string starting at row (\d+)", message)
    if m:  # pandas counts this row from 0 over the lines of the file
        line = int(m.group(1)) + 1
        return TableError(f"{source}: malformed CSV: the quoted field starting on line {line} is never closed")
    first = " ".join(message.split())
    return TableError(f"{source}: malformed CSV ({first})")


def _csv_start_lines(path: Path) -> list[int]:
    """The file line on which each data row starts, skipping blank lines as pandas does."""
    starts: list[int] = []
    with _open_text(path, newline="") as fh:
        reader = csv.reader(fh)
        previous = 0
        header_seen = False
        for record in reader:
            start = previous + 1
            previous = reader.line_num
            if not record:
                continue
            if not header_seen:
                header_seen = True
                continue
            starts.append(start)
    return starts


def _read_parquet(path: Path, source: str) -> _Raw:
    import pyarrow as pa
    import pyarrow.parquet as pq

    try:
        arrow = pq.read_table(path)
    except (pa.ArrowException, OSError) as exc:
        if isinstance(exc, PermissionError):
            raise _os_error(source, exc) from None
        raise TableError(f"{source}: not a readable Parquet file ({' '.join(str(exc).split())})") from None
    names = [str(n) for n in arrow.column_names]
    _check_unique_names(names, source)
    columns = {name: _arrow_to_numpy(arrow.column(i)) for i, name in enumerate(names)}
    return _Raw(columns, arrow.num_rows, source, _plain_rows)


def _check_unique_names(names: list[str], source: str) -> None:
    """TableError naming the first column name (in column order) that occurs more than once."""
    counts = collections.Counter(names)
    for name in names:
        if counts[name] > 1:
            raise TableError(f"{source}: column name {name!r} appears twice")


def _arrow_to_numpy(column: Any) -> NDArray[Any]:
    """An Arrow column as numpy; nulls become None in an object array (never a silent NaN)."""
    import pyarrow as pa
    import pyarrow.compute as pc

    if pa.types.is_dictionary(column.type):
        column = pc.cast(column, column.type.value_type)
    if column.null_count == 0 and not pa.types.is_nested(column.type):
        # a copy: zero-copy views of Arrow memory are read-only
        return np.array(column.to_numpy(zero_copy_only=False), copy=True)
    values = column.to_pylist()
    out = np.empty(len(values), dtype=object)
    for i, v in enumerate(values):  # element-wise so that list values stay single cells
        out[i] = v
    return out


def _read_jsonl(path: Path, source: str, spec: ColumnSpec) -> _Raw:
    raw = _read_jsonl_arrow(path, source, spec)
    if raw is not None:
        return raw
    return _read_jsonl_python(path, source)


def _jsonl_start_lines(path: Path) -> list[int]:
    with _open_text(path) as fh:
        return [lineno for lineno, line in enumerate(fh, 1) if line.strip()]


def _read_jsonl_arrow(path: Path, source: str, spec: ColumnSpec) -> _Raw | None:
    """Fast path through Arrow's JSON reader; None when it cannot read the file (then the
    line-by-line reader either reads it or says precisely what is wrong)."""
    if _is_gzip(path):
        return None
    import pyarrow as pa
    import pyarrow.json as pj

    # Keep ids as text: without a schema Arrow would turn an id like "2024-01-01" into a timestamp.
    schema = pa.schema([(spec.id, pa.string())])
    try:
        arrow = pj.read_json(
            path,
            parse_options=pj.ParseOptions(explicit_schema=schema, unexpected_field_behavior="infer"),
        )
    except (pa.ArrowException, OSError, ValueError):
        return None
    names = [str(n) for n in arrow.column_names]
    if len(set(names)) != len(names) or arrow.num_rows == 0:
        return None
    columns = {name: _arrow_to_numpy(arrow.column(i)) for i, name in enumerate(names)}
    if arrow.column(spec.id).null_count == arrow.num_rows:
        # the explicit schema adds the id column even when no line has it
        if not _jsonl_has_key(path, spec.id):
            del columns[spec.id]
    n = arrow.num_rows
    return _Raw(columns, n, source, _LineRows(lambda: _jsonl_start_lines(path), n))


def _jsonl_has_key(path: Path, key: str) -> bool:
    with _open_text(path) as fh:
        for line in fh:
            if line.strip():
                obj = json.loads(line)
                if isinstance(obj, dict) and key in obj:
                    return True
    return False


def _read_jsonl_python(path: Path, source: str) -> _Raw:
    cols: dict[str, list[Any]] = {}
    lines: list[int] = []
    n = 0
    try:
        with _open_text(path) as fh:
            for lineno, line in enumerate(fh, 1):
                if not line.strip():
                    continue
                try:
                    obj = json.loads(line.rstrip("\r\n"))
                except json.JSONDecodeError as exc:
                    raise TableError(
                        f"{source}: line {lineno} is not valid JSON ({exc.msg} at column {exc.colno})"
                    ) from None
                if not isinstance(obj, dict):
                    raise TableError(
                        f"{source}: line {lineno} is a JSON {type(obj).__name__}, not an object of column values"
                    )
                for key in obj:
                    if key not in cols:
                        cols[key] = [None] * n
                for key, col in cols.items():
                    col.append(obj.get(key))
                lines.append(lineno)
                n += 1
    except UnicodeDecodeError as exc:
        raise _decode_error(source, exc) from None
    except (OSError, EOFError) as exc:
        raise _os_error(source, exc) from None
    if n == 0 and not cols:
        raise TableError(f"{source}: the file is empty (no JSON lines)")
    columns: dict[str, NDArray[Any]] = {}
    for key, values in cols.items():
        arr = np.empty(n, dtype=object)
        for i, v in enumerate(values):
            arr[i] = v
        columns[key] = arr

    def row(i: int) -> str:
        return f"row {i + 1} (line {lines[i]} of the file)"

    return _Raw(columns, n, source, row)


# --- validation --------------------------------------------------------------------------------


def _show(value: Any, limit: int = 40) -> str:
    text = repr(value.item() if isinstance(value, np.generic) else value)
    return text if len(text) <= limit else text[: limit - 3] + "..."


def _blank_mask(values: NDArray[Any]) -> NDArray[np.bool_]:
    """True where a cell is missing: None, NaN / NA, or empty text (whitespace is a value)."""
    import pandas as pd

    kind = values.dtype.kind
    if kind in "biuMm":
        return np.zeros(values.shape[0], dtype=bool)
    if kind == "f":
        return np.isnan(values)
    if kind in "US":
        return values == values.dtype.type()
    missing = np.asarray(pd.isna(values), dtype=bool)
    return missing | np.asarray(values == "", dtype=bool)


def _require_columns(raw: _Raw, spec: ColumnSpec) -> str | None:
    """Check the spec's columns exist; return the weight column to use (or None)."""
    source = raw.source
    roles = [("id", spec.id), ("label", spec.label), ("score", spec.score)]
    if spec.weight is not None:
        roles.append(("weight", spec.weight))
    names = [name for _, name in roles]
    for role, name in roles:
        if names.count(name) > 1:
            others = [r for r, n in roles if n == name and r != role]
            raise TableError(f"{source}: column {name!r} is named for both the {role} and the {others[0]}")
    available = list(raw.columns)
    for role, name in roles:
        if name not in raw.columns:
            near = difflib.get_close_matches(name, available, n=1)
            hint = f" (did you mean {near[0]!r}?)" if near else ""
            listing = ", ".join(repr(c) for c in available[:20])
            if len(available) > 20:
                listing += f", ... ({len(available)} in all)"
            raise TableError(
                f"{source}: no {role} column {name!r}{hint}; the columns are: {listing or '(none)'}"
            )
    if spec.weight is not None:
        return spec.weight
    if "weight" in raw.columns and "weight" not in names:
        return "weight"
    return None


def _ids(raw: _Raw, name: str) -> NDArray[np.object_]:
    import pandas as pd

    values = raw.columns[name]
    source = raw.source
    kind = values.dtype.kind
    if kind == "b":
        raise TableError(f"{source}: column {name!r} holds true/false values, not ids")
    missing = _blank_mask(values)
    if missing.any():
        first = int(np.argmax(missing))
        raise TableError(
            f"{source}: column {name!r}: {int(missing.sum())} missing ids; first at {raw.row(first)}"
        )
    if kind in "iu":
        ids = values.astype(str).astype(object)
    elif kind in "OUSf":
        if kind == "O" and pd.api.types.infer_dtype(values, skipna=False) == "string":
            ids = values
        else:
            ids = np.array([_id_text(v) for v in values.tolist()], dtype=object)
    else:
        ids = values.astype(str).astype(object)
    dup = pd.Series(ids, dtype=object).duplicated(keep="first").to_numpy()
    if dup.any():
        first = int(np.argmax(dup))
        earlier = int(np.flatnonzero(ids == ids[first])[0])
        count = int(dup.sum())
        raise TableError(
            f"{source}: column {name!r}: {count} duplicate id{'s' if count > 1 else ''}; "
            f"first {_show(ids[first])} at {raw.row(first)}, already at {raw.row(earlier)}"
        )
    return ids


def _id_text(value: Any) -> str:
    if isinstance(value, bool):
        return str(value)
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        return str(int(value)) if value.is_integer() else repr(value)
    if isinstance(value, bytes):
        return value.decode("utf-8", errors="backslashreplace")
    return str(value)


_INT_TEXT = re.compile(r"-?(?:0|[1-9][0-9]*)")


def _label_key(value: Any) -> tuple[str, str]:
    """The identity used to compare label values (see the module docstring)."""
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, bool):
        return ("int", "1" if value else "0")
    if isinstance(value, int):
        return ("int", str(value))
    if isinstance(value, float):
        if math.isfinite(value) and value.is_integer():
            return ("int", str(int(value)))
        return ("float", repr(value))
    if isinstance(value, str):
        if _INT_TEXT.fullmatch(value):
            return ("int", str(int(value)))
        return ("str", value)
    return (type(value).__name__, repr(value))


def _labels(raw: _Raw, name: str, positive: int | str | bool) -> NDArray[np.bool_]:
    import pandas as pd

    source = raw.source
    values = raw.columns[name]
    missing = _blank_mask(values)
    if missing.any():
        first = int(np.argmax(missing))
        raise TableError(
            f"{source}: column {name!r}: {int(missing.sum())} missing labels; first at {raw.row(first)}"
        )
    codes, uniques = pd.factorize(pd.Series(values, dtype=object) if values.dtype.kind == "O" else values)
    uniques = np.asarray(uniques, dtype=object)
    keys = [_label_key(u) for u in uniques]
    distinct: dict[tuple[str, str], Any] = {}
    for key, value in zip(keys, uniques, strict=True):
        distinct.setdefault(key, value)
    shown = ", ".join(_show(v) for _, v in sorted(distinct.items())[:6])
    if len(distinct) > 6:
        shown += ", ..."
    if len(distinct) > 2:
        raise TableError(
            f"{source}: column {name!r} must hold two label values, found {len(distinct)}: {shown}"
        )
    pos_key = _label_key(positive)
    if pos_key not in distinct and len(distinct) == 2:
        raise TableError(
            f"{source}: column {name!r}: the positive label value {_show(positive)} does not occur; "
            f"the values are {shown}"
        )
    is_pos_unique = np.array([k == pos_key for k in keys], dtype=bool)
    return is_pos_unique[codes]


def _numbers(raw: _Raw, name: str, what: str) -> NDArray[np.float64]:
    """A column as finite float64, or a TableError with counts and the first bad row."""
    import pandas as pd

    source = raw.source
    values = raw.columns[name]
    kind = values.dtype.kind
    if kind == "b":
        raise TableError(f"{source}: column {name!r} holds true/false values, not {what}s")
    if kind in "iuf":
        out = values.astype(np.float64)
        missing = np.zeros(out.shape[0], dtype=bool)
        not_number = missing
    elif kind in "OUS":
        obj = values.astype(object) if kind != "O" else values
        missing = _blank_mask(obj)
        inferred = pd.api.types.infer_dtype(obj, skipna=True)
        if inferred in ("string", "integer", "floating", "mixed-integer-float", "decimal", "empty"):
            is_bool = np.zeros(obj.shape[0], dtype=bool)
        else:
            is_bool = np.array([isinstance(v, bool | np.bool_) for v in obj.tolist()], dtype=bool)
        series = pd.Series(obj, dtype=object)
        if is_bool.any() or missing.any():
            series = series.mask(is_bool | missing)
        with np.errstate(all="ignore"):
            out = pd.to_numeric(series, errors="coerce").to_numpy(dtype=np.float64)
        # Which failures were a spelled-out NaN ("nan") rather than text that is no number.
        failed = np.flatnonzero(np.isnan(out) & ~missing & ~is_bool)
        nan_like = np.zeros(obj.shape[0], dtype=bool)
        nan_like[failed] = [_is_nan_like(obj[i]) for i in failed.tolist()]
        not_number = is_bool | (np.isnan(out) & ~missing & ~nan_like)
    else:
        raise TableError(f"{source}: column {name!r} holds {values.dtype} values, not {what}s")
    nan = np.isnan(out) & ~missing & ~not_number
    inf = np.isinf(out)
    bad = missing | not_number | nan | inf
    if bad.any():
        first = int(np.argmax(bad))
        parts = []
        for label, mask in (("missing", missing), ("not a number", not_number), ("NaN", nan), ("infinite", inf)):
            if mask.any():
                parts.append(f"{int(mask.sum())} {label}")
        count = int(bad.sum())
        shown = "" if missing[first] else f": {_show(values[first])}"
        raise TableError(
            f"{source}: column {name!r}: {count} of {raw.n_rows} {what}s are not finite numbers "
            f"({', '.join(parts)}); first at {raw.row(first)}{shown}"
        )
    return out


def _is_nan_like(value: Any) -> bool:
    if isinstance(value, str):
        return value.strip().lower() in ("nan", "+nan", "-nan")
    if isinstance(value, float | np.floating):
        return bool(np.isnan(value))
    return False


def _weights(raw: _Raw, name: str) -> NDArray[np.float64]:
    w = _numbers(raw, name, "weight")
    negative = w < 0
    if negative.any():
        first = int(np.argmax(negative))
        raise TableError(
            f"{raw.source}: column {name!r}: {int(negative.sum())} negative weights; "
            f"first at {raw.row(first)}: {_show(raw.columns[name][first])}"
        )
    if not np.any(w > 0):
        raise TableError(f"{raw.source}: column {name!r}: all weights are zero")
    return w


def _validate(raw: _Raw, spec: ColumnSpec, *, require_both_classes: bool) -> ScoreTable:
    source = raw.source
    weight_name = _require_columns(raw, spec)
    if raw.n_rows == 0:
        raise TableError(f"{source}: the table has no rows")
    ids = _ids(raw, spec.id)
    labels = _labels(raw, spec.label, spec.positive)
    scores = _numbers(raw, spec.score, "score")
    weights = _weights(raw, weight_name) if weight_name is not None else None
    if require_both_classes:
        n_pos = int(np.count_nonzero(labels))
        if n_pos == 0:
            raise TableError(
                f"{source}: column {spec.label!r}: no positive rows (positive label value "
                f"{_show(spec.positive)}); the metrics need both classes"
            )
        if n_pos == raw.n_rows:
            raise TableError(
                f"{source}: column {spec.label!r}: no negative rows (every label is the positive value "
                f"{_show(spec.positive)}); the metrics need both classes"
            )
        if weights is not None:
            if not np.any(weights[labels] > 0):
                raise TableError(f"{source}: column {weight_name!r}: every positive row has weight zero")
            if not np.any(weights[~labels] > 0):
                raise TableError(f"{source}: column {weight_name!r}: every negative row has weight zero")
    used = {spec.id, spec.label, spec.score}
    if weight_name is not None:
        used.add(weight_name)
    others = {name: values for name, values in raw.columns.items() if name not in used}
    return ScoreTable(
        ids=ids, labels=labels, scores=scores, weights=weights, columns=others, source=source
    )


# --- public reading API ------------------------------------------------------------------------


def read_table(
    path: str | os.PathLike[str],
    spec: ColumnSpec = ColumnSpec(),
    *,
    require_both_classes: bool = True,
) -> ScoreTable:
    """Read and validate a score table from a CSV, Parquet or JSON Lines file.

    Parameters
    ----------
    path : the file; its extension chooses the format (see the module docstring).
    spec : column names and the positive label value.
    require_both_classes : when True (the default) a table without positives or without
        negatives (or with zero total weight in either class) is an error.

    Returns
    -------
    ScoreTable with ``source`` set to ``path`` as given.

    Raises
    ------
    TableError
        For a missing or unreadable file, an unknown extension, malformed content, a missing
        column, an empty table, missing or non-finite scores, missing labels, a label column
        without exactly two values (or whose values do not include ``spec.positive``),
        duplicate or missing ids, negative / non-finite weights, all-zero weights, and one
        class only when ``require_both_classes``. The message names the file and the column,
        row or value.
    """
    source = os.fspath(path)
    p = Path(path)
    fmt = table_format(p)
    _check_file(p, source)
    if fmt == "csv":
        raw = _read_csv(p, source)
    elif fmt == "parquet":
        raw = _read_parquet(p, source)
    else:
        raw = _read_jsonl(p, source, spec)
    return _validate(raw, spec, require_both_classes=require_both_classes)


def table_from_frame(
    frame: pd.DataFrame,
    spec: ColumnSpec = ColumnSpec(),
    *,
    source: str = "<DataFrame>",
    require_both_classes: bool = True,
) -> ScoreTable:
    """Validate an in-memory pandas DataFrame as a score table (same rules as :func:`read_table`).

    Rows are named by their position from 1 ("row 7"), not by the frame's index.
    """
    names = [str(c) for c in frame.columns]
    _check_unique_names(names, source)
    columns: dict[str, NDArray[Any]] = {}
    for name, column in zip(names, frame.columns, strict=True):
        series = frame[column]
        if isinstance(series.dtype, np.dtype):
            columns[name] = np.array(series.to_numpy(), copy=True)
        else:  # pandas extension dtypes (nullable ints, string, categorical): missing becomes None
            arr = series.astype(object).to_numpy(copy=True)
            arr[series.isna().to_numpy()] = None
            columns[name] = arr
    return _validate(_Raw(columns, len(frame), source), spec, require_both_classes=require_both_classes)


# --- fingerprint, selection --------------------------------------------------------------------


def fingerprint(table: ScoreTable) -> str:
    """SHA-256 hex digest identifying the evaluation set: its ids and their labels.

    Scores and weights do not enter, so every model scored on the same labelled set shares it.

    Notes
    -----
    The exact bytes hashed: the (id, label) pairs sorted by id in Unicode code-point order
    (equivalently, by the UTF-8 bytes of the id); for each pair, the length of the id's UTF-8
    encoding as an 8-byte unsigned big-endian integer, then those UTF-8 bytes, then one byte
    ``0x01`` for a positive label or ``0x00`` for a negative one. Nothing precedes or follows.

    Example: a table with ids "b" (negative) and "a" (positive) hashes the 20 bytes
    ``00 00 00 00 00 00 00 01 61 01 00 00 00 00 00 00 00 01 62 00``.
    """
    import hashlib

    order = np.argsort(table.ids.astype(str), kind="stable")
    digest = hashlib.sha256()
    chunk: list[bytes] = []
    for i in order.tolist():
        encoded = str(table.ids[i]).encode("utf-8")
        chunk.append(len(encoded).to_bytes(8, "big"))
        chunk.append(encoded)
        chunk.append(b"\x01" if table.labels[i] else b"\x00")
        if len(chunk) >= 3 * 8192:
            digest.update(b"".join(chunk))
            chunk.clear()
    digest.update(b"".join(chunk))
    return digest.hexdigest()


def _select(table: ScoreTable, index: NDArray[Any]) -> ScoreTable:
    return ScoreTable(
        ids=table.ids[index],
        labels=table.labels[index],
        scores=table.scores[index],
        weights=None if table.weights is None else table.weights[index],
        columns={name: values[index] for name, values in table.columns.items()},
        source=table.source,
    )


def subset(table: ScoreTable, mask: NDArray[np.bool_]) -> ScoreTable:
    """The rows of ``table`` where the boolean ``mask`` (length ``table.n``) is True, in order.

    The result may hold a single class (or no rows); metrics on it raise UndefinedMetricError.
    """
    m = np.asarray(mask)
    if m.dtype != np.bool_ or m.shape != (table.n,):
        raise ValueError(f"mask must be a boolean array of shape ({table.n},), got {m.dtype} {m.shape}")
    return _select(table, m)


def take(table: ScoreTable, indices: NDArray[np.integer[Any]]) -> ScoreTable:
    """The rows of ``table`` at ``indices`` (0-based, in that order; no index twice, ids stay unique)."""
    idx = np.asarray(indices)
    if idx.ndim != 1 or (idx.size and idx.dtype.kind not in "iu"):
        raise ValueError(f"indices must be a 1-D integer array, got {idx.dtype} with shape {idx.shape}")
    idx = idx.astype(np.intp)
    if idx.size and (idx.min() < -table.n or idx.max() >= table.n):
        raise ValueError(f"indices out of range for a table of {table.n} rows")
    idx = np.where(idx < 0, idx + table.n, idx)
    if np.unique(idx).size != idx.size:
        raise ValueError("indices repeat a row; a score table's ids must stay unique")
    return _select(table, idx)


# --- writing -----------------------------------------------------------------------------------


def table_to_frame(table: ScoreTable) -> pd.DataFrame:
    """The table as a DataFrame with columns id, label (1 = positive, 0 = negative), score,
    weight (only when weighted), then the other columns in their order."""
    import pandas as pd

    data: dict[str, Any] = {
        "id": pd.Series(table.ids, dtype=object),
        "label": table.labels.astype(np.int64),
        "score": table.scores,
    }
    if table.weights is not None:
        data["weight"] = table.weights
    for name, values in table.columns.items():
        if name in data:
            raise TableError(
                f"{table.source}: cannot write column {name!r}: the name is taken by the table's own "
                f"{name} column"
            )
        data[name] = values
    return pd.DataFrame(data)


def write_table(table: ScoreTable, path: str | os.PathLike[str]) -> Path:
    """Write ``table`` atomically to ``path`` (format by extension: CSV, Parquet or JSON Lines).

    The columns are written under the default names id / label / score / weight with label 1
    for positives and 0 for negatives, so ``read_table(path)`` with the default
    :class:`ColumnSpec` reads the same table back (CSV turns the other columns into text).
    Scores are written with enough digits to read back bit for bit.
    """
    return write_frame(table_to_frame(table), path)


def write_frame(frame: pd.DataFrame, path: str | os.PathLike[str]) -> Path:
    """Write a DataFrame atomically: a temporary file in the target directory, fsync, os.replace.

    The format follows the extension as for :func:`read_table`. The target is never left
    half-written: on any failure the temporary file is removed and the target is untouched.
    """
    target = Path(path)
    fmt = table_format(target)
    directory = target.parent if str(target.parent) else Path(".")
    if not directory.is_dir():
        raise TableError(f"{os.fspath(path)}: cannot write: directory {os.fspath(directory)!r} does not exist")

    def write(fh: IO[bytes]) -> None:
        if fmt == "csv":
            _write_csv(frame, fh, gz=_is_gzip(target))
        elif fmt == "parquet":
            _write_parquet(frame, fh, path)
        else:
            _write_jsonl(frame, fh, gz=_is_gzip(target))

    try:
        write_bytes_atomic(target, write)
    except OSError as exc:
        raise TableError(f"{os.fspath(path)}: cannot write ({exc.strerror or exc})") from None
    return target


def _maybe_gzip(fh: IO[bytes], gz: bool) -> contextlib.AbstractContextManager[IO[bytes]]:
    """``fh`` itself, or a gzip stream into it (closing the stream leaves ``fh`` open)."""
    if gz:
        # mtime=0: the same table always gives the same bytes
        return gzip.GzipFile(fileobj=fh, mode="wb", mtime=0)  # type: ignore[return-value]
    return contextlib.nullcontext(fh)


def _write_csv(frame: pd.DataFrame, fh: IO[bytes], *, gz: bool) -> None:
    import io as _io

    with _maybe_gzip(fh, gz) as out:
        text = _io.TextIOWrapper(out, encoding="utf-8", newline="")
        frame.to_csv(text, index=False, lineterminator="\n")
        text.flush()
        text.detach()  # leave closing to the owners of the underlying files


def _write_parquet(frame: pd.DataFrame, fh: IO[bytes], path: str | os.PathLike[str]) -> None:
    import pyarrow as pa
    import pyarrow.parquet as pq

    try:
        arrow = pa.Table.from_pandas(frame, preserve_index=False)
    except (pa.ArrowException, TypeError, ValueError) as exc:
        raise TableError(f"{os.fspath(path)}: cannot write as Parquet ({' '.join(str(exc).split())})") from None
    pq.write_table(arrow, fh)


def _write_jsonl(frame: pd.DataFrame, fh: IO[bytes], *, gz: bool) -> None:
    columns = [str(c) for c in frame.columns]
    lists = [_json_values(frame[c].to_numpy()) for c in frame.columns]

    def lines() -> Iterator[bytes]:
        for row in zip(*lists, strict=True):
            yield (json.dumps(dict(zip(columns, row, strict=True)), allow_nan=False) + "\n").encode("utf-8")

    with _maybe_gzip(fh, gz) as out:
        out.writelines(lines())


def _json_values(values: NDArray[Any]) -> list[Any]:
    """Python values for json: numpy scalars unwrapped, NaN as null (JSON has no NaN)."""
    if values.dtype.kind in "Mm":
        return [None if v == "NaT" else v for v in values.astype(str).tolist()]
    out = values.tolist()
    if values.dtype.kind in "fO":
        out = [None if isinstance(v, float) and not math.isfinite(v) else v for v in out]
    if any(not isinstance(v, str | int | float | bool | type(None)) for v in out):
        out = [v if isinstance(v, str | int | float | bool | type(None)) else str(v) for v in out]
    return out
