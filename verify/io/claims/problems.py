"""Problems found while reading one claims file, collected and raised together."""

from __future__ import annotations

from verify.errors import InputError, Problem
from verify.io.values import quoted

__all__ = ["MAX_PROBLEMS", "Problems", "quoted"]

MAX_PROBLEMS = 200  # problems reported per file; the rest are counted


class Problems:
    """Collects problems for one file, capped so a wholly broken table stays readable."""

    def __init__(self, file: str) -> None:
        self.file = file
        self.items: list[Problem] = []
        self.dropped = 0

    def add(self, message: str, where: str | None = None) -> None:
        if len(self.items) >= MAX_PROBLEMS:
            self.dropped += 1
            return
        if message and message[-1] not in ".?!":
            message += "."
        self.items.append(Problem(self.file, message, None, where))

    def raise_if_any(self) -> None:
        if not self.items:
            return
        items = list(self.items)
        if self.dropped:
            items.append(
                Problem(self.file, f"... and {self.dropped} more problems of the same kinds.")
            )
        raise InputError(items)

    def __bool__(self) -> bool:
        return bool(self.items)
