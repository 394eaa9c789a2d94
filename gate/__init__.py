"""rankgate: a release gate for retrained binary scoring classifiers.

The import package is ``gate``; the console script is ``rankgate``.
Heavy modules are imported lazily so that ``rankgate --help`` stays fast.
"""

from __future__ import annotations

from typing import Any

__version__ = "0.1.0"

__all__ = ["__version__", "evaluate"]


def __getattr__(name: str) -> Any:
    if name == "evaluate":
        from gate.evaluation import evaluate

        return evaluate
    raise AttributeError(f"module 'gate' has no attribute {name!r}")
