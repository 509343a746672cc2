"""What every source delivers: raw byte chunks stamped with host time, plus link-state changes.

A source never parses. It hands over every byte it received, in order, so the recorder can keep
them all and the framing stage can decide what they are. Times come from the host clocks at
arrival (or, in replay, from the recording), never from the data, so that analysis is a pure
function of this stream of items.
"""

from __future__ import annotations

import threading
from collections.abc import Iterator
from typing import Protocol

from livefix.items import Chunk, Item, Link, LinkEvent, Marker

__all__ = ["Chunk", "Item", "Link", "LinkEvent", "Marker", "Source", "SourceError"]


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
