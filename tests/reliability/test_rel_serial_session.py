"""Serial faults seen through a whole Session on real pseudo-terminals: a receiver first heard at
the wrong baud rate (noise until auto-baud finds the rate), and a device that vanishes mid-stream
and comes back. The snapshots show a clear link state and events; the recording keeps every byte.
(Source-level unplug, auto-baud, missing path and permission tests live in tests/sources.)
"""

from __future__ import annotations

import os
import time
import tty
from pathlib import Path

from relkit import GGA, RMC

from livefix.record.reader import RecordingReader
from livefix.session import Session
from livefix.sources.base import Chunk, Link
from livefix.sources.serial_port import SerialSource

# What a receiver at 38400 baud looks like to a port at 9600: framing errors give bytes with the
# high bit set and no line structure (common practice).
WRONG_RATE_NOISE = bytes([0xF0, 0x8C, 0xFE, 0x00, 0xE6, 0x98, 0x80, 0xFC]) * 40


def pty() -> tuple[int, int]:
    m, s = os.openpty()
    tty.setraw(s)
    return m, s


def until(cond, limit_s: float = 15.0) -> bool:  # noqa: ANN001
    end = time.monotonic() + limit_s
    while time.monotonic() < end and not cond():
        time.sleep(0.02)
    return cond()


def events(s: Session) -> list[dict]:
    return list(s.latest.analysis["events"]) if s.latest else []


def test_wrong_rate_noise_then_autobaud_lock_is_shown_and_recorded(tmp_path: Path) -> None:
    m, sl = pty()
    rec = tmp_path / "baud.lfr"
    src = SerialSource(os.ttyname(sl), baud="auto", probe_s=0.3)
    s = Session(src, record_path=rec, publish_hz=20).start()
    written = b""
    try:
        # noise while the first rates are probed (the receiver "is at another rate")
        assert until(lambda: any("probing" in e["text"] for e in events(s)))
        os.write(m, WRONG_RATE_NOISE)
        written += WRONG_RATE_NOISE
        assert until(lambda: sum("probing" in e["text"] for e in events(s)) >= 3)
        good = (GGA + b"\r\n" + RMC + b"\r\n") * 3
        os.write(m, good)  # now the rate being probed "matches": valid checksums lock it
        written += good
        assert until(lambda: s.latest.link == Link.STREAMING and s.latest.counters.decoded >= 6)
    finally:
        s.stop()
        os.close(sl)
        os.close(m)
    snap = s.latest
    assert "locked at" in snap.link_detail
    assert snap.counters.junk_bytes > 0 and snap.error is None
    texts = [e["text"] for e in snap.analysis["events"]]
    assert any("locked at" in t for t in texts)
    got = b"".join(it.data for it in RecordingReader(rec).items() if type(it) is Chunk)
    assert got == written  # probing bytes are received bytes: all recorded


def test_device_gone_and_back_through_a_session(tmp_path: Path) -> None:
    dev = str(tmp_path / "gnss0")
    m1, s1 = pty()
    os.symlink(os.ttyname(s1), dev)
    rec = tmp_path / "plug.lfr"
    s = Session(SerialSource(dev, baud=9600), record_path=rec, publish_hz=20).start()
    try:
        assert until(lambda: s.latest is not None and s.latest.link == Link.STREAMING)
        os.write(m1, GGA + b"\r\n")
        assert until(lambda: s.latest.counters.decoded == 1)
        os.close(s1)
        os.close(m1)  # unplugged under the open port
        assert until(lambda: s.latest.link in (Link.LOST, Link.RECONNECTING, Link.CONNECTING))
        m2, s2 = pty()
        os.replace(dev, dev + ".old")
        os.symlink(os.ttyname(s2), dev)
        assert until(lambda: s.latest.link == Link.STREAMING and
                     any(e["text"].startswith("link lost") for e in events(s)))
        os.write(m2, RMC + b"\r\n")
        assert until(lambda: s.latest.counters.decoded == 2)
    finally:
        s.stop()
    os.close(s2)
    os.close(m2)
    snap = s.latest
    assert snap.error is None  # never a crash: a lost device is a link state
    kinds = [(e["kind"], e["text"].split(":")[0]) for e in snap.analysis["events"]]
    for want in ("link lost", "link reconnecting", "link streaming"):
        assert ("link", want) in kinds
    got = b"".join(it.data for it in RecordingReader(rec).items() if type(it) is Chunk)
    assert got == GGA + b"\r\n" + RMC + b"\r\n"
