"""Self-contained HTML report for the customer: one file, inline CSS and inline SVG, no scripts, no network.

Reading order: the verdict and a one-screen summary first, then the site record's figures (the
same sections as the Markdown and PDF documents, livefix.report.facts), then the plots, the
details an engineer wants (checks, events, stream) and the cautions in the footer. Every text from
the stream or the user passes through html_text, and the page carries a Content-Security-Policy
that forbids scripts and every outside load, so a mistake in escaping could not run code and the
file shows the same offline as online. A print style sheet lays it out on A4.
"""

from __future__ import annotations

from typing import Any

from livefix.report import facts
from livefix.report.document import fmt_value, meta_facts
from livefix.report.escape import html_text as h
from livefix.report.html_parts import CSS, figure, pairs, section, stream_rows, table, verdict
from livefix.report.markdown import results_rows
from livefix.report.reflection_plots import arc_map_svg, periodogram_svg
from livefix.site import site_name

CSP = "default-src 'none'; style-src 'unsafe-inline'; img-src data:"


def render_html(report: dict[str, Any], with_plots: bool = True) -> str:
    meta = report["meta"]
    name = site_name(meta.get("site"))
    title = f"Site record: {name}" if name else "Site record"
    parts = ["<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
             f'<meta http-equiv="Content-Security-Policy" content="{CSP}">',
             '<meta name="viewport" content="width=device-width, initial-scale=1">',
             f"<title>livefix {h(title)}</title><style>{CSS}</style></head><body>",
             f"<header><h1>{h(title)}</h1><p class=\"subtitle\">GNSS installation report made by livefix "
             f"{h(meta.get('livefix_version', ''))}</p></header>",
             _summary(report)]
    parts.append(_comparison(report))
    rxs = report.get("receivers", [])
    for i, rx in enumerate(rxs):
        parts.append(_receiver(report, rx, "" if i == 0 else f"{rx.get('name')}-", len(rxs) > 1, with_plots))
    parts.append('<section id="run"><h2>Run</h2>' + pairs(meta_facts(report, site_rows=False)) + "</section>")
    parts.append(_footer(report))
    parts.append("</body></html>")
    return "\n".join(p for p in parts if p) + "\n"


def _summary(report: dict[str, Any]) -> str:
    rows = facts.summary(report)
    rest = [r for r in rows if r[0] != "Verdict"]
    return (f'<section class="summary" id="summary"><p id="verdict">Verdict: {verdict(report.get("verdict"))}</p>'
            f"{pairs(rest)}</section>")


def _comparison(report: dict[str, Any]) -> str:
    comp = report.get("comparison") or {}
    names = comp.get("receivers", [])
    if len(names) < 2:
        return ""
    rows = [[h(r["label"])] + [h(fmt_value(v, r["digits"], r["unit"])) for v in r["values"]]
            for r in comp.get("rows", [])]
    rows += [[h(c["name"])] + ["-" if x is None else ('<b class="pass">pass</b>' if x["passed"]
                                                      else '<b class="fail">FAIL</b>') for x in c["values"]]
             for c in comp.get("checks", [])]
    return '<section id="comparison"><h2>Side by side</h2>' + table(["Figure"] + [h(n) for n in names], rows) + \
        "</section>"


def _receiver(report: dict[str, Any], rx: dict[str, Any], prefix: str, several: bool, with_plots: bool) -> str:
    a = rx.get("analysis") or {}
    head = f"Receiver {rx['name']}" if several else "Figures"
    parts = [f'<section class="receiver" id="{h(prefix)}receiver"><h2>{h(head)}</h2>']
    if several:
        parts.append(f'<p>Verdict: {verdict(rx.get("verdict"))}</p>')
    if rx.get("recording_error"):
        parts.append(f"<p class=\"fail\">Recording error: {h(rx['recording_error'])}</p>")
    if rx.get("results") is not None:
        parts.append(f'<section class="fact" id="{h(prefix)}checks"><h3>Checks against the profile</h3>'
                     + _results(rx["results"]) + "</section>")
    parts.append('<div class="facts">')
    parts += [section(sec, prefix + sec.id) for sec in facts.sections(report, rx)]
    parts.append("</div>")
    if with_plots:
        from livefix.report.plots import make_plots

        parts.append(f'<h2 class="pagebreak" id="{h(prefix)}plots">Plots</h2><div class="plots">')
        parts += [figure(prefix + p["id"], p["title"], p.get("svg"), p.get("note")) for p in make_plots(a)]
        parts.append("</div>")
    parts.append(_reflection(a.get("reflection"), prefix, with_plots))
    parts.append(_details(rx, a, prefix))
    parts.append("</section>")
    return "\n".join(p for p in parts if p)


def _results(results: list[dict[str, Any]]) -> str:
    rows = []
    for cells in results_rows(results):
        mark = ('<b class="fail">FAIL</b>' if "FAIL" in cells[0] else '<b class="inconclusive">inconclusive</b>'
                if cells[0] == "inconclusive" else '<b class="pass">pass</b>')
        rows.append([mark] + [h(c) for c in cells[1:]])
    return table(["Result", "Check", "Figure", "Measured", "Limit", "Source"], rows)


def _reflection(refl: dict[str, Any] | None, prefix: str, with_plots: bool) -> str:
    if not refl:
        return ""
    rows = [("Status", str(refl.get("status") or "")), ("Advice", str(refl.get("advice") or "")),
            ("Reflector height", fmt_value(refl.get("height_m"), 2, "m")),
            ("Spread of the arcs' heights", fmt_value(refl.get("spread_m"), 2, "m")),
            ("Multipath, peak to peak", fmt_value(refl.get("mp_db"), 1, "dB")),
            ("Arcs accepted / evaluated / in progress",
             f"{refl.get('arcs', 0)} / {refl.get('arcs_evaluated', 0)} / {refl.get('arcs_in_progress', 0)}")]
    out = [f'<section id="{h(prefix)}reflection"><h2>Reflections near the antenna</h2>', pairs(rows)]
    if with_plots:
        out.append('<div class="plots">')
        out.append(figure(prefix + "periodogram", "Reflector height: periodogram of the arcs",
                          periodogram_svg(refl), None))
        out.append(figure(prefix + "arc-map", "Where the accepted arcs were", arc_map_svg(refl), None))
        out.append("</div>")
    out.append("</section>")
    return "\n".join(out)


def _details(rx: dict[str, Any], a: dict[str, Any], prefix: str) -> str:
    parts = [f'<section id="{h(prefix)}details"><h2>Details</h2>',
             pairs([("Source", str(rx.get("source") or "")), ("Recording", str(rx.get("recording") or "none"))])]
    cyc = rx.get("ttff_cycles")
    if cyc:
        parts.append(f"<h3>TTFF cycles ({h(cyc.get('kind'))})</h3><p>minimum {h(fmt_value(cyc.get('min_s'), 1, 's'))}, "
                     f"median {h(fmt_value(cyc.get('median_s'), 1, 's'))}, 95th percentile "
                     f"{h(fmt_value(cyc.get('p95_s'), 1, 's'))}. {h(cyc.get('note', ''))}</p>")
        parts.append(table(["Cycle", "TTFF", "Basis"], [[h(c["cycle"]), h(fmt_value(c.get("ttff_s"), 1, "s")),
                                                         h(c.get("basis", ""))] for c in cyc.get("cycles", [])]))
    events = a.get("events") or []
    if events:
        parts.append("<h3>Events (newest 50)</h3>")
        parts.append(table(["Time (UTC)", "Kind", "What happened"],
                           [[h(e.get("time")), h(str(e.get("kind") or "").replace("_", " ")), h(e.get("text"))]
                            for e in events[-50:]]))
    stream = a.get("stream") or {}
    if stream:
        parts.append("<h3>Stream</h3>" + pairs(stream_rows(stream)))
    parts.append("</section>")
    return "\n".join(parts)


def _footer(report: dict[str, Any]) -> str:
    items = "".join(f"<li>{h(c)}</li>" for c in report.get("cautions", []))
    return (f'<footer id="safety"><h2>Cautions</h2><ul class="caution">{items}</ul>'
            '<p class="note">A livefix verdict describes this run only; it is not a certification.</p></footer>')
