"""Shared helpers for the source tests: advance a source's item generator until a wanted item."""

from __future__ import annotations

import time

from livefix.sources.base import LinkEvent


def take(gen, want, limit_s: float = 8.0, sink: list | None = None):  # noqa: ANN001, ANN201
    """Advance `gen` until want(item) is true; collect everything into sink."""
    end = time.monotonic() + limit_s
    for item in gen:
        if sink is not None:
            sink.append(item)
        if want(item):
            return item
        assert time.monotonic() < end, f"timed out waiting; last item {item!r}"
    raise AssertionError("source ended early")


def state_is(state: str):  # noqa: ANN201
    return lambda it: type(it) is LinkEvent and it.state == state
