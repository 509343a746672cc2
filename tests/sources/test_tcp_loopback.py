"""TCP client source against a real loopback server on 127.0.0.1: refuse, drop mid-sentence,
reconnect, stall, write."""

from __future__ import annotations

import socket
import threading
import time

import pytest
from srckit import state_is, take

from livefix.sources import SourceError, open_source
from livefix.sources.base import Chunk, Link, LinkEvent
from livefix.sources.tcp import TcpSource, parse_tcp_spec

# Public example sentence (docs/sources.md#example-sentences).
GGA = b"$GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,*47\r\n"


def listener() -> socket.socket:
    srv = socket.socket()
    srv.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
    srv.bind(("127.0.0.1", 0))
    srv.listen(4)
    srv.settimeout(10)
    return srv


def test_spec_parsing_and_errors() -> None:
    assert parse_tcp_spec("tcp://127.0.0.1:5000") == ("127.0.0.1", 5000)
    assert parse_tcp_spec("tcp://[::1]:5000/") == ("::1", 5000)
    for bad in ("tcp://127.0.0.1", "tcp://:5000", "tcp://host:port", "tcp://h:70000"):
        with pytest.raises(SourceError, match="bad TCP source"):
            open_source(bad)
    with pytest.raises(SourceError, match="unsupported source"):
        open_source("udp://127.0.0.1:5000")


def test_refused_then_server_appears() -> None:
    srv = listener()
    port = srv.getsockname()[1]
    srv.close()  # nobody listening now: connection refused
    src = TcpSource(f"tcp://127.0.0.1:{port}", connect_timeout=1.0)
    stop = threading.Event()
    gen = src.items(stop)
    assert next(gen).state == Link.CONNECTING
    lost = next(gen)
    assert lost.state == Link.LOST and "refused" in lost.detail.lower()
    retry = next(gen)
    assert retry.state == Link.RECONNECTING and "0.5 s" in retry.detail
    srv = socket.socket()
    srv.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
    srv.bind(("127.0.0.1", port))
    srv.listen(1)
    take(gen, state_is(Link.STREAMING))
    conn, _ = srv.accept()
    conn.sendall(GGA)
    data = b""
    while len(data) < len(GGA):
        data += take(gen, lambda it: type(it) is Chunk).data
    assert data == GGA
    stop.set()
    gen.close()
    conn.close()
    srv.close()


def test_drop_mid_sentence_reconnects_and_keeps_every_byte() -> None:
    srv = listener()
    port = srv.getsockname()[1]
    first, rest = GGA[:30], GGA[30:]
    received: list[bytes] = []

    def serve() -> None:
        c1, _ = srv.accept()
        c1.sendall(first)
        time.sleep(0.1)
        c1.close()  # drop in the middle of a sentence
        c2, _ = srv.accept()
        c2.settimeout(5)
        c2.sendall(rest)
        received.append(c2.recv(100))
        time.sleep(0.2)
        c2.close()

    t = threading.Thread(target=serve, daemon=True)
    t.start()
    src = TcpSource(f"tcp://127.0.0.1:{port}")
    stop = threading.Event()
    seen: list = []
    gen = src.items(stop)
    lost = take(gen, state_is(Link.LOST), sink=seen)
    assert "peer closed" in lost.detail
    take(gen, state_is(Link.RECONNECTING), sink=seen)
    take(gen, state_is(Link.STREAMING), sink=seen)
    while b"".join(it.data for it in seen if type(it) is Chunk) != GGA:
        take(gen, lambda it: type(it) is Chunk, sink=seen)
    src.write(b"$PCMD*00\r\n")
    t.join(5)
    stop.set()
    gen.close()
    srv.close()
    assert received == [b"$PCMD*00\r\n"]
    states = [it.state for it in seen if type(it) is LinkEvent]
    assert states[:5] == [Link.CONNECTING, Link.STREAMING, Link.LOST, Link.RECONNECTING, Link.CONNECTING]


def test_stall_reported_once_then_streaming_again() -> None:
    srv = listener()
    port = srv.getsockname()[1]
    go = threading.Event()

    def serve() -> None:
        c, _ = srv.accept()
        c.sendall(GGA)
        go.wait(10)
        c.sendall(GGA)
        time.sleep(0.3)
        c.close()

    threading.Thread(target=serve, daemon=True).start()
    src = TcpSource(f"tcp://127.0.0.1:{port}", stall_s=0.3)
    stop = threading.Event()
    seen: list = []
    gen = src.items(stop)
    take(gen, state_is(Link.STALLED), sink=seen)
    go.set()
    take(gen, state_is(Link.STREAMING), sink=seen[:0])
    take(gen, lambda it: type(it) is Chunk, sink=seen)
    stop.set()
    gen.close()
    srv.close()
    assert sum(1 for it in seen if type(it) is LinkEvent and it.state == Link.STALLED) == 1


def test_write_when_not_connected_is_a_clear_error() -> None:
    with pytest.raises(SourceError, match="not connected"):
        TcpSource("tcp://127.0.0.1:9").write(b"x")
