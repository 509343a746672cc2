"""Command-line spec -> Source. Fails fast (SourceError, one line) only when a source cannot
ever work: a bad spec or a file/device path that does not exist at start (a device may be
waited for with `wait`). Whether a live source answers is asked later, by probe.first_contact."""

from __future__ import annotations

import os
import re
import stat

from livefix.sources.base import Source, SourceError


def _is_char_device(path: str) -> bool:
    try:
        return stat.S_ISCHR(os.stat(path).st_mode)
    except OSError:
        return False


def open_source(spec: str, *, baud: int | str = "auto", speed: float | None = None,
                rate_hz: float = 10.0, seed: int = 1, wait: bool = False) -> Source:
    if not spec:
        raise SourceError("empty source: give a device, tcp://HOST:PORT, -, sim:NAME or a file")
    if spec == "-":
        from livefix.sources.stdin import StdinSource

        return StdinSource()
    if spec.startswith("tcp://"):
        from livefix.sources.tcp import TcpSource

        return TcpSource(spec)
    if spec.startswith("sim:"):
        from livefix.sources.sim import open_sim

        return open_sim(spec[4:], speed=speed, rate_hz=rate_hz, seed=seed)
    if spec.startswith("serial:"):  # explicit serial: waits for a device that is not plugged in yet
        from livefix.sources.serial_port import SerialSource

        return SerialSource(spec[len("serial:"):], baud=baud)
    if re.match(r"^[A-Za-z][A-Za-z0-9+.-]*://", spec):
        raise SourceError(f"unsupported source {spec!r}: use tcp://HOST:PORT, a device, - or a file")
    if spec.startswith("/dev/") or _is_char_device(spec):
        from livefix.sources.serial_port import SerialSource

        if not wait and not os.path.exists(spec):
            raise SourceError(f"no such device: {spec} (--wait waits for it to appear)")
        return SerialSource(spec, baud=baud)
    from livefix.sources.file import FileSource

    return FileSource(spec, speed=speed)
