"""The members table cut from its bytes (verify/io/case_columns.py) against the readings it
replaces: the csv module for the cells, a dict of the joint ids for the end positions, and for
whole cases the pandas bulk reader and the careful row-by-row reader (same Model, same indexes
and arrays, same problems word for word). Hypothesis draws the labels and the flaws.
"""

from __future__ import annotations

import csv
import io
import tempfile
from pathlib import Path

from hypothesis import given, settings
from hypothesis import strategies as st

import verify.io.case as case_module
from verify.errors import InputError
from verify.io.case import _plain_table, read_case
from verify.io.case_columns import LabelKeys, plain_columns

# Printable ASCII but the space, the quote and the comma: what a plain table's cells may hold.
LABEL_CHARS = [chr(c) for c in range(33, 127) if chr(c) not in '",']
LABELS = st.text(alphabet=LABEL_CHARS, min_size=1, max_size=20)


@settings(max_examples=300, deadline=None)
@given(
    rows=st.lists(st.lists(st.text(alphabet=LABEL_CHARS, max_size=10), min_size=1, max_size=4)),
    header=st.integers(1, 4),
    end=st.booleans(),
)
def test_plain_columns_are_the_csv_modules_cells(rows: list[list[str]], header: int, end: bool):
    """Cut columns are the csv module's cells when every row has the header's width, and the
    cut declines (None) exactly when some row has not (or there is no row)."""
    names = [f"c{k}" for k in range(header)]
    text = "\n".join([",".join(names)] + [",".join(r) for r in rows]) + ("\n" if end else "")
    assert _plain_table(text)
    table = plain_columns(text)
    parsed = list(csv.reader(io.StringIO(text)))[1:]
    lines = text.split("\n")[1:]
    if text.endswith("\n"):
        lines.pop()
    # A blank line (which the csv module skips) or a row of another width: the cut refuses.
    regular = bool(lines) and all(line and line.count(",") == header - 1 for line in lines)
    assert (table is not None) == regular
    if table is not None:
        assert table.names == names and table.rows == len(parsed)
        for k in range(header):
            assert table.texts(k) == [r[k] for r in parsed]


@settings(max_examples=300, deadline=None)
@given(ids=st.lists(LABELS, min_size=1, max_size=30, unique=True), data=st.data())
def test_label_keys_find_what_a_dict_finds(ids: list[str], data: st.DataObject) -> None:
    """Labels of any length (one or several 8-byte words), near misses included (an id with a
    character more or less, another id's prefix), get the position a dict of the ids gives."""
    near = [i + "x" for i in ids] + [i[:-1] for i in ids if len(i) > 1]
    labels = data.draw(st.lists(st.sampled_from(ids + near) | LABELS, min_size=1, max_size=40))
    keys = LabelKeys.of(ids)
    assert keys is not None  # distinct plain ids always have distinct keys unless mixed alike
    table = plain_columns("label\n" + "\n".join(labels) + "\n")
    assert table is not None
    index = {label: k for k, label in enumerate(ids)}
    assert keys.positions(table, 0).tolist() == [index.get(label, -1) for label in labels]


def test_label_keys_decline_ids_they_cannot_pack() -> None:
    assert LabelKeys.of([]) is None
    assert LabelKeys.of(["A", "é"]) is None  # not ASCII
    assert LabelKeys.of(["A", "B\x00"]) is None  # a NUL would read as padding


# -- whole cases: the byte-cut members table against pandas and the careful reader -------------
CASE = """title = "members cut from bytes"
joints = "joints.csv"
members = "members.csv"
supports = "supports.csv"
loads = "loads.csv"
[units]
length = "m"
force = "kN"
"""


def _files(ids: list[str], members: str) -> dict[str, str]:
    """A strip of triangles on joints `ids` (k to k+1 and k to k+2), with `members` as its
    members table."""
    joints = "id,x,y\n" + "".join(f"{j},{k}.0,{k % 2}.0\n" for k, j in enumerate(ids))
    return {
        "case.toml": CASE,
        "joints.csv": joints,
        "members.csv": members,
        "supports.csv": f"joint,directions\n{ids[0]},x y\n{ids[-1]},y\n",
        "loads.csv": f"case,joint,fx,fy\ndead,{ids[1]},0.0,-10.0\n",
    }


def _members(ids: list[str], names: list[str], flaws: list[tuple[str, int]]) -> str:
    pairs = [(a, b) for k in range(len(ids)) for a, b in ((k, k + 1), (k, k + 2)) if b < len(ids)]
    rows = [[names[n % len(names)] + str(n), ids[a], ids[b]] for n, (a, b) in enumerate(pairs)]
    header = ["id", "start", "end"]
    end = "\n"
    # Rows cut short or blank last: the other flaws find every cell they change.
    for flaw, at in sorted(flaws, key=lambda f: f[0] in ("short row", "blank line")):
        k = at % len(rows)
        if flaw == "unknown end":
            rows[k][2] += "x"
        elif flaw == "prefix end":
            rows[k][1] = rows[k][1][:-1] or "?"
        elif flaw == "repeated id":
            rows[k][0] = rows[(k + 1) % len(rows)][0]
        elif flaw == "empty cell":
            rows[k][at % 3] = ""
        elif flaw == "short row":
            rows[k] = rows[k][:2]
        elif flaw == "long row":
            rows[k] = rows[k] + ["x"]
        elif flaw == "blank line":
            rows.insert(k, [])
        elif flaw == "extra column":
            header, rows = header + ["note"], [r + ["n"] for r in rows]
        elif flaw == "ea column":
            header, rows = header + ["EA"], [r + ["2e5"] for r in rows]
        elif flaw == "columns swapped":
            header = [header[1], header[0], *header[2:]]
            rows = [[r[1], r[0], *r[2:]] if len(r) > 1 else r for r in rows]
        elif flaw == "upper-case header":
            header = [h.upper() for h in header]
        elif flaw == "repeated header":
            header = header + ["ID"]
            rows = [r + ["y"] for r in rows]
        elif flaw == "no last break":
            end = ""
        elif flaw == "loop":
            rows[k][2] = rows[k][1]
    return "\n".join([",".join(header)] + [",".join(r) for r in rows]) + end


FLAWS = [
    "unknown end",
    "prefix end",
    "repeated id",
    "empty cell",
    "short row",
    "long row",
    "blank line",
    "extra column",
    "ea column",
    "columns swapped",
    "upper-case header",
    "repeated header",
    "no last break",
    "loop",
]


def _read(files: dict[str, str], route: str, taken: list[str] | None = None) -> object:
    """The model (joints, members, cases, arrays, indexes) or the problems as worded, read with
    the members and loads tables cut from bytes ('plain'), by pandas ('pandas') or row by row
    ('careful'). `taken` collects the tables the cuts read."""
    names = ("BULK_MIN_ROWS", "_clean_frame", "_plain_members", "_plain_loads")
    saved = [getattr(case_module, n) for n in names]
    case_module.BULK_MIN_ROWS = 0  # small tables too go to the bulk readers
    members, loads = case_module._plain_members, case_module._plain_loads

    def plain_members(*args: object) -> object:
        found = members(*args)  # type: ignore[arg-type]
        if found is not None and taken is not None:
            taken.append("members")
        return found

    def plain_loads(*args: object) -> object:
        found = loads(*args)  # type: ignore[arg-type]
        if found and taken is not None:
            taken.append("loads")
        return found

    case_module._plain_members = plain_members  # type: ignore[assignment]
    case_module._plain_loads = plain_loads  # type: ignore[assignment]
    if route != "plain":
        case_module._plain_members = lambda *args: None  # type: ignore[assignment]
        case_module._plain_loads = lambda *args: False  # type: ignore[assignment]
    if route == "careful":
        case_module._clean_frame = lambda *args: None  # type: ignore[assignment]
    try:
        with tempfile.TemporaryDirectory() as folder:
            for name, text in files.items():
                (Path(folder) / name).write_text(text, encoding="utf-8")
            try:
                model = read_case(Path(folder) / "case.toml")
            except InputError as exc:
                return exc.render().replace(folder, "")
    finally:
        for n, value in zip(names, saved, strict=True):
            setattr(case_module, n, value)
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


@settings(max_examples=150, deadline=None)
@given(
    ids=st.lists(LABELS, min_size=4, max_size=14, unique=True),
    names=st.lists(LABELS, min_size=1, max_size=3),
    flaws=st.lists(st.tuples(st.sampled_from(FLAWS), st.integers(0, 60)), max_size=3),
)
def test_members_cut_from_bytes_read_like_pandas_and_the_careful_reader(
    ids: list[str], names: list[str], flaws: list[tuple[str, int]]
) -> None:
    files = _files(ids, _members(ids, names, flaws))
    plain = _read(files, "plain")
    assert plain == _read(files, "pandas")
    assert plain == _read(files, "careful")


def test_a_clean_members_table_is_cut_from_bytes() -> None:
    """Without a flaw the cut really reads the table (else the test above would compare pandas
    with itself), with ids of one and of several 8-byte words."""
    for ids in (["A", "B", "C", "D", "E"], [f"joint-{k}-of-a-long-name" for k in range(6)]):
        files = _files(ids, _members(ids, ["M"], []))
        taken: list[str] = []
        model = _read(files, "plain", taken)
        assert taken == ["members", "loads"]
        assert model == _read(files, "careful")


def test_an_id_too_long_is_refused_by_every_route() -> None:
    """A joint or member id past LABEL_MAX_CHARS: the bulk readers took it (the careful reader
    refuses it by line); now each declines and the careful reader words it."""
    ids = ["A", "B", "C", "D"]
    long_joint = _files([*ids[:3], "j" * 201], _members([*ids[:3], "j" * 201], ["M"], []))
    long_member = _files(ids, _members(ids, ["m" * 200], []))  # 'm' x 200 then the row number
    for files, said in ((long_joint, "is 201 characters long"), (long_member, "at most 200")):
        plain = _read(files, "plain")
        assert isinstance(plain, str) and said in plain
        assert plain == _read(files, "pandas") == _read(files, "careful")
