"""RTCM 3 frames for the simulator's `binary` dialect: real framing, invented content.

Frame (RTCM 10403.x transport layer, from memory): preamble 0xD3, 6 reserved zero bits and a
10-bit payload length, the payload (its first 12 bits are the message number), then a 24-bit
CRC-24Q over header and payload. A reader that knows this framing can skip a frame by its length;
the payloads may contain '$', CR and LF bytes, as real ones do.
"""

from __future__ import annotations

import numpy as np

PREAMBLE = 0xD3
CRC24Q_POLY = 0x1864CFB  # x^24+x^23+x^18+x^17+x^14+x^11+x^10+x^7+x^6+x^5+x^4+x^3+x+1 (from memory)
# MSM7 message numbers per RINEX letter (1077 GPS, 1087 GLONASS, 1097 Galileo, 1127 BeiDou; memory).
MSM7 = {"G": 1077, "R": 1087, "E": 1097, "C": 1127}
MSM_BODY_BYTES = (60, 300)  # invented range of MSM payload sizes


def _table() -> tuple[int, ...]:
    out = []
    for b in range(256):
        c = b << 16
        for _ in range(8):
            c = (c << 1) ^ CRC24Q_POLY if c & 0x800000 else c << 1
        out.append(c & 0xFFFFFF)
    return tuple(out)


_T = _table()


def crc24q(data: bytes) -> int:
    """CRC-24Q: initial value 0, no reflection, no final XOR."""
    c = 0
    for b in data:
        c = ((c << 8) & 0xFFFFFF) ^ _T[(c >> 16) ^ b]
    return c


def frame(payload: bytes) -> bytes:
    if len(payload) > 1023:
        raise ValueError("RTCM 3 payload is at most 1023 bytes")
    head = bytes((PREAMBLE, len(payload) >> 8, len(payload) & 0xFF))
    return head + payload + crc24q(head + payload).to_bytes(3, "big")


def _bits(fields: list[tuple[int, int]]) -> bytes:
    """Pack (value, width) big-endian bit fields (two's complement for negatives), zero-padded."""
    acc, n = 0, 0
    for value, width in fields:
        acc = (acc << width) | (value & ((1 << width) - 1))
        n += width
    pad = -n % 8
    return (acc << pad).to_bytes((n + pad) // 8, "big")


def msg1005(ecef: tuple[float, float, float], station: int = 42) -> bytes:
    """Stationary antenna reference point: ECEF in 0.1 mm units (field layout from memory)."""
    x, y, z = (round(v * 10000) for v in ecef)
    return frame(_bits([(1005, 12), (station, 12), (0, 6), (1, 1), (1, 1), (1, 1), (0, 1),
                        (x, 38), (0, 1), (0, 1), (y, 38), (0, 2), (z, 38)]))


def msm7(system: str, rng: np.random.Generator) -> bytes:
    """An MSM7-numbered frame with a random body of plausible size."""
    n = int(rng.integers(*MSM_BODY_BYTES))
    body = rng.integers(0, 256, n, dtype=np.uint8).tobytes()
    head = _bits([(MSM7[system], 12), (0, 4)])  # number + 4 bits of the (random) rest
    return frame(head[:1] + bytes([head[1] | (body[0] & 0x0F)]) + body[1:])
