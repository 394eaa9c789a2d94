"""`rankgate trend --history PATH`: exit codes, reports, windows and bad inputs."""

from __future__ import annotations

import json
import subprocess
import sys
from datetime import datetime, timedelta, timezone
from pathlib import Path

import pytest
from typer.testing import CliRunner

from gate.cli import app
from gate.history import record_run
from gate.results import Bound, CheckResult, Decision, Result
from gate.stats.interval import Interval

Z975 = 1.959963984540054  # z(0.975), REFERENCES.md conventions
T0 = datetime(2024, 5, 1, 2, 0, tzinfo=timezone.utc)
runner = CliRunner()


def _result(value: float, *, se: float = 0.01, bound: float = 0.5) -> Result:
    iv = Interval(value - Z975 * se, value + Z975 * se, 0.95, "delong")
    outcome = "fail" if iv.high < bound else "pass" if iv.low >= bound else "inconclusive"
    check = CheckResult(
        name="leak recall", metric="roc_auc", params={}, slice=None, outcome=outcome,  # type: ignore[arg-type]
        passed=outcome != "fail", value=value, interval=iv, n=4000, n_pos=80, n_neg=3920,
        floor=Decision(Bound("at_least", bound), outcome, value, iv), method="delong",  # type: ignore[arg-type]
    )
    return Result(
        verdict="pass" if check.passed else "fail", checks=(check,), confidence=0.95, resamples=0, seed=0,
        on_inconclusive="estimate", adjust="none", policy_source="p.toml", policy_hash="a" * 64,
        candidate_source="c.csv", baseline_source=None, fingerprint="f" * 64, n=4000, n_pos=80, n_neg=3920,
    )


def _history(path: Path, values: list[float], **kwargs: float) -> Path:
    for day, value in enumerate(values):
        record_run(path, _result(value, **kwargs), label=f"night{day}", run_time=T0 + timedelta(days=day))
    return path


STABLE = [0.90, 0.91, 0.89, 0.90, 0.91, 0.90, 0.89, 0.90]
# By hand: reference = mean of runs 1-5 = 0.902; SE of a difference = 0.01 * sqrt(1 + 1/5) = 0.010954;
# runs 6-9 fall short by 0.017, 0.0195, 0.0185, 0.022 -> z = 1.552, 1.780, 1.689, 2.008 ->
# S = 1.052, 2.332, 3.521, 5.029 > 4: the drift alarm fires at run 9, the slide began at run 6.
DRIFTING = [0.90, 0.91, 0.89, 0.90, 0.91, 0.885, 0.8825, 0.8835, 0.88, 0.875, 0.87]


def test_stable_history_exits_0_and_prints_the_summary(tmp_path: Path) -> None:
    db = _history(tmp_path / "h.sqlite", STABLE)
    result = runner.invoke(app, ["trend", "--history", str(db)])
    assert result.exit_code == 0, result.output
    assert result.stdout.splitlines()[0] == "### rankgate trend: NO ALARM"


def test_drift_exits_1_and_names_the_runs(tmp_path: Path) -> None:
    db = _history(tmp_path / "h.sqlite", DRIFTING)
    result = runner.invoke(app, ["trend", "--history", str(db)])
    assert result.exit_code == 1, result.output
    assert result.stdout.splitlines()[0] == "### rankgate trend: ALARM"
    assert "DRIFT: CUSUM 5.03 > h = 4 at run 9 (label night8" in result.stdout
    assert "the slide began at run 6 (label night5" in result.stdout


def test_bound_failure_exits_1(tmp_path: Path) -> None:
    db = _history(tmp_path / "h.sqlite", [0.9, 0.9, 0.6], bound=0.8)
    result = runner.invoke(app, ["trend", "--history", str(db)])
    assert result.exit_code == 1
    assert "BOUND: run 3 (label night2" in result.stdout


def test_reports_are_written_and_quiet_prints_nothing(tmp_path: Path) -> None:
    db = _history(tmp_path / "h.sqlite", DRIFTING)
    md, js = tmp_path / "out" / "trend.md", tmp_path / "out" / "trend.json"
    result = runner.invoke(app, ["trend", "--history", str(db), "--summary", str(md), "--json", str(js), "--quiet"])
    assert result.exit_code == 1
    assert result.stdout == ""
    assert md.read_text().startswith("### rankgate trend: ALARM")
    doc = json.loads(js.read_text())
    assert doc["alarmed"] is True and doc["runs"]["count"] == len(DRIFTING)


def test_last_and_since_window_the_runs(tmp_path: Path) -> None:
    db = _history(tmp_path / "h.sqlite", DRIFTING)
    js = tmp_path / "t.json"
    # the last 6 runs start inside the decline: reference = mean of runs 6-10, no alarm
    result = runner.invoke(app, ["trend", "--history", str(db), "--last", "6", "--json", str(js), "--quiet"])
    assert json.loads(js.read_text())["runs"] == {
        "count": 6, "first_run_id": 6, "last_run_id": 11,
        "first_run_time": "2024-05-06T02:00:00.000000Z", "last_run_time": "2024-05-11T02:00:00.000000Z",
    }
    result = runner.invoke(app, ["trend", "--history", str(db), "--since", "2024-05-09", "--json", str(js), "--quiet"])
    assert result.exit_code == 0
    doc = json.loads(js.read_text())
    assert doc["runs"]["count"] == 3 and doc["series"][0]["drift"]["status"] == "too few runs"


def test_policy_watch_section_sets_the_cusum(tmp_path: Path) -> None:
    db = _history(tmp_path / "h.sqlite", DRIFTING)
    policy = tmp_path / "policy.toml"
    policy.write_text(
        '[watch]\ncusum_h = 40.0\n\n[[check]]\nname = "leak recall"\nmetric = "roc_auc"\nat_least = 0.5\n'
    )
    result = runner.invoke(app, ["trend", "--history", str(db), "--policy", str(policy)])
    assert result.exit_code == 0, result.output
    assert "CUSUM (h = 40)" in result.stdout


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--since", "yesterday"], "--since: 'yesterday' is not an ISO 8601 date"),
        (["--last", "0"], "--last must be a whole number >= 1"),
        (["--since", "2030-01-01"], "no runs to trend in the window"),
    ],
)
def test_bad_window_exits_2(tmp_path: Path, args: list[str], message: str) -> None:
    db = _history(tmp_path / "h.sqlite", STABLE)
    result = runner.invoke(app, ["trend", "--history", str(db), *args])
    assert result.exit_code == 2
    assert result.stderr.startswith("error: ") and message in result.stderr


def test_bad_history_files_exit_2(tmp_path: Path) -> None:
    result = runner.invoke(app, ["trend", "--history", str(tmp_path / "missing.sqlite")])
    assert result.exit_code == 2 and "missing.sqlite: no such file" in result.stderr
    text = tmp_path / "notes.txt"
    text.write_text("not a database\n")
    result = runner.invoke(app, ["trend", "--history", str(text)])
    assert result.exit_code == 2 and "notes.txt: not an SQLite database" in result.stderr
    assert "Traceback" not in result.output


def test_bad_policy_exits_2(tmp_path: Path) -> None:
    db = _history(tmp_path / "h.sqlite", STABLE)
    policy = tmp_path / "policy.toml"
    policy.write_text('[watch]\ncusum_h = -1\n\n[[check]]\nmetric = "roc_auc"\nat_least = 0.5\n')
    result = runner.invoke(app, ["trend", "--history", str(db), "--policy", str(policy)])
    assert result.exit_code == 2 and "cusum_h" in result.stderr


def test_real_process_exit_codes(tmp_path: Path) -> None:
    stable = _history(tmp_path / "stable.sqlite", STABLE)
    drifting = _history(tmp_path / "drifting.sqlite", DRIFTING)
    base = [sys.executable, "-m", "gate", "trend", "--quiet", "--history"]
    assert subprocess.run([*base, str(stable)], capture_output=True).returncode == 0
    assert subprocess.run([*base, str(drifting)], capture_output=True).returncode == 1
    done = subprocess.run([*base, str(tmp_path / "nope.sqlite")], capture_output=True, text=True)
    assert done.returncode == 2 and done.stderr.startswith("error: history ")
