"""The case reader's bulk shortcuts against the readings they replace.

Large joint, member and load tables are read whole (pandas, one dict per table, numpy checks);
each shortcut must give exactly what the careful row-by-row reader gives, or decline and leave
the table to it. The yardsticks are outside the shortcuts: the regular expression and padding
searches the plain-table scan replaces, and the careful reader itself (the bulk readers
switched off) for whole cases, with their problems.
Hypothesis draws the inputs.
"""

from __future__ import annotations

import tempfile
from pathlib import Path

from hypothesis import given, settings
from hypothesis import strategies as st
from test_case_reader import pratt_csv_files
from trussgen import pratt

import verify.io.case as case_module
from verify.errors import InputError
from verify.io.case import _ODD_CHARACTERS, _PADDING, _plain_table, read_case

# Characters that decide how a table is scanned: delimiters, padding, quotes, breaks, controls,
# a no-break space, a non-ASCII letter and the DEL byte.
TABLE_TEXT = st.text(alphabet=list('a1.-,;"\n\r\t \x01\x1f\x7f\xa0é\u2028'), max_size=30)


@settings(max_examples=500, deadline=None)
@given(text=TABLE_TEXT)
def test_a_plain_table_has_nothing_the_careful_checks_look_for(text: str) -> None:
    plain = _plain_table(text)
    assert plain == all(33 <= ord(c) < 127 and c != '"' or c == "\n" for c in text)
    if plain:
        assert _ODD_CHARACTERS.search(text) is None
        assert not any(p in text for p in _PADDING) and '"' not in text
        assert not text.startswith((" ", "\t")) and not text.endswith((" ", "\t"))


# -- whole cases: bulk readers on against off ----------------------------------------------------
def _flaw(files: dict[str, str], flaw: str, where: int) -> None:
    """Spoil one row of one table the way a careless edit would."""
    table = {"joint": "joints.csv", "member": "members.csv", "load": "loads.csv"}[flaw.split()[0]]
    header, *rows = files[table].splitlines()
    k = where % len(rows)
    cells = rows[k].split(",")
    if flaw == "joint repeated":
        rows.append(rows[k])
    elif flaw == "joint empty x":
        cells[1] = ""
    elif flaw == "joint empty id":
        cells[0] = ""
    elif flaw == "joint short row":
        cells = cells[:2]
    elif flaw == "joint padded":
        cells[0] = f" {cells[0]} "
    elif flaw == "member repeated":
        rows.append(rows[k])
    elif flaw == "member unknown end":
        cells[2] = "NOWHERE"
    elif flaw == "member empty start":
        cells[1] = ""
    elif flaw == "member empty id":
        cells[0] = ""
    elif flaw == "member short row":
        cells = cells[:2]
    elif flaw == "member loop":
        cells[2] = cells[1]
    elif flaw == "member ea":
        cells[3] = "2e5"
    elif flaw == "member bad ea":
        cells[3] = "-1"
    elif flaw == "load repeated":
        rows.append(rows[k])
    elif flaw == "load other case":
        cells[0] = "wind"
    elif flaw == "load unknown joint":
        cells[1] = "NOWHERE"
    elif flaw == "load empty case":
        cells[0] = ""
    elif flaw == "load huge":
        cells[3] = "1e300"
    elif flaw == "load control character":
        cells[0] = "de\x01ad"
    if flaw.split()[1] not in ("repeated",):
        rows[k] = ",".join(cells)
    files[table] = "\n".join([header, *rows]) + "\n"


FLAWS = [
    "joint repeated",
    "joint empty x",
    "joint empty id",
    "joint short row",
    "joint padded",
    "member repeated",
    "member unknown end",
    "member empty start",
    "member empty id",
    "member short row",
    "member loop",
    "member ea",
    "member bad ea",
    "load repeated",
    "load other case",
    "load unknown joint",
    "load empty case",
    "load huge",
    "load control character",
]


def _read(files: dict[str, str], bulk: bool) -> object:
    """The model the reader gives (its tables, arrays and indexes), or the problems it words."""
    saved = case_module.BULK_MIN_ROWS, case_module._clean_frame
    case_module.BULK_MIN_ROWS = 0  # small tables too go to the bulk readers
    if not bulk:
        case_module._clean_frame = lambda *args: None  # type: ignore[assignment]  # the careful reader
    try:
        with tempfile.TemporaryDirectory() as folder:
            for name, text in files.items():
                (Path(folder) / name).write_text(text, encoding="utf-8")
            try:
                model = read_case(Path(folder) / "case.toml")
            except InputError as exc:
                return exc.render().replace(folder, "")
    finally:
        case_module.BULK_MIN_ROWS, case_module._clean_frame = saved
    return (
        model.joints,
        model.members,
        [(c.name, list(c.loads.items())) for c in model.cases],
        model.xyz.tolist(),
        model.ends_index.tolist(),
        list(model.joint_index.items()),
        list(model.member_index.items()),
        model.load_matrix().tolist(),
    )


@settings(max_examples=120, deadline=None)
@given(
    flaws=st.lists(st.sampled_from(FLAWS), max_size=3),
    places=st.lists(st.integers(0, 40), min_size=3, max_size=3),
    panels=st.sampled_from([2, 4, 6]),
)
def test_a_case_read_in_bulk_equals_the_careful_reading(
    flaws: list[str], places: list[int], panels: int
) -> None:
    """Clean tables give the same model, indexes and arrays; spoiled ones the same problems."""
    files = pratt_csv_files(pratt(panels))
    # Rows cut short last: the other flaws find every cell they change.
    for flaw, where in sorted(zip(flaws, places, strict=False), key=lambda f: "short" in f[0]):
        _flaw(files, flaw, where)
    assert _read(files, bulk=True) == _read(files, bulk=False)


def test_the_bulk_readers_really_read_a_clean_case() -> None:
    """Without a flaw, the three tables go through the bulk readers (else the test above would
    compare the careful reader with itself)."""
    files = pratt_csv_files(pratt(4))
    files["members.csv"] = files["members.csv"].replace(",\n", ",2e5\n")  # every cell given
    read: list[str] = []
    original = case_module._clean_frame

    def counted(*args: object) -> object:
        found = original(*args)  # type: ignore[arg-type]
        if found is not None:
            read.append(str(args[2]))
        return found

    case_module._clean_frame = counted  # type: ignore[assignment]
    plain_loads = case_module._plain_loads  # a plain loads table is cut from its bytes instead
    case_module._plain_loads = lambda *args: False  # type: ignore[assignment]
    try:
        model = _read(files, bulk=True)
    finally:
        case_module._clean_frame, case_module._plain_loads = original, plain_loads
    assert sorted(read) == ["joints.csv", "loads.csv", "members.csv"]
    assert model == _read(files, bulk=False)
