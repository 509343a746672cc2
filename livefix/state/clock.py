"""Receiver time of fix -> POSIX seconds, with sparse dates, midnight rollover and jump detection.

Why: most sentences carry only a time of day; the date comes from RMC or ZDA, sometimes not at all.
The clock carries the last date forward, rolls it at midnight, and reports time running backwards
or leaping ahead as events instead of hiding them (the epoch is still published).
"""

from __future__ import annotations

import datetime as _dt
from collections import deque
from statistics import median

_DAY = 86400.0
_UTC = _dt.UTC


def tod_seconds(t: object) -> float | None:
    """datetime.time -> seconds of the day; anything else (e.g. "" for an empty field) -> None."""
    if isinstance(t, _dt.time):
        return t.hour * 3600 + t.minute * 60 + t.second + t.microsecond / 1e6
    return None


def _day_start(d: _dt.date) -> float:
    return _dt.datetime(d.year, d.month, d.day, tzinfo=_UTC).timestamp()


class UtcClock:
    """Resolves each epoch's time of day to POSIX seconds; returns (kind, text, data) notes."""

    JUMP_FACTOR = 10.0  # forward step over 10 nominal intervals ...
    JUMP_MIN_S = 2.0  # ... and over 2 s is a jump (common practice)

    def __init__(self) -> None:
        self.date: _dt.date | None = None  # date the last epoch fell on
        self._given: _dt.date | None = None  # last date the receiver stated
        self._last_tod: float | None = None
        self.last_utc: float | None = None
        self._steps: deque[float] = deque(maxlen=15)

    @property
    def nominal_s(self) -> float:
        """Typical epoch interval, median of recent forward steps (1 s until known)."""
        return median(self._steps) if self._steps else 1.0

    def resolve(self, tod: float, given: _dt.date | None, wall: float
                ) -> tuple[float, list[tuple[str, str, dict]]]:
        notes: list[tuple[str, str, dict]] = []
        if given is not None:
            if self._given is not None and given != self._given:
                notes.append(("date_change", f"receiver date {self._given} -> {given}",
                              {"from": str(self._given), "to": str(given)}))
            self._given = self.date = given
        elif self.date is not None and self._last_tod is not None:
            if tod < self._last_tod - _DAY / 2:  # 23:59:59 -> 00:00:00 without a date: next day
                self.date += _dt.timedelta(days=1)
            elif tod > self._last_tod + _DAY / 2:  # 00:00:01 -> 23:59:59: back across midnight
                self.date -= _dt.timedelta(days=1)
        else:  # no date ever: the host date that puts the fix nearest the host clock
            wd = _dt.datetime.fromtimestamp(wall, tz=_UTC).date()
            cands = (wd - _dt.timedelta(days=1), wd, wd + _dt.timedelta(days=1))
            self.date = min(cands, key=lambda d: abs(_day_start(d) + tod - wall))
        utc = _day_start(self.date) + tod
        if self.last_utc is not None:
            dt = utc - self.last_utc
            if dt < 0:
                notes.append(("time_rollback", f"receiver time went back {-dt:.3f} s", {"step_s": dt}))
            elif dt > self.JUMP_MIN_S and dt > self.JUMP_FACTOR * self.nominal_s:  # median only then
                notes.append(("time_jump", f"receiver time jumped ahead {dt:.3f} s", {"step_s": dt}))
            elif dt > 0:
                self._steps.append(dt)
        self.last_utc, self._last_tod = utc, tod
        return utc, notes
