"""Atomic report writing: a temp file in the target folder, fsync, then os.replace.

A failed write leaves the old target untouched (click's atomic helper would replace it even after
an exception inside the block). Writing over an input file, or onto anything but a regular
file, is refused.
"""

from __future__ import annotations

import os
import stat
import tempfile
from collections.abc import Iterable
from pathlib import Path


class OutputError(ValueError):
    """A report cannot be written where asked (exit status 2)."""


def _same_file(a: os.stat_result, b: os.stat_result) -> bool:
    return (a.st_dev, a.st_ino) == (b.st_dev, b.st_ino)


def write_atomic(
    path: str | Path, content: str | bytes, *, inputs: Iterable[str | Path] = ()
) -> Path:
    """Write `content` to `path` atomically. Refuses a target that is not a regular file (a
    device, a folder, a pipe: replacing it would destroy it, or write nowhere) and one that is
    any of `inputs`, however spelt: another path, a symbolic or a hard link to it."""
    target = Path(path)
    resolved = target.resolve()
    try:
        existing: os.stat_result | None = os.stat(target)
    except FileNotFoundError:
        existing = None
    except OSError as exc:
        raise OutputError(
            f"{target}: cannot check the output path ({exc.strerror or exc})"
        ) from None
    if existing is not None:
        if stat.S_ISDIR(existing.st_mode):
            raise OutputError(
                f"{target}: is a folder; name the file to write, e.g. {target / 'review.html'}"
            )
        if not stat.S_ISREG(existing.st_mode):
            raise OutputError(
                f"{target}: not a regular file (a device, pipe or socket); reports go to "
                "ordinary files only"
            )
        for source in inputs:
            try:
                same = _same_file(existing, os.stat(source))
            except OSError:
                same = Path(source).resolve() == resolved
            if same:
                raise OutputError(
                    f"{target}: refusing to write a report over an input file ({source})"
                )
    folder = resolved.parent
    if not folder.is_dir():
        raise OutputError(f"{target}: the folder {folder} does not exist")
    data = content.encode("utf-8") if isinstance(content, str) else content
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    except OSError as exc:  # read-only or special folder: say so, not the temporary file's errno
        raise OutputError(
            f"{target}: cannot write in the folder {folder} ({exc.strerror or exc})"
        ) from None
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
