"""Fixture builders for framing tests: NMEA lines and binary frames, written independently of livefix
(bit by bit from the published definitions, not the table-driven code under test)."""

from __future__ import annotations


def nmea(body: str) -> bytes:
    """'$' + body + '*' + XOR of the body bytes as two uppercase hex digits (NMEA 0183)."""
    x = 0
    for b in body.encode("ascii"):
        x ^= b
    return b"$" + body.encode("ascii") + b"*%02X" % x


def crc24q_bitwise(data: bytes) -> int:
    """CRC-24Q one bit at a time from its generator polynomial 0x1864CFB, initial value 0
    (RTCM 10403.x transport layer)."""
    crc = 0
    for b in data:
        crc ^= b << 16
        for _ in range(8):
            crc <<= 1
            if crc & 0x1000000:
                crc ^= 0x1864CFB
    return crc & 0xFFFFFF


def rtcm3(payload: bytes) -> bytes:
    """RTCM 3 frame: 0xD3, 6 zero reserved bits + 10-bit length, payload, CRC-24Q (RTCM 10403.x)."""
    assert len(payload) <= 1023
    head = bytes([0xD3, len(payload) >> 8, len(payload) & 0xFF]) + payload
    return head + crc24q_bitwise(head).to_bytes(3, "big")


def fletcher8_loop(data: bytes) -> tuple[int, int]:
    """8-bit Fletcher checksum as the open layout defines it: CK_A += byte, CK_B += CK_A, mod 256."""
    a = b = 0
    for x in data:
        a = (a + x) & 0xFF
        b = (b + a) & 0xFF
    return a, b


def b562(cls: int, mid: int, payload: bytes) -> bytes:
    """Binary frame with 0xB5 0x62 sync: class, id, 16-bit little-endian length, payload, CK_A CK_B
    over class..payload."""
    body = bytes([cls, mid]) + len(payload).to_bytes(2, "little") + payload
    return b"\xb5\x62" + body + bytes(fletcher8_loop(body))
