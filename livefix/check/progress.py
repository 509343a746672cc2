"""The one progress line `livefix check` prints on stderr: a bar with ETA, then each receiver.

Why a state before a verdict: at 00:00:00 nothing has been measured, and "FAIL 6" there reads as a
broken installation. A receiver shows "waiting for data" until its first byte, "waiting for NMEA"
until its first sentence and "waiting for first fix" until its first epoch with a fix; only then
the running verdict.
"""

from __future__ import annotations

import os
from typing import Any

BAR_CELLS = 16  # keeps bar + times near 45 columns, so one receiver still fits in 80


def hms(s: float) -> str:
    s = int(max(0.0, s))
    return f"{s // 3600:02d}:{s % 3600 // 60:02d}:{s % 60:02d}"


def bar(frac: float, cells: int = BAR_CELLS) -> str:
    """ASCII only: the line goes to logs and CI consoles as often as to terminals."""
    frac = min(1.0, max(0.0, frac))
    full = int(frac * cells + 1e-9)
    return "[" + "#" * full + "-" * (cells - full) + f"] {frac * 100:3.0f}%"


def head(elapsed: float, limit: float | None, frac: float | None) -> str:
    """Timed run: bar, elapsed / limit and time left. File: bar by bytes read and ETA from the rate
    so far. Neither known: elapsed only."""
    if limit:
        return f"{bar(elapsed / limit)} {hms(elapsed)} / {hms(limit)}, ETA {hms(limit - elapsed)}"
    if frac is not None:
        eta = f", ETA {hms(elapsed * (1 - frac) / frac)}" if frac > 0.01 else ""
        return f"{bar(frac)} {hms(elapsed)}{eta}"
    return hms(elapsed)


def file_fraction(spec: str, nbytes: int) -> float | None:
    """Share of a plain file read so far; None where size does not measure bytes delivered
    (compressed or rotated recordings, anything that is not a regular file)."""
    if spec.endswith(".gz") or not os.path.isfile(spec):
        return None
    size = os.path.getsize(spec)
    return min(1.0, nbytes / size) if size > 0 else None


def has_fixed(snap: Any) -> bool:
    """True once any epoch with a fix was seen (the analysis keeps counts by fix type)."""
    by_fix = (snap.analysis.get("fix") or {}).get("epochs_by_fix") or {}
    return any(n for kind, n in by_fix.items() if kind != "none")


def rx_state(snap: Any, failed: list[str] | None) -> str:
    """'waiting for data', 'waiting for NMEA', 'waiting for first fix', 'pass' or 'FAIL n (...)'."""
    if snap is None or not snap.counters.bytes:
        return "waiting for data"
    c = snap.counters
    if not (c.decoded or c.unknown):
        return f"waiting for NMEA ({c.bytes} bytes, no sentence yet)"
    if not has_fixed(snap):
        return "waiting for first fix"
    if not failed:
        return "pass"
    more = "..." if len(failed) > 3 else ""
    return f"FAIL {len(failed)} ({', '.join(failed[:3])}{more})"
