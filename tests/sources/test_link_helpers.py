"""Backoff schedule, stall watch and the NMEA checksum test used by auto-baud."""

from __future__ import annotations

import zlib

import pytest
from pynmeagps import NMEAReader

from livefix.record import fmt
from livefix.sources.link import Backoff, NmeaCounter, StallWatch, nmea_ok

# Public example sentences (docs/sources.md#example-sentences)
EXAMPLES = [
    b"$GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,*47",
    b"$GPRMC,123519,A,4807.038,N,01131.000,E,022.4,084.4,230394,003.1,W*6A",
    b"$GPGSA,A,3,04,05,,09,12,,,24,,,,,2.5,1.3,2.1*39",
    b"$GPGSV,2,1,08,01,40,083,46,02,17,308,41,12,07,344,39,14,22,228,45*75",
]


def test_backoff_doubles_from_half_a_second_to_an_8s_cap() -> None:
    b = Backoff()
    assert [b.next() for _ in range(7)] == [0.5, 1.0, 2.0, 4.0, 8.0, 8.0, 8.0]
    b.reset()
    assert b.next() == 0.5


def test_stall_once_then_streaming() -> None:
    w = StallWatch(2.0)
    w.on_bytes(100.0)
    assert w.on_idle(101.9) is None
    ev = w.on_idle(102.1)
    assert ev is not None and ev.state == "stalled"
    assert w.on_idle(105.0) is None  # once
    assert w.on_bytes(105.1).state == "streaming"


@pytest.mark.parametrize("line", EXAMPLES)
def test_checksum_agrees_with_pynmeagps(line: bytes) -> None:
    assert nmea_ok(line + b"\r\n")
    NMEAReader.parse(line + b"\r\n")  # reference: pynmeagps accepts it (raises on a bad checksum)
    broken = line[:-2] + (b"00" if line[-2:] != b"00" else b"11")
    assert not nmea_ok(broken)
    with pytest.raises(Exception):  # noqa: B017 - pynmeagps raises NMEAParseError
        NMEAReader.parse(broken + b"\r\n")


def test_counter_across_split_feeds() -> None:
    c = NmeaCounter()
    blob = b"\xffjunk\r\n" + b"\r\n".join(EXAMPLES) + b"\r\n"
    for i in range(0, len(blob), 7):
        c.feed(blob[i:i + 7])
    assert c.good == 4


def test_record_crc_is_standard_crc32() -> None:
    # CRC-32 (RFC 1952 polynomial) check value of b"123456789" is cbf43926 (from memory)
    assert fmt.record("D", 1.0, 2.0, b"123456789").split(b"\n")[0].endswith(b" cbf43926")
    assert zlib.crc32(b"123456789") == 0xCBF43926
