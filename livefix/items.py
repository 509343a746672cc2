"""The items that flow from the sources into the pipeline and the recorder: raw byte chunks stamped
with host time, link-state changes and operator markers.

A neutral module below every stage, so that the recording format, the state model and the pipeline
can name these items without importing the sources that make them. Times come from the host clocks
at arrival (or, in replay, from the recording), never from the data, so that analysis is a pure
function of this stream of items.
"""

from __future__ import annotations

from dataclasses import dataclass


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
