"""Time reading a 50-page PDF claims table (written here by fpdf2, 40 members a page).

.venv/bin/python bench/claims_pdf.py [PAGES]
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

from fpdf import FPDF

from verify.io.case import build_model
from verify.io.claims import read_claims


def main() -> None:
    pages = int(sys.argv[1]) if len(sys.argv) > 1 else 50
    per_page = 40
    count = pages * per_page
    joints = {f"J{k}": [float(k), float(k % 2)] for k in range(count + 1)}
    members = {f"M{k}": [f"J{k}", f"J{k + 1}"] for k in range(count)}
    model = build_model(
        {
            "units": {"length": "m", "force": "kN"},
            "joints": joints,
            "members": members,
            "supports": {"J0": ["x", "y"], f"J{count}": ["y"]},
            "loads": {"dead": {"J1": [0.0, -1.0]}, "snow": {"J1": [0.0, -1.0]}},
        },
        source="bench.toml",
    )
    pdf = FPDF()
    pdf.set_font("Helvetica", size=8)
    for p in range(pages):
        pdf.add_page()
        pdf.text(15, 12, f"Member forces - sheet {p + 1} of {pages}")
        for x, text in zip((20, 60, 100), ("Member", "dead (kN)", "snow (kN)"), strict=True):
            pdf.text(x, 24, text)
        for r in range(per_page):
            k = p * per_page + r
            for x, text in zip(
                (20, 60, 100), (f"M{k}", f"{k * 0.37:.2f}", f"{-k * 0.11:.2f}"), strict=True
            ):
                pdf.text(x, 30 + 6 * r, text)
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "calc.pdf"
        pdf.output(str(path))
        start = time.perf_counter()
        table = read_claims(path, model)
        took = time.perf_counter() - start
    print(f"{pages} pages, {len(table.values)} claims: {took:.2f} s")


if __name__ == "__main__":
    main()
