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
              junit: bool = False) -> list[Path]:
    """Write the chosen documents into out_dir; returns the paths written."""
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
    return written


def _write(path: Path, text: str) -> Path:
    tmp = path.with_name(path.name + ".tmp")
    tmp.write_text(text, encoding="utf-8")
    tmp.replace(path)
    return path
