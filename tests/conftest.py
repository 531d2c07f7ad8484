"""Shared test set-up: makes tests/trussgen.py importable from every test folder."""

from __future__ import annotations

import sys
from pathlib import Path

# tests/ has no __init__.py (pytest's default rootdir-less layout), so files in tests/reference/
# would not see trussgen.py without this.
_TESTS = str(Path(__file__).resolve().parent)
if _TESTS not in sys.path:
    sys.path.insert(0, _TESTS)

import os  # noqa: E402

import pytest  # noqa: E402  (after the sys.path set-up above, which must run first)
from hypothesis import settings  # noqa: E402

# CI runs the same examples every time (a property failure there must be reproducible); local
# runs explore new random examples. Both keep the per-test example counts set in the tests.
settings.register_profile("ci", derandomize=True, print_blob=True)
if os.environ.get("CI"):
    settings.load_profile("ci")


@pytest.fixture
def write_files(tmp_path: Path):
    """Write {name: text} into a fresh folder; returns the path of the first file written."""

    def write(files: dict[str, str]) -> Path:
        first = None
        for name, text in files.items():
            path = tmp_path / name
            path.write_text(text, encoding="utf-8")
            first = first or path
        assert first is not None
        return first

    return write
