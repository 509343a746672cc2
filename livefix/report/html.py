"""Self-contained HTML report: one file, inline CSS and inline SVG plots, no scripts, no network.

Every text from the stream or the user passes through html_text. The page carries a Content-
Security-Policy that forbids scripts, so even a mistake in escaping could not run code.
"""

from __future__ import annotations

from typing import Any

from livefix.report.document import fmt_value, meta_facts, position_facts
from livefix.report.escape import html_text as h
from livefix.report.markdown import VERDICT_WORDS, results_rows, sector_text

_CSS = """
body{font-family:system-ui,sans-serif;margin:1.5em auto;max-width:70em;color:#222;line-height:1.4}
h1{margin-bottom:.2em} table{border-collapse:collapse;margin:.6em 0} td,th{border:1px solid #bbb;
padding:.2em .5em;text-align:left;vertical-align:top} th{background:#eee}
.verdict{display:inline-block;padding:.2em .8em;border:2px solid;font-weight:bold}
.pass{color:#1a6b1a} .fail{color:#a40000} .incomplete,.inconclusive,.none{color:#7a5a00}
.caution{border-left:4px solid #c4a000;background:#fffbe6;padding:.4em .8em}
figure{display:inline-block;margin:.5em;vertical-align:top} figure svg{max-width:34em;height:auto}
figcaption{font-size:.9em;color:#444} .note{color:#666;font-style:italic}
"""


def _table(head: list[str], rows: list[list[str]]) -> str:
    """head and rows are already-escaped HTML cell contents."""
    th = "".join(f"<th>{c}</th>" for c in head)
    body = "".join("<tr>" + "".join(f"<td>{c}</td>" for c in r) + "</tr>" for r in rows)
    return f"<table><thead><tr>{th}</tr></thead><tbody>{body}</tbody></table>"


def _verdict(v: str | None) -> str:
    cls = v if v in ("pass", "fail", "incomplete", "inconclusive") else "none"
    return f'<span class="verdict {cls}">{h(VERDICT_WORDS.get(v, v))}</span>'


def render_html(report: dict[str, Any], with_plots: bool = True) -> str:
    meta = report["meta"]
    parts = ["<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
             "<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; "
             "style-src 'unsafe-inline'; img-src data:\">",
             f"<title>livefix report {h(meta.get('site') or '')}</title><style>{_CSS}</style></head><body>",
             "<h1>livefix report</h1>", f"<p id=\"verdict\">Verdict: {_verdict(report.get('verdict'))}</p>"]
    facts = meta_facts(report)
    parts.append(_table(["Item", "Value"], [[h(k), h(v)] for k, v in facts]))
    parts.append('<section class="caution" id="safety"><h2>Safety</h2><ul>')
    parts += [f"<li>{h(c)}</li>" for c in report.get("cautions", [])]
    parts.append("</ul></section>")
    comp = report.get("comparison") or {}
    names = comp.get("receivers", [])
    if len(names) > 1:
        parts.append('<h2 id="comparison">Side by side</h2>')
        rows = [[h(r["label"])] + [h(fmt_value(v, r["digits"], r["unit"])) for v in r["values"]]
                for r in comp.get("rows", [])]
        rows += [[h(c["name"])] + ["-" if x is None else ('<b class="pass">pass</b>' if x["passed"]
                                                          else '<b class="fail">FAIL</b>') for x in c["values"]]
                 for c in comp.get("checks", [])]
        parts.append(_table(["Figure"] + [h(n) for n in names], rows))
    for rx in report.get("receivers", []):
        parts.append(_receiver(rx, with_plots))
    parts.append("</body></html>")
    return "\n".join(parts) + "\n"


def _receiver(rx: dict[str, Any], with_plots: bool) -> str:
    parts = [f"<section class=\"receiver\"><h2>Receiver {h(rx['name'])}</h2>",
             _table(["Item", "Value"], [["Source", h(rx["source"])], ["Recording", h(rx.get("recording") or "none")],
                                        ["Verdict", _verdict(rx.get("verdict"))]])]
    if rx.get("recording_error"):
        parts.append(f"<p class=\"fail\">Recording error: {h(rx['recording_error'])}</p>")
    if rx.get("results") is not None:
        rows = []
        for cells in results_rows(rx["results"]):
            mark = ('<b class="fail">FAIL</b>' if "FAIL" in cells[0] else '<b class="inconclusive">inconclusive</b>'
                    if cells[0] == "inconclusive" else '<b class="pass">pass</b>')
            rows.append([mark] + [h(c) for c in cells[1:]])
        parts.append(_table(["Result", "Check", "Metric", "Measured", "Limit", "Source"], rows))
    pos = position_facts(rx.get("analysis") or {})
    if pos:
        parts.append("<h3>Position (static receiver)</h3>" + _table(["Item", "Value"], [[h(k), h(v)] for k, v in pos]))
    cyc = rx.get("ttff_cycles")
    if cyc:
        parts.append(f"<h3>TTFF cycles ({h(cyc.get('kind'))})</h3><p>min {h(fmt_value(cyc.get('min_s'), 1, 's'))}, "
                     f"median {h(fmt_value(cyc.get('median_s'), 1, 's'))}, p95 {h(fmt_value(cyc.get('p95_s'), 1, 's'))}"
                     f". {h(cyc.get('note', ''))}</p>")
        parts.append(_table(["Cycle", "TTFF", "Basis"], [[h(c["cycle"]), h(fmt_value(c.get("ttff_s"), 1, "s")),
                                                          h(c.get("basis", ""))] for c in cyc.get("cycles", [])]))
    a = rx.get("analysis") or {}
    sky = a.get("sky") or {}
    if sky.get("obstructed"):
        parts.append("<h3>Obstructed sectors</h3><ul>" + "".join(f"<li>{h(sector_text(s))}</li>"
                                                               for s in sky["obstructed"]) + "</ul>")
    if with_plots:
        from livefix.report.plots import make_plots

        parts.append('<div class="plots">')
        for p in make_plots(a):
            if "svg" in p:
                parts.append(f'<figure id="plot-{p["id"]}">{p["svg"]}<figcaption>{h(p["title"])}</figcaption></figure>')
            else:
                parts.append(f'<p class="note" id="plot-{p["id"]}">{h(p["title"])}: {h(p["note"])}</p>')
        parts.append("</div>")
    events = a.get("events") or []
    if events:
        parts.append("<h3>Events (newest 50)</h3>")
        parts.append(_table(["Time", "Kind", "Text"], [[h(e.get("time")), h(e.get("kind")), h(e.get("text"))]
                                                       for e in events[-50:]]))
    stream = a.get("stream") or {}
    if stream:
        keys = ("lines", "epochs", "bad_checksum", "malformed", "unknown", "junk_bytes", "overlong",
                "binary_frames", "binary_bytes", "rate_hz")
        parts.append("<h3>Stream</h3>" + _table(["Figure", "Value"], [[h(k), h(stream.get(k))] for k in keys
                                                                      if k in stream]))
    parts.append("</section>")
    return "\n".join(parts)
