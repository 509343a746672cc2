"""TCP client source `tcp://HOST:PORT`: connect with timeout, reconnect with backoff, stall watch."""

from __future__ import annotations

import errno
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
        self._ready: socket.socket | None = None  # connected by first_contact, used by items()
        self._lock = threading.Lock()
        self._closed = threading.Event()

    # -- start-up (livefix.probe) -------------------------------------------------------
    def first_contact(self, timeout: float) -> None:
        """Connect once within `timeout` (resolution included) or raise SourceError with the reason.
        The connected socket is kept for items(), so a one-client server is not dialled twice."""
        deadline = time.monotonic() + timeout
        addrs = _resolve(self.host, self.port, timeout)
        last: OSError | None = None
        for family, kind, proto, _, addr in addrs:
            left = deadline - time.monotonic()
            if left <= 0:
                break
            sock = socket.socket(family, kind, proto)
            sock.settimeout(min(left, self.connect_timeout))
            try:
                sock.connect(addr)
            except OSError as exc:
                sock.close()
                last = exc
                continue
            self._ready = sock
            return
        raise SourceError(f"cannot connect to {self.name}: {_why(last, timeout)}")

    def no_nmea_rule(self, limit_s: float) -> tuple[float, str]:
        """(seconds of bytes without a sentence before giving up, hint) for probe.NoNmeaWatch."""
        return limit_s, "wrong port, or a binary protocol?"

    def _connect(self) -> socket.socket:
        sock, self._ready = self._ready, None
        if sock is not None:
            return sock
        return socket.create_connection((self.host, self.port), timeout=self.connect_timeout)

    def items(self, stop: threading.Event) -> Iterator[Item]:
        backoff = Backoff()

        def halt() -> bool:
            return stop.is_set() or self._closed.is_set()

        while not halt():
            yield event(Link.CONNECTING, self.name)
            try:
                sock = self._connect()
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
        sock, self._ready = self._ready, None
        if sock is not None:
            sock.close()


def _resolve(host: str, port: int, timeout: float) -> list:  # noqa: ANN401 - getaddrinfo tuples
    """getaddrinfo with a deadline: a resolver that hangs must not hold the start-up past it."""
    box: list = []

    def run() -> None:
        try:
            box.append(socket.getaddrinfo(host, port, type=socket.SOCK_STREAM))
        except OSError as exc:
            box.append(exc)

    t = threading.Thread(target=run, name="livefix-resolve", daemon=True)
    t.start()
    t.join(timeout)
    if not box:
        raise SourceError(f"cannot resolve {host}: no answer from the name service in {timeout:.0f} s")
    if isinstance(box[0], OSError):
        reason = box[0].strerror or str(box[0])
        raise SourceError(f"cannot resolve {host}: {reason} (unknown host name?)")
    return box[0]


def _why(exc: OSError | None, timeout: float) -> str:
    """One short reason for a failed connect, in words rather than errno numbers."""
    if exc is None or isinstance(exc, TimeoutError):
        return f"no answer in {timeout:.0f} s (host down, or a firewall drops the packets?)"
    if isinstance(exc, ConnectionRefusedError):
        return "connection refused (nothing listens on that port?)"
    if exc.errno in (errno.ENETUNREACH, errno.EHOSTUNREACH):
        return f"{exc.strerror} (no route to the host)"
    return exc.strerror or str(exc)
