"""Standard input source `-`: binary reads of fd 0 with select() timeouts; ENDED at EOF."""

from __future__ import annotations

import os
import select
import threading
import time
from collections.abc import Iterator

from livefix.sources.base import Chunk, Item, Link, SourceError
from livefix.sources.link import CHUNK_MAX, StallWatch, event


class StdinSource:
    """Reads raw bytes (never text mode: junk and odd encodings must survive untouched)."""

    finite = True
    name = "stdin"

    def __init__(self, fd: int = 0, *, stall_s: float = 2.0, poll_s: float = 0.1) -> None:
        self.fd, self.stall_s, self.poll_s = fd, stall_s, poll_s
        self._closed = threading.Event()

    def items(self, stop: threading.Event) -> Iterator[Item]:
        yield event(Link.STREAMING, "standard input")
        watch = StallWatch(self.stall_s)
        total = 0
        while not (stop.is_set() or self._closed.is_set()):
            try:
                ready, _, _ = select.select([self.fd], [], [], self.poll_s)
                data = os.read(self.fd, CHUNK_MAX) if ready else None
            except OSError as exc:
                yield event(Link.ENDED, f"standard input: {exc}")
                return
            now = time.monotonic()
            if data is None:
                ev = watch.on_idle(now)
                if ev:
                    yield ev
                continue
            if not data:
                yield event(Link.ENDED, f"end of input after {total} bytes")
                return
            total += len(data)
            ev = watch.on_bytes(now)
            if ev:
                yield ev
            yield Chunk(now, time.time(), data)

    def write(self, data: bytes) -> None:
        raise SourceError("cannot send to the receiver when reading standard input")

    def close(self) -> None:
        self._closed.set()
