"""The HTML report of a built-in scenario's recording in a real headless browser (Debian's chromium):
a screenshot that is not blank and has the size asked for, a print to PDF on A4 pages (the print
style sheet), and a page that refers to nothing outside itself. Skipped where chromium is absent
(.ci/run installs it)."""

from __future__ import annotations

import html.parser
import os
import shutil
import subprocess
from pathlib import Path

import pytest

from livefix.cli import main

REPO = Path(__file__).resolve().parents[2]
RECORDING = REPO / "recordings" / "building-5min.lfr"  # the obstructed-building scenario (make recordings)
CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
WIDTH, HEIGHT = 1280, 1800
A4_PT = (595.28, 841.89)  # ISO 216 A4, 210 mm x 297 mm, in PostScript points (72 per inch)

pytestmark = pytest.mark.skipif(CHROMIUM is None, reason="chromium not installed (Debian package chromium; "
                                                         ".ci/run installs it)")


def _chromium(tmp: Path, *extra: str) -> subprocess.CompletedProcess:
    args = [str(CHROMIUM), "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
            "--disable-background-networking", "--disable-component-update", "--disable-sync",
            "--hide-scrollbars", f"--user-data-dir={tmp / 'profile'}", *extra]
    return subprocess.run(args, capture_output=True, text=True, timeout=120, env={**os.environ, "HOME": str(tmp)})


@pytest.fixture(scope="module")
def page(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("browser")
    assert main(["report", str(RECORDING), "-o", str(out), "--format", "html", "--site", "Building test roof",
                 "--jobs", "1"]) == 0
    return out / "report.html"


class _Refs(html.parser.HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.refs: list[str] = []

    def handle_starttag(self, tag, attrs):  # noqa: ANN001
        self.refs += [v for k, v in attrs if k in ("src", "href", "xlink:href", "action", "data", "poster") and v]


def test_page_has_no_outside_references(page):
    p = _Refs()
    p.feed(page.read_text(encoding="utf-8"))
    assert p.refs  # the inline plots do refer to their own clip paths ...
    assert not [r for r in p.refs if r.lower().startswith(("http:", "https:", "//", "file:", "data:"))]
    assert all(r.startswith("#") for r in p.refs)  # ... and to nothing else


def test_screenshot_is_not_blank_and_sized_as_asked(page, tmp_path):
    from PIL import Image

    shot = tmp_path / "report.png"
    res = _chromium(tmp_path, f"--screenshot={shot}", f"--window-size={WIDTH},{HEIGHT}", page.as_uri())
    assert res.returncode == 0 and shot.exists(), res.stderr[-2000:]
    head = shot.read_bytes()[:24]
    assert head[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (PNG spec, ISO/IEC 15948)
    assert int.from_bytes(head[16:20], "big") == WIDTH and int.from_bytes(head[20:24], "big") == HEIGHT  # IHDR
    with Image.open(shot) as im:
        grey = im.convert("L")
        hist = grey.histogram()
    dark = sum(hist[:128]) / (WIDTH * HEIGHT)
    assert 0.005 < dark < 0.5  # text, tables and plots on a light page: neither blank nor a black screen
    assert sum(1 for n in hist if n) > 32  # anti-aliased text and plot colours, not a flat fill
    if os.environ.get("LIVEFIX_KEEP_SHOT"):  # to look at it: LIVEFIX_KEEP_SHOT=/path/shot.png
        shutil.copy(shot, os.environ["LIVEFIX_KEEP_SHOT"])


def test_print_to_pdf_gives_a4_pages(page, tmp_path):
    from pypdf import PdfReader

    pdf = tmp_path / "print.pdf"
    res = _chromium(tmp_path, "--no-pdf-header-footer", f"--print-to-pdf={pdf}", page.as_uri())
    assert res.returncode == 0 and pdf.exists(), res.stderr[-2000:]
    reader = PdfReader(pdf)
    assert len(reader.pages) >= 2  # the record and its plots do not fit one sheet
    for pg in reader.pages:
        w, h = float(pg.mediabox.width), float(pg.mediabox.height)
        assert abs(w - A4_PT[0]) < 1.0 and abs(h - A4_PT[1]) < 1.0, (w, h)  # @page size A4 honoured
    text = "".join(pg.extract_text() for pg in reader.pages)
    assert "Building test roof" in text and "no limits set" in text and "Cautions" in text
