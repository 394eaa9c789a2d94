"""Hand-built Result objects for report tests (and for any layer that renders or stores results).

The figures are invented for the demo scenario (pipe segments scored for leaks, sliced by
district) but internally consistent: every interval contains its estimate, differences are
candidate - baseline, recall values are k / n_pos for the stated positive counts, and each
Decision's outcome follows from its interval and bound as DESIGN.md's decision rule says.
They exercise the renderers; they are not check values for any statistic.

The warnings follow the evaluate layer's shape: a check's own warnings (e.g. a margin below the
resolution) sit in ``CheckResult.warnings``, and ``Result.warnings`` lists every warning of the
run, each check's as ``name [column = value]: text``, plus the inconclusive and skipped notices
and the mismatch handling. (``hostile_result`` leaves its check warnings unlisted on purpose,
the other shape a producer may use.)

Import as ``from tests.fixtures_results import leak_gate_result`` (the repository root is on
``sys.path`` under ``python -m pytest``).
"""

from __future__ import annotations

from gate.results import Bound, CheckResult, Decision, Result, SliceKey
from gate.stats.interval import Interval

CONF = 0.95
POLICY_HASH = "5d41402abc4b2a76b9719d911017c592ae2f1a3c8e6b0d7f9a1b2c3d4e5f6071"
FINGERPRINT = "9f86d081884c7d659a2feaa0c55ad015a3bf4f1b2b0b822cd15d6c15b0f00a08"


def ci(low: float, high: float, method: str) -> Interval:
    return Interval(low, high, CONF, method)


def overall_auc() -> CheckResult:
    """roc_auc overall: DeLong interval, floor and non-regression margin against the baseline, pass."""
    interval = ci(0.8904, 0.9342, "delong")
    delta_interval = ci(-0.0031, 0.0177, "delong")
    return CheckResult(
        name="overall AUC",
        metric="roc_auc",
        params={},
        slice=None,
        outcome="pass",
        passed=True,
        value=0.9123,
        interval=interval,
        n=10000,
        n_pos=151,
        n_neg=9849,
        baseline_value=0.9050,
        delta=0.0073,
        delta_interval=delta_interval,
        floor=Decision(Bound("at_least", 0.85), "pass", 0.9123, interval, p_value=1.2e-8),
        margin=Decision(Bound("max_drop", 0.02), "pass", 0.0073, delta_interval, p_value=3.1e-5),
        method="delong",
        reason="interval above the floor 0.85; difference interval above -0.02",
    )


def _recall_slice(
    district: str,
    *,
    n: int,
    n_pos: int,
    value: float,
    interval: tuple[float, float],
    baseline: float,
    delta_interval: tuple[float, float],
    floor: str,
    margin: str,
    outcome: str,
    passed: bool,
    reason: str,
    threshold: float,
) -> CheckResult:
    value_ci = ci(*interval, "bootstrap-percentile")
    delta_ci = ci(*delta_interval, "bootstrap-percentile")
    delta = value - baseline
    warnings = ()
    if delta_ci.half_width > 0.05:
        warnings = (
            f"max_drop = 0.05 is below what this evaluation set can resolve "
            f"(difference interval half-width {delta_ci.half_width:.4f})",
        )
    return CheckResult(
        name="recall at 1% FPR",
        metric="recall_at_fpr",
        params={"fpr": 0.01},
        slice=SliceKey("district", district),
        outcome=outcome,  # type: ignore[arg-type]
        passed=passed,
        value=value,
        interval=value_ci,
        n=n,
        n_pos=n_pos,
        n_neg=n - n_pos,
        baseline_value=baseline,
        delta=delta,
        delta_interval=delta_ci,
        floor=Decision(Bound("at_least", 0.6), floor, value, value_ci),  # type: ignore[arg-type]
        margin=Decision(Bound("max_drop", 0.05), margin, delta, delta_ci),  # type: ignore[arg-type]
        method="bootstrap-percentile",
        threshold=threshold,
        reason=reason,
        warnings=warnings,
    )


def recall_by_district() -> list[CheckResult]:
    """recall_at_fpr by district: north passes, south is inconclusive (passed on the estimate),
    east fails both bounds, west is skipped with too few positives."""
    north = _recall_slice(
        "north", n=2400, n_pos=52, value=41 / 52, interval=(0.6731, 0.8846), baseline=40 / 52,
        delta_interval=(-0.0385, 0.0769), floor="pass", margin="pass", outcome="pass", passed=True,
        reason="interval above the floor 0.6; difference interval above -0.05", threshold=0.8125,
    )
    south = _recall_slice(
        "south", n=2600, n_pos=50, value=32 / 50, interval=(0.5000, 0.7800), baseline=33 / 50,
        delta_interval=(-0.0800, 0.0400), floor="inconclusive", margin="inconclusive",
        outcome="inconclusive", passed=True,
        reason="intervals straddle the floor 0.6 and the margin -0.05; point estimates pass",
        threshold=0.7930,
    )
    east = _recall_slice(
        "east", n=4100, n_pos=38, value=16 / 38, interval=(0.2895, 0.5526), baseline=24 / 38,
        delta_interval=(-0.3421, -0.0789), floor="fail", margin="fail", outcome="fail", passed=False,
        reason="interval [0.2895, 0.5526] below the floor 0.6; difference interval below -0.05",
        threshold=0.8402,
    )
    west = CheckResult(
        name="recall at 1% FPR",
        metric="recall_at_fpr",
        params={"fpr": 0.01},
        slice=SliceKey("district", "west"),
        outcome="skipped",
        passed=True,
        value=None,
        interval=None,
        n=900,
        n_pos=11,
        n_neg=889,
        method="bootstrap-percentile",
        reason="skipped: 11 positives, fewer than min_positives = 30",
    )
    return [north, south, east, west]


def floor_only_ap() -> CheckResult:
    """average_precision with a floor only (no margin, so no baseline figures), pass."""
    interval = ci(0.3902, 0.5133, "bootstrap-percentile")
    return CheckResult(
        name="average precision floor",
        metric="average_precision",
        params={},
        slice=None,
        outcome="pass",
        passed=True,
        value=0.4517,
        interval=interval,
        n=10000,
        n_pos=151,
        n_neg=9849,
        floor=Decision(Bound("at_least", 0.3), "pass", 0.4517, interval),
        method="bootstrap-percentile",
        reason="interval above the floor 0.3",
    )


def expected_cost_check() -> CheckResult:
    """expected_cost (lower is better): ceiling and maximum rise against the baseline, pass."""
    interval = ci(0.0281, 0.0345, "bootstrap-percentile")
    delta_interval = ci(-0.0031, 0.0015, "bootstrap-percentile")
    return CheckResult(
        name="field-crew cost",
        metric="expected_cost",
        params={"cost_fp": 1.0, "cost_fn": 20.0},
        slice=None,
        outcome="pass",
        passed=True,
        value=0.0312,
        interval=interval,
        n=10000,
        n_pos=151,
        n_neg=9849,
        baseline_value=0.0320,
        delta=-0.0008,
        delta_interval=delta_interval,
        floor=Decision(Bound("at_most", 0.05), "pass", 0.0312, interval),
        margin=Decision(Bound("max_rise", 0.005), "pass", -0.0008, delta_interval),
        method="bootstrap-percentile",
        threshold=0.42,
        reason="interval below the ceiling 0.05; difference interval below +0.005",
    )


MISMATCH_NOTE = "on_mismatch = intersect: 10000 ids compared, 3 candidate ids without a baseline score left out"
LEAK_METHODS = (
    "95% two-sided intervals; DeLong (paired DeLong for differences); stratified bootstrap, "
    "percentile (paired for differences), 2000 resamples, seed 20240611; inconclusive checks "
    "decided by the point estimate; no multiplicity adjustment"
)


def run_warnings(checks: tuple[CheckResult, ...], *, first: tuple[str, ...] = ()) -> tuple[str, ...]:
    """The run's warning list as the evaluate layer writes it."""
    out = list(first)
    for check in checks:
        where = check.name if check.slice is None else f"{check.name} [{check.slice.column} = {check.slice.value}]"
        if check.outcome == "inconclusive":
            out.append(
                f"{where}: inconclusive (the interval straddles the bound); the evaluation set is too "
                f"small to be sure, {'passed' if check.passed else 'failed'} by the 'estimate' rule"
            )
        elif check.outcome == "skipped":
            out.append(f"{where}: {check.reason}")
        out.extend(f"{where}: {w}" for w in check.warnings)
    return tuple(out)


def leak_gate_result() -> Result:
    """A failing run with every kind of row: pass, inconclusive, fail, skipped, floor-only."""
    checks = (overall_auc(), *recall_by_district(), floor_only_ap(), expected_cost_check())
    return Result(
        verdict="fail",
        checks=checks,
        confidence=CONF,
        resamples=2000,
        seed=20240611,
        on_inconclusive="estimate",
        adjust="none",
        policy_source="policies/leak-gate.toml",
        policy_hash=POLICY_HASH,
        candidate_source="scores/candidate.parquet",
        baseline_source="baselines/production",
        fingerprint=FINGERPRINT,
        n=10000,
        n_pos=151,
        n_neg=9849,
        warnings=run_warnings(checks, first=(MISMATCH_NOTE,)),
        methods=LEAK_METHODS,
        notes={
            "baseline_note": "production model adopted after the spring survey",
            "mismatch": MISMATCH_NOTE,
        },
    )


def passing_result() -> Result:
    """A passing run without a baseline: one floor-only check; no methods line given, so the
    report builds its own."""
    checks = (floor_only_ap(),)
    return Result(
        verdict="pass",
        checks=checks,
        confidence=CONF,
        resamples=2000,
        seed=7,
        on_inconclusive="estimate",
        adjust="none",
        policy_source="policies/floors.toml",
        policy_hash=POLICY_HASH,
        candidate_source="scores/candidate.csv",
        baseline_source=None,
        fingerprint=FINGERPRINT,
        n=10000,
        n_pos=151,
        n_neg=9849,
    )


def empty_result() -> Result:
    """A run whose policy had no checks (degenerate, but must still render)."""
    return Result(
        verdict="pass",
        checks=(),
        confidence=0.9,
        resamples=0,
        seed=0,
        on_inconclusive="fail",
        adjust="holm",
        policy_source="p.toml",
        policy_hash="",
        candidate_source="c.csv",
        baseline_source=None,
        fingerprint="",
        n=4,
        n_pos=2,
        n_neg=2,
    )


# Untrusted text that must not change the structure of a report.
HOSTILE_VALUES = (
    "a|b",
    "`rm -rf /`",
    "<script>alert(1)</script>",
    "line1\nline2\r\n# heading",
    "](http://x)",
    "[click](http://evil.example)",
    "![img](http://evil.example/x.png)",
    "&lt;b&gt; &amp; &#124;",
    "- item",
    "1. item",
    "> quote",
    "    indented",
    "**bold** _em_ ~~gone~~ $x$",
    "back\\|slash\\",
    "nul\x00esc\x1b\ufffe\ud800bell\x07",
    "rtl\u202eevil\u2028sep",
    "<!-- comment",
    '"quoted" \'single\'',
    "x" * 300,
)


def hostile_result() -> Result:
    """Hostile text everywhere a user controls it: slice column and values, check name,
    reasons, warnings, notes, file names."""
    checks = []
    for i, value in enumerate(HOSTILE_VALUES):
        interval = ci(0.70, 0.80, "delong")
        failed = i % 3 == 0
        outcome = "fail" if failed else ("skipped" if i % 3 == 1 else "pass")
        checks.append(
            CheckResult(
                name="AUC | <b>by</b> `slice`\n# x",
                metric="roc_auc",
                params={},
                slice=SliceKey("dist|rict<i>", value),
                outcome=outcome,  # type: ignore[arg-type]
                passed=not failed,
                value=None if outcome == "skipped" else 0.75,
                interval=None if outcome == "skipped" else interval,
                n=100,
                n_pos=40,
                n_neg=60,
                floor=None if outcome == "skipped" else Decision(
                    Bound("at_least", 0.8 if failed else 0.6), outcome, 0.75, interval  # type: ignore[arg-type]
                ),
                method="delong",
                reason=f"reason with {value}",
                warnings=(f"warning with {value}",),
            )
        )
    return Result(
        verdict="fail",
        checks=tuple(checks),
        confidence=CONF,
        resamples=1000,
        seed=1,
        on_inconclusive="estimate",
        adjust="none",
        policy_source="pol|icy\n<script>.toml",
        policy_hash="`abc`",
        candidate_source="cand](http://x)\x00.csv",
        baseline_source="<img src=x onerror=alert(1)>",
        fingerprint="<fp>",
        n=100,
        n_pos=40,
        n_neg=60,
        warnings=("global <b>warning</b>\n| injected | row |",),
        methods="",
        notes={"key|<x>": "value\n# not a heading", "[link](http://x)": "`code`"},
    )


def nonfinite_result() -> Result:
    """Non-finite floats where a buggy producer might leave them; JSON must write null."""
    interval = Interval(float("nan"), float("inf"), CONF, "delong")
    check = CheckResult(
        name="degenerate",
        metric="roc_auc",
        params={"x": float("nan")},
        slice=None,
        outcome="inconclusive",
        passed=False,
        value=float("nan"),
        interval=interval,
        baseline_value=float("inf"),
        delta=float("-inf"),
        delta_interval=interval,
        margin=Decision(Bound("max_drop", 0.01), "inconclusive", float("nan"), interval, p_value=float("nan")),
        threshold=float("inf"),
    )
    return Result(
        verdict="fail",
        checks=(check,),
        confidence=CONF,
        resamples=10,
        seed=0,
        on_inconclusive="fail",
        adjust="none",
        policy_source="p.toml",
        policy_hash="h",
        candidate_source="c.csv",
        baseline_source="b",
        fingerprint="f",
        n=2,
        n_pos=1,
        n_neg=1,
    )
