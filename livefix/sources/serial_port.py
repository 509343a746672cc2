"""Serial receiver source (pyserial) with auto-baud, stall detection and reconnect.

Our own reader loop with finite timeouts (not pyserial's ReaderThread) because an unplugged USB
adapter raises plain OSError from `in_waiting`, which would otherwise kill the thread silently.
"""

from __future__ import annotations

import errno
import os
import threading
import time
from collections.abc import Iterator

from livefix.sources.base import Chunk, Item, Link, SourceError
from livefix.sources.link import CHUNK_MAX, Backoff, NmeaCounter, StallWatch, event

AUTO_BAUDS = (4800, 9600, 19200, 38400, 57600, 115200, 230400, 460800, 921600)
LOCK_LINES = 3  # valid-checksum lines needed to lock on a rate (common practice: "a few")
RELOCK_S = 5.0  # auto mode: bytes but no valid line for this long = the receiver changed its rate
RELOCK_BYTES = 512  # ... and at least this much arrived (a quiet port is a stall, not a rate change)


class SerialSource:
    """Reads a serial device; `baud="auto"` probes AUTO_BAUDS and keeps every probed byte."""

    finite = False

    def __init__(self, path: str, baud: int | str = "auto", *, probe_s: float = 1.5,
                 stall_s: float = 2.0, read_timeout: float = 0.1, relock_s: float = RELOCK_S) -> None:
        if baud != "auto":
            try:
                baud = int(baud)
            except (TypeError, ValueError):
                raise SourceError(f"bad baud rate {baud!r}: use a number or 'auto'") from None
            if baud <= 0:
                raise SourceError(f"bad baud rate {baud}: must be positive")
        self.path = path
        self.baud: int | str = baud
        self.locked_baud: int | None = None if baud == "auto" else int(baud)
        self.name = f"serial:{path}"
        self.probe_s, self.stall_s, self.read_timeout = probe_s, stall_s, read_timeout
        self.relock_s = relock_s
        self._port = None
        self._lock = threading.Lock()
        self._closed = threading.Event()

    # -- helpers ---------------------------------------------------------------------------
    def probe(self) -> str | None:
        """Try to open the device once; None if it opens, else the OS error text (fail-fast CLIs)."""
        import serial

        try:
            serial.Serial(self.path, baudrate=self.locked_baud or 9600, timeout=0).close()
        except (OSError, ValueError) as exc:
            code = getattr(exc, "errno", None)  # pyserial nests the OS text: keep just that
            if isinstance(code, int) and code > 0:
                return os.strerror(code)
            if f"({errno.ENOTTY}," in str(exc):  # termios refused: a file or device, not a port
                return f"not a serial port ({os.strerror(errno.ENOTTY)})"
            return str(exc)
        return None

    def first_contact(self, timeout: float) -> None:
        """Open the device once (livefix.probe); SourceError with the OS reason if it fails."""
        err = self.probe()
        if err is not None:
            raise SourceError(f"cannot open {self.path}: {err}")

    def no_nmea_rule(self, limit_s: float) -> tuple[float, str]:
        """(seconds of bytes without a sentence before giving up, hint) for probe.NoNmeaWatch.
        Auto-baud gets one whole probe cycle on top: every rate is tried before it is judged."""
        if self.baud == "auto":
            return (limit_s + len(AUTO_BAUDS) * self.probe_s,
                    f"no rate from {AUTO_BAUDS[0]} to {AUTO_BAUDS[-1]} baud gives NMEA: a binary protocol?")
        return limit_s, f"wrong baud rate? (set at {self.baud}; try --baud auto)"

    def _open(self, baud: int):  # noqa: ANN202 - pyserial object
        import serial

        return serial.Serial(self.path, baudrate=baud, timeout=self.read_timeout)

    def _read(self, port) -> bytes:  # noqa: ANN001
        n = port.in_waiting
        data = port.read(min(n, CHUNK_MAX) if n else 1)
        if data:
            more = port.in_waiting
            if more:
                data += port.read(min(more, CHUNK_MAX - len(data)))
        return data

    def _order(self) -> tuple[int, ...]:
        if self.baud != "auto":
            return (int(self.baud),)
        first = (self.locked_baud,) if self.locked_baud else ()
        return first + tuple(b for b in AUTO_BAUDS if b != self.locked_baud)

    # -- the loop --------------------------------------------------------------------------
    def items(self, stop: threading.Event) -> Iterator[Item]:
        backoff = Backoff()
        halt = self._halted(stop)
        while not halt():
            yield event(Link.CONNECTING, self.name)
            try:
                port = self._open(self._order()[0])
            except (OSError, ValueError) as exc:
                yield event(Link.LOST, f"cannot open {self.path}: {exc}")
                delay = backoff.next()
                yield event(Link.RECONNECTING, f"retry in {delay:.1f} s")
                if stop.wait(delay) or self._closed.is_set():
                    return
                continue
            with self._lock:
                self._port = port
            try:
                got = yield from self._session(port, halt)
            finally:
                with self._lock:
                    self._port = None
                try:
                    port.close()
                except OSError:
                    pass
            if halt():
                return
            if got:
                backoff.reset()
            delay = backoff.next()
            yield event(Link.RECONNECTING, f"retry in {delay:.1f} s")
            if stop.wait(delay) or self._closed.is_set():
                return

    def _halted(self, stop: threading.Event):  # noqa: ANN202
        return lambda: stop.is_set() or self._closed.is_set()

    def _session(self, port, halt) -> Iterator[Item]:  # noqa: ANN001
        """One open device: probe (auto), then stream until an error; returns True if bytes came."""
        got = False
        try:
            if self.baud == "auto":
                got = yield from self._autobaud(port, halt)
                if halt():
                    return got
            else:
                yield event(Link.STREAMING, f"{self.path} at {self.baud} baud")
            watch = StallWatch(self.stall_s)
            counter, good_at, junk = NmeaCounter(), time.monotonic(), 0
            while not halt():
                data = self._read(port)
                now = time.monotonic()
                if data:
                    got = True
                    ev = watch.on_bytes(now)
                    if ev:
                        yield ev
                    yield Chunk(now, time.time(), data)
                    if self.baud == "auto":
                        before = counter.good
                        if counter.feed(data) > before:
                            good_at, junk = now, 0
                        else:
                            junk += len(data)
                        if junk >= RELOCK_BYTES and now - good_at >= self.relock_s:
                            yield event(Link.CONNECTING, f"no valid NMEA for {now - good_at:.0f} s at "
                                        f"{self.locked_baud} baud; probing again")
                            yield from self._autobaud(port, halt)
                            counter, good_at, junk = NmeaCounter(), time.monotonic(), 0
                else:
                    ev = watch.on_idle(now)
                    if ev:
                        yield ev
        except (OSError, ValueError) as exc:  # SerialException is an OSError; TypeError on closed fd
            yield event(Link.LOST, f"{self.path}: {exc}")
        return got

    def _autobaud(self, port, halt) -> Iterator[Item]:  # noqa: ANN001
        """Cycle rates until one yields LOCK_LINES valid lines; every byte read is delivered."""
        got = False
        while not halt():
            for baud in self._order():
                if halt():
                    return got
                port.baudrate = baud
                yield event(Link.CONNECTING, f"probing {baud} baud")
                counter = NmeaCounter()
                deadline = time.monotonic() + self.probe_s
                while time.monotonic() < deadline and not halt():
                    data = self._read(port)
                    if data:
                        got = True
                        yield Chunk(time.monotonic(), time.time(), data)
                        if counter.feed(data) >= LOCK_LINES:
                            self.locked_baud = baud
                            yield event(Link.STREAMING, f"{self.path} locked at {baud} baud")
                            return got
            yield event(Link.CONNECTING, "no valid NMEA at any baud rate yet; probing again")
        return got

    # -- control ---------------------------------------------------------------------------
    def write(self, data: bytes) -> None:
        with self._lock:
            port = self._port
            if port is None:
                raise SourceError(f"{self.path} is not connected")
            try:
                port.write(data)
            except (OSError, ValueError) as exc:
                raise SourceError(f"write to {self.path} failed: {exc}") from None

    def close(self) -> None:
        self._closed.set()
        with self._lock:
            port = self._port
        if port is not None:
            try:
                port.cancel_read()
            except (OSError, AttributeError):
                pass
