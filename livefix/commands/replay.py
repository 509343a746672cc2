"""`livefix replay FILE`: push a recording (or NMEA log) through the same Pipeline as live mode.

Without --headless it hands over to the UI when that is installed; headless it prints a summary.
"""

from __future__ import annotations

import argparse
import json
import sys
import threading
from collections import Counter
from typing import Any

from livefix.sources.base import Chunk, LinkEvent, SourceError
from livefix.sources.link import nmea_ok


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("file", help="a .lfr/.lfr.gz recording, the base name of a rotated set, or an NMEA log")
    p.add_argument("--headless", action="store_true", help="no UI: print a summary")
    p.add_argument("--speed", default="max", help="replay speed: max (default headless) or a factor")
    p.add_argument("--json", action="store_true", help="print the summary as JSON")


def _speed(text: str) -> float | None:
    if text in ("max", "0"):
        return None
    v = float(text)
    if v < 0:
        raise ValueError("--speed must be max or a positive factor")
    return v or None


def run(args: argparse.Namespace) -> int:
    try:
        speed = _speed(str(args.speed))
    except ValueError:
        print(f"livefix replay: bad --speed {args.speed!r}: use max or a factor like 4", file=sys.stderr)
        return 2
    if not args.headless:
        try:
            from livefix.commands.watch import run_replay
        except ImportError:
            print("livefix replay: the UI is not available; replaying headless", file=sys.stderr)
        else:
            return int(run_replay(args) or 0)
    from livefix.probe import check_file
    from livefix.sources.file import FileSource

    try:
        src = FileSource(args.file, speed=speed)
        check_file(src)
    except SourceError as exc:
        print(f"livefix replay: {exc}", file=sys.stderr)
        return 2
    summary = summarize(src)
    print(json.dumps(summary, indent=2, sort_keys=True) if args.json else format_summary(summary))
    return 0


def summarize(src: Any) -> dict[str, Any]:
    """Replay every item of a file source and return the summary dict (pipeline when available)."""
    try:
        from livefix.pipeline import Pipeline

        pipe = Pipeline(source=src.name)
    except ImportError:
        pipe = None
    links: Counter[str] = Counter()
    markers = 0
    fallback = _Fallback() if pipe is None else None
    for item in src.items(threading.Event()):
        if type(item) is LinkEvent:
            links[item.state] += 1
        elif type(item) is not Chunk:
            markers += 1
        if pipe is not None:
            pipe.feed(item)
        elif type(item) is Chunk:
            fallback.feed(item.data)
    out: dict[str, Any] = {"file": src.name, "recording": src.recording, "damage": src.damage,
                           "links": dict(links), "markers": markers, "header": src.header}
    if pipe is None:
        out.update(fallback.summary())
        return out
    pipe.finish()
    snap = pipe.snapshot()
    c, stream = snap.counters, snap.analysis.get("stream", {})
    # every satellite ever listed in view, counted exactly by the analysis (livefix.analysis.sky)
    # (finish() closed the last epoch, so every set received is in some epoch's satellites)
    by_sys = Counter(snap.analysis.get("sky", {}).get("seen") or {})
    out.update(lines=c.lines, by_type=dict(c.by_type), bad_checksum=c.bad_checksum,
               malformed=c.malformed, unknown=c.unknown, junk_bytes=c.junk_bytes, bytes=c.bytes,
               binary_frames=c.binary_frames, binary_bytes=c.binary_bytes,
               epochs=stream.get("epochs"), rate_hz=stream.get("rate_hz"),
               satellites=dict(sorted(by_sys.items())),
               fix_types=sorted(k for k, v in (snap.analysis.get("fix", {}).get("availability") or {}).items()
                                if v))
    return out


class _Fallback:
    """Counts when the pipeline stages are not installed: lines, types, checksum errors."""

    def __init__(self) -> None:
        self.tail = b""
        self.lines = self.bad = self.bytes = 0
        self.by_type: Counter[str] = Counter()

    def feed(self, data: bytes) -> None:
        self.bytes += len(data)
        *lines, self.tail = (self.tail + data).split(b"\n")
        for ln in lines:
            ln = ln.strip(b"\r")
            if not ln:
                continue
            self.lines += 1
            if nmea_ok(ln):
                self.by_type[ln[3:6].decode("ascii", "replace")] += 1
            elif b"*" in ln:
                self.bad += 1

    def summary(self) -> dict[str, Any]:
        return {"lines": self.lines, "by_type": dict(self.by_type), "bad_checksum": self.bad,
                "bytes": self.bytes, "pipeline": "not available"}


def format_summary(s: dict[str, Any]) -> str:
    kind = "recording" if s.get("recording") else "NMEA log"
    rows = [f"{kind}: {s['file']}"]
    if s.get("header", {}).get("notes"):
        rows.append("notes: " + " | ".join(str(s["header"]["notes"]).splitlines()))
    if isinstance(s.get("header", {}).get("site"), dict):  # the recorded site record (livefix.site)
        from livefix.site import NOT_RECORDED, from_mapping

        try:
            told = [f"{k}: {v}" for k, v in from_mapping(s["header"]["site"]).rows() if v != NOT_RECORDED]
        except ValueError:
            told = ["damaged"]
        rows.append("site record: " + ("; ".join(told) or "empty"))
    rows.append(f"lines: {s.get('lines')}  bytes: {s.get('bytes')}  junk bytes: {s.get('junk_bytes', '-')}")
    if s.get("binary_frames"):
        rows.append(f"binary: {s['binary_frames']} frames ({s.get('binary_bytes')} bytes), not counted as NMEA")
    types = ", ".join(f"{k} {v}" for k, v in sorted(s.get("by_type", {}).items())) or "none"
    rows.append(f"sentences: {types}")
    rows.append(f"checksum errors: {s.get('bad_checksum')}  malformed: {s.get('malformed', '-')}  "
                f"unknown: {s.get('unknown', '-')}")
    if "epochs" in s:
        rate = s.get("rate_hz")
        rows.append(f"epochs: {s.get('epochs')}  rate: {f'{rate:.2f} Hz' if rate else '-'}")
        sats = ", ".join(f"{k} {v}" for k, v in s.get("satellites", {}).items()) or "none"
        rows.append(f"satellites seen: {sats}")
        rows.append(f"fix types seen: {', '.join(s.get('fix_types') or []) or 'none'}")
    links = ", ".join(f"{k} {v}" for k, v in sorted(s.get("links", {}).items()))
    rows.append(f"link events: {links or 'none'}  markers: {s.get('markers', 0)}")
    rows.append(f"damage: {s['damage']}" if s.get("damage") else "damage: none")
    from livefix.report.escape import term_text

    return term_text("\n".join(rows), keep_newlines=True)  # notes/file names may hold escape sequences

