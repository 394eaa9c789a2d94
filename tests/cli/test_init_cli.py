"""`rankgate init [PATH]`: writes the starter policy, which loads and runs; never overwrites."""

from __future__ import annotations

import json
from importlib.resources import files
from pathlib import Path

import pytest
from typer.testing import CliRunner

from gate.cli import app
from gate.policy import load_policy

from tests.cli.gate_cases import assert_one_error_line, eval_set, run_gate, write_scores, write_text

runner = CliRunner()

STARTER = files("gate").joinpath("data", "starter.toml").read_bytes()


def test_init_writes_a_policy_that_loads(tmp_path: Path) -> None:
    target = tmp_path / "policy.toml"
    result = runner.invoke(app, ["init", str(target)])
    assert result.exit_code == 0, result.stderr
    assert str(target) in result.stdout
    assert target.read_bytes() == STARTER
    policy = load_policy(target)
    assert [c.metric for c in policy.checks] == ["roc_auc", "recall_at_fpr"]
    assert not policy.needs_baseline  # the margins are commented out until a baseline exists


def test_init_default_path_is_in_the_working_directory(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    result = runner.invoke(app, ["init"])
    assert result.exit_code == 0, result.stderr
    assert (tmp_path / "rankgate.toml").read_bytes() == STARTER


def test_init_refuses_to_overwrite(tmp_path: Path) -> None:
    target = write_text(tmp_path / "policy.toml", "# my own policy\n")
    assert_one_error_line(runner.invoke(app, ["init", str(target)]), str(target), "already exists")
    assert target.read_text() == "# my own policy\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["policy.toml"]  # no temporary file left


def test_init_into_a_missing_directory(tmp_path: Path) -> None:
    assert_one_error_line(runner.invoke(app, ["init", str(tmp_path / "no" / "p.toml")]), "does not exist")


def test_starter_policy_runs_a_check(tmp_path: Path) -> None:
    target = tmp_path / "policy.toml"
    assert runner.invoke(app, ["init", str(target)]).exit_code == 0
    es = eval_set(400, prevalence=0.3, seed=3)
    cand = write_scores(tmp_path / "scores.csv", es, es.scores(1.6, seed=1), with_district=False)
    out = tmp_path / "r.json"
    result = runner.invoke(app, ["check", "--policy", str(target), "--candidate", str(cand), "--json", str(out), "--quiet"])
    assert result.exit_code in (0, 1), result.stderr
    report = json.loads(out.read_text())
    assert [c["name"] for c in report["checks"]] == ["ranking quality", "recall at 5% false alarms"]


def test_subprocess_init(tmp_path: Path) -> None:
    proc = run_gate(["init", "p.toml"], tmp_path)
    assert proc.returncode == 0, proc.stderr
    assert (tmp_path / "p.toml").read_bytes() == STARTER
    again = run_gate(["init", "p.toml"], tmp_path)
    assert_one_error_line(again, "p.toml: already exists")
