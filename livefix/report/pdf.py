"""The report as a PDF on A4, the document customers file, made with fpdf2 (optional extra `pdf`).

Why fpdf2: it installs with pip alone (pure Python; Pillow and fontTools come with matplotlib
already) and needs no browser at run time, while its tables break across pages with repeated
headings. The same report dict, the same facts sections (livefix.report.facts) and the same
matplotlib figures (as PNG at 150 dpi) as the HTML, so the two documents say the same thing. Text
is set in the DejaVu Sans that matplotlib ships, so °, ±, – and every stream text show as written.
"""

from __future__ import annotations

import io
import math
from pathlib import Path
from typing import Any

from livefix.report import facts
from livefix.report.document import fmt_value, meta_facts
from livefix.report.escape import term_text
from livefix.report.markdown import results_rows
from livefix.site import site_name

MISSING = "--pdf needs the fpdf2 library: pip install 'livefix[pdf]'"
VERDICT_RGB = {"pass": (26, 107, 26), "fail": (164, 0, 0)}
WARN_RGB = (122, 90, 0)
FONT = "dejavu"


class PdfUnavailable(RuntimeError):
    """fpdf2 is not installed; the message says how to get it."""


def available() -> bool:
    try:
        import fpdf  # noqa: F401
    except ImportError:
        return False
    return True


def _fonts() -> Path:
    import matplotlib

    return Path(matplotlib.get_data_path()) / "fonts" / "ttf"


def _doc(title: str) -> Any:
    try:
        from fpdf import FPDF
    except ImportError as exc:
        raise PdfUnavailable(MISSING) from exc

    class Doc(FPDF):  # type: ignore[misc]
        def footer(self) -> None:
            self.set_y(-11)
            self.set_font(FONT, size=7.5)
            self.set_text_color(110, 110, 110)
            self.cell(0, 5, f"{title} | livefix | page {self.page_no()} of {{nb}}", align="C")
            self.set_text_color(0, 0, 0)

    pdf = Doc(orientation="portrait", unit="mm", format="A4")
    pdf.set_margins(14, 14, 14)
    pdf.set_auto_page_break(True, margin=16)
    fonts = _fonts()
    pdf.add_font(FONT, "", str(fonts / "DejaVuSans.ttf"))
    pdf.add_font(FONT, "B", str(fonts / "DejaVuSans-Bold.ttf"))
    pdf.set_title(title)
    pdf.set_creator("livefix")
    pdf.alias_nb_pages()
    pdf.add_page()
    return pdf


def render_pdf(report: dict[str, Any], with_plots: bool = True) -> bytes:
    """The whole document as PDF bytes. Raises PdfUnavailable without fpdf2."""
    meta = report["meta"]
    name = site_name(meta.get("site"))
    title = f"Site record: {name}" if name else "Site record"
    pdf = _doc(term_text(title))
    pdf.set_font(FONT, "B", 17)
    pdf.multi_cell(0, 8, _t(title), new_x="LMARGIN", new_y="NEXT")
    pdf.set_font(FONT, size=9)
    pdf.set_text_color(90, 90, 90)
    pdf.cell(0, 5, f"GNSS installation report made by livefix {_t(meta.get('livefix_version', ''))}",
             new_x="LMARGIN", new_y="NEXT")
    pdf.set_text_color(0, 0, 0)
    pdf.ln(3)
    _verdict(pdf, report.get("verdict"))
    _pairs(pdf, [r for r in facts.summary(report) if r[0] != "Verdict"])
    rxs = report.get("receivers", [])
    for rx in rxs:
        _receiver(pdf, report, rx, len(rxs) > 1, with_plots)
    _heading(pdf, "Run")
    _pairs(pdf, meta_facts(report, site_rows=False))
    _cautions(pdf, report.get("cautions") or [])
    return bytes(pdf.output())


def _t(value: Any) -> str:
    """Stream or user text made inert (no control characters) for the page."""
    return term_text(value)


def _verdict(pdf: Any, verdict: str | None) -> None:
    pdf.set_font(FONT, "B", 15)
    pdf.set_draw_color(*VERDICT_RGB.get(verdict or "", WARN_RGB))
    pdf.set_text_color(*VERDICT_RGB.get(verdict or "", WARN_RGB))
    pdf.set_line_width(0.8)
    text = f"Verdict: {facts.verdict_text(verdict)}"
    pdf.cell(pdf.get_string_width(text) + 10, 11, text, border=1, align="C", new_x="LMARGIN", new_y="NEXT")
    pdf.set_line_width(0.2)
    pdf.set_draw_color(0, 0, 0)
    pdf.set_text_color(0, 0, 0)
    pdf.ln(3)


def _heading(pdf: Any, text: str, size: float = 12.5, new_page: bool = False) -> None:
    if new_page or pdf.will_page_break(24):  # a heading never sits alone at the foot of a page
        pdf.add_page()
    pdf.ln(2)
    pdf.set_font(FONT, "B", size)
    pdf.multi_cell(0, 6.5, _t(text), new_x="LMARGIN", new_y="NEXT")
    pdf.set_font(FONT, size=8.5)


def _lines(text: str, width_mm: float) -> int:
    """Rough count of wrapped lines at 8.5 pt (about 0.47 mm a character on average)."""
    return max(1, math.ceil(len(text) * 0.47 / max(width_mm - 2, 1)))


def _pairs(pdf: Any, rows: list[tuple[str, str]], note: str = "") -> None:
    """(label, text) rows as a two-column table, kept on one page where it fits on one."""
    if not rows:
        return
    width = pdf.epw
    need = sum(4.6 * max(_lines(k, width * 0.38), _lines(v, width * 0.62)) for k, v in rows) + 2
    if need < pdf.eph and pdf.will_page_break(need):
        pdf.add_page()
    pdf.set_font(FONT, size=8.5)
    with pdf.table(col_widths=(38, 62), first_row_as_headings=False, line_height=4.4, text_align="LEFT",
                   borders_layout="HORIZONTAL_LINES", padding=0.8) as table:
        for k, v in rows:
            row = table.row()
            row.cell(_t(k))
            row.cell(_t(v))
    if note:
        _note(pdf, note)
    pdf.ln(1.5)


def _note(pdf: Any, text: str) -> None:
    pdf.set_font(FONT, size=7.5)
    pdf.set_text_color(90, 90, 90)
    pdf.multi_cell(0, 3.8, _t(text), new_x="LMARGIN", new_y="NEXT")
    pdf.set_text_color(0, 0, 0)
    pdf.set_font(FONT, size=8.5)


def _grid(pdf: Any, head: list[str], rows: list[list[str]], widths: tuple[float, ...]) -> None:
    pdf.set_font(FONT, size=8)
    with pdf.table(col_widths=widths, line_height=4.2, text_align="LEFT", padding=0.8,
                   headings_style=_bold()) as table:
        for cells in [head, *rows]:
            row = table.row()
            for c in cells:
                row.cell(_t(c))
    pdf.ln(1.5)


def _bold() -> Any:
    from fpdf.fonts import FontFace

    return FontFace(family=FONT, emphasis="BOLD", fill_color=(238, 238, 238))


def _receiver(pdf: Any, report: dict[str, Any], rx: dict[str, Any], several: bool, with_plots: bool) -> None:
    a = rx.get("analysis") or {}
    _heading(pdf, f"Receiver {rx['name']}" if several else "Figures", 14)
    if several:
        _verdict(pdf, rx.get("verdict"))
    if rx.get("results") is not None:
        _heading(pdf, "Checks against the profile", 11)
        _grid(pdf, ["Result", "Check", "Figure", "Measured", "Limit", "Source"], results_rows(rx["results"]),
              (11, 20, 20, 15, 14, 20))
    for sec in facts.sections(report, rx):
        _heading(pdf, sec.title, 11)
        _pairs(pdf, sec.rows, sec.note)
    if with_plots:
        from livefix.report.plots import make_plots

        _heading(pdf, "Plots", 14, new_page=True)
        for p in make_plots(a, "png"):
            _figure(pdf, p["title"], p.get("png"), p.get("note"))
        _reflection(pdf, a.get("reflection"))
    events = a.get("events") or []
    if events:
        _heading(pdf, "Events (newest 50)", 11)
        _grid(pdf, ["Time (UTC)", "Kind", "What happened"],
              [[str(e.get("time") or ""), str(e.get("kind") or "").replace("_", " "), str(e.get("text") or "")]
               for e in events[-50:]], (26, 16, 58))


def _reflection(pdf: Any, refl: dict[str, Any] | None) -> None:
    if not refl:
        return
    from livefix.report.plot_style import render
    from livefix.report.reflection_plots import arc_map_fig, periodogram_fig

    _heading(pdf, "Reflections near the antenna", 11)
    _pairs(pdf, [("Status", str(refl.get("status") or "")), ("Advice", str(refl.get("advice") or "")),
                 ("Reflector height", fmt_value(refl.get("height_m"), 2, "m")),
                 ("Multipath, peak to peak", fmt_value(refl.get("mp_db"), 1, "dB"))])
    for title, fn in (("Reflector height: periodogram of the arcs", periodogram_fig),
                      ("Where the accepted arcs were", arc_map_fig)):
        try:
            png, note = render(fn(refl), "png"), None
        except ValueError as exc:  # no arcs yet: the figure module says why
            png, note = None, f"not drawn: {exc}"
        _figure(pdf, title, png if isinstance(png, bytes) else None, note)


def _figure(pdf: Any, title: str, png: bytes | None, note: str | None) -> None:
    """A plot at the page width (never wider than its own size at 150 dpi), kept whole on one page."""
    if not png:
        _note(pdf, f"{title}: {note or 'not drawn'}")
        return
    from PIL import Image

    with Image.open(io.BytesIO(png)) as im:
        w_px, h_px = im.size
    w = min(pdf.epw, w_px / 150 * 25.4)
    h = w * h_px / w_px
    if h > pdf.eph - 10:  # taller than a page: shrink to fit
        h = pdf.eph - 10
        w = h * w_px / h_px
    if pdf.will_page_break(h + 8):
        pdf.add_page()
    pdf.image(io.BytesIO(png), x=pdf.l_margin + (pdf.epw - w) / 2, w=w, h=h)
    _note(pdf, title)
    pdf.ln(2)


def _cautions(pdf: Any, cautions: list[str]) -> None:
    _heading(pdf, "Cautions", 12)
    pdf.set_font(FONT, size=8.5)
    for c in cautions:
        pdf.multi_cell(0, 4.4, "• " + _t(c), new_x="LMARGIN", new_y="NEXT")
        pdf.ln(0.8)
    _note(pdf, "A livefix verdict describes this run only; it is not a certification.")
