"""gate.plots: charts exist and open, show the reported numbers, stay safe with hostile names."""

from __future__ import annotations

import math
import re
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from gate.errors import GateError, MissingExtraError, UndefinedMetricError
from gate.ranking import TieBlocks, rank, tie_blocks
from gate.results import Bound

mpl = pytest.importorskip("matplotlib")

from gate import plots  # noqa: E402  (after the skip: the module imports fine without matplotlib, but the tests need it)
from gate.plots import ChartPoint, plot_pr, plot_roc, plot_trend, require_matplotlib, slugify  # noqa: E402

SVG_NS = "{http://www.w3.org/2000/svg}"


# Hanley & McNeil (1982), Radiology 143:29-36, CT rating table (REFERENCES.md section 1):
# ratings 1..5, higher = more suspicious.
HM_NEG = [33, 6, 6, 11, 2]
HM_POS = [3, 2, 2, 11, 33]


def hm_scores() -> tuple[np.ndarray, np.ndarray]:
    ratings = np.arange(1, 6, dtype=float)
    scores = np.concatenate([np.repeat(ratings, HM_NEG), np.repeat(ratings, HM_POS)])
    labels = np.concatenate([np.zeros(sum(HM_NEG), bool), np.ones(sum(HM_POS), bool)])
    return scores, labels


@pytest.fixture(scope="module")
def hm() -> TieBlocks:
    return tie_blocks(*hm_scores())


@pytest.fixture(scope="module")
def pair() -> dict[str, TieBlocks]:
    # Leak scenario shape (rare positives, rounded scores so there are ties); invented data, only
    # used to exercise drawing, never as a check value.
    rng = np.random.default_rng(20240501)
    y = rng.random(3000) < 0.03
    cand = np.round(rng.normal(1.5 * y, 1.0), 2)
    base = np.round(rng.normal(1.1 * y, 1.0), 2)
    return {"candidate": tie_blocks(cand, y), "baseline": tie_blocks(base, y)}


def legend_texts(ax) -> list[str]:
    legend = ax.get_legend()
    assert legend is not None
    return [t.get_text() for t in legend.get_texts()]


def assert_png(path: Path, *, min_w: int = 500, min_h: int = 350) -> None:
    from matplotlib.image import imread

    assert path.suffix == ".png" and path.stat().st_size > 10_000
    img = imread(path)
    assert img.ndim == 3 and img.shape[2] in (3, 4)
    h, w = img.shape[:2]
    assert min_w <= w <= 2500 and min_h <= h <= 1500
    assert img.std() > 0.05  # not a blank canvas


def assert_svg(path: Path) -> ET.Element:
    assert path.suffix == ".svg" and path.stat().st_size > 10_000
    root = ET.parse(path).getroot()
    assert root.tag == f"{SVG_NS}svg"
    return root


# --- the optional extra ---------------------------------------------------------------------


def test_require_matplotlib_returns_the_module() -> None:
    assert require_matplotlib() is mpl


def test_missing_matplotlib_raises_with_install_hint(monkeypatch, tmp_path, hm) -> None:
    monkeypatch.setitem(sys.modules, "matplotlib", None)  # makes `import matplotlib` raise ImportError
    with pytest.raises(MissingExtraError, match=re.escape("pip install 'rankgate[plots]'")):
        require_matplotlib()
    calls = [
        lambda: plot_roc({"candidate": hm}, title="t", path=tmp_path / "roc"),
        lambda: plot_pr({"candidate": hm}, title="t", path=tmp_path / "pr"),
        lambda: plot_trend([ChartPoint("r1", 0.5)], title="t", path=tmp_path / "trend"),
    ]
    for call in calls:
        with pytest.raises(MissingExtraError, match=r"optional extra"):
            call()
    assert list(tmp_path.iterdir()) == []


def test_import_is_lazy_and_plotting_leaves_global_state_alone(tmp_path) -> None:
    # Importing gate.plots must not import matplotlib (rankgate --help stays fast), and a plot
    # must neither import pyplot nor switch the process-wide backend.
    code = (
        "import sys\n"
        "import gate, gate.plots, gate.report.html\n"
        "assert 'matplotlib' not in sys.modules, 'matplotlib imported at import time'\n"
        "import matplotlib\n"
        "before = matplotlib.rcParams._get_backend_or_none()\n"
        "from gate.ranking import tie_blocks\n"
        "from gate.plots import plot_roc\n"
        "b = tie_blocks([0.9, 0.8, 0.3, 0.1], [True, False, True, False])\n"
        f"plot_roc({{'candidate': b}}, title='t', path=r'{tmp_path / 'roc'}', formats=['png'])\n"
        "assert 'matplotlib.pyplot' not in sys.modules, 'pyplot imported'\n"
        "assert matplotlib.rcParams._get_backend_or_none() == before, 'backend switched'\n"
    )
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    assert (tmp_path / "roc.png").exists()


# --- ROC --------------------------------------------------------------------------------------


def test_roc_files_open_and_parse(tmp_path, pair) -> None:
    written = plot_roc(pair, title="recall at 5% FPR", fpr_cap=0.05, hull=True, path=tmp_path / "roc")
    assert written == [tmp_path / "roc.png", tmp_path / "roc.svg"]
    assert_png(written[0], min_w=1000)  # two panels side by side
    assert_svg(written[1])
    assert sorted(p.name for p in tmp_path.iterdir()) == ["roc.png", "roc.svg"]  # no temp files left


def test_roc_draws_the_reference_points_and_reports_auc(hm) -> None:
    fig = plots._roc_figure({"candidate": hm}, title="HM", fpr_cap=0.05, hull=True)
    full, zoom = fig.axes
    curve = next(line for line in full.get_lines() if line.get_label().startswith("candidate (AUC"))
    # ROC points from REFERENCES.md section 1 (sklearn roc_curve, drop_intermediate=False).
    np.testing.assert_allclose(curve.get_xdata(), [0, 2 / 58, 13 / 58, 19 / 58, 25 / 58, 1], atol=1e-12)
    np.testing.assert_allclose(curve.get_ydata(), [0, 33 / 51, 44 / 51, 46 / 51, 48 / 51, 1], atol=1e-12)
    texts = legend_texts(full)
    # AUC 0.8931710615280595 (Hanley & McNeil 1982; REFERENCES.md), hull AUC equal (collinear point).
    assert "candidate (AUC 0.893)" in texts
    assert "candidate hull (AUC 0.893)" in texts
    assert "FPR cap 0.05" in texts
    hull = next(line for line in full.get_lines() if "hull" in line.get_label())
    # Hull vertices from REFERENCES.md: (19/58, 46/51) is on a hull edge.
    np.testing.assert_allclose(hull.get_xdata(), [0, 2 / 58, 13 / 58, 25 / 58, 1], atol=1e-12)
    # Operating point at FPR <= 0.05 (REFERENCES.md recall table: TPR 33/51 at FPR 2/58).
    assert "candidate: recall 0.647 at FPR 0.034" in legend_texts(zoom)
    assert zoom.get_xlim() == pytest.approx((0.0, 0.1))
    caps = [ln for ax in (full, zoom) for ln in ax.get_lines() if ln.get_label() == "FPR cap 0.05"]
    assert len(caps) == 2 and all(np.allclose(ln.get_xdata(), 0.05) for ln in caps)
    assert fig.get_suptitle() == "HM"


def test_roc_without_cap_is_one_panel_without_hull(hm) -> None:
    fig = plots._roc_figure({"candidate": hm, "baseline": hm}, title="t", fpr_cap=None, hull=False)
    assert len(fig.axes) == 1
    texts = legend_texts(fig.axes[0])
    assert texts == ["chance (AUC 0.5)", "candidate (AUC 0.893)", "baseline (AUC 0.893)"]


def test_roc_zoom_keeps_the_curve_in_view() -> None:
    # A strong model: at FPR 0.1 recall is near 1, so the zoomed y range must reach it.
    rng = np.random.default_rng(3)
    y = rng.random(2000) < 0.1
    b = tie_blocks(rng.normal(4.0 * y, 1.0), y)
    fig = plots._roc_figure({"candidate": b}, title="t", fpr_cap=0.05, hull=False)
    zoom = fig.axes[1]
    line = next(ln for ln in zoom.get_lines() if ln.get_label().startswith("candidate (AUC"))
    x, yv = np.asarray(line.get_xdata()), np.asarray(line.get_ydata())
    assert yv[x <= 0.1].max() <= zoom.get_ylim()[1]


@pytest.mark.parametrize(
    ("kwargs", "error", "match"),
    [
        ({"curves": {}}, GateError, "at least one"),
        ({"fpr_cap": 0.0}, GateError, "fpr_cap must lie strictly between 0 and 1"),
        ({"fpr_cap": 1.0}, GateError, "fpr_cap"),
        ({"fpr_cap": float("nan")}, GateError, "fpr_cap"),
        ({"formats": ("pdf",)}, GateError, "plot format 'pdf' is not supported"),
        ({"formats": ()}, GateError, "no plot format"),
    ],
)
def test_roc_rejects_bad_arguments(tmp_path, hm, kwargs, error, match) -> None:
    args = {"curves": {"candidate": hm}, "title": "t", "path": tmp_path / "roc"} | kwargs
    curves = args.pop("curves")
    with pytest.raises(error, match=match):
        plot_roc(curves, **args)
    assert list(tmp_path.iterdir()) == []


def test_roc_rejects_batched_and_single_class_blocks(tmp_path, hm) -> None:
    scores, labels = hm_scores()
    r = rank(scores, labels)
    batched = r.blocks(np.ones((3, scores.size)))
    with pytest.raises(GateError, match="batch of replicates"):
        plot_roc({"candidate": batched}, title="t", path=tmp_path / "roc")
    only_neg = tie_blocks(np.array([0.1, 0.2, 0.3]), np.array([False, False, False]))
    with pytest.raises(UndefinedMetricError):
        plot_roc({"candidate": only_neg}, title="t", path=tmp_path / "roc")
    with pytest.raises(GateError, match="not TieBlocks"):
        plot_roc({"candidate": (scores, labels)}, title="t", path=tmp_path / "roc")  # type: ignore[dict-item]


# --- precision-recall ---------------------------------------------------------------------------


def step_area(line) -> float:
    """Area under a steps-pre line: y[i] holds on (x[i-1], x[i]]."""
    assert line.get_drawstyle() == "steps-pre"
    x, y = np.asarray(line.get_xdata(), float), np.asarray(line.get_ydata(), float)
    return float(np.sum(np.diff(x) * y[1:]))


def test_pr_legend_and_step_area_match_average_precision(hm) -> None:
    fig = plots._pr_figure({"candidate": hm}, title="average precision")
    ax = fig.axes[0]
    # AP 0.8576399336817078 (sklearn average_precision_score on HM; REFERENCES.md section 1).
    assert "candidate (AP 0.858)" in legend_texts(ax)
    line = next(ln for ln in ax.get_lines() if ln.get_label().startswith("candidate"))
    assert step_area(line) == pytest.approx(0.8576399336817078, abs=1e-12)
    prevalence = next(ln for ln in ax.get_lines() if ln.get_label().startswith("prevalence"))
    assert np.allclose(prevalence.get_ydata(), 51 / 109)
    assert prevalence.get_label() == "prevalence 46.79% (random ranking)"


def test_pr_step_area_matches_sklearn_on_tied_scores() -> None:
    from sklearn.metrics import average_precision_score  # test reference only

    rng = np.random.default_rng(11)
    y = rng.random(400) < 0.2
    s = np.round(rng.normal(1.0 * y, 1.0), 1)  # coarse rounding: many tie blocks hold both classes
    fig = plots._pr_figure({"m": tie_blocks(s, y)}, title="t")
    line = next(ln for ln in fig.axes[0].get_lines() if ln.get_label().startswith("m (AP"))
    # sklearn's average_precision_score is the same step-wise sum over distinct thresholds.
    assert step_area(line) == pytest.approx(average_precision_score(y, s), abs=1e-12)


def test_pr_steps_helper_by_hand() -> None:
    # Worked by hand: blocks reach recall 0.5 at precision 1, then recall 1 at precision 2/3.
    x, y = plots._pr_steps([0.5, 1.0], [1.0, 2 / 3])
    assert x.tolist() == [0.0, 0.5, 1.0]
    assert y.tolist() == [1.0, 1.0, 2 / 3]
    assert float(np.sum(np.diff(x) * y[1:])) == pytest.approx(0.5 + 1 / 3)


def test_pr_files_open_and_parse(tmp_path, pair) -> None:
    written = plot_pr(pair, title="average precision, district north", path=tmp_path / "pr.png")
    assert [p.name for p in written] == ["pr.png", "pr.svg"]  # a given .png suffix is the stem's
    assert_png(written[0])
    assert_svg(written[1])


def test_pr_prevalence_drawn_once_for_the_same_eval_set(pair) -> None:
    fig = plots._pr_figure(pair, title="t")
    labels = [ln.get_label() for ln in fig.axes[0].get_lines()]
    assert sum(lab.startswith("prevalence") for lab in labels) == 1


# --- trend --------------------------------------------------------------------------------------


def trend_series() -> list[ChartPoint]:
    pts = [ChartPoint(f"run-{i}", 0.70 + 0.01 * (i % 3), 0.66 + 0.01 * (i % 3), 0.74 + 0.01 * (i % 3)) for i in range(6)]
    pts.append(ChartPoint("run-6", 0.64, 0.60, 0.68, alarm="bound"))
    pts.append(ChartPoint("run-7", None))
    pts += [ChartPoint(f"run-{i}", 0.62, 0.58, 0.66, alarm="cusum") for i in (8, 9)]
    pts.append(ChartPoint("run-10", 0.66))  # a value without an interval
    return pts


def test_trend_marks_bound_alarms_and_cusum_start() -> None:
    fig = plots._trend_figure(trend_series(), title="recall_at_fpr, district north", bound=Bound("at_least", 0.65), ylabel="recall")
    ax = fig.axes[0]
    texts = legend_texts(ax)
    assert texts == [
        "value with interval",
        "value (no interval)",
        "no value (skipped)",
        "bound: at_least 0.65",
        "alarm: bound",
        "alarm: cusum",
    ]
    bound = next(ln for ln in ax.get_lines() if ln.get_label() == "bound: at_least 0.65")
    assert np.allclose(bound.get_ydata(), 0.65)
    alarms = {ln.get_label(): ln for ln in ax.get_lines() if ln.get_label().startswith("alarm:")}
    assert alarms["alarm: bound"].get_xdata().tolist() == [6.0]
    assert alarms["alarm: cusum"].get_xdata().tolist() == [8.0, 9.0]
    assert alarms["alarm: bound"].get_marker() != alarms["alarm: cusum"].get_marker()
    notes = [t.get_text() for t in ax.texts]
    assert notes == ["CUSUM fired at run-8"]  # where it starts, not every run it persists
    assert [t.get_text() for t in ax.get_xticklabels()] == [f"run-{i}" for i in range(11)]
    assert ax.get_ylabel() == "recall"
    assert fig.get_suptitle() == "recall_at_fpr, district north"


def test_trend_error_bars_span_the_interval() -> None:
    fig = plots._trend_figure(trend_series(), title="t", bound=None, ylabel="value")
    ax = fig.axes[0]
    (container,) = ax.containers
    segments = container.lines[2][0].get_segments()
    assert len(segments) == 9  # runs with an interval
    lows_highs = sorted((float(seg[0][1]), float(seg[1][1])) for seg in segments)
    assert lows_highs[0] == pytest.approx((0.58, 0.66))


@pytest.mark.parametrize(
    ("bound", "y", "label"),
    [
        (0.8, 0.8, "bound 0.8"),
        (Bound("at_most", 0.2), 0.2, "bound: at_most 0.2"),
        (Bound("max_drop", 0.01), -0.01, "bound: max_drop 0.01"),  # the series is the delta
        (Bound("max_rise", 0.02), 0.02, "bound: max_rise 0.02"),
    ],
)
def test_trend_bound_line(bound, y, label) -> None:
    fig = plots._trend_figure([ChartPoint("a", 0.0), ChartPoint("b", 0.01)], title="t", bound=bound, ylabel="v")
    line = next(ln for ln in fig.axes[0].get_lines() if ln.get_label() == label)
    assert np.allclose(line.get_ydata(), y)


def test_trend_files_open_and_parse(tmp_path) -> None:
    written = plot_trend(trend_series(), title="nightly recall", path=tmp_path / "trend", bound=0.65)
    assert_png(written[0])
    assert_svg(written[1])


def test_trend_many_runs_thins_ticks() -> None:
    pts = [ChartPoint(f"2024-05-{i:03d}", 0.5) for i in range(100)]
    fig = plots._trend_figure(pts, title="t", bound=None, ylabel="v")
    labels = [t.get_text() for t in fig.axes[0].get_xticklabels()]
    assert 10 <= len(labels) <= 25 and labels[0] == "2024-05-000"


@pytest.mark.parametrize(
    ("series", "match"),
    [
        ([], "at least one run"),
        ([ChartPoint("a", float("nan"))], r"trend run 0 \('a'\): value is nan"),
        ([ChartPoint("a", 0.5, 0.6, 0.7)], "does not contain value 0.5"),
        ([ChartPoint("a", 0.5, 0.4, None)], "needs both low and high"),
        ([ChartPoint("a", None, 0.4, 0.6)], "without a value"),
        ([("a", 0.5)], "not a ChartPoint"),
    ],
)
def test_trend_rejects_bad_series(tmp_path, series, match) -> None:
    with pytest.raises(GateError, match=match):
        plot_trend(series, title="t", path=tmp_path / "trend")
    assert list(tmp_path.iterdir()) == []


def test_trend_rejects_bad_bound(tmp_path) -> None:
    with pytest.raises(GateError, match="bound must be a number or a Bound"):
        plot_trend([ChartPoint("a", 0.5)], title="t", path=tmp_path / "t", bound="0.5")  # type: ignore[arg-type]
    with pytest.raises(GateError, match="not a finite number"):
        plot_trend([ChartPoint("a", 0.5)], title="t", path=tmp_path / "t", bound=math.inf)


# --- hostile text, files, determinism -------------------------------------------------------------


HOSTILE = "recall $\\frac{1}{$ <script>alert(1)</script> \n\t_{x}^ \\ $$ % # \x00\u202e \u6f0f\u6c34 \U0001f4a7 end"


def test_hostile_names_render_literally(tmp_path, hm) -> None:
    written = plot_roc({HOSTILE: hm}, title=HOSTILE, fpr_cap=0.1, path=tmp_path / slugify(HOSTILE), formats=["svg"])
    assert_svg(written[0])
    fig = plots._roc_figure({HOSTILE: hm}, title=HOSTILE, fpr_cap=None, hull=False)
    title = fig.get_suptitle()
    assert "\n" not in title and "\t" not in title
    assert "$" not in title.replace(r"\$", "")  # every dollar escaped: no mathtext
    series = [ChartPoint(HOSTILE, 0.5, alarm=HOSTILE), ChartPoint("$x$", 0.4, alarm="cusum $")]
    plot_trend(series, title=HOSTILE, path=tmp_path / "t", formats=["png"], ylabel=HOSTILE)


def test_output_is_deterministic(tmp_path, hm) -> None:
    a = plot_roc({"candidate": hm}, title="t", hull=True, path=tmp_path / "a")
    b = plot_roc({"candidate": hm}, title="t", hull=True, path=tmp_path / "b")
    for x, y in zip(a, b, strict=True):
        assert x.read_bytes() == y.read_bytes(), x.name
    svg = a[1].read_text()
    assert "<dc:date>" not in svg and "Matplotlib v" not in svg


def test_formats_and_stems(tmp_path, hm) -> None:
    assert plot_roc({"c": hm}, title="t", path=tmp_path / "roc.v2", formats="svg") == [tmp_path / "roc.v2.svg"]
    assert plot_roc({"c": hm}, title="t", path=tmp_path / "x" / "y" / "roc.SVG", formats=["SVG", "svg"]) == [
        tmp_path / "x" / "y" / "roc.svg"
    ]


def test_unwritable_target_is_a_gate_error(tmp_path, hm) -> None:
    blocker = tmp_path / "file.txt"
    blocker.write_text("not a directory")
    with pytest.raises(GateError, match="cannot create plot directory"):
        plot_roc({"c": hm}, title="t", path=blocker / "roc", formats=["png"])
    with pytest.raises(GateError, match="has no file name"):
        plot_roc({"c": hm}, title="t", path=tmp_path / "..", formats=["png"])


# --- slugify ------------------------------------------------------------------------------------


SAFE = re.compile(r"^[a-z0-9][a-z0-9._-]*$")


@pytest.mark.parametrize(
    ("name", "expected"),
    [("recall-at-fpr", "recall-at-fpr"), ("auc_overall.v2", "auc_overall.v2"), ("district-7", "district-7")],
)
def test_slugify_keeps_safe_names(name, expected) -> None:
    assert slugify(name) == expected


@pytest.mark.parametrize(
    "name",
    ["../../etc/passwd", "a/b\\c", "", "...", ".hidden", "-rf", "CON", "nul", "Zürich Nord", "x" * 300, "a\x00b", "Recall"],
)
def test_slugify_makes_hostile_names_safe(name) -> None:
    slug = slugify(name)
    assert SAFE.match(slug), slug
    assert ".." not in slug and len(slug) <= 60
    assert slug.upper().split(".")[0] not in {"CON", "NUL"}


def test_slugify_keeps_distinct_names_distinct() -> None:
    names = ["recall@5%", "recall 5%", "recall/5%", "recall-5", "Recall-5", "zürich", "zurich"]
    assert len({slugify(n) for n in names}) == len(names)
    assert slugify("zürich").startswith("zurich-")


@settings(max_examples=200, deadline=None)
@given(st.text(max_size=120))
def test_slugify_is_always_a_safe_file_name(name) -> None:
    slug = slugify(name)
    assert SAFE.match(slug) and ".." not in slug and 1 <= len(slug) <= 60
    assert slugify(name) == slug


# --- from the watch layer's series ----------------------------------------------------------------


def watch_series():
    from datetime import datetime, timedelta

    from gate.stats.interval import Interval
    from gate.watch import Alarm, Drift, Series
    from gate.watch import TrendPoint as WatchPoint

    t0 = datetime(2024, 5, 1, 2, 30)
    values = [0.70, 0.71, 0.69, 0.66, 0.64, None]
    points = []
    for i, v in enumerate(values):
        iv = None if v is None else Interval(v - 0.03, v + 0.03, 0.95, "delong")
        delta = None if v is None else v - 0.70
        div = None if v is None else Interval(delta - 0.02, delta + 0.02, 0.95, "delong")
        points.append(
            WatchPoint(
                run_id=i + 1, run_time=t0 + timedelta(days=i), label="nightly-3" if i == 2 else None,
                outcome="pass", value=v, interval=iv, n_pos=40, baseline_value=0.70, delta=delta,
                delta_interval=div, se=None, role="monitored",
            )
        )
    bound = Bound("at_least", 0.65)
    alarms = (
        Alarm("drift", 5, t0 + timedelta(days=4), None, "CUSUM crossed h", onset_run_id=4, statistic=4.2),
        Alarm("bound", 5, t0 + timedelta(days=4), None, "below the floor", bound=bound, estimate=0.64),
    )
    return Series(
        name="recall at 5% FPR", metric="recall_at_fpr", params={"fpr": 0.05}, slice=None,
        higher_is_better=True, points=tuple(points), alarms=alarms,
        drift=Drift("fired", reference=0.70, fired_run_id=5, onset_run_id=4),
    )


def test_trend_points_from_a_watch_series() -> None:
    pts = plots.trend_points(watch_series())
    assert [p.label for p in pts] == [
        "2024-05-01 02:30", "2024-05-02 02:30", "nightly-3", "2024-05-04 02:30", "2024-05-05 02:30", "2024-05-06 02:30",
    ]
    assert [p.alarm for p in pts] == [None, None, None, None, "bound + drift (CUSUM)", None]
    assert pts[4].value == 0.64 and pts[4].low == pytest.approx(0.61) and pts[4].high == pytest.approx(0.67)
    assert pts[5].value is None and pts[5].low is None
    deltas = plots.trend_points(watch_series(), margin=True)
    assert deltas[4].value == pytest.approx(-0.06) and deltas[4].low == pytest.approx(-0.08)


def test_drift_alarm_is_annotated_and_reference_drawn() -> None:
    series = watch_series()
    fig = plots._trend_figure(
        plots.trend_points(series), title=series.name, bound=Bound("at_least", 0.65), ylabel="recall",
        reference=series.drift.reference,
    )
    ax = fig.axes[0]
    assert [t.get_text() for t in ax.texts] == ["CUSUM fired at 2024-05-05 02:30"]
    assert "drift reference 0.7" in legend_texts(ax)
    assert "alarm: bound + drift (CUSUM)" in legend_texts(ax)
    with pytest.raises(GateError, match="reference must be a finite number"):
        plots._trend_figure(plots.trend_points(series), title="t", bound=None, ylabel="v", reference=math.nan)
