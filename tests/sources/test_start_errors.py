"""Start-up checks (livefix.probe): a live source that does not answer, a file without NMEA
and a live stream of bytes without sentences are each named in one line. Real loopback sockets,
pseudo-terminals and files; stream times come from the items, never from the host clock."""

from __future__ import annotations

import errno
import os
import random
import socket
import threading
import tty
from pathlib import Path

import pytest
from srckit import state_is, take

from livefix.probe import NO_NMEA_S, NoNmeaWatch, check_file, first_contact, no_nmea_watch, scan_file
from livefix.record.writer import Recorder
from livefix.sources import SourceError, open_source
from livefix.sources.base import Chunk, Link, LinkEvent
from livefix.sources.serial_port import AUTO_BAUDS, SerialSource
from livefix.sources.tcp import TcpSource


def nmea(body: str, *, good: bool = True) -> bytes:
    """NMEA 0183 checksum: XOR of the bytes between '$' and '*', two uppercase hex digits."""
    cs = 0
    for b in body.encode("ascii"):
        cs ^= b
    return f"${body}*{cs if good else cs ^ 0xFF:02X}\r\n".encode("ascii")


GGA = "GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,"  # NMEA 0183 4.11 GGA layout


def refused_port() -> int:
    s = socket.socket()
    s.bind(("127.0.0.1", 0))
    port = s.getsockname()[1]
    s.close()
    return port


# -- first contact: TCP ------------------------------------------------------------------------------
def test_tcp_refused_is_one_line_with_the_wait_hint() -> None:
    src = TcpSource(f"tcp://127.0.0.1:{refused_port()}")
    with pytest.raises(SourceError) as exc:
        first_contact(src)
    text = str(exc.value)
    assert "\n" not in text and "connection refused" in text and "--wait keeps trying" in text


def test_tcp_unknown_host_is_named() -> None:
    # ".invalid" never resolves (RFC 2606 reserves the top-level name for this)
    src = TcpSource("tcp://no-such-host.invalid:5000")
    with pytest.raises(SourceError, match="cannot resolve no-such-host.invalid"):
        first_contact(src)


def test_wait_skips_the_start_check() -> None:
    src = TcpSource(f"tcp://127.0.0.1:{refused_port()}")
    first_contact(src, wait=True)  # no error: the source will retry with backoff
    stop = threading.Event()
    gen = src.items(stop)
    assert next(gen).state == Link.CONNECTING
    assert next(gen).state == Link.LOST  # and keeps the old retry behaviour
    assert next(gen).state == Link.RECONNECTING
    stop.set()
    assert list(gen) == []


def test_first_contact_socket_is_the_one_items_uses() -> None:
    """A server that takes a single client (common practice for serial-to-network adapters) must
    see one connection, not a probe and then the real one."""
    srv = socket.socket()
    srv.bind(("127.0.0.1", 0))
    srv.listen(4)
    srv.settimeout(5)
    src = TcpSource(f"tcp://127.0.0.1:{srv.getsockname()[1]}")
    first_contact(src)
    conn, _ = srv.accept()
    conn.sendall(nmea(GGA))
    stop = threading.Event()
    gen = src.items(stop)
    try:
        take(gen, state_is(Link.STREAMING))
        chunk = take(gen, lambda it: type(it) is Chunk)
        assert chunk.data == nmea(GGA)
        srv.settimeout(0.3)
        with pytest.raises(TimeoutError):  # no second connection was made
            srv.accept()
    finally:
        stop.set()
        gen.close()
        conn.close()
        srv.close()


def test_once_connected_a_lost_server_is_retried() -> None:
    srv = socket.socket()
    srv.bind(("127.0.0.1", 0))
    srv.listen(1)
    srv.settimeout(5)
    src = TcpSource(f"tcp://127.0.0.1:{srv.getsockname()[1]}")
    first_contact(src)
    conn, _ = srv.accept()
    conn.close()
    srv.close()  # hang up and stop listening: from now on connections are refused
    stop = threading.Event()
    gen = src.items(stop)
    try:
        take(gen, state_is(Link.LOST))
        take(gen, state_is(Link.RECONNECTING))
        lost = take(gen, state_is(Link.LOST))  # a second attempt: still retrying, no exception
        assert "refused" in lost.detail.lower()
    finally:
        stop.set()
        gen.close()


# -- first contact: serial ---------------------------------------------------------------------------
def test_serial_missing_device(tmp_path: Path) -> None:
    src = open_source(f"serial:{tmp_path / 'ttyNOPE'}", baud=9600)
    with pytest.raises(SourceError, match=os.strerror(errno.ENOENT)):  # POSIX wording of ENOENT
        first_contact(src)
    with pytest.raises(SourceError, match="--wait waits"):
        open_source("/dev/livefix-no-such-tty")
    assert isinstance(open_source("/dev/livefix-no-such-tty", wait=True), SerialSource)


def test_serial_not_a_port() -> None:
    with pytest.raises(SourceError, match="not a serial port"):
        first_contact(SerialSource("/dev/null", baud=9600))


def test_serial_pty_passes() -> None:
    m, s = os.openpty()
    tty.setraw(s)
    try:
        first_contact(SerialSource(os.ttyname(s), baud=9600))
    finally:
        os.close(s)
        os.close(m)


# -- files without NMEA --------------------------------------------------------------------------------
@pytest.mark.parametrize("data, nmea_found, phrase", [
    (b"", False, "is empty"),
    (random.Random(3).randbytes(1000).replace(b"$", b"%"), False, "1000 bytes of binary data"),
    (b"a\nb\nc\n", False, "6 bytes of text in 3 lines"),  # hand count: 3 lines, 6 bytes
    (nmea(GGA, good=False) * 2, False, "2 sentence-shaped lines, every checksum wrong"),
    (b"\x00\xff" * 100 + b"\r\n" + nmea(GGA), True, None),
    (nmea(GGA).rstrip(b"\r\n"), True, None),  # an unterminated last sentence still counts
    (nmea("GPZZZ,1,2"), True, None),  # a well-formed sentence of an unknown type is NMEA
])
def test_scan_file(tmp_path: Path, data: bytes, nmea_found: bool, phrase: str | None) -> None:
    p = tmp_path / "x.log"
    p.write_bytes(data)
    scan = scan_file(str(p))
    assert scan.nmea is nmea_found
    problem = scan.problem()
    assert (problem is None) if phrase is None else (phrase in problem and str(p) in problem)


def test_recording_without_data_and_gzip_recording_with_data(tmp_path: Path) -> None:
    empty = tmp_path / "nodata.lfr"
    r = Recorder(empty, source="tcp://127.0.0.1:1")
    r.write(LinkEvent(1.0, 1.7e9, Link.CONNECTING, "x"))
    r.write(LinkEvent(2.0, 1.7e9 + 1, Link.LOST, "refused"))
    r.close()
    src = open_source(str(empty))
    with pytest.raises(SourceError, match="holds no received bytes"):
        check_file(src)
    good = tmp_path / "good.lfr.gz"
    r = Recorder(good, source="test", compress="gzip")
    r.write(Chunk(1.0, 1.7e9, b"\xff\xfe" + nmea(GGA)))
    r.close()
    check_file(open_source(str(good)))  # no error


# -- live bytes without sentences -----------------------------------------------------------------------
def _chunks(step_s: float, n: int, data: bytes) -> list[Chunk]:
    return [Chunk(100.0 + k * step_s, 1.7e9 + k * step_s, data) for k in range(n)]


def test_watch_trips_once_after_the_limit_of_stream_time() -> None:
    w = NoNmeaWatch(NO_NMEA_S, "wrong baud rate?")
    junk = bytes(range(128, 228))  # 100 non-ASCII bytes
    out = [w.feed(c) for c in _chunks(0.5, 12, junk)]  # stream times 100.0 .. 105.5
    # first byte at 100.0; 5 s later is the chunk at 105.0 (index 10) with 11 * 100 bytes
    assert out[:10] == [None] * 10
    assert out[10] == "1100 bytes in 5 s but no NMEA sentence (mostly binary): wrong baud rate?"
    assert out[11] is None  # once


def test_watch_disarms_at_the_first_sentence() -> None:
    w = NoNmeaWatch(NO_NMEA_S)
    items = _chunks(0.5, 4, b"\xff" * 100) + [Chunk(102.0, 0.0, nmea(GGA))] + _chunks(0.5, 30, b"\xff" * 100)
    assert all(w.feed(c) is None for c in items)


def test_watch_needs_bytes_not_just_time() -> None:
    w = NoNmeaWatch(NO_NMEA_S)
    assert all(w.feed(c) is None for c in _chunks(1.0, 20, b"\xff"))  # 20 stray bytes in 20 s: line noise


def test_watch_limits_per_source(tmp_path: Path) -> None:
    fixed = no_nmea_watch(SerialSource(str(tmp_path / "x"), baud=9600))
    assert fixed.limit_s == NO_NMEA_S and "wrong baud rate?" in fixed.hint
    auto = no_nmea_watch(SerialSource(str(tmp_path / "x"), baud="auto", probe_s=1.5))
    assert auto.limit_s == pytest.approx(NO_NMEA_S + len(AUTO_BAUDS) * 1.5)  # one whole probe cycle on top
    assert no_nmea_watch(open_source("sim:rooftop")) is None  # the simulator speaks NMEA by construction


def test_damaged_recording_is_left_to_its_own_summary(tmp_path: Path) -> None:
    """A recording cut inside its first data record is damage, reported with where it stopped by
    replay/report; the start check does not call it 'no NMEA'."""
    full = tmp_path / "full.lfr"
    r = Recorder(full, source="test")
    r.write(Chunk(1.0, 1.7e9, nmea(GGA) * 20))
    r.close()
    raw = full.read_bytes()
    cut = tmp_path / "cut.lfr"
    cut.write_bytes(raw[: raw.index(b"@D ") + 20])
    scan = scan_file(str(cut))
    assert scan.damage and scan.problem() is None
