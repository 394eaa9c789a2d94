"""The markdown summary: gate/report/markdown.py (and the formats in gate/report/_common.py).

Structure is checked by parsing the output with markdown-it-py (CommonMark with GFM tables),
an independent parser, rather than by matching our own strings only.
"""

from __future__ import annotations

import dataclasses
import functools
import os
import re
import subprocess
import sys
import textwrap

import pytest

from gate.report import _common as common
from gate.report import render_json, render_junit, render_markdown
from gate.report.escape import one_line
from gate.stats.interval import Interval
from tests import fixtures_results as fx

markdown_it = pytest.importorskip("markdown_it")


@functools.cache
def parser() -> markdown_it.MarkdownIt:
    return markdown_it.MarkdownIt("commonmark", {"html": True}).enable(["table", "strikethrough"])


def table_rows(markdown: str) -> list[list[str]]:
    """Cells of every table row (header first) as plain text, via markdown-it."""
    tokens = parser().parse(markdown)
    rows: list[list[str]] = []
    for i, token in enumerate(tokens):
        if token.type == "tr_open":
            rows.append([])
        elif token.type == "inline" and tokens[i - 1].type in ("th_open", "td_open"):
            rows[-1].append("".join(child.content for child in token.children))
    return rows


def lines_starting(markdown: str, prefix: str) -> list[str]:
    return [line for line in markdown.splitlines() if line.startswith(prefix)]


# --- layout -----------------------------------------------------------------------------------


def test_verdict_is_the_first_line() -> None:
    assert render_markdown(fx.leak_gate_result()).splitlines()[0] == "### rankgate: FAIL"
    assert render_markdown(fx.passing_result()).splitlines()[0] == "### rankgate: PASS"
    titled = render_markdown(fx.passing_result(), title="Leak model <v7> | nightly")
    assert titled.splitlines()[0] == "### Leak model \\<v7> \\| nightly: PASS"


def test_counts_line_follows_the_verdict() -> None:
    lines = render_markdown(fx.leak_gate_result()).splitlines()
    assert lines[2] == (
        "**FAIL**: 7 check results: 4 pass, 1 fail, 1 inconclusive (passed on the point estimate), 1 skipped."
    )


def test_one_table_row_per_check_and_slice() -> None:
    result = fx.leak_gate_result()
    rows = table_rows(render_markdown(result))
    assert rows[0] == [
        "check", "metric", "slice", "n (pos)", "candidate [95% CI]", "baseline",
        "difference [95% CI]", "bound", "outcome",
    ]
    assert len(rows) == 1 + len(result.checks)
    assert all(len(row) == 9 for row in rows)


def test_rows_show_value_interval_baseline_difference_bound_outcome() -> None:
    rows = {(r[0], r[2]): r for r in table_rows(render_markdown(fx.leak_gate_result()))[1:]}
    auc = rows[("overall AUC", "all")]
    assert auc[3:] == [
        "10000 (151)",
        "0.9123 [0.8904, 0.9342]",
        "0.9050",
        "+0.0073 [-0.0031, +0.0177]",
        ">= 0.8500 pass; drop <= 0.0200 pass",
        "PASS",
    ]
    south = rows[("recall at 1% FPR", "district = south")]
    assert south[1] == "recall_at_fpr (fpr=0.01)"
    assert south[4:] == [
        "0.6400 [0.5000, 0.7800]",
        "0.6600",
        "-0.0200 [-0.0800, +0.0400]",
        ">= 0.6000 inconclusive; drop <= 0.0500 inconclusive",
        "PASS (inconclusive)",
    ]
    assert rows[("recall at 1% FPR", "district = east")][-1] == "FAIL"
    west = rows[("recall at 1% FPR", "district = west")]
    assert west[3:] == ["900 (11)", "-", "-", "-", "-", "SKIPPED"]
    floor_only = rows[("average precision floor", "all")]
    assert floor_only[4:] == ["0.4517 [0.3902, 0.5133]", "-", "-", ">= 0.3000", "PASS"]
    cost = rows[("field-crew cost", "all")]
    assert cost[1] == "expected_cost (cost_fn=20, cost_fp=1)"
    assert cost[7] == "<= 0.0500 pass; rise <= 0.0050 pass"


def test_inconclusive_counted_as_failure_shows_fail() -> None:
    result = fx.leak_gate_result()
    checks = tuple(
        dataclasses.replace(c, passed=False) if c.outcome == "inconclusive" else c for c in result.checks
    )
    result = dataclasses.replace(result, checks=checks, on_inconclusive="fail")
    text = render_markdown(result)
    south = next(r for r in table_rows(text) if r[2] == "district = south")
    assert south[-1] == "FAIL (inconclusive)"
    assert "1 inconclusive (counted as a failure by the policy)" in text
    assert "- recall at 1% FPR \\[district = south\\]:" in text  # listed under Failed


def test_failed_section_gives_the_reason() -> None:
    text = render_markdown(fx.leak_gate_result())
    section = text.split("**Failed**\n\n", 1)[1].split("\n\n", 1)[0]
    assert section.splitlines() == [
        "- recall at 1% FPR \\[district = east\\]: interval \\[0.2895, 0.5526\\] below the floor 0.6; "
        "difference interval below -0.05"
    ]


def test_warnings_list_inconclusive_skipped_resolution_and_mismatch_once_each() -> None:
    result = fx.leak_gate_result()
    text = render_markdown(result)
    section = text.split("**Warnings**\n\n", 1)[1].split("\n\n", 1)[0].splitlines()
    assert len(section) == len(result.warnings)  # check warnings already listed are not repeated
    assert section[0] == "- " + fx.MISMATCH_NOTE
    joined = "\n".join(section)
    assert "\\[district = south\\]: inconclusive" in joined
    assert "\\[district = west\\]: skipped: 11 positives" in joined
    assert joined.count("below what this evaluation set can resolve") == 3
    # The mismatch note is a warning already; the notes section does not repeat it.
    notes = text.split("**Notes**\n\n", 1)[1].split("\n\n", 1)[0].splitlines()
    assert notes == ["- baseline_note: production model adopted after the spring survey"]


def test_check_warnings_not_in_the_run_list_are_shown() -> None:
    result = fx.hostile_result()  # its check warnings are not in Result.warnings
    text = render_markdown(result)
    section = text.split("**Warnings**\n\n", 1)[1].split("\n\n", 1)[0].splitlines()
    assert len(section) == len(result.warnings) + sum(len(c.warnings) for c in result.checks)


def test_methods_line_states_methods_confidence_resamples_seed() -> None:
    (line,) = lines_starting(render_markdown(fx.leak_gate_result()), "Methods: ")
    assert "DeLong" in line and "bootstrap" in line
    assert "Settings: confidence 95%, 2000 resamples, seed 20240611." in line
    # Built from the checks when the producer gave no methods line.
    (line,) = lines_starting(render_markdown(fx.passing_result()), "Methods: ")
    assert line == (
        "Methods: average_precision: bootstrap-percentile; inconclusive rule: estimate; multiplicity "
        "adjustment: none. Settings: confidence 95%, 2000 resamples, seed 7."
    )


def test_inputs_and_policy_lines() -> None:
    text = render_markdown(fx.leak_gate_result())
    assert (
        "Candidate scores/candidate.parquet: 10000 rows, 151 positive, 9849 negative; "
        "baseline baselines/production; evaluation set 9f86d081884c." in text
    )
    assert text.endswith("Policy policies/leak-gate.toml, sha256 5d41402abc4b.\n")
    assert "; no baseline;" in render_markdown(fx.passing_result())


def test_empty_result_renders() -> None:
    text = render_markdown(fx.empty_result())
    assert text.splitlines()[0] == "### rankgate: PASS"
    assert "No checks were evaluated." in text
    assert "Settings: confidence 90%, 0 resamples, seed 0." in text


def test_confidence_other_than_95_in_headers() -> None:
    result = dataclasses.replace(fx.passing_result(), confidence=0.9)
    rows = table_rows(render_markdown(result))
    assert rows[0][4] == "candidate [90% CI]"
    assert rows[1][4] == "0.4517 [0.3902, 0.5133] (95%)"  # the interval's own level differs: say so


def test_non_finite_numbers_are_spelled_out() -> None:
    row = table_rows(render_markdown(fx.nonfinite_result()))[1]
    assert row[4] == "nan [nan, inf]"
    assert row[5] == "inf"


def test_compact_enough_for_a_pull_request_comment() -> None:
    # One line per row, no line wider than a table row needs; a slice value of 300 characters
    # is cut in the table (the JSON keeps it whole).
    text = render_markdown(fx.hostile_result())
    assert "x" * 300 not in text
    assert "x" * 77 + "..." in text
    assert len(text.splitlines()) < 80


# --- hostile text -----------------------------------------------------------------------------


def test_hostile_text_cannot_add_rows_cells_html_links_or_headings() -> None:
    result = fx.hostile_result()
    text = render_markdown(result)
    tokens = parser().parse(text)
    types = [t.type for t in tokens]
    assert types.count("heading_open") == 1  # ours
    assert "html_block" not in types and "code_block" not in types and "fence" not in types
    assert types.count("table_open") == 1
    assert types.count("tr_open") == 1 + len(result.checks)
    inline_types = {child.type for t in tokens if t.type == "inline" for child in t.children}
    assert not inline_types & {"html_inline", "link_open", "image", "code_inline", "em_open", "s_open"}
    # Bold only where we put it: the verdict and the section titles.
    bold = [t for t in tokens if t.type == "inline" and any(ch.type == "strong_open" for ch in t.children)]
    contents = [t.content for t in bold]
    assert contents[0].startswith(f"**FAIL**: {len(result.checks)} check results: ")
    assert contents[1:] == ["**Failed**", "**Warnings**", "**Notes**"]


def test_hostile_slice_values_reach_the_cell_as_literal_text() -> None:
    result = fx.hostile_result()
    rows = table_rows(render_markdown(result))[1:]
    for row, check in zip(rows, result.checks, strict=True):
        expected = one_line(common.slice_text(check.slice))
        if len(common.slice_text(check.slice)) > 80:
            expected = one_line(common.slice_text(check.slice)[:77]) + "..."
        assert row[2] == expected.strip()
        assert row[0] == one_line(check.name)


def test_hostile_file_names_and_notes_are_escaped() -> None:
    text = render_markdown(fx.hostile_result())
    # No unescaped "<" that could open a tag, a comment or an autolink.
    assert re.search(r"(?<!\\)<[A-Za-z/!?]", text) is None
    assert "baseline \\<img src=x onerror=alert(1)>;" in text
    assert "Candidate cand\\](http://x)\\\\x00.csv:" in text
    assert "- key\\|\\<x>: value\\\\n\\# not a heading" in text


# --- formats ----------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("x", "expected"),
    [(0.0073, "+0.0073"), (-0.2105, "-0.2105"), (-0.00004, "0.0000"), (0.0, "0.0000"), (-0.0, "0.0000"),
     (None, "-")],
)
def test_signed_format(x: float | None, expected: str) -> None:
    assert common.fmt_signed(x) == expected


@pytest.mark.parametrize(
    ("x", "expected"),
    [(0.85, "0.8500"), (0.005, "0.0050"), (0.00025, "0.00025"), (1e-06, "1e-06"), (2.0, "2.0000")],
)
def test_policy_numbers_shown_exactly(x: float, expected: str) -> None:
    assert common.fmt_exact(x) == expected


def test_small_formats() -> None:
    assert common.fmt_percent(0.95) == "95%"
    assert common.fmt_percent(0.975) == "97.5%"
    assert common.fmt_param(20.0) == "20"
    assert common.fmt_param(0.01) == "0.01"
    assert common.fmt_value(1 / 3) == "0.3333"
    assert common.fmt_interval(Interval(0.1, 0.2, 0.95, "wilson")) == "[0.1000, 0.2000]"


# --- determinism ------------------------------------------------------------------------------


def test_identical_inputs_give_identical_bytes() -> None:
    for build in (fx.leak_gate_result, fx.hostile_result, fx.passing_result, fx.nonfinite_result):
        assert render_markdown(build()) == render_markdown(build())
        assert render_markdown(build(), title="t") == render_markdown(build(), title="t")


def test_reports_identical_across_processes_with_different_hash_seeds() -> None:
    # Set and dict iteration must not leak into the output: render in two interpreters with
    # different string-hash seeds and compare bytes.
    code = textwrap.dedent(
        """
        import sys
        from gate.report import render_json, render_junit, render_markdown
        from tests import fixtures_results as fx
        for build in (fx.leak_gate_result, fx.hostile_result):
            r = build()
            for text in (render_markdown(r), render_json(r), render_junit(r)):
                sys.stdout.buffer.write(text.encode("utf-8", "surrogateescape") + b"\\0")
        """
    )
    root = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
    outputs = []
    for seed in ("1", "2"):
        env = {**os.environ, "PYTHONHASHSEED": seed, "PYTHONPATH": root}
        proc = subprocess.run([sys.executable, "-c", code], capture_output=True, env=env, cwd=root, check=True)
        outputs.append(proc.stdout)
    assert outputs[0] == outputs[1]
    here = b"".join(
        text.encode("utf-8", "surrogateescape") + b"\0"
        for build in (fx.leak_gate_result, fx.hostile_result)
        for text in (render_markdown(build()), render_json(build()), render_junit(build()))
    )
    assert outputs[0] == here
