"""Byte sources: serial, TCP client, file/recording, stdin, simulated receiver.

`open_source(spec, ...)` turns a command-line spec into a Source:
  /dev/ttyUSB0 or serial:/dev/ttyUSB0   serial device (pyserial), `baud` int or "auto"
  tcp://HOST:PORT                       TCP client with reconnect and backoff
  -                                     standard input
  sim:SCENARIO                          built-in simulated receiver (livefix.sim)
  anything else                         a file: a livefix recording or a plain NMEA log
"""

from livefix.sources.base import Chunk, Item, Link, LinkEvent, Marker, Source, SourceError

__all__ = ["Chunk", "Item", "Link", "LinkEvent", "Marker", "Source", "SourceError", "open_source"]


def open_source(spec: str, *, baud: int | str = "auto", speed: float | None = None, rate_hz: float = 10.0,
                seed: int = 1, wait: bool = False) -> Source:
    """Return the Source for `spec`.

    speed: for files/recordings, None or 0 = as fast as possible, 1.0 = real time, N = ×N;
           for sim: 1.0 = real time (default for sim is real time when speed is None).
    rate_hz, seed: for sim only.
    wait: a device path that does not exist yet is accepted (the source retries until it appears).
    """
    from livefix.sources.open import open_source as _open

    return _open(spec, baud=baud, speed=speed, rate_hz=rate_hz, seed=seed, wait=wait)
