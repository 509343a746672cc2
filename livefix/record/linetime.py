"""The receiver time a plain-log line carries, read only from sentences whose checksum verifies.

Why a checksum first: a corrupted time field would otherwise move the session clock by hours. Lines
without a '*hh' field do not set the clock either: the decoder refuses them (no_checksum), and a
missing checksum is most often a cut line. A sentence starts at its '$' wherever it stands, so a
line whose '$' follows binary bytes or a host-stamp prefix keeps its time.

Also here: the file cut into blocks of lines as readline would cut it (text_blocks), and the scan
that finds, in a block, the few lines that can carry a time (HOT).
"""

from __future__ import annotations

import datetime as _dt
import re
from collections.abc import Iterator
from typing import BinaryIO, NamedTuple

from livefix.checksum import xor_checksum
from livefix.timefmt import year_from_yy

# Sentences whose time field is the time of a position fix (NMEA 0183), and that field's index.
FIX_TIME_FIELD = {b"GGA": 1, b"RMC": 1, b"GNS": 1, b"GLL": 5}
TIMED_KINDS = frozenset(FIX_TIME_FIELD) | {b"ZDA"}  # every sentence type line_time reads
RMC_DATE_FIELD = 9  # ddmmyy
BLOCK = 1 << 18  # bytes read at a time by text_blocks
_HEX = frozenset(b"0123456789ABCDEFabcdef")
_DAY = 86400.0


def _kinds_pattern(kinds: frozenset[bytes]) -> bytes:
    """'G(?:GA|LL|NS)|RMC|ZDA': the alternatives factored by first letter (the regex engine then
    tries one branch per '$', measured a quarter faster than a flat list)."""
    by_first: dict[bytes, list[bytes]] = {}
    for k in sorted(kinds):
        by_first.setdefault(k[:1], []).append(re.escape(k[1:]))
    return b"|".join(re.escape(f) + b"(?:" + b"|".join(r) + b")" for f, r in by_first.items())


# Where a line can matter to the clock, found at C speed: a piece (linetime.pieces: a line is cut
# before every '$') that opens with '$' and a timed sentence type. A line without one only joins
# the current stamp, whatever junk or other sentences it holds: line_time refuses all its pieces.
HOT = re.compile(rb"\$[^\n$][^\n$](?:" + _kinds_pattern(TIMED_KINDS) + rb")")


def wrap_step(step: float) -> float:
    """A time-of-day step folded into [-12 h, +12 h): a midnight rollover is a small step."""
    return (step + _DAY / 2) % _DAY - _DAY / 2


class LineTime(NamedTuple):
    key: bytes  # talker + sentence type, e.g. b"GPGGA"
    fix: bool  # a fix sentence (GGA/RMC/GNS/GLL); False for ZDA
    tod: float | None  # seconds of day; None when the time field is empty or unreadable
    date: _dt.date | None  # RMC/ZDA date when readable


def _cut(data: bytes, limit: int) -> tuple[list[bytes], bytes]:
    """The lines of `data` as readline(limit) cuts them, and the unfinished tail."""
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
    return lines, tail


def _may_be_long(data: bytes, end: int, limit: int) -> bool:
    """False when no line of data[:end] is longer than `limit`: a longer line holds `limit` bytes
    or more without LF, so it covers a whole aligned window of limit // 2 bytes with no LF in it.
    A few finds per block instead of a look at every line."""
    h = max(limit // 2, 1)
    return any(data.find(b"\n", i, i + h) < 0 for i in range(0, end - h + 1, h))


def text_blocks(f: BinaryIO, limit: int) -> Iterator[bytes | list[bytes]]:
    """The file a block at a time, cut exactly as repeated f.readline(limit) would cut it (LF kept;
    a line of more than `limit` bytes in pieces of `limit`). A block whose lines need no cutting
    comes whole, as bytes of complete lines, so the stamper can skip along it at C speed; a block
    with a line to cut, and the file's unfinished last line, come as lists of lines (one C-level
    split of the block, not a Python call per line)."""
    tail = b""
    while True:
        block = f.read(BLOCK)
        if not block:
            break
        data = tail + block if tail else block
        end = data.rfind(b"\n") + 1
        if len(data) - end >= limit or _may_be_long(data, end, limit):
            lines, tail = _cut(data, limit)
            yield lines
            continue
        tail = data[end:]
        if end:
            yield data[:end] if tail else data
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


def _fields(piece: bytes) -> list[bytes] | None:
    """The fields of a sentence whose '*hh' checksum verifies (address field first), else None."""
    s = piece.rstrip(b"\r\n \t")
    star = len(s) - 3
    if star < 6 or s[star] != 0x2A or s[star + 1] not in _HEX or s[star + 2] not in _HEX:
        return None  # no '*hh' at the end
    body = s[1:star]
    if not body.isascii() or xor_checksum(body) != int(s[star + 1:], 16):
        return None
    f = body.split(b",")
    return f if len(f[0]) == 5 else None


def _rmc_date(d: bytes) -> _dt.date | None:
    if len(d) == 6 and d.isdigit():
        return _date(year_from_yy(int(d[4:6])), int(d[2:4]), int(d[0:2]))
    return None


def line_time(piece: bytes, memo: TimeReader | None = None) -> LineTime | None:
    """The time of a GGA/RMC/GNS/GLL/ZDA sentence starting at piece[0] == '$', None for any other
    line and for a sentence whose checksum is missing or wrong. `memo` keeps the last time field
    and RMC date parsed (TimeReader), which changes nothing but the cost."""
    if piece[:1] != b"$" or len(piece) < 10:
        return None
    kind = piece[3:6]
    if kind not in FIX_TIME_FIELD and kind != b"ZDA":
        return None
    f = _fields(piece)
    if f is None:
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
    tod = tod_of(f[i]) if memo is None else memo.tod(f[i])
    date = None
    if kind == b"RMC" and len(f) > RMC_DATE_FIELD:
        date = _rmc_date(f[RMC_DATE_FIELD]) if memo is None else memo.rmc_date(f[RMC_DATE_FIELD])
    return LineTime(f[0], True, tod, date)


class TimeReader:
    """line_time with the last time field and RMC date kept parsed: the fix sentences of one epoch
    share them, so a 10 Hz log parses each once, not two or three times. One per stamper; one
    entry each, so it stays bounded."""

    __slots__ = ("_tf", "_tod", "_df", "_date")

    def __init__(self) -> None:
        self._tf: bytes | None = None
        self._tod: float | None = None
        self._df: bytes | None = None
        self._date: _dt.date | None = None

    def read(self, piece: bytes) -> LineTime | None:
        """The same value as line_time(piece)."""
        return line_time(piece, self)

    def tod(self, field: bytes) -> float | None:
        """tod_of(field), kept for a repeated field."""
        if field != self._tf:
            self._tf, self._tod = field, tod_of(field)
        return self._tod

    def rmc_date(self, field: bytes) -> _dt.date | None:
        """_rmc_date(field), kept for a repeated field."""
        if field != self._df:
            self._df, self._date = field, _rmc_date(field)
        return self._date
