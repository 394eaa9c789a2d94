"""Domain errors. Every user mistake is a GateError; the CLI prints it as one line and exits 2."""

from __future__ import annotations


class GateError(Exception):
    """Base class: the inputs cannot be evaluated. The message is one line naming the culprit."""


class TableError(GateError):
    """A score table is missing, unreadable or invalid (names file, column, row or value)."""


class PolicyError(GateError):
    """A policy file is invalid (names file and key path)."""


class BaselineError(GateError):
    """The stored baseline is missing, tampered with, or does not match the evaluation set."""


class UndefinedMetricError(GateError):
    """A metric is undefined on the data (e.g. average precision with no positives)."""


class HistoryError(GateError):
    """The run-history database is unreadable or has an unknown schema."""


class MissingExtraError(GateError):
    """An optional dependency (extra) is not installed; the message says how to install it."""
