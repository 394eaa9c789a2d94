"""Nightly watching: the series of every check and slice across stored runs, and its alarms.

Pure computation over :class:`gate.history.StoredRun` objects (no files, no printing). Two alarms:

* **bound** -- a run whose interval lies wholly on the failing side of one of the check's bounds
  (its floor ``at_least`` / ``at_most`` or its margin ``max_drop`` / ``max_rise``). This is the
  run's own stored decision with outcome "fail", before the inconclusive rule, so it agrees with
  what ``rankgate check`` decided that night under that night's policy.
* **drift** -- a sustained slide toward the failing side, seen by a one-sided CUSUM (Page 1954)
  even when no single night is bad enough to fail.

The drift statistic
-------------------
For one check and slice, take the runs of the window that have a value and an interval, oldest
first. The **reference** is the mean of the first ``reference_runs`` of them (a window-local
reference: narrow the window with ``--since`` after a deliberate change, e.g. a new model family or
a new evaluation set, so the reference describes the current state). Each run's standard error is
``SE_t = half-width / z_{(1+c)/2}`` of its interval at confidence ``c`` (exact for a Wald interval
such as DeLong's; an approximation for asymmetric ones such as Wilson or bootstrap). The reference
mean has ``SE_ref = sqrt(sum SE_i^2) / m``. Every later run is standardised toward the failing side,

    z_t = (reference - x_t) / sqrt(SE_t^2 + SE_ref^2)      higher is better (at_least / max_drop)
    z_t = (x_t - reference) / sqrt(SE_t^2 + SE_ref^2)      lower is better (at_most / max_rise)

so that a decay gives positive z. The denominator is the standard error of the difference
``reference - x_t``; dividing by ``SE_t`` alone (as a CUSUM with a known reference would) ignores
that the reference is itself estimated from a few runs and raises the false-alarm rate (below).
Then ``S_0 = 0``, ``S_t = max(0, S_{t-1} + z_t - k)``; the alarm fires at the first run with
``S_t > h``; the drift is dated to the run after the last ``S = 0`` before firing (the start of the
excursion that fired: Page's estimate of the change point). ``S`` is not reset after firing, so the
table shows whether the slide went on. Fewer than ``min_runs`` usable runs (default
``reference_runs + 1``) gives no drift verdict, said as a note.

Choice of k and h (the policy's ``[watch]`` section; defaults k = 0.5, h = 4)
-----------------------------------------------------------------------------
k = 0.5 tunes the CUSUM to a sustained shift of ``2k = 1`` standard error, the usual textbook
choice (Montgomery, *Introduction to Statistical Quality Control*, recommends k = 0.5 with h = 4
or 5 [memory]). With a known reference and independent N(0, 1) z values the one-sided average run
length is about 336 runs between false alarms for h = 4 and about 930 for h = 5, and about 8.4 /
10.4 runs to detect a 1-SE shift (Brook-Evans Markov chain; Siegmund's 1985 approximation agrees
within 1%; both in ``tests/simulation/test_cusum_rates.py``; Montgomery tabulates the two-sided
values 168 and 465 [memory]). We take h = 4: a nightly job should see a 1-SE decay within about ten nights.

False alarms in a 30-night window (the reference runs plus the nights watched after them).
With a *known* reference, 25 watched nights with h = 4 raise a false alarm in about 6% of stable
windows. With the reference estimated from only 5 runs the rate is much higher, about 16%: the
reference's own error is shared by every z of the window (it would be 21% if each z were divided
by SE_t alone). Longer references help: 10 reference runs give about 10% (h = 4) or 5.8% (h = 5),
15 reference runs with h = 5 about 2.9%. These rates are computed by the Brook-Evans Markov chain
averaged over the reference's error and checked by simulation through :func:`compute_trend` in
``tests/simulation/test_cusum_rates.py``. They assume each night's value scatters by its full
standard error, as when the evaluation set is drawn afresh each night. On a fixed evaluation set
successive models are scored on the same rows, the nightly scatter is smaller than the SE and
false alarms are rarer (and the alarm still fires on a decay measured in SE units). For fresh
nightly samples, raise ``reference_runs`` to 10-15 and ``cusum_h`` to 5.

Detection: a slow decay of 0.2 SE per night after a 5-run reference is flagged on the 8th-9th
watched night in the median (the noise-free path crosses h = 4 on night 9), and by night 14 in 95%
of windows (same test file).

References
----------
Page, E. S. (1954). Continuous inspection schemes. *Biometrika* 41(1/2), 100-115.
Siegmund, D. (1985). *Sequential Analysis: Tests and Confidence Intervals*. Springer.
Brook, D. and Evans, D. A. (1972). An approach to the probability distribution of CUSUM run
length. *Biometrika* 59(3), 539-549.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, replace
from datetime import datetime
from statistics import NormalDist
from typing import TYPE_CHECKING, Literal

from gate.errors import HistoryError, PolicyError
from gate.results import Bound, CheckResult, SliceKey
from gate.stats.interval import Interval

if TYPE_CHECKING:
    from gate.history import StoredRun

DEFAULT_CUSUM_K = 0.5
DEFAULT_CUSUM_H = 4.0
DEFAULT_REFERENCE_RUNS = 5

Role = Literal["reference", "monitored", "left out"]
DriftStatus = Literal["fired", "quiet", "too few runs"]


# --- the CUSUM itself ---------------------------------------------------------------------------


@dataclass(frozen=True)
class Cusum:
    """The one-sided CUSUM path of a sequence of standardised shortfalls.

    ``statistic[t]`` is ``S_t`` after observation ``t``; ``fired_at`` is the index of the first
    ``S_t > h`` (None if never); ``onset`` is the index of the first observation of the excursion
    that fired (one after the last ``S = 0`` before ``fired_at``; 0 if S never returned to 0).
    """

    statistic: tuple[float, ...]
    fired_at: int | None
    onset: int | None
    k: float
    h: float


def cusum(z: Sequence[float], *, k: float = DEFAULT_CUSUM_K, h: float = DEFAULT_CUSUM_H) -> Cusum:
    """One-sided upper CUSUM ``S_t = max(0, S_{t-1} + z_t - k)``, ``S_0 = 0``, alarm at ``S_t > h``.

    Parameters
    ----------
    z : standardised shortfalls, positive = worse (e.g. ``(reference - x_t) / SE``).
    k : allowance (reference value) in SE units, >= 0; tuned to a shift of ``2k``.
    h : decision interval in SE units, > 0.

    Returns
    -------
    Cusum
        The path, the index of the first firing and the index where that excursion began.

    Raises
    ------
    ValueError
        A non-finite z, a negative or non-finite k, or a non-positive or non-finite h.

    Notes
    -----
    Observations equal to the threshold do not fire (strictly greater, as in Page 1954's
    "take action when S exceeds h"). The path is not reset after firing.

    References
    ----------
    Page, E. S. (1954). Continuous inspection schemes. Biometrika 41, 100-115.

    Examples
    --------
    >>> c = cusum([1.0, 2.0, -3.0, 3.0, 2.5], k=0.5, h=4.0)
    >>> c.statistic
    (0.5, 2.0, 0.0, 2.5, 4.5)
    >>> c.fired_at, c.onset
    (4, 3)
    """
    if not (math.isfinite(k) and k >= 0.0):
        raise ValueError(f"k must be finite and >= 0, got {k!r}")
    if not (math.isfinite(h) and h > 0.0):
        raise ValueError(f"h must be finite and > 0, got {h!r}")
    path: list[float] = []
    s = 0.0
    fired_at: int | None = None
    last_zero = -1
    onset: int | None = None
    for t, value in enumerate(z):
        value = float(value)
        if not math.isfinite(value):
            raise ValueError(f"z[{t}] must be finite, got {value!r}")
        s = max(0.0, s + value - k)
        path.append(s)
        if fired_at is None:
            if s == 0.0:
                last_zero = t
            elif s > h:
                fired_at = t
                onset = last_zero + 1
    return Cusum(statistic=tuple(path), fired_at=fired_at, onset=onset, k=float(k), h=float(h))


def standard_error(interval: Interval) -> float:
    """The standard error implied by a two-sided interval: ``half-width / z_{(1+c)/2}``.

    Exact for a Wald interval (estimate +/- z SE); for an asymmetric interval (Wilson, logit,
    bootstrap) it is the SE of the normal interval with the same width.

    Examples
    --------
    >>> round(standard_error(Interval(0.9 - 1.959963984540054 * 0.01, 0.9 + 1.959963984540054 * 0.01, 0.95, "delong")), 12)
    0.01
    """
    z = NormalDist().inv_cdf((1.0 + interval.confidence) / 2.0)
    return interval.half_width / z


# --- trend result types --------------------------------------------------------------------------


@dataclass(frozen=True)
class TrendPoint:
    """One run of one series.

    ``se`` is the run's standard error (None without an interval); ``z`` the standardised
    shortfall against the reference and ``cusum`` the statistic after this run, both None for
    reference runs, runs left out of the drift statistic, and series too short for a drift
    verdict; ``role`` says whether the run formed the reference, was watched or was left out.
    """

    run_id: int
    run_time: datetime
    label: str | None
    outcome: str
    value: float | None
    interval: Interval | None
    n_pos: int
    baseline_value: float | None
    delta: float | None
    delta_interval: Interval | None
    se: float | None
    role: Role
    z: float | None = None
    cusum: float | None = None


@dataclass(frozen=True)
class Alarm:
    """One alarm of a series.

    kind "bound": the run ``run_id`` failed ``bound`` (its ``interval`` lies wholly on the failing
    side; ``estimate`` is the value compared). kind "drift": the CUSUM crossed h at ``run_id`` with
    ``statistic``; the drift began at ``onset_run_id``. ``message`` is one plain-text line (no run
    label or slice value in it; renderers add and escape those).
    """

    kind: Literal["bound", "drift"]
    run_id: int
    run_time: datetime
    label: str | None
    message: str
    bound: Bound | None = None
    interval: Interval | None = None
    estimate: float | None = None
    onset_run_id: int | None = None
    statistic: float | None = None


@dataclass(frozen=True)
class Drift:
    """The drift verdict of one series (see the module notes for the statistic)."""

    status: DriftStatus
    reference: float | None = None
    reference_se: float | None = None
    reference_run_ids: tuple[int, ...] = ()
    fired_run_id: int | None = None
    onset_run_id: int | None = None
    statistic: float | None = None  # S after the last monitored run
    peak: float | None = None  # largest S in the window


@dataclass(frozen=True)
class Series:
    """One check in one slice across the runs of the window."""

    name: str
    metric: str
    params: dict[str, float]
    slice: SliceKey | None
    higher_is_better: bool
    points: tuple[TrendPoint, ...]
    alarms: tuple[Alarm, ...]
    drift: Drift
    notes: tuple[str, ...] = ()

    @property
    def cusum(self) -> tuple[float | None, ...]:
        """The CUSUM statistic per point (None for reference runs and runs left out)."""
        return tuple(point.cusum for point in self.points)

    @property
    def last(self) -> TrendPoint:
        """The most recent point with a value, else the most recent point."""
        for point in reversed(self.points):
            if point.value is not None:
                return point
        return self.points[-1]

    @property
    def alarmed(self) -> bool:
        return bool(self.alarms)


@dataclass(frozen=True)
class TrendResult:
    """Every series of the window, and whether any alarm fired (the nightly job's exit 1)."""

    series: tuple[Series, ...]
    alarmed: bool
    n_runs: int
    first_run_time: datetime
    last_run_time: datetime
    first_run_id: int
    last_run_id: int
    cusum_k: float
    cusum_h: float
    reference_runs: int
    min_runs: int
    method: str
    notes: tuple[str, ...] = ()

    @property
    def alarms(self) -> tuple[tuple[Series, Alarm], ...]:
        return tuple((series, alarm) for series in self.series for alarm in series.alarms)


# --- computing the trend ------------------------------------------------------------------------


def _validate(cusum_k: float, cusum_h: float, reference_runs: int, min_runs: int | None) -> int:
    if isinstance(cusum_k, bool) or not isinstance(cusum_k, (int, float)) or not (
        math.isfinite(cusum_k) and cusum_k >= 0
    ):
        raise PolicyError(f"[watch] cusum_k must be a finite number >= 0, got {cusum_k!r}")
    if isinstance(cusum_h, bool) or not isinstance(cusum_h, (int, float)) or not (
        math.isfinite(cusum_h) and cusum_h > 0
    ):
        raise PolicyError(f"[watch] cusum_h must be a finite number > 0, got {cusum_h!r}")
    if isinstance(reference_runs, bool) or not isinstance(reference_runs, int) or reference_runs < 1:
        raise PolicyError(f"[watch] reference_runs must be a whole number >= 1, got {reference_runs!r}")
    if min_runs is None:
        return reference_runs + 1
    if isinstance(min_runs, bool) or not isinstance(min_runs, int) or min_runs < reference_runs + 1:
        raise PolicyError(
            f"[watch] min_runs must be a whole number >= reference_runs + 1 = {reference_runs + 1}, "
            f"got {min_runs!r}"
        )
    return min_runs


def _direction(checks: Sequence[CheckResult], metric: str) -> tuple[bool, list[str]]:
    """Higher is better? From the bounds of the most recent run that has one."""
    notes: list[str] = []
    directions = set()
    latest: bool | None = None
    for check in checks:
        for decision in (check.floor, check.margin):
            if decision is not None:
                directions.add(decision.bound.higher_is_better)
                latest = decision.bound.higher_is_better
    if latest is None:
        # Only when no run of the series carries a bound (every check in a policy has one); the
        # import stays here so that gate.watch does not load pydantic for this rare case.
        from gate.policy import LOWER_IS_BETTER

        latest = metric not in LOWER_IS_BETTER
        notes.append(
            f"no run carries a bound; taken as {'higher' if latest else 'lower'} is better from the metric"
        )
    elif len(directions) > 1:
        notes.append(
            "the bounds of the runs disagree on the better direction; the most recent run's "
            f"({'higher' if latest else 'lower'} is better) is used"
        )
    return latest, notes


def _bound_alarms(run: StoredRun, check: CheckResult) -> list[Alarm]:
    alarms = []
    for role, decision in (("floor", check.floor), ("margin", check.margin)):
        if decision is None or decision.outcome != "fail":
            continue
        what = "value" if role == "floor" else "difference from the baseline"
        iv = decision.interval
        alarms.append(
            Alarm(
                kind="bound",
                run_id=run.run_id,
                run_time=run.run_time,
                label=run.label,
                message=(
                    f"run {run.run_id}: {what} {decision.estimate:.4g}, interval [{iv.low:.4g}, {iv.high:.4g}] "
                    f"wholly on the failing side of {decision.bound.kind} = {decision.bound.value:.4g}"
                ),
                bound=decision.bound,
                interval=iv,
                estimate=decision.estimate,
            )
        )
    return alarms


def _series(
    key_checks: list[tuple[StoredRun, CheckResult]],
    *,
    k: float,
    h: float,
    reference_runs: int,
    min_runs: int,
) -> Series:
    latest = key_checks[-1][1]  # names and parameters as the most recent run states them
    higher_is_better, notes = _direction([c for _, c in key_checks], latest.metric)
    sign = 1.0 if higher_is_better else -1.0

    # 1. standard errors, and which runs the drift statistic can use
    ses: list[float | None] = []
    eligible: list[int] = []
    no_value = no_interval = zero_width = 0
    for i, (_run, check) in enumerate(key_checks):
        se = standard_error(check.interval) if check.interval is not None else None
        ses.append(se)
        if check.value is None:
            no_value += 1
        elif se is None:
            no_interval += 1
        elif not (math.isfinite(se) and se > 0.0):
            zero_width += 1
        else:
            eligible.append(i)
    if no_value:
        notes.append(f"{no_value} run(s) without a value (skipped) left out of the drift statistic")
    if no_interval:
        notes.append(f"{no_interval} run(s) without an interval left out of the drift statistic")
    if zero_width:
        notes.append(
            f"{zero_width} run(s) with a zero-width or infinite interval (no usable standard error) "
            "left out of the drift statistic"
        )

    # 2. reference, standardised shortfalls and the CUSUM path
    roles: list[Role] = ["left out"] * len(key_checks)
    z_of: dict[int, float] = {}
    s_of: dict[int, float] = {}
    ref_idx, watch_idx = eligible[:reference_runs], eligible[reference_runs:]
    for i in eligible:
        roles[i] = "monitored"
    for i in ref_idx:
        roles[i] = "reference"
    path: Cusum | None = None
    reference = reference_se = None
    if len(eligible) < min_runs:
        notes.append(
            f"no drift verdict: {len(eligible)} run(s) with a value and an interval, the drift "
            f"statistic needs at least {min_runs} ({reference_runs} for the reference and one to watch)"
        )
    else:
        values = [key_checks[i][1].value for i in ref_idx]
        reference = math.fsum(v for v in values if v is not None) / reference_runs
        reference_se = math.sqrt(math.fsum(ses[i] ** 2 for i in ref_idx if ses[i] is not None)) / reference_runs
        z_values = []
        for i in watch_idx:
            value, se = key_checks[i][1].value, ses[i]
            assert value is not None and se is not None  # eligible
            z_values.append(sign * (reference - value) / math.hypot(se, reference_se))
        path = cusum(z_values, k=k, h=h)
        z_of = dict(zip(watch_idx, z_values))
        s_of = dict(zip(watch_idx, path.statistic))

    # 3. points and alarms
    points = tuple(
        TrendPoint(
            run_id=run.run_id,
            run_time=run.run_time,
            label=run.label,
            outcome=check.outcome,
            value=check.value,
            interval=check.interval,
            n_pos=check.n_pos,
            baseline_value=check.baseline_value,
            delta=check.delta,
            delta_interval=check.delta_interval,
            se=ses[i],
            role=roles[i],
            z=z_of.get(i),
            cusum=s_of.get(i),
        )
        for i, (run, check) in enumerate(key_checks)
    )
    alarms: list[Alarm] = []
    for run, check in key_checks:
        alarms.extend(_bound_alarms(run, check))

    if path is None:
        drift = Drift(status="too few runs")
    else:
        fired_run_id = onset_run_id = None
        if path.fired_at is not None and path.onset is not None:
            fired = points[watch_idx[path.fired_at]]
            onset = points[watch_idx[path.onset]]
            fired_run_id, onset_run_id = fired.run_id, onset.run_id
            alarms.append(
                Alarm(
                    kind="drift",
                    run_id=fired.run_id,
                    run_time=fired.run_time,
                    label=fired.label,
                    message=(
                        f"sustained drift toward the failing side: CUSUM {path.statistic[path.fired_at]:.3g} > "
                        f"h = {h:g} at run {fired.run_id}, drift began at run {onset.run_id} "
                        f"(reference {reference:.4g} from runs {points[ref_idx[0]].run_id}-{points[ref_idx[-1]].run_id})"
                    ),
                    onset_run_id=onset.run_id,
                    statistic=path.statistic[path.fired_at],
                )
            )
        drift = Drift(
            status="fired" if path.fired_at is not None else "quiet",
            reference=reference,
            reference_se=reference_se,
            reference_run_ids=tuple(points[i].run_id for i in ref_idx),
            fired_run_id=fired_run_id,
            onset_run_id=onset_run_id,
            statistic=path.statistic[-1] if path.statistic else None,
            peak=max(path.statistic) if path.statistic else None,
        )
    alarms.sort(key=lambda a: (a.run_time, a.run_id, a.kind))
    return Series(
        name=latest.name,
        metric=latest.metric,
        params=dict(latest.params),
        slice=latest.slice,
        higher_is_better=higher_is_better,
        points=points,
        alarms=tuple(alarms),
        drift=drift,
        notes=tuple(notes),
    )


def _key(check: CheckResult) -> tuple[object, ...]:
    slice_key = (check.slice.column, check.slice.value) if check.slice is not None else None
    return (check.name, check.metric, tuple(sorted(check.params.items())), slice_key)


def compute_trend(
    runs: Sequence[StoredRun],
    *,
    cusum_k: float = DEFAULT_CUSUM_K,
    cusum_h: float = DEFAULT_CUSUM_H,
    reference_runs: int = DEFAULT_REFERENCE_RUNS,
    min_runs: int | None = None,
) -> TrendResult:
    """The series of every check and slice over ``runs``, with bound and drift alarms.

    Parameters
    ----------
    runs : stored runs (as from :func:`gate.history.load_runs`), in any order; sorted here by
        run time, then run id. A series is one (check name, metric, parameters, slice).
    cusum_k : CUSUM allowance in standard-error units (policy ``[watch] cusum_k``, default 0.5).
    cusum_h : CUSUM decision interval in standard-error units (``cusum_h``, default 4).
    reference_runs : number of first usable runs whose mean is the reference (default 5).
    min_runs : usable runs a series needs for a drift verdict (default ``reference_runs + 1``).

    Returns
    -------
    TrendResult
        ``alarmed`` is True when any series has a bound or drift alarm anywhere in the window.

    Raises
    ------
    HistoryError
        No runs, or one run holding two results for the same check and slice.
    PolicyError
        A setting out of range (named by its ``[watch]`` key).

    Notes
    -----
    See the module docstring for the statistic, the choice of k and h, and false-alarm rates.

    References
    ----------
    Page, E. S. (1954). Continuous inspection schemes. Biometrika 41, 100-115.

    Examples
    --------
    ::

        from gate.history import load_runs
        trend = compute_trend(load_runs("history.sqlite", last=30), cusum_h=4.0)
        trend.alarmed                       # True: exit 1 for the nightly job
        [(s.name, a.kind, a.run_id) for s, a in trend.alarms]
    """
    minimum = _validate(cusum_k, cusum_h, reference_runs, min_runs)
    if not runs:
        raise HistoryError("no runs to trend in the window (check the history file, --since and --last)")
    ordered = sorted(runs, key=lambda run: (run.run_time, run.run_id))

    groups: dict[tuple[object, ...], list[tuple[StoredRun, CheckResult]]] = {}
    for run in ordered:
        seen: set[tuple[object, ...]] = set()
        for check in run.result.checks:
            key = _key(check)
            if key in seen:
                where = f" slice {check.slice.column}={check.slice.value}" if check.slice else ""
                raise HistoryError(f"run {run.run_id} holds two results for check {check.name!r}{where}")
            seen.add(key)
            groups.setdefault(key, []).append((run, check))

    series = tuple(
        _series(items, k=float(cusum_k), h=float(cusum_h), reference_runs=reference_runs, min_runs=minimum)
        for items in groups.values()
    )
    last_run = ordered[-1].run_id
    series = tuple(
        s if s.points[-1].run_id == last_run
        else replace(s, notes=(*s.notes, f"not in the most recent run {last_run} (last seen in run {s.points[-1].run_id})"))
        for s in series
    )

    notes: list[str] = []
    fingerprints = [run.result.fingerprint for run in ordered]
    changes = [ordered[i].run_id for i in range(1, len(ordered)) if fingerprints[i] != fingerprints[i - 1]]
    if changes:
        notes.append(
            "the evaluation set changed (eval-set fingerprint differs) at run(s) "
            + ", ".join(str(r) for r in changes)
            + "; values on different evaluation sets are not strictly comparable"
        )
    hashes = [run.result.policy_hash for run in ordered]
    policy_changes = [ordered[i].run_id for i in range(1, len(ordered)) if hashes[i] != hashes[i - 1]]
    if policy_changes:
        notes.append("the policy changed at run(s) " + ", ".join(str(r) for r in policy_changes))
    if not series:
        notes.append("the runs hold no checks")

    method = (
        f"bound alarm: a run's interval wholly on the failing side of a bound; drift alarm: one-sided "
        f"CUSUM (Page 1954) of z = (reference - value) / SE toward the failing side, k = {cusum_k:g}, "
        f"h = {cusum_h:g}; reference = mean of the first {reference_runs} runs with a value in the "
        f"window; SE = sqrt(SE_run^2 + SE_reference^2), SE_run = interval half-width / z_(1+c)/2"
    )
    return TrendResult(
        series=series,
        alarmed=any(s.alarms for s in series),
        n_runs=len(ordered),
        first_run_time=ordered[0].run_time,
        last_run_time=ordered[-1].run_time,
        first_run_id=ordered[0].run_id,
        last_run_id=ordered[-1].run_id,
        cusum_k=float(cusum_k),
        cusum_h=float(cusum_h),
        reference_runs=reference_runs,
        min_runs=minimum,
        method=method,
        notes=tuple(notes),
    )


__all__ = [
    "Alarm",
    "Cusum",
    "Drift",
    "Series",
    "TrendPoint",
    "TrendResult",
    "compute_trend",
    "cusum",
    "standard_error",
]
