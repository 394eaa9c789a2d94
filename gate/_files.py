"""Atomic file writing, shared by every module that writes a user's file (private).

A file written here is either its old content or the new, never half-written: the bytes go to a
temporary file in the target's directory, are flushed and fsynced, the temporary file is moved
over the target (``os.replace``) and the directory is fsynced so that the rename itself lasts.
On any failure the temporary file is removed and the target is untouched.

Errors come out as the plain ``OSError``: each caller turns them into its own
:class:`gate.errors.GateError` subclass, with its own wording. Like ``errors.py``, this module
imports nothing from the rest of the package, so any layer may use it.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Callable
from pathlib import Path
from typing import IO

__all__ = ["fsync_directory", "new_file_mode", "write_bytes_atomic"]


def new_file_mode() -> int:
    """The mode a plain ``open()`` would give a new file under the current umask.

    ``mkstemp`` makes its files 0o600; pass this as ``mode`` for an ordinary artifact.
    """
    umask = os.umask(0)
    os.umask(umask)
    return 0o666 & ~umask


def fsync_directory(directory: str | os.PathLike[str], *, strict: bool = False) -> None:
    """Fsync ``directory``, making a rename or a new entry in it durable.

    Not possible on every platform or file system: by default a failure is ignored; with
    ``strict=True`` the ``OSError`` is raised.
    """
    try:
        fd = os.open(directory, os.O_RDONLY)
    except OSError:
        if strict:
            raise
        return
    try:
        os.fsync(fd)
    except OSError:
        if strict:
            raise
    finally:
        os.close(fd)


def write_bytes_atomic(
    target: Path,
    content: bytes | Callable[[IO[bytes]], object],
    *,
    mode: int | None = None,
    prefix: str | None = None,
    suffix: str = ".tmp",
    before_replace: Callable[[], object] | None = None,
    exclusive: bool = False,
    sync_directory: bool = True,
) -> None:
    """Write ``content`` to ``target`` atomically.

    Parameters
    ----------
    target : the file to write; its directory must exist.
    content : the bytes, or a function called once with the open temporary file (binary)
        that writes them (for content streamed by a library).
    mode : permissions given to the file before it takes the target's name; ``None`` keeps
        ``mkstemp``'s 0o600.
    prefix, suffix : the temporary file's name (default ``.<target name>.`` and ``.tmp``).
    before_replace : called after the temporary file is fsynced, just before the rename.
    exclusive : never overwrite: the temporary file is hard-linked to the target, which raises
        ``FileExistsError`` when the target exists (on a file system without hard links it
        falls back to ``os.replace``; the caller checks beforehand for that case).
    sync_directory : fsync the directory afterwards (best effort).

    Raises
    ------
    OSError
        The temporary file cannot be made, written or renamed; the temporary file is removed.
        Whatever ``content`` or ``before_replace`` raise also passes through, after the same
        clean-up.
    """
    directory = target.parent
    fd, tmp_name = tempfile.mkstemp(
        prefix=f".{target.name}." if prefix is None else prefix, suffix=suffix, dir=directory
    )
    tmp = Path(tmp_name)
    try:
        with os.fdopen(fd, "wb") as fh:
            if isinstance(content, bytes):
                fh.write(content)
            else:
                content(fh)
            fh.flush()
            os.fsync(fh.fileno())
        if mode is not None:
            os.chmod(tmp, mode)
        if before_replace is not None:
            before_replace()
        if exclusive and _link(tmp, target):
            with contextlib.suppress(OSError):
                tmp.unlink()
        else:
            os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise
    if sync_directory:
        fsync_directory(directory)


def _link(tmp: Path, target: Path) -> bool:
    """Hard-link ``tmp`` to ``target``; False where the file system has no hard links."""
    try:
        # A hard link fails if the target appeared meanwhile: no race can overwrite a file.
        os.link(tmp, target)
    except FileExistsError:
        raise
    except OSError:
        return False
    return True
