"""Hand-built NMEA for the position-statistics tests: GGA/RMC lines with correct checksums around
an invented point, positions placed with pyproj.Geod (independent of livefix.geodesy)."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import pyproj

from livefix.pipeline import Pipeline
from livefix.sources.base import Chunk

BASE = (47.123456, 8.654321)  # invented site
GEOD = pyproj.Geod(ellps="WGS84")
KN = 1852.0 / 3600.0  # m/s per knot (NMEA speed over ground is in knots; 1 kn = 1852 m/h)
CORPUS = Path(__file__).resolve().parents[3] / "shared" / "realdata" / "corpus"  # see shared/realdata/SOURCES.md


def checksum(body: str) -> str:
    """NMEA 0183: XOR of the bytes between '$' and '*', two uppercase hex digits."""
    x = 0
    for b in body.encode("ascii"):
        x ^= b
    return f"{x:02X}"


def line(body: str) -> bytes:
    return f"${body}*{checksum(body)}\r\n".encode("ascii")


def latlon(e: float, n: float) -> tuple[float, float]:
    """Geodetic point e metres east and n metres north of BASE (pyproj forward problem)."""
    lon, lat, _ = GEOD.fwd(BASE[1], BASE[0], 90.0, e)
    lon, lat, _ = GEOD.fwd(lon, lat, 0.0, n)
    return lat, lon


def _dm(v: float, pos: str, neg: str, deg_digits: int) -> str:
    a = abs(v)
    d = int(a)
    return f"{d:0{deg_digits}d}{(a - d) * 60.0:010.7f},{pos if v >= 0 else neg}"


def hms(t: float) -> str:
    s = t % 86400.0
    return f"{int(s // 3600):02d}{int(s % 3600 // 60):02d}{s % 60:05.2f}"


def gga(t: float, e: float, n: float, u: float = 0.0, q: int = 1, h0: float = 400.0, sep: str = "48.0",
        talker: str = "GP") -> bytes:
    """GGA at session second t; altitude above MSL h0 + u; `sep` the geoid separation field ("" = empty)."""
    lat, lon = latlon(e, n)
    return line(f"{talker}GGA,{hms(t)},{_dm(lat, 'N', 'S', 2)},{_dm(lon, 'E', 'W', 3)},{q},12,0.8,"
                f"{h0 + u:.4f},M,{sep},M,,")


def rmc(t: float, e: float, n: float, speed_mps: float = 0.0, course: float = 0.0, talker: str = "GP") -> bytes:
    lat, lon = latlon(e, n)
    return line(f"{talker}RMC,{hms(t)},A,{_dm(lat, 'N', 'S', 2)},{_dm(lon, 'E', 'W', 3)},"
                f"{speed_mps / KN:.3f},{course:.1f},041226,,,A")


def analyse(epochs: list[list[bytes]], t0: float = 100.0, dt: float = 1.0) -> dict[str, Any]:
    """Feed one chunk per epoch (host time = receiver time) and return the analysis snapshot."""
    p = Pipeline()
    for i, lines in enumerate(epochs):
        p.feed(Chunk(t0 + i * dt, 1.8e9 + i * dt, b"".join(lines)))
    p.finish()
    a = p.snapshot().analysis
    assert a["internal_errors"] == 0, a["last_error"]
    return a


def circle(k: int, r: float) -> tuple[float, float]:
    """A deterministic, spread-out noise pattern of radius <= r (golden-angle spiral)."""
    ang = k * math.radians(137.50776)
    rr = r * math.sqrt((k % 97) / 96.0)
    return rr * math.sin(ang), rr * math.cos(ang)


def analyse_file(name: str) -> dict[str, Any]:
    """The analysis of one corpus log (see shared/realdata/SOURCES.md); skips when it is absent."""
    import threading

    import pytest

    from livefix.sources import open_source

    path = CORPUS / name
    if not path.exists():
        pytest.skip(f"real-receiver corpus not present at {CORPUS} (see shared/realdata/SOURCES.md)")
    src = open_source(str(path), speed=None)
    p = Pipeline(None, src.name)
    for item in src.items(threading.Event()):
        p.feed(item)
    src.close()
    p.finish()
    a = p.snapshot().analysis
    assert a["internal_errors"] == 0, a["last_error"]
    return a
