"""Writing report files: gate/report/output.py (atomic replace, append, odd targets)."""

from __future__ import annotations

import os
import stat
from pathlib import Path

import pytest

from gate.errors import GateError
from gate.report import output
from gate.report.output import write_report


def leftovers(directory: Path) -> list[str]:
    return sorted(p.name for p in directory.iterdir() if p.name.endswith(".tmp"))


def test_writes_utf8_bytes_as_given(tmp_path: Path) -> None:
    target = tmp_path / "summary.md"
    text = "### rankgate: PASS\r\nZürich \U0001f4a7\n"
    assert write_report(target, text) == target
    assert target.read_bytes() == text.encode("utf-8")  # no newline translation
    assert leftovers(tmp_path) == []


def test_replaces_existing_content(tmp_path: Path) -> None:
    target = tmp_path / "r.json"
    target.write_text("old content that is longer than the new\n")
    write_report(target, "{}\n")
    assert target.read_text() == "{}\n"
    assert leftovers(tmp_path) == []


@pytest.mark.parametrize(
    ("old", "new", "expected"),
    [("a\n", "b\n", "a\nb\n"), ("a", "b\n", "a\nb\n"), ("", "b", "b")],
)
def test_append_keeps_the_old_content(tmp_path: Path, old: str, new: str, expected: str) -> None:
    target = tmp_path / "job-summary.md"
    target.write_text(old)
    write_report(target, new, append=True)
    assert target.read_text() == expected


def test_append_to_a_missing_file_creates_it(tmp_path: Path) -> None:
    target = tmp_path / "new.md"
    write_report(target, "x\n", append=True)
    assert target.read_text() == "x\n"


def test_creates_missing_directories(tmp_path: Path) -> None:
    target = tmp_path / "reports" / "ci" / "junit.xml"
    write_report(target, "<x/>\n")
    assert target.read_text() == "<x/>\n"


def test_keeps_the_mode_of_an_existing_file(tmp_path: Path) -> None:
    target = tmp_path / "r.md"
    target.write_text("old")
    target.chmod(0o640)
    write_report(target, "new")
    assert stat.S_IMODE(target.stat().st_mode) == 0o640


def test_new_file_mode_follows_the_umask(tmp_path: Path) -> None:
    old = os.umask(0o027)
    try:
        write_report(tmp_path / "r.md", "x")
    finally:
        os.umask(old)
    assert stat.S_IMODE((tmp_path / "r.md").stat().st_mode) == 0o640


def test_a_symlink_is_followed_and_kept(tmp_path: Path) -> None:
    real = tmp_path / "real.md"
    real.write_text("old")
    link = tmp_path / "link.md"
    link.symlink_to(real)
    write_report(link, "new", append=True)
    assert link.is_symlink()
    assert real.read_text() == "old\nnew"


def test_a_device_is_written_not_replaced(tmp_path: Path) -> None:
    # Replacing /dev/null with a regular file would be a disaster when running as root.
    write_report("/dev/null", "discarded\n")
    assert stat.S_ISCHR(os.stat("/dev/null").st_mode)


def test_a_directory_is_refused(tmp_path: Path) -> None:
    with pytest.raises(GateError, match=r"cannot write report .*: it is a directory"):
        write_report(tmp_path, "x")


def test_an_impossible_path_is_a_gate_error_naming_it(tmp_path: Path) -> None:
    blocker = tmp_path / "file.txt"
    blocker.write_text("")
    with pytest.raises(GateError, match=r"cannot write report .*file\.txt/sub/r\.md"):
        write_report(blocker / "sub" / "r.md", "x")


def test_a_failed_replace_leaves_the_old_file_and_no_temp(tmp_path: Path, monkeypatch) -> None:
    target = tmp_path / "r.md"
    target.write_text("old")

    def broken_replace(src: str, dst: object) -> None:
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(output.os, "replace", broken_replace)
    with pytest.raises(GateError, match="No space left on device"):
        write_report(target, "new")
    assert target.read_text() == "old"
    assert leftovers(tmp_path) == []
