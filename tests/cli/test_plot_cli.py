"""`rankgate plot`: ROC and precision-recall charts as PNG and SVG files, and an HTML page."""

from __future__ import annotations

import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
from typer.testing import CliRunner

from gate.cli import app

from tests.cli.gate_cases import FAST, assert_one_error_line, eval_set, write_scores, write_text

pytest.importorskip("matplotlib")

runner = CliRunner()

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # the PNG specification's file signature
ES = eval_set(400, prevalence=0.3, seed=31)


def test_plot_candidate_alone(tmp_path: Path) -> None:
    cand = write_scores(tmp_path / "cand.csv", ES, ES.scores(1.6, seed=1))
    out = tmp_path / "charts"
    result = runner.invoke(app, ["plot", "--candidate", str(cand), "--out", str(out)])
    assert result.exit_code == 0, result.stderr
    names = sorted(p.name for p in out.iterdir())
    assert names == ["precision-recall.png", "precision-recall.svg", "roc.png", "roc.svg"]
    assert sorted(result.stdout.splitlines()) == sorted(f"wrote {out / n}" for n in names)
    for name in names:
        data = (out / name).read_bytes()
        if name.endswith(".png"):
            assert data.startswith(PNG_SIGNATURE)
        else:
            assert ET.fromstring(data).tag.endswith("svg")


def test_plot_with_baseline_policy_slices_and_html(tmp_path: Path) -> None:
    es = eval_set(400, prevalence=0.3, seed=31, districts=("north", "../../outside", "a|b"))
    cand = write_scores(tmp_path / "cand.csv", es, es.scores(1.6, seed=1))
    base = write_scores(tmp_path / "base.csv", es, es.scores(1.4, seed=2))
    policy = write_text(
        tmp_path / "p.toml",
        FAST + '[[check]]\nname = "recall"\nmetric = "recall_at_fpr"\nfpr = 0.1\nat_least = 0.2\nby = "district"\n',
    )
    out, page = tmp_path / "charts", tmp_path / "plots.html"
    before = set(tmp_path.parent.iterdir())
    result = runner.invoke(
        app,
        ["plot", "--candidate", str(cand), "--baseline", str(base), "--policy", str(policy), "--out", str(out), "--html", str(page)],
    )
    assert result.exit_code == 0, result.stderr
    names = sorted(p.name for p in out.iterdir())
    roc_slices = [n for n in names if n.startswith("roc-district-") and n.endswith(".png")]
    assert len(roc_slices) == 3  # one ROC chart per district, each with a file name of its own
    assert all("/" not in n and ".." not in n for n in names)
    assert set(tmp_path.parent.iterdir()) == before  # nothing written outside tmp_path
    assert sorted(p.name for p in tmp_path.iterdir()) == ["base.csv", "cand.csv", "charts", "p.toml", "plots.html"]
    html = page.read_text(encoding="utf-8")
    assert html.startswith("<!DOCTYPE html>")
    assert html.count("data:image/") == len(names) // 2  # one embedded image per chart
    assert f"wrote {page}" in result.stdout


def test_plot_errors_are_one_line(tmp_path: Path) -> None:
    assert_one_error_line(
        runner.invoke(app, ["plot", "--candidate", str(tmp_path / "absent.csv"), "--out", str(tmp_path / "o")]),
        "absent.csv",
    )
    cand = write_scores(tmp_path / "cand.csv", ES, ES.scores(1.6, seed=1))
    other = write_scores(tmp_path / "other.csv", ES, ES.scores(1.4, seed=2), rows=slice(0, 300))
    assert_one_error_line(
        runner.invoke(app, ["plot", "--candidate", str(cand), "--baseline", str(other), "--out", str(tmp_path / "o")]),
        "not on the same eval set",
        "100 candidate ids not in the baseline",
    )


def test_chart_directory_that_is_a_file(tmp_path: Path) -> None:
    cand = write_scores(tmp_path / "cand.csv", ES, ES.scores(1.6, seed=1))
    policy = write_text(tmp_path / "p.toml", FAST + '[[check]]\nmetric = "roc_auc"\nat_least = 0.5\n')
    assert_one_error_line(
        runner.invoke(app, ["plot", "--candidate", str(cand), "--out", str(cand)]), "--out", "is not a directory"
    )
    history = tmp_path / "runs.sqlite"
    result = runner.invoke(
        app,
        ["check", "--policy", str(policy), "--candidate", str(cand), "--plots", str(policy), "--history", str(history), "--quiet"],
    )
    assert_one_error_line(result, "--plots", "is not a directory")
    assert not history.exists()  # refused before anything was recorded
