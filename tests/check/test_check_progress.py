"""The `livefix check` progress line: no FAIL before there is anything to judge, and a bar with ETA.

States come from real Pipeline snapshots fed with hand-written NMEA; expected bars and times are
hand arithmetic."""

from __future__ import annotations

from livefix.check import progress
from livefix.pipeline import Pipeline
from livefix.sources.base import Chunk


def nmea(body: str) -> bytes:
    """NMEA 0183 checksum: XOR of the bytes between '$' and '*', two uppercase hex digits."""
    cs = 0
    for b in body.encode("ascii"):
        cs ^= b
    return f"${body}*{cs:02X}\r\n".encode("ascii")


def gga(t: str, quality: int) -> bytes:
    # NMEA 0183 4.11 GGA: field 6 is the quality indicator (0 = no fix, 1 = GPS fix)
    return nmea(f"GPGGA,{t},4807.038,N,01131.000,E,{quality},08,0.9,545.4,M,46.9,M,,")


def snap_after(*chunks: bytes):  # noqa: ANN201
    p = Pipeline(source="test")
    for k, data in enumerate(chunks):
        p.feed(Chunk(10.0 + k, 1.7e9 + k, data))
    assert p.analyzer.internal_errors == 0  # livefix's own errors stay zero
    return p.snapshot()


def test_states_before_any_verdict() -> None:
    assert progress.rx_state(None, None) == "waiting for data"
    assert progress.rx_state(snap_after(), ["x"]) == "waiting for data"  # no bytes yet
    assert progress.rx_state(snap_after(b"\xff" * 40), ["x"]) == "waiting for NMEA (40 bytes, no sentence yet)"
    no_fix = snap_after(gga("120000", 0), gga("120001", 0), gga("120002", 0))
    assert progress.rx_state(no_fix, ["x"]) == "waiting for first fix"


def test_verdict_once_fixed() -> None:
    fixed = snap_after(gga("120000", 1), gga("120001", 1), gga("120002", 1))
    assert progress.has_fixed(fixed)
    assert progress.rx_state(fixed, []) == "pass"
    assert progress.rx_state(fixed, ["a", "b", "c", "d"]) == "FAIL 4 (a, b, c...)"


def test_bar_and_eta() -> None:
    assert progress.bar(0.5) == "[########--------]  50%"  # 16 cells, half full
    assert progress.bar(1.2) == "[################] 100%"  # clamped
    # timed run: 90 s of 300 s -> 30 %, 4.8 cells -> 4 full; 210 s left
    assert progress.head(90, 300, None) == "[####------------]  30% 00:01:30 / 00:05:00, ETA 00:03:30"
    # file: a quarter read in 20 s -> 60 s more at the same rate
    assert progress.head(20, None, 0.25) == "[####------------]  25% 00:00:20, ETA 00:01:00"
    assert progress.head(20, None, None) == "00:00:20"


def test_file_fraction(tmp_path) -> None:  # noqa: ANN001
    p = tmp_path / "a.log"
    p.write_bytes(b"x" * 400)
    assert progress.file_fraction(str(p), 100) == 0.25
    assert progress.file_fraction(str(p) + ".gz", 100) is None
    assert progress.file_fraction(str(tmp_path / "missing"), 100) is None
