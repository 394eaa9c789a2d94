"""Reports over a :class:`gate.watch.TrendResult`: a markdown summary and a JSON document.

The markdown follows the ``check`` summary: a heading with the verdict (ALARM / NO ALARM), one
line of counts, one line naming the window, a table with one row per check and slice (runs, last
value and interval, reference, drift statistic, alarms), then the alarms one per line, the notes
and the methods line. Untrusted text (check names, slice values, run labels, notes) goes through
:func:`gate.report.escape.escape_markdown`.

The JSON is deterministic like the check report's: keys in a fixed order, floats as their
shortest round-trip ``repr``, non-finite floats as ``null``, ASCII only, times as ISO 8601 UTC.
"""

from __future__ import annotations

import json as _json
from datetime import datetime, timezone
from typing import Any

from gate.report import _common as c
from gate.report.escape import escape_markdown
from gate.report.json import _float, _interval, _slice
from gate.report.markdown import _esc, _name_label, _section
from gate.watch import Alarm, Series, TrendPoint, TrendResult

__all__ = ["TREND_SCHEMA_VERSION", "render_trend_json", "render_trend_markdown", "trend_dict"]

TREND_SCHEMA_VERSION = 1


def _when(moment: datetime) -> str:
    return moment.astimezone(timezone.utc).strftime("%Y-%m-%d %H:%M UTC")


def _iso(moment: datetime) -> str:
    return moment.astimezone(timezone.utc).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


def _series_label(series: Series) -> str:
    """Escaped ``name`` or ``name [column = value]``."""
    return _name_label(series.name, series.slice)


def _run_ref(run_id: int, label: str | None, moment: datetime | None = None) -> str:
    """``run 12 (label abc, 2024-06-01 02:00 UTC)`` with the label escaped."""
    parts = []
    if label:
        parts.append(f"label {_esc(label, cell=True)}")
    if moment is not None:
        parts.append(_when(moment))
    return f"run {run_id}" + (f" ({', '.join(parts)})" if parts else "")


def _point(series: Series, run_id: int | None) -> TrendPoint | None:
    for point in series.points:
        if point.run_id == run_id:
            return point
    return None


def _drift_cell(series: Series) -> str:
    drift = series.drift
    if drift.status == "too few runs":
        return "too few runs"
    statistic = f"{drift.statistic:.2f}" if drift.statistic is not None else c.MISSING
    if drift.status == "fired":
        return f"{statistic} (fired at run {drift.fired_run_id})"
    return f"{statistic} (peak {drift.peak:.2f})" if drift.peak is not None and drift.peak > 0 else statistic


def _alarms_cell(series: Series) -> str:
    if not series.alarms:
        return "none"
    parts = []
    drift = [a for a in series.alarms if a.kind == "drift"]
    bound = [a for a in series.alarms if a.kind == "bound"]
    if drift:
        parts.append(f"DRIFT since run {drift[0].onset_run_id}")
    if bound:
        runs = sorted({a.run_id for a in bound})
        shown = ", ".join(str(r) for r in runs[-3:])
        more = f" and {len(runs) - 3} more" if len(runs) > 3 else ""
        parts.append(f"BOUND failed in run{'s' if len(runs) > 1 else ''} {shown}{more}")
    return "; ".join(parts)


def _value_cell(point: TrendPoint, confidence: float | None) -> str:
    text = c.fmt_value(point.value)
    if point.value is None:
        return f"{text} ({point.outcome})"
    if point.interval is not None:
        text += f" {c.fmt_interval(point.interval)}"
        if confidence is None or abs(point.interval.confidence - confidence) > 1e-12:
            text += f" ({c.fmt_percent(point.interval.confidence)})"
    return text


def _common_confidence(trend: TrendResult) -> float | None:
    levels = {s.points[-1].interval.confidence for s in trend.series if s.points[-1].interval is not None}
    return levels.pop() if len(levels) == 1 else None


def _row(series: Series, confidence: float | None) -> str:
    usable = sum(1 for p in series.points if p.role != "left out")
    runs = f"{len(series.points)}" + (f" ({usable} usable)" if usable != len(series.points) else "")
    reference = c.fmt_value(series.drift.reference)
    cells = [
        _esc(series.name, cell=True),
        _esc(c.metric_params_text(series.metric, series.params), cell=True),
        _esc(c.slice_text(series.slice), cell=True),
        runs,
        _value_cell(series.points[-1], confidence),  # the latest run, even when it was skipped
        reference,
        _drift_cell(series),
        _alarms_cell(series),
    ]
    return "| " + " | ".join(cells) + " |"


def _alarm_line(series: Series, alarm: Alarm, h: float) -> str:
    label = _series_label(series)
    if alarm.kind == "drift":
        onset = _point(series, alarm.onset_run_id)
        began = _run_ref(alarm.onset_run_id or 0, onset.label if onset else None, onset.run_time if onset else None)
        return (
            f"{label}: DRIFT: CUSUM {alarm.statistic:.2f} > h = {c.fmt_param(h)} at "
            f"{_run_ref(alarm.run_id, alarm.label, alarm.run_time)}; the slide began at {began}; "
            f"reference {c.fmt_value(series.drift.reference)} "
            f"({'higher' if series.higher_is_better else 'lower'} is better)"
        )
    assert alarm.bound is not None
    role = "difference" if alarm.bound.kind in ("max_drop", "max_rise") else "value"
    return (
        f"{label}: BOUND: {_run_ref(alarm.run_id, alarm.label, alarm.run_time)}: {role} "
        f"{c.fmt_signed(alarm.estimate) if role == 'difference' else c.fmt_value(alarm.estimate)} "
        f"{c.fmt_interval(alarm.interval, signed=role == 'difference')} wholly on the failing side of "
        f"{c.bound_text(alarm.bound)}"
    )


def _counts(trend: TrendResult) -> tuple[int, int, int]:
    drift = sum(1 for _, a in trend.alarms if a.kind == "drift")
    bound = sum(1 for _, a in trend.alarms if a.kind == "bound")
    return sum(1 for s in trend.series if s.alarms), drift, bound


def render_trend_markdown(trend: TrendResult, *, title: str | None = None) -> str:
    """Render ``trend`` as a markdown summary; the alarm verdict is on the first line.

    Parameters
    ----------
    trend : the trend result of :func:`gate.watch.compute_trend`.
    title : optional heading text (untrusted: escaped); default ``rankgate trend``.

    Returns
    -------
    str
        GitHub-flavoured markdown ending in a newline; byte-identical for equal inputs.
    """
    heading = _esc(title) if title is not None else "rankgate trend"
    verdict = "ALARM" if trend.alarmed else "NO ALARM"
    alarmed_series, drift, bound = _counts(trend)
    n_series = len(trend.series)
    plural = "" if n_series == 1 else "s"
    if trend.alarmed:
        counts = (
            f"**ALARM**: {alarmed_series} of {n_series} check result{plural} alarmed over "
            f"{trend.n_runs} run{'' if trend.n_runs == 1 else 's'}: {drift} drift, {bound} bound."
        )
    else:
        counts = (
            f"**NO ALARM**: {n_series} check result{plural} over {trend.n_runs} "
            f"run{'' if trend.n_runs == 1 else 's'}: no drift, no bound failed."
        )
    window = (
        f"Window: runs {trend.first_run_id} to {trend.last_run_id}, "
        f"{_when(trend.first_run_time)} to {_when(trend.last_run_time)}."
    )
    lines = [f"### {heading}: {verdict}", "", counts, "", window, ""]

    confidence = _common_confidence(trend)
    ci = f" [{c.fmt_percent(confidence)} CI]" if confidence is not None else " [CI]"
    if trend.series:
        lines.append(
            f"| check | metric | slice | runs | last value{ci} | reference | CUSUM (h = {c.fmt_param(trend.cusum_h)}) "
            "| alarms |"
        )
        lines.append("| --- | --- | --- | ---: | --- | --- | --- | --- |")
        lines.extend(_row(series, confidence) for series in trend.series)
        lines.append("")
    else:
        lines.extend(["No checks in the window.", ""])

    alarm_lines = [_alarm_line(series, alarm, trend.cusum_h) for series, alarm in trend.alarms]
    lines.extend(_section("Alarms", alarm_lines))

    notes = [f"{_series_label(s)}: {_esc(note)}" for s in trend.series for note in s.notes]
    notes.extend(_esc(note) for note in trend.notes)
    lines.extend(_section("Notes", notes))
    lines.append(f"Method: {escape_markdown(trend.method)}.")  # our own text: never cut
    return "\n".join(lines) + "\n"


# --- JSON ------------------------------------------------------------------------------------------


def _point_dict(point: TrendPoint) -> dict[str, Any]:
    return {
        "run_id": int(point.run_id),
        "run_time": _iso(point.run_time),
        "label": point.label,
        "outcome": point.outcome,
        "value": _float(point.value),
        "interval": _interval(point.interval),
        "confidence": None if point.interval is None else _float(point.interval.confidence),
        "method": None if point.interval is None else point.interval.method,
        "n_pos": int(point.n_pos),
        "baseline_value": _float(point.baseline_value),
        "delta": _float(point.delta),
        "delta_interval": _interval(point.delta_interval),
        "se": _float(point.se),
        "role": point.role,
        "z": _float(point.z),
        "cusum": _float(point.cusum),
    }


def _alarm_dict(alarm: Alarm) -> dict[str, Any]:
    return {
        "kind": alarm.kind,
        "run_id": int(alarm.run_id),
        "run_time": _iso(alarm.run_time),
        "label": alarm.label,
        "message": alarm.message,
        "bound": None if alarm.bound is None else {"kind": alarm.bound.kind, "value": _float(alarm.bound.value)},
        "interval": _interval(alarm.interval),
        "estimate": _float(alarm.estimate),
        "onset_run_id": alarm.onset_run_id,
        "statistic": _float(alarm.statistic),
    }


def _series_dict(series: Series) -> dict[str, Any]:
    drift = series.drift
    return {
        "name": str(series.name),
        "metric": str(series.metric),
        "params": {str(k): _float(v) for k, v in sorted(series.params.items())},
        "slice": _slice(series.slice),
        "higher_is_better": bool(series.higher_is_better),
        "alarmed": bool(series.alarms),
        "runs": len(series.points),
        "usable_runs": sum(1 for p in series.points if p.role != "left out"),
        "drift": {
            "status": drift.status,
            "reference": _float(drift.reference),
            "reference_se": _float(drift.reference_se),
            "reference_run_ids": list(drift.reference_run_ids),
            "fired_run_id": drift.fired_run_id,
            "onset_run_id": drift.onset_run_id,
            "statistic": _float(drift.statistic),
            "peak": _float(drift.peak),
        },
        "alarms": [_alarm_dict(a) for a in series.alarms],
        "notes": list(series.notes),
        "points": [_point_dict(p) for p in series.points],
    }


def trend_dict(trend: TrendResult) -> dict[str, Any]:
    """The JSON document as plain Python data (see :func:`render_trend_json`)."""
    alarmed_series, drift, bound = _counts(trend)
    return {
        "schema": TREND_SCHEMA_VERSION,
        "alarmed": bool(trend.alarmed),
        "counts": {
            "series": len(trend.series),
            "alarmed_series": alarmed_series,
            "drift_alarms": drift,
            "bound_alarms": bound,
        },
        "runs": {
            "count": int(trend.n_runs),
            "first_run_id": int(trend.first_run_id),
            "last_run_id": int(trend.last_run_id),
            "first_run_time": _iso(trend.first_run_time),
            "last_run_time": _iso(trend.last_run_time),
        },
        "settings": {
            "cusum_k": _float(trend.cusum_k),
            "cusum_h": _float(trend.cusum_h),
            "reference_runs": int(trend.reference_runs),
            "min_runs": int(trend.min_runs),
        },
        "series": [_series_dict(s) for s in trend.series],
        "notes": list(trend.notes),
        "method": trend.method,
    }


def render_trend_json(trend: TrendResult) -> str:
    """Render ``trend`` as JSON (schema 1), ending in a newline; byte-identical for equal inputs.

    Top level, in order: ``schema``, ``alarmed``, ``counts``, ``runs``, ``settings``, ``series``,
    ``notes``, ``method``. Each series: ``name``, ``metric``, ``params``, ``slice`` (null or
    {``column``, ``value``}), ``higher_is_better``, ``alarmed``, ``runs``, ``usable_runs``,
    ``drift`` ({``status`` "fired" / "quiet" / "too few runs", ``reference``, ``reference_se``,
    ``reference_run_ids``, ``fired_run_id``, ``onset_run_id``, ``statistic``, ``peak``}),
    ``alarms``, ``notes`` and ``points`` (one per run: value, interval, se, z, cusum, role, ...).
    """
    return _json.dumps(trend_dict(trend), indent=2, ensure_ascii=True, allow_nan=False) + "\n"
