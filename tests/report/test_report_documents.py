"""Report documents: JSON/Markdown/HTML content, cautions, escaping, and the HTML in headless chromium."""

import html.parser
import json
import os
import re
import shutil
import subprocess

import pytest
from report_sample_data import sample_analysis

from livefix import __version__
from livefix.check.profile import evaluate, load_profile
from livefix.report.document import CAUTIONS, ReceiverRun, build_report
from livefix.report.write import write_all

HOSTILE = "<script>document.title='pwned'</script>\x1b[31mred\x1b[0m"


def _report(n=1):
    prof = load_profile("commission")
    runs = []
    for i in range(n):
        a = sample_analysis(i + 1)
        a["events"].append({"time": "2026-01-01T00:00:01Z", "kind": "note", "text": f"TXT {HOSTILE}"})
        runs.append(ReceiverRun(f"rx{i + 1}", f"file{i}.lfr", a, evaluate(prof, a)))
    return build_report(runs, profile=prof, site=f"Demo roof {HOSTILE}", notes="| a | b |", started=0.0, ended=60.0)


class _Tags(html.parser.HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.tags: list[str] = []

    def handle_starttag(self, tag, attrs):  # noqa: ANN001
        self.tags.append(tag)


def test_documents_carry_meta_and_cautions(tmp_path):
    paths = write_all(_report(2), tmp_path, junit=True)
    assert sorted(p.name for p in paths) == ["junit.xml", "report.html", "report.json", "report.md"]
    doc = json.loads((tmp_path / "report.json").read_text())
    assert doc["meta"]["livefix_version"] == __version__ and doc["meta"]["profile"]["name"] == "commission"
    assert doc["verdict"] in ("pass", "fail") and len(doc["comparison"]["receivers"]) == 2
    md = (tmp_path / "report.md").read_text()
    page = (tmp_path / "report.html").read_text()
    for text in (md, page):
        assert "work at height" in text.lower() and "surge" in text and "not a survey certificate" in text
        assert "licensed practice" in text and "Side by side" in text
    assert len(CAUTIONS) == 4


def test_stream_text_is_inert_in_markdown_and_html(tmp_path):
    write_all(_report(), tmp_path)
    md = (tmp_path / "report.md").read_text()
    page = (tmp_path / "report.html").read_text()
    # Markdown escapes with backslashes, never HTML entities (issue 16): CommonMark 0.31 section 2.4,
    # "any ASCII punctuation character may be backslash-escaped"
    assert not re.search(r"(?<!\\)<script", md) and "\x1b" not in md and "\\<script\\>" in md
    assert "&lt;" not in md and "&gt;" not in md and "&amp;" not in md
    assert "<script" not in page.lower() and "\x1b" not in page
    p = _Tags()
    p.feed(page)
    assert "script" not in p.tags and p.tags.count("svg") >= 5  # the five plots, inline


def test_json_has_no_nan(tmp_path):
    r = _report()
    r["receivers"][0]["analysis"]["position"]["cep50_m"] = float("nan")
    write_all(r, tmp_path, formats=("json",))
    json.loads((tmp_path / "report.json").read_text(), parse_constant=lambda c: pytest.fail(c))


@pytest.mark.skipif(shutil.which("chromium") is None, reason="chromium not installed")
def test_html_renders_in_headless_chromium(tmp_path):
    write_all(_report(2), tmp_path, formats=("html",))
    page = tmp_path / "report.html"
    args = ["chromium", "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
            "--disable-background-networking", "--disable-component-update", "--disable-sync",
            f"--user-data-dir={tmp_path / 'profile'}"]
    env = {**os.environ, "HOME": str(tmp_path)}
    dom = subprocess.run(args + ["--dump-dom", page.as_uri()], capture_output=True, text=True, timeout=90,
                         env=env)
    assert dom.returncode == 0, dom.stderr[-2000:]
    out = dom.stdout
    for pid in ("scatter", "sky", "cn0", "signal-time", "allan"):  # the sample has no positions over time
        assert f'id="plot-{pid}"><svg' in out  # drawn as inline SVG, not a "not drawn" note
    assert "<title>livefix Site record" in out and "<title>pwned</title>" not in out  # no script ran
    assert "&lt;script&gt;" in out and "\x1b" not in out  # the stream text shows as text
