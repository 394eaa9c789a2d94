"""The policies shipped inside the package (gate/data/) are byte-for-byte the ones in policies/."""

from __future__ import annotations

from importlib.resources import files
from pathlib import Path

import pytest

from gate.policy import load_policy

REPO = Path(__file__).resolve().parents[2]
SOURCE = sorted(p.name for p in (REPO / "policies").glob("*.toml"))


def test_the_same_policies_in_both_places() -> None:
    packaged = sorted(p.name for p in (REPO / "gate" / "data").glob("*.toml"))
    assert SOURCE == packaged
    assert {"leak-watch.toml", "nightly-watch.toml", "starter.toml"} <= set(SOURCE)


@pytest.mark.parametrize("name", SOURCE)
def test_packaged_copy_is_identical(name: str) -> None:
    source = (REPO / "policies" / name).read_bytes()
    assert (REPO / "gate" / "data" / name).read_bytes() == source
    # What the installed package serves (rankgate init, rankgate demo) is the same bytes.
    assert files("gate.data").joinpath(name).read_bytes() == source


@pytest.mark.parametrize("name", SOURCE)
def test_policy_loads(name: str) -> None:
    policy = load_policy(REPO / "policies" / name)
    assert policy.checks
