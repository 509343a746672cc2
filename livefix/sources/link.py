"""Shared pieces of the live sources: link-event stamping, backoff, stall watch, NMEA check.

Kept sans-I/O so serial, TCP and stdin behave the same way and the rules live in one place.
"""

from __future__ import annotations

import time

from livefix.checksum import sentence_ok
from livefix.sources.base import Link, LinkEvent

STALL_S = 2.0  # connected but silent this long -> STALLED (once)
BACKOFF_FIRST_S = 0.5
BACKOFF_CAP_S = 8.0
CHUNK_MAX = 65536  # largest single read


def event(state: str, detail: str = "") -> LinkEvent:
    """A LinkEvent stamped with host clocks now."""
    return LinkEvent(time.monotonic(), time.time(), state, detail)


class Backoff:
    """Exponential retry delays 0.5, 1, 2, 4, 8, 8 ... seconds; reset after good data."""

    def __init__(self, first: float = BACKOFF_FIRST_S, cap: float = BACKOFF_CAP_S) -> None:
        self.first, self.cap = first, cap
        self._next = first

    def next(self) -> float:
        d = self._next
        self._next = min(self.cap, self._next * 2.0)
        return d

    def reset(self) -> None:
        self._next = self.first


class StallWatch:
    """Turns arrival times into STALLED/STREAMING transitions (one event per transition)."""

    def __init__(self, limit_s: float = STALL_S) -> None:
        self.limit_s = limit_s
        self.last = time.monotonic()
        self.stalled = False

    def restart(self) -> None:
        self.last = time.monotonic()
        self.stalled = False

    def on_bytes(self, now: float) -> LinkEvent | None:
        """Bytes arrived at `now`; returns STREAMING if this ends a stall."""
        self.last = now
        if self.stalled:
            self.stalled = False
            return event(Link.STREAMING, "bytes flowing again")
        return None

    def on_idle(self, now: float) -> LinkEvent | None:
        """A read timed out; returns STALLED once when the silence exceeds the limit."""
        if not self.stalled and now - self.last > self.limit_s:
            self.stalled = True
            return event(Link.STALLED, f"no bytes for {now - self.last:.1f} s")
        return None


nmea_ok = sentence_ok  # a complete `$...*hh` / `!...*hh` line with a right checksum (NMEA 0183 XOR)


class NmeaCounter:
    """Counts valid NMEA lines in a byte stream fed in arbitrary pieces (bounded tail)."""

    def __init__(self) -> None:
        self.good = 0
        self._tail = b""

    def feed(self, data: bytes) -> int:
        buf = self._tail + data
        *lines, self._tail = buf.split(b"\n")
        self._tail = self._tail[-256:]
        self.good += sum(1 for ln in lines if nmea_ok(_from_start(ln)))
        return self.good


def _from_start(line: bytes) -> bytes:
    """The line from its last '$' or '!': junk glued in front of a sentence (a glitch, the tail of
    a binary frame) does not hide the sentence, as the framer would not let it either."""
    k = max(line.rfind(b"$"), line.rfind(b"!"))
    return line[k:] if k > 0 else line
