"""`rankgate adopt` end to end: the stored baseline, refusals, and adoption killed mid-write.

A killed adopt is a real ``python -m gate adopt`` process that gate/baseline.py's test hook
(RANKGATE_TEST_CRASH_AT=<stage>) kills with SIGKILL at one stage of the write, as a power cut
would; ``rankgate check`` must then still work, against the previous baseline when the crash came
before the commit point and against the new one after it. Which baseline a check used is read from
its JSON report and compared with scikit-learn's ``roc_auc_score`` of each model's scores.
"""

from __future__ import annotations

import json
import signal
from pathlib import Path

import pytest
from sklearn.metrics import roc_auc_score
from typer.testing import CliRunner

from gate.baseline import CRASH_STAGES
from gate.cli import app

from tests.cli.gate_cases import (
    assert_one_error_line,
    eval_set,
    margin_policy,
    run_gate,
    write_scores,
    write_text,
)

runner = CliRunner()

ES = eval_set(500, prevalence=0.3, seed=23)
OLD = ES.scores(1.4, seed=1)  # the model in production
NEW = ES.scores(1.7, seed=2)  # the retrained model, same eval set
CAND = ES.scores(1.6, seed=3)  # the next candidate that is checked against the baseline


def adopt(*args: str | Path):  # noqa: ANN201
    return runner.invoke(app, ["adopt", *map(str, args)])


def baseline_auc_used(tmp_path: Path, baseline: Path) -> float:
    """Run check against ``baseline`` and return the baseline's ROC AUC from the JSON report."""
    cand = write_scores(tmp_path / "next.csv", ES, CAND)
    policy = write_text(tmp_path / "margin.toml", margin_policy(0.2, at_least=0.5))
    out = tmp_path / "used.json"
    result = runner.invoke(
        app, ["check", "--policy", str(policy), "--candidate", str(cand), "--baseline", str(baseline), "--json", str(out), "--quiet"]
    )
    assert result.exit_code == 0, result.stderr
    return json.loads(out.read_text())["checks"][0]["baseline_value"]


def test_adopt_stores_the_scores_and_a_manifest(tmp_path: Path) -> None:
    scores = write_scores(tmp_path / "prod.csv", ES, OLD)
    directory = tmp_path / "baseline"
    result = adopt("--candidate", scores, "--baseline", directory, "--note", "release 41")
    assert result.exit_code == 0, result.stderr
    n_pos = int(ES.labels.sum())  # counted by hand from the labels written
    assert f"500 examples ({n_pos} positive)" in result.stdout
    manifest = json.loads((directory / "manifest.json").read_text())
    assert (manifest["n"], manifest["n_positive"], manifest["n_negative"]) == (500, n_pos, 500 - n_pos)
    assert manifest["note"] == "release 41" and manifest["source"] == "prod.csv"
    assert (directory / manifest["scores_file"]).is_file()
    # Reference: scikit-learn's roc_auc_score of the adopted scores.
    assert baseline_auc_used(tmp_path, directory) == pytest.approx(roc_auc_score(ES.labels, OLD), abs=1e-12)


def test_adopt_reads_columns_named_by_the_policy(tmp_path: Path) -> None:
    path = tmp_path / "renamed.csv"
    rows = ["segment,leak,prob"] + [f"{i},{'yes' if y else 'no'},{float(s)!r}" for i, y, s in zip(ES.ids, ES.labels, OLD, strict=True)]
    write_text(path, "\n".join(rows) + "\n")
    policy = write_text(
        tmp_path / "p.toml",
        '[data]\nid = "segment"\nlabel = "leak"\nscore = "prob"\npositive = "yes"\n'
        '[[check]]\nmetric = "roc_auc"\nat_least = 0.5\n',
    )
    result = adopt("--candidate", path, "--baseline", tmp_path / "b", "--policy", policy)
    assert result.exit_code == 0, result.stderr
    assert json.loads((tmp_path / "b" / "manifest.json").read_text())["n_positive"] == int(ES.labels.sum())
    # Without the policy the default column names are missing: one error line naming the file.
    assert_one_error_line(adopt("--candidate", path, "--baseline", tmp_path / "c"), "renamed.csv", "'id'")


def test_adopt_on_a_different_eval_set_needs_new_eval_set(tmp_path: Path) -> None:
    directory = tmp_path / "baseline"
    assert adopt("--candidate", write_scores(tmp_path / "old.csv", ES, OLD), "--baseline", directory).exit_code == 0
    before = (directory / "manifest.json").read_bytes()
    smaller = write_scores(tmp_path / "smaller.csv", ES, NEW, rows=slice(0, 450))
    assert_one_error_line(
        adopt("--candidate", smaller, "--baseline", directory),
        "different eval set",
        "50 baseline ids missing from the candidate",
        "--new-eval-set",
    )
    assert (directory / "manifest.json").read_bytes() == before  # nothing replaced
    result = adopt("--candidate", smaller, "--baseline", directory, "--new-eval-set")
    assert result.exit_code == 0, result.stderr
    assert json.loads((directory / "manifest.json").read_text())["n"] == 450
    assert len(list(directory.glob("scores-*.parquet"))) == 1  # the superseded scores are removed


def test_same_eval_set_replaces_without_the_flag(tmp_path: Path) -> None:
    directory = tmp_path / "baseline"
    assert adopt("--candidate", write_scores(tmp_path / "old.csv", ES, OLD), "--baseline", directory).exit_code == 0
    assert adopt("--candidate", write_scores(tmp_path / "new.csv", ES, NEW), "--baseline", directory).exit_code == 0
    assert baseline_auc_used(tmp_path, directory) == pytest.approx(roc_auc_score(ES.labels, NEW), abs=1e-12)


def test_adopt_refusals_are_one_error_line(tmp_path: Path) -> None:
    unrelated = tmp_path / "docs"
    write_text(unrelated / "README.txt", "not a baseline")
    scores = write_scores(tmp_path / "s.csv", ES, OLD)
    assert_one_error_line(adopt("--candidate", scores, "--baseline", unrelated), "not a rankgate baseline", "README.txt")
    one_class = write_text(tmp_path / "neg.csv", "id,label,score\na,0,0.1\nb,0,0.2\n")
    assert_one_error_line(adopt("--candidate", one_class, "--baseline", tmp_path / "b"), "neg.csv")
    assert_one_error_line(adopt("--candidate", tmp_path / "absent.csv", "--baseline", tmp_path / "b"), "absent.csv")
    blocker = write_text(tmp_path / "file-not-dir", "x")
    assert_one_error_line(adopt("--candidate", scores, "--baseline", blocker), "not a directory")


@pytest.mark.parametrize("stage", CRASH_STAGES)
def test_adopt_killed_mid_write_leaves_a_usable_baseline(tmp_path: Path, stage: str) -> None:
    directory = tmp_path / "baseline"
    old = write_scores(tmp_path / "old.csv", ES, OLD)
    new = write_scores(tmp_path / "new.csv", ES, NEW)
    assert adopt("--candidate", old, "--baseline", directory, "--note", "old").exit_code == 0

    proc = run_gate(
        ["adopt", "--candidate", str(new), "--baseline", str(directory), "--note", "new"],
        tmp_path,
        env={"RANKGATE_TEST_CRASH_AT": stage},
    )
    assert proc.returncode == -signal.SIGKILL, (proc.returncode, proc.stderr)

    committed = stage == "after-commit"
    note = json.loads((directory / "manifest.json").read_text())["note"]
    assert note == ("new" if committed else "old")
    expected = NEW if committed else OLD
    # Reference: scikit-learn's roc_auc_score of the scores that should be in force.
    assert baseline_auc_used(tmp_path, directory) == pytest.approx(roc_auc_score(ES.labels, expected), abs=1e-12)

    # The next adopt succeeds and leaves exactly one scores file and no temporary files.
    assert adopt("--candidate", new, "--baseline", directory, "--note", "retry").exit_code == 0
    names = sorted(p.name for p in directory.iterdir())
    assert [n for n in names if n.startswith("scores-")] == [json.loads((directory / "manifest.json").read_text())["scores_file"]]
    assert not [n for n in names if n.startswith(".tmp-")]


def test_subprocess_adopt_then_check(tmp_path: Path) -> None:
    old = write_scores(tmp_path / "old.csv", ES, OLD)
    proc = run_gate(["adopt", "--candidate", "old.csv", "--baseline", "baseline/"], tmp_path)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.startswith(f"adopted {old.name} as the baseline in baseline")
    cand = write_scores(tmp_path / "cand.csv", ES, CAND)
    write_text(tmp_path / "p.toml", margin_policy(0.2, at_least=0.5))
    checked = run_gate(["check", "--policy", "p.toml", "--candidate", cand.name, "--baseline", "baseline/", "--quiet"], tmp_path)
    assert (checked.returncode, checked.stderr) == (0, "")


def test_hostile_note_is_escaped_in_the_reports(tmp_path: Path) -> None:
    import xml.etree.ElementTree as ET

    directory = tmp_path / "baseline"
    note = "merged <script>x</script>\n# heading | pipe"
    assert adopt("--candidate", write_scores(tmp_path / "old.csv", ES, OLD), "--baseline", directory, "--note", note).exit_code == 0
    cand = write_scores(tmp_path / "next.csv", ES, CAND)
    policy = write_text(tmp_path / "margin.toml", margin_policy(0.2, at_least=0.5))
    junit, out = tmp_path / "j.xml", tmp_path / "r.json"
    result = runner.invoke(
        app,
        ["check", "--policy", str(policy), "--candidate", str(cand), "--baseline", str(directory), "--junit", str(junit), "--json", str(out)],
    )
    assert result.exit_code == 0, result.stderr
    (line,) = [x for x in result.stdout.splitlines() if x.startswith("- baseline_note:")]
    assert line == "- baseline_note: merged \\<script>x\\</script>\\\\n\\# heading \\| pipe"
    assert "<script>" not in junit.read_text()
    ET.parse(junit)
    assert json.loads(out.read_text())["notes"]["baseline_note"] == note
