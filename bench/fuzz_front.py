"""Fuzz differential for the decoder's C twin (livefix._native.DecoderFront vs Decoder.decode):
seeded line streams (good lines, repeats, damaged lines, odd types, GSV cache churn) fed to the
twin and to the reference method over the same C parse; every result and the decoder state the
reference keeps must agree after every line.
"""

from __future__ import annotations

import random
from collections.abc import Iterator
from typing import Any

from livefix.checksum import with_checksum

_ODD = [None, 7, 1.5, float("nan"), "$GPGSA,A,3*00", (), b"", b"$", b"*00", bytearray(b"$GPVTG*00")]
_JUNK = [b"", b"x", b"1e5", b"-", b"nan", b"999999999999", b"\x00", b"\xb5", b"*", b"$"]


def _good(rng: random.Random) -> bytes:
    """A plausible hot-path line (NMEA 0183 4.11 layouts of GSA, VTG, GSV, GGA, RMC)."""
    k = rng.randrange(5)
    if k == 0:
        used = ",".join(f"{rng.randrange(1, 33):02d}" if i < rng.randrange(13) else "" for i in range(12))
        body = f"G{rng.choice('PNL')}GSA,A,3,{used},{rng.randrange(1, 40) / 10:.1f},1.0,1.{rng.randrange(9)}"
    elif k == 1:
        body = f"GPVTG,{rng.randrange(360)}.0,T,,M,0.0{rng.randrange(3)},N,0.0,K,A"
    elif k == 2:
        sats = ",".join(f"{s:02d},{rng.randrange(90):02d},{rng.randrange(360):03d},{rng.randrange(20, 50)}"
                        for s in rng.sample(range(1, 33), 4))
        body = f"GPGSV,3,{rng.randrange(1, 4)},12,{sats}"
    elif k == 3:
        body = (f"GPGGA,12{rng.randrange(60):02d}{rng.randrange(60):02d}.{rng.randrange(10)}0,4807.038,N,"
                f"01131.000,E,1,08,0.9,545.4,M,46.9,M,,")
    else:
        body = f"GNRMC,1200{rng.randrange(60):02d}.00,A,4807.038,N,01131.000,E,0.02,,0{rng.randrange(1, 10)}0124,,,A"
    return with_checksum(body).encode()


def front_lines(rng: random.Random) -> Iterator[Any]:
    """An endless seeded stream for Decoder.decode: repeats (cache hits), damage, odd types, churn."""
    recent: list[bytes] = [_good(rng) for _ in range(8)]
    while True:
        r = rng.random()
        if r < 0.45:
            yield rng.choice(recent)
        elif r < 0.75:
            ln = _good(rng)
            recent[rng.randrange(len(recent))] = ln
            yield ln
        elif r < 0.9:
            b = bytearray(rng.choice(recent))
            op = rng.randrange(4)
            if op == 0:
                b[rng.randrange(len(b))] ^= 1 << rng.randrange(8)
            elif op == 1:
                b.insert(rng.randrange(len(b) + 1), rng.choice(_JUNK[1:])[0] if rng.random() < 0.9 else 0)
            elif op == 2:
                del b[rng.randrange(len(b)):]
            else:
                parts = bytes(b[1:b.rfind(b"*")]).split(b",")
                parts[rng.randrange(len(parts))] = rng.choice(_JUNK)
                b = bytearray(with_checksum(b",".join(parts).decode("latin-1")).encode("latin-1"))
            yield bytes(b) if rng.random() < 0.8 else (bytearray(b) if rng.random() < 0.5 else memoryview(bytes(b)))
        else:
            yield rng.choice(_ODD)


def front_state(d: Any) -> str:
    return repr((list(d._pending.items()), d._gsv_hits, d._gsv_ins, sorted(d._cacheable), list(d._lines)))


def front_diff(lines: int, seed: int = 1, line_cache: int = 64) -> tuple[int, int, list[str]]:
    """(lines, disagreements, first examples) of the twin against the reference wrapper."""
    import logging

    from livefix.decode.decoder import Decoder

    logging.getLogger("livefix").setLevel(logging.CRITICAL)  # odd types are counted internal errors
    rng = random.Random(seed)
    c = Decoder(line_cache, native=True, front=True)
    p = Decoder(line_cache, native=True, front=False)
    seen: dict[bytes, tuple[Any, Any]] = {}
    bad, examples = 0, []
    for i, ln in zip(range(lines), front_lines(rng), strict=False):
        out = []
        for d in (c, p):
            try:
                out.append(d.decode(ln))
            except Exception as err:  # noqa: BLE001 - the same error on both is agreement
                out.append(err)
        rc, rp = out
        ok = type(rc) is type(rp) and repr(rc) == repr(rp) and front_state(c) == front_state(p)
        if ok and isinstance(ln, bytes) and hasattr(rp, "fields"):
            prev = seen.get(ln)
            ok = prev is None or (prev[0] is rc) == (prev[1] is rp)
            seen[ln] = (rc, rp)
        if ok and i % 1000 == 999:
            ok = repr(c.counters) == repr(p.counters)
        if not ok:
            bad += 1
            if len(examples) < 5:
                examples.append(repr(ln)[:200])
    return lines, bad, examples
