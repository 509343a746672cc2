"""Session: a source on a reader thread (which also records) and the pipeline on an analysis thread.

Why two threads: the reader must never stall on analysis, or a serial port overruns and the
recording has holes. The recording gets every item; the analysis gets them through a bounded
queue and, if it falls behind for longer than `block_s`, sheds chunks (counted, shown), never
recorded data. Controls travel through the same queue, so they apply in stream order. Readers see
an immutable Snapshot published at most `publish_hz` times a second, plus once at the end.
"""

from __future__ import annotations

import threading
import time
from collections import deque
from collections.abc import Callable
from dataclasses import replace
from pathlib import Path
from typing import Any

from livefix.analysis.config import AnalysisConfig
from livefix.contracts import ItemSink, Paced, Seekable
from livefix.pipeline import Pipeline, Snapshot
from livefix.sources.base import Chunk, Link, LinkEvent, Marker, Source

QUEUE_ITEMS = 512  # stream items waiting for the analysis (bounded memory)
BLOCK_S = 0.5  # how long the reader waits for room before shedding a chunk
POLL_S = 0.1  # every wait in a loop is this short, against the exit Event


class _Control:
    """A control call run on the analysis thread, between stream items."""

    __slots__ = ("fn",)

    def __init__(self, fn: Callable[[Pipeline], Any]) -> None:
        self.fn = fn


class _End:
    """Sentinel: no more items; `natural` when the source ended by itself (not stopped)."""

    __slots__ = ("natural",)

    def __init__(self, natural: bool) -> None:
        self.natural = natural


_EMPTY = object()


class _Feed:
    """One ordered queue: stream items count against the cap, controls and the sentinel do not."""

    def __init__(self, cap: int) -> None:
        self.cap = cap
        self._q: deque[tuple[bool, object]] = deque()
        self._items = 0
        self._cv = threading.Condition()

    def has_room(self) -> bool:
        return self._items < self.cap

    def wait_room(self, timeout: float) -> bool:
        with self._cv:
            return self._cv.wait_for(self.has_room, timeout)

    def push(self, x: object, counted: bool) -> None:
        with self._cv:
            self._q.append((counted, x))
            self._items += counted
            self._cv.notify_all()

    def pop(self, timeout: float) -> object:
        with self._cv:
            if not self._q:
                self._cv.wait(timeout)
            if not self._q:
                return _EMPTY
            counted, x = self._q.popleft()
            self._items -= counted
            self._cv.notify_all()
            return x


class Session:
    def __init__(self, source: Source, config: AnalysisConfig | None = None,
                 record_path: str | Path | None = None, notes: str = "", publish_hz: float = 5.0,
                 on_snapshot: Callable[[Snapshot], None] | None = None, compress: str | None = None,
                 rotate_s: float | None = None, *, queue_items: int = QUEUE_ITEMS,
                 block_s: float = BLOCK_S, site: dict[str, Any] | None = None) -> None:
        self.source = source
        self.notes, self.compress, self.rotate_s = notes, compress, rotate_s
        self.site = site  # livefix.site JSON, kept in the recording header
        self._config = config
        self.pipeline = Pipeline(config, source.name)
        self.period = 1.0 / publish_hz if publish_hz > 0 else 0.0
        self.on_snapshot = on_snapshot
        self.block_s = block_s
        self.latest: Snapshot | None = None  # swapped whole: readers never see a half-built one
        self.error: str | None = None
        self.dropped_chunks = 0
        self.reference: tuple[float, float, float] | None = None  # last reference set by a control
        self._feed = _Feed(queue_items)
        self._stop = threading.Event()
        self._done = threading.Event()  # finite source fully processed
        self._finished = threading.Event()  # analysis thread has ended
        self._lock = threading.Lock()  # recorder swap + (record, enqueue) order
        self._recorder: ItemSink | None = None
        self._rec_path: str | None = None
        self._rec_error_noted: str | None = None  # last recording error put in the event list
        self._rec_error: str | None = None
        self._last_times: tuple[float, float] | None = None
        self._record_path = record_path
        self._threads: list[threading.Thread] = []

    # -- life cycle ------------------------------------------------------------------------
    def start(self) -> Session:
        """Open the recording (OSError if it cannot be created) and start both threads."""
        if self._record_path is not None:
            self.start_recording(self._record_path)
        for name, target in (("livefix-reader", self._read), ("livefix-analysis", self._analyse)):
            t = threading.Thread(target=target, name=name, daemon=True)
            self._threads.append(t)
            t.start()
        return self

    def stop(self, timeout: float = 5.0) -> None:
        """Ask the source to end, let the analysis drain what is queued, join both threads."""
        self._stop.set()
        end = time.monotonic() + timeout
        for t in self._threads[:1]:
            t.join(max(0.0, end - time.monotonic()))
        self._feed.push(_End(False), False)  # in case the reader is stuck inside the source
        for t in self._threads[1:]:
            t.join(max(0.0, end - time.monotonic()))
        self._close_recorder()

    @property
    def done(self) -> bool:
        return self._done.is_set()

    @property
    def running(self) -> bool:
        return any(t.is_alive() for t in self._threads)

    def wait(self, timeout: float | None = None) -> bool:
        """Wait until the analysis has ended; True when a finite source was fully processed."""
        self._finished.wait(timeout)
        return self.done

    # -- reader thread ---------------------------------------------------------------------
    def _read(self) -> None:
        feed, stop = self._feed, self._stop
        natural = False
        src = self.source
        seekable = src if isinstance(src, Seekable) else None
        generation = seekable.generation if seekable is not None else 0
        try:
            for item in src.items(stop):
                self._last_times = (item.mono, item.wall)
                if seekable is not None and seekable.generation != generation:
                    generation = seekable.generation  # a replay sought backwards: analysis starts afresh
                    self._control(self._restart)
                if not feed.has_room():  # analysis behind: wait a little before shedding
                    until = time.monotonic() + self.block_s
                    while not feed.wait_room(min(POLL_S, self.block_s)):
                        if stop.is_set() or time.monotonic() >= until:
                            break
                with self._lock:  # record and enqueue together: both see the same order
                    if self._recorder is not None:
                        self._recorder.write(item)
                    if type(item) is Chunk and not feed.has_room():
                        self.dropped_chunks += 1
                    else:  # link events and markers are never shed
                        feed.push(item, True)
                if stop.is_set():
                    break
            else:
                natural = not stop.is_set()
        except Exception as exc:  # noqa: BLE001 - a broken source becomes a visible link loss
            self._fail("reader", exc)
            t = self._last_times or (time.monotonic(), time.time())
            lost = LinkEvent(t[0], t[1], Link.LOST, f"source failed: {type(exc).__name__}: {exc}")
            with self._lock:
                if self._recorder is not None:
                    self._recorder.write(lost)
                feed.push(lost, False)
        finally:
            try:
                self.source.close()
            except Exception as exc:  # noqa: BLE001
                self._fail("reader", exc)
            if natural:
                self._close_recorder()
            feed.push(_End(natural), False)

    # -- analysis thread -------------------------------------------------------------------
    def _analyse(self) -> None:
        feed = self._feed
        last_pub, dirty, natural = 0.0, False, False
        while True:
            x = feed.pop(POLL_S)
            if x is _EMPTY:
                if dirty and time.monotonic() - last_pub >= self.period:
                    self._publish()
                    last_pub, dirty = time.monotonic(), False
                continue
            if type(x) is _End:
                natural = x.natural
                break
            try:
                if type(x) is _Control:
                    x.fn(self.pipeline)
                else:
                    self.pipeline.feed(x)  # type: ignore[arg-type]
            except Exception as exc:  # noqa: BLE001 - shown in the snapshot; the stream goes on
                self._fail("analysis", exc)
            dirty = True
            now = time.monotonic()
            if now - last_pub >= self.period:
                self._publish()
                last_pub, dirty = now, False
        try:
            self.pipeline.finish()
        except Exception as exc:  # noqa: BLE001
            self._fail("analysis", exc)
        if natural:
            self._done.set()
        self._publish()
        self._finished.set()

    def _restart(self, old: Pipeline) -> None:
        self.pipeline = Pipeline(self._config, self.source.name)
        if self.reference is not None:
            self.pipeline.set_reference(*self.reference)

    def _publish(self) -> None:
        try:
            rec = self._recorder
            rec_error = (rec.error if rec is not None else None) or self._rec_error
            if rec_error and rec_error != self._rec_error_noted:  # once per failure, in the timeline
                self._rec_error_noted = rec_error
                self.pipeline.note("recording", rec_error, {"action": "error", "error": rec_error})
            snap = self.pipeline.snapshot(recording=self._rec_path, recording_error=rec_error)
            snap = replace(snap, dropped_chunks=self.dropped_chunks, error=self.error)
        except Exception as exc:  # noqa: BLE001
            self._fail("snapshot", exc)
            return
        self.latest = snap
        if self.on_snapshot is not None:
            try:
                self.on_snapshot(snap)
            except Exception as exc:  # noqa: BLE001 - a reader's bug must not stop the analysis
                self._fail("on_snapshot", exc)

    def _fail(self, where: str, exc: BaseException) -> None:
        if self.error is None:
            self.error = f"{where}: {type(exc).__name__}: {exc}"

    # -- controls (any thread) -------------------------------------------------------------
    def _control(self, fn: Callable[[Pipeline], Any]) -> None:
        self._feed.push(_Control(fn), False)

    def _now(self) -> tuple[float, float]:
        """Stream time for an operator action: host time live, the last item's time in replay."""
        if self.source.finite and self._last_times is not None:
            return self._last_times
        return time.monotonic(), time.time()

    def start_recording(self, path: str | Path) -> None:
        """Record from the next item on (raises OSError/ValueError if the file cannot be made)."""
        from livefix.record.writer import Recorder

        rec = Recorder(path, source=self.source.name, notes=self.notes, compress=self.compress,
                       rotate_s=self.rotate_s, site=self.site)
        with self._lock:
            old, self._recorder = self._recorder, rec
            self._rec_path, self._rec_error = str(rec.path), None
        if old is not None:
            old.close()
        text = f"recording to {rec.path}"
        self._control(lambda p: p.note("recording", text, {"path": str(rec.path), "action": "start"}))

    def stop_recording(self) -> None:
        path = self._rec_path
        self._close_recorder()
        if path:
            self._control(lambda p: p.note("recording", f"recording stopped: {path}",
                                           {"path": path, "action": "stop"}))

    def _close_recorder(self) -> None:
        with self._lock:
            rec, self._recorder = self._recorder, None
        if rec is not None:
            rec.close()
            self._rec_error = rec.error

    def add_marker(self, note: str) -> Marker:
        """A marker goes into the recording and the analysis at the same place in the stream."""
        mono, wall = self._now()
        m = Marker(mono, wall, note)
        with self._lock:
            if self._recorder is not None:
                self._recorder.write(m)
            self._feed.push(m, False)
        return m

    def set_reference(self, lat: float, lon: float, h: float) -> None:
        def apply(p: Pipeline) -> None:
            p.set_reference(lat, lon, h)
            self.reference = (lat, lon, h)

        self._control(apply)

    def set_reference_to_mean(self) -> None:
        def apply(p: Pipeline) -> None:
            ref = p.set_reference_to_mean()
            if ref is not None:
                self.reference = ref

        self._control(apply)

    def reset_statistics(self) -> None:
        self._control(lambda p: p.reset_analysis())

    def _steer(self, capability: type, act: Callable[[Any], None]) -> bool:
        """Apply a replay control when the source has the capability (livefix.contracts)."""
        src = self.source
        if not isinstance(src, capability):
            return False
        act(src)
        return True

    def pause(self) -> bool:
        """Pause a replay; False when the source cannot pause (live sources)."""
        return self._steer(Paced, lambda src: src.pause())

    def resume(self) -> bool:
        return self._steer(Paced, lambda src: src.resume())

    def set_speed(self, factor: float | None) -> bool:
        """Replay speed (None = as fast as possible); False when the source has no speed."""
        return self._steer(Paced, lambda src: setattr(src, "speed", factor))

    def seek(self, offset_s: float) -> bool:
        """Skip forward/back by offset_s seconds of the recording (replays only)."""
        return self._steer(Seekable, lambda src: src.seek(offset_s))

    def seek_to(self, position_s: float) -> bool:
        return self._steer(Seekable, lambda src: src.seek_to(position_s))

    def write(self, data: bytes) -> None:
        """Send bytes to the receiver (SourceError when the source cannot send)."""
        self.source.write(data)
