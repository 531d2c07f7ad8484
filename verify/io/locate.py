"""Line numbers for TOML keys.

tomllib returns plain dicts without positions, so we scan the text once for table headers and
``key =`` lines. It is a locator for messages only; tomllib remains the parser.

The scan is a single pass of plain string operations, linear in the text: the regular
expressions it replaced backtracked cubically on a long line starting with '[' (a 7 KB case
file took 74 s). Lines inside multi-line strings are skipped, so text in them never reads as a
header or a key.
"""

from __future__ import annotations

_BARE_KEY = frozenset("ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789_-")


def _quoted(text: str, start: int) -> int:
    """The index just past the string quoted at text[start], or -1 when it is not closed."""
    quote = text[start]
    k = start + 1
    while k < len(text):
        char = text[k]
        if quote == '"' and char == "\\":
            k += 2
            continue
        if char == quote:
            return k + 1
        k += 1
    return -1


def _key_parts(text: str) -> tuple[tuple[str, ...] | None, int]:
    """The parts of a (dotted) key written at the start of `text` and the index just past it
    (and past the blanks after it); None for the parts when `text` does not start with a key."""
    parts: list[str] = []
    k, n = 0, len(text)
    while True:
        while k < n and text[k] in " \t":
            k += 1
        if k < n and text[k] in "\"'":
            end = _quoted(text, k)
            if end < 0:
                return None, k
            parts.append(text[k + 1 : end - 1])
            k = end
        else:
            start = k
            while k < n and text[k] in _BARE_KEY:
                k += 1
            if k == start:
                return None, k
            parts.append(text[start:k])
        while k < n and text[k] in " \t":
            k += 1
        if k < n and text[k] == ".":
            k += 1
            continue
        return tuple(parts), k


def _opens_multiline(line: str) -> str | None:
    """The delimiter of a multi-line string left open at the end of `line`, if any."""
    open_with: str | None = None
    k = 0
    while k < len(line):
        if open_with is not None:
            found = line.find(open_with, k)
            if found < 0:
                return open_with
            k, open_with = found + 3, None
            continue
        char = line[k]
        if char == "#":
            return None
        if line.startswith(('"""', "'''"), k):
            open_with, k = line[k : k + 3], k + 3
            continue
        if char in "\"'":
            end = _quoted(line, k)
            if end < 0:
                return None
            k = end
            continue
        k += 1
    return open_with


class LineLocator:
    """Maps (table path..., key) to the 1-based line where it is written."""

    def __init__(self, text: str) -> None:
        self._lines: dict[tuple[str, ...], int] = {}
        table: tuple[str, ...] = ()
        inside: str | None = None  # the delimiter of the multi-line string being skipped
        for number, line in enumerate(text.splitlines(), start=1):
            if inside is not None:
                found = line.find(inside)
                if found < 0:
                    continue
                inside = _opens_multiline(line[found + 3 :])
                continue
            stripped = line.lstrip()
            if stripped.startswith("[") and not stripped.startswith("[["):
                parts, end = _key_parts(stripped[1:])
                rest = stripped[1 + end :].lstrip()
                if parts is not None and rest.startswith("]"):
                    table = parts
                    self._lines.setdefault(table, number)
                    continue
            elif not stripped.startswith("[["):
                parts, end = _key_parts(stripped)
                if parts is not None and stripped[end : end + 1] == "=":
                    self._lines.setdefault(table + parts, number)
            inside = _opens_multiline(line)

    def line(self, *path: str) -> int | None:
        """The line of the deepest prefix of `path` that was found."""
        for n in range(len(path), 0, -1):
            found = self._lines.get(tuple(path[:n]))
            if found is not None:
                return found
        return None
