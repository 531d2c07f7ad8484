"""The 'Did you mean' hint every bad-input message may carry."""

from __future__ import annotations

import pytest

from verify.errors import did_you_mean


@pytest.mark.parametrize(
    ("name", "candidates", "hint"),
    [
        ("dead", ["Dead", "live"], " Did you mean 'Dead'?"),  # the same name in other letter case
        (
            "Forces",
            ["Notes", "Member forces"],
            " Did you mean 'Member forces' or 'Notes'?",
        ),  # contained first
        ("U1U3", ["L1L2", "U1U2"], " Did you mean 'U1U2'?"),  # close spelling
        ("zz", ["a", "b"], ""),
    ],
)
def test_did_you_mean(name, candidates, hint):
    assert did_you_mean(name, candidates) == hint
