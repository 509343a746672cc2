"""NMEA sentences for hand-written test fixtures, with a checksum computed here from the standard's
definition (XOR of the bytes between '$' and '*', two uppercase hex digits; docs/sources.md#checksum),
independently of livefix.checksum so that a fault there cannot hide in the fixtures."""

from __future__ import annotations


def sentence(body: str) -> bytes:
    """`$body*hh` without a line ending."""
    x = 0
    for b in body.encode():
        x ^= b
    return f"${body}*{x:02X}".encode()


def line(body: str) -> bytes:
    """`$body*hh` with the CR LF terminator, as a receiver sends it."""
    return sentence(body) + b"\r\n"
