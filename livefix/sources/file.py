"""File source: a livefix recording or a plain NMEA log, replayed at any speed with controls.

Pacing sleeps by stream-time deltas / speed; every control (speed, pause, seek) re-anchors the
clock so the stream never bursts or stalls after a change. A forward seek delivers the skipped
items unpaced (the consumer's analysis stays whole); a backward seek bumps `generation`, yields
LinkEvent(connecting, "seek") so the consumer can rebuild its pipeline, and re-reads from the start.
"""

from __future__ import annotations

import threading
import time
from collections.abc import Iterator
from pathlib import Path

from livefix.record import fmt
from livefix.record.reader import RecordingReader, _next_part, _open_stream, _parse_head, resolve_parts
from livefix.sources.base import Item, Link, LinkEvent, SourceError

SLICE_S = 0.05  # longest single sleep, so stop and controls act promptly


def last_record_mono(path: str) -> float | None:
    """Stream time of the last record of a recording (every part, compressed or not), reading
    only record heads and skipping payloads: the replay header's length. None for plain logs or
    when no record could be read."""
    best: float | None = None
    p: Path | None = resolve_parts(path)
    try:
        while p is not None:
            f, _ = _open_stream(p)
            with f:
                f.readline(fmt.MAX_HEADER_LINE)
                while line := f.readline(fmt.MAX_RECORD_LINE):
                    head = _parse_head(line)
                    if head is None:
                        break
                    if head[0] != fmt.END:
                        best = head[1] if best is None else max(best, head[1])
                    f.read(head[3] + 1)
            p = _next_part(p)
    except (OSError, EOFError, ValueError):
        return best
    return best


class FileSource:
    finite = True

    def __init__(self, path: str, speed: float | None = None) -> None:
        try:
            self._reader = RecordingReader(path)
        except OSError as exc:
            msg = f"cannot read {path}: {exc.strerror}" if exc.strerror else str(exc)
            raise SourceError(msg) from None
        self.path = path
        self.name = str(path)
        self.header = self._reader.header
        self.recording = self._reader.recording
        self.damage: str | None = None
        self.generation = 0
        self.position_s = 0.0  # stream seconds since the first item, of the last item delivered
        self._first_mono: float | None = None
        self._last_mono: float | None = None
        self._tail_read = False
        self._speed = float(speed or 0.0)
        self._paused = False
        self._seek: float | None = None  # requested absolute position (s from start)
        self._wake = threading.Event()
        self._lock = threading.Lock()
        self._closed = threading.Event()

    # -- controls (any thread) ----------------------------------------------------------------
    @property
    def speed(self) -> float:
        return self._speed

    @speed.setter
    def speed(self, value: float | None) -> None:
        self._speed = float(value or 0.0)
        self._wake.set()

    @property
    def length_s(self) -> float | None:
        """Stream seconds from the first to the last record (None until scanned, or a plain log)."""
        if not self.recording or self._first_mono is None:
            return None
        if not self._tail_read:  # once, off the UI thread: a day-long file takes seconds to scan
            self._tail_read = True
            threading.Thread(target=self._scan_length, name="replay-length", daemon=True).start()
        if self._last_mono is None or self._last_mono < self._first_mono:
            return None
        return self._last_mono - self._first_mono

    def _scan_length(self) -> None:
        self._last_mono = last_record_mono(self.path)

    @property
    def paused(self) -> bool:
        return self._paused

    def pause(self) -> None:
        self._paused = True
        self._wake.set()

    def resume(self) -> None:
        self._paused = False
        self._wake.set()

    def seek(self, offset_s: float) -> None:
        """Jump by offset_s stream seconds (negative = back) from the current position."""
        self.seek_to(self.position_s + offset_s)

    def seek_to(self, position_s: float) -> None:
        with self._lock:
            self._seek = max(0.0, position_s)
        self._wake.set()

    # -- the loop -------------------------------------------------------------------------------
    def items(self, stop: threading.Event) -> Iterator[Item]:
        reader = self._reader
        it = reader.items()
        first: Item | None = None
        anchor: tuple[float, float] | None = None  # (host mono, stream mono)
        ff_until: float | None = None  # fast-forward to this stream mono
        last: Item | None = None

        stopped, closed = stop.is_set, self._closed.is_set  # bound once: checked before every item

        def halt() -> bool:
            return stopped() or closed()

        while not (stopped() or closed()):
            target = None
            if self._seek is not None:  # unlocked look first (one attribute read); the swap takes the lock
                with self._lock:
                    target, self._seek = self._seek, None
            if target is not None and first is not None:
                if first.mono + target < (last.mono if last else first.mono):
                    self.generation += 1
                    yield LinkEvent(first.mono, first.wall, Link.CONNECTING, "seek")
                    reader = RecordingReader(self.path)
                    it, last = reader.items(), None
                ff_until, anchor = first.mono + target, None
            item = next(it, None)
            if item is None:
                break
            if first is None:
                first = item
                self._first_mono = item.mono
            if ff_until is not None and item.mono >= ff_until:
                ff_until = None
            if ff_until is None and self._speed > 0:
                anchor = self._pace(item.mono, anchor, halt)
                if halt():
                    return
            last = item
            self.position_s = item.mono - first.mono
            yield item
        if halt():
            return
        self.damage = reader.damage
        mono, wall = (last.mono, last.wall) if last else (0.0, 0.0)
        if reader.damage:
            detail = f"recording damaged: {reader.damage}"
        elif reader.recording:
            detail = f"end of recording ({reader.records} records)"
        else:
            detail = "end of log"
        if not reader.damage and isinstance(last, LinkEvent) and last.state == Link.ENDED:
            return  # the recording already says how its source ended: one "ended", not two
        yield LinkEvent(mono, wall, Link.ENDED, detail)

    def _pace(self, mono: float, anchor: tuple[float, float] | None, halt) -> tuple[float, float] | None:  # noqa: ANN001
        """Wait until stream time `mono` is due; returns the (possibly re-set) anchor."""
        while True:
            now = time.monotonic()
            if anchor is None:
                anchor = (now, mono)
            speed = self._speed
            # stream time reached so far under the current anchor (for re-anchoring on change)
            reached = min(mono, anchor[1] + (now - anchor[0]) * speed) if speed > 0 else mono
            if self._paused:
                while self._paused and not halt() and self._seek is None:
                    self._wake.wait(SLICE_S)
                    self._wake.clear()
                anchor = (time.monotonic(), reached)
                if halt() or self._seek is not None:
                    return anchor
                continue
            if speed <= 0:
                return anchor
            wait = anchor[0] + (mono - anchor[1]) / speed - now
            if wait <= 0:
                return anchor
            if self._wake.wait(min(wait, SLICE_S)):
                self._wake.clear()
                anchor = (time.monotonic(), reached)
                if self._seek is not None:
                    return anchor
            if halt():
                return anchor

    def write(self, data: bytes) -> None:
        raise SourceError("cannot send to the receiver while replaying a file")

    def close(self) -> None:
        self._closed.set()
        self._wake.set()
