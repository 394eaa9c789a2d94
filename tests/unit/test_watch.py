"""Trend watching (gate/watch.py) and its reports (gate/report/trend.py).

Hand-computed series: the CUSUM values below were worked out by hand (pen and paper, then
re-checked line by line in the comments); no textbook table is reproduced here, because none
is at hand to cite exactly.
"""

from __future__ import annotations

import json
import math
import re
from datetime import datetime, timedelta, timezone

import pytest

from gate.errors import HistoryError, PolicyError
from gate.history import StoredRun
from gate.report.trend import render_trend_json, render_trend_markdown
from gate.results import Bound, CheckResult, Decision, Result, SliceKey
from gate.stats.interval import Interval
from gate.watch import compute_trend, cusum, standard_error

Z975 = 1.959963984540054  # z(0.975), REFERENCES.md conventions
T0 = datetime(2024, 5, 1, 2, 0, tzinfo=timezone.utc)


def check(
    value: float | None,
    se: float = 0.01,
    *,
    name: str = "auc holds",
    metric: str = "roc_auc",
    params: dict[str, float] | None = None,
    slice_: SliceKey | None = None,
    kind: str = "at_least",
    bound: float = 0.5,
    outcome: str | None = None,
    confidence: float = 0.95,
    margin: Decision | None = None,
) -> CheckResult:
    """A check whose interval is the Wald interval value +/- z SE at ``confidence``."""
    if value is None:
        return CheckResult(
            name=name, metric=metric, params=params or {}, slice=slice_, outcome="skipped",
            passed=True, value=None, interval=None, reason="too few positives",
        )
    z = {0.95: Z975}.get(confidence) or __import__("statistics").NormalDist().inv_cdf((1 + confidence) / 2)
    iv = Interval(value - z * se, value + z * se, confidence, "delong")
    if outcome is None:
        higher = kind in ("at_least", "max_drop")
        failing = iv.high < bound if higher else iv.low > bound
        passing = iv.low >= bound if higher else iv.high <= bound
        outcome = "fail" if failing else "pass" if passing else "inconclusive"
    return CheckResult(
        name=name, metric=metric, params=params or {}, slice=slice_, outcome=outcome,  # type: ignore[arg-type]
        passed=outcome != "fail", value=value, interval=iv, n=1000, n_pos=80, n_neg=920,
        floor=Decision(Bound(kind, bound), outcome, value, iv),  # type: ignore[arg-type]
        margin=margin, method="delong",
    )


def run(run_id: int, *checks: CheckResult, fingerprint: str = "f" * 64, label: str | None = None) -> StoredRun:
    result = Result(
        verdict="fail" if any(not c.passed for c in checks) else "pass",
        checks=tuple(checks), confidence=0.95, resamples=0, seed=0, on_inconclusive="estimate",
        adjust="none", policy_source="p.toml", policy_hash="a" * 64, candidate_source="c.csv",
        baseline_source=None, fingerprint=fingerprint, n=1000, n_pos=80, n_neg=920,
    )
    return StoredRun(run_id=run_id, run_time=T0 + timedelta(days=run_id), label=label or f"c{run_id}", result=result)


def series_of(values: list[float | None], se: float = 0.01, **kwargs: object) -> list[StoredRun]:
    return [run(i + 1, check(v, se, **kwargs)) for i, v in enumerate(values)]  # type: ignore[arg-type]


# --- the CUSUM recursion -------------------------------------------------------------------------


def test_cusum_hand_computed_series() -> None:
    # By hand, k = 0.5, h = 4, S_t = max(0, S_{t-1} + z_t - 0.5):
    #   z:  0.5  1.5  2.0  -1.0  1.0  2.5  1.5  2.0  0.0
    #   S:  0.0  1.0  2.5   1.0  1.5  3.5  4.5  6.0  5.5
    # S first exceeds 4 at index 6 (4.5); the last S = 0 before that is index 0, so the
    # excursion that fired began at index 1 (the dip to 1.0 at index 3 is not a restart).
    result = cusum([0.5, 1.5, 2.0, -1.0, 1.0, 2.5, 1.5, 2.0, 0.0], k=0.5, h=4.0)
    assert result.statistic == pytest.approx((0.0, 1.0, 2.5, 1.0, 1.5, 3.5, 4.5, 6.0, 5.5), abs=1e-15)
    assert result.fired_at == 6
    assert result.onset == 1


def test_cusum_onset_moves_to_the_last_reset() -> None:
    # By hand, k = 0.5, h = 4: z = 3, -4, 2, 3  ->  S = 2.5, 0, 1.5, 4.0 (not > 4), then
    # z = 0.6 -> S = 4.1 > 4 fires at index 4; last S = 0 at index 1, onset index 2.
    result = cusum([3.0, -4.0, 2.0, 3.0, 0.6], k=0.5, h=4.0)
    assert result.statistic == pytest.approx((2.5, 0.0, 1.5, 4.0, 4.1))
    assert (result.fired_at, result.onset) == (4, 2)


def test_cusum_equal_to_h_does_not_fire_and_quiet_series() -> None:
    assert cusum([4.5], k=0.5, h=4.0).fired_at is None  # S = 4.0 exactly: "exceeds" is strict
    quiet = cusum([0.4, -1.0, 0.5, 0.2], k=0.5, h=4.0)
    assert quiet.statistic == (0.0, 0.0, 0.0, 0.0)
    assert quiet.fired_at is None and quiet.onset is None
    assert cusum([], k=0.5, h=4.0).statistic == ()


def test_cusum_first_observation_can_fire_with_onset_zero() -> None:
    result = cusum([5.0, 1.0], k=0.5, h=4.0)  # S = 4.5 > 4 at once; S never was 0
    assert (result.fired_at, result.onset) == (0, 0)


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"k": -0.1}, "k must be finite and >= 0"),
        ({"k": math.inf}, "k must be finite"),
        ({"h": 0.0}, "h must be finite and > 0"),
        ({"h": math.nan}, "h must be finite"),
    ],
)
def test_cusum_rejects_bad_settings(kwargs: dict[str, float], message: str) -> None:
    with pytest.raises(ValueError, match=message):
        cusum([1.0], **kwargs)


def test_cusum_rejects_non_finite_z() -> None:
    with pytest.raises(ValueError, match=r"z\[1\] must be finite"):
        cusum([1.0, math.nan])


def test_standard_error_inverts_the_wald_interval() -> None:
    # DeLong Wald interval of Hanley & McNeil's CT data (REFERENCES.md section 1): SE 0.030724408379381122
    iv = Interval(0.8329523276581718, 0.9533897953979471, 0.95, "delong")
    assert standard_error(iv) == pytest.approx(0.030724408379381122, rel=1e-12)
    # 90%: z(0.95) = 1.6448536269514722 (scipy.stats.norm.ppf(0.95))
    assert standard_error(Interval(0.5 - 1.6448536269514722, 0.5 + 1.6448536269514722, 0.90, "x")) == pytest.approx(1.0)


# --- compute_trend: the drift alarm -----------------------------------------------------------


def test_trend_hand_computed_drift() -> None:
    # Hand computation, reference_runs = 3, every SE = 0.01:
    #   reference = (0.90 + 0.91 + 0.89) / 3 = 0.90; SE_ref = sqrt(3 * 0.01^2) / 3 = 0.01 / sqrt(3)
    #   SE of a difference = sqrt(0.01^2 + 0.01^2 / 3) = 0.02 / sqrt(3)
    #   values 0.895 0.88 0.87 0.875 0.86 -> shortfalls 0.005 0.02 0.03 0.025 0.04
    #   z = shortfall * sqrt(3) / 0.02 = sqrt(3) * (0.25, 1, 1.5, 1.25, 2)
    #   S = 0 (0.433 - 0.5 < 0), sqrt(3) - 0.5 = 1.2321, 2.5 sqrt(3) - 1 = 3.3301,
    #       3.75 sqrt(3) - 1.5 = 4.9952 > 4: fires at the 4th watched run (run 7);
    #   the last S = 0 was at run 4, so the slide began at run 5.
    runs = series_of([0.90, 0.91, 0.89, 0.895, 0.88, 0.87, 0.875, 0.86])
    trend = compute_trend(runs, reference_runs=3)
    (series,) = trend.series
    r3 = math.sqrt(3)
    assert series.drift.reference == pytest.approx(0.90, abs=1e-15)
    assert series.drift.reference_se == pytest.approx(0.01 / r3)
    assert [p.z for p in series.points[3:]] == pytest.approx([r3 * 0.25, r3, r3 * 1.5, r3 * 1.25, r3 * 2])
    assert list(series.cusum) == pytest.approx(
        [None, None, None, 0.0, r3 - 0.5, 2.5 * r3 - 1, 3.75 * r3 - 1.5, 5.75 * r3 - 2]
    )
    assert [p.role for p in series.points] == ["reference"] * 3 + ["monitored"] * 5
    assert series.drift.status == "fired"
    assert (series.drift.fired_run_id, series.drift.onset_run_id) == (7, 5)
    assert series.drift.reference_run_ids == (1, 2, 3)
    (alarm,) = series.alarms
    assert alarm.kind == "drift" and alarm.run_id == 7 and alarm.onset_run_id == 5
    assert alarm.statistic == pytest.approx(3.75 * r3 - 1.5)
    assert trend.alarmed and trend.n_runs == 8


def test_improvement_does_not_fire_and_lower_is_better_mirrors() -> None:
    rising = [0.90, 0.91, 0.89, 0.92, 0.94, 0.96, 0.98, 0.99]
    assert not compute_trend(series_of(rising), reference_runs=3).alarmed
    # brier: lower is better (at_most); the same rise is a decay and fires at the same run
    brier = [1.0 - v for v in [0.90, 0.91, 0.89, 0.895, 0.88, 0.87, 0.875, 0.86]]
    trend = compute_trend(series_of(brier, metric="brier", kind="at_most", bound=0.5), reference_runs=3)
    (series,) = trend.series
    assert not series.higher_is_better
    assert (series.drift.fired_run_id, series.drift.onset_run_id) == (7, 5)
    falling = [1.0 - v for v in rising]
    assert not compute_trend(series_of(falling, metric="brier", kind="at_most", bound=0.5), reference_runs=3).alarmed


def test_standardisation_uses_each_runs_own_error() -> None:
    # the same shortfall is 2 SE on a run with SE 0.01 and 0.2 SE on a run with SE 0.1
    base = [run(i + 1, check(0.9, 0.01)) for i in range(2)]
    noisy = base + [run(3, check(0.88, 0.1))]
    precise = base + [run(3, check(0.88, 0.01))]
    z_noisy = compute_trend(noisy, reference_runs=2).series[0].points[2].z
    z_precise = compute_trend(precise, reference_runs=2).series[0].points[2].z
    se_ref = math.sqrt(2 * 0.01**2) / 2
    assert z_noisy == pytest.approx(0.02 / math.hypot(0.1, se_ref))
    assert z_precise == pytest.approx(0.02 / math.hypot(0.01, se_ref))


def test_confidence_level_of_each_run_is_honoured() -> None:
    runs = [run(1, check(0.9, 0.01)), run(2, check(0.9, 0.01, confidence=0.9)), run(3, check(0.88, 0.01, confidence=0.99))]
    points = compute_trend(runs, reference_runs=2).series[0].points
    assert [p.se for p in points] == pytest.approx([0.01, 0.01, 0.01])


def test_too_few_runs_gives_no_drift_verdict() -> None:
    trend = compute_trend(series_of([0.9, 0.8, 0.7, 0.6, 0.55]), reference_runs=5)
    (series,) = trend.series
    assert series.drift.status == "too few runs"
    assert all(p.cusum is None for p in series.points)
    assert any("no drift verdict: 5 run(s)" in note and "at least 6" in note for note in series.notes)
    assert not trend.alarmed
    trend = compute_trend(series_of([0.9, 0.8, 0.7, 0.6, 0.55, 0.5, 0.5]), reference_runs=2, min_runs=8)
    assert trend.series[0].drift.status == "too few runs"


def test_skipped_and_degenerate_runs_are_left_out() -> None:
    runs = [
        run(1, check(0.90)), run(2, check(None)), run(3, check(0.91)), run(4, check(0.89)),
        run(5, check(0.90, 0.0)), run(6, check(0.80)),
    ]
    (series,) = compute_trend(runs, reference_runs=3).series
    assert [p.role for p in series.points] == ["reference", "left out", "reference", "reference", "left out", "monitored"]
    assert series.drift.reference == pytest.approx(0.90)
    assert series.points[5].z == pytest.approx(0.10 / (0.02 / math.sqrt(3)))
    assert series.last.run_id == 6
    assert any("1 run(s) without a value" in n for n in series.notes)
    assert any("zero-width" in n for n in series.notes)


# --- compute_trend: bound alarms, grouping, notes, errors ---------------------------------------


def test_bound_alarm_on_a_run_wholly_on_the_failing_side() -> None:
    values = [0.90, 0.91, 0.90, 0.70, 0.90]  # run 4 fails at_least 0.8 (0.70 +/- 0.0196)
    trend = compute_trend(series_of(values, bound=0.8), reference_runs=3)
    (series,) = trend.series
    bound_alarms = [a for a in series.alarms if a.kind == "bound"]
    assert [a.run_id for a in bound_alarms] == [4]
    assert bound_alarms[0].bound == Bound("at_least", 0.8)
    assert "wholly on the failing side of at_least = 0.8" in bound_alarms[0].message
    assert trend.alarmed


def test_inconclusive_run_is_no_bound_alarm_but_a_failed_margin_is() -> None:
    margin_iv = Interval(-0.05, -0.02, 0.95, "delong")
    failed_margin = Decision(Bound("max_drop", 0.01), "fail", -0.035, margin_iv)
    runs = [
        run(1, check(0.81, bound=0.8)),  # straddles 0.8: inconclusive
        run(2, check(0.90, bound=0.8, margin=failed_margin)),
    ]
    trend = compute_trend(runs, reference_runs=1)
    (series,) = trend.series
    assert [(a.kind, a.run_id, a.bound) for a in series.alarms] == [("bound", 2, Bound("max_drop", 0.01))]
    assert "difference from the baseline" in series.alarms[0].message


def test_series_split_by_slice_and_parameters_in_first_seen_order() -> None:
    north, south = SliceKey("district", "north"), SliceKey("district", "south")
    runs = []
    for i in range(4):
        runs.append(
            run(
                i + 1,
                check(0.9, name="recall", metric="recall_at_fpr", params={"fpr": 0.01}, slice_=north),
                check(0.8, name="recall", metric="recall_at_fpr", params={"fpr": 0.01}, slice_=south),
                check(0.7, name="recall", metric="recall_at_fpr", params={"fpr": 0.05}, slice_=north),
            )
        )
    runs.append(run(5, check(0.95, name="auc")))  # a check added to the policy later
    trend = compute_trend(runs, reference_runs=2)
    keys = [(s.name, s.params.get("fpr"), s.slice) for s in trend.series]
    assert keys == [("recall", 0.01, north), ("recall", 0.01, south), ("recall", 0.05, north), ("auc", None, None)]
    assert [len(s.points) for s in trend.series] == [4, 4, 4, 1]
    assert any("not in the most recent run 5 (last seen in run 4)" in n for n in trend.series[0].notes)
    assert not any("most recent" in n for n in trend.series[3].notes)


def test_runs_are_sorted_and_changes_of_eval_set_and_policy_are_noted() -> None:
    runs = series_of([0.9, 0.9, 0.9, 0.9])
    runs[2] = StoredRun(runs[2].run_id, runs[2].run_time, runs[2].label, run(3, check(0.9), fingerprint="e" * 64).result)
    trend = compute_trend(list(reversed(runs)), reference_runs=2)
    assert [p.run_id for p in trend.series[0].points] == [1, 2, 3, 4]
    assert (trend.first_run_id, trend.last_run_id) == (1, 4)
    assert any("evaluation set changed" in n and "run(s) 3, 4" in n for n in trend.notes)


def test_no_runs_and_duplicate_checks_are_errors() -> None:
    with pytest.raises(HistoryError, match="no runs to trend"):
        compute_trend([])
    with pytest.raises(HistoryError, match="run 1 holds two results for check 'auc holds'"):
        compute_trend([run(1, check(0.9), check(0.8))])


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"cusum_k": -1.0}, r"\[watch\] cusum_k must be a finite number >= 0"),
        ({"cusum_h": 0}, r"\[watch\] cusum_h must be a finite number > 0"),
        ({"cusum_h": math.inf}, r"\[watch\] cusum_h"),
        ({"reference_runs": 0}, r"\[watch\] reference_runs must be a whole number >= 1"),
        ({"reference_runs": 2.0}, r"\[watch\] reference_runs"),
        ({"reference_runs": 5, "min_runs": 5}, r"\[watch\] min_runs must be a whole number >= reference_runs \+ 1 = 6"),
    ],
)
def test_bad_watch_settings_name_the_policy_key(kwargs: dict[str, object], message: str) -> None:
    with pytest.raises(PolicyError, match=message):
        compute_trend(series_of([0.9] * 8), **kwargs)  # type: ignore[arg-type]


# --- reports --------------------------------------------------------------------------------------


def _drifting_trend():  # type: ignore[no-untyped-def]
    north = SliceKey("district", "north|<script>")
    runs = []
    values = [0.90, 0.91, 0.89, 0.895, 0.88, 0.87, 0.875, 0.70]
    for i, v in enumerate(values):
        runs.append(
            run(
                i + 1,
                check(v, bound=0.8, slice_=north, name="recall *at* 1%"),
                check(0.95, name="auc holds"),
                label=f"`sha{i}`\nx" if i == 7 else f"sha{i}",
            )
        )
    return compute_trend(runs, reference_runs=3)


def test_markdown_leads_with_the_alarm_and_escapes_untrusted_text() -> None:
    text = render_trend_markdown(_drifting_trend())
    lines = text.splitlines()
    assert lines[0] == "### rankgate trend: ALARM"
    assert lines[2].startswith("**ALARM**: 1 of 2 check results alarmed over 8 runs: 1 drift, 1 bound.")
    assert re.search(r"(?<!\\)<", text) is None and "\\<script" in text  # no raw HTML
    assert "north\\|" in text  # a pipe in a slice value cannot split the table cell
    assert "recall \\*at\\* 1%" in text
    # a label cannot open a code span nor start a new line: "\n" is shown as the two characters
    assert "`sha7`" not in text and "\\`sha7\\`\\\\nx" in text
    table = [line for line in lines if line.startswith("| ")]
    assert len(table) == 4  # header, rule and two series
    assert "DRIFT since run 5" in table[2] and "BOUND failed in run 8" in table[2]
    assert "| auc holds | roc_auc | all | 8 | 0.9500 [0.9304, 0.9696] | 0.9500 | 0.00 | none |" == table[3]
    assert any(line.startswith("- recall") and "DRIFT: CUSUM 5.00 > h = 4 at run 7 (label sha6" in line for line in lines)
    assert lines[-1].startswith("Method: ")
    assert render_trend_markdown(_drifting_trend()) == text  # deterministic


def test_markdown_without_alarm() -> None:
    text = render_trend_markdown(compute_trend(series_of([0.9] * 7), reference_runs=5), title="nightly")
    assert text.splitlines()[0] == "### nightly: NO ALARM"
    assert "**NO ALARM**: 1 check result over 7 runs: no drift, no bound failed." in text
    assert "**Alarms**" not in text


def test_json_report_parses_and_carries_the_series() -> None:
    trend = _drifting_trend()
    text = render_trend_json(trend)
    doc = json.loads(text)
    assert list(doc) == ["schema", "alarmed", "counts", "runs", "settings", "series", "notes", "method"]
    assert doc["alarmed"] is True
    assert doc["counts"] == {"series": 2, "alarmed_series": 1, "drift_alarms": 1, "bound_alarms": 1}
    assert doc["settings"] == {"cusum_k": 0.5, "cusum_h": 4.0, "reference_runs": 3, "min_runs": 4}
    first = doc["series"][0]
    assert first["slice"] == {"column": "district", "value": "north|<script>"}  # JSON keeps the raw text
    assert first["drift"]["status"] == "fired"
    assert (first["drift"]["fired_run_id"], first["drift"]["onset_run_id"]) == (7, 5)
    assert [a["kind"] for a in first["alarms"]] == ["drift", "bound"]
    assert len(first["points"]) == 8 and first["points"][0]["cusum"] is None
    assert first["points"][6]["cusum"] == pytest.approx(3.75 * math.sqrt(3) - 1.5)
    assert doc["runs"]["first_run_time"] == "2024-05-02T02:00:00.000000Z"
    assert text.isascii() and text == render_trend_json(_drifting_trend())


def test_markdown_shows_the_latest_run_even_when_skipped() -> None:
    runs = series_of([0.9, 0.9, 0.9, None])
    text = render_trend_markdown(compute_trend(runs, reference_runs=2))
    row = next(line for line in text.splitlines() if line.startswith("| auc holds"))
    assert "| 4 (3 usable) | - (skipped) | 0.9000 | 0.00 | none |" in row
    assert "1 run(s) without a value (skipped)" in text
