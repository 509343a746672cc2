"""An absurd GGA quality field is an unknown fix type: counted as "none", no warnings, no errors."""

from __future__ import annotations

import warnings

from pynmeagps import calc_checksum

from livefix.pipeline import Pipeline
from livefix.sources.base import Chunk


def _line(body: str) -> bytes:
    return f"${body}*{calc_checksum(body)}\r\n".encode()


def test_twenty_digit_quality_gives_no_numpy_warning() -> None:
    # NMEA 0183 defines GGA quality 0-8 (docs/sources.md#gga-quality); anything else is unknown.
    p = Pipeline()
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        for i in range(40):
            q = "1" if i % 2 else "123456789012345678901"
            p.feed(Chunk(float(i), 1.7e9 + i, _line(
                f"GPGGA,1200{i:02d}.00,4807.038,N,01131.000,E,{q},08,0.9,545.4,M,46.9,M,,")))
        p.finish()
        a = p.snapshot().analysis
    assert a["internal_errors"] == 0
    assert set(a["fix"]["availability"]) == {"none", "single"}
