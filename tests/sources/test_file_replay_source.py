"""File source: plain NMEA logs paced by their UTC fields, recordings, speed/pause/seek controls."""

from __future__ import annotations

import calendar
import threading
import time

import pytest

from livefix.record.writer import Recorder
from livefix.sources import SourceError, open_source
from livefix.sources.base import Chunk, Link, LinkEvent
from livefix.sources.file import FileSource


def nmea(body: str) -> bytes:
    cs = 0
    for ch in body.encode():
        cs ^= ch
    return f"${body}*{cs:02X}\r\n".encode()  # NMEA 0183 checksum: XOR between $ and * (docs/sources.md#checksum)


def gga(t: str) -> bytes:
    return nmea(f"GPGGA,{t},4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,")


def rmc(t: str, d: str) -> bytes:
    return nmea(f"GPRMC,{t},A,4807.038,N,01131.000,E,022.4,084.4,{d},003.1,W")


def run(src) -> list:  # noqa: ANN001
    return list(src.items(threading.Event()))


def test_plain_log_paced_by_utc_with_junk_kept(tmp_path) -> None:
    junk = b"\x00\xffnot nmea at all\n"
    body = (junk + gga("235958.00") + b"$GPGSV,partial-without-checksum\r\n" + gga("235959.00")
            + gga("000000.00") + rmc("000000.00", "020125") + gga("000003.00"))
    p = tmp_path / "site.nmea"
    p.write_bytes(body)
    items = run(open_source(str(p)))
    chunks = [it for it in items if type(it) is Chunk]
    assert b"".join(c.data for c in chunks) == body  # byte-exact, junk included
    assert [c.mono for c in chunks] == [0.0, 1.0, 2.0, 5.0]  # midnight rollover unwrapped
    # lines before the first date take that date when the times run on (issue 13 item 7): the RMC
    # says 2025-01-02 at 00:00:00, so 23:59:58 was on 2025-01-01 (calendar.timegm)
    assert chunks[0].wall == calendar.timegm((2025, 1, 1, 23, 59, 58))
    # RMC date 02 Jan 2025 (ddmmyy, NMEA 0183): wall = that midnight + time of day (calendar.timegm)
    assert chunks[2].wall == calendar.timegm((2025, 1, 2, 0, 0, 0))
    assert chunks[3].wall == calendar.timegm((2025, 1, 2, 0, 0, 3))
    states = [(it.state, it.mono) for it in items if type(it) is LinkEvent]
    # a 3 s silence in the log becomes a stall starting 2 s after the last bytes
    assert states == [(Link.STREAMING, 0.0), (Link.STALLED, 4.0), (Link.STREAMING, 5.0), (Link.ENDED, 5.0)]


def test_missing_and_unreadable_files_fail_fast(tmp_path) -> None:
    with pytest.raises(SourceError, match="no such file"):
        open_source(str(tmp_path / "nope.lfr"))
    with pytest.raises(SourceError, match="directory"):
        open_source(str(tmp_path))


def make_recording(path, seconds: int, step: float = 1.0) -> list:  # noqa: ANN001
    rec = Recorder(path, source="test")
    items = []
    for i in range(int(seconds / step) + 1):
        it = Chunk(100.0 + i * step, 1.7e9 + i * step, gga(f"0000{i % 60:02d}.00"))
        rec.write(it)
        items.append(it)
    rec.close()
    return items


def test_recording_replays_recorded_times_and_forward_seek_skips_waiting(tmp_path) -> None:
    p = tmp_path / "long.lfr"
    written = make_recording(p, 600)
    src = FileSource(str(p), speed=1.0)  # real time: 600 s unless the seek fast-forwards
    out = []
    for it in src.items(threading.Event()):
        out.append(it)
        if len(out) == 1:
            src.seek(599.5)
    assert [it for it in out if type(it) is Chunk] == written  # skipped items still delivered
    assert out[-1].state == Link.ENDED and "601 records" in out[-1].detail
    assert src.generation == 0


def test_backward_seek_signals_rebuild_and_rereads(tmp_path) -> None:
    p = tmp_path / "short.lfr"
    written = make_recording(p, 10)
    src = FileSource(str(p), speed=None)
    out = []
    sought = False
    for it in src.items(threading.Event()):
        out.append(it)
        if type(it) is Chunk and it.mono == 108.0 and not sought:
            sought = True
            src.seek_to(3.0)
    assert src.generation == 1
    i = next(k for k, it in enumerate(out) if type(it) is LinkEvent and it.detail == "seek")
    assert out[i].state == Link.CONNECTING
    # after the reset the consumer gets the stream again from the start (fast) up to the end
    assert [it for it in out[i + 1:] if type(it) is Chunk] == written


def test_pause_holds_items_and_speed_change_applies(tmp_path) -> None:
    p = tmp_path / "pace.lfr"
    make_recording(p, 400)
    src = FileSource(str(p), speed=1.0)
    stop = threading.Event()
    got: list = []

    def consume() -> None:
        for it in src.items(stop):
            got.append(it)

    src.pause()
    t = threading.Thread(target=consume)
    t.start()
    time.sleep(0.3)
    held = len(got)  # paused before the first item was due: nothing or only the first item
    assert held <= 1
    src.speed = 0  # as fast as possible ...
    src.resume()
    t.join(30)  # ... so 400 s of stream finish long before the timeout
    stop.set()
    assert not t.is_alive()
    assert got[-1].state == Link.ENDED and len(got) == 402
