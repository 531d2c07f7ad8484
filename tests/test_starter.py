"""Starter geometry (verify/starter, `truss-verify starter`): every pattern written, read back by
the case reader, classified stable and determinate by the tool, and its forces checked.

Outside references, named beside each check:
- shared/REFERENCES.md 3.2 (Pratt, Howe, Warren tables), 3.3 (king post, Fink), 3.1 (beam
  analogy: chord = M / h at the Ritter point, diagonal = V / sin theta; zero-force rules);
- method of sections / joints by hand for the others, derivations written beside each (c);
- sympy's own truss module (REFERENCES.md 4.1) for every 2D pattern;
- an exact rational solve of joint equilibrium written here (sympy matrices, force densities
  N / L as unknowns, so rational coordinates give rational equations) for the 3D patterns.
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest
import sympy
from click.testing import CliRunner
from sympy.physics.continuum_mechanics.truss import Truss

from verify.analysis.global_solve import solve_global
from verify.analysis.stability import Classification, solve_stability
from verify.cli import main
from verify.io.case import read_case
from verify.starter import PATTERNS, PatternError, build_starter, render_case

RTOL = 1e-9
P = 10.0


def write_and_read(tmp_path, pattern, **options):
    starter = build_starter(pattern, **options)
    path = tmp_path / f"{pattern}.toml"
    path.write_text(render_case(starter), encoding="utf-8")
    return read_case(path)


def member_forces(model):
    result = solve_global(model)
    return {m.id: float(result.member_forces[i, 0]) for i, m in enumerate(model.members)}


def check(got, expected):
    scale = max(abs(v) for v in got.values())
    for member, value in expected.items():
        assert got[member] == pytest.approx(value, rel=RTOL, abs=RTOL * scale), member


# -- every pattern: stable, determinate, and sympy (2D) or an exact solve (3D) agrees --------------
DEFAULTS = {"span": 24.0, "depth": 3.0}


@pytest.mark.parametrize("pattern", PATTERNS)
def test_every_pattern_is_stable_and_determinate(tmp_path, pattern):
    """The tool's own stability analysis classifies every starter as stable and determinate."""
    model = write_and_read(tmp_path, pattern, **DEFAULTS)
    assert solve_stability(model).classification is Classification.STABLE_DETERMINATE


def sympy_forces(model):
    truss = Truss()
    # Float input: exact input with a dozen distinct surd lengths (the bowstring) takes sympy's
    # symbolic inverse minutes; floats keep it an independent check in well under a second.
    truss.add_node(*[(j.id, float(j.coords[0]), float(j.coords[1])) for j in model.joints])
    truss.add_member(*[(m.id, m.start, m.end) for m in model.members])
    kinds = {}
    for r in model.reactions:
        kinds.setdefault(r.joint, []).append(r.axis)
    truss.apply_support(
        *[(j, "pinned" if axes == ["x", "y"] else "roller") for j, axes in kinds.items()]
    )
    for joint, (fx, fy) in model.cases[0].loads.items():
        for value, angle in ((fx, 0), (fy, 90)):
            if value:
                truss.apply_load((joint, abs(value), angle if value > 0 else angle + 180))
    truss.solve()
    return {m: float(v) for m, v in truss.internal_forces.items()}


@pytest.mark.parametrize(
    "pattern", [p for p in PATTERNS if not p.startswith("tower") and p != "grid"]
)
@pytest.mark.parametrize("chord", ["top", "bottom"])
def test_2d_patterns_match_sympy_truss(tmp_path, pattern, chord):
    """sympy's truss module gives the same member forces for every 2D pattern."""
    model = write_and_read(tmp_path, pattern, **DEFAULTS, loaded_chord=chord, line_load=2.0)
    check(member_forces(model), sympy_forces(model))


def exact_solve(model):
    """Joint equilibrium solved exactly: unknowns q = N / L per member and the reactions, so the
    equations sum q (x_other - x_joint) + R + F = 0 with rational (or sqrt 3) coefficients."""

    def exact(v):
        return sympy.nsimplify(v, [sympy.sqrt(3)], tolerance=1e-12)

    xyz = {j.id: [exact(c) for c in j.coords] for j in model.joints}
    rows = {(j.id, k): {} for j in model.joints for k in range(model.dim)}
    for m in model.members:
        for a, b in ((m.start, m.end), (m.end, m.start)):
            for k in range(model.dim):
                rows[(a, k)][("q", m.id)] = xyz[b][k] - xyz[a][k]
    for n, r in enumerate(model.reactions):
        for k in range(model.dim):
            if r.direction[k]:
                rows[(r.joint, k)][("r", n)] = exact(r.direction[k])
    unknowns = [("q", m.id) for m in model.members] + [
        ("r", n) for n in range(len(model.reactions))
    ]
    col = {u: i for i, u in enumerate(unknowns)}
    A = sympy.zeros(len(rows), len(unknowns))
    f = sympy.zeros(len(rows), 1)
    for i, (key, row) in enumerate(rows.items()):
        for u, v in row.items():
            A[i, col[u]] = v
        load = model.cases[0].loads.get(key[0])
        f[i] = -exact(load[key[1]]) if load else 0
    q = A.LUsolve(f)
    lengths = {
        m.id: sympy.sqrt(sum((xyz[m.end][k] - xyz[m.start][k]) ** 2 for k in range(model.dim)))
        for m in model.members
    }
    return {m.id: float(q[col[("q", m.id)]] * lengths[m.id]) for m in model.members}


@pytest.mark.parametrize(
    ("pattern", "panels"), [("tower-3", 2), ("tower-4", 3), ("grid", 2), ("grid", 3)]
)
def test_3d_patterns_match_an_exact_solve(tmp_path, pattern, panels):
    """The global solve agrees with an exact solve of joint equilibrium under a load case with a
    lateral part (vertical top loads plus a horizontal load added at one top joint)."""
    starter = build_starter(
        pattern, span=4.0, depth=6.0 if pattern != "grid" else 1.5, panels=panels
    )
    text = render_case(starter)
    top = next(iter(starter.loads))
    text = text.replace(f"{top} = [0.0, 0.0, -10.0]", f"{top} = [3.0, -2.0, -10.0]")
    path = tmp_path / "case.toml"
    path.write_text(text, encoding="utf-8")
    model = read_case(path)
    check(member_forces(model), exact_solve(model))


# -- closed forms ---------------------------------------------------------------------------------
def test_pratt_matches_references_table(tmp_path):
    """REFERENCES.md 3.2 Pratt: 6 panels of 4, depth 3, P at L1..L5."""
    got = member_forces(
        write_and_read(
            tmp_path, "pratt", span=24.0, depth=3.0, panels=6, loaded_chord="bottom", panel_load=P
        )
    )
    check(
        got,
        {
            "L0L1": 10 / 3 * P,
            "L1L2": 10 / 3 * P,
            "L2L3": 16 / 3 * P,
            "U1U2": -16 / 3 * P,
            "U2U3": -6 * P,
            "L0U1": -25 / 6 * P,
            "U1L1": P,
            "U2L2": -P / 2,
            "U3L3": 0.0,
            "U1L2": 5 / 2 * P,
            "U2L3": 5 / 6 * P,
            "U4L3": 5 / 6 * P,
            "U5L4": 5 / 2 * P,
        },
    )


def test_howe_matches_references_table(tmp_path):
    """REFERENCES.md 3.2 Howe: same geometry and loads."""
    got = member_forces(
        write_and_read(
            tmp_path, "howe", span=24.0, depth=3.0, panels=6, loaded_chord="bottom", panel_load=P
        )
    )
    check(
        got,
        {
            "L0L1": 10 / 3 * P,
            "L1L2": 16 / 3 * P,
            "L2L3": 6 * P,
            "U1U2": -10 / 3 * P,
            "U2U3": -16 / 3 * P,
            "L0U1": -25 / 6 * P,
            "U1L1": 5 / 2 * P,
            "U2L2": 3 / 2 * P,
            "U3L3": P,
            "L1U2": -5 / 2 * P,
            "L2U3": -5 / 6 * P,
        },
    )


def test_warren_matches_references_table(tmp_path):
    """REFERENCES.md 3.2 Warren: side 4, h = 2 sqrt 3, 4 panels, P at L1, L2, L3."""
    r3 = math.sqrt(3)
    got = member_forces(
        write_and_read(
            tmp_path,
            "warren",
            span=16.0,
            depth=2 * r3,
            panels=4,
            loaded_chord="bottom",
            panel_load=P,
        )
    )
    check(
        got,
        {
            "L0L1": r3 / 2 * P,
            "L1L2": 7 * r3 / 6 * P,
            "U1U2": -r3 * P,
            "U2U3": -4 * r3 / 3 * P,
            "L0U1": -r3 * P,
            "U1L1": r3 * P,
            "L1U2": -r3 / 3 * P,
            "U2L2": r3 / 3 * P,
        },
    )


def beam_moment(x, span, loads):
    """Simple-beam moment at x under point loads {x_i: P_i} (downward positive), pin and roller."""
    left = sum(p * (span - xi) / span for xi, p in loads.items())
    return left * x - sum(p * (x - xi) for xi, p in loads.items() if xi < x)


def test_warren_verticals_by_beam_analogy(tmp_path):
    """REFERENCES.md 3.1: bottom chord = M / h at the top end of the panel's diagonal (its Ritter
    point), |diagonal| = V / sin theta; verticals at joints where no diagonal meets are zero."""
    span, h, n = 24.0, 3.0, 6
    d = span / n
    got = member_forces(
        write_and_read(
            tmp_path,
            "warren-verticals",
            span=span,
            depth=h,
            panels=n,
            loaded_chord="bottom",
            panel_load=P,
        )
    )
    loads = {d * i: P for i in range(1, n)}
    sin = h / math.hypot(d, h)
    for i in range(n):
        ritter = d * (i + 1 if i % 2 == 0 else i)
        assert got[f"L{i}L{i + 1}"] == pytest.approx(beam_moment(ritter, span, loads) / h, rel=RTOL)
        shear = (beam_moment(d * (i + 1), span, loads) - beam_moment(d * i, span, loads)) / d
        diagonal = f"L{i}U{i + 1}" if i % 2 == 0 else f"U{i}L{i + 1}"
        assert abs(got[diagonal]) == pytest.approx(abs(shear) / sin, rel=RTOL)
    for i in range(2, n, 2):
        assert got[f"U{i}L{i}"] == pytest.approx(0.0, abs=RTOL * P)


def test_k_truss_chords_by_sections(tmp_path):
    """Derived by hand (c): at a K's apex M_i no load acts, so its two diagonals' horizontal parts
    cancel; a cut through the panel then gives top = -bottom, and moments about M_i give
    bottom chord = M(x_i) / h, with x_i the apex's vertical; the diagonals carry V / (2 sin
    theta)."""
    span, h, n = 24.0, 3.0, 6
    d = span / n
    got = member_forces(
        write_and_read(
            tmp_path, "k", span=span, depth=h, panels=n, loaded_chord="bottom", panel_load=P
        )
    )
    loads = {d * i: P for i in range(1, n)}
    sin = (h / 2) / math.hypot(d, h / 2)
    for j in range(n):
        apex = j if j < n // 2 else j + 1
        m = beam_moment(d * apex, span, loads)
        assert got[f"L{j}L{j + 1}"] == pytest.approx(m / h, rel=RTOL)
        assert got[f"U{j}U{j + 1}"] == pytest.approx(-m / h, rel=RTOL)
        shear = (beam_moment(d * (j + 1), span, loads) - beam_moment(d * j, span, loads)) / d
        other = j + 1 if j < n // 2 else j
        assert abs(got[f"M{apex}U{other}"]) == pytest.approx(abs(shear) / (2 * sin), rel=RTOL)


def test_king_post_matches_references(tmp_path):
    """REFERENCES.md 3.3 king post: span 8, rise 3, P at the apex."""
    got = member_forces(write_and_read(tmp_path, "king-post", span=8.0, depth=3.0, panel_load=P))
    check(
        got,
        {"L0U1": -5 * P / 6, "U1L2": -5 * P / 6, "L0L1": 2 * P / 3, "L1L2": 2 * P / 3, "U1L1": 0.0},
    )


def test_queen_post_by_joints(tmp_path):
    """By hand (c): P at U1 and U2, reactions P; joint L0 gives rafter -P / sin a and tie
    P / tan a; joint U1 gives the straining beam -P / tan a; posts and the centre diagonal carry
    nothing (no load at L1, L2; zero panel shear)."""
    span, h = 9.0, 2.0
    a = math.atan2(h, span / 3)
    got = member_forces(write_and_read(tmp_path, "queen-post", span=span, depth=h, panel_load=P))
    check(
        got,
        {
            "L0U1": -P / math.sin(a),
            "L0L1": P / math.tan(a),
            "L1L2": P / math.tan(a),
            "U1U2": -P / math.tan(a),
            "U1L1": 0.0,
            "U2L2": 0.0,
            "U1L2": 0.0,
        },
    )


def test_fink_matches_references(tmp_path):
    """REFERENCES.md 3.3 Fink: span 12, rise 3, P at F, C, G (here U1, U2, U3); A, D, E, B are
    L0..L3."""
    r5, r13 = math.sqrt(5), math.sqrt(13)
    got = member_forces(write_and_read(tmp_path, "fink", span=12.0, depth=3.0, panel_load=P))
    check(
        got,
        {
            "L0L1": 3 * P,
            "L1L2": 2 * P,
            "L2L3": 3 * P,
            "L0U1": -3 * r5 * P / 2,
            "U1U2": -5 * r5 * P / 4,
            "U1L1": -r13 * P / 4,
            "L1U2": r13 * P / 4,
        },
    )


def test_fan_by_joints_and_sections(tmp_path):
    """By hand (c): P at U1..U5, reactions 5P/2; joint L0: rafter -R / sin a, tie R / tan a;
    a cut just left of midspan, moments about the ridge U3: L1L2 = M(span / 2) / rise."""
    span, h = 12.0, 3.0
    a = math.atan2(h, span / 2)
    got = member_forces(write_and_read(tmp_path, "fan", span=span, depth=h, panel_load=P))
    R = 5 * P / 2
    m = beam_moment(span / 2, span, {span * k / 6: P for k in range(1, 6)})
    check(got, {"L0U1": -R / math.sin(a), "L0L1": R / math.tan(a), "L1L2": m / h})


def test_scissors_by_joints(tmp_path):
    """By hand (c), joint L0 with rafter at a and raised tie at b: tie = R cos a / sin(a - b),
    rafter = -R cos b / sin(a - b); P at U1, U2, U3, so R = 3P/2."""
    span, h = 10.0, 4.0
    a, b = math.atan2(h, span / 2), math.atan2(h / 2, span / 2)
    got = member_forces(write_and_read(tmp_path, "scissors", span=span, depth=h, panel_load=P))
    R = 3 * P / 2
    check(
        got, {"L0L1": R * math.cos(a) / math.sin(a - b), "L0U1": -R * math.cos(b) / math.sin(a - b)}
    )


def test_bowstring_parabola_carries_uniform_panel_loads_in_its_chords(tmp_path):
    """By sections (c): equal loads at equally spaced joints on a parabola make it the funicular
    polygon: moments about U_i give a bottom chord of M_i / y_i = P L n / (8 rise) in every panel,
    and every web member carries nothing."""
    span, rise, n = 24.0, 4.0, 6
    got = member_forces(
        write_and_read(tmp_path, "bowstring", span=span, depth=rise, panels=n, panel_load=P)
    )
    for i in range(n):
        assert got[f"L{i}L{i + 1}"] == pytest.approx(P * span * n / (8 * rise), rel=RTOL)
    for i in range(1, n):
        assert got[f"U{i}L{i}"] == pytest.approx(0.0, abs=RTOL * P)


@pytest.mark.parametrize("pattern", ["tower-3", "tower-4"])
def test_tower_under_top_loads_carries_them_in_its_legs(tmp_path, pattern):
    """Legs -P, every other member 0 balances every joint; the truss is determinate, so that is
    the solution (statics, c)."""
    got = member_forces(
        write_and_read(tmp_path, pattern, span=3.0, depth=12.0, panels=4, panel_load=P)
    )
    for member, value in got.items():
        is_leg = member[0] == member[2] if len(member) == 4 else False
        assert value == pytest.approx(-P if is_leg else 0.0, abs=RTOL * P), member


def test_line_load_tributary_shares_sum_to_the_line_load(tmp_path):
    """w on the top chord, per plan length: the joint loads add up to w x span, the ends take
    half a panel each (common practice)."""
    starter = build_starter("pratt", span=24.0, depth=3.0, panels=6, line_load=2.5)
    total = sum(v[1] for v in starter.loads.values())
    assert total == pytest.approx(-2.5 * 24.0, rel=RTOL)
    assert starter.loads["L0"] == (0.0, -2.5 * 2.0) and starter.loads["U1"] == (0.0, -2.5 * 4.0)


def test_fractions_are_written_exactly(tmp_path):
    """A span of 16 in 3 panels puts joints at 16/3: written as the fraction, read back exactly."""
    starter = build_starter("queen-post", span=16.0, depth=2.0)
    assert '"16/3"' in render_case(starter)
    model = write_and_read(tmp_path, "queen-post", span=16.0, depth=2.0)
    assert model.exact is not None and model.exact.coords["L1"][0] == sympy.Rational(16, 3)
    assert Fraction(model.joints[model.joint_index["L1"]].coords[0]) == Fraction(16 / 3)


@pytest.mark.parametrize(
    ("args", "fragment"),
    [
        (["prat", "--span", "24", "--depth", "3"], "unknown pattern 'prat'"),
        (
            ["pratt", "--span", "24", "--depth", "3", "--panels", "5"],
            "pratt needs an even number of panels",
        ),
        (
            ["king-post", "--span", "8", "--depth", "3", "--panels", "4"],
            "king-post has 2 panels by its shape",
        ),
        (["pratt", "--span", "-24", "--depth", "3"], "--span must be a positive length"),
        (
            ["grid", "--span", "8", "--depth", "1", "--line-load", "2"],
            "grid takes --panel-load at its top joints only",
        ),
        (
            ["pratt", "--span", "24", "--depth", "3", "--panel-load", "1", "--line-load", "2"],
            "not both",
        ),
    ],
)
def test_starter_refuses_bad_options_with_exit_2(tmp_path, args, fragment):
    result = CliRunner().invoke(main, ["starter", *args, "--out", str(tmp_path / "out")])
    assert result.exit_code == 2 and fragment in result.output, result.output
    assert "Traceback" not in result.output and not (tmp_path / "out" / "case.toml").exists()


def test_starter_writes_then_refuses_to_overwrite_without_force(tmp_path):
    """The command writes DIR/case.toml, refuses to replace it, and replaces it with --replace."""
    out = tmp_path / "job"
    args = ["starter", "howe", "--span", "18", "--depth", "2.5", "--panels", "6", "--out", str(out)]
    first = CliRunner().invoke(main, args)
    assert first.exit_code == 0, first.output
    before = (out / "case.toml").read_text(encoding="utf-8")
    assert "# Joint naming:" in before and 'L0 = "pinned"' in before
    second = CliRunner().invoke(main, args + ["--panel-load", "5"])
    assert second.exit_code == 2 and "exists; pass --replace" in second.output
    assert (out / "case.toml").read_text(encoding="utf-8") == before
    third = CliRunner().invoke(main, args + ["--panel-load", "5", "--replace"])
    assert third.exit_code == 0 and "-5.0" in (out / "case.toml").read_text(encoding="utf-8")


def test_build_starter_refuses_unknown_pattern():
    with pytest.raises(PatternError, match="unknown pattern"):
        build_starter("arch", span=1.0, depth=1.0)
    np.testing.assert_equal(len(PATTERNS), 14)
