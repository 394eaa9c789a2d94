"""The JSON report: the fixed keys of DESIGN.md plus everything the markdown summary shows.

Deterministic: keys in a fixed order (dictionaries that come from the input, such as metric
parameters and notes, are sorted by key), floats as their shortest round-trip ``repr``,
non-finite floats as ``null``, ASCII-only output, no timestamps.

Schema 1, top level (in this order): ``schema``, ``verdict``, ``counts``, ``checks``,
``warnings``, ``notes``, ``methods``, ``confidence``, ``resamples``, ``seed``,
``on_inconclusive``, ``adjust``, ``policy_source``, ``policy_hash``, ``candidate_source``,
``baseline_source``, ``fingerprint``, ``n``, ``n_pos``, ``n_neg``.

Each check: ``name``, ``metric``, ``params``, ``slice`` (null or {``column``, ``value``}),
``outcome``, ``passed``, ``value``, ``interval`` ([low, high] or null), ``baseline_value``,
``delta``, ``delta_interval`` (these three null for checks without a baseline), ``floor`` and
``margin`` (null or {``kind``, ``bound``, ``outcome``, ``estimate``, ``interval``, ``method``,
``p_value``, ``adjusted_p_value``}), ``n``, ``n_pos``, ``n_neg``, ``method``, ``threshold``,
``reason``, ``warnings`` (the check's own). The top-level ``warnings`` are the run's, as the
markdown lists them (each check warning once, as ``label: text``); ``notes`` are all the notes.
"""

from __future__ import annotations

import json as _json
import math
import numbers
from typing import Any

from gate.report import _common as c
from gate.results import CheckResult, Decision, Result, SliceKey
from gate.stats.interval import Interval

__all__ = ["SCHEMA_VERSION", "render_json", "report_dict"]

SCHEMA_VERSION = 1


def _float(x: Any) -> float | None:
    if x is None:
        return None
    value = float(x)
    return value if math.isfinite(value) else None


def _int(x: Any) -> int:
    if isinstance(x, bool) or not isinstance(x, numbers.Integral):
        raise TypeError(f"expected an integer, got {x!r}")
    return int(x)


def _interval(interval: Interval | None) -> list[float | None] | None:
    if interval is None:
        return None
    return [_float(interval.low), _float(interval.high)]


def _slice(key: SliceKey | None) -> dict[str, str] | None:
    return None if key is None else {"column": str(key.column), "value": str(key.value)}


def _decision(decision: Decision | None) -> dict[str, Any] | None:
    if decision is None:
        return None
    return {
        "kind": decision.bound.kind,
        "bound": _float(decision.bound.value),
        "outcome": decision.outcome,
        "estimate": _float(decision.estimate),
        "interval": _interval(decision.interval),
        "method": decision.interval.method,
        "p_value": _float(decision.p_value),
        "adjusted_p_value": _float(decision.adjusted_p_value),
    }


def _check(check: CheckResult, result: Result) -> dict[str, Any]:
    return {
        "name": str(check.name),
        "metric": str(check.metric),
        "params": {str(k): _float(v) for k, v in sorted(check.params.items())},
        "slice": _slice(check.slice),
        "outcome": check.outcome,
        "passed": bool(check.passed),
        "value": _float(check.value),
        "interval": _interval(check.interval),
        "baseline_value": _float(check.baseline_value),
        "delta": _float(check.delta),
        "delta_interval": _interval(check.delta_interval),
        "floor": _decision(check.floor),
        "margin": _decision(check.margin),
        "n": _int(check.n),
        "n_pos": _int(check.n_pos),
        "n_neg": _int(check.n_neg),
        "method": str(check.method),
        "threshold": _float(check.threshold),
        "reason": str(check.reason),
        "warnings": [str(w) for w in check.warnings],
    }


def report_dict(result: Result) -> dict[str, Any]:
    """The JSON report as plain Python objects (dict / list / str / int / float / bool / None)."""
    k = c.counts(result)
    return {
        "schema": SCHEMA_VERSION,
        "verdict": result.verdict,
        "counts": {
            "total": k.total,
            "pass": k.passed_outcome,
            "fail": k.failed_outcome,
            "inconclusive": k.inconclusive,
            "inconclusive_passed": k.inconclusive_passed,
            "skipped": k.skipped,
            "not_passed": k.not_passed,
        },
        "checks": [_check(check, result) for check in result.checks],
        "warnings": [str(w) for w in c.run_warnings(result)],
        "notes": {str(key): str(value) for key, value in sorted(result.notes.items())},
        "methods": c.methods_line(result),
        "confidence": _float(result.confidence),
        "resamples": _int(result.resamples),
        "seed": _int(result.seed),
        "on_inconclusive": str(result.on_inconclusive),
        "adjust": str(result.adjust),
        "policy_source": str(result.policy_source),
        "policy_hash": str(result.policy_hash),
        "candidate_source": str(result.candidate_source),
        "baseline_source": None if result.baseline_source is None else str(result.baseline_source),
        "fingerprint": str(result.fingerprint),
        "n": _int(result.n),
        "n_pos": _int(result.n_pos),
        "n_neg": _int(result.n_neg),
    }


def render_json(result: Result) -> str:
    """Render ``result`` as the JSON report (schema 1), indented, ending in a newline.

    Byte-identical for equal inputs; ``NaN`` and infinities are written as ``null``; non-ASCII
    text is written as ``\\u`` escapes so the file is plain ASCII.
    """
    text = _json.dumps(report_dict(result), indent=2, ensure_ascii=True, allow_nan=False)
    return text + "\n"
