"""Markdown rendering of the report document. Every text from the stream or the user goes through
md_text, so a TXT sentence holding markup shows as plain text."""

from __future__ import annotations

from typing import Any

from livefix.analysis import catalogue
from livefix.report import facts
from livefix.report.document import fmt_value, meta_facts, position_facts
from livefix.report.escape import md_text
from livefix.report.facts import summary
from livefix.report.reflection_md import reflection_section

VERDICT_WORDS = {"pass": "PASS", "fail": "FAIL", "incomplete": "INCOMPLETE (run ended early)",
                 "inconclusive": "INCONCLUSIVE (run longer)", None: "no limits set"}
# position_facts rows the record sections already show (scatter, timing)
_SHOWN_IN_RECORD = ("Scatter ", "Convergence", "Drift ")


def _row(cells: list[str]) -> str:
    return "| " + " | ".join(cells) + " |"


def _table(rows: list[tuple[str, str]], head: tuple[str, str] = ("Item", "Value")) -> list[str]:
    return [_row(list(head)), _row(["---", "---"])] + [_row([md_text(k), md_text(v)]) for k, v in rows]


def results_rows(results: list[dict[str, Any]]) -> list[list[str]]:
    rows = []
    for r in results:
        measured = fmt_value(r["measured"], 4, r.get("unit", "")) if r["measured"] is not None else r["note"]
        limit = f"{r['op']} {fmt_value(r['limit'], 4, r.get('unit', ''))}"
        fix = f" ({facts.fix_label(r['fix'])})" if r.get("fix") else ""
        mark = "pass" if r["passed"] else ("inconclusive" if r.get("inconclusive") else "**FAIL**")
        if r["measured"] is not None and r.get("interval95"):
            measured += f" (95 %: {fmt_value(r['interval95'][0], 4)} .. {fmt_value(r['interval95'][1], 4)})"
        rows.append([mark, r["name"], (r.get("label") or catalogue.label(r["metric"])) + fix,
                     measured, limit, r.get("source", "")])
    return rows


def render_markdown(report: dict[str, Any]) -> str:
    summ = summary(report)
    out = ["# livefix report", "", f"**Verdict: {md_text(summ[0][1])}**", ""]
    out += _table(summ[1:], ("Summary", "Value")) + [""]
    out += ["## Run", ""] + _table(meta_facts(report, site_rows=False)) + [""]
    site = facts.site(report)
    out += [f"## {site.title}", ""] + _table(site.rows) + [""]
    comp = report.get("comparison") or {}
    names = comp.get("receivers", [])
    if len(names) > 1:
        out += ["## Side by side", "", _row(["Figure"] + [md_text(n) for n in names]),
                _row(["---"] * (len(names) + 1))]
        for row in comp.get("rows", []):
            out.append(_row([md_text(row["label"])] + [md_text(fmt_value(v, row["digits"], row["unit"]))
                                                       for v in row["values"]]))
        for chk in comp.get("checks", []):
            cells = ["-" if c is None else ("pass" if c["passed"] else "**FAIL**") for c in chk["values"]]
            out.append(_row([md_text(chk["name"])] + cells))
        out.append("")
    for rx in report.get("receivers", []):
        out += receiver_section(rx, report)
    out += ["---", "", "## Cautions", ""] + [f"- {md_text(c)}" for c in report.get("cautions", [])] + [""]
    return "\n".join(out) + "\n"


def receiver_section(rx: dict[str, Any], report: dict[str, Any] | None = None) -> list[str]:
    out = [f"## Receiver {md_text(rx['name'])}", "",
           f"Source: {md_text(rx['source'])}  ", f"Recording: {md_text(rx.get('recording') or 'none')}  ",
           f"Verdict: {VERDICT_WORDS.get(rx.get('verdict'), md_text(rx.get('verdict')))}", ""]
    if rx.get("recording_error"):
        out += [f"Recording error: {md_text(rx['recording_error'])}", ""]
    if rx.get("results") is not None:
        out += [_row(["Result", "Check", "Figure", "Measured", "Limit", "Source"]), _row(["---"] * 6)]
        for r, cells in zip(rx["results"], results_rows(rx["results"]), strict=True):
            cells[1] = r.get("description") or cells[1]  # the check in words; its name stays in the JSON
            op, _, limit = cells[4].partition(" ")  # the operator is one of ours; the unit may be the user's
            out.append(_row([cells[0]] + [md_text(c) for c in cells[1:4]] + [f"{op} {md_text(limit)}",
                                                                              md_text(cells[5])]))
        out.append("")
    for sec in facts.sections(report or {"meta": {}}, rx):
        if sec.id == "site":  # one site per report: shown once above
            continue
        out += [f"### {md_text(sec.title)}", ""] + _table(sec.rows) + [""]
        if sec.note:
            out += [md_text(sec.note), ""]
    pos = [(k, v) for k, v in position_facts(rx.get("analysis") or {}) if not k.startswith(_SHOWN_IN_RECORD)]
    if pos:
        out += ["### Motion and jumps", ""] + _table(pos) + [""]
    cyc = rx.get("ttff_cycles")
    if cyc:
        out += [f"### TTFF cycles ({md_text(cyc.get('kind'))}, {cyc.get('n')} requested)", ""]
        out += [f"min {md_text(fmt_value(cyc.get('min_s'), 1, 's'))}, median {md_text(fmt_value(cyc.get('median_s'), 1, 's'))}, "
                f"p95 {md_text(fmt_value(cyc.get('p95_s'), 1, 's'))}; {md_text(cyc.get('note', ''))}", ""]
        out += [_row(["Cycle", "TTFF", "Basis"]), _row(["---"] * 3)]
        for c in cyc.get("cycles", []):
            out.append(_row([str(c["cycle"]), md_text(fmt_value(c.get("ttff_s"), 1, "s")), md_text(c.get("basis", ""))]))
        out.append("")
    events = (rx.get("analysis") or {}).get("events") or []
    if events:
        out += ["### Events (newest 30)", "", _row(["Time", "Kind", "Text"]), _row(["---"] * 3)]
        for ev in events[-30:]:
            kind = str(ev.get("kind") or "").replace("_", " ")
            out.append(_row([md_text(ev.get("time")), md_text(kind), md_text(ev.get("text"))]))
        out.append("")
    out += reflection_section((rx.get("analysis") or {}).get("reflection"))
    return out


def sector_text(s: dict[str, Any]) -> str:
    return (f"azimuth {s.get('az_from', '?'):>} to {s.get('az_to', '?')} deg, "
            f"blocked below {s.get('below_el', '?')} deg elevation")
