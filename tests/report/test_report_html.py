"""The customer's HTML report: verdict first, the site record's sections in order, plots, cautions in
the footer, self-contained (no outside reference, no script), and a print style sheet for A4."""

from __future__ import annotations

import html.parser
import json
from pathlib import Path

import pytest

from livefix.cli import main
from livefix.report import facts
from livefix.report.plots import PLOTS

REPO = Path(__file__).resolve().parents[2]
RECORDING = REPO / "recordings" / "building-5min.lfr"  # a built-in scenario's recording (make recordings)
SITE = """name = "North depot <roof> & mast"
antenna_model = "Multi-band helical"
antenna_height_m = 0.125
operator = "Technician on duty"
"""


class Page(html.parser.HTMLParser):
    """Tags in order with their ids, every src/href, and the text of <style>."""

    def __init__(self) -> None:
        super().__init__()
        self.ids: list[str] = []
        self.tags: list[str] = []
        self.refs: list[str] = []
        self.style = ""
        self._in_style = False

    def handle_starttag(self, tag, attrs):  # noqa: ANN001
        self.tags.append(tag)
        a = dict(attrs)
        if a.get("id"):
            self.ids.append(a["id"])
        self.refs += [v for k, v in attrs if k in ("src", "href", "xlink:href", "action", "data") and v]
        self._in_style = tag == "style"

    def handle_endtag(self, tag):  # noqa: ANN001
        self._in_style = False

    def handle_data(self, data):  # noqa: ANN001
        if self._in_style:
            self.style += data


@pytest.fixture(scope="module")
def written(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("report")
    (out / "site.toml").write_text(SITE, encoding="utf-8")
    assert main(["report", str(RECORDING), "-o", str(out), "--site", str(out / "site.toml"), "--jobs", "1"]) == 0
    return out


@pytest.fixture(scope="module")
def page(written) -> tuple[str, Page]:
    text = (written / "report.html").read_text(encoding="utf-8")
    p = Page()
    p.feed(text)
    return text, p


def test_verdict_first_then_sections_in_order_then_plots_and_footer(page, written):
    text, p = page
    report = json.loads((written / "report.json").read_text())
    assert report["receivers"][0]["analysis"]["internal_errors"] == 0
    section_ids = [s.id for s in facts.sections(report, report["receivers"][0])]
    order = ["summary", "verdict", *section_ids, "plots", *(f"plot-{pid}" for pid, _, _ in PLOTS), "safety"]
    positions = [p.ids.index(i) for i in order]
    assert positions == sorted(positions)
    assert p.ids.count("verdict") == 1 and text.index('id="verdict"') < text.index('id="measurement"')
    assert "no limits set" in text[: text.index('id="measurement"')]  # no profile: the verdict says so
    for pid, _, _ in PLOTS:  # every plot drawn as inline SVG for a scenario recording, none a note
        assert f'<figure id="plot-{pid}"><svg' in text, pid
    assert 'id="plot-periodogram"' in text and 'id="plot-arc-map"' in text  # the reflection section's figures


def test_site_text_is_escaped_and_shown(page):
    text, _ = page
    assert "North depot &lt;roof&gt; &amp; mast" in text and "<roof>" not in text
    assert "Technician on duty" in text and "0.125 m" in text


def test_cautions_are_in_the_footer(page):
    text, _ = page
    footer = text[text.index('<footer id="safety">'):]
    low = footer.lower()
    for words in ("work at height", "surge", "not a survey certificate", "licensed practice"):
        assert words in low, words


def test_self_contained_without_scripts(page):
    text, p = page
    assert "script" not in p.tags and "iframe" not in p.tags and "link" not in p.tags
    assert not [r for r in p.refs if not r.startswith("#")]  # only in-page references (SVG clip paths)
    assert "Content-Security-Policy" in text and "default-src 'none'" in text
    assert "@import" not in p.style and "url(" not in p.style
    # ids are unique across the inline plots (each plot's clip paths and glyphs prefixed)
    assert len(p.ids) == len(set(p.ids))


def test_print_style_sheet_for_a4(page):
    _, p = page
    css = p.style.replace(" ", "")
    assert "@page{size:A4" in css and "@mediaprint{" in css
    assert "break-inside:avoid" in css and "page-break-inside:avoid" in css
    assert "figuresvg{width:100%" in css  # plots scaled to the page width when printed
