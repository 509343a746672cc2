"""The NMEA 0183 checksum, in one place: XOR of every byte between '$' (or '!') and '*', written as
two hex digits (either case accepted on input, upper case on output).

Every stage that checks or writes one (decoder, plain-log clock, link liveness, simulator, restart
commands) uses these functions, so a line is judged the same wherever it is looked at.
"""

from __future__ import annotations

_M512, _M256, _M128, _M64, _M32 = ((1 << s) - 1 for s in (512, 256, 128, 64, 32))


def _xor16() -> bytes:
    """XOR16[i] = (i >> 8) ^ (i & 255). Row h (the 256 entries with high byte h) is range(256) XOR h;
    row h | b is row h passed through row b (a translate table), so 8 rows are built by hand and the
    other 248 by bytes.translate: a start-up cost of well under a millisecond, not 65,536 steps."""
    rows = [bytes(range(256))] + [b""] * 255
    bit = 1
    while bit < 256:
        rows[bit] = bytes(x ^ bit for x in range(256))
        for h in range(1, bit):
            rows[h | bit] = rows[h].translate(rows[bit])
        bit <<= 1
    return b"".join(rows)


XOR16 = _xor16()  # XOR of a 16-bit value's two bytes


def xor_checksum(body: bytes) -> int:
    """XOR of all bytes, folding the bytes as one big int (a few int ops instead of a byte loop,
    which matters at 16 million lines a day)."""
    if len(body) > 128:
        x = 0
        for i in range(0, len(body), 128):
            x ^= int.from_bytes(body[i : i + 128], "little")
    else:
        x = int.from_bytes(body, "little")
    x = (x >> 512) ^ (x & _M512)
    x = (x >> 256) ^ (x & _M256)
    x = (x >> 128) ^ (x & _M128)
    x = (x >> 64) ^ (x & _M64)
    x = (x >> 32) ^ (x & _M32)
    return XOR16[(x >> 16) ^ (x & 65535)]


def checksum_hex(body: str) -> str:
    """The checksum of a sentence body (the text between '$' and '*') as two upper-case hex digits."""
    return f"{xor_checksum(body.encode('ascii', errors='replace')):02X}"


def with_checksum(body: str) -> str:
    """'$' + body + '*hh': a whole sentence without its line end."""
    return f"${body}*{checksum_hex(body)}"


def sentence_ok(line: bytes) -> bool:
    """True for a complete `$...*hh` or `!...*hh` line (trailing CR/LF/space ignored) whose
    checksum is right."""
    line = line.strip(b"\r\n ")
    if len(line) < 6 or line[:1] not in (b"$", b"!") or line[-3:-2] != b"*":
        return False
    try:
        return int(line[-2:], 16) == xor_checksum(line[1:-3])
    except ValueError:
        return False
