"""The small worked examples in gate.stats docstrings stay true (they are checked by hand there)."""

from __future__ import annotations

import doctest
import importlib

import pytest

MODULES = ["bootstrap", "delong", "interval", "multiplicity", "neyman_pearson", "proportion"]


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name: str) -> None:
    module = importlib.import_module(f"gate.stats.{name}")
    result = doctest.testmod(module, optionflags=doctest.NORMALIZE_WHITESPACE)
    assert result.attempted > 0
    assert result.failed == 0
