"""ci-examples/: every `rankgate ...` invocation names a real command and only its real options.

The GitHub Actions and GitLab CI files are parsed with PyYAML (folded block scalars become one
line, anchors and aliases are resolved); gate.sh is read as text with its backslash line
continuations joined. Each invocation is split as a shell would (shlex), cut at shell operators,
and checked against the typer app's click command tree: the command exists, every ``--option`` is
one of its options, and click itself parses the whole argument list (values where options take
them, no stray arguments, required options present). gate.sh is also run for real on a small
synthetic table.
"""

from __future__ import annotations

import os
import shlex
import shutil
import subprocess
from pathlib import Path
from typing import Any

import pytest
import typer.main

from gate.cli import app
from gate.policy import load_policy

from tests.cli.gate_cases import FAST, eval_set, write_scores, write_text

yaml = pytest.importorskip("yaml")

REPO = Path(__file__).resolve().parents[2]
EXAMPLES = REPO / "ci-examples"
OPERATORS = {"|", "||", "&&", ";", "&", ";;", "(", ")", ">", ">>", "<"}


def _strings(node: Any) -> list[str]:
    """Every string scalar in a parsed YAML document (lists nested by aliases flattened)."""
    if isinstance(node, str):
        return [node]
    if isinstance(node, dict):
        return [s for value in node.values() for s in _strings(value)]
    if isinstance(node, list):
        return [s for item in node for s in _strings(item)]
    return []


def _simple_commands(line: str) -> list[list[str]]:
    """Split one shell line into simple commands (word lists), at operators."""
    lexer = shlex.shlex(line, posix=True, punctuation_chars=True)
    lexer.whitespace_split = True
    commands: list[list[str]] = [[]]
    for token in lexer:
        if token in OPERATORS:
            commands.append([])
        else:
            commands[-1].append(token)
    return [c for c in commands if c]


def invocations(lines: list[str]) -> list[list[str]]:
    """The argument lists (after ``rankgate``) of every simple command that starts with rankgate."""
    found = []
    for line in lines:
        for words in _simple_commands(line):
            if words[0] == "rankgate":
                found.append(words[1:])
    return found


def github_lines() -> list[str]:
    doc = yaml.safe_load((EXAMPLES / "github-actions.yml").read_text(encoding="utf-8"))
    lines = []
    for job in doc["jobs"].values():
        assert "runs-on" in job and job["steps"], job
        lines += [step["run"] for step in job["steps"] if "run" in step]
    return lines


def gitlab_lines() -> list[str]:
    doc = yaml.safe_load((EXAMPLES / "gitlab-ci.yml").read_text(encoding="utf-8"))
    lines = []
    for name, job in doc.items():
        if isinstance(job, dict) and "script" in job:
            assert job.get("stage") in doc["stages"], name
            lines += _strings(job["script"])
    return lines


def shell_lines() -> list[str]:
    text = (EXAMPLES / "gate.sh").read_text(encoding="utf-8")
    return [line for line in text.replace("\\\n", " ").splitlines() if line.strip()]


SOURCES = {"github-actions.yml": github_lines, "gitlab-ci.yml": gitlab_lines, "gate.sh": shell_lines}
# By hand from the files: each example runs check (pull request), adopt (after merge), and check
# --history then trend (nightly).
EXPECTED_COMMANDS = ["check", "adopt", "check", "trend"]


def _options(command: Any) -> dict[str, Any]:
    return {opt: param for param in command.params for opt in (*param.opts, *param.secondary_opts) if opt.startswith("-")}


@pytest.mark.parametrize("source", SOURCES)
def test_every_invocation_is_a_real_command_with_real_options(source: str) -> None:
    group = typer.main.get_command(app)
    found = invocations(SOURCES[source]())
    assert [args[0] for args in found] == EXPECTED_COMMANDS
    for args in found:
        name, rest = args[0], args[1:]
        assert name in group.commands, f"{source}: rankgate {name}: no such command"  # type: ignore[attr-defined]
        command = group.commands[name]  # type: ignore[attr-defined]
        known = _options(command)
        used = [word.split("=", 1)[0] for word in rest if word.startswith("--")]
        assert used, args
        for option in used:
            assert option in known, f"{source}: rankgate {name} {option}: not an option (has {sorted(known)})"
        # click parses the whole list: option values present, no stray words, required options given.
        command.make_context(f"rankgate {name}", list(rest))


def test_examples_name_a_policy_that_exists_and_loads() -> None:
    named = set()
    for source, lines in SOURCES.items():
        for args in invocations(lines()):
            if "--policy" in args:
                named.add(args[args.index("--policy") + 1])
    # gate.sh names it through a variable whose default is the same file.
    assert 'POLICY="${POLICY:-policies/leak-watch.toml}"' in (EXAMPLES / "gate.sh").read_text()
    assert named == {"policies/leak-watch.toml", "$POLICY"}
    assert load_policy(REPO / "policies" / "leak-watch.toml").needs_baseline  # so --baseline is given


def test_extraction_sees_folded_lines_and_continuations() -> None:
    # The folded GitHub step is one line holding every option; the shell continuation too.
    (check,) = [a for a in invocations(github_lines()) if a[0] == "check" and "--junit" in a]
    assert check[-1] == "--quiet" and "--append" in check
    (adopt,) = [a for a in invocations(shell_lines()) if a[0] == "adopt"]
    assert adopt[-2] == "--note" and adopt[-1].startswith("adopted $(date")


def test_an_unknown_option_would_be_caught() -> None:
    group = typer.main.get_command(app)
    command = group.commands["check"]  # type: ignore[attr-defined]
    assert "--baselines" not in _options(command)
    with pytest.raises(Exception, match="No such option"):
        command.make_context("rankgate check", ["--policy", "p", "--candidate", "c", "--baselines", "b"])


@pytest.mark.skipif(shutil.which("rankgate") is None or shutil.which("bash") is None, reason="needs bash and the rankgate script")
def test_gate_sh_runs_adopt_check_and_nightly(tmp_path: Path) -> None:
    es = eval_set(400, prevalence=0.3, seed=41)
    write_scores(tmp_path / "scores" / "candidate.csv", es, es.scores(1.6, seed=1))
    write_text(
        tmp_path / "policy.toml",
        FAST + '[[check]]\nname = "ranking"\nmetric = "roc_auc"\nat_least = 0.6\nmax_drop = 0.2\n',
    )
    env = {k: v for k, v in os.environ.items() if not k.startswith(("PYTEST", "RANKGATE_"))}
    env.update(POLICY="policy.toml", SCORES="scores/candidate.csv", BASELINE="baseline", HISTORY="history/runs.sqlite")
    (tmp_path / "history").mkdir()

    def run(step: str) -> subprocess.CompletedProcess[str]:
        return subprocess.run(
            ["bash", str(EXAMPLES / "gate.sh"), step], cwd=tmp_path, env=env, capture_output=True, text=True, timeout=120
        )

    first = run("check")  # no baseline adopted yet: cannot evaluate
    assert first.returncode == 2 and "baseline directory does not exist" in first.stderr, first.stderr
    adopted = run("adopt")
    assert adopted.returncode == 0, adopted.stderr
    checked = run("check")
    assert checked.returncode == 0, checked.stderr
    assert {p.name for p in (tmp_path / "gate-out").iterdir()} >= {"summary.md", "report.json", "junit.xml"}
    nightly = run("nightly")
    assert nightly.returncode in (0, 1), nightly.stderr
    assert (tmp_path / "gate-out" / "trend.json").is_file()
    assert run("bogus").returncode == 2
