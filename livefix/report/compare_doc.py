"""Renderers of a spot comparison: terminal text, Markdown and a self-contained HTML page.

All three print the same plain-text tables built here from the comparison document
(report/compare.py), so they always agree; only the escaping differs (report/escape.py).
"""

from __future__ import annotations

from typing import Any

from livefix.report.compare_plot import sky_overlay_svg
from livefix.report.compare_words import duration_text, value_text
from livefix.report.escape import html_text, md_text, term_text

Table = tuple[list[str], list[list[str]]]

OUTCOME_WORDS = {"better": "better", "equal": "equal", "not compared": "not compared"}


def _decision(f: dict[str, Any], names: list[str]) -> str:
    if f["outcome"] == "better":
        return " and ".join(names[i] for i in f["best"]) + " better"
    if f["outcome"] == "equal":
        return f"equal ({f['tolerance_text'].removeprefix('equal ')})"
    return "not compared"


def side_by_side(doc: dict[str, Any]) -> Table:
    """One column per session: what was compared and the normalised figures, then the decision."""
    ss = doc["sessions"]
    names = [s["name"] for s in ss]
    rows = [
        ["Input", *(f"{s['kind']}: {s['source']}" for s in ss), ""],
        ["Start (receiver UTC)", *(s.get("start") or "not recorded" for s in ss), ""],
        ["Session length", *(duration_text(s.get("duration_s")) + (" (weak evidence)" if s["weak_evidence"] else "")
                             for s in ss), ""],
    ]
    for f in doc["figures"]:
        signed = f["key"] == "cn0_residual_db"
        cells = []
        for i, v in enumerate(f["values"]):
            extra = ""
            if f["key"] == "cep95_m":
                d = f["detail"][i] or {}
                v = v if v is not None else d.get("cep95_m")
                extra = f" ({d['label']})" if d.get("fix") else ""
            cells.append(value_text(v, f["unit"], signed) + extra)
        rows.append([f["label"], *cells, _decision(f, names)])
    rows += [
        ["Mean C/N0, not normalised (for reference)",
         *(value_text(s.get("mean_cn0_dbhz"), "dB-Hz") for s in ss), "not judged: depends on the satellites seen"],
        ["Obstructed sectors (own sky map)", *("; ".join(s.get("obstructed") or []) or "none" for s in ss), ""],
    ]
    return ["Figure", *names, "Decision"], rows


def sector_table(doc: dict[str, Any]) -> Table | None:
    f = next((f for f in doc["figures"] if f["key"] == "obstructed_share"), None)
    if f is None or f["outcome"] == "not compared":
        return None
    names = [s["name"] for s in doc["sessions"]]
    secs0 = f["detail"][0]["sectors"]
    rows = []
    for k, sec in enumerate(secs0):
        vals = [d["sectors"][k]["obstructed_share"] for d in f["detail"]]
        rows.append([f"{sec['az_from']}–{sec['az_to']}°", str(sec["cells"]),
                     *(value_text(v, "ratio") for v in vals)])
    return ["Azimuth sector", "Cells seen by every session", *names], rows


def band_table(doc: dict[str, Any]) -> Table | None:
    f = next((f for f in doc["figures"] if f["key"] == "cn0_residual_db"), None)
    if f is None:
        return None
    names = [s["name"] for s in doc["sessions"]]
    per = [{b["from"]: b for b in d.get("bands") or []} for d in f["detail"]]
    edges = sorted(set().union(*(set(p) for p in per)))
    rules = doc["rules"]
    rows = []
    for lo in edges:
        cells = []
        for p in per:
            b = p.get(lo)
            cells.append("-" if b is None else value_text(b["residual_db"], "dB", True)
                         + ("" if b.get("spread_db") is None else f" (scatter {b['spread_db']:.1f} dB)"))
        common = all(lo in p and p[lo].get("common") for p in per)
        rows.append([f"{lo}–{lo + rules['band_deg']}°", *cells, "yes" if common else "no"])
    return ["Elevation band", *names, "In every session"], rows


def _tables(doc: dict[str, Any]) -> list[tuple[str, Table]]:
    out = [("Side by side", side_by_side(doc))]
    for title, t in (("Obstructed share of the common sky per azimuth sector", sector_table(doc)),
                     ("C/N0 residual against the expected curve per elevation band", band_table(doc))):
        if t is not None:
            out.append((title, t))
    return out


def _notes(doc: dict[str, Any]) -> list[str]:
    """The expectation curve, each figure's tolerance with its source, and the weak-evidence rule."""
    src = doc["rule_sources"]
    return [f"Expected C/N0 curve: {src['expectation']}.",
            *(f"{f['label']}: {f['tolerance_text']}; {src.get(f['key'], 'common practice')}." for f in doc["figures"]),
            f"Weak evidence: sessions under {duration_text(doc['rules']['weak_evidence_s'])}; "
            f"{src['weak_evidence_s']}.",
            f"No recommendation: a session under {duration_text(doc['rules']['min_session_s'])}; "
            f"{src['min_session_s']}."]


def render_terminal(doc: dict[str, Any]) -> str:
    lines: list[str] = []
    for title, (head, rows) in _tables(doc):
        data = [[term_text(c) for c in r] for r in [head, *rows]]
        width = [min(max(len(r[i]) for r in data), 48) for i in range(len(head))]
        lines += ["", title, ""]
        for k, r in enumerate(data):
            lines.append("  ".join(c[:w].ljust(w) for c, w in zip(r, width, strict=False)).rstrip())
            if k == 0:
                lines.append("  ".join("-" * w for w in width))
    lines += ["", "Why"]
    lines += [f"- {term_text(f['label'])}: {term_text(f['why'])}" for f in doc["figures"]]
    rec = doc["recommendation"]
    lines += ["", term_text(rec["text"]), term_text(rec["evidence"]), ""]
    return "\n".join(lines)


def _md_table(head: list[str], rows: list[list[str]]) -> list[str]:
    out = ["| " + " | ".join(md_text(c) for c in head) + " |", "|" + "---|" * len(head)]
    out += ["| " + " | ".join(md_text(c) for c in r) + " |" for r in rows]
    return out


def render_markdown(doc: dict[str, Any]) -> str:
    rec = doc["recommendation"]
    lines = ["# Comparison of candidate spots", "", f"**{md_text(rec['text'])}**", "", md_text(rec["evidence"])]
    for title, (head, rows) in _tables(doc):
        lines += ["", f"## {md_text(title)}", "", *_md_table(head, rows)]
    lines += ["", "## Why", ""]
    lines += [f"- **{md_text(f['label'])}**: {md_text(f['why'])}" for f in doc["figures"]]
    lines += ["", "## Rules and sources", "", *(f"- {md_text(n)}" for n in _notes(doc))]
    lines += ["", "## Cautions", "", *(f"- {md_text(c)}" for c in doc["cautions"])]
    lines += ["", f"livefix {md_text(doc['livefix_version'])}, generated {md_text(doc['generated'])}", ""]
    return "\n".join(lines)


_CSS = """
body{font-family:sans-serif;max-width:60em;margin:1em auto;padding:0 1em;color:#222}
table{border-collapse:collapse;margin:.5em 0} th,td{border:1px solid #bbb;padding:.25em .5em;text-align:left;
vertical-align:top} th{background:#eee} .verdict{font-size:1.2em;font-weight:bold} .note{color:#555}
figure{margin:1em 0} figure svg{max-width:100%;height:auto}
@media print{@page{size:A4;margin:15mm} body{max-width:none;margin:0;font-size:10pt}
table,figure{page-break-inside:avoid}}
"""


def _html_table(head: list[str], rows: list[list[str]]) -> str:
    th = "".join(f"<th>{html_text(c)}</th>" for c in head)
    body = "".join("<tr>" + "".join(f"<td>{html_text(c)}</td>" for c in r) + "</tr>" for r in rows)
    return f"<table><thead><tr>{th}</tr></thead><tbody>{body}</tbody></table>"


def render_html(doc: dict[str, Any], with_plot: bool = True) -> str:
    rec = doc["recommendation"]
    parts = ["<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\">",
             "<title>Comparison of candidate spots</title>", f"<style>{_CSS}</style></head><body>",
             "<h1>Comparison of candidate spots</h1>", f"<p class=\"verdict\">{html_text(rec['text'])}</p>",
             f"<p>{html_text(rec['evidence'])}</p>"]
    for title, (head, rows) in _tables(doc)[:1]:
        parts += [f"<h2>{html_text(title)}</h2>", _html_table(head, rows)]
    if with_plot:
        try:
            svg = sky_overlay_svg(doc)
            parts.append(f"<figure>{svg}<figcaption>Obstruction of each spot laid over one another "
                         "(own colour and hatch per spot; dashed: weak-signal sectors)</figcaption></figure>")
        except (ValueError, ImportError) as exc:
            parts.append(f"<p class=\"note\">No sky plot: {html_text(exc)}</p>")
    for title, (head, rows) in _tables(doc)[1:]:
        parts += [f"<h2>{html_text(title)}</h2>", _html_table(head, rows)]
    parts += ["<h2>Why</h2><ul>", *(f"<li><b>{html_text(f['label'])}</b>: {html_text(f['why'])}</li>"
                                    for f in doc["figures"]), "</ul>"]
    parts += ["<h2>Rules and sources</h2><ul>", *(f"<li>{html_text(n)}</li>" for n in _notes(doc)), "</ul>"]
    parts += ["<h2>Cautions</h2><ul>", *(f"<li>{html_text(c)}</li>" for c in doc["cautions"]), "</ul>",
              f"<p class=\"note\">livefix {html_text(doc['livefix_version'])}, generated "
              f"{html_text(doc['generated'])}</p></body></html>"]
    return "\n".join(parts)
