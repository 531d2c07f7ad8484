"""Input errors: every problem found in a file, collected and reported at once.

Bad input raises :class:`InputError`; bad *claims* are data (findings), never exceptions.
"""

from __future__ import annotations

import difflib
from collections.abc import Iterable
from dataclasses import dataclass, field

EXIT_AGREES = 0
EXIT_DISCREPANCIES = 1
EXIT_BAD_INPUT = 2
EXIT_CANNOT_VERIFY = 3


@dataclass(frozen=True)
class Problem:
    """One thing wrong with an input file, located as precisely as the format allows."""

    file: str
    message: str
    line: int | None = None
    where: str | None = None  # e.g. "row 9", "sheet 'Forces' cell C7"; overrides line when set

    def __str__(self) -> str:
        if self.where:
            return f"{self.file} {self.where}: {self.message}"
        if self.line is not None:
            return f"{self.file}:{self.line}: {self.message}"
        return f"{self.file}: {self.message}"


class InputError(ValueError):
    """A malformed case or claims file. Carries every problem found, not just the first."""

    exit_code = EXIT_BAD_INPUT

    def __init__(self, problems: Iterable[Problem]) -> None:
        self.problems = tuple(problems)
        super().__init__(self.render())

    def render(self) -> str:
        lines = [str(p) for p in self.problems]
        if len(lines) > 1:
            lines.insert(0, f"{len(lines)} problems found in the input:")
        return "\n".join(lines)


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
    close = list(dict.fromkeys(exact + within + difflib.get_close_matches(str(name), pool, n=n, cutoff=0.5)))[:n]
    if not close:
        return ""
    quoted = " or ".join(f"'{c}'" for c in close)
    return f" Did you mean {quoted}?"
