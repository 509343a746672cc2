"""Timestamps for plain NMEA logs, which carry no host times: pace by the receiver's UTC fields.

mono = seconds since the first time of fix seen (midnight rollover unwrapped, never backwards);
wall = date + time once a date is known (RMC/ZDA), else 2000-01-01 + time. Bytes are kept exactly
as in the file, junk included; lines sharing a time go out as one chunk.
"""

from __future__ import annotations

import calendar
from collections.abc import Iterator

from livefix.sources.base import Chunk, Item, Link, LinkEvent

NO_DATE_BASE = 946684800.0  # 2000-01-01T00:00:00Z
CHUNK_MAX = 65536
TIME_IDS = {b"GGA": (1, None), b"RMC": (1, 9), b"GNS": (1, None), b"ZDA": (1, "zda")}
STALL_S = 2.0  # same limit as the live sources: a silent gap this long becomes STALLED


def _tod(field: bytes) -> float | None:
    """'hhmmss.ss' -> seconds of day, None when not a time."""
    if len(field) < 6 or not field[:6].isdigit():
        return None
    try:
        h, m, s = int(field[:2]), int(field[2:4]), float(field[4:])
    except ValueError:
        return None
    if h > 23 or m > 59 or s >= 61:
        return None
    return h * 3600 + m * 60 + s


def _midnight(y: int, mo: int, d: int) -> float | None:
    try:
        return float(calendar.timegm((y, mo, d, 0, 0, 0)))
    except (ValueError, OverflowError):
        return None


def line_time(line: bytes) -> tuple[float, float | None] | None:
    """(seconds of day, POSIX midnight of the date or None) from a GGA/RMC/GNS/ZDA line."""
    s = line.strip()
    if len(s) < 7 or s[:1] != b"$":
        return None
    body = s[1:].split(b"*", 1)[0]
    fields = body.split(b",")
    rule = TIME_IDS.get(fields[0][2:5] if len(fields[0]) == 5 else b"")
    if rule is None or len(fields) < 2:
        return None
    tod = _tod(fields[1])
    if tod is None:
        return None
    date = None
    if rule[1] == "zda" and len(fields) >= 5:
        try:
            date = _midnight(int(fields[4]), int(fields[3]), int(fields[2]))
        except ValueError:
            date = None
    elif isinstance(rule[1], int) and len(fields) > rule[1]:
        f = fields[rule[1]]
        if len(f) == 6 and f.isdigit():
            yy = int(f[4:6])
            date = _midnight(2000 + yy if yy < 80 else 1900 + yy, int(f[2:4]), int(f[0:2]))
    return tod, date


class PlainStamper:
    """Sans-I/O: feed raw lines (terminators included), get stamped items back."""

    def __init__(self) -> None:
        self._pending = bytearray()
        self._first_tod: float | None = None
        self._last_tod = 0.0
        self._unwrapped = 0.0  # seconds since first time, as unwrapped
        self._mono = 0.0
        self._offset = NO_DATE_BASE  # wall = offset + (first_tod + unwrapped)
        self._started = False
        self._last_emit: float | None = None

    def _stamp(self) -> tuple[float, float]:
        base = self._first_tod or 0.0
        return self._mono, self._offset + base + self._unwrapped

    def _emit(self) -> list[Item]:
        if not self._pending:
            return []
        mono, wall = self._stamp()
        out: list[Item] = []
        if not self._started:
            self._started = True
            out.append(LinkEvent(mono, wall, Link.STREAMING, "plain NMEA log"))
        elif self._last_emit is not None and mono - self._last_emit > STALL_S:
            gap = mono - self._last_emit
            out.append(LinkEvent(self._last_emit + STALL_S, wall - gap + STALL_S, Link.STALLED,
                                 f"no bytes for {gap:.1f} s in the log"))
            out.append(LinkEvent(mono, wall, Link.STREAMING, "bytes flowing again"))
        out.append(Chunk(mono, wall, bytes(self._pending)))
        self._pending.clear()
        self._last_emit = mono
        return out

    def feed(self, line: bytes) -> list[Item]:
        out: list[Item] = []
        t = line_time(line)
        if t is not None:
            tod, date = t
            if self._first_tod is None:
                self._first_tod = self._last_tod = tod
            else:
                delta = tod - self._last_tod
                if delta < -43200:  # midnight rollover
                    delta += 86400
                if delta != 0:
                    out += self._emit()
                if delta > 0:
                    self._unwrapped += delta
                    self._mono += delta
                elif delta < 0:  # time went back: keep host-like mono monotonic, follow the time
                    self._unwrapped += delta
                self._last_tod = tod
            if date is not None:
                self._offset = date + tod - (self._first_tod + self._unwrapped)
        self._pending += line
        if len(self._pending) >= CHUNK_MAX:
            out += self._emit()
        return out

    def finish(self) -> list[Item]:
        return self._emit()


def iter_plain(f, limit: int = CHUNK_MAX) -> Iterator[Item]:  # noqa: ANN001 - binary file
    """Stamped items from a binary file object of NMEA text (any junk kept)."""
    st = PlainStamper()
    while True:
        line = f.readline(limit)
        if not line:
            break
        yield from st.feed(line)
    yield from st.finish()
