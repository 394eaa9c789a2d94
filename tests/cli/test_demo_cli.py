"""`rankgate demo`: the invented leak-scoring scenario tells its story and writes its reports.

The demo data are invented (gate/demo.py, fixed seed): they are used here only to check the demo's
own story (exit codes and verdicts), never as reference values.
"""

from __future__ import annotations

import json
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
from typer.testing import CliRunner

from gate import demo
from gate.cli import app

from tests.cli.gate_cases import assert_one_error_line, write_text

runner = CliRunner()


def test_short_demo_tells_its_story(tmp_path: Path) -> None:
    out = tmp_path / "demo"
    result = runner.invoke(app, ["demo", "--out", str(out), "--nights", "8"])
    assert result.exit_code == 0, result.stdout[-2000:] + result.stderr
    assert result.stdout.rstrip().splitlines()[-1].startswith("Demo done:")

    better = json.loads((out / "candidate-better-report.json").read_text())
    regressing = json.loads((out / "candidate-regressing-report.json").read_text())
    assert better["verdict"] == "pass"
    assert regressing["verdict"] == "fail"
    # The story: the regressing candidate fails in its weak district.
    failed_slices = {c["slice"]["value"] for c in regressing["checks"] if not c["passed"] and c["slice"]}
    assert demo.REGRESSING_DISTRICT in failed_slices

    for name in ("candidate-better", "candidate-regressing"):
        summary = (out / f"{name}-summary.md").read_text()
        verdict = "PASS" if name == "candidate-better" else "FAIL"
        assert summary.splitlines()[0] == f"### rankgate: {name}: {verdict}"
        root = ET.parse(out / f"{name}-junit.xml").getroot()
        assert (root.get("failures") == "0") == (name == "candidate-better")
    assert (out / "trend.md").read_text().startswith("### rankgate trend")
    assert (out / "baseline" / "manifest.json").is_file()
    # The two packaged policies were copied next to the data, as the printed commands name them.
    assert (out / "leak-watch.toml").is_file() and (out / "nightly-watch.toml").is_file()


def test_demo_nights_out_of_range_is_a_usage_error(tmp_path: Path) -> None:
    result = runner.invoke(app, ["demo", "--out", str(tmp_path / "d"), "--nights", "2"])
    assert result.exit_code == 2
    assert "--nights" in result.stderr
    assert not (tmp_path / "d").exists()


def test_demo_into_a_file_is_an_error(tmp_path: Path) -> None:
    blocker = write_text(tmp_path / "taken", "x")
    assert_one_error_line(runner.invoke(app, ["demo", "--out", str(blocker)]), "cannot create the demo directory")


@pytest.mark.slow  # a month of nightly runs: about 10-15 s; the short demo above runs by default
def test_full_month_raises_the_trend_alarm(tmp_path: Path) -> None:
    out = tmp_path / "demo"
    result = runner.invoke(app, ["demo", "--out", str(out)])  # the default month of nights
    assert result.exit_code == 0, result.stdout[-2000:] + result.stderr
    assert (out / "trend.md").read_text().splitlines()[0].endswith(": ALARM")
    assert demo.DECAY_DISTRICT in result.stdout.rstrip().splitlines()[-1]
