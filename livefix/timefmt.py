"""Time formatting shared by every output: ISO 8601 UTC with a Z."""

from __future__ import annotations

import datetime as _dt


def iso(posix: float | None) -> str | None:
    """POSIX seconds -> '2026-12-02T10:15:30.100Z' (milliseconds), None stays None."""
    if posix is None:
        return None
    d = _dt.datetime.fromtimestamp(posix, tz=_dt.UTC)
    return d.strftime("%Y-%m-%dT%H:%M:%S.") + f"{d.microsecond // 1000:03d}Z"


def parse_duration(text: str) -> float:
    """'90', '90s', '30m', '24h', '7d', '1h30m' -> seconds. Raises ValueError with a clear message."""
    units = {"s": 1, "m": 60, "h": 3600, "d": 86400}
    t = text.strip().lower()
    if not t:
        raise ValueError("empty duration")
    try:
        return float(t)
    except ValueError:
        pass
    total, num = 0.0, ""
    for ch in t:
        if ch.isdigit() or ch == ".":
            num += ch
        elif ch in units and num:
            total += float(num) * units[ch]
            num = ""
        else:
            raise ValueError(f"bad duration {text!r}: use e.g. 90s, 30m, 24h, 7d")
    if num:
        raise ValueError(f"bad duration {text!r}: a number needs a unit (s, m, h, d)")
    return total
