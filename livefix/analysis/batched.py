"""BatchedAnalysis: an analysis that takes the pipeline's calls in runs instead of one by one.

Why: in one process the decoding front and the statistics alternate every epoch, and each evicts the
other's code and data from the CPU caches. Recording the calls and playing a run of them into the
analyzer at once lets each side work warm: a one-process report of 60 minutes at 10 Hz took about
10 % less CPU, start-up included (bench/RESULTS.md, tenth step). The numbers cannot change: the analyzer gets the same
calls with the same arguments in the same order, only later, and every reader (snapshot, the steering
calls) plays what is waiting first. It is what livefix.parallel's proxy does, without the second
process. Batch runs use it (livefix.parallel.analyzer_for); the live monitor feeds its Analyzer
directly, so its statistics are never behind the stream.

Bounded: at most CAP recorded calls wait. The values recorded are immutable (floats, strings, frozen
epochs and events), as for the two-process path, which pickles them only when it sends a batch.
"""

from __future__ import annotations

from typing import Any

from livefix.contracts import SteerableAnalysis

CAP = 512  # calls waiting at most (epochs, chunks, events, refusals): a few hundred kB of epochs


class BatchedAnalysis:
    """Records the feeding calls of a SteerableAnalysis (the Analyzer) and plays them in runs."""

    __slots__ = ("inner", "cap", "_calls", "_epoch", "_chunk", "_rejected", "_event")

    def __init__(self, inner: SteerableAnalysis, cap: int = CAP) -> None:
        if cap < 1:
            raise ValueError("cap must be at least 1")
        self.inner = inner
        self.cap = cap
        self._calls: list[Any] = []  # an epoch as it is; any other call as (method, *args)
        self._epoch, self._chunk = inner.on_epoch, inner.on_chunk
        self._rejected, self._event = inner.on_rejected, inner.on_event

    # -- the feeding calls, recorded ------------------------------------------------------------
    def on_chunk(self, mono: float, wall: float, nbytes: int) -> None:
        calls = self._calls
        calls.append((self._chunk, mono, wall, nbytes))
        if len(calls) >= self.cap:
            self.flush()

    def on_rejected(self, reason: str, mono: float, wall: float) -> None:
        calls = self._calls
        calls.append((self._rejected, reason, mono, wall))
        if len(calls) >= self.cap:
            self.flush()

    def on_event(self, ev: Any) -> None:
        calls = self._calls
        calls.append((self._event, ev))
        if len(calls) >= self.cap:
            self.flush()

    def on_epoch(self, ep: Any) -> None:
        calls = self._calls
        calls.append(ep)  # an Epoch is never a tuple
        if len(calls) >= self.cap:
            self.flush()

    def flush(self) -> None:
        """Play every waiting call into the analyzer, in order. A call that raises ends the play
        there and the rest are dropped, as the run that raised ends too."""
        calls = self._calls
        if not calls:
            return
        self._calls = []
        on_epoch = self._epoch
        for c in calls:
            if c.__class__ is tuple:
                c[0](*c[1:])
            else:
                on_epoch(c)

    # -- readers and steering: the waiting calls first ---------------------------------------------
    def snapshot(self, counters: Any) -> dict[str, Any]:
        self.flush()
        return self.inner.snapshot(counters)

    def reset(self) -> None:
        self.flush()
        self.inner.reset()

    def set_reference(self, lat: float, lon: float, h: float) -> None:
        self.flush()
        self.inner.set_reference(lat, lon, h)

    def reference_to_mean(self) -> tuple[float, float, float] | None:
        self.flush()
        return self.inner.reference_to_mean()
