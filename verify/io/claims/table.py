"""What a claims table is once read: plain values with the place each was written."""

from __future__ import annotations

from dataclasses import dataclass
from typing import NamedTuple


class ClaimedValue(NamedTuple):
    """One claimed value as read. A named tuple: a 10^5-member table gives 2x10^5 of them."""

    label: str  # as written in the table
    member: str | None  # matched model member id (None for a reaction claim)
    reaction: tuple[str, str] | None  # (joint id, axis) for a claimed reaction, else None
    column: str  # load case / combination name as written (header or case cell); "" if none
    value: float  # T/C applied (T positive, C negative); else the sign as written
    sign_fixed: bool  # True when a T/C suffix settled the sign
    unit: str | None  # canonical unit symbol (verify.units) from the cell or header, or None
    where: str  # e.g. "row 9, column 'dead'" or "sheet 'Forces' cell C7, column 'dead'"
    text: str = ""  # the cell exactly as written, for the audit trail ("4.50 T", "(12.4)")


@dataclass(frozen=True)
class UnmatchedLabel:
    label: str
    where: str
    reason: str  # "unknown" or "ambiguous"
    candidates: tuple[
        str, ...
    ]  # nearest real labels (unknown) or the competing matches (ambiguous)


@dataclass(frozen=True)
class SignConflict:
    """A cell whose sign and T/C letter disagree under the table's convention ('121.4 T' in a
    table that writes compression positive). Its claim is read by the letter; the conflict is
    reported on that member rather than refusing the table."""

    label: str
    member: str
    column: str
    where: str
    text: str
    convention: str  # "tension-positive" or "compression-positive": the table's, as read


@dataclass(frozen=True)
class Resolution:
    """How finely a column was written, judged from its values: every value a multiple of
    `step` (0.5 kN, 5 kN). Half the step widens the tolerance of that column's claims (in the
    column's own unit). Significant figures are judged by the comparison (compare/tolerances.py)."""

    column: str
    step: float  # every member value of the column is a multiple of this, in the column's unit
    unit: str | None

    def describe(self) -> str:
        unit = f" {self.unit}" if self.unit else ""
        return f"column '{self.column}' written to steps of {self.step:g}{unit}, so +-{self.step / 2:g}{unit} allowed"


@dataclass(frozen=True)
class ClaimsTable:
    source: str
    sheet: str | None  # the sheet read, or for a PDF the pages ("pages 12-14")
    sha256: str  # of the file bytes
    values: tuple[ClaimedValue, ...]
    unmatched: tuple[UnmatchedLabel, ...]
    columns: tuple[str, ...]  # case/combination names as written, in table order
    header_unit: str | None  # unit found in headers, if one applies to the whole table
    sign_conflicts: tuple[SignConflict, ...] = ()
    resolutions: tuple[Resolution, ...] = ()  # columns written coarser than their decimals show

    def resolution_of(self, column: str) -> Resolution | None:
        for found in self.resolutions:
            if found.column == column:
                return found
        return None
