"""The shared atomic writer: gate/_files.py (replace, exclusive link, modes, clean-up)."""

from __future__ import annotations

import os
import stat
from pathlib import Path

import pytest

from gate._files import fsync_directory, new_file_mode, write_bytes_atomic


def test_writes_bytes_and_leaves_no_temp(tmp_path: Path) -> None:
    target = tmp_path / "out.bin"
    target.write_bytes(b"old")
    write_bytes_atomic(target, b"new\x00bytes")
    assert target.read_bytes() == b"new\x00bytes"
    assert [p.name for p in tmp_path.iterdir()] == ["out.bin"]


def test_streamed_content_and_mode(tmp_path: Path) -> None:
    target = tmp_path / "out.txt"
    write_bytes_atomic(target, lambda fh: fh.write(b"streamed"), mode=0o640)
    assert target.read_bytes() == b"streamed"
    assert stat.S_IMODE(target.stat().st_mode) == 0o640


def test_without_a_mode_the_file_keeps_mkstemp_private_mode(tmp_path: Path) -> None:
    target = tmp_path / "private"
    write_bytes_atomic(target, b"x")
    assert stat.S_IMODE(target.stat().st_mode) == 0o600


def test_new_file_mode_follows_the_umask() -> None:
    old = os.umask(0o027)
    try:
        assert new_file_mode() == 0o640
    finally:
        os.umask(old)


def test_exclusive_refuses_an_existing_target_and_cleans_up(tmp_path: Path) -> None:
    target = tmp_path / "policy.toml"
    target.write_bytes(b"mine")
    with pytest.raises(FileExistsError):
        write_bytes_atomic(target, b"theirs", exclusive=True)
    assert target.read_bytes() == b"mine"
    assert [p.name for p in tmp_path.iterdir()] == ["policy.toml"]


def test_exclusive_writes_a_new_target_once(tmp_path: Path) -> None:
    target = tmp_path / "policy.toml"
    write_bytes_atomic(target, b"new", exclusive=True)
    assert target.read_bytes() == b"new"
    assert [p.name for p in tmp_path.iterdir()] == ["policy.toml"]


def test_a_failure_before_the_rename_keeps_the_old_file(tmp_path: Path) -> None:
    target = tmp_path / "keep.bin"
    target.write_bytes(b"old")

    def boom() -> None:
        raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        write_bytes_atomic(target, b"new", prefix="t-", suffix="", before_replace=boom)
    assert target.read_bytes() == b"old"
    assert [p.name for p in tmp_path.iterdir()] == ["keep.bin"]


def test_fsync_directory_strict_raises_only_when_asked(tmp_path: Path) -> None:
    missing = tmp_path / "missing"
    fsync_directory(missing)  # best effort: nothing raised
    with pytest.raises(FileNotFoundError):
        fsync_directory(missing, strict=True)
    fsync_directory(tmp_path, strict=True)
