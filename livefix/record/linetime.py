"""The receiver time a plain-log line carries, read only from sentences whose checksum verifies.

Why a checksum first: a corrupted time field would otherwise move the session clock by hours. Lines
without a '*hh' field do not set the clock either: the decoder refuses them (no_checksum), and a
missing checksum is most often a cut line. A sentence starts at its '$' wherever it stands, so a
line whose '$' follows binary bytes or a host-stamp prefix keeps its time.
"""

from __future__ import annotations

import datetime as _dt
from collections.abc import Iterator
from typing import BinaryIO, NamedTuple

from livefix.checksum import xor_checksum
from livefix.timefmt import year_from_yy

# Sentences whose time field is the time of a position fix (NMEA 0183), and that field's index.
FIX_TIME_FIELD = {b"GGA": 1, b"RMC": 1, b"GNS": 1, b"GLL": 5}
TIMED_KINDS = frozenset(FIX_TIME_FIELD) | {b"ZDA"}  # every sentence type line_time reads
RMC_DATE_FIELD = 9  # ddmmyy
BLOCK = 1 << 18  # bytes read at a time by line_blocks
_HEX = frozenset(b"0123456789ABCDEFabcdef")


class LineTime(NamedTuple):
    key: bytes  # talker + sentence type, e.g. b"GPGGA"
    fix: bool  # a fix sentence (GGA/RMC/GNS/GLL); False for ZDA
    tod: float | None  # seconds of day; None when the time field is empty or unreadable
    date: _dt.date | None  # RMC/ZDA date when readable


def line_blocks(f: BinaryIO, limit: int) -> Iterator[list[bytes]]:
    """The file's lines, a block at a time, cut exactly as repeated f.readline(limit) would cut them
    (LF kept; a line of more than `limit` bytes in pieces of `limit`). Why: one C-level split of a
    256 KiB block instead of a Python call per line; the stamper only looks inside timed lines."""
    tail = b""
    while True:
        block = f.read(BLOCK)
        if not block:
            break
        data = tail + block if tail else block
        if data.count(b"\r") == data.count(b"\r\n"):  # no lone CR: splitlines cuts only after LF
            lines = data.splitlines(keepends=True)
        else:
            lines = [ln + b"\n" for ln in data.split(b"\n")]
            lines[-1] = lines[-1][:-1]
        tail = lines.pop() if lines and lines[-1][-1:] != b"\n" else b""
        if len(tail) >= limit:  # readline hands out a line's first `limit` bytes whatever follows
            cut = len(tail) - len(tail) % limit
            lines.append(tail[:cut])
            tail = tail[cut:]
        if max(map(len, lines), default=0) > limit:
            lines = [ln[i:i + limit] for ln in lines for i in range(0, len(ln), limit)]
        yield lines
    if tail:
        yield [tail]


def pieces(line: bytes) -> list[bytes]:
    """The line cut before every '$' after its first byte (bytes kept exactly)."""
    i = line.find(b"$", 1)
    if i < 0:
        return [line]
    out, start = [], 0
    while i >= 0:
        out.append(line[start:i])
        start, i = i, line.find(b"$", i + 1)
    out.append(line[start:])
    return out


def tod_of(field: bytes) -> float | None:
    """'hhmmss[.ss]' -> seconds of day, None when not a time."""
    if len(field) < 6 or not field[:6].isdigit():
        return None
    h, m = int(field[:2]), int(field[2:4])
    try:
        s = float(field[4:])
    except ValueError:
        return None
    if h > 23 or m > 59 or not 0 <= s < 61:
        return None
    return h * 3600 + m * 60 + s


def _date(y: int, mo: int, d: int) -> _dt.date | None:
    try:
        return _dt.date(y, mo, d)
    except ValueError:
        return None


def line_time(piece: bytes) -> LineTime | None:
    """The time of a GGA/RMC/GNS/GLL/ZDA sentence starting at piece[0] == '$', None for any other
    line and for a sentence whose checksum is missing or wrong."""
    if piece[:1] != b"$" or len(piece) < 10:
        return None
    kind = piece[3:6]
    if kind not in FIX_TIME_FIELD and kind != b"ZDA":
        return None
    s = piece.rstrip(b"\r\n \t")
    star = len(s) - 3
    if star < 6 or s[star] != 0x2A or s[star + 1] not in _HEX or s[star + 2] not in _HEX:
        return None  # no '*hh' at the end
    body = s[1:star]
    if not body.isascii() or xor_checksum(body) != int(s[star + 1:], 16):
        return None
    f = body.split(b",")
    if len(f[0]) != 5:
        return None
    if kind == b"ZDA":
        if len(f) < 5:
            return None
        try:
            date = _date(int(f[4]), int(f[3]), int(f[2]))
        except ValueError:
            date = None
        return LineTime(f[0], False, tod_of(f[1]), date)
    i = FIX_TIME_FIELD[kind]
    if len(f) <= i:
        return None
    date = None
    if kind == b"RMC" and len(f) > RMC_DATE_FIELD:
        d = f[RMC_DATE_FIELD]
        if len(d) == 6 and d.isdigit():
            date = _date(year_from_yy(int(d[4:6])), int(d[2:4]), int(d[0:2]))
    return LineTime(f[0], True, tod_of(f[i]), date)
