"""A report table as plain data (title, intro, header, rows, per-row status), drawn by document."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Table:
    title: str
    intro: str
    header: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    statuses: tuple[str, ...]  # per row, for styling ("" for none)
    note: str = ""
