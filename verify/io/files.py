"""Opening input files: regular files only, size-capped before anything is parsed.

A device (/dev/zero), a FIFO or a terminal (/dev/stdin) would be read until memory runs out or
block forever; a file larger than the cap would cost gigabytes in the parsers. Both are refused
with the path and the rule, before a byte is parsed.
"""

from __future__ import annotations

import hashlib
import os
import stat
from pathlib import Path

# A 10^5-member truss keeps its tables in CSV files of about 3 MB each (bench/generate.py), and
# written inline in TOML it is about 3.5 MB. A 27 MB one-line case file peaked at 3.8 GB; 8 MB
# is read (and refused, when hostile) in a few seconds. 256 MB of table stays within what pandas
# reads in seconds.
CASE_FILE_MAX_BYTES = 8 * 2**20
TABLE_MAX_BYTES = 256 * 2**20


class UnreadableFile(ValueError):
    """Why a file cannot be read as an input; the message names no path (callers locate it)."""


def read_regular_file(path: str | Path, *, limit: int) -> bytes:
    """The bytes of `path` when it is a regular file of at most `limit` bytes."""
    try:
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except FileNotFoundError:
        raise
    except OSError as exc:
        raise UnreadableFile(f"cannot open the file ({exc.strerror or exc})") from None
    try:
        info = os.fstat(fd)
        if not stat.S_ISREG(info.st_mode):
            kind = (
                "a folder"
                if stat.S_ISDIR(info.st_mode)
                else "not a regular file (a device, pipe or socket)"
            )
            raise UnreadableFile(f"{kind}; inputs are read from ordinary files only")
        if info.st_size > limit:
            raise UnreadableFile(
                f"the file is {info.st_size / 2**20:.0f} MB, over the {limit // 2**20} MB an input "
                "may have"
            )
        with os.fdopen(fd, "rb", closefd=False) as handle:
            # Asked for the size found (not the limit, which would reserve the limit's bytes for
            # every read), then for any rest, in case the file grew since.
            data = handle.read(info.st_size + 1)
            if len(data) > info.st_size:
                data += handle.read(limit + 1 - len(data))
    except OSError as exc:
        raise UnreadableFile(f"cannot read the file ({exc.strerror or exc})") from None
    finally:
        os.close(fd)
    if len(data) > limit:  # grew while read
        raise UnreadableFile(f"the file is over the {limit // 2**20} MB an input may have")
    return data


def inside_folder(path: Path, folder: Path) -> bool:
    """Whether `path`, with every link followed, lies inside `folder` (links followed too)."""
    try:
        path.resolve().relative_to(folder.resolve())
    except ValueError:
        return False
    return True


def sha256_file(path: str | Path) -> str | None:
    """The SHA-256 of a file's bytes, or None when it cannot be read (outputs say "unreadable")."""
    try:
        return hashlib.sha256(Path(path).read_bytes()).hexdigest()
    except OSError:
        return None
