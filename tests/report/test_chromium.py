"""The HTML report renders in a real headless browser (docs/reliability.md G14)."""

from __future__ import annotations

import shutil
import struct
import subprocess
import zlib
from pathlib import Path

import pytest

from specguard.report import html as html_report

from .figset import demo_report
from .test_html_safety import DANGEROUS_TAGS, injected_report, walk

CHROMIUM = shutil.which("chromium")
pytestmark = pytest.mark.skipif(CHROMIUM is None, reason="Debian chromium is not installed (apt-get install chromium)")

FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
    "--disable-quic",
]


def _chromium(tmp_path: Path, page: Path, *extra: str) -> subprocess.CompletedProcess:
    profile = tmp_path / "profile"
    profile.mkdir(exist_ok=True)
    return subprocess.run(
        [CHROMIUM, *FLAGS, f"--user-data-dir={profile}", *extra, page.as_uri()],
        capture_output=True,
        timeout=90,
        cwd=tmp_path,
    )


def decode_png(data: bytes) -> tuple[int, int, int, list[bytes]]:
    """(width, height, channels, rows) of an 8-bit RGB/RGBA/grey PNG, unfiltered (RFC 2083)."""
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    pos, idat, width = 8, b"", 0
    while pos < len(data):
        length, kind = struct.unpack(">I4s", data[pos : pos + 8])
        body = data[pos + 8 : pos + 8 + length]
        if kind == b"IHDR":
            width, height, depth, colour, _, _, interlace = struct.unpack(">IIBBBBB", body)
            assert depth == 8 and interlace == 0, (depth, interlace)
            channels = {0: 1, 2: 3, 4: 2, 6: 4}[colour]
        elif kind == b"IDAT":
            idat += body
        elif kind == b"IEND":
            break
        pos += 12 + length
    raw = zlib.decompress(idat)
    stride = width * channels
    rows, prev = [], bytearray(stride)
    for y in range(height):
        f = raw[y * (stride + 1)]
        line = bytearray(raw[y * (stride + 1) + 1 : (y + 1) * (stride + 1)])
        for i in range(stride):
            a = line[i - channels] if i >= channels else 0
            b = prev[i]
            c = prev[i - channels] if i >= channels else 0
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
        rows.append(bytes(line))
        prev = line
    return width, height, channels, rows


def test_report_renders_in_headless_chromium(tmp_path: Path):
    page = tmp_path / "report.html"
    page.write_text(html_report.render(demo_report()), encoding="utf-8")
    shot = tmp_path / "shot.png"
    done = _chromium(tmp_path, page, "--window-size=900,1400", f"--screenshot={shot}")
    assert done.returncode == 0, done.stderr[-2000:]
    assert shot.exists() and shot.stat().st_size > 10_000
    width, height, channels, rows = decode_png(shot.read_bytes())
    assert (width, height) == (900, 1400)
    colours, dark = set(), 0
    for row in rows[::4]:
        for x in range(0, width * channels, channels * 4):
            px = row[x : x + 3] if channels >= 3 else row[x : x + 1] * 3
            colours.add(px)
            dark += sum(px) < 600
    samples = len(rows[::4]) * len(range(0, width * channels, channels * 4))
    assert len(colours) >= 32, len(colours)  # text, tables and plots, not a blank page
    assert dark / samples >= 0.02, dark / samples


def test_browser_dom_of_injected_report_has_no_active_content(tmp_path: Path):
    page = tmp_path / "injected.html"
    page.write_text(html_report.render(injected_report()), encoding="utf-8")
    done = _chromium(tmp_path, page, "--dump-dom")
    assert done.returncode == 0, done.stderr[-2000:]
    dom = done.stdout.decode("utf-8", "replace")
    assert "<body" in dom and "specguard review report" in dom
    # The browser's own DOM after parsing: no active element, no event attribute.
    w = walk(dom)
    names = {t for t, _ in w.tags}
    assert not names & DANGEROUS_TAGS, names & DANGEROUS_TAGS
    for tag, attrs in w.tags:
        for key, value in attrs:
            assert not key.startswith("on"), (tag, key, value)
            if key in ("href", "src", "xlink:href", "action"):
                v = (value or "").strip().lower()
                assert v.startswith("#") or v.startswith("https://example.org/"), (tag, key, value)
