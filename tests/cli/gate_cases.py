"""Small synthetic evaluation sets and policies for the end-to-end tests of the gate commands.

The tables are binormal toys made here with fixed seeds: a few hundred rows, a shared noise
term (so candidate and baseline scores are correlated, as two models of one problem are) and a
``district`` column to slice by. They are inputs, never check values: every figure a test
compares with comes from scikit-learn (``roc_auc_score``) or from counting by hand.
"""

from __future__ import annotations

import csv
import os
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

DISTRICTS = ("north", "south", "east")


@dataclass(frozen=True)
class EvalSet:
    """Labels, ids, districts and a shared noise term of one synthetic evaluation set."""

    ids: list[str]
    labels: np.ndarray
    districts: list[str]
    shared: np.ndarray

    def scores(self, separation: float, seed: int) -> np.ndarray:
        """A model's scores: ``separation * label + shared + own noise`` (higher = positive)."""
        rng = np.random.default_rng(seed)
        own = rng.normal(size=self.labels.shape[0])
        return np.round(separation * self.labels + 0.7 * self.shared + 0.7 * own, 6)


def eval_set(n: int = 600, *, prevalence: float = 0.3, seed: int = 11, districts: tuple[str, ...] = DISTRICTS) -> EvalSet:
    rng = np.random.default_rng(seed)
    labels = (rng.random(n) < prevalence).astype(int)
    chosen = [districts[i] for i in rng.integers(0, len(districts), size=n)]
    return EvalSet(
        ids=[f"seg{i:05d}" for i in range(n)],
        labels=labels,
        districts=chosen,
        shared=rng.normal(size=n),
    )


def write_scores(
    path: Path,
    es: EvalSet,
    scores: np.ndarray,
    *,
    rows: slice | None = None,
    extra: dict[str, list[Any]] | None = None,
    with_district: bool = True,
) -> Path:
    """Write a CSV score table (id, label, score[, district][, extra columns])."""
    index = range(len(es.ids))[rows] if rows is not None else range(len(es.ids))
    header = ["id", "label", "score"] + (["district"] if with_district else []) + list(extra or {})
    path.parent.mkdir(parents=True, exist_ok=True)
    with path.open("w", newline="", encoding="utf-8") as fh:
        writer = csv.writer(fh)
        writer.writerow(header)
        for i in index:
            row: list[Any] = [es.ids[i], int(es.labels[i]), repr(float(scores[i]))]
            if with_district:
                row.append(es.districts[i])
            row += [values[i] for values in (extra or {}).values()]
            writer.writerow(row)
    return path


FAST = "[stats]\nresamples = 200\n"


def floor_policy(at_least: float, *, extra: str = "") -> str:
    """One roc_auc floor (DeLong, no baseline needed)."""
    return FAST + extra + f'[[check]]\nname = "ranking"\nmetric = "roc_auc"\nat_least = {at_least}\n'


def margin_policy(max_drop: float = 0.05, *, at_least: float = 0.6, extra: str = "") -> str:
    """A roc_auc floor plus a non-regression margin (needs a baseline)."""
    return (
        FAST
        + extra
        + f'[[check]]\nname = "ranking"\nmetric = "roc_auc"\nat_least = {at_least}\nmax_drop = {max_drop}\n'
    )


def write_text(path: Path, text: str) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    return path


def assert_one_error_line(result: Any, *fragments: str) -> str:
    """Exit 2, nothing on stdout, exactly one ``error:`` line on stderr, no traceback."""
    code = getattr(result, "exit_code", None)
    if code is None:
        code = result.returncode
    stderr: str = result.stderr
    assert code == 2, (code, stderr, result.stdout)
    assert result.stdout == ""
    lines = stderr.splitlines()
    assert len(lines) == 1, stderr
    assert lines[0].startswith("error: "), stderr
    assert "Traceback" not in stderr
    for fragment in fragments:
        assert fragment in lines[0], (fragment, lines[0])
    return lines[0]


def run_gate(args: list[str], cwd: Path, *, env: dict[str, str] | None = None, timeout: float = 120) -> subprocess.CompletedProcess[str]:
    """``python -m gate ARGS`` in a real process (no pytest variables in its environment)."""
    base = {k: v for k, v in os.environ.items() if not k.startswith("PYTEST")}
    base.pop("RANKGATE_TEST_CRASH_AT", None)
    base.update(env or {})
    return subprocess.run(
        [sys.executable, "-m", "gate", *args], cwd=cwd, env=base, capture_output=True, text=True, timeout=timeout
    )
