"""The member rows written from columns (json_out.RowTable over verify.compare.rows.Rows) give
exactly the bytes of the standard library's encoder: on hypothesis-drawn rows (NaN, infinities,
None, 0.0 beside -0.0 and equal numbers in several columns of a row, whose texts are shared), on
rows spanning several chunks of the writer, and on a real check of a table read from a file.

The yardstick is `json.dumps(..., indent=2, ensure_ascii=False)` after NaN and infinities are
made null (tests/test_json_stream.py: reference).
"""

from __future__ import annotations

import csv
import random

import numpy as np
from hypothesis import given, settings
from test_compare_scale_rows import row_columns
from test_json_stream import reference
from trussgen import make_model, pratt, write_case

from verify.analysis.pipeline import analyse
from verify.compare.diagnose import ROW_KEYS
from verify.compare.rows import Labels, Numbers, Row, Rows, Written
from verify.report import json_out
from verify.report.names import ROW_UNIT
from verify.service import check


def as_objects(rows: list[Row], units: list[str]) -> list[dict]:
    return [{**row.as_dict(), ROW_UNIT: unit} for row, unit in zip(rows, units, strict=True)]


@settings(max_examples=80, deadline=None)
@given(row_columns())
def test_rows_from_columns_written_as_the_standard_encoder_writes_them(made):
    tuples, rows = made
    kinds = rows.field("kind")
    units = ["m" if kind == "displacement" else "kN" for kind in kinds.chunk(0, len(rows))]
    table = json_out.RowTable(rows, ROW_KEYS, [(ROW_UNIT, units)])
    expected = reference({"members": as_objects(tuples, units)})
    assert json_out.dumps({"members": table}) == expected


def test_rows_over_several_chunks_share_equal_numbers_exactly():
    """Routes equal to the last bit in some rows, differing in others, and signed zeros."""
    rng = np.random.default_rng(5)
    n = 2 * json_out.CHUNK_ITEMS + 17
    joints = rng.normal(size=n) * 10.0 ** rng.integers(-8, 8, size=n)
    sections = np.where(rng.random(n) < 0.6, joints, joints * (1 + 1e-15))
    sections[::97] = -0.0
    joints[::97] = 0.0
    global_ = np.where(rng.random(n) < 0.5, sections, joints)
    present = rng.random(n) < 0.9
    ids = [f"M{k}" for k in range(n)]
    cells = [f"{x:.4g}" for x in joints]
    where = [f"row {k + 2}, column 'dead'" for k in range(n)]
    rows = Rows(
        (
            Labels(np.arange(n), ids),
            Labels(np.zeros(n, dtype=np.int64), ["member"]),
            Labels(np.zeros(n, dtype=np.int64), ["dead"]),
            Numbers(joints.copy()),
            Written(np.arange(n), cells.__getitem__, cells, where),
            Numbers(joints.copy()),
            Numbers(sections, present),
            Numbers(global_),
            Numbers(np.full(n, np.nan), np.zeros(n, dtype=bool)),
            Numbers(joints - global_),
            Labels(np.zeros(n, dtype=np.int64), ["agrees"]),
        )
    )
    units = ["kN"] * n
    table = json_out.RowTable(rows, ROW_KEYS, [(ROW_UNIT, units)])
    pieces = list(json_out.iter_dumps({"members": table}))
    assert len(pieces) >= 3
    assert "".join(pieces) == reference({"members": as_objects(list(rows), units)})


def test_a_real_check_of_thousands_of_rows_streams_the_standard_encoders_bytes(tmp_path):
    panels = 600
    case = pratt(panels, d=3.0, h=4.0, case="dead")
    case["loads"]["wind"] = {f"U{i}": [3.0, 0.0] for i in range(1, panels, 5)}
    path = write_case(tmp_path, case)
    analysis = analyse(make_model(case))
    ref = analysis.reference
    assert ref is not None
    members = list(analysis.model.member_ids)
    rng = random.Random(3)
    with open(tmp_path / "claims.csv", "w", newline="", encoding="utf-8") as out:
        writer = csv.writer(out)
        writer.writerow(["member", "dead", "wind"])
        for i, member in enumerate(members):
            if rng.random() < 0.02:
                continue  # a member left out
            dead, wind = (float(ref.member_forces[i, k]) for k in range(2))
            if rng.random() < 0.01:
                dead = -dead  # a sign slip
            writer.writerow([member, f"{dead:.{rng.randint(1, 4)}f}", f"{wind:.3f}"])
    result = check(path, tmp_path / "claims.csv")
    assert len(result.review.rows) > 2 * json_out.CHUNK_ITEMS
    text = "".join(json_out.iter_dumps(json_out.check_json(result.review)))
    held = json_out.check_json(result.review)
    held["members"] = list(held["members"])
    assert len(held["members"]) == len(result.review.rows)
    assert text == reference(held)


def test_member_ids_and_cells_needing_escapes_in_some_chunks_only():
    """More member ids than the writer encodes up front, and cells and places with quotes,
    backslashes and control characters in one chunk: written escaped there, as they are in the
    other chunks, exactly as json.dumps writes them."""
    n = json_out.LABELS_ENCODED + 2 * json_out.CHUNK_ITEMS
    ids = [f"M{k}" for k in range(n)]
    ids[7], ids[11] = 'M"7', "M\\11"
    ids[n - 3] = "M\tlast ü"
    cells = [f"{k / 7:.3f} T" for k in range(n)]
    cells[json_out.CHUNK_ITEMS + 5] = '12 "kN"'
    cells[json_out.CHUNK_ITEMS + 6] = ""  # a claim without its cell: spelled from its value
    where = [f"row {k + 2}, column 'dead'" for k in range(n)]
    where[2 * json_out.CHUNK_ITEMS + 1] = "row 9\n, column 'x'"
    values = np.arange(n) / 7.0
    rows = Rows(
        (
            Labels(np.arange(n)[::-1].copy(), ids),
            Labels(np.zeros(n, dtype=np.int64), ["member"]),
            Labels(np.arange(n) % 2, ["dead", "wind"]),
            Numbers(values),
            Written(np.arange(n), lambda k: f"{values[k]:g}", cells, where),
            *(Numbers(values) for _ in range(4)),
            Numbers(np.zeros(n)),
            Labels(np.zeros(n, dtype=np.int64), ["agrees", "unused"]),
        )
    )
    rows.set_status(3, "sign-flip")
    units = Labels(np.zeros(n, dtype=np.int64), ["kN"])
    table = json_out.RowTable(rows, ROW_KEYS, [(ROW_UNIT, units)])
    expected = reference({"members": as_objects(list(rows), ["kN"] * n)})
    assert json_out.dumps({"members": table}) == expected
