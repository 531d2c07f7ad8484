"""The case-mismatch decision (diagnose._column_holds) scores the named load first and stops
when it explains half the column; it names the same load, with the same scores, as the former
decision (copied below), which scored every load: random shares, names that are no load, empty
and repeated load names. And a column holding another load's forces is still named."""

from __future__ import annotations

import csv

from hypothesis import given, settings
from hypothesis import strategies as st
from trussgen import make_model, pratt, write_case

from verify.analysis.pipeline import analyse
from verify.compare.diagnose import _column_holds
from verify.service import check


def former(shares: list[float], load_names: list[str], named: str | None):
    scores: dict[str, float] = {}
    for k, load in enumerate(load_names):
        scores[load] = shares[k]
    top = max(scores, key=lambda n: scores[n])
    named_score = scores.get(named, 0.0) if named else 0.0
    if top != named and scores[top] >= 0.9 and named_score < 0.5:
        return top, scores
    return None


SHARES = st.sampled_from([0.0, 0.3, 0.49, 0.5, 0.51, 0.89, 0.9, 0.95, 1.0]) | st.floats(0, 1)


@settings(max_examples=400, deadline=None)
@given(
    st.lists(st.sampled_from(["dead", "wind", "snow", "", "live"]), min_size=1, max_size=5),
    st.data(),
)
def test_the_same_load_named_as_by_scoring_every_load(load_names, data):
    shares = data.draw(st.lists(SHARES, min_size=len(load_names), max_size=len(load_names)))
    named = data.draw(st.sampled_from([None, "", "other", *load_names]))
    asked: list[int] = []

    def share(k: int) -> float:
        asked.append(k)
        return shares[k]

    got = _column_holds(share, load_names, named)
    assert got == former(shares, load_names, named)
    if got is not None:
        assert list(got[1]) == list(dict.fromkeys(load_names))  # scores in the loads' order
    assert len(asked) == len(set(asked)) <= len(load_names)


def test_a_column_holding_the_other_loads_forces_is_named(tmp_path):
    case = pratt(12, d=3.0, h=4.0, case="dead")
    case["loads"]["wind"] = {f"U{i}": [3.0, 0.0] for i in range(1, 12, 2)}
    path = write_case(tmp_path, case)
    analysis = analyse(make_model(case))
    ref = analysis.reference
    assert ref is not None
    with open(tmp_path / "claims.csv", "w", newline="", encoding="utf-8") as out:
        writer = csv.writer(out)
        writer.writerow(["member", "dead", "wind"])
        for i, member in enumerate(analysis.model.member_ids):
            dead, wind = (float(ref.member_forces[i, k]) for k in range(2))
            writer.writerow([member, f"{wind:.4f}", f"{wind:.4f}"])  # 'dead' holds wind's
    findings = check(path, tmp_path / "claims.csv").review.findings
    named = [f for f in findings if "is labelled as 'dead' but fits 'wind'" in f.detail]
    assert len(named) == 1
