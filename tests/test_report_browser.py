"""The HTML review report opened in a real browser (headless Chromium, Debian package `chromium`).

Checks: the DOM holds the diagram, the findings and the member table; the page asks for nothing
on the network and runs no script; a screenshot is not blank and shows the status colour of the
planted sign error. Skipped, with the reason shown, only when no chromium binary is installed.

Chromium's own background services also try the network; the flags below switch them off where
possible and send whatever remains to a closed local port (127.0.0.1:9) with every host name
unresolvable, so nothing leaves the machine. Those service requests are told apart from page
requests by host.
"""

from __future__ import annotations

import re
import shutil
import struct
import subprocess
import zlib
from pathlib import Path

import pytest

from verify.analysis.pipeline import analyse
from verify.compare.diagnose import compare_claims
from verify.io.case import read_case
from verify.io.claims import read_claims
from verify.report.diagram import STATUS_STYLES
from verify.report.document import render_document

ROOT = Path(__file__).resolve().parent.parent
CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
pytestmark = [
    pytest.mark.slow,
    pytest.mark.skipif(
        CHROMIUM is None, reason="chromium is not installed (apt-get install -y chromium)"
    ),
]
BROWSER_SERVICE_HOSTS = ("google.com", "googleapis.com", "gvt1.com", "gstatic.com", "chromium.org")
FLAGS = [
    "--headless",
    "--disable-gpu",
    "--no-sandbox",
    "--no-first-run",
    "--hide-scrollbars",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--disable-default-apps",
    "--disable-extensions",
    "--no-pings",
    "--disable-domain-reliability",
    "--proxy-server=127.0.0.1:9",
    "--host-resolver-rules=MAP * ~NOTFOUND",
]


@pytest.fixture(scope="module")
def report(tmp_path_factory: pytest.TempPathFactory) -> Path:
    model = read_case(ROOT / "cases/canal-footbridge/case.toml")
    claims = read_claims(ROOT / "cases/canal-footbridge/claims.csv", model)
    review = compare_claims(analyse(model), claims)
    path = tmp_path_factory.mktemp("browser") / "review.html"
    path.write_text(render_document(review, generated="2000-01-01"), encoding="utf-8")
    return path


def _chromium(args: list[str], profile: Path) -> subprocess.CompletedProcess[str]:
    assert CHROMIUM is not None
    return subprocess.run(
        [CHROMIUM, *FLAGS, f"--user-data-dir={profile}", *args],
        capture_output=True,
        text=True,
        timeout=180,
        check=False,
    )


def test_dom_has_diagram_findings_table_and_no_network(report: Path, tmp_path: Path) -> None:
    """Chromium renders the report with its diagram, findings and table, and the page fetches
    nothing."""
    run = _chromium(
        ["--enable-logging=stderr", "--v=1", "--dump-dom", report.as_uri()], tmp_path / "profile"
    )
    dom = run.stdout
    assert "<svg" in dom and "<line" in dom, "the diagram did not reach the DOM"
    assert 'id="findings"' in dom and "Two member labels swapped" in dom
    assert 'class="members"' in dom and "U2L2" in dom and "sign-flip" in dom
    assert "<script" not in dom.lower()
    urls = re.findall(r"https?://[^\s\"'<>]+", run.stderr)
    page_requests = [
        u for u in urls if not any(host in u.split("/")[2] for host in BROWSER_SERVICE_HOSTS)
    ]
    assert page_requests == [], f"network requests from the page: {page_requests[:5]}"


def test_report_references_nothing_outside_the_file(report: Path) -> None:
    """No src/href/url()/@import/script/link: nothing a browser could fetch, and a CSP that forbids
    it."""
    html = report.read_text(encoding="utf-8")
    assert not re.search(r"\s(src|href|srcset|action)\s*=", html, re.IGNORECASE)
    assert not re.search(r"url\(|@import|<script|<link|<iframe|<object|<embed", html, re.IGNORECASE)
    assert "default-src 'none'" in html


def _png_pixels(data: bytes) -> tuple[int, int, list[bytes]]:
    """Decode an 8-bit RGB/RGBA PNG (what Chromium writes) into rows of raw pixels."""
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    pos, idat, width, height, colour, depth = 8, b"", 0, 0, 0, 0
    while pos < len(data):
        length, kind = struct.unpack(">I4s", data[pos : pos + 8])
        body = data[pos + 8 : pos + 8 + length]
        if kind == b"IHDR":
            width, height, depth, colour = struct.unpack(">IIBB", body[:10])
        elif kind == b"IDAT":
            idat += body
        pos += 12 + length
    assert depth == 8 and colour in (2, 6), (depth, colour)
    bpp = 3 if colour == 2 else 4
    raw = zlib.decompress(idat)
    stride = width * bpp
    rows: list[bytes] = []
    prev = bytearray(stride)
    for y in range(height):
        f = raw[y * (stride + 1)]
        line = bytearray(raw[y * (stride + 1) + 1 : (y + 1) * (stride + 1)])
        for i in range(stride):
            a = line[i - bpp] if i >= bpp else 0
            b = prev[i]
            c = prev[i - bpp] if i >= bpp else 0
            if f == 1:
                line[i] = (line[i] + a) & 255
            elif f == 2:
                line[i] = (line[i] + b) & 255
            elif f == 3:
                line[i] = (line[i] + (a + b) // 2) & 255
            elif f == 4:
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                line[i] = (line[i] + (a if pa <= pb and pa <= pc else b if pb <= pc else c)) & 255
        rows.append(bytes(line) if bpp == 3 else bytes(v for k, v in enumerate(line) if k % 4 != 3))
        prev = line
    return width, height, rows


def test_screenshot_is_not_blank_and_shows_the_sign_colour(report: Path, tmp_path: Path) -> None:
    """The screenshot has many colours, a fair share of ink, and the colour that marks a reversed
    sign."""
    shot = tmp_path / "out.png"
    _chromium(
        [f"--screenshot={shot}", "--window-size=1200,2000", report.as_uri()], tmp_path / "profile"
    )
    assert shot.exists(), "chromium wrote no screenshot"
    width, height, rows = _png_pixels(shot.read_bytes())
    assert (width, height) == (1200, 2000)
    colours: set[bytes] = set()
    ink = 0
    for row in rows[::4]:
        for x in range(0, width * 3, 3 * 2):
            px = row[x : x + 3]
            colours.add(px)
            ink += px != b"\xff\xff\xff"
    assert len(colours) > 50
    assert ink > 0.02 * (height // 4) * (width // 2)
    sign = bytes.fromhex(STATUS_STYLES["sign"].colour[1:])
    assert any(row[k : k + 3] == sign for row in rows for k in range(0, width * 3, 3)), (
        "the sign-reversed member (U2L2 in 'dead') is not drawn in its status colour"
    )
