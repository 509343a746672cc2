"""Writing the report documents to a folder: the one place that knows every renderer.

It sits above document.py and the renderers (which read the document's helpers), so that no
module of report/ imports one that imports it back.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from livefix.report.document import to_json
from livefix.report.html import render_html
from livefix.report.junit import render_junit
from livefix.report.markdown import render_markdown


def write_all(report: dict[str, Any], out_dir: str | Path, formats: tuple[str, ...] = ("json", "md", "html"),
              junit: bool = False, pdf: bool = False) -> list[Path]:
    """Write the chosen documents into out_dir; returns the paths written. `pdf` needs the
    optional fpdf2 library (livefix.report.pdf.PdfUnavailable otherwise: check before the run)."""
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    written = []
    if "json" in formats:
        written.append(_write(out / "report.json", to_json(report) + "\n"))
    if "md" in formats:
        written.append(_write(out / "report.md", render_markdown(report)))
    if "html" in formats:
        written.append(_write(out / "report.html", render_html(report)))
    if junit:
        written.append(_write(out / "junit.xml", render_junit(report)))
    if pdf:
        from livefix.report.pdf import render_pdf

        written.append(_write(out / "report.pdf", render_pdf(report)))
    return written


def _write(path: Path, data: str | bytes) -> Path:
    tmp = path.with_name(path.name + ".tmp")
    if isinstance(data, bytes):
        tmp.write_bytes(data)
    else:
        tmp.write_text(data, encoding="utf-8")
    tmp.replace(path)
    return path
