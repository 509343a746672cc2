"""TCP client source `tcp://HOST:PORT`: connect with timeout, reconnect with backoff, stall watch."""

from __future__ import annotations

import socket
import threading
import time
from collections.abc import Iterator

from livefix.sources.base import Chunk, Item, Link, SourceError
from livefix.sources.link import CHUNK_MAX, Backoff, StallWatch, event


def parse_tcp_spec(spec: str) -> tuple[str, int]:
    """'tcp://host:port' or 'tcp://[::1]:port' -> (host, port); SourceError with one clear line."""
    rest = spec[len("tcp://"):] if spec.startswith("tcp://") else spec
    rest = rest.rstrip("/")
    if rest.startswith("["):
        host, sep, port_s = rest[1:].partition("]:")
    else:
        host, sep, port_s = rest.rpartition(":")
    if not sep or not host or not port_s:
        raise SourceError(f"bad TCP source {spec!r}: use tcp://HOST:PORT")
    try:
        port = int(port_s)
    except ValueError:
        raise SourceError(f"bad TCP source {spec!r}: port {port_s!r} is not a number") from None
    if not 0 < port < 65536:
        raise SourceError(f"bad TCP source {spec!r}: port must be 1-65535")
    return host, port


class TcpSource:
    finite = False

    def __init__(self, spec: str, *, connect_timeout: float = 3.0, stall_s: float = 2.0,
                 read_timeout: float = 0.1) -> None:
        self.host, self.port = parse_tcp_spec(spec)
        self.name = f"tcp://{self.host}:{self.port}"
        self.connect_timeout, self.stall_s, self.read_timeout = connect_timeout, stall_s, read_timeout
        self._sock: socket.socket | None = None
        self._lock = threading.Lock()
        self._closed = threading.Event()

    def items(self, stop: threading.Event) -> Iterator[Item]:
        backoff = Backoff()

        def halt() -> bool:
            return stop.is_set() or self._closed.is_set()

        while not halt():
            yield event(Link.CONNECTING, self.name)
            try:
                sock = socket.create_connection((self.host, self.port), timeout=self.connect_timeout)
            except OSError as exc:
                yield event(Link.LOST, f"cannot connect to {self.host}:{self.port}: {exc}")
            else:
                sock.settimeout(self.read_timeout)
                with self._lock:
                    self._sock = sock
                try:
                    if (yield from self._session(sock, halt)):
                        backoff.reset()
                finally:
                    with self._lock:
                        self._sock = None
                    sock.close()
            if halt():
                return
            delay = backoff.next()
            yield event(Link.RECONNECTING, f"retry in {delay:.1f} s")
            if stop.wait(delay) or self._closed.is_set():
                return

    def _session(self, sock: socket.socket, halt) -> Iterator[Item]:  # noqa: ANN001
        yield event(Link.STREAMING, f"connected to {self.host}:{self.port}")
        watch = StallWatch(self.stall_s)
        got = False
        while not halt():
            try:
                data = sock.recv(CHUNK_MAX)
            except TimeoutError:
                ev = watch.on_idle(time.monotonic())
                if ev:
                    yield ev
                continue
            except OSError as exc:
                yield event(Link.LOST, f"{self.host}:{self.port}: {exc}")
                return got
            if not data:
                yield event(Link.LOST, f"{self.host}:{self.port}: peer closed the connection")
                return got
            now = time.monotonic()
            got = True
            ev = watch.on_bytes(now)
            if ev:
                yield ev
            yield Chunk(now, time.time(), data)
        return got

    def write(self, data: bytes) -> None:
        with self._lock:
            sock = self._sock
            if sock is None:
                raise SourceError(f"{self.name} is not connected")
            try:
                sock.sendall(data)
            except OSError as exc:
                raise SourceError(f"send to {self.name} failed: {exc}") from None

    def close(self) -> None:
        self._closed.set()
