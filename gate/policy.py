"""The policy file: pydantic models of the TOML document, validation, and one-line errors.

A policy is a TOML file with the sections ``[data]``, ``[stats]``, ``[baseline]``, ``[watch]`` and a
list of ``[[check]]`` tables (docs/policy.md is the reference of every key). Every problem becomes a
:class:`gate.errors.PolicyError` whose message is one line naming the file and the key path, with
check indices 1-based (the first ``[[check]]`` is ``check[1]``)::

    policies/x.toml: check[2].fpr: must be in (0, 1), got 1.5
    policies/x.toml: check[1].at_lest: unknown key; did you mean 'at_least'?

Models are frozen, forbid unknown keys and are strict about types (TOML is typed: ``"0.95"`` is a
string, not a number; an integer is accepted where a float is expected, a boolean never is).
"""

from __future__ import annotations

import datetime as _dt
import difflib
import hashlib
import json
import os
import re
import tomllib
from pathlib import Path
from typing import Annotated, Any, Literal

from pydantic import (
    AfterValidator,
    BaseModel,
    ConfigDict,
    Field,
    ValidationError,
    field_validator,
    model_validator,
)
from pydantic_core import PydanticCustomError

from gate._files import write_bytes_atomic
from gate.errors import PolicyError
from gate.io import ColumnSpec
from gate.results import Bound, BoundKind

__all__ = [
    "BaselineSection",
    "Check",
    "DataSection",
    "DEFAULT_SEED",
    "HIGHER_IS_BETTER",
    "LOWER_IS_BETTER",
    "METRIC_PARAMS",
    "METRICS",
    "Policy",
    "StatsSection",
    "WatchSection",
    "load_policy",
    "parse_policy",
    "write_starter_policy",
]

Metric = Literal[
    "roc_auc",
    "average_precision",
    "partial_auc",
    "recall_at_fpr",
    "precision_at_recall",
    "recall_at_threshold",
    "fpr_at_threshold",
    "expected_cost",
    "brier",
]

# The parameters each metric takes, in the order they appear in a default check name.
# expected_cost is the cost at a stated threshold: the cost-optimal threshold found on the evaluation
# set itself would be an optimistic, in-sample figure, and a gate should judge the threshold that
# will actually be deployed.
METRIC_PARAMS: dict[str, tuple[str, ...]] = {
    "roc_auc": (),
    "average_precision": (),
    "partial_auc": ("max_fpr",),
    "recall_at_fpr": ("fpr",),
    "precision_at_recall": ("recall",),
    "recall_at_threshold": ("threshold",),
    "fpr_at_threshold": ("threshold",),
    "expected_cost": ("threshold", "cost_fp", "cost_fn"),
    "brier": (),
}
METRICS: tuple[str, ...] = tuple(METRIC_PARAMS)
HIGHER_IS_BETTER: frozenset[str] = frozenset(
    {
        "roc_auc",
        "average_precision",
        "partial_auc",
        "recall_at_fpr",
        "precision_at_recall",
        "recall_at_threshold",
    }
)
LOWER_IS_BETTER: frozenset[str] = frozenset({"fpr_at_threshold", "expected_cost", "brier"})
_ALL_PARAMS: tuple[str, ...] = ("fpr", "max_fpr", "recall", "threshold", "cost_fp", "cost_fn")
# Common shorthands, used only to suggest the real name (never accepted as a metric).
_METRIC_SHORTHANDS = {
    "auc": "roc_auc",
    "auroc": "roc_auc",
    "rocauc": "roc_auc",
    "ap": "average_precision",
    "pr_auc": "average_precision",
    "auprc": "average_precision",
    "pauc": "partial_auc",
    "cost": "expected_cost",
    "brier_score": "brier",
}

DEFAULT_SEED = 20240611  # a fixed integer so that every run of the same inputs gives the same numbers
DEFAULT_MIN_POSITIVES = 20


# --- error helpers -----------------------------------------------------------------------------


def _fail(key: str, message: str) -> PydanticCustomError:
    """An error at ``key`` (a path relative to the model being validated; "" = the model itself)."""
    return PydanticCustomError("policy", "{message}", {"key": key, "message": message})


def _toml_type(value: Any) -> str:
    if isinstance(value, bool):
        return "boolean"
    if isinstance(value, int):
        return "integer"
    if isinstance(value, float):
        return "float"
    if isinstance(value, str):
        return "string"
    if isinstance(value, dict):
        return "table"
    if isinstance(value, list):
        return "array"
    if isinstance(value, _dt.datetime | _dt.date | _dt.time):
        return "date/time"
    return type(value).__name__


def _show(value: Any) -> str:
    """A short one-line rendering of a user value for an error message."""
    if isinstance(value, bool):
        text = "true" if value else "false"
    elif isinstance(value, str):
        text = repr(value)
    elif isinstance(value, dict):
        text = "a table"
    elif isinstance(value, list):
        text = "an array"
    elif isinstance(value, _dt.datetime | _dt.date | _dt.time):
        text = value.isoformat()
    else:
        text = repr(value)
    if len(text) > 60:
        text = text[:57] + "..."
    return text


def _got(value: Any) -> str:
    shown = _show(value)
    kind = _toml_type(value)
    if shown in ("a table", "an array"):
        return shown
    return f"{shown} ({kind})"


def _num(x: float) -> str:
    """Format a number for messages and default names: 0.05 -> '0.05', 10.0 -> '10'."""
    return format(float(x), ".12g")


def _whole_at_least(low: int) -> AfterValidator:
    """A lower bound on a whole-number key, for ``Annotated[int, ...]``."""

    def check(value: int) -> int:
        if value < low:
            raise _fail("", f"must be >= {low}, got {value}")
        return value

    return AfterValidator(check)


def _non_negative(value: float) -> float:
    if value < 0:
        raise _fail("", f"must be >= 0, got {_num(value)}")
    return value


_WholeFrom0 = Annotated[int, _whole_at_least(0)]
_WholeFrom1 = Annotated[int, _whole_at_least(1)]
_NonNegative = Annotated[float, AfterValidator(_non_negative)]


def _suggest(word: str, options: list[str] | tuple[str, ...]) -> str | None:
    match = difflib.get_close_matches(word, list(options), n=1, cutoff=0.6)
    return match[0] if match else None


# --- models ------------------------------------------------------------------------------------


class _Model(BaseModel):
    model_config = ConfigDict(
        extra="forbid",
        strict=True,
        frozen=True,
        allow_inf_nan=False,
        populate_by_name=True,
    )


def _text_key(value: str, what: str = "a name") -> str:
    if not value.strip():
        raise _fail("", f"must be {what}, got an empty string")
    if any(ord(c) < 32 or ord(c) == 127 for c in value):
        raise _fail("", f"must be {what} on one line, got {_show(value)}")
    return value


class DataSection(_Model):
    """``[data]``: column names of the score tables and the value of ``label`` that means positive.

    ``weight = None`` means: use a column named ``weight`` if the table has one, else unweighted.
    """

    id: str = "id"
    label: str = "label"
    score: str = "score"
    weight: str | None = None
    positive: int | str | bool = 1

    @field_validator("id", "label", "score", "weight")
    @classmethod
    def _column_name(cls, value: str | None) -> str | None:
        return None if value is None else _text_key(value, "a column name")

    @field_validator("positive", mode="before")
    @classmethod
    def _positive_type(cls, value: Any) -> Any:
        if isinstance(value, bool | int | str):
            return value
        raise _fail("", f"must be an integer, a string or a boolean, got {_got(value)}")

    @model_validator(mode="after")
    def _distinct_columns(self) -> DataSection:
        seen: dict[str, str] = {}
        for key in ("id", "label", "score", "weight"):
            column = getattr(self, key)
            if column is None:
                continue
            if column in seen:
                raise _fail(key, f"names the same column as data.{seen[column]} ({_show(column)})")
            seen[column] = key
        return self

    def column_spec(self) -> ColumnSpec:
        """The :class:`gate.io.ColumnSpec` the io layer reads tables with."""
        return ColumnSpec(
            id=self.id, label=self.label, score=self.score, weight=self.weight, positive=self.positive
        )


class StatsSection(_Model):
    """``[stats]``: confidence level, resampling, the inconclusive rule and multiplicity adjustment."""

    confidence: float = 0.95
    resamples: int = 2000
    seed: _WholeFrom0 = DEFAULT_SEED
    on_inconclusive: Literal["estimate", "fail", "pass"] = "estimate"
    adjust: Literal["none", "holm"] = "none"
    interval: Literal["delong", "bootstrap"] = "delong"
    proportion_method: Literal["wilson", "clopper-pearson"] = "wilson"
    auc_scale: Literal["auc", "logit"] = "auc"

    @field_validator("confidence")
    @classmethod
    def _confidence(cls, value: float) -> float:
        if not 0.5 < value < 1.0:
            hint = "; write it as a fraction, e.g. 0.95" if 1.0 < value < 100.0 else ""
            raise _fail("", f"must be in (0.5, 1), got {_num(value)}{hint}")
        return value

    @field_validator("resamples")
    @classmethod
    def _resamples(cls, value: int) -> int:
        if not 100 <= value <= 100_000:
            raise _fail("", f"must be in 100..100000, got {value}")
        return value



class BaselineSection(_Model):
    """``[baseline]``: what to do when candidate and baseline ids differ."""

    on_mismatch: Literal["error", "intersect"] = "error"


class WatchSection(_Model):
    """``[watch]``: the CUSUM used by nightly trend watching over the run history.

    ``cusum_k`` (allowance) and ``cusum_h`` (decision interval) are in standard errors (each run's
    shortfall against the reference, standardised as :mod:`gate.watch` describes); the reference
    value is the mean of the first ``reference_runs`` runs of the window; no drift verdict before
    ``min_runs`` runs (default ``reference_runs + 1``).
    """

    cusum_k: _NonNegative = 0.5
    # h = 4 or 5 with k = 0.5 is common practice (Montgomery's textbook recommendation [memory]);
    # h = 4 reacts sooner. docs/policy.md gives the average run lengths both imply.
    cusum_h: float = 4.0
    reference_runs: _WholeFrom1 = 5
    min_runs: int = 6

    @model_validator(mode="before")
    @classmethod
    def _default_min_runs(cls, data: Any) -> Any:
        # min_runs follows reference_runs unless given: at least one run after the reference.
        if isinstance(data, dict) and "min_runs" not in data:
            reference = data.get("reference_runs", 5)
            if isinstance(reference, int) and not isinstance(reference, bool):
                data = {**data, "min_runs": reference + 1}
        return data

    @field_validator("cusum_h")
    @classmethod
    def _h(cls, value: float) -> float:
        if value <= 0:
            raise _fail("", f"must be > 0, got {_num(value)}")
        return value

    @model_validator(mode="after")
    def _min_runs(self) -> WatchSection:
        if self.min_runs <= self.reference_runs:
            raise _fail(
                "min_runs",
                f"must exceed watch.reference_runs ({self.reference_runs}), got {self.min_runs}",
            )
        return self


class Check(_Model):
    """One ``[[check]]``: a metric, its parameters, a floor and/or a non-regression margin.

    Higher-is-better metrics take ``at_least`` / ``max_drop``; lower-is-better metrics take
    ``at_most`` / ``max_rise``. With ``by`` the check is repeated in every slice of that column;
    slices with fewer than ``min_positives`` positives are skipped (and reported as skipped).
    """

    name: str = ""  # "" means: derive from metric and parameters (filled in by validation)
    metric: Metric
    fpr: float | None = None
    max_fpr: float | None = None
    recall: float | None = None
    threshold: float | None = None
    cost_fp: _NonNegative | None = None
    cost_fn: _NonNegative | None = None
    at_least: float | None = None
    at_most: _NonNegative | None = None
    max_drop: float | None = None
    max_rise: _NonNegative | None = None
    by: str | None = None
    min_positives: _WholeFrom1 = DEFAULT_MIN_POSITIVES

    @field_validator("name", mode="before")
    @classmethod
    def _name(cls, value: Any) -> Any:
        if isinstance(value, str):
            return _text_key(value, "a name")
        return value

    @field_validator("by")
    @classmethod
    def _by(cls, value: str | None) -> str | None:
        return None if value is None else _text_key(value, "a column name")

    @field_validator("metric", mode="before")
    @classmethod
    def _metric(cls, value: Any) -> Any:
        if not isinstance(value, str):
            raise _fail("", f"must be a string naming a metric, got {_got(value)}")
        if value not in METRIC_PARAMS:
            guess = _METRIC_SHORTHANDS.get(value.lower()) or _suggest(value, METRICS)
            hint = f"; did you mean {guess!r}?" if guess else ""
            raise _fail(
                "", f"unknown metric {_show(value)}{hint} (one of: {', '.join(METRICS)})"
            )
        return value

    @field_validator("fpr", "recall")
    @classmethod
    def _rate_open(cls, value: float | None) -> float | None:
        if value is not None and not 0.0 < value < 1.0:
            raise _fail("", f"must be in (0, 1), got {_num(value)}")
        return value

    @field_validator("max_fpr")
    @classmethod
    def _max_fpr(cls, value: float | None) -> float | None:
        if value is not None and not 0.0 < value <= 1.0:
            raise _fail("", f"must be in (0, 1], got {_num(value)}")
        return value

    @field_validator("at_least", "max_drop")
    @classmethod
    def _unit_closed(cls, value: float | None) -> float | None:
        if value is not None and not 0.0 <= value <= 1.0:
            raise _fail("", f"must be in [0, 1], got {_num(value)}")
        return value

    @model_validator(mode="after")
    def _consistent(self) -> Check:
        metric = self.metric
        wanted = METRIC_PARAMS[metric]
        for key in wanted:
            if getattr(self, key) is None:
                raise _fail(key, f"required by metric {metric!r} (it takes: {', '.join(wanted)})")
        for key in _ALL_PARAMS:
            if key not in wanted and getattr(self, key) is not None:
                takes = f"it takes: {', '.join(wanted)}" if wanted else "it takes no parameters"
                raise _fail(key, f"not a parameter of metric {metric!r} ({takes})")
        if metric == "expected_cost" and self.cost_fp == 0 and self.cost_fn == 0:
            raise _fail("cost_fn", "cost_fp and cost_fn are both 0; at least one must be > 0")

        higher = metric in HIGHER_IS_BETTER
        wrong = {"at_most": "at_least", "max_rise": "max_drop"} if higher else {
            "at_least": "at_most",
            "max_drop": "max_rise",
        }
        direction = "higher" if higher else "lower"
        for key, right in wrong.items():
            if getattr(self, key) is not None:
                raise _fail(key, f"{metric} is {direction}-is-better; use {right!r} instead")
        floor_key, margin_key = ("at_least", "max_drop") if higher else ("at_most", "max_rise")
        if getattr(self, floor_key) is None and getattr(self, margin_key) is None:
            raise _fail(
                "",
                f"needs a floor ({floor_key}), a non-regression margin ({margin_key}), or both",
            )
        if metric != "expected_cost":  # rates, areas and the Brier score live in [0, 1]
            for key in ("at_most", "max_rise"):
                value = getattr(self, key)
                if value is not None and value > 1.0:
                    raise _fail(key, f"must be in [0, 1] for {metric}, got {_num(value)}")
        if "min_positives" in self.model_fields_set and self.by is None:
            raise _fail("min_positives", "only applies to sliced checks; set 'by' or remove it")
        if not self.name:
            # The model is frozen; filling in the derived name during validation is the one write.
            object.__setattr__(self, "name", self.default_name())
        return self

    # --- derived views used by evaluate and report ---

    def default_name(self) -> str:
        """The name used when the policy gives none, e.g. ``recall_at_fpr(0.05)``."""
        params = self.params
        if len(params) == 1:
            name = f"{self.metric}({_num(next(iter(params.values())))})"
        elif params:
            name = f"{self.metric}({', '.join(f'{k}={_num(v)}' for k, v in params.items())})"
        else:
            name = self.metric
        if self.by is not None:
            name += f" by {self.by}"
        return name

    @property
    def params(self) -> dict[str, float]:
        """The metric's parameters only, in the metric's order, e.g. ``{"fpr": 0.05}``."""
        out: dict[str, float] = {}
        for key in METRIC_PARAMS[self.metric]:
            value = getattr(self, key)
            if value is not None:
                out[key] = float(value)
        return out

    @property
    def higher_is_better(self) -> bool:
        return self.metric in HIGHER_IS_BETTER

    @property
    def floor(self) -> Bound | None:
        """``at_least`` (higher-is-better) or ``at_most`` (lower-is-better), if set."""
        return self._first_bound("at_least", "at_most")

    @property
    def margin(self) -> Bound | None:
        """``max_drop`` (higher-is-better) or ``max_rise`` (lower-is-better), if set."""
        return self._first_bound("max_drop", "max_rise")

    def _first_bound(self, *kinds: BoundKind) -> Bound | None:
        for kind in kinds:
            value = getattr(self, kind)
            if value is not None:
                return Bound(kind, float(value))
        return None


class _Document(_Model):
    """The TOML document itself (no provenance fields, so a policy cannot set them)."""

    data: DataSection = Field(default_factory=DataSection)
    stats: StatsSection = Field(default_factory=StatsSection)
    baseline: BaselineSection = Field(default_factory=BaselineSection)
    watch: WatchSection = Field(default_factory=WatchSection)
    # strict=False only so a TOML array (a list) becomes a tuple; each Check stays strict.
    checks: tuple[Check, ...] = Field(default=(), alias="check", strict=False)

    @model_validator(mode="after")
    def _whole(self) -> _Document:
        if not self.checks:
            raise _fail("check", "the policy has no [[check]]; add at least one")
        first_with: dict[str, int] = {}
        reserved = {
            self.data.id: "data.id",
            self.data.label: "data.label",
            self.data.score: "data.score",
        }
        if self.data.weight is not None:
            reserved[self.data.weight] = "data.weight"
        for i, check in enumerate(self.checks, start=1):
            if check.name in first_with:
                raise _fail(
                    f"check[{i}].name",
                    f"duplicate check name {_show(check.name)} (also check[{first_with[check.name]}]);"
                    " give each check a unique name",
                )
            first_with[check.name] = i
            if check.by is not None and check.by in reserved:
                raise _fail(
                    f"check[{i}].by",
                    f"{_show(check.by)} is the {reserved[check.by]} column; slice by another column",
                )
        return self


class Policy(_Document):
    """A validated policy plus its provenance: ``source`` (the path as given) and ``hash``
    (sha256 hex of the file bytes, or of the UTF-8 text for :func:`parse_policy`)."""

    source: str = "<policy>"
    hash: str = ""

    @property
    def needs_baseline(self) -> bool:
        """True when any check has a non-regression margin (max_drop / max_rise)."""
        return any(check.margin is not None for check in self.checks)

    @property
    def by_columns(self) -> tuple[str, ...]:
        """The slice columns the checks use, in first-use order, without repeats."""
        seen: dict[str, None] = {}
        for check in self.checks:
            if check.by is not None:
                seen.setdefault(check.by, None)
        return tuple(seen)


# --- translating pydantic errors into one-line PolicyErrors -------------------------------------

_SECTION_MODELS: dict[str, type[BaseModel]] = {
    "data": DataSection,
    "stats": StatsSection,
    "baseline": BaselineSection,
    "watch": WatchSection,
    "check": Check,
}
_TOP_KEYS: tuple[str, ...] = ("data", "stats", "baseline", "watch", "check")
_SECTION_TITLES = {
    "data": "[data]",
    "stats": "[stats]",
    "baseline": "[baseline]",
    "watch": "[watch]",
    "check": "[[check]]",
}
_BARE_KEY = re.compile(r"^[A-Za-z0-9_-]+$")


def _keys_of(model: type[BaseModel]) -> list[str]:
    return [field.alias or name for name, field in model.model_fields.items()]


def _format_path(loc: tuple[Any, ...]) -> str:
    parts: list[str] = []
    for item in loc:
        if isinstance(item, int):
            parts.append(f"[{item + 1}]")  # 1-based: the first [[check]] is check[1]
        else:
            text = str(item) if _BARE_KEY.match(str(item)) else json.dumps(str(item))
            parts.append(("." if parts else "") + text)
    return "".join(parts)


def _section_of(loc: tuple[Any, ...]) -> str | None:
    """The section a location belongs to ("" = top level), or None when unknown."""
    if len(loc) == 1:
        return ""
    head = loc[0]
    if head == "check" and len(loc) == 3 and isinstance(loc[1], int):
        return "check"
    if head in ("data", "stats", "baseline", "watch") and len(loc) == 2:
        return str(head)
    return None


def _unknown_key_message(loc: tuple[Any, ...]) -> str:
    key = str(loc[-1])
    section = _section_of(loc)
    if section is None:
        return "unknown key"
    valid = list(_TOP_KEYS) if section == "" else _keys_of(_SECTION_MODELS[section])
    for other, model in _SECTION_MODELS.items():
        if other != section and key in _keys_of(model):
            return f"unknown key here; {key!r} belongs in {_SECTION_TITLES[other]}"
    guess = _suggest(key, valid)
    if guess:
        return f"unknown key; did you mean {guess!r}?"
    return f"unknown key; valid keys: {', '.join(valid)}"


_TYPE_WORDS = {
    "float_type": "a number",
    "float_parsing": "a number",
    "int_type": "an integer",
    "int_parsing": "an integer",
    "int_from_float": "an integer",
    "string_type": "a string",
    "bool_type": "a boolean (true or false)",
    "tuple_type": "an array",
    "list_type": "an array",
}


def _error_message(err: dict[str, Any]) -> tuple[str, str]:
    """(key path, message) for one pydantic error."""
    loc = tuple(err.get("loc", ()))
    path, message = _located_message(err, loc)
    return path if path is not None else _format_path(loc), message


def _located_message(err: dict[str, Any], loc: tuple[Any, ...]) -> tuple[str | None, str]:
    kind = err.get("type", "")
    value = err.get("input")
    ctx = err.get("ctx") or {}
    if kind == "policy":
        key = str(ctx.get("key", ""))
        path = _format_path(loc)
        if key:
            path = f"{path}.{key}" if path and not key.startswith("[") else (path + key)
        return path, str(ctx.get("message", err.get("msg", "")))
    if kind == "extra_forbidden":
        return None, _unknown_key_message(loc)
    if kind == "missing":
        if loc and loc[-1] == "metric":
            return None, f"missing; every check needs a metric (one of: {', '.join(METRICS)})"
        return None, "missing"
    if kind == "finite_number":
        return None, f"must be a finite number, got {_show(value)}"
    if kind == "literal_error":
        expected = re.findall(r"'([^']*)'", str(ctx.get("expected", "")))
        guess = _suggest(value, expected) if isinstance(value, str) else None
        hint = f"; did you mean {guess!r}?" if guess else ""
        options = ", ".join(repr(e) for e in expected)
        return None, f"must be one of {options}, got {_got(value)}{hint}"
    if kind in ("model_type", "model_attributes_type", "dict_type"):
        head = loc[0] if loc else ""
        if len(loc) == 1 and str(head) in _SECTION_TITLES:
            return None, f"must be a table ({_SECTION_TITLES[str(head)]}), got {_got(value)}"
        if len(loc) == 2 and head == "check":
            return None, f"must be a table ([[check]]), got {_got(value)}"
        return None, f"must be a table, got {_got(value)}"
    if kind in ("tuple_type", "list_type") and loc == ("check",):
        if isinstance(value, dict):
            return None, "must be an array of tables: write [[check]], not [check]"
        return None, f"must be an array of tables ([[check]]), got {_got(value)}"
    if kind in _TYPE_WORDS:
        return None, f"must be {_TYPE_WORDS[kind]}, got {_got(value)}"
    return None, str(err.get("msg", "invalid value"))


def _policy_error(source: str, exc: ValidationError) -> PolicyError:
    errors = exc.errors(include_url=False)
    if not errors:  # pragma: no cover - pydantic always reports at least one
        return PolicyError(f"{source}: invalid policy")
    path, message = _error_message(errors[0])
    line = f"{source}: {path}: {message}" if path else f"{source}: {message}"
    return PolicyError(" ".join(line.split()))


_TOML_WHERE = re.compile(r"\s*\(at line (\d+), column (\d+)\)\s*$")
_TOML_END = re.compile(r"\s*\(at end of document\)\s*$")


def _toml_error(source: str, exc: tomllib.TOMLDecodeError) -> PolicyError:
    text = str(exc)
    where = _TOML_WHERE.search(text)
    if where:
        detail = text[: where.start()]
        place = f"line {where.group(1)}, column {where.group(2)}"
    else:
        end = _TOML_END.search(text)
        detail = text[: end.start()] if end else text
        place = "at end of file"
    return PolicyError(" ".join(f"{source}: {place}: invalid TOML: {detail}".split()))


def _parse(text: str, *, source: str, digest: str) -> Policy:
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise _toml_error(source, exc) from None
    if "checks" in raw:  # the field's Python name; only the TOML spelling [[check]] is accepted
        raise PolicyError(f"{source}: checks: unknown key; checks are written as [[check]] tables")
    try:
        document = _Document.model_validate(raw)
        return Policy(
            data=document.data,
            stats=document.stats,
            baseline=document.baseline,
            watch=document.watch,
            checks=document.checks,
            source=source,
            hash=digest,
        )
    except ValidationError as exc:
        raise _policy_error(source, exc) from None


# --- public entry points -----------------------------------------------------------------------


def parse_policy(text: str, *, source: str = "<policy>") -> Policy:
    """Parse and validate policy ``text``; ``hash`` is the sha256 of its UTF-8 encoding.

    Raises
    ------
    PolicyError
        One line naming ``source`` and the key path (check indices 1-based).
    """
    digest = hashlib.sha256(text.encode("utf-8")).hexdigest()
    return _parse(text, source=source, digest=digest)


def load_policy(path: str | os.PathLike[str]) -> Policy:
    """Read, parse and validate the policy file at ``path``.

    ``Policy.source`` is the path as given; ``Policy.hash`` is the sha256 hex of the file bytes.

    Raises
    ------
    PolicyError
        Missing or unreadable file, non-UTF-8 text, TOML syntax (with line and column), or an
        invalid key (with its path).
    """
    source = os.fspath(path)
    try:
        data = Path(source).read_bytes()
    except FileNotFoundError:
        raise PolicyError(f"{source}: policy file not found") from None
    except IsADirectoryError:
        raise PolicyError(f"{source}: is a directory, not a policy file") from None
    except OSError as exc:
        raise PolicyError(f"{source}: cannot read policy file: {exc.strerror or exc}") from None
    try:
        text = data.decode("utf-8-sig")  # tolerate the byte-order mark some editors write
    except UnicodeDecodeError as exc:
        raise PolicyError(f"{source}: not UTF-8 text (invalid byte at offset {exc.start})") from None
    return _parse(text, source=source, digest=hashlib.sha256(data).hexdigest())


def starter_policy_text() -> str:
    """The commented starter policy shipped in ``gate/data/starter.toml``."""
    from importlib.resources import files

    return files("gate").joinpath("data", "starter.toml").read_text(encoding="utf-8")


def write_starter_policy(path: str | os.PathLike[str]) -> Path:
    """Write the starter policy to ``path`` atomically; never overwrite an existing file.

    Returns the path written.

    Raises
    ------
    PolicyError
        ``path`` already exists, or its directory is missing or not writable.
    """
    from importlib.resources import files

    target = Path(os.fspath(path))
    content = files("gate").joinpath("data", "starter.toml").read_bytes()
    if target.exists() or target.is_symlink():
        raise PolicyError(f"{os.fspath(path)}: already exists; not overwriting it")
    directory = target.parent if str(target.parent) else Path(".")
    if not directory.is_dir():
        raise PolicyError(f"{os.fspath(path)}: directory {os.fspath(directory)} does not exist")
    try:
        write_bytes_atomic(target, content, mode=0o644, exclusive=True)
    except FileExistsError:
        raise PolicyError(f"{os.fspath(path)}: already exists; not overwriting it") from None
    except OSError as exc:
        raise PolicyError(f"{os.fspath(path)}: cannot write: {exc.strerror or exc}") from None
    return target
