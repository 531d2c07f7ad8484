"""Line numbers for TOML keys.

tomllib returns plain dicts without positions, so we scan the text once for table headers and
``key =`` lines. It is a locator for messages only; tomllib remains the parser.
"""

from __future__ import annotations

import re

_HEADER = re.compile(r"^\s*\[\s*([^\[\]]+?)\s*\]\s*(#.*)?$")
_KEY = re.compile(r"""^\s*("(?:[^"\\]|\\.)*"|'[^']*'|[A-Za-z0-9_\-]+)\s*=""")
_PART = re.compile(r"""\s*("(?:[^"\\]|\\.)*"|'[^']*'|[^.\s]+)\s*(?:\.|$)""")


def _unquote(part: str) -> str:
    part = part.strip()
    if len(part) >= 2 and part[0] == part[-1] and part[0] in "\"'":
        return part[1:-1]
    return part


def _split_dotted(text: str) -> tuple[str, ...]:
    return tuple(_unquote(m.group(1)) for m in _PART.finditer(text) if m.group(1))


class LineLocator:
    """Maps (table path..., key) to the 1-based line where it is written."""

    def __init__(self, text: str) -> None:
        self._lines: dict[tuple[str, ...], int] = {}
        table: tuple[str, ...] = ()
        for number, line in enumerate(text.splitlines(), start=1):
            header = _HEADER.match(line)
            if header and not line.lstrip().startswith("[["):
                table = _split_dotted(header.group(1))
                self._lines.setdefault(table, number)
                continue
            key = _KEY.match(line)
            if key:
                self._lines.setdefault(table + (_unquote(key.group(1)),), number)

    def line(self, *path: str) -> int | None:
        """The line of the deepest prefix of `path` that was found."""
        for n in range(len(path), 0, -1):
            found = self._lines.get(tuple(path[:n]))
            if found is not None:
                return found
        return None
