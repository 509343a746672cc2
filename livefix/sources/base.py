"""What every source delivers: raw byte chunks stamped with host time, plus link-state changes.

A source never parses. It hands over every byte it received, in order, so the recorder can keep
them all and the framing stage can decide what they are. Times come from the host clocks at
arrival (or, in replay, from the recording), never from the data, so that analysis is a pure
function of this stream of items.
"""

from __future__ import annotations

import threading
from collections.abc import Iterator
from dataclasses import dataclass
from typing import Protocol


class Link:
    """Connection states; the state model time-stamps every change."""

    CONNECTING = "connecting"
    STREAMING = "streaming"
    STALLED = "stalled"  # connected, but no bytes for longer than the stall limit
    LOST = "lost"  # device vanished / peer closed / read error
    RECONNECTING = "reconnecting"  # waiting out a backoff before the next attempt
    ENDED = "ended"  # a finite source (file, stdin) reached its end

    ALL = (CONNECTING, STREAMING, STALLED, LOST, RECONNECTING, ENDED)


@dataclass(frozen=True, slots=True)
class Chunk:
    """Bytes exactly as read, with host monotonic seconds and host UTC (POSIX seconds)."""

    mono: float
    wall: float
    data: bytes


@dataclass(frozen=True, slots=True)
class LinkEvent:
    """A change of connection state, with a one-line human reason (e.g. the OS error)."""

    mono: float
    wall: float
    state: str
    detail: str = ""


@dataclass(frozen=True, slots=True)
class Marker:
    """An operator marker with a typed note (from the UI, `record --note`, or a recording)."""

    mono: float
    wall: float
    note: str


Item = Chunk | LinkEvent | Marker


class SourceError(Exception):
    """A source that cannot run at all (bad spec, no such file); the message is one clear line."""


class Source(Protocol):
    """A byte source. `items()` blocks with short timeouts and returns once `stop` is set.

    Sources that can reconnect (serial, TCP) never raise for I/O trouble: they yield LinkEvents
    (lost, reconnecting, streaming) and keep trying with backoff until `stop` is set.
    """

    name: str  # human label, e.g. "tcp://127.0.0.1:5000"
    finite: bool  # True for files/stdin/recordings: items() ends by itself

    def items(self, stop: threading.Event) -> Iterator[Item]: ...

    def write(self, data: bytes) -> None:
        """Send bytes to the receiver (restart commands). Raise SourceError if not possible."""
        ...

    def close(self) -> None: ...
