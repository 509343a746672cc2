"""The .lfr record layout shared by writer and reader (docs/recording.md): one place for the bytes."""

from __future__ import annotations

import json
import re
import zlib
from pathlib import Path

from livefix.items import Chunk, Item, LinkEvent, Marker

FORMAT_NAME = "livefix-recording"
VERSION = 1
MAGIC = b'{"format": "livefix-recording"'  # first bytes of every (uncompressed) recording
GZIP_MAGIC = b"\x1f\x8b"
MAX_HEADER_LINE = 1 << 20  # the JSON header line (notes included) may not exceed 1 MiB
MAX_RECORD_LINE = 128  # "@K mono wall length crc\n" is far shorter
KINDS = {Chunk: "D", LinkEvent: "L", Marker: "M"}
END = "E"  # last record of a cleanly closed or rotated file
PART_RE = re.compile(r"^(?P<stem>.*)\.(?P<num>\d{4})\.lfr(?P<gz>\.gz)?$")


def header_line(fields: dict) -> bytes:
    """The first line: JSON with `format` first so MAGIC identifies the file."""
    body = {"format": FORMAT_NAME, "version": VERSION, **fields}
    return json.dumps(body, ensure_ascii=True).encode("ascii") + b"\n"


def record(kind: str, mono: float, wall: float, payload: bytes) -> bytes:
    """One record: text header line, payload bytes verbatim, newline."""
    head = f"@{kind} {mono!r} {wall!r} {len(payload)} {zlib.crc32(payload):08x}\n"  # repr: exact round trip
    return head.encode("ascii") + payload + b"\n"


def encode(item: Item) -> bytes:
    t = type(item)
    if t is Chunk:
        return record("D", item.mono, item.wall, item.data)
    if t is LinkEvent:
        text = item.state + (" " + item.detail if item.detail else "")
        return record("L", item.mono, item.wall, text.encode("utf-8", "replace"))
    if t is Marker:
        return record("M", item.mono, item.wall, item.note.encode("utf-8", "replace"))
    raise TypeError(f"cannot record {t.__name__}")


def end_record(mono: float, wall: float, reason: str, next_part: str | None = None) -> bytes:
    body = {"reason": reason, **({"next": next_part} if next_part else {})}
    return record(END, mono, wall, json.dumps(body).encode("ascii"))


def decode(kind: str, mono: float, wall: float, payload: bytes) -> Item | None:
    """Record -> Item; None for the end record and for kinds a newer writer may add."""
    if kind == "D":
        return Chunk(mono, wall, payload)
    if kind == "L":
        state, _, detail = payload.decode("utf-8", "replace").partition(" ")
        return LinkEvent(mono, wall, state, detail)
    if kind == "M":
        return Marker(mono, wall, payload.decode("utf-8", "replace"))
    return None


def split_name(path: Path) -> tuple[Path, str]:
    """'site.lfr.gz' -> (Path('site'), '.lfr.gz'); unknown suffixes give ('.lfr')."""
    name = path.name
    for suf in (".lfr.gz", ".lfr"):
        if name.endswith(suf) and len(name) > len(suf):
            return path.with_name(name[: -len(suf)]), suf
    return path, ".lfr"


def part_path(stem: Path, num: int, suffix: str) -> Path:
    return stem.with_name(f"{stem.name}.{num:04d}{suffix}")
