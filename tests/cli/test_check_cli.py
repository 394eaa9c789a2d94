"""`rankgate check` end to end: exit codes, error lines, reports, baselines, escaping, determinism.

Inputs are the small synthetic tables of ``tests/cli/gate_cases.py`` written to tmp_path. Reference
values come from scikit-learn (``sklearn.metrics.roc_auc_score``) or from counting by hand; the
verdict of each case is built into the data by a wide gap between the model and its bound (an AUC
near 0.88 against floors of 0.6 or 0.97), so no case sits near a bound.
"""

from __future__ import annotations

import json
import re
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest
from sklearn.metrics import roc_auc_score
from typer.testing import CliRunner

from gate.cli import app

from tests.cli.gate_cases import (
    FAST,
    assert_one_error_line,
    eval_set,
    floor_policy,
    margin_policy,
    run_gate,
    write_scores,
    write_text,
)

runner = CliRunner()

ES = eval_set(600, prevalence=0.3, seed=11)
CAND_SCORES = ES.scores(1.6, seed=1)
BASE_SCORES = ES.scores(1.5, seed=2)


@pytest.fixture
def cand(tmp_path: Path) -> Path:
    return write_scores(tmp_path / "candidate.csv", ES, CAND_SCORES)


@pytest.fixture
def base_csv(tmp_path: Path) -> Path:
    return write_scores(tmp_path / "production.csv", ES, BASE_SCORES)


@pytest.fixture
def baseline_dir(tmp_path: Path, base_csv: Path) -> Path:
    directory = tmp_path / "baseline"
    result = runner.invoke(app, ["adopt", "--candidate", str(base_csv), "--baseline", str(directory)])
    assert result.exit_code == 0, result.stderr
    return directory


def invoke(*args: str | Path):  # noqa: ANN201 - typer's Result type
    return runner.invoke(app, ["check", *map(str, args)])


# --- exit codes on real files --------------------------------------------------------------------


def test_pass_exits_0_and_reports_the_reference_auc(tmp_path: Path, cand: Path) -> None:
    policy = write_text(tmp_path / "p.toml", floor_policy(0.6))
    out = tmp_path / "r.json"
    result = invoke("--policy", policy, "--candidate", cand, "--json", out)
    assert result.exit_code == 0, result.stderr
    assert result.stderr == ""
    assert result.stdout.splitlines()[0] == "### rankgate: PASS"
    report = json.loads(out.read_text())
    assert report["verdict"] == "pass"
    # Reference: scikit-learn's roc_auc_score on the same labels and scores.
    assert report["checks"][0]["value"] == pytest.approx(roc_auc_score(ES.labels, CAND_SCORES), abs=1e-12)
    assert report["checks"][0]["method"] == "delong"


def test_fail_exits_1(tmp_path: Path, cand: Path) -> None:
    policy = write_text(tmp_path / "p.toml", floor_policy(0.97))
    result = invoke("--policy", policy, "--candidate", cand)
    assert result.exit_code == 1, result.stderr
    assert result.stdout.splitlines()[0] == "### rankgate: FAIL"
    assert "**Failed**" in result.stdout


def test_margin_against_an_adopted_baseline(tmp_path: Path, cand: Path, baseline_dir: Path) -> None:
    policy = write_text(tmp_path / "p.toml", margin_policy(0.05))
    out = tmp_path / "r.json"
    result = invoke("--policy", policy, "--candidate", cand, "--baseline", baseline_dir, "--json", out)
    assert result.exit_code == 0, result.stderr
    report = json.loads(out.read_text())
    assert report["baseline_source"] == str(baseline_dir)  # the directory as given, as in the summary
    assert f"; baseline {baseline_dir}; " in result.stdout
    check = report["checks"][0]
    # Reference: scikit-learn's roc_auc_score of each model on the same eval set.
    assert check["baseline_value"] == pytest.approx(roc_auc_score(ES.labels, BASE_SCORES), abs=1e-12)
    assert check["delta"] == pytest.approx(
        roc_auc_score(ES.labels, CAND_SCORES) - roc_auc_score(ES.labels, BASE_SCORES), abs=1e-12
    )


def test_baseline_may_be_a_score_table(tmp_path: Path, cand: Path, base_csv: Path) -> None:
    policy = write_text(tmp_path / "p.toml", margin_policy(0.05))
    out = tmp_path / "r.json"
    result = invoke("--policy", policy, "--candidate", cand, "--baseline", base_csv, "--json", out, "--quiet")
    assert result.exit_code == 0, result.stderr
    check = json.loads(out.read_text())["checks"][0]
    assert check["baseline_value"] == pytest.approx(roc_auc_score(ES.labels, BASE_SCORES), abs=1e-12)


def test_a_regression_beyond_the_margin_exits_1(tmp_path: Path, baseline_dir: Path) -> None:
    worse = write_scores(tmp_path / "worse.csv", ES, ES.scores(0.5, seed=3))
    policy = write_text(tmp_path / "p.toml", margin_policy(0.02, at_least=0.5))
    out = tmp_path / "r.json"
    result = invoke("--policy", policy, "--candidate", worse, "--baseline", baseline_dir, "--json", out)
    assert result.exit_code == 1, result.stderr
    check = json.loads(out.read_text())["checks"][0]
    assert check["margin"]["outcome"] == "fail"
    assert check["delta_interval"][1] < -0.02


def test_subprocess_exit_codes(tmp_path: Path, cand: Path) -> None:
    ok = write_text(tmp_path / "ok.toml", floor_policy(0.6))
    strict = write_text(tmp_path / "strict.toml", floor_policy(0.97))
    passed = run_gate(["check", "--policy", str(ok), "--candidate", str(cand), "--quiet"], tmp_path)
    assert (passed.returncode, passed.stdout, passed.stderr) == (0, "", "")
    failed = run_gate(["check", "--policy", str(strict), "--candidate", str(cand)], tmp_path)
    assert failed.returncode == 1, failed.stderr
    assert failed.stdout.startswith("### rankgate: FAIL")
    missing = run_gate(["check", "--policy", str(ok), "--candidate", "absent.csv"], tmp_path)
    assert_one_error_line(missing, "absent.csv")


def test_subprocess_usage_mistake_exits_2(tmp_path: Path) -> None:
    proc = run_gate(["check", "--candidate", "x.csv"], tmp_path)  # --policy is required
    assert_one_error_line(proc, "--policy")


# --- policy errors: exit 2, one line naming file and key ----------------------------------------

POLICY_ERRORS = [
    ("unknown key", '[[check]]\nmetric = "roc_auc"\nat_lest = 0.7\n', "check[1].at_lest", "did you mean 'at_least'"),
    ("out of range", '[[check]]\nmetric = "recall_at_fpr"\nfpr = 1.5\nat_least = 0.5\n', "check[1].fpr", "(0, 1)"),
    ("wrong direction", '[[check]]\nmetric = "brier"\nat_least = 0.2\n', "check[1].at_least", "at_most"),
    ("bad TOML", '[[check]\nmetric = "roc_auc"\n', "line 1", "invalid TOML"),
    ("wrong type", '[stats]\nconfidence = "0.95"\n[[check]]\nmetric = "roc_auc"\nat_least = 0.5\n', "stats.confidence", "number"),
    ("stats range", '[stats]\nresamples = 5\n[[check]]\nmetric = "roc_auc"\nat_least = 0.5\n', "stats.resamples", "100"),
    ("no checks", FAST, "check", "no [[check]]"),
    ("missing parameter", '[[check]]\nmetric = "recall_at_fpr"\nat_least = 0.5\n', "check[1].fpr", "required"),
]


@pytest.mark.parametrize(("case", "text", "key", "fragment"), POLICY_ERRORS, ids=[e[0] for e in POLICY_ERRORS])
def test_policy_errors_exit_2_with_one_line(tmp_path: Path, cand: Path, case: str, text: str, key: str, fragment: str) -> None:
    policy = write_text(tmp_path / "bad.toml", text)
    line = assert_one_error_line(invoke("--policy", policy, "--candidate", cand), fragment)
    assert line.startswith(f"error: {policy}: {key}"), line


def test_policy_error_in_a_real_process(tmp_path: Path, cand: Path) -> None:
    text, key, fragment = POLICY_ERRORS[0][1:]
    policy = write_text(tmp_path / "bad.toml", text)
    line = assert_one_error_line(run_gate(["check", "--policy", str(policy), "--candidate", str(cand)], tmp_path), fragment)
    assert line.startswith(f"error: {policy}: {key}")


def test_missing_policy_file(tmp_path: Path, cand: Path) -> None:
    assert_one_error_line(invoke("--policy", tmp_path / "nope.toml", "--candidate", cand), "nope.toml", "not found")


# --- baselines: missing, mismatched, tampered ---------------------------------------------------


def test_margin_without_baseline_exits_2(tmp_path: Path, cand: Path) -> None:
    policy = write_text(tmp_path / "p.toml", margin_policy(0.05))
    assert_one_error_line(invoke("--policy", policy, "--candidate", cand), str(policy), "'ranking'", "max_drop", "--baseline")


def test_baseline_directory_that_does_not_exist(tmp_path: Path, cand: Path) -> None:
    policy = write_text(tmp_path / "p.toml", margin_policy(0.05))
    absent = tmp_path / "never-adopted"
    assert_one_error_line(
        invoke("--policy", policy, "--candidate", cand, "--baseline", f"{absent}/"),
        str(absent),
        "does not exist",
        "rankgate adopt",
    )


@pytest.mark.parametrize(
    ("rows", "flip", "fragments"),
    [
        (slice(0, 550), None, ("50 baseline ids missing from the candidate", "'seg00550'")),
        (None, 3, ("1 id with a different label", "'seg00003'")),
    ],
    ids=["missing ids", "label differs"],
)
def test_eval_set_mismatch_exits_2_with_counts_and_examples(
    tmp_path: Path, baseline_dir: Path, rows: slice | None, flip: int | None, fragments: tuple[str, ...]
) -> None:
    es = ES
    if flip is not None:
        labels = es.labels.copy()
        labels[flip] = 1 - labels[flip]
        es = type(ES)(ids=ES.ids, labels=labels, districts=ES.districts, shared=ES.shared)
    other = write_scores(tmp_path / "other.csv", es, CAND_SCORES, rows=rows)
    policy = write_text(tmp_path / "p.toml", margin_policy(0.05))
    assert_one_error_line(
        invoke("--policy", policy, "--candidate", other, "--baseline", baseline_dir),
        "not on the same eval set",
        *fragments,
        'on_mismatch = "intersect"',
    )


def test_intersect_evaluates_and_says_so(tmp_path: Path, baseline_dir: Path) -> None:
    other = write_scores(tmp_path / "other.csv", ES, CAND_SCORES, rows=slice(0, 550))
    policy = write_text(tmp_path / "p.toml", margin_policy(0.05, extra='[baseline]\non_mismatch = "intersect"\n'))
    out, md = tmp_path / "r.json", tmp_path / "s.md"
    result = invoke("--policy", policy, "--candidate", other, "--baseline", baseline_dir, "--json", out, "--summary", md)
    assert result.exit_code == 0, result.stderr  # evaluated (not 2); ~0.88 against a floor of 0.6
    report = json.loads(out.read_text())
    assert report["n"] == 550
    assert "mismatch" in report["notes"]
    summary = md.read_text()
    assert "paired on the 550 ids common to candidate and baseline" in summary
    assert "50 baseline ids missing from the candidate" in summary
    # Reference: scikit-learn on the 550 common rows.
    assert report["checks"][0]["baseline_value"] == pytest.approx(
        roc_auc_score(ES.labels[:550], BASE_SCORES[:550]), abs=1e-12
    )


def _scores_file(directory: Path) -> Path:
    (found,) = directory.glob("scores-*.parquet")
    return found


def _flip_a_byte(directory: Path) -> None:
    path = _scores_file(directory)
    data = bytearray(path.read_bytes())
    data[len(data) // 2] ^= 0x01
    path.write_bytes(bytes(data))


def _edit_manifest(directory: Path) -> None:
    path = directory / "manifest.json"
    manifest = json.loads(path.read_text())
    manifest["n_positive"] += 1
    manifest["n_negative"] -= 1
    path.write_text(json.dumps(manifest))


def _replace_scores(directory: Path) -> None:
    # A well-formed Parquet file with other scores, under the name the manifest expects.
    import pyarrow as pa
    import pyarrow.parquet as pq

    stored = pq.read_table(_scores_file(directory))
    changed = stored.set_column(2, "score", pa.array(np.asarray(stored.column("score")) + 1.0))
    pq.write_table(changed, _scores_file(directory))


@pytest.mark.parametrize(
    ("tamper", "fragment"),
    [
        (_flip_a_byte, "sha256 does not match"),
        (_replace_scores, "sha256 does not match"),
        (_edit_manifest, "manifest.json"),
        (lambda d: _scores_file(d).unlink(), "is missing"),
        (lambda d: (d / "manifest.json").write_text("{not json"), "not valid JSON"),
    ],
    ids=["flipped byte", "rewritten parquet", "edited manifest", "deleted scores", "broken manifest"],
)
def test_tampered_baseline_exits_2(tmp_path: Path, cand: Path, baseline_dir: Path, tamper, fragment: str) -> None:  # noqa: ANN001
    tamper(baseline_dir)
    policy = write_text(tmp_path / "p.toml", margin_policy(0.05))
    assert_one_error_line(
        invoke("--policy", policy, "--candidate", cand, "--baseline", baseline_dir), str(baseline_dir), fragment
    )


# --- markdown escaping of hostile slice values ---------------------------------------------------

HOSTILE = ("a|b", "<script>x</script>", "line\nbreak", "[x](http://e)")


def _cells(row: str) -> int:
    """Cells of a GFM table row: pipes not backslash-escaped (CommonMark reads \\x as an escape)."""
    pipes, i = 0, 0
    while i < len(row):
        if row[i] == "\\":
            i += 2
            continue
        pipes += row[i] == "|"
        i += 1
    return pipes - 1


def test_hostile_slice_values_cannot_break_the_markdown_table(tmp_path: Path) -> None:
    es = eval_set(800, prevalence=0.3, seed=5, districts=HOSTILE + ("north",))
    path = write_scores(tmp_path / "hostile.csv", es, es.scores(1.6, seed=1))
    policy = write_text(
        tmp_path / "p.toml",
        FAST + '[[check]]\nname = "ranking by district"\nmetric = "roc_auc"\nat_least = 0.6\nby = "district"\n',
    )
    out, junit = tmp_path / "r.json", tmp_path / "j.xml"
    result = invoke("--policy", policy, "--candidate", path, "--json", out, "--junit", junit)
    assert result.exit_code == 0, result.stderr
    markdown = result.stdout
    assert re.search(r"(?<!\\)<script>", markdown) is None
    assert re.search(r"(?<!\\)\[x(?<!\\)\]\(", markdown) is None  # no live link
    lines = markdown.splitlines()
    start = next(i for i, line in enumerate(lines) if line.startswith("| check |"))
    table = []
    for line in lines[start:]:
        if not line.startswith("|"):
            break
        table.append(line)
    report = json.loads(out.read_text())
    assert len(table) == 2 + len(report["checks"]) == 2 + len(HOSTILE) + 1
    assert {_cells(row) for row in table} == {9}
    # The JSON keeps the exact values; the JUnit file has no raw markup either.
    assert {c["slice"]["value"] for c in report["checks"]} == set(HOSTILE) | {"north"}
    raw = junit.read_text()
    assert "<script>" not in raw
    names = {case.get("name") for case in ET.parse(junit).getroot().iter("testcase")}
    assert any("<script>x</script>" in name for name in names)  # parsed back: the text itself
    assert not any("\n" in name for name in names)


# --- JUnit, JSON, determinism, summary options -------------------------------------------------

MIXED_POLICY = FAST + (
    '[[check]]\nname = "ranking"\nmetric = "roc_auc"\nat_least = 0.6\n'
    '[[check]]\nname = "too strict"\nmetric = "roc_auc"\nat_least = 0.97\n'
    '[[check]]\nname = "by district"\nmetric = "roc_auc"\nat_least = 0.6\nby = "district"\nmin_positives = 10\n'
    '[[check]]\nname = "recall at 10% FPR"\nmetric = "recall_at_fpr"\nfpr = 0.1\nat_least = 0.2\nmax_drop = 0.2\n'
)


@pytest.fixture
def mixed(tmp_path: Path) -> tuple[Path, Path]:
    """A candidate with a tiny district "tiny" (fewer than 10 positives, so skipped) and the policy."""
    districts = list(ES.districts)
    for i in range(12):  # 12 rows: by the fixed seed fewer than 10 of them are positive
        districts[i] = "tiny"
    assert int(ES.labels[:12].sum()) < 10
    es = type(ES)(ids=ES.ids, labels=ES.labels, districts=districts, shared=ES.shared)
    return write_scores(tmp_path / "mixed.csv", es, CAND_SCORES), write_text(tmp_path / "mixed.toml", MIXED_POLICY)


def test_junit_parses_with_the_right_counts(tmp_path: Path, mixed: tuple[Path, Path], baseline_dir: Path) -> None:
    cand, policy = mixed
    junit = tmp_path / "j.xml"
    result = invoke("--policy", policy, "--candidate", cand, "--baseline", baseline_dir, "--junit", junit, "--quiet")
    assert result.exit_code == 1, result.stderr
    root = ET.parse(junit).getroot()
    # By hand: ranking, too strict, 4 district slices (east, north, south, tiny), recall = 7 test cases;
    # "too strict" fails; "tiny" is skipped.
    cases = list(root.iter("testcase"))
    assert len(cases) == 7
    failed = [c.get("classname") for c in cases if c.find("failure") is not None]
    skipped = [c.get("name") for c in cases if c.find("skipped") is not None]
    assert failed == ["too strict"]
    assert len(skipped) == 1 and "tiny" in skipped[0]
    for element in (root, root.find("testsuite")):
        assert element is not None
        assert (element.get("tests"), element.get("failures"), element.get("skipped"), element.get("errors")) == (
            "7",
            "1",
            "1",
            "0",
        )


def test_json_report_has_the_design_keys_with_right_types(tmp_path: Path, mixed: tuple[Path, Path], baseline_dir: Path) -> None:
    cand, policy = mixed
    out = tmp_path / "r.json"
    result = invoke("--policy", policy, "--candidate", cand, "--baseline", baseline_dir, "--json", out, "--quiet")
    assert result.exit_code == 1, result.stderr
    report = json.loads(out.read_text())
    assert report["verdict"] == "fail"
    assert isinstance(report["checks"], list) and len(report["checks"]) == 7
    for check in report["checks"]:
        assert isinstance(check["name"], str) and isinstance(check["metric"], str)
        assert check["outcome"] in ("pass", "fail", "inconclusive", "skipped")
        assert isinstance(check["passed"], bool)
        if check["slice"] is None:
            assert check["name"] != "by district"
        else:
            assert set(check["slice"]) == {"column", "value"}
            assert check["slice"]["column"] == "district" and isinstance(check["slice"]["value"], str)
        if check["outcome"] == "skipped":
            assert check["value"] is None and check["interval"] is None
            continue
        assert isinstance(check["value"], float)
        low, high = check["interval"]
        assert isinstance(low, float) and isinstance(high, float) and low <= check["value"] <= high
        if check["name"] == "recall at 10% FPR":  # the check with a margin against the baseline
            assert isinstance(check["baseline_value"], float)
            assert check["delta"] == pytest.approx(check["value"] - check["baseline_value"], abs=1e-12)
            d_low, d_high = check["delta_interval"]
            assert d_low <= check["delta"] <= d_high
        else:
            assert check["baseline_value"] is None and check["delta"] is None and check["delta_interval"] is None
    by_name = {c["name"]: c for c in report["checks"] if c["slice"] is None}
    assert by_name["too strict"]["passed"] is False and by_name["ranking"]["passed"] is True


def test_reports_are_deterministic(tmp_path: Path, mixed: tuple[Path, Path], baseline_dir: Path) -> None:
    cand, policy = mixed
    outputs = []
    for run in ("a", "b"):
        d = tmp_path / run
        result = invoke(
            "--policy", policy, "--candidate", cand, "--baseline", baseline_dir,
            "--json", d / "r.json", "--junit", d / "j.xml", "--summary", d / "s.md",
        )  # fmt: skip
        assert result.exit_code == 1, result.stderr
        outputs.append((result.stdout, *((d / f).read_bytes() for f in ("r.json", "j.xml", "s.md"))))
    assert outputs[0] == outputs[1]
    assert outputs[0][0].encode() == outputs[0][3]  # stdout is the summary file


def test_summary_append_appends(tmp_path: Path, cand: Path) -> None:
    policy = write_text(tmp_path / "p.toml", floor_policy(0.6))
    summary = write_text(tmp_path / "job-summary.md", "# earlier step\n\nbuilt the model")  # no final newline
    for _ in range(2):
        result = invoke("--policy", policy, "--candidate", cand, "--summary", summary, "--append", "--quiet")
        assert result.exit_code == 0, result.stderr
    text = summary.read_text()
    assert text.startswith("# earlier step\n\nbuilt the model\n### rankgate: PASS\n")
    assert text.count("### rankgate: PASS") == 2
    # Without --append the file is replaced.
    result = invoke("--policy", policy, "--candidate", cand, "--summary", summary, "--quiet")
    assert result.exit_code == 0
    assert summary.read_text().startswith("### rankgate: PASS") and summary.read_text().count("###") == 1


def test_quiet_prints_nothing(tmp_path: Path, cand: Path) -> None:
    for floor, code in ((0.6, 0), (0.97, 1)):
        policy = write_text(tmp_path / "p.toml", floor_policy(floor))
        result = invoke("--policy", policy, "--candidate", cand, "--quiet")
        assert (result.exit_code, result.stdout, result.stderr) == (code, "", "")


def test_title_is_escaped(tmp_path: Path, cand: Path) -> None:
    policy = write_text(tmp_path / "p.toml", floor_policy(0.6))
    result = invoke("--policy", policy, "--candidate", cand, "--title", "<b>model</b> #7")
    assert result.exit_code == 0
    assert result.stdout.splitlines()[0] == "### \\<b>model\\</b> \\#7: PASS"


# --- plots, history, bugs ------------------------------------------------------------------------


def test_plots_and_html_page(tmp_path: Path, cand: Path, baseline_dir: Path) -> None:
    pytest.importorskip("matplotlib")
    policy = write_text(
        tmp_path / "p.toml",
        margin_policy(0.05) + '[[check]]\nname = "recall"\nmetric = "recall_at_fpr"\nfpr = 0.1\nat_least = 0.2\n',
    )
    plots, page = tmp_path / "charts", tmp_path / "page" / "gate.html"
    result = invoke("--policy", policy, "--candidate", cand, "--baseline", baseline_dir, "--plots", plots, "--html", page, "--quiet")
    assert result.exit_code == 0, result.stderr
    names = sorted(p.name for p in plots.iterdir())
    assert names == ["precision-recall.png", "precision-recall.svg", "roc.png", "roc.svg"]
    assert (plots / "roc.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (the PNG spec)
    ET.parse(plots / "roc.svg")  # well-formed XML
    html = page.read_text(encoding="utf-8")
    assert html.startswith("<!DOCTYPE html>")
    assert "PASS" in html and html.count("data:image/") >= 2


def test_html_without_plots_directory(tmp_path: Path, cand: Path) -> None:
    pytest.importorskip("matplotlib")
    policy = write_text(tmp_path / "p.toml", floor_policy(0.6))
    page = tmp_path / "gate.html"
    result = invoke("--policy", policy, "--candidate", cand, "--html", page, "--quiet")
    assert result.exit_code == 0, result.stderr
    assert "data:image/" in page.read_text(encoding="utf-8")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["candidate.csv", "gate.html", "p.toml"]


def test_history_then_trend(tmp_path: Path, cand: Path) -> None:
    history = tmp_path / "runs.sqlite"
    policy = write_text(tmp_path / "p.toml", floor_policy(0.6))
    for label in ("night-1", "night-2"):
        result = invoke("--policy", policy, "--candidate", cand, "--history", history, "--label", label, "--quiet")
        assert result.exit_code == 0, result.stderr
    trend = runner.invoke(app, ["trend", "--history", str(history)])
    assert trend.exit_code in (0, 1), trend.stderr
    assert trend.stdout.startswith("### rankgate trend")
    assert "1 check result over 2 runs" in trend.stdout
    # The recorded value is the check's: scikit-learn's roc_auc_score of the candidate, to 4 places.
    (row,) = [line for line in trend.stdout.splitlines() if line.startswith("| ranking |")]
    assert f"| 2 | {roc_auc_score(ES.labels, CAND_SCORES):.4f} [" in row


def test_unexpected_exception_exits_3_with_a_traceback(tmp_path: Path, cand: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    import gate.evaluation

    def broken(*args: object, **kwargs: object) -> None:
        raise RuntimeError("simulated bug in the engine")

    monkeypatch.setattr(gate.evaluation, "evaluate", broken)
    policy = write_text(tmp_path / "p.toml", floor_policy(0.6))
    result = invoke("--policy", policy, "--candidate", cand)
    assert result.exit_code == 3
    assert result.stdout == ""
    assert "Traceback (most recent call last)" in result.stderr
    assert "RuntimeError: simulated bug in the engine" in result.stderr
    assert "error:" not in result.stderr


def test_slice_value_with_a_lone_surrogate(tmp_path: Path) -> None:
    # JSON Lines may spell a lone surrogate ("\ud800"), which Python's json keeps in the str; such a
    # slice value must be evaluated and shown escaped, never crash the run (exit 3).
    es = eval_set(300, prevalence=0.4, seed=13, districts=("x\ud800", "y"))
    scores = es.scores(1.6, seed=1)
    path = tmp_path / "s.jsonl"
    path.write_text(
        "".join(
            json.dumps({"id": i, "label": int(y), "score": float(s), "district": d}) + "\n"
            for i, y, s, d in zip(es.ids, es.labels, scores, es.districts, strict=True)
        ),
        encoding="ascii",
    )
    policy = write_text(
        tmp_path / "p.toml",
        FAST + '[[check]]\nname = "ap"\nmetric = "average_precision"\nat_least = 0.1\nby = "district"\nmin_positives = 5\n',
    )
    out, junit = tmp_path / "r.json", tmp_path / "j.xml"
    result = invoke("--policy", policy, "--candidate", path, "--json", out, "--junit", junit)
    assert result.exit_code == 0, result.stderr
    assert "district = x\\\\ud800 |" in result.stdout  # shown as an escape (its backslash escaped)
    assert {c["slice"]["value"] for c in json.loads(out.read_text())["checks"]} == {"x\ud800", "y"}
    assert len(list(ET.parse(junit).getroot().iter("testcase"))) == 2


def test_every_metric_end_to_end_against_references(tmp_path: Path) -> None:
    from sklearn.metrics import average_precision_score, brier_score_loss, precision_recall_curve, roc_curve

    prob = np.round(1 / (1 + np.exp(-(CAND_SCORES - 0.8))), 6)  # scores as probabilities, for brier
    base_prob = np.round(1 / (1 + np.exp(-(BASE_SCORES - 0.8))), 6)
    cand = write_scores(tmp_path / "cand.csv", ES, prob)
    base = write_scores(tmp_path / "base.csv", ES, base_prob)
    checks = [
        ("roc", 'metric = "roc_auc"\nat_least = 0.5\nmax_drop = 0.2'),
        ("ap", 'metric = "average_precision"\nat_least = 0.3\nmax_drop = 0.3'),
        ("pauc", 'metric = "partial_auc"\nmax_fpr = 0.2\nat_least = 0.5\nmax_drop = 0.3'),
        ("rfpr", 'metric = "recall_at_fpr"\nfpr = 0.1\nat_least = 0.2\nmax_drop = 0.4'),
        ("prec", 'metric = "precision_at_recall"\nrecall = 0.5\nat_least = 0.4\nmax_drop = 0.4'),
        ("rthr", 'metric = "recall_at_threshold"\nthreshold = 0.6\nat_least = 0.2\nmax_drop = 0.4'),
        ("fthr", 'metric = "fpr_at_threshold"\nthreshold = 0.6\nat_most = 0.5\nmax_rise = 0.4'),
        ("cost", 'metric = "expected_cost"\nthreshold = 0.6\ncost_fp = 1\ncost_fn = 5\nat_most = 2\nmax_rise = 1'),
        ("brier", 'metric = "brier"\nat_most = 0.4\nmax_rise = 0.2'),
    ]
    text = FAST + "".join(f'[[check]]\nname = "{name}"\n{body}\n' for name, body in checks)
    policy = write_text(tmp_path / "all.toml", text)
    out = tmp_path / "r.json"
    result = invoke("--policy", policy, "--candidate", cand, "--baseline", base, "--json", out, "--quiet")
    assert result.exit_code == 0, result.stderr  # every bound is far from these toy models
    got = {c["name"]: c for c in json.loads(out.read_text())["checks"]}
    y = ES.labels.astype(bool)
    flagged = prob >= 0.6
    tp, fp = int((flagged & y).sum()), int((flagged & ~y).sum())
    fn = int((~flagged & y).sum())
    expected = {
        "roc": roc_auc_score(y, prob),  # scikit-learn
        "ap": average_precision_score(y, prob),  # scikit-learn
        "pauc": roc_auc_score(y, prob, max_fpr=0.2),  # scikit-learn's McClish-standardized partial AUC
        "rthr": tp / int(y.sum()),  # counted
        "fthr": fp / int((~y).sum()),  # counted
        "cost": (1 * fp + 5 * fn) / len(y),  # counted: mean cost per example
        "brier": brier_score_loss(y, prob),  # scikit-learn
    }
    # scikit-learn's curves: best recall among ROC points with FPR <= 0.1, best precision among
    # precision-recall points with recall >= 0.5 (the policy's definitions, starter.toml).
    roc_fpr, roc_tpr, _ = roc_curve(y, prob, drop_intermediate=False)
    expected["rfpr"] = float(roc_tpr[roc_fpr <= 0.1].max())
    pr_precision, pr_recall, _ = precision_recall_curve(y, prob)
    expected["prec"] = float(pr_precision[pr_recall >= 0.5].max())
    for name, value in expected.items():
        assert got[name]["value"] == pytest.approx(value, abs=1e-12), name
    base_brier = brier_score_loss(y, base_prob)  # scikit-learn
    assert got["brier"]["baseline_value"] == pytest.approx(base_brier, abs=1e-12)
    assert got["brier"]["margin"]["kind"] == "max_rise" and got["fthr"]["floor"]["kind"] == "at_most"
    for check in got.values():
        low, high = check["delta_interval"]
        assert low <= check["delta"] <= high


def test_formats_give_the_same_report(tmp_path: Path, cand: Path) -> None:
    import pandas as pd

    frame = pd.read_csv(cand, dtype={"id": str, "district": str})
    paths = [cand, tmp_path / "c.parquet", tmp_path / "c.jsonl"]
    frame.to_parquet(paths[1], index=False)
    frame.to_json(paths[2], orient="records", lines=True)
    policy = write_text(
        tmp_path / "p.toml",
        FAST + '[[check]]\nname = "recall by district"\nmetric = "recall_at_fpr"\nfpr = 0.1\nat_least = 0.2\nby = "district"\n',
    )
    reports = []
    for path in paths:
        out = tmp_path / f"{path.suffix}.json"
        result = invoke("--policy", policy, "--candidate", path, "--json", out, "--quiet")
        assert result.exit_code == 0, result.stderr
        report = json.loads(out.read_text())
        assert report.pop("candidate_source") == str(path)
        reports.append(report)
    assert reports[0] == reports[1] == reports[2]


def test_options_without_their_partner_are_errors(tmp_path: Path) -> None:
    # An option that would silently do nothing is a user mistake: exit 2 with one error line.
    from typer.testing import CliRunner

    from gate.cli import app

    runner = CliRunner()
    result = runner.invoke(app, ["check", "--policy", "p.toml", "--candidate", "c.csv", "--append"])
    assert result.exit_code == 2
    assert result.stderr.strip() == "error: --append needs --summary FILE (the file to append the summary to)"
    result = runner.invoke(app, ["check", "--policy", "p.toml", "--candidate", "c.csv", "--label", "x"])
    assert result.exit_code == 2
    assert "--label needs --history" in result.stderr
    result = runner.invoke(app, ["trend", "--history", str(tmp_path / "h.sqlite"), "--append"])
    assert result.exit_code == 2
    assert "--append needs --summary" in result.stderr
