"""Claims CSV read from the file's bytes, held to the routes it replaces (hypothesis draws inputs).

Two shortcuts, each switchable so the careful route can be read beside it:

- source_csv.PLAIN_BYTES: ASCII text broken by line feeds only is split from its bytes
  (PlainText: the places of its lines and cells, no list of lines) instead of splitlines and a
  join of the lines. Held to the lines' route: the same rows, row numbers, widths, columns and
  joined columns, and the same message for a file refused.
- rows.PLAIN_BLOCKS: the plain rows of a wide table read from their cells' places in that text
  (read_plain_block) instead of columns cut from it. Held to the column route (_plain_cells of
  each column's joined text), to the general row reader (FAST_ROWS off) and to float() of each
  cell bit for bit.

The drawn tables mix what must send a table to the careful route (quotes, blanks, padded cells,
decimal commas, units and T/C letters in cells, CR line ends, a 'sep=' line, a byte order mark)
with the common export (the model's ids in order, plain numbers).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, event, given, settings
from hypothesis import strategies as st
from trussgen import make_model, pratt

from verify.errors import InputError
from verify.io import claims as claims_module
from verify.io.claims import ClaimsTable, read_claims, source_csv
from verify.io.claims import plain_block as plain_block_module
from verify.io.claims import rows as rows_module
from verify.io.claims.labels import LabelMatcher
from verify.io.claims.plain_block import in_range, read_plain_block
from verify.io.claims.problems import Problems
from verify.io.claims.resolution import settle_rounding
from verify.io.claims.rounding import rounding_allowances, shown_decimals
from verify.io.claims.rows import _plain_cells
from verify.io.claims.table import MemberIndex
from verify.io.values import MAX_FORCE_CHARS


def _two_case_model():
    case = pratt(8, case="dead")
    case["loads"]["wind"] = {joint: [1.0, 0.0] for joint in case["loads"]["dead"]}
    return make_model(case)


MODEL = _two_case_model()
IDS = MODEL.member_ids

NUMBER = st.one_of(
    st.floats(allow_nan=False, allow_infinity=False).map(repr),
    st.from_regex(r"[+-]?[0-9]{1,4}(\.[0-9]{1,4})?([eE][+-]?[0-9]{1,3})?", fullmatch=True),
    st.sampled_from(
        [
            "7.599883247e-07",
            "1.50e3",
            "0.0e0",
            "0e5",
            "10.0E-0",
            "00.10",
            "-0",
            "1e400",
            "1e-400",
            "1.2.3",
            ".5",
            "5.",
            "1_0",
            "inf",
            "nan",
            "1e",
            "e5",
            "+-1",
            "1e5e5",
            "1,5",
            "12.5T",
            "12.5 T",
            "3 kN",
            "(2.5)",
            "1.5 ",
            " 2",
            "",
            "-",
            '"4"',
            "1." + "0" * 63,  # 65 characters: past the force cell limit (refused)
            "-" + "2" * 63,  # 64: within it
        ]
    ),
)
# Mostly plain numbers, so that most drawn tables are plain and take the shortcuts.
CELL = st.one_of(NUMBER.filter(lambda t: t[-1:].isdigit() and "_" not in t), NUMBER, NUMBER, NUMBER)
LABEL_SLIPS = st.lists(
    st.tuples(st.integers(0, 40), st.sampled_from(["XX", "swap", "lower", "again", "RL0.y", ""])),
    max_size=2,
)


def _table(
    rows: list[tuple[str, str]],
    slips: list[tuple[int, str]],
    delimiter: str,
    line_end: str,
    last_break: bool,
    directive: bool,
    header: str,
) -> str:
    labels = [IDS[k] if k < len(IDS) else f"Z{k}" for k in range(len(rows))]
    for at, slip in slips:
        k = at % len(labels)
        if slip == "swap" and len(labels) > 1:
            labels[k], labels[k - 1] = labels[k - 1], labels[k]
        elif slip == "lower":
            labels[k] = labels[k].lower()
        elif slip == "again":
            labels[k] = labels[k - 1]
        else:
            labels[k] = slip
    lines = [header.replace(",", delimiter)]
    at = [h.casefold() for h in header.split(",")].index("member")  # where the labels go
    lines += [
        delimiter.join([*cells[:at], label, *cells[at:]])
        for label, cells in zip(labels, rows, strict=True)
    ]
    text = line_end.join(lines) + (line_end if last_break else "")
    return (f"sep={delimiter}{line_end}" if directive else "") + text


def _read(path: Path, monkeypatch: pytest.MonkeyPatch, *, shortcuts: bool, fast: bool = True):
    monkeypatch.setattr(source_csv, "PLAIN_BYTES", shortcuts)
    monkeypatch.setattr(rows_module, "PLAIN_BLOCKS", shortcuts)
    monkeypatch.setattr(claims_module, "FAST_ROWS", fast)
    try:
        return read_claims(path, MODEL)
    except InputError as error:
        return error.render()


def _same_tables(a: ClaimsTable | str, b: ClaimsTable | str) -> None:
    if isinstance(a, str) or isinstance(b, str):
        assert a == b
        return
    assert a.values == b.values
    assert (a.unmatched, a.columns, a.sign_conflicts, a.header_unit, a.resolutions) == (
        b.unmatched,
        b.columns,
        b.sign_conflicts,
        b.header_unit,
        b.resolutions,
    )
    unit = MODEL.units.force
    x, y = a.arrays_for(MODEL.member_index, unit), b.arrays_for(MODEL.member_index, unit)
    assert x.value.view(np.int64).tolist() == y.value.view(np.int64).tolist()  # bit for bit
    for name in ("sign_fixed", "member", "column", "unit", "unit_factor", "rounding"):
        p, q = getattr(x, name), getattr(y, name)
        assert np.array_equal(p, q, equal_nan=p.dtype.kind == "f"), name
    for name in ("names", "units", "where", "text", "label", "member_ids"):
        assert list(getattr(x, name)) == list(getattr(y, name)), name
    assert dict(x.reaction) == dict(y.reaction)


@settings(
    max_examples=250, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(
    rows=st.lists(st.tuples(CELL, CELL), min_size=1, max_size=len(IDS) + 2),
    slips=st.one_of(st.just([]), LABEL_SLIPS),
    delimiter=st.sampled_from([",", ",", ";", "\t", "|"]),
    line_end=st.sampled_from(["\n", "\n", "\n", "\r\n"]),
    last_break=st.booleans(),
    directive=st.booleans(),
    header=st.sampled_from(
        ["member,dead,wind", "Member,dead (kN),wind", "member,wind,dead", "dead,member,wind"]
    ),
    bom=st.booleans(),
    rows_at_a_time=st.sampled_from([2, 3, 8_192]),
)
def test_a_table_read_by_the_shortcuts_equals_the_careful_routes(
    tmp_path: Path,
    monkeypatch: pytest.MonkeyPatch,
    rows: list[tuple[str, str]],
    slips: list[tuple[int, str]],
    delimiter: str,
    line_end: str,
    last_break: bool,
    directive: bool,
    header: str,
    bom: bool,
    rows_at_a_time: int,
) -> None:
    path = tmp_path / "claims.csv"
    # (rows split a few at a time: the chunks' bounds are held too)
    monkeypatch.setattr(plain_block_module, "ROWS_AT_A_TIME", rows_at_a_time)
    text = _table(rows, slips, delimiter, line_end, last_break, directive, header)
    path.write_bytes(("\ufeff" if bom else "").encode() + text.encode())
    taken: list[bool] = []
    block_read = rows_module.read_plain_block

    def spy(*args, **kwargs):
        found = block_read(*args, **kwargs)
        taken.append(found is not None)
        return found

    monkeypatch.setattr(rows_module, "read_plain_block", spy)
    shortcuts = _read(path, monkeypatch, shortcuts=True)
    event(f"read from the cells' places: {any(taken)}")  # --hypothesis-show-statistics
    _same_tables(shortcuts, _read(path, monkeypatch, shortcuts=False))
    _same_tables(shortcuts, _read(path, monkeypatch, shortcuts=True, fast=False))


TEXT = st.lists(
    st.sampled_from(
        ["M1", "1.5", "-2", "3e-07", " ", "", "a", ",", ";", "\t", "|", "\n", "\n", "\n"]
        + ['"', "sep=;\n", "\x1f", "0", "x y", "\r", "\r\n", "\x0c", "é"]
    ),
    min_size=1,
    max_size=30,
).map("".join)


def _grid_facts(data: bytes, on: bool, monkeypatch: pytest.MonkeyPatch) -> list[object]:
    monkeypatch.setattr(source_csv, "PLAIN_BYTES", on)
    problems = Problems("claims.csv")
    grid = source_csv.read_csv(data, problems)
    if grid is None:
        return ["refused", [str(p) for p in problems.items]]
    rows = grid.rows
    facts: list[object] = [list(rows), list(grid.row_numbers), grid.delimiter]
    facts.append(grid.decimal_comma)
    facts += [[rows[i] for i in range(len(rows))], rows[1:3], rows[-1:] if len(rows) else []]
    if isinstance(rows, source_csv.SplitRows):
        facts.append(rows.lengths(0).tolist())
        for start in range(3):
            for indexes in ([0], [1, 0], [2]):
                facts.append(rows.columns(start, len(rows), indexes))
                facts.append(rows.joined_columns(start, len(rows), indexes))
    return facts


@settings(
    max_examples=600, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(
    text=TEXT.filter(lambda t: bool(t.strip())),
    encoding=st.sampled_from(["utf-8", "cp1252"]),
    at_a_time=st.sampled_from([1, 2, 3, 7, 1 << 24]),
)
def test_rows_split_from_the_bytes_equal_the_rows_split_from_the_lines(
    monkeypatch: pytest.MonkeyPatch, text: str, encoding: str, at_a_time: int
) -> None:
    """(the delimiters' places found a few bytes at a time too, as a large file's are)"""
    monkeypatch.setattr(source_csv, "PLACES_AT_A_TIME", at_a_time)
    data = text.encode(encoding, errors="replace")
    assert _grid_facts(data, True, monkeypatch) == _grid_facts(data, False, monkeypatch)


def test_the_common_export_takes_both_shortcuts(monkeypatch: pytest.MonkeyPatch) -> None:
    """A table of the model's ids in order and plain numbers is split from its bytes and read
    from its cells' places (not sent to the careful routes by some slip in the shortcuts)."""
    lines = ["member,dead,wind"] + [f"{mid},{k}.25,-{k}e-3" for k, mid in enumerate(IDS)]
    data = ("\n".join(lines) + "\n").encode()
    grid = source_csv.read_csv(data, Problems("claims.csv"))
    assert grid is not None and isinstance(grid.rows, source_csv.SplitRows)
    block = grid.rows.plain_block(1, len(grid.rows))
    assert block is not None
    found = read_plain_block(block, [0, 1, 2], MemberIndex(IDS, MODEL.member_index), False)
    assert found is not None
    member, labels, values, shown, spans = found
    assert member.tolist() == list(range(len(IDS))) and labels() == IDS
    assert values[0].tolist() == [float(f"{k}.25") for k in range(len(IDS))]
    assert values[1].tolist() == [float(f"-{k}e-3") for k in range(len(IDS))]
    assert shown[0].tolist() == [2] * len(IDS)  # '3.25': two decimals shown
    assert shown[1].tolist() == [-1] * len(IDS)  # '-3e-3': none
    text, begins, ends = spans[1]
    assert [text[a:b] for a, b in zip(begins.tolist(), ends.tolist(), strict=True)][:2] == [
        "-0e-3",
        "-1e-3",
    ]


@settings(max_examples=400, deadline=None)
@given(
    rows=st.lists(st.tuples(CELL, CELL), min_size=1, max_size=12),
    decimal_comma=st.booleans(),
    last_break=st.booleans(),
)
def test_a_block_read_equals_each_column_read_from_its_joined_text(
    rows: list[tuple[str, str]], decimal_comma: bool, last_break: bool
) -> None:
    """read_plain_block against _plain_cells of each value column: the same values bit for bit
    (float() of each cell), decimals and in-range flags; it refuses exactly the tables some of
    whose columns _plain_cells does not read whole as plain numbers, or that hold a cell past the
    force cell limit."""
    delimiter = ";" if decimal_comma else ","
    assume(not any(delimiter in cell for cells in rows for cell in cells))
    lines = ["member,dead,wind"] + [
        delimiter.join([IDS[k % len(IDS)], *cells]) for k, cells in enumerate(rows)
    ]
    data = (lines[0] + "\n" + "\n".join(lines[1:]) + ("\n" if last_break else "")).encode()
    grid = source_csv.read_csv(data, Problems("claims.csv"))
    if grid is None or not isinstance(grid.rows, source_csv.SplitRows):
        return
    block = grid.rows.plain_block(1, len(grid.rows))
    if block is None:
        return
    member_ids = MemberIndex(IDS, MODEL.member_index)
    found = read_plain_block(block, [0, 1, 2], member_ids, decimal_comma)
    columns = [[cells[j] for cells in rows] for j in range(2)]
    by_column = [_plain_cells("\n".join(column), decimal_comma) for column in columns]
    if found is None:
        # (a cell past the force cell limit is not plain: the column route leaves it to the
        # general reader, which refuses it)
        long = any(len(cell) > MAX_FORCE_CHARS for column in columns for cell in column)
        assert long or any(spans is None for *_, spans in by_column)
        return
    member, labels, values, shown, spans = found
    assert member.tolist() == member_ids.get_indexer(labels()).tolist()
    for j, (value, plain, decimals, joined) in enumerate(by_column):
        assert joined is not None and decimals is not None
        assert values[j].view(np.int64).tolist() == value.view(np.int64).tolist()
        assert values[j].tolist() == [float(t) for t in columns[j]]
        assert shown[j].tolist() == decimals.tolist()
        assert in_range(values[j]).tolist() == plain.tolist()
        text, begins, ends = spans[j]
        assert [text[a:b] for a, b in zip(begins.tolist(), ends.tolist(), strict=True)] == (
            columns[j]
        )


DECIMAL_TEXT = st.one_of(
    st.from_regex(r"-?[0-9]{1,20}(\.[0-9]{1,8})?", fullmatch=True),
    st.from_regex(r"-?[0-9]{1,3}\.[0-9]{1,6}[eE][+-]?0{1,2}", fullmatch=True),
    st.floats(allow_nan=False, allow_infinity=False).map(repr),
    st.sampled_from(["0.0", "-0.00", "1e400", "0.00001", "999999.99999", "12.5000000"]),
)


def _settled_in_full(value: np.ndarray, decimals: np.ndarray) -> np.ndarray:
    """settle_rounding's first step as it was: every value settled, then the written decimals'
    allowance where smaller."""
    rounding = rounding_allowances(value, 1.0)
    shown = np.flatnonzero(decimals >= 0)
    written = decimals[shown].astype(float)
    np.negative(written, out=written)
    np.power(10.0, written, out=written)
    written *= 0.5
    written *= 1.0001
    np.minimum(rounding[shown], written, out=written)
    rounding[shown] = written
    return rounding


@settings(max_examples=300, deadline=None)
@given(texts=st.lists(DECIMAL_TEXT, min_size=1, max_size=40))
def test_written_decimals_settle_the_allowance_as_settling_every_value_did(
    texts: list[str],
) -> None:
    """settle_rounding takes the written decimals' allowance without settling the value when
    fewer than MAX_DECIMALS are shown: the same allowances, bit for bit, as settling every value
    (with one column and no step or significant-figure widening, whose widening is unchanged)."""
    value, _, decimals, _ = _plain_cells("\n".join(texts), False)
    if decimals is None:  # not all plain numbers ('1e400' reads, but as inf)
        decimals = np.array(
            [shown_decimals(t, float(v)) for t, v in zip(texts, value, strict=True)]
        )
    reference = _settled_in_full(value, decimals)
    member = np.zeros(value.size, dtype=bool)  # no member claim: no column widening
    found = settle_rounding(
        value, decimals, member, np.zeros(value.size, dtype=np.int64), ("d",), ()
    )
    assert found.view(np.int64).tolist() == reference.view(np.int64).tolist()


@settings(max_examples=300, deadline=None)
@given(
    joints=st.lists(
        st.sampled_from(["B0_0", "B0_1", "b1", "M", "E", "R1", "X", "1", "Top 1", "A\u2212B"]),
        min_size=3,
        max_size=3,
        unique=True,
    ),
    member_names=st.lists(
        st.sampled_from(["M1", "member", "B0_0B0_1", "mem", "E-1", "x"]),
        min_size=3,
        max_size=3,
        unique=True,
    ),
    labels=st.lists(
        st.text(alphabet=list("BEMXRbemrxy01_ -.():\u2212"), min_size=1, max_size=9),
        max_size=8,
    ),
)
def test_a_label_judged_by_the_joined_ids_reads_as_full_matching_reads_it(
    joints: list[str], member_names: list[str], labels: list[str]
) -> None:
    """names() looks a label that passes the character test up in the ids joined (member folds,
    joint spellings of pair and reaction readings) before matching it in full: the same kind as
    full matching, on models whose joints spell parts of headings ('member' with a joint 'M' and
    a joint 'E'), with pairs, reactions and ids a plain join cannot judge (spaces, a minus)."""
    a, b, c = joints
    model = make_model(
        {
            "units": {"length": "m", "force": "kN"},
            "joints": {a: [0.0, 0.0], b: [3.0, 0.0], c: [3.0, 3.0]},
            "members": dict(zip(member_names, [[a, b], [b, c], [a, c]], strict=True)),
            "supports": {a: ["x", "y"], b: ["y"]},
            "loads": {"dead": {c: [0.0, -10.0]}},
        }
    )
    matcher = LabelMatcher(model)
    fixed = ["member", "Member", f"{a}{b}", f"{a}-{c}", f"R{a}.y", f"{b} (x)", f"x {a}", "dead"]
    for label in labels + fixed:
        assert matcher.names(label) == LabelMatcher(model)._match(label, suggest=False).kind


def test_a_heading_beside_joints_that_spell_it_is_judged_without_folding_every_id() -> None:
    """'member' over a model with joints 'B0_1'... passes the character test (its letters are
    the ids' and a reaction's); it is judged from the joined ids without folding them one by
    one, while a pair label still reads as its member."""
    case = {
        "units": {"length": "m", "force": "kN"},
        "joints": {"B0_0": [0.0, 0.0], "B0_1": [3.0, 0.0], "M1_0": [3.0, 3.0]},
        "members": {"M1": ["B0_0", "B0_1"], "M2": ["B0_1", "M1_0"], "M3": ["B0_0", "M1_0"]},
        "supports": {"B0_0": ["x", "y"], "B0_1": ["y"]},
        "loads": {"dead": {"M1_0": [0.0, -10.0]}},
    }
    matcher = LabelMatcher(make_model(case))
    assert [matcher.names(t) for t in ("member", "Member", "dead")] == ["unknown"] * 3
    assert "_fold_groups" not in vars(matcher) and "_joints_folded" not in vars(matcher)
    assert matcher.names("b0_1-m1_0") == "member"


@pytest.mark.parametrize(
    "text",
    [
        "member,dead\r\nM1,1.5\r\nM2,2\r\n",  # a spreadsheet's CSV on Windows: split from its bytes
        "member,dead\r\r\nM1,1.5\r\n",  # CR then CR LF: a blank row between (not one break)
        "member,dead\rM1,1.5\r\nM2,2\n",  # a lone CR breaks a line too
        "member,dead\r\nM1,1.5\nM2,2",  # CR LF and LF mixed
    ],
)
def test_lines_ended_by_cr_lf_are_the_lines_splitlines_gives(
    monkeypatch: pytest.MonkeyPatch, text: str
) -> None:
    data = text.encode()
    assert _grid_facts(data, True, monkeypatch) == _grid_facts(data, False, monkeypatch)
    if "\r" not in text.replace("\r\n", ""):
        monkeypatch.setattr(source_csv, "PLAIN_BYTES", True)
        grid = source_csv.read_csv(data, Problems("claims.csv"))
        assert grid is not None and grid.rows.plain_block(1, len(grid.rows)) is not None
