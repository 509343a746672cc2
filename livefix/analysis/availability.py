"""Fix availability on time, not on epoch counts: every second of the session goes to one bucket.

Why time: a hole in the data (no bytes: the link stalled or was lost) is time in which we do not
know what the receiver did, so it must count neither as fix nor as no-fix; epochs that carry no
position sentence (GGA/RMC lost to checksum errors) say nothing about the fix either; and the no-fix
time after a restart that livefix itself commanded is TTFF time, not an outage. So
    availability[fix] = time in that fix / (observed time - data gaps - unknown - commanded restarts).
Each epoch holds its state until the next epoch; epochs missing while bytes still flow (more than
GAP_FACTOR nominal intervals) after a fix count as no fix from one interval after the last fix.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from livefix.analysis.streaming import num
from livefix.state.epoch import FIX_NAMES

GAP_FACTOR = 3.0  # an epoch gap longer than this many intervals, bytes still flowing, is no fix
DATA_GAP_MIN = 0.5  # a stall counts as a data gap once it hides more than half an epoch interval
GAP, UNKNOWN, RESTART = "data_gap", "unknown", "restart"  # buckets outside the fix names
NOT_FIX_STATE = frozenset({GAP, UNKNOWN, RESTART})


class TimeBook:
    """Seconds per bucket; O(1) per epoch, a handful of floats."""

    __slots__ = ("time", "prev_t", "prev", "_marks")

    def __init__(self) -> None:
        self.time: dict[str, float] = {}
        self.prev_t: float | None = None
        self.prev: str | None = None  # bucket of the previous epoch
        self._marks: dict[str, dict[str, float]] = {}  # totals when a mark was set (first fix ...)

    def _credit(self, bucket: str, dt: float) -> None:
        if dt > 0.0:
            self.time[bucket] = self.time.get(bucket, 0.0) + dt

    def step(self, t: float, bucket: str, iv: float, data_gap: bool) -> tuple[float, float]:
        """Account the time since the previous epoch; returns (when this bucket began, data gap
        seconds just before it). With no data gap the bucket begins at t, or one interval after a
        fix when epochs stopped coming for longer than GAP_FACTOR intervals."""
        prev, prev_t = self.prev, self.prev_t
        self.prev, self.prev_t = bucket, t
        if prev is None or prev_t is None:
            return t, 0.0
        dt = t - prev_t
        if dt <= 0.0:
            return t, 0.0
        if data_gap and dt - iv > DATA_GAP_MIN * iv:
            self._credit(prev, iv)
            self._credit(GAP, dt - iv)
            return t, dt - iv
        if prev not in NOT_FIX_STATE and prev != "none" and dt > GAP_FACTOR * iv:
            self._credit(prev, iv)
            self._credit("none", dt - iv)
            return prev_t + iv, 0.0
        time = self.time  # _credit(prev, dt) inline (dt > 0 here): once per epoch
        time[prev] = time.get(prev, 0.0) + dt
        return t, 0.0

    def totals(self, iv: float) -> dict[str, float]:
        """Bucket seconds with the latest epoch's own interval counted."""
        out = dict(self.time)
        if self.prev is not None:
            out[self.prev] = out.get(self.prev, 0.0) + iv
        return out

    def mark(self, name: str) -> None:
        """Remember the totals now (before the current epoch), e.g. at the first fix."""
        if name not in self._marks:
            self._marks[name] = dict(self.time)

    def shares(self, totals: dict[str, float], since: str | None = None) -> dict[str, float]:
        """Share of each fix name (and "none") in the time whose fix state is known."""
        base = self._marks.get(since, {}) if since else {}
        known = {k: v - base.get(k, 0.0) for k, v in totals.items() if k not in NOT_FIX_STATE}
        total = sum(known.values())
        if total <= 0.0:
            return {}
        order = {name: i for i, name in enumerate(FIX_NAMES.values())}
        return {k: num(v / total, 5) for k, v in sorted(known.items(), key=lambda kv: order.get(kv[0], 99))
                if v > 0.0}

    def has_mark(self, name: str) -> bool:
        return name in self._marks

    def basis(self, totals: dict[str, float]) -> dict[str, Any]:
        """What the availability shares are a share of, in seconds."""
        known = sum(v for k, v in totals.items() if k not in NOT_FIX_STATE)
        return {"observed_s": num(sum(totals.values()), 3), "known_s": num(known, 3),
                "data_gap_s": num(totals.get(GAP, 0.0), 3), "unknown_s": num(totals.get(UNKNOWN, 0.0), 3),
                "restart_s": num(totals.get(RESTART, 0.0), 3)}


def share_where(shares: dict[str, float], wanted: Callable[[str], bool]) -> float | None:
    """The summed share of the buckets `wanted` picks (rounded as reported), None without shares."""
    return num(sum(v for k, v in shares.items() if wanted(k)), 5) if shares else None
