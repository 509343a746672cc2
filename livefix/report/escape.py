"""Escaping for every text that leaves livefix: HTML, Markdown, XML and the terminal.

Anything from the stream (TXT sentences, proprietary text, refused lines) or from site notes can
hold markup or terminal control sequences. Each output escapes it here so that it shows inert.
Control characters are never passed on: they become visible `\\xNN` text.
"""

from __future__ import annotations

import re

# C0 controls except TAB/LF, DEL, C1 controls, and bidi/format overrides that can hide text.
_CONTROL = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u200b-\u200f\u202a-\u202e\u2066-\u2069\ufeff]")
_CONTROL_NL = re.compile("[\x00-\x1f\x7f-\x9f\u200b-\u200f\u202a-\u202e\u2066-\u2069\ufeff]")
# Characters XML 1.0 forbids entirely (even as references), plus surrogates and U+FFFE/FFFF.
_XML_BAD = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ud800-\udfff\ufffe\uffff]")
# Markdown punctuation, raw-HTML starts (< >) and entity starts (&): CommonMark lets a backslash make
# any ASCII punctuation literal, so text stays readable as plain text too (no &gt; entities)
# (parentheses need none once brackets are escaped: no link can form)
_MD_SPECIAL = re.compile(r"([\\`*_\[\]|~<>&])")
_MD_LEAD = re.compile(r"^(\s*\d*)([-+=.)])(?=\s|$|[-=]+\s*$)|^(\s*)(#)")  # list item, setext, rule, heading


def _visible(m: re.Match[str]) -> str:
    code = ord(m.group(0))
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def as_text(value: object) -> str:
    """Any value as str; bytes decoded leniently so nothing is lost."""
    if isinstance(value, bytes | bytearray):
        return bytes(value).decode("utf-8", errors="backslashreplace")
    return "" if value is None else str(value)


def term_text(value: object, *, keep_newlines: bool = False) -> str:
    """Text safe to print on a terminal: no escape sequences, no bell, no cursor movement."""
    pattern = _CONTROL if keep_newlines else _CONTROL_NL
    return pattern.sub(_visible, as_text(value))


def html_text(value: object) -> str:
    """Text for HTML element content or a quoted attribute."""
    import html  # here: the JSON and terminal paths never escape HTML

    return html.escape(term_text(value), quote=True)


def xml_text(value: object) -> str:
    """Text that XML 1.0 can hold; ElementTree then escapes & < > and quotes itself."""
    return _XML_BAD.sub(_visible, term_text(value, keep_newlines=True))


def md_text(value: object) -> str:
    """Text for a Markdown paragraph or table cell: markup characters and raw HTML made inert."""
    # leading blanks would start an indented code block (CommonMark 0.31 section 4.4); they carry nothing
    text = _MD_SPECIAL.sub(r"\\\1", term_text(value).lstrip(" \t"))
    return _MD_LEAD.sub(lambda m: f"{m.group(1) or m.group(3) or ''}\\{m.group(2) or m.group(4)}", text)
