"""Charts for the optional ``plots`` extra: ROC and precision-recall curves, per-check trends.

Everything here draws from the same tie blocks the checks use (:mod:`gate.ranking`), so a chart
never disagrees with a reported number. matplotlib is imported inside the functions, never at
import of :mod:`gate`; without it installed, :func:`require_matplotlib` raises
:class:`gate.errors.MissingExtraError` with the install command, which the CLI maps to exit 2.

No pyplot and no global backend switch: each chart is a bare ``matplotlib.figure.Figure`` bound
to an Agg canvas, so plotting cannot disturb a caller's own matplotlib state and holds no global
figure registry. Output is made as reproducible as matplotlib allows (fixed SVG hash salt, no date
or version stamps in the file metadata) and written atomically (temp file, fsync, ``os.replace``).

Untrusted text (check names, run labels, alarm kinds) reaches matplotlib only through
:func:`_plain`, which disables mathtext so a ``$`` in a name cannot break or alter rendering.
"""

from __future__ import annotations

import contextlib
import hashlib
import io
import math
import re
import textwrap
import unicodedata
import warnings
from collections.abc import Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from gate._files import new_file_mode, write_bytes_atomic
from gate.errors import GateError, MissingExtraError

if TYPE_CHECKING:
    from matplotlib.figure import Figure

    from gate.ranking import TieBlocks
    from gate.results import Bound

__all__ = [
    "FORMATS",
    "INSTALL_HINT",
    "ChartPoint",
    "plot_pr",
    "plot_roc",
    "plot_trend",
    "trend_points",
    "require_matplotlib",
    "slugify",
]

INSTALL_HINT = "plotting needs the optional extra: pip install 'rankgate[plots]'"
FORMATS = ("png", "svg")

# Okabe & Ito (2008) colour-blind-safe palette; the order fixes candidate / baseline colours.
_COLOURS = ("#0072B2", "#E69F00", "#009E73", "#CC79A7", "#56B4E9", "#F0E442", "#000000")
_ALARM_COLOUR = "#D55E00"
_ALARM_MARKERS = ("X", "v", "D", "^", "s", "P", "*")
_PNG_DPI = 120
_SVG_SALT = "rankgate"  # fixed salt: SVG element ids are the same from run to run
_MAX_LABEL = 80  # characters of an untrusted label kept in a legend or tick
_MAX_TICKS = 24  # run labels shown on the x axis before thinning

# Applied with rc_context around building *and* saving a figure: some settings are read when an
# artist is created, others when the file is written.
_RC: dict[str, Any] = {
    "svg.hashsalt": _SVG_SALT,
    "svg.fonttype": "path",  # glyphs as paths: the SVG renders the same without our fonts
    "font.size": 10,
    "axes.titlesize": 11,
    "axes.labelsize": 10,
    "legend.fontsize": 8.5,
    "axes.grid": True,
    "grid.alpha": 0.3,
    "text.usetex": False,
    "axes.formatter.useoffset": False,
    "path.simplify": False,  # never thin curve vertices: a step must stay a step
}


# --- the optional dependency ------------------------------------------------------------------


def require_matplotlib() -> Any:
    """Import and return the ``matplotlib`` module, or raise MissingExtraError with the install hint.

    Raises
    ------
    MissingExtraError
        When matplotlib is not importable (the ``plots`` extra is not installed).
    """
    try:
        import matplotlib
        import matplotlib.figure  # noqa: F401  (the pieces we use; fail here, not mid-plot)
        from matplotlib.backends import backend_agg  # noqa: F401
    except ImportError:
        raise MissingExtraError(INSTALL_HINT) from None
    return matplotlib


# --- inputs -----------------------------------------------------------------------------------


@dataclass(frozen=True)
class ChartPoint:
    """One run of one check in a trend chart.

    Attributes
    ----------
    label : the run's name on the x axis (a date, a commit, a run number).
    value : the check's value in that run; None when the run has no value (skipped).
    low, high : the reported interval, or None when the run has none.
    alarm : None, or the kind of alarm raised at this run (e.g. "bound", "drift"); each kind gets
        its own marker and legend entry. A drift alarm (a kind starting with "drift" or containing
        "cusum") is also annotated on the chart where it fires.
    """

    label: str
    value: float | None
    low: float | None = None
    high: float | None = None
    alarm: str | None = None


def slugify(text: str, *, max_length: int = 60) -> str:
    """A safe file-name stem for an untrusted name (a check name, a slice value).

    Only ``[a-z0-9._-]`` survive; accents are folded, everything else becomes ``-``; no leading
    dot or dash (no hidden files, nothing that reads as an option). When the name had to change,
    a short hash of the original is appended so that distinct names (``recall@5%`` and
    ``recall 5%``) never share a file. Never empty, never a path separator.

    Examples
    --------
    >>> slugify("district-7")
    'district-7'
    >>> slugify("../etc/passwd").startswith("etc-passwd-")
    True
    """
    if max_length < 16:
        raise ValueError(f"max_length must be at least 16, got {max_length}")
    folded = unicodedata.normalize("NFKD", str(text)).encode("ascii", "ignore").decode("ascii")
    slug = re.sub(r"[^a-z0-9._-]+", "-", folded.lower())
    slug = re.sub(r"\.{2,}", ".", re.sub(r"-{2,}", "-", slug))
    slug = slug.lstrip("-._").rstrip("-.")
    if slug and slug == text and len(slug) <= max_length and slug.split(".")[0].upper() not in _RESERVED:
        return slug
    digest = hashlib.sha256(str(text).encode("utf-8", "surrogatepass")).hexdigest()[:8]
    head = slug[: max_length - 9].rstrip("-.") or "plot"
    return f"{head}-{digest}"


# Names some file systems refuse whatever the extension.
_RESERVED = frozenset(
    ["CON", "PRN", "AUX", "NUL"] + [f"COM{i}" for i in range(10)] + [f"LPT{i}" for i in range(10)]
)


def _plain(text: object, *, limit: int = _MAX_LABEL) -> str:
    """Untrusted text as a literal matplotlib label: one line, bounded, no mathtext."""
    s = _printable(" ".join(str(text).split()))
    if len(s) > limit:
        s = s[: limit - 1] + "\u2026"
    # An unescaped pair of "$" would switch matplotlib to mathtext (and may raise on bad TeX).
    return s.replace("$", r"\$")


def _printable(s: str) -> str:
    """Control, format, surrogate and unassigned code points shown as U+FFFD, not passed to fonts."""
    return "".join("\ufffd" if unicodedata.category(ch).startswith("C") else ch for ch in s)


def _title(text: object) -> str:
    """A figure title: like :func:`_plain` but wrapped onto at most three lines."""
    s = _printable(" ".join(str(text).split())) or "untitled"
    lines = textwrap.wrap(s, width=90, max_lines=3, placeholder=" \u2026")
    return "\n".join(line.replace("$", r"\$") for line in lines)


def _check_formats(formats: Iterable[str]) -> tuple[str, ...]:
    if isinstance(formats, str):
        formats = (formats,)
    out: list[str] = []
    for fmt in formats:
        f = str(fmt).lower().lstrip(".")
        if f not in FORMATS:
            raise GateError(f"plot format {fmt!r} is not supported (choose from {', '.join(FORMATS)})")
        if f not in out:
            out.append(f)
    if not out:
        raise GateError("no plot format requested (choose from png, svg)")
    return tuple(out)


def _stem(path: Path | str) -> Path:
    """The output stem: ``path`` itself, or ``path`` without a ``.png`` / ``.svg`` suffix.

    Other suffixes are kept (``roc.v2`` writes ``roc.v2.png``), so dots in a stem are safe.
    """
    p = Path(path)
    if p.suffix.lower().lstrip(".") in FORMATS:
        p = p.with_suffix("")
    if not p.name or p.name in (".", ".."):
        raise GateError(f"plot path {str(path)!r} has no file name")
    return p


def _check_curves(curves: Mapping[str, TieBlocks], what: str) -> list[tuple[str, TieBlocks]]:
    from gate.ranking import TieBlocks

    if not isinstance(curves, Mapping) or not curves:
        raise GateError(f"{what} needs at least one labelled set of scores, got none")
    items = []
    for label, blocks in curves.items():
        if not isinstance(blocks, TieBlocks):
            raise GateError(f"{what}: curve {label!r} is a {type(blocks).__name__}, not TieBlocks")
        if blocks.batched:
            raise GateError(f"{what}: curve {label!r} is a batch of replicates; plot one set of scores")
        items.append((str(label), blocks))
    if len(items) > len(_COLOURS):
        raise GateError(f"{what}: at most {len(_COLOURS)} curves per chart, got {len(items)}")
    return items


def _check_fraction(name: str, value: float | None) -> float | None:
    if value is None:
        return None
    v = float(value)
    if not (math.isfinite(v) and 0.0 < v < 1.0):
        raise GateError(f"{name} must lie strictly between 0 and 1, got {value!r}")
    return v


# --- figure plumbing --------------------------------------------------------------------------


@contextlib.contextmanager
def _style() -> Iterator[Any]:
    mpl = require_matplotlib()
    with mpl.rc_context(_RC), warnings.catch_warnings():
        # A name in a script the default font lacks renders as boxes; that is no reason to
        # print a warning from a library that never prints.
        warnings.filterwarnings("ignore", message=r"Glyph \d+ .*missing from", category=UserWarning)
        yield mpl


def _new_figure(ncols: int = 1, *, width: float | None = None, height: float = 4.8) -> Figure:
    """A pyplot-free figure on its own Agg canvas (no global backend, no figure registry)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width or 6.4 * ncols - 0.6 * (ncols - 1), height), layout="constrained")
    FigureCanvasAgg(fig)
    return fig


def _metadata(fmt: str) -> dict[str, Any]:
    # No dates and no version stamps: the same inputs give the same bytes.
    if fmt == "svg":
        return {"Date": None, "Creator": "rankgate"}
    return {"Software": "rankgate"}


def _render(fig: Figure, fmt: str) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format=fmt, dpi=_PNG_DPI, metadata=_metadata(fmt))
    return buf.getvalue()


def _save(fig: Figure, path: Path | str, formats: tuple[str, ...]) -> list[Path]:
    stem = _stem(path)
    try:
        stem.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise GateError(f"cannot create plot directory {str(stem.parent)!r}: {exc.strerror or exc}") from None
    written = []
    for fmt in formats:
        target = stem.with_name(f"{stem.name}.{fmt}")
        _write_atomic(target, _render(fig, fmt))
        written.append(target)
    return written


def _write_atomic(target: Path, data: bytes) -> None:
    """Temp file in the target directory, fsync, os.replace: never a half-written chart."""
    try:
        # mkstemp makes 0600; a chart is as readable as any file
        write_bytes_atomic(target, data, mode=new_file_mode())
    except OSError as exc:
        raise GateError(f"cannot write plot {str(target)!r}: {exc.strerror or exc}") from None


def _fmt(x: float) -> str:
    return f"{x:.3f}"


def _fmt_rate(x: float) -> str:
    """An FPR cap as written in a policy: 0.05, 0.001 (no trailing zeros, no exponent)."""
    return f"{x:.6f}".rstrip("0").rstrip(".")


# --- ROC ----------------------------------------------------------------------------------------


def plot_roc(
    curves: Mapping[str, TieBlocks],
    *,
    title: str,
    fpr_cap: float | None = None,
    hull: bool = False,
    path: Path | str,
    formats: Iterable[str] = FORMATS,
) -> list[Path]:
    """ROC curves of several score sets (e.g. candidate and baseline) on one chart.

    Parameters
    ----------
    curves : mapping label -> TieBlocks (unbatched), drawn in order; the label and its AUC form
        the legend entry, e.g. ``{"candidate": ..., "baseline": ...}``.
    title : chart title; name the check (untrusted text is shown literally).
    fpr_cap : the policy's false-positive-rate cap. When given, it is marked with a vertical line
        and a second panel zooms into FPR in [0, 2 * cap] (caps are small, e.g. 0.05, and the
        part of the curve a capped check judges is invisible at full scale); the operating point
        of each curve at the cap (highest recall with FPR <= cap, tie blocks never split) is marked.
    hull : also draw each curve's ROC convex hull (dashed) with its area.
    path : output stem; ``.png`` / ``.svg`` are appended (a given ``.png`` / ``.svg`` suffix is
        replaced). The parent directory is created when missing.
    formats : any of ``"png"``, ``"svg"``.

    Returns
    -------
    list of Path : the files written, one per format, in the order of ``formats``.

    Raises
    ------
    MissingExtraError
        matplotlib is not installed.
    UndefinedMetricError
        A curve has no positives or no negatives.
    GateError
        Bad arguments (no curves, batched blocks, cap outside (0, 1), unknown format) or the
        file cannot be written.

    Notes
    -----
    One ROC point per tie block, joined by straight lines: a tie block holding both classes is
    a diagonal segment, which is exactly how the reported AUC counts a tied pair (one half).
    """
    with _style():
        fig = _roc_figure(curves, title=title, fpr_cap=fpr_cap, hull=hull)
        return _save(fig, path, _check_formats(formats))


def _roc_figure(
    curves: Mapping[str, TieBlocks], *, title: str, fpr_cap: float | None, hull: bool
) -> Figure:
    from gate.ranking import hull_auc, recall_at_fpr, roc_auc, roc_curve, roc_hull

    items = _check_curves(curves, "ROC plot")
    cap = _check_fraction("fpr_cap", fpr_cap)
    drawn = []
    for label, blocks in items:
        curve = roc_curve(blocks)
        auc = float(roc_auc(blocks))
        hull_pts = roc_hull(blocks) if hull else None
        hull_area = float(hull_auc(blocks)) if hull else None
        point = recall_at_fpr(blocks, fpr=cap) if cap is not None else None
        drawn.append((label, curve, auc, hull_pts, hull_area, point))

    fig = _new_figure(2 if cap is not None else 1)
    axes = fig.subplots(1, 2 if cap is not None else 1, squeeze=False)[0]
    fig.suptitle(_title(title))
    full = axes[0]
    panels = [full] if cap is None else [full, axes[1]]
    for ax in panels:
        ax.plot([0, 1], [0, 1], color="0.6", linestyle=":", linewidth=1, label="chance (AUC 0.5)")
    for i, (label, curve, auc, hull_pts, hull_area, point) in enumerate(drawn):
        colour = _COLOURS[i]
        name = _plain(label)
        for ax in panels:
            ax.plot(
                curve.fpr, curve.tpr, color=colour, linewidth=1.8,
                label=f"{name} (AUC {_fmt(auc)})",
            )
            if hull_pts is not None:
                ax.plot(
                    hull_pts[0], hull_pts[1], color=colour, linewidth=1.2, linestyle="--",
                    label=f"{name} hull (AUC {_fmt(hull_area)})",
                )
        if point is not None:
            axes[1].plot(
                [point.fpr], [point.recall], marker="o", markersize=7, color=colour,
                markeredgecolor="black", linestyle="none",
                label=f"{name}: recall {_fmt(point.recall)} at FPR {_fmt(point.fpr)}",
            )
    full.set_title("ROC curve")
    full.set_xlim(0, 1)
    full.set_ylim(0, 1.005)
    full.set_aspect("equal", adjustable="box")
    if cap is not None:
        zoom = axes[1]
        for ax in panels:
            ax.axvline(
                cap, color=_ALARM_COLOUR, linestyle="-.", linewidth=1.2,
                label=f"FPR cap {_fmt_rate(cap)}",
            )
        right = min(1.0, 2.0 * cap)
        zoom.set_xlim(0, right)
        top = max((_visible_top(curve, right) for _, curve, *_ in drawn), default=1.0)
        zoom.set_ylim(0, min(1.005, max(0.05, top * 1.08 + 0.02)))
        zoom.set_title(f"zoom: FPR 0 to {_fmt_rate(right)}")
        # The zoom panel's legend names only what is new there; colours match the full panel.
        handles, labels = zoom.get_legend_handles_labels()
        keep = [i for i, text in enumerate(labels) if " at FPR " in text or text.startswith("FPR cap")]
        zoom.legend([handles[i] for i in keep], [labels[i] for i in keep], loc="lower right")
    for ax in panels:
        ax.set_xlabel("false-positive rate (FPR)")
        ax.set_ylabel("true-positive rate (recall)")
    full.legend(loc="lower right")
    return fig


def _visible_top(curve: Any, right: float) -> float:
    """The highest recall the chart draws for FPR in [0, right] (ROC points joined linearly)."""
    x = np.asarray(curve.fpr, dtype=float)
    y = np.asarray(curve.tpr, dtype=float)
    top = float(y[x <= right].max(initial=0.0))
    j = int(np.searchsorted(x, right, side="right"))
    if 0 < j < x.size and x[j] > x[j - 1]:  # the segment crossing the right edge
        top = max(top, float(y[j - 1] + (y[j] - y[j - 1]) * (right - x[j - 1]) / (x[j] - x[j - 1])))
    return top


# --- precision-recall -------------------------------------------------------------------------


def plot_pr(
    curves: Mapping[str, TieBlocks],
    *,
    title: str,
    path: Path | str,
    formats: Iterable[str] = FORMATS,
) -> list[Path]:
    """Precision-recall curves drawn as steps, with the prevalence (no-skill) line.

    Parameters
    ----------
    curves : mapping label -> TieBlocks (unbatched); legend entries carry the average precision.
    title : chart title; name the check.
    path, formats : as in :func:`plot_roc`.

    Returns
    -------
    list of Path : the files written, one per format.

    Raises
    ------
    MissingExtraError, UndefinedMetricError, GateError : as in :func:`plot_roc`.

    Notes
    -----
    The curve is the step function whose area is the reported average precision
    AP = sum_n (R_n - R_{n-1}) P_n over tie blocks: precision P_n holds on (R_{n-1}, R_n].
    There is no linear interpolation between PR points, which would overstate the area
    (Davis & Goadrich 2006). A random ranking has precision equal to the prevalence everywhere.

    References
    ----------
    Davis, J. & Goadrich, M. (2006). The relationship between precision-recall and ROC curves.
    ICML 2006, 233-240.
    """
    with _style():
        fig = _pr_figure(curves, title=title)
        return _save(fig, path, _check_formats(formats))


def _pr_steps(recall: Sequence[float], precision: Sequence[float]) -> tuple[np.ndarray, np.ndarray]:
    """Vertices for ``drawstyle="steps-pre"`` whose area is sum (R_n - R_{n-1}) P_n.

    ``recall`` / ``precision`` are the PR points of the tie blocks in threshold order (recall
    non-decreasing). The curve starts at recall 0 with the first block's precision.
    """
    r = np.asarray(recall, dtype=float)
    p = np.asarray(precision, dtype=float)
    return np.concatenate(([0.0], r)), np.concatenate((p[:1], p))


def _pr_points(curve: Any) -> tuple[np.ndarray, np.ndarray]:
    """The PR points with a defined precision (the "flag nothing" point has none)."""
    recall = np.asarray(curve.recall, dtype=float)
    precision = np.asarray([np.nan if v is None else v for v in curve.precision], dtype=float)
    thresholds = np.asarray(curve.thresholds, dtype=float)
    keep = np.isfinite(precision) & np.isfinite(thresholds)
    recall, precision = recall[keep], precision[keep]
    # Leading blocks with no positive have zero width (recall 0); drawn, they would only add a
    # spike at recall 0. The area, and so the AP the legend reports, is unchanged without them.
    first = int(np.searchsorted(recall, 0.0, side="right"))
    return recall[first:], precision[first:]


def _pr_figure(curves: Mapping[str, TieBlocks], *, title: str) -> Figure:
    from gate.ranking import average_precision, pr_curve

    items = _check_curves(curves, "precision-recall plot")
    fig = _new_figure(1)
    ax = fig.subplots()
    fig.suptitle(_title(title))
    prevalences: list[float] = []
    for i, (label, blocks) in enumerate(items):
        ap = float(average_precision(blocks))
        recall, precision = _pr_points(pr_curve(blocks))
        x, y = _pr_steps(recall, precision)
        ax.plot(
            x, y, drawstyle="steps-pre", color=_COLOURS[i], linewidth=1.8,
            label=f"{_plain(label)} (AP {_fmt(ap)})",
        )
        prev = float(blocks.total_pos) / float(blocks.total_pos + blocks.total_neg)
        if not any(math.isclose(prev, q, rel_tol=1e-9) for q in prevalences):
            prevalences.append(prev)
    for j, prev in enumerate(prevalences):
        ax.axhline(
            prev, color="0.45", linestyle=":" if j == 0 else "--", linewidth=1.1,
            label=f"prevalence {prev:.2%} (random ranking)",
        )
    ax.set_title("precision-recall curve")
    ax.set_xlim(0, 1)
    ax.set_ylim(0, 1.02)
    ax.set_xlabel("recall (true-positive rate)")
    ax.set_ylabel("precision")
    ax.legend(loc="upper right")
    return fig


# --- trend --------------------------------------------------------------------------------------


def plot_trend(
    series: Sequence[ChartPoint],
    *,
    title: str,
    path: Path | str,
    formats: Iterable[str] = FORMATS,
    bound: float | Bound | None = None,
    ylabel: str = "value",
    reference: float | None = None,
) -> list[Path]:
    """One check over successive runs: value with interval bars, the bound, alarms marked.

    Parameters
    ----------
    series : the runs in order (oldest first); see :class:`ChartPoint`.
    title : chart title; name the check.
    path, formats : as in :func:`plot_roc`.
    bound : the check's bound, drawn as a horizontal line: a number, or a
        :class:`gate.results.Bound` (``at_least`` / ``at_most`` at its value; for the margins
        ``max_drop`` / ``max_rise`` the series is taken to be the delta against the baseline and
        the line sits at ``-value`` / ``+value``).
    ylabel : y-axis label (e.g. the metric name).
    reference : the level the drift statistic measures against (the CUSUM reference mean),
        drawn as a dotted line when given.

    Returns
    -------
    list of Path : the files written, one per format.

    Raises
    ------
    MissingExtraError
        matplotlib is not installed.
    GateError
        Empty series, a non-finite value, an interval that does not contain its value, a bad
        bound or format, or the file cannot be written.
    """
    with _style():
        fig = _trend_figure(series, title=title, bound=bound, ylabel=ylabel, reference=reference)
        return _save(fig, path, _check_formats(formats))


def _check_series(series: Sequence[ChartPoint]) -> list[ChartPoint]:
    points = list(series)
    if not points:
        raise GateError("trend plot needs at least one run, got none")
    for i, pt in enumerate(points):
        where = f"trend run {i} ({pt.label!r})" if isinstance(pt, ChartPoint) else f"trend run {i}"
        if not isinstance(pt, ChartPoint):
            raise GateError(f"{where} is a {type(pt).__name__}, not a ChartPoint")
        nums = {"value": pt.value, "low": pt.low, "high": pt.high}
        for key, v in nums.items():
            if v is not None and not math.isfinite(float(v)):
                raise GateError(f"{where}: {key} is {v!r}, not a finite number")
        if (pt.low is None) != (pt.high is None):
            raise GateError(f"{where}: interval needs both low and high, got low={pt.low!r} high={pt.high!r}")
        if pt.low is not None and pt.value is None:
            raise GateError(f"{where}: interval [{pt.low!r}, {pt.high!r}] given without a value")
        if pt.low is not None and pt.value is not None:
            tol = 1e-9 * max(1.0, abs(float(pt.value)))
            if not (float(pt.low) - tol <= float(pt.value) <= float(pt.high) + tol):
                raise GateError(
                    f"{where}: interval [{pt.low!r}, {pt.high!r}] does not contain value {pt.value!r}"
                )
    return points


def _bound_line(bound: float | Bound | None) -> tuple[float, str] | None:
    from gate.results import Bound

    if bound is None:
        return None
    if isinstance(bound, Bound):
        v = float(bound.value)
        y = {"at_least": v, "at_most": v, "max_drop": -v, "max_rise": v}.get(bound.kind)
        if y is None:
            raise GateError(f"trend plot: unknown bound kind {bound.kind!r}")
        label = f"bound: {bound.kind} {v:g}"
    elif isinstance(bound, int | float) and not isinstance(bound, bool):
        y, label = float(bound), f"bound {float(bound):g}"
    else:
        raise GateError(f"trend plot: bound must be a number or a Bound, got {type(bound).__name__}")
    if not math.isfinite(y):
        raise GateError(f"trend plot: bound is {bound!r}, not a finite number")
    return y, label


def _trend_figure(
    series: Sequence[ChartPoint],
    *,
    title: str,
    bound: float | Bound | None,
    ylabel: str,
    reference: float | None = None,
) -> Figure:
    points = _check_series(series)
    line = _bound_line(bound)
    n = len(points)
    fig = _new_figure(1, width=min(14.0, max(6.4, 0.28 * n + 3.0)), height=4.8)
    ax = fig.subplots()
    fig.suptitle(_title(title))
    x = np.arange(n, dtype=float)
    value = np.array([np.nan if p.value is None else float(p.value) for p in points])
    has_iv = np.array([p.low is not None for p in points])

    legend: list[Any] = []  # handles in reading order: values, gaps, bound, alarms
    ax.plot(x, value, color=_COLOURS[0], linewidth=1.0, alpha=0.6)  # guide line; gaps at skipped runs
    if has_iv.any():
        lo = np.array([float(p.value) - float(p.low) if p.low is not None else 0.0 for p in points])
        hi = np.array([float(p.high) - float(p.value) if p.high is not None else 0.0 for p in points])
        legend.append(
            ax.errorbar(
                x[has_iv], value[has_iv], yerr=np.vstack([lo[has_iv], hi[has_iv]]), fmt="o",
                color=_COLOURS[0], ecolor=_COLOURS[0], elinewidth=1.2, capsize=3, markersize=4.5,
                label="value with interval",
            )
        )
    plain = ~has_iv & np.isfinite(value)
    if plain.any():
        legend += ax.plot(
            x[plain], value[plain], "o", color=_COLOURS[0], markersize=4.5,
            label="value (no interval)" if has_iv.any() else "value",
        )
    skipped = ~np.isfinite(value)
    if skipped.any():
        # Skipped runs keep their tick; a grey tick mark on the x axis says "no value here".
        legend += ax.plot(
            x[skipped], np.zeros(int(skipped.sum())), linestyle="none", marker="|", markersize=10,
            color="0.5", transform=ax.get_xaxis_transform(), clip_on=False, label="no value (skipped)",
        )
    if line is not None:
        legend.append(ax.axhline(line[0], color="0.25", linestyle="--", linewidth=1.2, label=_plain(line[1])))
    if reference is not None:
        if isinstance(reference, bool) or not isinstance(reference, int | float) or not math.isfinite(reference):
            raise GateError(f"trend plot: reference must be a finite number, got {reference!r}")
        legend.append(
            ax.axhline(
                float(reference), color=_COLOURS[2], linestyle=":", linewidth=1.4,
                label=f"drift reference {float(reference):.4g}",
            )
        )

    top = np.array([float(p.high) if p.high is not None else np.nan for p in points])
    top = np.where(np.isfinite(top), top, value)
    kinds = sorted({p.alarm for p in points if p.alarm})
    for k, kind in enumerate(kinds):
        idx = [i for i, p in enumerate(points) if p.alarm == kind]
        ys = [value[i] if np.isfinite(value[i]) else _fallback_y(value, line) for i in idx]
        legend += ax.plot(
            x[idx], ys, linestyle="none", marker=_ALARM_MARKERS[k % len(_ALARM_MARKERS)],
            markersize=10, markerfacecolor="none" if k % 2 else _ALARM_COLOUR,
            markeredgecolor=_ALARM_COLOUR, markeredgewidth=1.6, label=f"alarm: {_plain(kind, limit=40)}",
            zorder=5,
        )
        if not _is_cusum(kind):
            continue
        for i, y in zip(idx, ys, strict=True):
            if i > 0 and points[i - 1].alarm == kind:
                continue  # annotate where a CUSUM alarm starts, not every run it persists
            anchor = top[i] if np.isfinite(top[i]) else y
            ha = "right" if x[i] > 0.75 * (n - 1) and n > 3 else "left" if x[i] < 0.25 * (n - 1) else "center"
            ax.annotate(
                f"CUSUM fired at {_plain(points[i].label, limit=30)}", xy=(x[i], anchor),
                xytext=(0, 24), textcoords="offset points", ha=ha, va="bottom", fontsize=8.5,
                color=_ALARM_COLOUR, zorder=6,
                bbox={"boxstyle": "round,pad=0.2", "facecolor": "white", "edgecolor": _ALARM_COLOUR},
                arrowprops={"arrowstyle": "->", "color": _ALARM_COLOUR},
            )

    ax.set_xlim(-0.5, n - 0.5)
    ax.margins(y=0.22)  # head room for the CUSUM note and the legend
    step = max(1, math.ceil(n / _MAX_TICKS))
    ticks = list(range(0, n, step))
    ax.set_xticks(x[ticks], [_plain(points[i].label, limit=24) for i in ticks])
    longest = max(len(_plain(points[i].label, limit=24)) for i in ticks)
    if longest * len(ticks) > 60:
        for t in ax.get_xticklabels():
            t.set_rotation(40)
            t.set_horizontalalignment("right")
    ax.grid(axis="x", visible=False)
    ax.set_xlabel("run")
    ax.set_ylabel(_plain(ylabel))
    if legend:
        ax.legend(handles=legend, loc="best")
    return fig


def _is_cusum(kind: str) -> bool:
    """Alarm kinds that come from the CUSUM drift statistic (annotated where they fire)."""
    k = kind.lower()
    return "cusum" in k or k.startswith("drift")


def _fallback_y(value: np.ndarray, line: tuple[float, str] | None) -> float:
    """Where to mark an alarm on a run without a value: at the bound, else the series' middle."""
    if line is not None:
        return line[0]
    finite = value[np.isfinite(value)]
    return float(np.median(finite)) if finite.size else 0.0


def trend_points(series: Any, *, margin: bool = False) -> list[ChartPoint]:
    """Chart points from one :class:`gate.watch.Series` (one check in one slice over the runs).

    Parameters
    ----------
    series : a ``gate.watch.Series`` (read by attribute: ``points`` with ``run_id``, ``run_time``,
        ``label``, ``value``, ``interval``, ``delta``, ``delta_interval``; ``alarms`` with ``kind``
        and ``run_id``).
    margin : plot the difference against the baseline (``delta`` with ``delta_interval``), as a
        ``max_drop`` / ``max_rise`` check is judged, instead of the value.

    Returns
    -------
    list of ChartPoint : oldest first. A run's label is its own label, else its time
    (``YYYY-MM-DD HH:MM``), else ``run <id>``. Alarm kinds are "bound" and "drift (CUSUM)", or
    "bound + drift (CUSUM)" for a run that raised both.
    """
    kinds: dict[int, list[str]] = {}
    for alarm in series.alarms:
        kind = "drift (CUSUM)" if alarm.kind == "drift" else str(alarm.kind)
        if kind not in kinds.setdefault(alarm.run_id, []):
            kinds[alarm.run_id].append(kind)
    out = []
    for p in series.points:
        value, interval = (p.delta, p.delta_interval) if margin else (p.value, p.interval)
        if p.label:
            label = str(p.label)
        elif p.run_time is not None:
            label = p.run_time.strftime("%Y-%m-%d %H:%M")
        else:
            label = f"run {p.run_id}"
        raised = sorted(kinds.get(p.run_id, []))  # "bound" before "drift (CUSUM)"
        out.append(
            ChartPoint(
                label=label,
                value=value,
                low=interval.low if interval is not None and value is not None else None,
                high=interval.high if interval is not None and value is not None else None,
                alarm=" + ".join(raised) if raised else None,
            )
        )
    return out
