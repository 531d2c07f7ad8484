"""A large model's drawing (an outline) draws at most diagram.OUTLINE_SUPPORTS supported joints
spread along the truss, and every support at the members with a finding; a drawing that is not
an outline draws every support. A continuous truss on 40,000 supports drew 4 MB of them."""

from __future__ import annotations

import re

from trussgen import make_model, pratt

from verify.report import diagram


def _many_supports(panels: int) -> dict:
    case = pratt(panels, load=10.0)
    case["supports"] = {f"L{i}": (["x", "y"] if i == 0 else ["y"]) for i in range(panels + 1)}
    return case


def _support_apexes(svg: str) -> list[str]:
    """The joint each drawn support points at (its triangle's first point), in drawing order."""
    group = svg.split('<g class="supports"', 1)[1].split("</g>", 1)[0]
    return re.findall(r'<polygon points="([0-9.]+,[0-9.]+) ', group)


def test_an_outline_draws_a_spread_of_supports_and_those_at_findings() -> None:
    model = make_model(_many_supports(600))  # 601 supported joints
    flagged = "U1L2"  # its end L2 lies between two of the joints spread along the truss
    statuses = {m: "agrees" for m in model.member_ids}
    statuses[flagged] = "value-mismatch"
    whole = diagram.render_diagram(model, statuses=statuses)
    outline = diagram.render_diagram(model, statuses=statuses, outline=True)
    assert len(_support_apexes(whole)) == 601
    drawn = _support_apexes(outline)
    assert diagram.OUTLINE_SUPPORTS <= len(drawn) <= diagram.OUTLINE_SUPPORTS + 2
    assert len(outline) < len(whole)
    # The support under the flagged member's end L2 is among those drawn, as are the two end
    # supports.
    keep = diagram._supports_drawn(model, [model.member_index[flagged]], True)
    unflagged = diagram._supports_drawn(model, [], True)
    assert unflagged is not None and "L2" not in unflagged
    supported = {r.joint for r in model.reactions}
    assert keep is not None and {"L0", "L600", "L2"} <= keep
    assert len(keep & supported) == len(drawn)


def test_few_supports_are_all_drawn_in_an_outline() -> None:
    model = make_model(pratt(600, load=10.0))  # two supports
    assert diagram._supports_drawn(model, [], True) is None
    assert len(_support_apexes(diagram.render_diagram(model, outline=True))) == 2
