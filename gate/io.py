"""Read and validate score tables (CSV, Parquet, JSON Lines) into a :class:`ScoreTable`.

CONTRACT (the io helper implements the reading; the dataclass shape is fixed):
every bad input raises :class:`gate.errors.TableError` with a one-line message naming the file
and the column / row / value.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray


@dataclass(frozen=True, eq=False)
class ColumnSpec:
    """Column names and the positive label value (the policy's ``[data]`` section)."""

    id: str = "id"
    label: str = "label"
    score: str = "score"
    weight: str | None = None  # None: use a column named "weight" if present, else unweighted
    positive: int | str | bool = 1


@dataclass(frozen=True, eq=False)
class ScoreTable:
    """A validated score table.

    Attributes
    ----------
    ids : (n,) object array of ``str`` ids (ids are compared as text), unique.
    labels : (n,) bool, True = positive.
    scores : (n,) float64, finite; higher = more likely positive.
    weights : (n,) float64 non-negative with a positive sum, or None when unweighted.
    columns : other columns of the file, by name, as numpy arrays (used for slicing).
    source : the file name it came from, or a description such as "<DataFrame>".
    """

    ids: NDArray[np.object_]
    labels: NDArray[np.bool_]
    scores: NDArray[np.float64]
    weights: NDArray[np.float64] | None
    columns: dict[str, NDArray] = field(default_factory=dict)
    source: str = "<table>"

    @property
    def n(self) -> int:
        return int(self.scores.shape[0])

    @property
    def n_pos(self) -> int:
        return int(np.count_nonzero(self.labels))

    @property
    def n_neg(self) -> int:
        return self.n - self.n_pos
