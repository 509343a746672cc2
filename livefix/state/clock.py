"""Receiver time of fix -> POSIX seconds, with sparse dates, midnight rollover and jump checks.

Why: most sentences carry only a time of day; the date comes from RMC or ZDA, sometimes not at all,
and before a receiver knows the time its date is a default one. The clock carries the last valid
date forward and rolls it at midnight; a default date is reported once ("receiver_date_invalid")
and its epochs get no UTC (their time is not the real one). A jump (livefix.dates) moves the
clock only when the host clock vouches for it (a hole in the data) or the following epochs run on
from it; until then the epoch gets no UTC, and a jump never confirmed is a "time_fault" event.

UtcClock() gives a clock whose resolve() runs the common path in C (livefix/state/_clockcore.c,
once an epoch) and hands every other case to the reference below, on the same attributes: the
state model builds its clock as UtcClock(), so it gets it unchanged.
"""

from __future__ import annotations

import datetime as _dt
from collections import deque
from types import ModuleType

from livefix.corepick import built_core, pick_core
from livefix.dates import CONFIRM_EPOCHS, JUMP_FACTOR, JUMP_MIN_S, agrees, date_problem, jump_limit
from livefix.timefmt import UNDATED_BEFORE, date_known, iso

_DAY = 86400.0
_MEMO_MAX = 64  # remembered date verdicts; a stream has a handful of distinct dates
_UTC = _dt.UTC

Note = tuple[str, str, dict]


def tod_seconds(t: object) -> float | None:
    """datetime.time -> seconds of the day; anything else (e.g. "" for an empty field) -> None."""
    if isinstance(t, _dt.time):
        return t.hour * 3600 + t.minute * 60 + t.second + t.microsecond / 1e6
    return None


def _day_start(d: _dt.date) -> float:
    return _dt.datetime(d.year, d.month, d.day, tzinfo=_UTC).timestamp()


class UtcClock:
    """Resolves each epoch's time of day to POSIX seconds; returns (kind, text, data) notes.

    native None: the C common path when built unless LIVEFIX_PURE is "1" (as
    livefix.framing.native_core()); True: that or RuntimeError (tests); False: the reference.
    A subclass is always the reference (its own methods count)."""

    def __new__(cls, native: bool | None = None) -> UtcClock:
        if cls is UtcClock and pick_core(_CORE, native, _MISSING) is not None:
            cls = _CoreClock  # a subclass only in its resolve
        return object.__new__(cls)

    def __init__(self, native: bool | None = None) -> None:
        self.date: _dt.date | None = None  # date the last epoch fell on
        self.date_known = True  # the last epoch's date is real (receiver or host), not a stand-in
        self.time_faults = 0
        self._given: _dt.date | None = None  # last valid date the receiver stated
        self._bad: _dt.date | None = None  # last default date the receiver stated
        self._date_bad = False  # the receiver's current date is a default one
        self._last_tod: float | None = None
        self.last_utc: float | None = None  # last accepted time
        self._last_mono: float | None = None
        self._jump: list[float] | None = None  # [utc, chain utc, epochs run on from it, step]
        self._steps: deque[float] = deque(maxlen=15)
        # Per-epoch answers that repeat epoch after epoch (the same dates, the same steps), kept
        # here so that a 10 Hz stream does not recompute them: bounded, owned by this clock.
        self._nominal: float | None = None  # median of _steps, None after a change
        self._problems: dict[tuple, str | None] = {}  # (date, host date, last valid, last bad) -> why
        self._midnight: tuple[_dt.date | None, float] = (None, 0.0)  # (date, _day_start(date))
        self._host: tuple[float, float, _dt.date | None] = (0.0, 0.0, None)  # [lo, hi) of host walls -> date

    @property
    def nominal_s(self) -> float:
        """Typical epoch interval, median of recent forward steps (1 s until known)."""
        n = self._nominal
        if n is None:
            s = sorted(self._steps)  # statistics.median, inline (once an epoch at 10-20 Hz)
            k = len(s)
            n = self._nominal = (s[k // 2] if k % 2 else (s[k // 2 - 1] + s[k // 2]) / 2) if k else 1.0
        return n

    def _problem(self, given: _dt.date, host: _dt.date | None) -> str | None:
        """Why the receiver's date is not valid, checked against the host's date and then against
        its own last valid date (date_problem), remembered: a pure function of four dates."""
        key = (given, host, self._given, self._bad)
        memo = self._problems
        why = memo.get(key, memo)
        if why is memo:
            if len(memo) >= _MEMO_MAX:
                memo.clear()
            why = memo[key] = (date_problem(given, host, self._bad) if host is not None else None) or \
                date_problem(given, self._given, self._bad)
        return why

    def _host_date(self, wall: float) -> _dt.date:
        """The host's UTC date at wall, remembered for its day: walls within a millisecond before
        midnight are computed afresh (fromtimestamp rounds to microseconds, up to the next day)."""
        lo, hi, d = self._host
        if lo <= wall < hi and d is not None:
            return d
        d = _dt.datetime.fromtimestamp(wall, tz=_UTC).date()
        lo = _day_start(d)
        self._host = (lo, lo + _DAY - 0.001, d)
        return d

    def _start_of(self, d: _dt.date) -> float:
        """_day_start(d), remembered for the last date."""
        last, start = self._midnight
        if d != last:
            start = _day_start(d)
            self._midnight = (d, start)
        return start

    def resolve(self, tod: float, given: _dt.date | None, wall: float, mono: float | None = None
                ) -> tuple[float | None, list[Note]]:
        notes: list[Note] = []
        host = self._host_date(wall) if date_known(wall) else None
        keep = (self.date, self._last_tod, self._given)
        change: Note | None = None
        if given is not None:
            # a rolled-over date shows against the host's date or the receiver's own last valid one
            why = self._problem(given, host)
            if why is not None:
                if not self._date_bad:
                    notes.append(("receiver_date_invalid", f"receiver date {given} not valid: {why}",
                                  {"date": str(given), "reason": why}))
                self._date_bad, self._bad = True, given
            else:
                if self._given is not None and given != self._given and not self._date_bad:
                    change = ("date_change", f"receiver date {self._given} -> {given}",
                              {"from": str(self._given), "to": str(given)})
                self._date_bad = False
                self._given = self.date = given
        elif self.date is not None and self._last_tod is not None:
            if tod < self._last_tod - _DAY / 2:  # 23:59:59 -> 00:00:00 without a date: next day
                self.date += _dt.timedelta(days=1)
            elif tod > self._last_tod + _DAY / 2:  # 00:00:01 -> 23:59:59: back across midnight
                self.date -= _dt.timedelta(days=1)
        elif not self._date_bad:  # no date ever: the host date that puts the fix nearest the host clock
            wd = _dt.datetime.fromtimestamp(wall, tz=_UTC).date()
            cands = (wd - _dt.timedelta(days=1), wd, wd + _dt.timedelta(days=1))
            self.date = min(cands, key=lambda d: abs(_day_start(d) + tod - wall))
        self._last_tod = tod
        if self._date_bad or self.date is None:  # the receiver does not know the time yet
            self.last_utc = self._last_mono = None  # the first valid time starts afresh
            self._drop_jump(notes)
            self.date_known = host is not None
            return None, notes
        self.date_known = self._given is not None or host is not None
        utc = self._start_of(self.date) + tod
        if not self._gate(utc, mono, notes):
            self.date, self._last_tod, self._given = keep  # a held or faulty time moves no date
            return None, notes
        if change is not None:
            notes.append(change)
        return utc, notes

    def finish(self) -> list[Note]:
        """End of stream: a jump still waiting for confirmation is a time fault."""
        notes: list[Note] = []
        self._drop_jump(notes)
        return notes

    def _gate(self, utc: float, mono: float | None, notes: list[Note]) -> bool:
        """Accept utc (True) or hold it as an unconfirmed jump (False)."""
        last = self.last_utc
        if last is None:
            return self._accept(utc, mono)
        dt, limit = utc - last, jump_limit(self.nominal_s)
        host = None if mono is None or self._last_mono is None else mono - self._last_mono
        j = self._jump
        if j is not None and 0 <= dt <= limit:  # the old clock runs on: the held jump was a fault
            self._drop_jump(notes)
        elif j is not None and 0 <= utc - j[1] <= limit:  # runs on from the held jump
            j[2] += utc > j[1]
            j[1] = utc
            if j[2] >= CONFIRM_EPOCHS:
                self._jump = None
                step = j[3]
                if step < 0:
                    notes.append(("time_rollback", f"receiver time went back {-step:.3f} s", {"step_s": step}))
                else:
                    notes.append(("time_jump", f"receiver time jumped ahead {step:.3f} s", {"step_s": step}))
                return self._accept(utc, mono)
            return False
        if -limit <= dt <= limit or (host is not None and agrees(dt, host)):
            self._drop_jump(notes)
            if dt < 0:  # a small step back: the receiver re-aligned its time of fix
                notes.append(("time_rollback", f"receiver time went back {-dt:.3f} s", {"step_s": dt}))
            elif 0 < dt <= limit:
                self._steps.append(dt)
                self._nominal = None
            return self._accept(utc, mono)
        self._drop_jump(notes)  # neither clock: a held jump was a fault, this one is held now
        self._jump = [utc, utc, 0, dt]
        return False

    def _accept(self, utc: float, mono: float | None) -> bool:
        self.last_utc, self._last_mono = utc, mono
        return True

    def _drop_jump(self, notes: list[Note]) -> None:
        j, self._jump = self._jump, None
        if j is None:
            return
        self.time_faults += 1
        notes.append(("time_fault", f"receiver time {iso(j[0])} ({j[3]:+.3f} s) not confirmed by the "
                      f"following epochs: ignored", {"step_s": j[3], "receiver_time": iso(j[0])}))


_MISSING = "the C core livefix.state._clockcore is not built (or built with other constants)"


def _built_core() -> ModuleType | None:
    """The C twin when built with this module's constants, else None (a stale build is not used;
    tests/state/test_clock_native.py fails on it)."""
    return built_core("livefix.state._clockcore", ("UNDATED_BEFORE", "HALF_DAY_S", "JUMP_FACTOR", "JUMP_MIN_S"),
                      (UNDATED_BEFORE, _DAY / 2, JUMP_FACTOR, JUMP_MIN_S))


_CORE = _built_core()


class _CoreClock(UtcClock):
    """UtcClock with the C resolve (the Resolver below): same attributes, same results."""

    __slots__ = ()


if _CORE is not None:  # the common path in C, everything else by the reference function
    _CoreClock.resolve = _CORE.Resolver(UtcClock.resolve, _CoreClock, deque)  # type: ignore[method-assign]
