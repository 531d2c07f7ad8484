"""The claims as columns (ClaimArrays), settled once by the reader.

The plain rows of a wide table are read in bulk (whole columns, numpy); every other row by the
general reader, one claim object each. The yardstick for the bulk path is the general reader
itself (FAST_ROWS off): same claims in the same order, and the same arrays as made claim by
claim from those objects (`resolution.claim_arrays`). Rounding allowances are checked against
values worked by hand from the written text.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_claims_reader import MODEL, PLAIN_AND_MESSY

from verify.errors import InputError
from verify.io import claims as claims_module
from verify.io.claims import ClaimsTable, read_claims
from verify.io.claims.resolution import claim_arrays

FIELDS = ("value", "sign_fixed", "member", "column", "unit", "unit_factor", "rounding")


def _read(path: Path, fast: bool, monkeypatch: pytest.MonkeyPatch) -> ClaimsTable | str:
    monkeypatch.setattr(claims_module, "FAST_ROWS", fast)
    try:
        return read_claims(path, MODEL)
    except InputError as error:
        return error.render()


def _same_arrays(a, b) -> None:
    for name in FIELDS:
        x, y = getattr(a, name), getattr(b, name)
        assert np.array_equal(x, y, equal_nan=x.dtype.kind == "f"), name
    for name in ("names", "units", "where", "text", "label", "member_ids", "resolutions"):
        assert list(getattr(a, name)) == list(getattr(b, name)), name
    assert dict(a.reaction) == dict(b.reaction)


def _check(path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    bulk = _read(path, True, monkeypatch)
    general = _read(path, False, monkeypatch)
    if isinstance(bulk, str) or isinstance(general, str):
        assert bulk == general
        return
    assert bulk.values == general.values
    assert (bulk.unmatched, bulk.columns, bulk.sign_conflicts) == (
        general.unmatched,
        general.columns,
        general.sign_conflicts,
    )
    unit = MODEL.units.force
    from_objects = claim_arrays(bulk.values, MODEL.member_index, unit)
    _same_arrays(bulk.arrays_for(MODEL.member_index, unit), from_objects)
    _same_arrays(general.arrays_for(MODEL.member_index, unit), from_objects)
    assert bulk.count == len(bulk.values)


@pytest.mark.parametrize("text", PLAIN_AND_MESSY, ids=range(len(PLAIN_AND_MESSY)))
def test_bulk_columns_equal_the_general_reader(tmp_path: Path, monkeypatch, text: str) -> None:
    path = tmp_path / "claims.csv"
    path.write_text(text, encoding="utf-8")
    _check(path, monkeypatch)


LABELS = ["AB", "BC", "CD", "AD", "BD", "ab", "B-C", "XY", "RA.y", "", "#N/A"]
CELLS = st.one_of(
    st.floats(-1e4, 1e4, allow_nan=False).map(lambda v: repr(round(v, 3))),
    st.integers(-500, 500).map(str),
    st.sampled_from(["", "-", "12.40 C", "3 T", "(2.5)", "1e3", "4.50", "0", "two", "1,5"]),
)


@settings(
    max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(
    rows=st.lists(st.tuples(st.sampled_from(LABELS), CELLS, CELLS), min_size=1, max_size=12),
    header=st.sampled_from(["Member,dead (kN),snow", "Member,dead,snow [N]", "Member,dead,snow"]),
)
def test_bulk_columns_equal_the_general_reader_on_drawn_tables(
    tmp_path: Path, monkeypatch, rows, header: str
) -> None:
    """Plain rows, messy cells, repeated and unknown members, blanks, in any mix and order."""
    path = tmp_path / "drawn.csv"
    path.write_text(header + "\n" + "\n".join(",".join(r) for r in rows) + "\n", encoding="utf-8")
    _check(path, monkeypatch)


def test_rounding_allowance_is_settled_from_the_written_text(tmp_path: Path) -> None:
    """Half a unit in the last decimal written, in the claim's unit (x 1.0001, the slack the
    comparison has always used): '4.50' -> 0.005, '12' -> 0.5, '0.270' -> 0.0005, '7.25' ->
    0.005; a column in N keeps its allowance in N and its factor to kN apart."""
    path = tmp_path / "claims.csv"
    path.write_text(
        "Member,dead (kN),snow (N)\nAB,4.50,12\nBC,12,0.270\nCD,7.25,3\n", encoding="utf-8"
    )
    table = read_claims(path, MODEL)
    arrays = table.arrays_for(MODEL.member_index, MODEL.units.force)
    slack = 1.0001
    assert arrays.text == ["4.50", "12", "12", "0.270", "7.25", "3"]
    assert arrays.rounding.tolist() == pytest.approx(
        [0.005 * slack, 0.5 * slack, 0.5 * slack, 0.0005 * slack, 0.005 * slack, 0.5 * slack]
    )
    kn_per_n = 1e-3  # 1 N = 0.001 kN (SI definition)
    assert arrays.unit_factor.tolist() == pytest.approx([1.0, kn_per_n] * 3)
    assert [arrays.names[k] for k in arrays.column] == ["dead", "snow"] * 3
    assert arrays.where[3] == "row 3, column 'snow (N)'"


def test_a_bulk_read_table_pickles_and_makes_its_claims_on_first_use(tmp_path: Path) -> None:
    """The batch runner sends results between processes: a table whose claim objects are not
    made yet still pickles, and makes the same claims after the trip."""
    import pickle

    path = tmp_path / "claims.csv"
    path.write_text(PLAIN_AND_MESSY[0], encoding="utf-8")
    table = read_claims(path, MODEL)
    assert table._values is None  # nothing made yet: the plain rows were read as columns
    copy = pickle.loads(pickle.dumps(table))
    assert copy.values == table.values
    assert copy.count == table.count == len(table.values)
