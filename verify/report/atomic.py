"""Atomic report writing: a temp file in the target folder, fsync, then os.replace.

A failed write leaves the old target untouched (click's atomic helper would replace it even after
an exception inside the block). Writing over an input file is refused.
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Iterable
from pathlib import Path


class OutputError(ValueError):
    """A report cannot be written where asked (exit status 2)."""


def write_atomic(path: str | Path, content: str | bytes, *, inputs: Iterable[str | Path] = ()) -> Path:
    target = Path(path)
    resolved = target.resolve()
    for source in inputs:
        if Path(source).resolve() == resolved:
            raise OutputError(f"{target}: refusing to write a report over an input file")
    folder = resolved.parent
    if not folder.is_dir():
        raise OutputError(f"{target}: the folder {folder} does not exist")
    data = content.encode("utf-8") if isinstance(content, str) else content
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    except OSError as exc:  # read-only or special folder: say so, not the temporary file's errno
        raise OutputError(f"{target}: cannot write in the folder {folder} ({exc.strerror or exc})") from None
    try:
        # mkstemp creates 0600; a report is an ordinary file (0666 less the umask).
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(tmp, resolved)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
    return resolved
