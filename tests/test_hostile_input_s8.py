"""Hostile input the fast readers took while the careful ones refused it (or the other way), and
input read silently as something else. Each test plants the messy input, says what must come of
it (exit status 2 and one message naming file, row or line, field and what was expected; or a
warning naming the row), and checks that the honest table of the same truss still agrees.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner
from test_hostile_input import CLAIMS, TRIANGLE, folder

from verify.cli import main
from verify.io import claims as claims_module
from verify.io.claims import rows as rows_module
from verify.io.claims import source_csv

ROUTES = {
    "fast": dict(fast=True, shortcuts=True),
    "columns": dict(fast=True, shortcuts=False),
    "general": dict(fast=False, shortcuts=False),
}


def check(
    monkeypatch: pytest.MonkeyPatch, case: Path, claims: Path, *, fast: bool, shortcuts: bool
) -> tuple[int, str, str]:
    """`check` of a case and claims by one route of the claims reader: the fast plain rows
    (read from the cells' places, or from columns cut from the text) or the general reader."""
    with monkeypatch.context() as patch:
        patch.setattr(claims_module, "FAST_ROWS", fast)
        patch.setattr(rows_module, "PLAIN_BLOCKS", shortcuts)
        patch.setattr(source_csv, "PLAIN_BYTES", shortcuts)
        result = CliRunner().invoke(main, ["check", str(case), "--claims", str(claims)])
    if result.exception and not isinstance(result.exception, SystemExit):
        raise result.exception
    return result.exit_code, result.stdout, result.stderr


def every_route(monkeypatch: pytest.MonkeyPatch, case: Path, claims: Path) -> tuple[int, str]:
    """The exit status and message of `check`, the same by every route of the claims reader."""
    found = {name: check(monkeypatch, case, claims, **route)[::2] for name, route in ROUTES.items()}
    assert len(set(found.values())) == 1, found
    return found["general"]


def triangle(tmp_path: Path, claims: str, case: str = TRIANGLE) -> tuple[Path, Path, Path]:
    """The triangle case, the planted claims and its honest claims."""
    folder(tmp_path, {"case.toml": case, "claims.csv": claims, "honest.csv": CLAIMS})
    return tmp_path / "case.toml", tmp_path / "claims.csv", tmp_path / "honest.csv"


# -- 1. a long force cell or member label: the same answer by every route ------------------------

LONG_NUMBER = "-7.07106781186547524400844362104849039284835937688474036588339868995366"


def test_a_plain_number_past_the_force_cell_limit_is_refused_by_every_route(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """A force cell longer than 64 characters is refused by the careful reader (no force cell is
    that long); the fast routes took it when it was a plain number."""
    assert len(LONG_NUMBER) > 64 and float(LONG_NUMBER) == pytest.approx(-7.0711, abs=1e-4)
    case, planted, honest = triangle(tmp_path, CLAIMS.replace("-7.0711", LONG_NUMBER, 1))
    status, message = every_route(monkeypatch, case, planted)
    assert status == 2
    assert message.startswith(f"{planted} row 3, column 'dead (kN)': force '-7.0710678")
    assert f"is {len(LONG_NUMBER)} characters long (limit 64)" in message
    assert "Traceback" not in message
    assert every_route(monkeypatch, case, honest) == (0, "")


def test_a_member_id_the_case_file_takes_can_be_named_in_a_claims_table(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """A member id of 150 characters is within the case file's limit (200): every route reads a
    claim naming it (the general reader refused labels past 100, the fast routes took them)."""
    long_id = "chord-" + "A" * 144
    case_text = TRIANGLE.replace('AB = ["A", "B"]', f'"{long_id}" = ["A", "B"]')
    claims = CLAIMS.replace("AB,", f"{long_id},")
    case, planted, honest = triangle(tmp_path, claims, case_text)
    status, message = every_route(monkeypatch, case, planted)
    assert (status, message) == (0, "")
    assert every_route(monkeypatch, case, honest)[0] == 0  # (its AB row names no member)
    assert rows_module.MAX_NAME_CHARS == 200


def test_a_label_past_the_name_limit_is_refused_by_every_route(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """A model built in memory may hold an id longer than labels may be: the fast routes send
    its row to the general reader, which words it (here the limit is lowered to 1 to plant it)."""
    case, planted, honest = triangle(tmp_path, CLAIMS)
    monkeypatch.setattr(rows_module, "MAX_NAME_CHARS", 1)
    status, message = every_route(monkeypatch, case, planted)
    assert status == 2
    assert message.startswith("3 problems found in the input:\n")
    assert f"{planted} row 2, column 'member': the member label 'AB' is 2" in message
    assert message.count("characters long (limit 1)") == 3
    monkeypatch.undo()
    assert every_route(monkeypatch, case, honest) == (0, "")
