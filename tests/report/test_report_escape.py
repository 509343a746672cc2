"""Escaping helpers: stream text must reach HTML, Markdown, XML and the terminal inert."""

import html
import html.parser
import re
import xml.etree.ElementTree as ET

from hypothesis import given, settings
from hypothesis import strategies as st
from markdown_it import MarkdownIt

from livefix.report.escape import html_text, md_text, term_text, xml_text

HOSTILE = "<script>alert(1)</script>\x1b[2J\x1b]0;title\x07\x9b31m&\"'\u202e"


class _Collect(html.parser.HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.tags: list[str] = []
        self.text = ""

    def handle_starttag(self, tag, attrs):  # noqa: ANN001
        self.tags.append(tag)

    def handle_data(self, data):  # noqa: ANN001
        self.text += data


def test_html_text_has_no_tags_for_the_stdlib_parser():
    # reference: Python's html.parser sees no element and gives back the visible text
    p = _Collect()
    p.feed(f"<p>{html_text(HOSTILE)}</p>")
    assert p.tags == ["p"]
    assert "<script>" in p.text and "\x1b" not in p.text and "\\x1b" in p.text


def test_terminal_text_has_no_control_characters():
    out = term_text(HOSTILE)
    assert not any(ord(c) < 0x20 or 0x7f <= ord(c) <= 0x9f for c in out)
    assert "\\x1b[2J" in out and "\\u202e" in out  # visible, nothing lost


@given(st.text())
def test_xml_text_always_parses(s):
    # reference: xml.etree parses what ElementTree serialises after xml_text cleaning
    el = ET.Element("a", {"v": xml_text(s)})
    el.text = xml_text(s)
    back = ET.fromstring(ET.tostring(el, encoding="unicode"))
    assert back.get("v") is not None


@given(st.text())
def test_terminal_text_never_passes_escape(s):
    assert "\x1b" not in term_text(s) and "\x07" not in term_text(s)


def test_markdown_text_neutralises_markup():
    out = md_text("<img src=x onerror=y> *bold* [link](http://x) | cell")
    # backslash escapes, never HTML entities (issue 16; CommonMark 0.31 section 2.4)
    assert "&lt;" not in out and r"\<img" in out
    assert r"\*bold\*" in out and r"\[link\]" in out and r"\|" in out


_COMMONMARK = MarkdownIt("commonmark")  # markdown-it-py: a CommonMark reference renderer (comes with rich)
_MD_CHARS = st.sampled_from(list(" -+=.)#*_`[]()<>&!|~\\:/ax1"))


@settings(max_examples=500)
@given(st.text(alphabet=_MD_CHARS, max_size=12))
def test_markdown_text_renders_as_the_same_plain_text(s):
    # A CommonMark renderer makes no element of it but the paragraph, and shows the text as given
    out = _COMMONMARK.render(md_text(s))
    assert set(re.findall(r"</?([a-z0-9]+)", out)) <= {"p"}
    assert html.unescape(re.sub(r"</?p>", "", out).strip()) == s.strip()


def test_bytes_are_kept_visible():
    assert term_text(b"\xff$GPTXT") == "\\xff$GPTXT"
