"""Binary frames that share a stream with NMEA: recognise one at a sync byte, verify it, give its size.

Why: receivers and correction links interleave binary frames with NMEA text on one port. A frame's
payload may hold any byte, `$`, CR and LF included, so reading it as text breaks NMEA sentences and
counts the frame as damage. A frame is recognised only when its whole layout checks out, checksum
included; until then its length field is not trusted, and a failed check makes its sync byte junk.

Layouts (sync byte -> probe in `_PROBES`):
- RTCM 3 transport layer (RTCM 10403.x): 0xD3, 6 reserved bits (zero), 10-bit length (0..1023),
  payload, CRC-24Q (generator 0x1864CFB, initial value 0) over preamble, length and payload.
- Binary frame with 0xB5 0x62 sync (a widely used open layout): 0xB5 0x62, class, id, 16-bit
  little-endian payload length, payload, 8-bit Fletcher checksum (CK_A, CK_B) over class..payload.
  Its length field allows 65,535 payload bytes, which bounds the bytes held while a frame arrives.
"""

from __future__ import annotations

from collections.abc import Callable
from itertools import accumulate

MORE = -1  # probe result: not enough bytes yet to decide
RTCM3_MAX = 3 + 1023 + 3  # header, 10-bit length, CRC-24Q (RTCM 10403.x)
B562_MAX = 6 + 65535 + 2  # sync, class, id, 16-bit length, Fletcher checksum
FRAME_MAX = max(RTCM3_MAX, B562_MAX)  # most bytes held for one frame still arriving
SYNC = b"\xb5\xd3"  # first byte of each recognised layout; never valid inside NMEA text (ASCII)
# Checksum work allowed, in bytes tested per byte of stream (up to the end of the frame tested). A
# stream of real frames tests each byte at most once; a hostile or unlucky stream of overlapping
# headers (each claiming a long frame) would test up to FRAME_MAX bytes per byte received. Past this
# budget a header is not verified and counts as junk, which keeps the framer linear in time. Counted
# from stream positions only, so the decision is the same however the input is split.
CHECK_BUDGET = 32


def _crc24q_table() -> tuple[int, ...]:
    table = []
    for i in range(256):
        crc = i << 16
        for _ in range(8):
            crc = (crc << 1) ^ 0x1864CFB if crc & 0x800000 else crc << 1
        table.append(crc & 0xFFFFFF)
    return tuple(table)


_CRC24Q = _crc24q_table()


def crc24q(data: bytes | bytearray | memoryview) -> int:
    """CRC-24Q of `data` (RTCM 10403.x transport layer), table driven."""
    crc, t = 0, _CRC24Q
    for b in data:
        crc = ((crc << 8) & 0xFFFFFF) ^ t[(crc >> 16) ^ b]
    return crc


def fletcher8(data: bytes | bytearray | memoryview) -> tuple[int, int]:
    """(CK_A, CK_B): CK_A sums the bytes, CK_B sums the running CK_A, both modulo 256.
    Written as two C-level sums (the byte loop is ~10x slower in Python)."""
    return sum(data) & 0xFF, sum(accumulate(data)) & 0xFF


def _rtcm3(buf: bytearray, i: int, n: int, final: bool) -> int:
    if n - i < 3:
        return 0 if final else MORE
    if buf[i + 1] & 0xFC:  # the 6 reserved bits must be zero
        return 0
    size = 6 + ((buf[i + 1] & 0x03) << 8 | buf[i + 2])
    return size if n - i >= size else 0 if final else MORE


def _rtcm3_ok(buf: bytearray, i: int, size: int) -> bool:
    return crc24q(buf[i:i + size - 3]) == int.from_bytes(buf[i + size - 3:i + size], "big")


def _b562(buf: bytearray, i: int, n: int, final: bool) -> int:
    if n - i < 2:
        return 0 if final else MORE
    if buf[i + 1] != 0x62:
        return 0
    if n - i < 6:
        return 0 if final else MORE
    size = 8 + (buf[i + 4] | buf[i + 5] << 8)
    return size if n - i >= size else 0 if final else MORE


def _b562_ok(buf: bytearray, i: int, size: int) -> bool:
    return fletcher8(buf[i + 2:i + size - 2]) == (buf[i + size - 2], buf[i + size - 1])


# sync byte -> (size from the header once every byte is there, checksum test)
_LAYOUTS: dict[int, tuple[Callable[[bytearray, int, int, bool], int], Callable[[bytearray, int, int], bool]]] = {
    0xD3: (_rtcm3, _rtcm3_ok), 0xB5: (_b562, _b562_ok)}


def frame_size(buf: bytearray, i: int, final: bool = False) -> int:
    """Size the header at buf[i] (a byte of SYNC) claims, once all of it is in `buf`; 0 when the
    header is not one of a recognised layout; MORE when the bytes so far cannot decide (never when
    `final`: the stream has ended, so a frame cut short is not one). The checksum is not yet tested."""
    return _LAYOUTS[buf[i]][0](buf, i, len(buf), final)


def checksum_ok(buf: bytearray, i: int, size: int) -> bool:
    """Whether the frame of `size` bytes at buf[i] (sized by frame_size) passes its checksum."""
    return _LAYOUTS[buf[i]][1](buf, i, size)
