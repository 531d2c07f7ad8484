"""The report layer renders; it does not solve (issue 15).

Every module under verify/report is parsed with `ast` (imports at the top and inside functions
alike) and may take from verify/analysis only the names listed here: result types, the records
the analyses hand over, and constants. A solver imported into a report fails this test, so a
report can only draw what an analysis returned.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
REPORT = ROOT / "verify" / "report"

# module -> names a report may import from it (types, record dataclasses, constants)
ALLOWED: dict[str, frozenset[str]] = {
    "verify.analysis.pipeline": frozenset({"Analysis"}),
    "verify.analysis.joints": frozenset({"JointSolution"}),
    "verify.analysis.stability": frozenset({"ILL_CONDITIONED_SCALED", "StabilityResult"}),
    "verify.analysis.forces": frozenset({"ForceResult"}),
    "verify.analysis.stiffness": frozenset({"EQUAL_EA_NOTE", "ElasticSolution"}),
    "verify.analysis.virtual_work": frozenset({"DISPLAY_ZERO_RTOL", "VirtualWorkCalc"}),
    "verify.analysis.sections": frozenset(
        {"SectionSolution", "SectionCut", "MOMENTS", "FORCES_NORMAL", "LEAST_SQUARES"}
    ),
    "verify.analysis.cut_sheets": frozenset(
        {
            "CutSheet",
            "CutMember",
            "Equation",
            "ExternalForce",
            "FreeBodyDrawing",
            "OverallRow",
            "ReactionsSheet",
            "SheetSet",
            "Term",
            "MOMENTS",
            "FORCES_NORMAL",
            "LEAST_SQUARES",
        }
    ),
    "verify.analysis.exact": frozenset({"ExactValue", "ExactValues"}),
}


def _analysis_imports(path: Path) -> list[tuple[int, str, str]]:
    """(line, module, name) of every import from verify.analysis in one file, at any depth."""
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    found = []
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and node.module:
            module = node.module
            if node.level:  # relative: resolve against verify.report
                module = "verify." + module if node.level == 2 else "verify.report." + module
            if module == "verify.analysis" or module.startswith("verify.analysis."):
                for alias in node.names:
                    if module == "verify.analysis":
                        found.append((node.lineno, f"verify.analysis.{alias.name}", "*module*"))
                    else:
                        found.append((node.lineno, module, alias.name))
        elif isinstance(node, ast.Import):
            for alias in node.names:
                if alias.name.startswith("verify.analysis"):
                    found.append((node.lineno, alias.name, "*module*"))
    return found


REPORT_FILES = sorted(REPORT.glob("*.py"))


@pytest.mark.parametrize("path", REPORT_FILES, ids=lambda p: p.name)
def test_report_modules_import_no_solver(path: Path) -> None:
    bad = [
        f"{path.name}:{line} imports {name} from {module}"
        for line, module, name in _analysis_imports(path)
        if name not in ALLOWED.get(module, frozenset())
    ]
    assert not bad, "a report module imports analysis code it may not call:\n" + "\n".join(bad)


def test_the_import_check_catches_a_solver(tmp_path: Path) -> None:
    """The parser sees imports inside functions, whole-module imports and relative imports."""
    sample = tmp_path / "sample.py"
    sample.write_text(
        "from verify.analysis.cut_sheets import CutSheet\n"
        "def f():\n"
        "    from verify.analysis.sections import solve_cut\n"
        "    import verify.analysis.joints\n"
        "    from ..analysis.joints import solve_reactions\n",
        encoding="utf-8",
    )
    found = {(m, n) for _, m, n in _analysis_imports(sample)}
    assert ("verify.analysis.sections", "solve_cut") in found
    assert ("verify.analysis.joints", "*module*") in found
    assert ("verify.analysis.joints", "solve_reactions") in found
    allowed = [(m, n) for m, n in found if n in ALLOWED.get(m, frozenset())]
    assert allowed == [("verify.analysis.cut_sheets", "CutSheet")]
