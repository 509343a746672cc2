"""Pieces of the HTML report: the style sheets, tables, badges and inline figures.

Why apart from html.py: the page's order (what a customer reads first) is html.py's business;
how one table or one figure is written, and how it prints, is the same everywhere.
"""

from __future__ import annotations

import re
from typing import Any

from livefix.report.escape import html_text as h
from livefix.report.facts import Section, verdict_text

# Screen: one readable column, fact tables as cards in a grid. Print: A4 with margins, no table or
# figure split across pages where it fits on one, figures scaled to the page width, no grid.
CSS = """
:root{--ink:#1d1d1d;--mute:#555;--line:#c8c8c8;--pass:#1a6b1a;--fail:#a40000;--warn:#7a5a00}
body{font-family:system-ui,-apple-system,"Segoe UI",sans-serif;margin:1.2em auto;max-width:74em;padding:0 1em;
color:var(--ink);line-height:1.4;font-size:15px}
h1{margin:.1em 0 .1em;font-size:1.6em} h2{margin:1.2em 0 .4em;font-size:1.25em;border-bottom:1px solid var(--line)}
h3{margin:.2em 0 .3em;font-size:1.05em}
table{border-collapse:collapse;margin:.3em 0 .6em;width:100%} td,th{border:1px solid var(--line);
padding:.2em .45em;text-align:left;vertical-align:top;overflow-wrap:anywhere} th{background:#f0f0f0;font-weight:600}
td.label{width:42%;color:var(--mute)}
.verdict{display:inline-block;padding:.15em .9em;border:3px solid;font-weight:700;font-size:1.5em;letter-spacing:.03em}
.pass{color:var(--pass)} .fail{color:var(--fail)} .incomplete,.inconclusive,.none{color:var(--warn)}
.summary{border:1px solid var(--line);padding:.6em 1em;margin:.6em 0 1em;background:#fafafa}
.summary table{max-width:48em} .subtitle{color:var(--mute);margin:0 0 .4em}
.facts{display:grid;grid-template-columns:repeat(auto-fill,minmax(30em,1fr));gap:.2em 1.4em}
.fact{break-inside:avoid;page-break-inside:avoid} .note{color:var(--mute);font-size:.9em;margin:.1em 0 .5em}
.plots{display:flex;flex-wrap:wrap;gap:.6em 1.2em}
figure{margin:.4em 0;break-inside:avoid;page-break-inside:avoid;max-width:100%}
figure svg{max-width:100%;height:auto;display:block} figcaption{font-size:.9em;color:var(--mute)}
footer{margin-top:2em;border-top:2px solid #c4a000;padding-top:.4em;font-size:.92em}
footer h2{border:0;margin-top:.2em} .caution li{margin:.15em 0}
@page{size:A4;margin:14mm 12mm 16mm 12mm}
@media print{
 body{max-width:none;margin:0;padding:0;font-size:9.5pt}
 .facts{display:block} .plots{display:block}
 h2,h3{break-after:avoid;page-break-after:avoid}
 table,figure,.fact,.summary,footer{break-inside:avoid;page-break-inside:avoid}
 figure svg{width:100%;max-height:125mm}
 .summary{background:none}
 .pagebreak{break-before:page;page-break-before:always}
}
"""


def table(head: list[str] | None, rows: list[list[str]], cls: str = "") -> str:
    """head and rows are already-escaped HTML cell contents."""
    th = "" if not head else "<thead><tr>" + "".join(f"<th>{c}</th>" for c in head) + "</tr></thead>"
    body = "".join("<tr>" + "".join(f"<td>{c}</td>" for c in r) + "</tr>" for r in rows)
    return f'<table{f" class={chr(34)}{cls}{chr(34)}" if cls else ""}>{th}<tbody>{body}</tbody></table>'


def pairs(rows: list[tuple[str, str]]) -> str:
    """(label, text) rows as a two-column table, both escaped."""
    body = "".join(f'<tr><td class="label">{h(k)}</td><td>{h(v)}</td></tr>' for k, v in rows)
    return f"<table><tbody>{body}</tbody></table>"


def verdict(v: str | None) -> str:
    cls = v if v in ("pass", "fail", "incomplete", "inconclusive") else "none"
    return f'<span class="verdict {cls}">{h(verdict_text(v))}</span>'


def section(sec: Section, anchor: str) -> str:
    note = f'<p class="note">{h(sec.note)}</p>' if sec.note else ""
    return f'<section class="fact" id="{h(anchor)}"><h3>{h(sec.title)}</h3>{pairs(sec.rows)}{note}</section>'


_ID = re.compile(r'\bid="([^"]+)"')
_REF = re.compile(r'(url\(#|href="#)([^)"]+)')
_METADATA = re.compile(r"<metadata>.*?</metadata>\s*", re.S)


def inline_svg(svg: str, prefix: str) -> str:
    """An SVG made fit to sit beside others in one page: its ids (clip paths, glyphs) prefixed so
    two plots cannot share one, and the RDF metadata (which names outside vocabularies) dropped."""
    svg = _METADATA.sub("", svg, count=1)
    svg = _ID.sub(lambda m: f'id="{prefix}-{m.group(1)}"', svg)
    return _REF.sub(lambda m: f"{m.group(1)}{prefix}-{m.group(2)}", svg)


def figure(pid: str, title: str, svg: str | None, note: str | None) -> str:
    if svg and svg.lstrip().startswith("<svg"):
        return f'<figure id="plot-{h(pid)}">{inline_svg(svg, "p-" + pid)}<figcaption>{h(title)}</figcaption></figure>'
    return f'<p class="note" id="plot-{h(pid)}">{h(title)}: {h(note or svg or "not drawn")}</p>'


# human labels for the stream figures (the JSON keeps the keys)
STREAM_LABELS: tuple[tuple[str, str, str], ...] = (
    ("lines", "Sentences read", ""), ("epochs", "Epochs", ""), ("rate_hz", "Output rate", "Hz"),
    ("bad_checksum", "Checksum errors", ""), ("malformed", "Malformed sentences", ""),
    ("unknown", "Unknown sentence types", ""), ("junk_bytes", "Bytes outside sentences", "bytes"),
    ("overlong", "Over-long lines dropped", ""), ("binary_frames", "Binary frames skipped", ""),
    ("binary_bytes", "Binary bytes skipped", "bytes"), ("stall_count", "Stalls (no data)", ""),
    ("time_jumps", "Receiver time jumps", ""),
)


def stream_rows(stream: dict[str, Any]) -> list[tuple[str, str]]:
    return [(label, f"{stream[k]} {unit}".strip()) for k, label, unit in STREAM_LABELS if stream.get(k) is not None]
