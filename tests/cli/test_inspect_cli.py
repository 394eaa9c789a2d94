"""`rankgate inspect` and `rankgate demo`: output, JSON, exit codes and error lines.

Figures are checked against REFERENCES.md section 1 (Hanley & McNeil 1982 rating table; values
recomputed there with scikit-learn 1.9.1 and numpy).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from collections.abc import Callable
from pathlib import Path

import pytest
from typer.testing import CliRunner

from gate.cli import app

from tests.cli.conftest import BAD_INPUTS

MakeFile = Callable[[str, str | bytes], Path]


def assert_one_error_line(result: object, fragment: str) -> None:
    """Exit 2, nothing on stdout, exactly one `error:` line on stderr, no traceback."""
    exit_code = getattr(result, "exit_code", None)
    if exit_code is None:
        exit_code = getattr(result, "returncode")
    stderr: str = getattr(result, "stderr")
    stdout: str = getattr(result, "stdout")
    assert exit_code == 2, (exit_code, stderr)
    assert stdout == ""
    lines = stderr.splitlines()
    assert len(lines) == 1, stderr
    assert lines[0].startswith("error: ")
    assert fragment in lines[0]
    assert "Traceback" not in stderr


def test_inspect_hm_text(runner: CliRunner, hm_csv: Path) -> None:
    result = runner.invoke(app, ["inspect", str(hm_csv)])
    assert result.exit_code == 0, result.stderr
    assert result.stderr == ""
    out = result.stdout
    assert "109  (51 positive, 58 negative)" in out
    assert "ROC AUC                  0.8932" in out  # HM 1982: 0.893
    assert "average precision        0.8576" in out  # sklearn average_precision_score
    assert "0.0560 raw, 0.7684 standardized (McClish)" in out  # sklearn roc_auc_score(max_fpr=0.1)
    assert "threshold 5, expected cost 0.183486 per example" in out  # 20/109, tie 4 vs 5 -> 5


def test_inspect_hm_json_matches_reference_values(runner: CliRunner, hm_csv: Path, tmp_path: Path) -> None:
    out = tmp_path / "reports" / "hm.json"
    result = runner.invoke(app, ["inspect", str(hm_csv), "--json", str(out)])
    assert result.exit_code == 0, result.stderr
    s = json.loads(out.read_text())
    assert (s["rows"], s["positives"], s["negatives"], s["weighted"]) == (109, 51, 58, False)
    assert s["prevalence"] == pytest.approx(51 / 109, abs=1e-15)
    # REFERENCES.md section 1 (HM): AUC = 2642/2958, AP from sklearn, pAUC from sklearn + numpy
    assert s["roc_auc"] == pytest.approx(0.8931710615280595, abs=1e-12)
    assert s["average_precision"] == pytest.approx(0.8576399336817078, abs=1e-12)
    assert s["partial_auc"]["raw"] == pytest.approx(0.055990534144692364, abs=1e-12)
    assert s["partial_auc"]["standardized"] == pytest.approx(0.7683712323404861, abs=1e-12)
    assert s["partial_auc"]["standardization"] == "mcclish"
    caps = {p["fpr_cap"]: p for p in s["operating_points"]}
    assert sorted(caps) == [0.001, 0.01, 0.05, 0.1]
    # recall at FPR <= 0.02 is 0 (nothing flagged); at 0.05 and 0.10 it is 33/51 at rating >= 5, FPR 2/58
    assert caps[0.01]["threshold"] is None and caps[0.01]["recall"] == 0.0 and caps[0.01]["precision"] is None
    for cap in (0.05, 0.1):
        assert caps[cap]["threshold"] == 5.0
        assert caps[cap]["recall"] == pytest.approx(33 / 51, abs=1e-15)
        assert caps[cap]["fpr"] == pytest.approx(2 / 58, abs=1e-15)
        assert (caps[cap]["tp"], caps[cap]["fp"], caps[cap]["tn"], caps[cap]["fn"]) == (33, 2, 56, 18)
    cost = s["cost_optimal"]
    assert cost["threshold"] == 5.0 and cost["expected_cost"] == pytest.approx(20 / 109, abs=1e-15)
    # the JSON summary is the same dict the text is rendered from
    assert "0.8932" in result.stdout


@pytest.mark.parametrize(
    ("cost_fp", "cost_fn", "threshold", "cost"),
    [("1", "2", 4.0, 27 / 109), ("2", "1", 5.0, 22 / 109), ("1", "5", 2.0, 40 / 109)],  # REFERENCES.md section 1
)
def test_inspect_costs(
    runner: CliRunner, hm_csv: Path, tmp_path: Path, cost_fp: str, cost_fn: str, threshold: float, cost: float
) -> None:
    out = tmp_path / "c.json"
    result = runner.invoke(app, ["inspect", str(hm_csv), "--cost-fp", cost_fp, "--cost-fn", cost_fn, "--json", str(out)])
    assert result.exit_code == 0, result.stderr
    c = json.loads(out.read_text())["cost_optimal"]
    assert c["threshold"] == threshold
    assert c["expected_cost"] == pytest.approx(cost, abs=1e-15)


def test_inspect_column_options(runner: CliRunner, make_file: MakeFile, tmp_path: Path) -> None:
    path = make_file("named.jsonl", "".join(
        json.dumps({"seg": s, "leak": y, "prob": p, "w": w}) + "\n"
        for s, y, p, w in [("a", "no", 0.1, 1), ("b", "no", 0.4, 1), ("c", "yes", 0.35, 1), ("d", "yes", 0.8, 1)]
    ))
    args = ["inspect", str(path), "--id-col", "seg", "--label-col", "leak", "--score-col", "prob",
            "--weight-col", "w", "--positive", "yes", "--json", str(tmp_path / "n.json")]
    result = runner.invoke(app, args)
    assert result.exit_code == 0, result.stderr
    s = json.loads((tmp_path / "n.json").read_text())
    assert s["weighted"] is True
    assert s["roc_auc"] == pytest.approx(0.75, abs=1e-15)  # sklearn roc_curve docstring data (REFERENCES.md 3)
    assert s["average_precision"] == pytest.approx(0.8333333333333333, abs=1e-15)
    assert "weighted                 yes" in result.stdout


def test_inspect_weighted_counts(runner: CliRunner, make_file: MakeFile, tmp_path: Path) -> None:
    # REFERENCES.md section 3, sample_weight row: weighted AUC 0.4444444444444445, AP 0.6333333333333333
    rows = zip([1, 0, 1, 0, 1, 0, 0], [0.9, 0.8, 0.7, 0.6, 0.4, 0.4, 0.2], [1, 2, 1, 1, 3, 1, 0.5], strict=True)
    text = "id,label,score,weight\n" + "".join(f"r{i},{y},{s},{w}\n" for i, (y, s, w) in enumerate(rows))
    result = runner.invoke(app, ["inspect", str(make_file("w.csv", text)), "--json", str(tmp_path / "w.json")])
    assert result.exit_code == 0, result.stderr
    s = json.loads((tmp_path / "w.json").read_text())
    assert s["roc_auc"] == pytest.approx(0.4444444444444445, abs=1e-12)
    assert s["average_precision"] == pytest.approx(0.6333333333333333, abs=1e-12)
    assert (s["weight_positives"], s["weight_negatives"]) == (5.0, 4.5)
    assert "weight 5 positive, 4.50 negative" in result.stdout


@pytest.mark.parametrize(("name", "content", "fragment"), BAD_INPUTS, ids=[b[0] for b in BAD_INPUTS])
def test_every_bad_input_exits_2_with_one_error_line(
    runner: CliRunner, make_file: MakeFile, name: str, content: str | bytes, fragment: str
) -> None:
    path = make_file(name, content)
    result = runner.invoke(app, ["inspect", str(path)])
    assert_one_error_line(result, fragment)
    assert str(path) in result.stderr


def test_missing_file_and_directory(runner: CliRunner, tmp_path: Path) -> None:
    assert_one_error_line(runner.invoke(app, ["inspect", str(tmp_path / "none.csv")]), "none.csv: file not found")
    (tmp_path / "d.csv").mkdir()
    assert_one_error_line(runner.invoke(app, ["inspect", str(tmp_path / "d.csv")]), "is a directory")


def test_wrong_column_option_names_the_columns(runner: CliRunner, small_csv: Path) -> None:
    result = runner.invoke(app, ["inspect", str(small_csv), "--score-col", "prob"])
    assert_one_error_line(result, "no score column 'prob'; the columns are: 'id', 'label', 'score', 'district'")
    result = runner.invoke(app, ["inspect", str(small_csv), "--positive", "leak"])
    assert_one_error_line(result, "the positive label value 'leak' does not occur; the values are '0', '1'")


@pytest.mark.parametrize(
    ("args", "fragment"),
    [
        (["--cost-fp", "-1"], "--cost-fp must be a finite non-negative number, got -1"),
        (["--cost-fn", "nan"], "--cost-fn must be a finite non-negative number"),
        (["--cost-fp", "0", "--cost-fn", "0"], "cannot both be 0"),
    ],
)
def test_bad_costs(runner: CliRunner, small_csv: Path, args: list[str], fragment: str) -> None:
    assert_one_error_line(runner.invoke(app, ["inspect", str(small_csv), *args]), fragment)


def test_json_into_a_directory_is_an_error(runner: CliRunner, small_csv: Path, tmp_path: Path) -> None:
    # the JSON is written before the text, so stdout stays empty
    result = runner.invoke(app, ["inspect", str(small_csv), "--json", str(tmp_path)])
    assert_one_error_line(result, "is a directory")


def test_demo_writes_the_scenario_files_reproducibly(runner: CliRunner, tmp_path: Path) -> None:
    out = tmp_path / "demo"
    result = runner.invoke(app, ["demo", "--out", str(out), "--nights", "6"])
    assert result.exit_code == 0, result.stderr
    names = {p.name for p in out.iterdir()}
    assert {"candidate-better.csv", "candidate-regressing.csv", "eval-set.csv", "production.csv"} <= names
    assert "== 2. rankgate check" in result.stdout
    # run twice: same bytes (fixed seed), files replaced in place
    first = (out / "candidate-better.csv").read_bytes()
    assert runner.invoke(app, ["demo", "--out", str(out), "--nights", "6"]).exit_code == 0
    assert (out / "candidate-better.csv").read_bytes() == first


def test_demo_into_a_file_is_an_error(runner: CliRunner, make_file: MakeFile) -> None:
    blocker = make_file("taken", "x")
    assert_one_error_line(runner.invoke(app, ["demo", "--out", str(blocker)]), "cannot create the demo directory")


# --- real processes: the console entry point, exit codes, stderr -------------------------------


def run(args: list[str], cwd: Path) -> subprocess.CompletedProcess[str]:
    env = {k: v for k, v in os.environ.items() if not k.startswith("PYTEST")}
    return subprocess.run(
        [sys.executable, "-m", "gate", *args], cwd=cwd, env=env, capture_output=True, text=True, timeout=120
    )


def test_subprocess_inspect_ok(hm_csv: Path, tmp_path: Path) -> None:
    proc = run(["inspect", str(hm_csv), "--json", "hm.json"], tmp_path)
    assert proc.returncode == 0, proc.stderr
    assert proc.stderr == ""
    assert "ROC AUC" in proc.stdout
    assert json.loads((tmp_path / "hm.json").read_text())["positives"] == 51


@pytest.mark.parametrize("index", [1, 13])  # malformed CSV, positive value absent
def test_subprocess_bad_input(make_file: MakeFile, tmp_path: Path, index: int) -> None:
    name, content, fragment = BAD_INPUTS[index]
    path = make_file(name, content)
    assert_one_error_line(run(["inspect", str(path)], tmp_path), fragment)


def test_subprocess_missing_file(tmp_path: Path) -> None:
    assert_one_error_line(run(["inspect", "absent.parquet"], tmp_path), "absent.parquet: file not found")


def test_subprocess_demo_default_directory(tmp_path: Path) -> None:
    proc = run(["demo", "--nights", "6"], tmp_path)
    assert proc.returncode == 0, proc.stderr
    assert (tmp_path / "rankgate-demo" / "candidate-regressing.csv").is_file()
    assert "Demo done" in proc.stdout
