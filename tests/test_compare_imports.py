"""compare takes results and claims only: no module under verify/compare imports a solver.

Every import of verify.analysis in verify/compare (at module level or inside a function, read
with `ast`, so a lazy import cannot hide) must name one of ALLOWED: result types, enums and
constants. A second solve the comparison needs is asked of the analysis run it receives
(`analysis.run`, verify/analysis/run.py).
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

COMPARE = Path(__file__).resolve().parents[1] / "verify" / "compare"

# (module, name) pairs compare may import from verify.analysis: types and constants only.
ALLOWED = {
    ("verify.analysis.pipeline", "Analysis"),
    ("verify.analysis.pipeline", "ROUTE_RTOL"),
    ("verify.analysis.forces", "ForceResult"),
    ("verify.analysis.stability", "Classification"),
    ("verify.analysis.stability", "StabilityResult"),
    ("verify.analysis.run", "AnalysisRun"),
    ("verify.analysis.virtual_work", "VirtualWorkCalc"),
}


def analysis_imports(path: Path) -> list[tuple[int, str, str]]:
    """(line, module, name) of every import from verify.analysis in a file; name '*' for a
    whole module (`import verify.analysis.x` gives every solver in it)."""
    found = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"), str(path))):
        if isinstance(node, ast.ImportFrom) and node.module:
            if node.module == "verify" and any(a.name == "analysis" for a in node.names):
                found.append((node.lineno, "verify.analysis", "*"))
            elif node.module.startswith("verify.analysis"):
                found.extend((node.lineno, node.module, a.name) for a in node.names)
        elif isinstance(node, ast.Import):
            found.extend(
                (node.lineno, a.name, "*")
                for a in node.names
                if a.name.startswith("verify.analysis")
            )
    return found


MODULES = sorted(COMPARE.rglob("*.py"))


def test_the_scan_sees_the_package_and_its_imports():
    """The test looks where the code is: compare has its modules, and they do import result
    types from analysis (so an empty scan cannot pass by accident)."""
    assert len(MODULES) >= 10
    assert any(analysis_imports(p) for p in MODULES)


def test_the_scan_finds_an_import_inside_a_function(tmp_path):
    planted = tmp_path / "planted.py"
    planted.write_text(
        "def f():\n"
        "    from verify.analysis.stiffness import solve_stiffness\n"
        "    import verify.analysis.global_solve\n"
    )
    assert analysis_imports(planted) == [
        (2, "verify.analysis.stiffness", "solve_stiffness"),
        (3, "verify.analysis.global_solve", "*"),
    ]


@pytest.mark.parametrize("path", MODULES, ids=[str(p.relative_to(COMPARE)) for p in MODULES])
def test_compare_imports_no_solver_from_analysis(path):
    wrong = [
        f"line {line}: {module}.{name}"
        for line, module, name in analysis_imports(path)
        if (module, name) not in ALLOWED
    ]
    assert not wrong, "ask the analysis run instead: " + "; ".join(wrong)
