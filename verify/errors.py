"""Input errors: every problem found in a file, collected and reported at once.

Bad input raises :class:`InputError`; bad *claims* are data (findings), never exceptions.
"""

from __future__ import annotations

import difflib
import re
import reprlib
from collections.abc import Iterable
from dataclasses import dataclass, field

EXIT_AGREES = 0
EXIT_DISCREPANCIES = 1
EXIT_BAD_INPUT = 2
EXIT_CANNOT_VERIFY = 3

# A file broken on every row (a wrong delimiter, binary data) would print a screenful per row; the
# first problems show the pattern.
MAX_SHOWN_PROBLEMS = 50


@dataclass(frozen=True)
class Problem:
    """One thing wrong with an input file, located as precisely as the format allows."""

    file: str
    message: str
    line: int | None = None
    where: str | None = None  # e.g. "row 9", "sheet 'Forces' cell C7"; overrides line when set

    def __str__(self) -> str:
        # Escaped here, once, for every reader: a label may carry ESC or CR from a hostile file.
        file, message = escape_controls(self.file), escape_controls(self.message, keep="\n")
        if self.where:
            return f"{file} {escape_controls(self.where)}: {message}"
        if self.line is not None:
            return f"{file}:{self.line}: {message}"
        return f"{file}: {message}"


# Control characters (C0, DEL, C1) and the Unicode line and paragraph separators: never part of a
# label, and in a terminal or a spreadsheet they move the cursor, recolour, or start a new line.
_CONTROLS = re.compile("[\x00-\x1f\x7f-\x9f\u2028\u2029]")


def has_controls(text: str) -> bool:
    return _CONTROLS.search(text) is not None


def escape_controls(text: str, *, keep: str = "") -> str:
    """`text` with every control character written as a visible escape (\\x1b, \\r, \\u2028)."""

    def visible(match: re.Match[str]) -> str:
        char = match.group(0)
        if char in keep:
            return char
        return {"\n": "\\n", "\r": "\\r", "\t": "\\t"}.get(char) or (
            f"\\x{ord(char):02x}" if ord(char) < 0x100 else f"\\u{ord(char):04x}"
        )

    return _CONTROLS.sub(visible, text)


_SHORT_REPR = reprlib.Repr()
_SHORT_REPR.maxlist = _SHORT_REPR.maxtuple = _SHORT_REPR.maxdict = 6
_SHORT_REPR.maxstring = _SHORT_REPR.maxother = 60
_SHORT_REPR.maxlevel = 3


def shown(value: object, *, limit: int = 60) -> str:
    """A value as a message quotes it: control characters escaped, clipped to `limit` characters.

    Containers are abbreviated before they are written out: the repr of a 4-million-item array
    from a hostile case file took seconds and hundreds of MB, only to be clipped."""
    text = escape_controls(value if isinstance(value, str) else _SHORT_REPR.repr(value))
    if len(text) > limit:
        return f"{text[:limit]}… ({len(text)} characters)"
    return text


def quoted(value: object, *, limit: int = 60) -> str:
    """`shown`, with text in single quotes as messages quote user text; other values as repr."""
    return f"'{shown(value, limit=limit)}'" if isinstance(value, str) else shown(value, limit=limit)


class InputError(ValueError):
    """A malformed case or claims file. Carries every problem found, not just the first."""

    exit_code = EXIT_BAD_INPUT

    def __init__(self, problems: Iterable[Problem]) -> None:
        self.problems = tuple(problems)
        super().__init__(self.render())

    def render(self) -> str:
        lines = [str(p) for p in self.problems[:MAX_SHOWN_PROBLEMS]]
        if len(self.problems) > MAX_SHOWN_PROBLEMS:
            lines.append(f"... and {len(self.problems) - MAX_SHOWN_PROBLEMS} more; fix these first")
        if len(self.problems) > 1:
            lines.insert(0, f"{len(self.problems)} problems found in the input:")
        return "\n".join(lines)


class OptionError(InputError):
    """An option out of its range (exit status 2), from the command line or the Python API alike.

    An InputError, so a caller catches one type for every bad input; its message is the option's
    own sentence (it names the option, the value and the range), with no file before it.
    """

    def __init__(self, message: str) -> None:
        self.message = message
        super().__init__([Problem("options", message)])

    def render(self) -> str:
        return self.message


@dataclass
class ProblemList:
    """Collects problems while a file is read, then raises them together."""

    file: str
    problems: list[Problem] = field(default_factory=list)

    def add(self, message: str, *, line: int | None = None, where: str | None = None) -> None:
        self.problems.append(Problem(self.file, message, line, where))

    def raise_if_any(self) -> None:
        if self.problems:
            raise InputError(self.problems)

    def __bool__(self) -> bool:
        return bool(self.problems)


def did_you_mean(name: str, candidates: Iterable[str], *, n: int = 2) -> str:
    """A ' Did you mean ...?' hint with the closest valid names, or '' when none is close."""
    pool = [str(c) for c in candidates]
    wanted = str(name).casefold()
    # The same name in other letter case, then names containing it ("Forces" in "Member forces"),
    # then what difflib finds close.
    exact = [c for c in pool if c.casefold() == wanted]
    within = [c for c in pool if len(wanted) >= 3 and wanted in c.casefold() and c not in exact]
    close = list(
        dict.fromkeys(exact + within + difflib.get_close_matches(str(name), pool, n=n, cutoff=0.5))
    )[:n]
    if not close:
        return ""
    quoted = " or ".join(f"'{c}'" for c in close)
    return f" Did you mean {quoted}?"
