"""The one bounded event list: state-model events and analysis events together, in stream order.

Why one list: the UI, reports and checks all show the same timeline, and memory stays fixed on
multi-day soaks (the newest `maxlen` are kept, older ones are only counted).
"""

from __future__ import annotations

import math
from collections import deque
from typing import Any

from livefix.state.epoch import Event


def jsonable(v: Any) -> Any:
    """Plain JSON values only: NaN/inf -> None, numpy scalars -> Python, tuples -> lists."""
    if v is None or isinstance(v, (bool, str, int)):
        return v
    if isinstance(v, float):
        return v if math.isfinite(v) else None
    if isinstance(v, dict):
        return {str(k): jsonable(x) for k, x in v.items()}
    if isinstance(v, (list, tuple, deque)):
        return [jsonable(x) for x in v]
    if hasattr(v, "item"):  # numpy scalar
        return jsonable(v.item())
    return str(v)


class EventLog:
    """Bounded, sorted by (mono, arrival) so late-arriving analysis events slot into place."""

    def __init__(self, maxlen: int = 500) -> None:
        self.maxlen = maxlen
        self._items: deque[tuple[float, int, Event]] = deque()
        self._seq = 0
        self.dropped = 0  # events older than the kept window
        self.total = 0

    def add(self, ev: Event) -> None:
        self._seq += 1
        self.total += 1
        entry = (ev.mono, self._seq, ev)
        items = self._items
        if not items or items[-1][0] <= ev.mono:
            items.append(entry)
        else:  # rare: an analysis event stamped earlier than the last state event
            i = len(items)
            while i > 0 and items[i - 1][0] > ev.mono:
                i -= 1
            items.insert(i, entry)
        if len(items) > self.maxlen:
            items.popleft()
            self.dropped += 1

    def __len__(self) -> int:
        return len(self._items)

    def list(self) -> list[Event]:
        return [e for _, _, e in self._items]

    def to_json(self) -> list[dict[str, Any]]:
        return [jsonable(e.to_json()) for _, _, e in self._items]

    def reset(self) -> None:
        self._items.clear()
        self._seq = self.dropped = self.total = 0
