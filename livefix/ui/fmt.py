"""Pure formatting helpers shared by the widgets: numbers, bars, sparklines, C/N0 grades.

Every missing value renders as an em dash so early snapshots (keys absent) never crash a panel.
"""

from __future__ import annotations

import datetime as _dt
from collections.abc import Sequence
from typing import Any

from livefix.timefmt import UNDATED_BEFORE

DASH = "—"

# C/N0 grade boundaries, dB-Hz (common practice: under ~30 weak, 37-45 typical open sky, see
# docs/sources.md#typical-cn0). Grade 0 = in view but not tracked.
CN0_GRADES: tuple[tuple[float, int], ...] = ((45.0, 4), (37.0, 3), (30.0, 2), (0.0, 1))
GRADE_WORDS: dict[int, str] = {0: "none", 1: "weak", 2: "fair", 3: "good", 4: "strong"}

SPARK_UNICODE = "▁▂▃▄▅▆▇█"
SPARK_ASCII = "_.-:=+*#"
BAR_PARTS = " ▏▎▍▌▋▊▉"


# one character for one character, so styled spans keep their places when text is made ASCII
ASCII_MAP = str.maketrans({"°": " ", "—": "-", "–": "-", "→": ">", "…": "~", "●": "*", "·": ".",
                           "↕": "|", "×": "x", "±": "~", "≥": ">", "█": "#", "░": ":", "▒": "x", "▓": "X"})


def asciify(text: str) -> str:
    return text.translate(ASCII_MAP)


def asciify_text(t: Any) -> Any:
    """Same for a rich Text, in place (equal length keeps the styles)."""
    plain = t.plain
    new = plain.translate(ASCII_MAP)
    if new != plain:
        t.plain = new
    return t


def cn0_grade(cn0: float | None) -> int:
    if cn0 is None:
        return 0
    for lo, g in CN0_GRADES:
        if cn0 >= lo:
            return g
    return 1


def num(v: Any, fmt: str = ".2f", unit: str = "", dash: str = DASH) -> str:
    """Format a number or return a dash for None/missing/non-numeric values."""
    if v is None or isinstance(v, bool):
        return dash
    try:
        return f"{float(v):{fmt}}{unit}"
    except (TypeError, ValueError):
        return dash


def dig(d: Any, *path: Any) -> Any:
    """Nested lookup that returns None for any missing level (analysis keys may be absent)."""
    for p in path:
        if isinstance(d, dict):
            d = d.get(p)
        elif isinstance(d, (list, tuple)) and isinstance(p, int) and -len(d) <= p < len(d):
            d = d[p]
        else:
            return None
    return d


def duration(s: float | None) -> str:
    """Seconds -> '42 s', '12 m 05 s', '3 h 07 m', '2 d 04 h'."""
    if s is None:
        return DASH
    s = max(0.0, float(s))
    if s < 60:
        return f"{s:.0f} s" if s >= 10 else f"{s:.1f} s"
    m, sec = divmod(int(s), 60)
    if m < 60:
        return f"{m} m {sec:02d} s"
    h, m = divmod(m, 60)
    if h < 48:
        return f"{h} h {m:02d} m"
    d, h = divmod(h, 24)
    return f"{d} d {h:02d} h"


def clock(s: float | None) -> str:
    """Session clock as H:MM:SS (hours grow past 24 for soak runs)."""
    if s is None:
        return DASH
    t = max(0, int(s))
    return f"{t // 3600}:{t % 3600 // 60:02d}:{t % 60:02d}"


def utc_text(posix: float | None) -> str:
    if posix is None:
        return DASH
    d = _dt.datetime.fromtimestamp(posix, tz=_dt.UTC)
    if posix < UNDATED_BEFORE:  # carried without a date (livefix.timefmt): no made-up day
        return d.strftime("date unknown %H:%M:%S") + " UTC"
    return d.strftime("%Y-%m-%d %H:%M:%S") + " UTC"


def sparkline(values: Sequence[float | None], width: int, ascii_only: bool = False) -> str:
    """Last `width` values scaled min..max into eight levels; gaps (None) become spaces."""
    chars = SPARK_ASCII if ascii_only else SPARK_UNICODE
    vals = list(values)[-width:] if width > 0 else []
    nums = [v for v in vals if isinstance(v, (int, float)) and not isinstance(v, bool)]
    if not nums:
        return ""
    lo, hi = min(nums), max(nums)
    span = (hi - lo) or 1.0
    out = []
    for v in vals:
        if not isinstance(v, (int, float)) or isinstance(v, bool):
            out.append(" ")
        else:
            out.append(chars[min(7, int((v - lo) / span * 7.999))])
    return "".join(out)


def bar(value: float | None, full: float, width: int, ascii_only: bool = False) -> str:
    """A left-aligned bar of `width` cells, value/full of it filled, eighth-cell resolution."""
    if value is None or width <= 0:
        return " " * max(0, width)
    share = max(0.0, min(1.0, float(value) / full))
    if ascii_only:
        n = round(share * width)
        return ("=" * n).ljust(width)
    eighths = round(share * width * 8)
    whole, part = divmod(eighths, 8)
    text = "█" * whole + (BAR_PARTS[part] if part and whole < width else "")
    return text.ljust(width)
