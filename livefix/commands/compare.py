"""`livefix compare A B [C...]`: put sessions recorded at candidate antenna spots side by side.

Inputs are livefix recordings, plain NMEA logs, or report JSON written by `livefix report`
(report.json, whose receivers[0].analysis is read, or the snapshot that `--json` prints). Prints
the table and the advice, and writes compare.json, compare.md and compare.html into -o DIR.
Exit 0 when compared, 2 when an input cannot be read (one line on stderr; nothing is written).
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path
from typing import Any

from livefix.report.escape import term_text

JSON_HEAD = b"{"


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("inputs", nargs="+", metavar="FILE",
                   help="two or more sessions: livefix recordings, NMEA logs or report JSON files")
    p.add_argument("-o", "--output", metavar="DIR", default=".",
                   help="folder for compare.json, compare.md and compare.html (default .)")
    p.add_argument("--json", action="store_true", help="print the comparison as JSON on stdout, write nothing")
    p.add_argument("--name", action="append", metavar="NAME",
                   help="name of each spot in order (repeatable; default: the file names)")


def _from_json(path: Path) -> tuple[str, dict[str, Any]]:
    """(kind, analysis) of a report JSON (any livefix-report/N) or a printed snapshot."""
    try:
        doc = json.loads(path.read_text(encoding="utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise ValueError(f"{path}: not valid JSON ({exc})") from None
    if isinstance(doc, dict) and str(doc.get("format", "")).startswith("livefix-report/"):
        rx = doc.get("receivers") or []
        a = rx[0].get("analysis") if rx and isinstance(rx[0], dict) else None
        if isinstance(a, dict):
            return "report JSON", a
        raise ValueError(f"{path}: report without receivers[0].analysis")
    if isinstance(doc, dict) and isinstance(doc.get("stream"), dict) and isinstance(doc.get("sky"), dict):
        return "snapshot JSON", doc
    raise ValueError(f"{path}: JSON that is neither a livefix report nor a livefix snapshot")


def _from_stream(path: Path) -> tuple[str, dict[str, Any]]:
    """(kind, analysis) of a recording or plain NMEA log, through the same pipeline as `report`."""
    import threading

    from livefix.analysis.config import AnalysisConfig
    from livefix.batchgc import batch_gc
    from livefix.parallel import analyzer_for, want_split
    from livefix.pipeline import Pipeline
    from livefix.probe import check_file
    from livefix.sources import open_source

    src = open_source(str(path), speed=None)
    check_file(src)  # no NMEA at all: say what the file holds
    if not src.finite:
        raise ValueError(f"{path}: not a file or recording")
    cfg = AnalysisConfig()
    with batch_gc(), analyzer_for(cfg, want_split("auto", str(path))) as analyzer:
        p = Pipeline(cfg, src.name, analyzer=analyzer)
        for item in src.items(threading.Event()):
            p.feed(item)
        src.close()
        p.finish()
        kind = "recording" if getattr(src, "recording", False) else "NMEA log"
        return kind, p.snapshot().analysis


def load(path_text: str) -> tuple[str, dict[str, Any]]:
    path = Path(path_text)
    if not path.is_file():
        raise ValueError(f"{path_text}: no such file")
    from livefix.record.fmt import MAGIC

    with path.open("rb") as f:
        head = f.read(64)
    is_json = head.lstrip().startswith(JSON_HEAD) and not head.startswith(MAGIC)  # a recording's header is JSON too
    return _from_json(path) if is_json else _from_stream(path)


def _names(inputs: list[str], given: list[str] | None) -> list[str]:
    """People's names for the spots: --name, else the file stem (the folder for report.json)."""
    out: list[str] = []
    for k, text in enumerate(inputs):
        p = Path(text)
        name = given[k] if given and k < len(given) else (p.parent.name or p.stem) if p.stem == "report" else p.stem
        base, n = name, 2
        while name in out:
            name, n = f"{base} ({n})", n + 1
        out.append(name)
    return out


def _write(path: Path, text: str) -> Path:
    """Whole file or none: written beside and renamed, so a reader never sees half a document."""
    tmp = path.with_name(path.name + ".tmp")
    tmp.write_text(text, encoding="utf-8")
    tmp.replace(path)
    return path


def run(args: argparse.Namespace) -> int:
    from livefix.parallel import AnalysisProcessError
    from livefix.report.compare import Session, compare
    from livefix.report.compare_doc import render_html, render_markdown, render_terminal
    from livefix.report.document import to_json
    from livefix.sources import SourceError

    if len(args.inputs) < 2:
        print("livefix compare: give two or more sessions to compare", file=sys.stderr)
        return 2
    names = _names(args.inputs, args.name)
    sessions = []
    for name, text in zip(names, args.inputs, strict=True):
        try:
            kind, analysis = load(text)
        except (SourceError, AnalysisProcessError, OSError, ValueError) as exc:
            print(f"livefix compare: {term_text(exc)}", file=sys.stderr)
            return 2
        sessions.append(Session(name=name, source=text, kind=kind, analysis=analysis))
    doc = compare(sessions)
    if args.json:
        sys.stdout.write(to_json(doc) + "\n")
        return 0
    sys.stdout.write(render_terminal(doc))
    out = Path(args.output)
    out.mkdir(parents=True, exist_ok=True)
    for fname, text in (("compare.json", to_json(doc) + "\n"), ("compare.md", render_markdown(doc)),
                        ("compare.html", render_html(doc))):
        print(f"wrote {term_text(_write(out / fname, text))}", file=sys.stderr)
    return 0
