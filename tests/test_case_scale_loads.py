"""The loads table cut from its bytes (case and joint cells; only the forces parsed by pandas)
against the pandas bulk reader and the careful row-by-row reader: same load cases in the same
order, same Model, same problems word for word. Hypothesis draws the case names, the rows, the
numbers as written and the flaws."""

from __future__ import annotations

from hypothesis import given, settings
from hypothesis import strategies as st
from test_case_scale_members import CASE, LABELS, _files, _members, _read

from verify.io.case_columns import plain_columns

# Mostly numbers a table holds; now and then one the readers refuse.
GOOD = ["0.0", "-10", "2.5e3", "-0", "7", "3.", "-1.25e-3"]
BAD = ["1e300", "nan", "inf", "", "abc", "1,5", "0x1"]
NUMBERS = st.sampled_from(GOOD * 12 + BAD)
FLAWS = [
    "unknown joint",
    "joint twice",
    "empty case",
    "empty joint",
    "columns reordered",
    "extra column",
    "fz column",
    "upper-case header",
    "no last break",
    "blank line",
    "short row",
    "long case name",
]


def _loads(
    ids: list[str],
    rows: list[tuple[str, int, str, str]],
    flaws: list[tuple[str, int]],
    fixed: bool,
) -> str:
    header = ["joint", "fx", "fy"] if fixed else ["case", "joint", "fx", "fy"]
    cells = [
        ([ids[j % len(ids)], fx, fy] if fixed else [case, ids[j % len(ids)], fx, fy])
        for case, j, fx, fy in rows
    ]
    end = "\n"
    c = 0 if fixed else 1  # the joint column
    # Rows cut short or blank last: the other flaws find every cell they change.
    for flaw, at in sorted(flaws, key=lambda f: f[0] in ("short row", "blank line")):
        k = at % len(cells)
        if flaw == "unknown joint":
            cells[k][c] += "x"
        elif flaw == "joint twice":
            cells.append(list(cells[k]))
        elif flaw == "empty case" and not fixed:
            cells[k][0] = ""
        elif flaw == "empty joint":
            cells[k][c] = ""
        elif flaw == "columns reordered":
            order = [2, 0, 1] if fixed else [3, 1, 2, 0]
            header, cells = (
                [header[i] for i in order],
                [[r[i] for i in order if i < len(r)] for r in cells],
            )
        elif flaw == "extra column":
            header, cells = ["note", *header], [["n", *r] for r in cells]
        elif flaw == "fz column":
            header, cells = [*header, "fz"], [[*r, "5.0"] for r in cells]
        elif flaw == "upper-case header":
            header = [h.upper() for h in header]
        elif flaw == "no last break":
            end = ""
        elif flaw == "blank line":
            cells.insert(k, [])
        elif flaw == "short row":
            cells[k] = cells[k][:-1]
        elif flaw == "long case name" and not fixed:
            cells[k][0] = "w" * 201
    return "\n".join([",".join(header)] + [",".join(r) for r in cells]) + end


def _rows(data: st.DataObject, ids: list[str], cases: list[str]) -> list[tuple[str, int, str, str]]:
    """Rows of (case, joint, fx, fy), each (case, joint) once: the flaws add the repeats."""
    pairs = data.draw(
        st.lists(
            st.tuples(st.sampled_from(cases), st.integers(0, len(ids) - 1)),
            min_size=1,
            max_size=12,
            unique=True,
        )
    )
    return [(case, j, data.draw(NUMBERS), data.draw(NUMBERS)) for case, j in pairs]


@settings(max_examples=200, deadline=None)
@given(
    ids=st.lists(LABELS, min_size=4, max_size=10, unique=True),
    cases=st.lists(LABELS, min_size=1, max_size=4, unique=True),
    flaws=st.lists(st.tuples(st.sampled_from(FLAWS), st.integers(0, 60)), max_size=2),
    fixed=st.booleans(),
    data=st.data(),
)
def test_loads_cut_from_bytes_read_like_pandas_and_the_careful_reader(
    ids: list[str],
    cases: list[str],
    flaws: list[tuple[str, int]],
    fixed: bool,
    data: st.DataObject,
) -> None:
    table = _rows(data, ids, cases[:1] if fixed else cases)
    files = _files(ids, _members(ids, ["M"], []))
    files["loads.csv"] = _loads(ids, table, flaws, fixed)
    if fixed:
        files["case.toml"] = CASE.replace('loads = "loads.csv"\n', "") + (
            '[loads]\ndead = "loads.csv"\n'
        )
    plain = _read(files, "plain")
    assert plain == _read(files, "pandas")
    assert plain == _read(files, "careful")


def test_a_clean_loads_table_is_cut_from_bytes() -> None:
    """Cases of short and long names (one and several 8-byte words), each case's rows apart, the
    columns in another order: the cut reads the table and gives the careful reading."""
    ids = ["A", "B", "C", "D", "E", "F"]
    loads = "fy,joint,case,fx\n" + "".join(
        f"{-k}.5,{ids[k % 6]},{name},{k}.0\n"
        for k, name in enumerate(
            ["dead", "wind-from-the-left", "dead", "snow", "wind-from-the-left"]
        )
    )
    files = _files(ids, _members(ids, ["M"], []))
    files["loads.csv"] = loads
    taken: list[str] = []
    model = _read(files, "plain", taken)
    assert taken == ["members", "loads"]
    assert model == _read(files, "careful")
    assert [name for name, _ in model[2]] == ["dead", "wind-from-the-left", "snow"]  # type: ignore[index]


@settings(max_examples=200, deadline=None)
@given(
    cells=st.lists(st.sampled_from(["a", "b", "long-name-1", "long-name-2", "x" * 17]), min_size=1)
)
def test_numbered_cells_are_pandas_factorize_of_the_strings(cells: list[str]) -> None:
    import pandas as pd

    table = plain_columns("c\n" + "\n".join(cells))
    assert table is not None
    codes, names = table.numbered(0)
    expected_codes, expected_names = pd.factorize(pd.Series(cells, dtype=object), sort=False)
    assert codes.tolist() == expected_codes.tolist() and names == list(expected_names)


def test_a_short_row_is_refused_by_every_route() -> None:
    """A row missing a cell of a column the reader does not need (fz in 2D): pandas fills it with
    "" quietly, so the bulk readers decline the table and the careful reader says which line."""
    ids = ["A", "B", "C", "D"]
    files = _files(ids, _members(ids, ["M"], []))
    files["loads.csv"] = "case,joint,fx,fy,fz\ndead,B,0.0,-10.0,0.0\nwind,C,1.0,0.0\n"
    said = _read(files, "plain")
    assert isinstance(said, str) and "loads.csv:3: row has 4 fields, the header has 5" in said
    assert said == _read(files, "pandas") == _read(files, "careful")
