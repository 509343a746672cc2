"""What each part of livefix must offer the part that drives it, written down as Protocols.

Why Protocols and not base classes: a source, a recorder or an analyzer is any object with the
right members (the in-process Analyzer and the two-process stand-in in livefix.parallel share no
code), and a Protocol lets mypy check that structurally while `isinstance` (runtime_checkable)
tells an optional capability apart at run time, in place of probing names with getattr.
`tests/test_contracts.py` checks every concrete class against its Protocol both ways.

This module sits at the bottom rank with the items, so every layer may name these contracts; the
analyzer's epochs, events and counters are typed `Any` here because their types live higher up
(livefix.state.epoch, livefix.pipeline). Note that `isinstance` against a Protocol with data
members reads those attributes (Python 3.11): members here are cheap plain attributes or methods.
"""

from __future__ import annotations

import threading
from collections.abc import Iterator
from typing import Any, Protocol, runtime_checkable

from livefix.items import Item


@runtime_checkable
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


@runtime_checkable
class Paced(Protocol):
    """A source that sets its own pace (a replay, the simulator): speed None or 0 = unpaced."""

    @property
    def speed(self) -> float | None: ...

    @speed.setter
    def speed(self, value: float | None) -> None: ...

    @property
    def paused(self) -> bool: ...

    def pause(self) -> None: ...

    def resume(self) -> None: ...


@runtime_checkable
class Seekable(Paced, Protocol):
    """A replay that can jump; a jump back raises `generation` so the analysis starts afresh."""

    generation: int
    position_s: float  # stream seconds since the first item, of the last item delivered

    def seek(self, offset_s: float) -> None: ...

    def seek_to(self, position_s: float) -> None: ...


@runtime_checkable
class Probed(Protocol):
    """A live link that can be tried before the session starts and may carry foreign bytes."""

    def first_contact(self, timeout: float) -> None:
        """Raise SourceError (one line) when the device or peer cannot be reached."""
        ...

    def no_nmea_rule(self, limit_s: float) -> tuple[float, str]:
        """(seconds of bytes without any sentence before saying so, hint for the user)."""
        ...


@runtime_checkable
class ItemSink(Protocol):
    """Takes every item in order (the recording writer on the reader thread). A write never
    raises for an I/O failure, so the stream goes on: the first failure is kept in `error`."""

    error: str | None

    def write(self, item: Item) -> None: ...

    def close(self) -> None: ...


@runtime_checkable
class Analysis(Protocol):
    """What a Pipeline feeds: the Analyzer's calls, in stream order, and its snapshot."""

    def on_chunk(self, mono: float, wall: float, nbytes: int) -> None: ...

    def on_rejected(self, reason: str, mono: float, wall: float) -> None: ...

    def on_event(self, ev: Any) -> None: ...  # livefix.state.epoch.Event

    def on_epoch(self, ep: Any) -> None: ...  # livefix.state.epoch.Epoch

    def snapshot(self, counters: Any) -> dict[str, Any]: ...  # livefix.pipeline.StreamCounters


@runtime_checkable
class SteerableAnalysis(Analysis, Protocol):
    """An analysis a live session can steer between items (reset, reference point)."""

    def reset(self) -> None: ...

    def set_reference(self, lat: float, lon: float, h: float) -> None: ...

    def reference_to_mean(self) -> tuple[float, float, float] | None: ...
