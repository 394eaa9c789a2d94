"""Writing reports to files: atomic replace, optional append (for CI job summaries).

A report file is either the old content or the new, never half-written: the text goes to a
temporary file in the target's directory, is flushed and fsynced, and is then moved over the
target with ``os.replace``. Appending reads the existing bytes and replaces the file with old + new.
Targets that are not regular files (``/dev/stdout``, a named pipe) cannot be replaced and are
written directly.
"""

from __future__ import annotations

import os
import stat
from pathlib import Path

from gate._files import new_file_mode, write_bytes_atomic
from gate.errors import GateError

__all__ = ["write_report"]


def _describe(exc: OSError) -> str:
    return exc.strerror or exc.__class__.__name__


def write_report(path: str | os.PathLike[str], text: str, *, append: bool = False) -> Path:
    """Write ``text`` (UTF-8, newlines as given) to ``path`` atomically; return the path written.

    Parameters
    ----------
    path : the report file. Missing parent directories are created. A symbolic link is
        followed, so the file it points to is replaced and the link kept.
    text : the report.
    append : keep the file's current content and add ``text`` after it (a newline is put
        between the two when the old content does not end with one).

    Raises
    ------
    GateError
        When the file or its directory cannot be written; the message names the path.
    """
    target = Path(path)
    data = text.encode("utf-8")
    try:
        st = os.stat(target)
    except FileNotFoundError:
        st = None
    except OSError as exc:
        raise GateError(f"cannot write report {target}: {_describe(exc)}") from None

    if st is not None and not stat.S_ISREG(st.st_mode):
        if stat.S_ISDIR(st.st_mode):
            raise GateError(f"cannot write report {target}: it is a directory")
        try:  # a device or pipe: a stream, nothing to replace
            with open(target, "ab" if append else "wb") as stream:
                stream.write(data)
        except OSError as exc:
            raise GateError(f"cannot write report {target}: {_describe(exc)}") from None
        return target

    real = Path(os.path.realpath(target)) if target.is_symlink() else target
    try:
        real.parent.mkdir(parents=True, exist_ok=True)
        if append and st is not None:
            old = real.read_bytes()
            if old and not old.endswith(b"\n"):
                old += b"\n"
            data = old + data
        mode = stat.S_IMODE(st.st_mode) if st is not None else new_file_mode()
        write_bytes_atomic(real, data, mode=mode)
    except OSError as exc:
        raise GateError(f"cannot write report {target}: {_describe(exc)}") from None
    return real
