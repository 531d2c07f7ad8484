"""The review report (HTML and Markdown): content, escaping, determinism, large models, goldens.

Golden files: tests/golden/<case>.md pin the Markdown report of every bundled case with its
claims (cases/canal-footbridge/claims.csv; invented spot-check tables in tests/golden/claims/
for the others). Text is compared exactly, numbers within GOLDEN_RTOL, SHA-256 digests and the
tool version masked (they are checked separately). To regenerate after an intended change:

    TRUSS_VERIFY_REGEN_GOLDEN=1 .venv/bin/python -m pytest tests/test_report_document.py -k golden

and review the diff before committing. The recomputed numbers inside the goldens are checked
against sources outside the project in the test_golden_*_statics tests below.
"""

from __future__ import annotations

import hashlib
import math
import os
import re
import subprocess
import sys
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest
import sympy
from trussgen import make_model, pratt, truss_case

from verify.analysis.exact import member_values as exact_values
from verify.analysis.pipeline import analyse
from verify.compare.diagnose import Review, compare_claims
from verify.io.case import read_case
from verify.io.claims import ClaimedValue, ClaimsTable, read_claims
from verify.report.cautions import CAUTION, SHORT_CAUTION
from verify.report.diagram import COMPRESSION_WIDTH, STATUS_STYLES, TENSION_WIDTH
from verify.report.document import SAMPLE_SHEETS, render_document

ROOT = Path(__file__).resolve().parent.parent
GOLDEN = Path(__file__).resolve().parent / "golden"
CASES = (
    "canal-footbridge",
    "mezzanine-roof",
    "conveyor-gantry",
    "sign-bracket",
    "service-road-overbridge",
)
GOLDEN_RTOL = 1e-6  # numbers in a golden report may move by round-off only
STATICS_RTOL = 1e-3  # golden numbers are printed to 4 significant figures
DATE = "2000-01-01"
NUMBER = re.compile(r"[-+]?\d+(?:\.\d+)?(?:e[-+]?\d+)?")


def _claims_path(case: str) -> str:
    own = f"cases/{case}/claims.csv"
    return own if (ROOT / own).exists() else f"tests/golden/claims/{case}.csv"


def _review(case: str) -> Review:
    """The review as `check` builds it, with paths relative to the repository (stable in
    goldens)."""
    model = read_case(f"cases/{case}/case.toml")
    claims = read_claims(_claims_path(case), model)
    return compare_claims(analyse(model), claims)


@pytest.fixture
def at_root(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(ROOT)


def _mask(text: str) -> str:
    text = re.sub(r"\b[0-9a-f]{64}\b", "<sha256>", text)
    return re.sub(r"truss-verify \d+\.\d+\.\d+\S*", "truss-verify <version>", text)


def _same_line(got: str, want: str) -> bool:
    if NUMBER.sub("#", got) != NUMBER.sub("#", want):
        return False
    for a, b in zip(NUMBER.findall(got), NUMBER.findall(want), strict=True):
        x, y = float(a), float(b)
        if not math.isclose(x, y, rel_tol=GOLDEN_RTOL, abs_tol=1e-9):
            return False
    return True


@pytest.mark.parametrize("case", CASES)
def test_golden_markdown_report(case: str, at_root: None) -> None:
    """The Markdown report of each bundled case matches its golden file (numbers within
    round-off)."""
    got = _mask(render_document(_review(case), fmt="md", generated=DATE))
    path = GOLDEN / f"{case}.md"
    if os.environ.get("TRUSS_VERIFY_REGEN_GOLDEN"):
        path.write_text(got, encoding="utf-8")
    want = path.read_text(encoding="utf-8")
    got_lines, want_lines = got.splitlines(), want.splitlines()
    for n, (g, w) in enumerate(zip(got_lines, want_lines, strict=False), 1):
        assert _same_line(g, w), (
            f"{path.name} line {n} differs:\n  got:  {g}\n  want: {w}\n"
            "(regenerate: TRUSS_VERIFY_REGEN_GOLDEN=1)"
        )
    assert len(got_lines) == len(want_lines), (
        f"{path.name}: {len(got_lines)} lines, golden has {len(want_lines)}"
    )


def _golden_values(case: str, load: str, column: str) -> dict[str, float]:
    """Member -> value of `column` in the golden's member table for one load column."""
    lines = (GOLDEN / f"{case}.md").read_text(encoding="utf-8").splitlines()
    start = next(
        i
        for i, line in enumerate(lines)
        if line.startswith("### ") and f"'{load}'" in line and line.endswith(": members")
    )
    header = [h.strip() for h in lines[start + 4].strip("|").split("|")]
    out = {}
    for line in lines[start + 6 :]:
        if not line.startswith("|"):
            break
        cells = [c.strip() for c in line.strip("|").split("|")]
        names = [h.split(" (", 1)[0] for h in header]  # headings carry their unit: 'global (kN)'
        out[cells[0].replace("\\", "")] = float(cells[names.index(column)])
    return out


def test_golden_canal_footbridge_statics() -> None:
    """Golden forces of the 6-panel Pratt footbridge equal the beam analogy (REFERENCES.md 3.1/3.2).

    Chord = M(Ritter point)/h, diagonal = V/sin(theta), verticals as in the Pratt table of 3.2
    (P at each bottom panel point; d = 3, h = 2.4; reactions 2.5P).
    """
    P, d, h = 9.0, 3.0, 2.4  # dead load per panel point, cases/canal-footbridge/case.toml
    sin_t = h / math.hypot(d, h)
    R = 2.5 * P
    expected = {
        "L0L1": R * d / h,
        "L2L3": (R * 2 * d - P * d) / h,
        "U1U2": -(R * 2 * d - P * d) / h,
        "U2U3": -(R * 3 * d - P * 2 * d - P * d) / h,
        "L0U1": -R / sin_t,
        "U1L2": (R - P) / sin_t,
        "U2L3": (R - 2 * P) / sin_t,
        "U1L1": P,
        "U2L2": -(R - 2 * P),
        "U3L3": 0.0,
    }
    got = _golden_values("canal-footbridge", "dead", "global")
    for member, value in expected.items():
        assert got[member] == pytest.approx(value, rel=STATICS_RTOL, abs=1e-9), member


def test_golden_mezzanine_roof_statics() -> None:
    """Golden end-panel forces of the roof truss equal equilibrium of joints L0 and L1 (1:2 pitch,
    common practice)."""
    R = 5 * 4.5 / 2  # five equal top-joint loads, symmetric supports
    got = _golden_values("mezzanine-roof", "dead", "global")
    assert got["L0U1"] == pytest.approx(
        -R * math.sqrt(5), rel=STATICS_RTOL
    )  # vertical balance at L0: N sin a = -R, sin a = 1/sqrt5
    assert got["L0L1"] == pytest.approx(
        2 * R, rel=STATICS_RTOL
    )  # horizontal balance at L0: -N cos a, cos a = 2/sqrt5
    assert got["U1L1"] == pytest.approx(
        0.0, abs=1e-9
    )  # zero-force rule 2 at the unloaded joint L1 (REFERENCES.md 3.1)


def test_golden_sign_bracket_statics() -> None:
    """Golden forces of the space truss equal an exact sympy solve of the joint equations at E then
    D."""
    model = read_case(ROOT / "cases/sign-bracket/case.toml")
    X = {j.id: sympy.Matrix([sympy.Rational(repr(c)) for c in j.coords]) for j in model.joints}
    for load in ("self-weight", "wind"):
        F = {
            j: sympy.Matrix([sympy.Rational(repr(v)) for v in vec])
            for j, vec in next(c for c in model.cases if c.name == load).loads.items()
        }
        N = {m.id: sympy.Symbol(m.id) for m in model.members}
        equations = []
        for joint in ("D", "E"):
            total = F.get(joint, sympy.zeros(3, 1))
            for m in model.members:
                if joint in (m.start, m.end):
                    other = m.end if m.start == joint else m.start
                    vec = X[other] - X[joint]
                    total = total + N[m.id] * vec / sympy.sqrt(vec.dot(vec))
            equations.extend(list(total))
        solution = sympy.solve(equations, list(N.values()), dict=True)[0]
        got = _golden_values("sign-bracket", load, "global")
        for member, symbol in N.items():
            assert got[member] == pytest.approx(
                float(solution[symbol]), rel=STATICS_RTOL, abs=1e-9
            ), (load, member)


def test_golden_conveyor_gantry_elastic() -> None:
    """Golden elastic forces of the cross-braced gantry equal a direct stiffness solve written here
    from scratch."""
    model = read_case(ROOT / "cases/conveyor-gantry/case.toml")
    n = 2 * len(model.joints)
    K = np.zeros((n, n))
    for m in model.members:
        a, b = model.joint_index[m.start], model.joint_index[m.end]
        vec = np.subtract(model.joints[b].coords, model.joints[a].coords)
        L = float(np.hypot(*vec))
        c = np.outer(vec / L, vec / L) * m.EA / L
        for i, j, s in ((a, a, 1), (b, b, 1), (a, b, -1), (b, a, -1)):
            K[2 * i : 2 * i + 2, 2 * j : 2 * j + 2] += s * c
    fixed = [2 * model.joint_index[r.joint] + "xy".index(r.axis) for r in model.reactions]
    free = [k for k in range(n) if k not in fixed]
    for load in ("belt", "walkway"):
        F = np.zeros(n)
        for joint, vec in next(c for c in model.cases if c.name == load).loads.items():
            F[2 * model.joint_index[joint] : 2 * model.joint_index[joint] + 2] += vec
        u = np.zeros(n)
        u[free] = np.linalg.solve(K[np.ix_(free, free)], F[free])
        got = _golden_values("conveyor-gantry", load, "elastic")
        for m in model.members:
            a, b = model.joint_index[m.start], model.joint_index[m.end]
            vec = np.subtract(model.joints[b].coords, model.joints[a].coords)
            L = float(np.hypot(*vec))
            force = m.EA / L * float(np.dot(u[2 * b : 2 * b + 2] - u[2 * a : 2 * a + 2], vec / L))
            assert got[m.id] == pytest.approx(force, rel=STATICS_RTOL, abs=1e-6), (load, m.id)


# -- exact values ---------------------------------------------------------------------------------
def test_exact_values_match_the_published_pratt_table() -> None:
    """Exact forces of the 6-panel Pratt equal REFERENCES.md 3.2 (P = 1) as fractions."""
    model = make_model(pratt())
    values = exact_values(model, analyse(model).joints, "P")
    assert values is not None
    table = {v.label: v.exact for v in values.members}
    published = {
        "L0L1": "10/3",
        "L1L2": "10/3",
        "L2L3": "16/3",
        "U1U2": "-16/3",
        "U2U3": "-6",
        "L0U1": "-25/6",
        "U1L1": "1",
        "U2L2": "-1/2",
        "U3L3": "0",
        "U1L2": "5/2",
        "U2L3": "5/6",
    }
    for member, text in published.items():
        assert Fraction(table[member]) == Fraction(text), member
    assert {v.label: v.exact for v in values.reactions}["L0.y"] == "5/2"


def test_exact_values_write_surds_for_irrational_lengths() -> None:
    """Canal footbridge diagonal U2L3 (dead) = V/sin(theta) = 4.5 * sqrt(14.76)/2.4 = (9/8)·√41
    (REFERENCES.md 3.1)."""
    model = read_case(ROOT / "cases/canal-footbridge/case.toml")
    values = exact_values(model, analyse(model).joints, "dead")
    assert values is not None
    exact = {v.label: v.exact for v in values.members}
    assert exact["U2L3"] == "(9/8)·√41"
    assert 9 / 8 * math.sqrt(41) == pytest.approx(4.5 * math.sqrt(14.76) / 2.4, rel=1e-12)


def test_exact_values_are_withheld_for_irrational_coordinates() -> None:
    """Coordinates like sqrt(3) (not short decimals) give no exact values rather than wrong ones."""
    h = math.sqrt(3.0)
    case = truss_case(
        {"A": [0.0, 0.0], "B": [2.0, 0.0], "C": [1.0, h]},
        [("A", "B"), ("B", "C"), ("A", "C")],
        {"A": ["x", "y"], "B": ["y"]},
        {"P": {"C": [0.0, -1.0]}},
    )
    model = make_model(case)
    assert exact_values(model, analyse(model).joints, "P") is None


# -- content, escaping, determinism ----------------------------------------------------------------
def test_html_has_every_section_in_order(at_root: None) -> None:
    """Header, findings (on the first printed page), input files, diagram, member table, appendix
    and cautions appear in that order."""
    html = render_document(_review("canal-footbridge"), generated=DATE)
    marks = [
        'id="summary"',
        'id="findings"',
        'id="inputs"',
        'id="diagram"',
        'id="members"',
        'id="appendix"',
        'id="cautions"',
    ]
    positions = [html.index(m) for m in marks]
    assert positions == sorted(positions)
    assert "Verdict: DISCREPANCIES" in html and f"generated {DATE}" in html
    assert (
        "b + r − 2j = 21 + 3 − 2×12 = 0" in html
    )  # Maxwell: 21 members, 3 reactions, 12 joints (case file)
    assert html.count("<svg") >= 3 and "Method of joints" in html and "Exact values" in html
    assert (
        CAUTION in html and "Defer to the governing local codes" not in html
    )  # said once, not twice
    # The short caution sits beside the verdict, before the first findings.
    assert html.index(SHORT_CAUTION) < html.index('id="findings"')


def test_input_hashes_are_those_of_the_files(at_root: None) -> None:
    """The SHA-256 shown for the case and the claims are those of the file bytes."""
    html = render_document(_review("canal-footbridge"), generated=DATE)
    for path in ("cases/canal-footbridge/case.toml", "cases/canal-footbridge/claims.csv"):
        assert hashlib.sha256((ROOT / path).read_bytes()).hexdigest() in html


def test_csv_tables_named_by_the_case_are_hashed(tmp_path: Path) -> None:
    """A case that keeps its joints in a CSV file lists that file and its hash among the inputs."""
    (tmp_path / "joints.csv").write_text("id,x,y\nA,0,0\nB,4,0\nC,2,3\n", encoding="utf-8")
    (tmp_path / "case.toml").write_text(
        'title = "t"\njoints = "joints.csv"\n[units]\nlength = "m"\nforce = "kN"\n'
        '[members]\nAB = ["A", "B"]\nBC = ["B", "C"]\nAC = ["A", "C"]\n'
        '[supports]\nA = ["x", "y"]\nB = ["y"]\n[loads.P]\nC = [0.0, -10.0]\n',
        encoding="utf-8",
    )
    (tmp_path / "claims.csv").write_text("member,P\nAB,6.667 T\n", encoding="utf-8")
    model = read_case(tmp_path / "case.toml")
    review = compare_claims(analyse(model), read_claims(tmp_path / "claims.csv", model))
    md = render_document(review, fmt="md", generated=DATE)
    assert "table 'joints.csv'" in md  # as the case reader found it, not parsed again
    assert hashlib.sha256((tmp_path / "joints.csv").read_bytes()).hexdigest() in md


def _hostile_review() -> Review:
    label = "<script>alert(1)</script>"
    case = truss_case(
        {"A": [0.0, 0.0], "B": [4.0, 0.0], "C&<b>": [2.0, 3.0]},
        {label: ["A", "B"], "B|C*": ["B", "C&<b>"], "AC": ["A", "C&<b>"]},
        {"A": ["x", "y"], "B": ["y"]},
        {"<img src=x onerror=alert(2)>": {"C&<b>": [0.0, -10.0]}},
    )
    case["title"] = "<img src=x onerror=alert(3)>"
    model = make_model(case)
    name = model.load_names[0]
    claims = ClaimsTable(
        "<b>claims</b>.csv",
        None,
        "0" * 64,
        (ClaimedValue(label, label, None, name, -99.0, False, None, "row 2 `x`"),),
        (),
        (name,),
        None,
    )
    return compare_claims(analyse(model), claims)


def test_labels_from_spreadsheets_render_as_text() -> None:
    """A member called <script> and a title with <img> are escaped in both formats; nothing becomes
    markup."""
    review = _hostile_review()
    html = render_document(review, generated=DATE)
    assert "<script" not in html.lower() and "<img" not in html.lower() and "<b>" not in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html
    md = render_document(review, fmt="md", generated=DATE)
    # Inside fenced code blocks Markdown shows text verbatim (CommonMark), so only prose must be
    # escaped.
    prose = re.sub(r"(?ms)^(`{3,})text\n.*?^\1$", "", md)
    assert prose != md and "<script>alert(1)</script>" in md
    assert "<script" not in prose.lower() and "<img" not in prose.lower() and "<b>" not in prose
    assert "&lt;script&gt;" in prose and "B\\|C\\*" in prose  # table and emphasis marks escaped


def test_same_input_gives_identical_bytes_across_processes(at_root: None) -> None:
    """Two renderings, one in a process with another hash seed, are byte-identical."""
    html = render_document(_review("sign-bracket"), generated=DATE)
    assert html == render_document(_review("sign-bracket"), generated=DATE)
    code = (
        "import sys; sys.path.insert(0, 'tests'); from test_report_document import _review; "
        "from verify.report.document import render_document; "
        f"sys.stdout.write(render_document(_review('sign-bracket'), generated='{DATE}'))"
    )
    other = subprocess.run(
        [sys.executable, "-c", code],
        capture_output=True,
        text=True,
        check=True,
        cwd=ROOT,
        env={**os.environ, "PYTHONHASHSEED": "12345"},
        encoding="utf-8",
    )
    assert other.stdout == html


def test_markdown_says_the_drawing_is_html_only(at_root: None) -> None:
    """The Markdown report has no SVG, says so, and lists the same findings as the HTML."""
    review = _review("canal-footbridge")
    md = render_document(review, fmt="md", generated=DATE)
    assert "<svg" not in md and "drawn only in the HTML report" in md
    for finding in review.findings:
        assert f"**{finding.title}**" in md


def test_space_truss_is_drawn_in_plan_and_elevation(at_root: None) -> None:
    """A 3D truss gets two views, plan and elevation, with z taken as vertical."""
    html = render_document(_review("sign-bracket"), generated=DATE)
    assert "Plan (looking down z" in html and "Elevation (looking along" in html


def test_diagram_codes_force_and_status(at_root: None) -> None:
    """In 'dead', U2L2 (sign reversed) is drawn in the sign colour as a compression band; L0L1 as a
    tension line.

    Signs from the Pratt table, REFERENCES.md 3.2: bottom chord tension, U2L2 = -P/2 compression.
    """
    html = render_document(_review("canal-footbridge"), generated=DATE)
    dead = html[html.index("<h3>Load case &#x27;dead&#x27;</h3>") :]
    dead = dead[: dead.index("</figure>")]
    u2l2 = re.search(r'<line [^>]*stroke="([^"]+)" stroke-width="([^"]+)"[^>]*><title>U2L2:', dead)
    l0l1 = re.search(r'<line [^>]*stroke="([^"]+)" stroke-width="([^"]+)"[^>]*><title>L0L1:', dead)
    assert u2l2 and l0l1
    assert (
        u2l2.group(1) == STATUS_STYLES["sign"].colour and float(u2l2.group(2)) == COMPRESSION_WIDTH
    )
    assert l0l1.group(1) == STATUS_STYLES["agrees"].colour and float(l0l1.group(2)) == TENSION_WIDTH


def test_large_model_report_is_truncated_sensibly() -> None:
    """Above 2000 members: the drawing is the outline plus the flagged member, one load column in
    the appendix, steps capped, the section cuts of the flagged member and a sample; all said."""
    model = make_model(pratt(1000))
    assert len(model.members) > 2000
    claims = ClaimsTable(
        "big.csv",
        None,
        "0" * 64,
        (ClaimedValue("L0L1", "L0L1", None, "P", 333.0, False, None, "row 2"),),
        (),
        ("P",),
        None,
    )
    review = compare_claims(analyse(model), claims)
    html = render_document(review, generated=DATE)
    assert 'class="member-labels"' not in html and 'class="outline"' in html
    assert "only the members with a finding" in html
    diagram = html[html.index('id="diagram"') : html.index('id="members"')]
    members = re.findall(r'<g class="members">(.*?)</g>', diagram)
    assert [m.count("<line ") for m in members] == [1] and "<title>L0L1:" in members[0]
    assert "Large model (" in html and "further step(s) are not shown" in html
    appendix = html[html.index('id="appendix"') :]
    sheets = appendix.count('class="freebody"')
    assert 1 <= sheets <= 1 + SAMPLE_SHEETS and "Solves <strong>L0L1" in appendix
    assert "truss-verify cut " in appendix and "--members" in appendix
    md = render_document(review, fmt="md", generated=DATE)
    assert md.count("#### Method of joints") == 1


def test_unknown_format_is_refused(at_root: None) -> None:
    with pytest.raises(ValueError, match="html"):
        render_document(_review("canal-footbridge"), fmt="pdf")
