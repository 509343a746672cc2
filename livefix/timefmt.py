"""Time conventions shared by every stage and output: ISO 8601 UTC with a Z, two-digit years, and
how a time whose date is unknown is carried and shown."""

from __future__ import annotations

import datetime as _dt

# GPS time starts 1980-01-06T00:00:00Z (IS-GPS-200), so no receiver time of fix can be earlier.
GPS_EPOCH = 315964800.0
# A time whose date is unknown (a plain log without any valid date, a host clock that booted
# without one) is carried as days counted from 1970-01-01 plus the time of day: every such POSIX
# value lies before GPS_EPOCH, so `iso` can tell it apart and show the time of day only.
UNDATED_BEFORE = GPS_EPOCH

# One two-digit-year rule for the whole code (NMEA ddmmyy dates): 00-68 -> 2000-2068, 69-99 ->
# 1969-1999. It is the POSIX strptime %y rule, which the reference decoder pynmeagps follows, so
# the fast decoder, the fallback and the plain-log reader agree on every date. Years 69-79 then
# fall before GPS time and are flagged as not valid (livefix.dates), as they must be.
YY_PIVOT = 68


def year_from_yy(yy: int) -> int:
    """Two-digit NMEA year -> four digits, by YY_PIVOT."""
    return yy + (2000 if yy <= YY_PIVOT else 1900)


def iso(posix: float | None) -> str | None:
    """POSIX seconds -> '2026-12-02T10:15:30.100Z' (milliseconds), None stays None.

    A time before UNDATED_BEFORE has no known date: it is shown as the ISO 8601 time of day
    alone, 'T10:15:30.100Z', rather than a made-up date."""
    if posix is None:
        return None
    d = _dt.datetime.fromtimestamp(posix, tz=_dt.UTC)
    tod = d.strftime("T%H:%M:%S.") + f"{d.microsecond // 1000:03d}Z"
    return tod if posix < UNDATED_BEFORE else d.strftime("%Y-%m-%d") + tod


def date_known(posix: float | None) -> bool:
    """False for a time carried without a date (see UNDATED_BEFORE)."""
    return posix is not None and posix >= UNDATED_BEFORE


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
