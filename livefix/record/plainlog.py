"""Timestamps for plain NMEA logs, which carry no host times: pace by the receiver's own times.

mono = seconds of receiver activity since the first line; wall = a date and time of day once the
log gives a valid date, else days from 1970-01-01 + time of day, which livefix.timefmt shows as a
time of day only ("date unknown"). Bytes are kept exactly as in the file, junk included; lines
sharing a stamp go out as one chunk. The rules, each because a real receiver needs it:

* Only sentences whose checksum verifies set the clock (livefix.record.linetime).
* A burst whose fix sentences have empty time fields (no fix yet) is still an epoch of a live
  receiver: it advances mono by the nominal epoch interval (learned from timed epochs), so such a
  period is never mistaken for silence. Bursts before the first time are re-paced once the rate is
  learned (LEARN_STEPS), so a 10 Hz receiver's no-fix start is not stretched tenfold.
* A time that jumps back or ahead by more than the jump limit moves the clock only when the following epochs run on from
  it (livefix.dates); otherwise it is a time fault (counted in `time_faults`) and its lines
  keep the current stamp. A confirmed leap ahead between trusted times with no line in between is a
  hole in the log: one STALLED ... STREAMING pair says so. Any other confirmed jump (the receiver
  setting or resetting its clock, a default date on either side) costs one nominal interval.
* Default dates (1980, 2000-01-01, 1024 weeks early) never place the session; lines before the
  first valid date take that date, counted back along mono (held back, bounded by HOLD_MAX bytes).
  A receiver that knew the time and falls back to a default clock has restarted: when the valid
  time returns, real time the epochs do not account for is placed as a hole before the restart.
"""

from __future__ import annotations

import datetime as _dt
from collections import deque
from collections.abc import Iterator
from statistics import median

from livefix.dates import CONFIRM_EPOCHS, date_problem, jump_limit
from livefix.items import Chunk, Item, Link, LinkEvent
from livefix.record.linetime import LineTime, TimeReader, line_time, pieces, text_blocks
from livefix.record.linetime import wrap_step as _wrap
from livefix.record.plainblock import CHUNK_MAX, BlockFeed

HOLD_MAX = 1 << 20  # bytes held back while waiting for a first date or a jump's confirmation
LEARN_STEPS = 3  # timed steps that fix the nominal interval for the untimed bursts that came before
STALL_S = 2.0  # same limit as the live sources: a silent gap this long becomes STALLED
_DAY = 86400.0
_EPOCH0 = _dt.date(1970, 1, 1)


def _midnight(d: _dt.date) -> float:
    return float((d - _EPOCH0).days) * _DAY


class _Jump:
    """A time step waiting for the epochs after it: its pieces are held until decided."""

    __slots__ = ("tod", "chain", "seen", "step", "bad_date", "held", "size")

    def __init__(self, tod: float, step: float, bad_date: bool) -> None:
        self.tod = self.chain = tod
        self.seen = 0  # following epochs that ran on from it
        self.step, self.bad_date = step, bad_date
        self.held: list[tuple[bytes, LineTime | None]] = []
        self.size = 0


class PlainStamper(BlockFeed):
    """Sans-I/O: feed raw lines (terminators included) or blocks of whole lines (feed_block),
    get stamped items back."""

    def __init__(self) -> None:
        self.time_faults = 0  # leaps not confirmed by the following epochs
        self.untimed_epochs = 0  # bursts paced without a time
        self._steps: deque[float] = deque(maxlen=15)
        self._nominal = 1.0  # median of _steps, kept with it (read several times an epoch)
        self._mono = 0.0
        self._seg = bytearray()  # bytes of the current stamp
        self._ready: list[tuple[float, str, bytes]] = []  # (mono, what, data) waiting for a wall
        self._ready_size = 0
        self._base: float | None = None  # wall = base + mono, once the date is settled
        self._dated = False  # base comes from a valid receiver date
        self._guess: float | None = None  # undated base, used if no date comes in time
        self._last_tod: float | None = None  # time of day of the last accepted timed epoch
        self._first_tod: float | None = None
        self._utod = 0.0  # time of day since the first one, unwrapped (undated placement)
        self._tod_mono = 0.0  # mono of that epoch
        self._untimed = 0  # untimed bursts since then
        self._keys: set[bytes] = set()  # fix sentences seen in the current epoch
        self._epochs = 0
        self._fix_times = False  # the log has timed fix sentences (then ZDA only dates)
        self._date_bad = False  # the receiver's latest date is a default one
        self._prev_bad: _dt.date | None = None
        self._problem: tuple[tuple, str | None] = ((), None)  # (date, good, prev_bad) -> _date's verdict
        self._good: _dt.date | None = None  # the latest valid date
        self._jump: _Jump | None = None
        self._valid: tuple[float, float] | None = None  # (wall, mono) of the last validly dated epoch
        # (wall, mono of the last valid epoch, mono of the reset) while a receiver that knew the time
        # runs on a default clock: items are held until the valid time returns
        self._lost: tuple[float, float, float] | None = None
        self._started = False
        self._released: float | None = None  # mono of the last chunk handed out
        # mono where the first timed epoch came after untimed bursts paced at the provisional 1 s;
        # items are held until the nominal interval is learned and those bursts are re-paced
        self._lead: float | None = None
        self._last_emit: float | None = None
        self._reader = TimeReader()  # line_time for the block path, parsing an epoch's time once

    @property
    def nominal_s(self) -> float:
        return self._nominal

    # -- input ----------------------------------------------------------------------------
    def feed(self, line: bytes) -> list[Item]:
        if line[:1] == b"$" and line.find(b"$", 1) < 0:
            self._piece(line, None)
        else:
            for p in pieces(line):
                self._piece(p, None)
        if len(self._seg) >= CHUNK_MAX:
            self._close_seg()
        return self._release()

    def finish(self) -> list[Item]:
        if self._jump is not None:
            self._fault(None)
        self._close_seg()
        self._lost = None
        if self._lead is not None and self._steps:
            self._repace_lead()
        self._lead = None
        if self._base is None:
            self._base = self._guess if self._guess is not None else 0.0
        return self._release()

    # -- pacing ---------------------------------------------------------------------------
    def _piece(self, p: bytes, t: LineTime | None, parsed: bool = False) -> None:
        if not parsed:
            t = line_time(p)
        jump = self._jump
        if jump is not None:
            jump.held.append((p, t))
            jump.size += len(p)
            if t is not None and t.tod is not None and (t.fix or not self._fix_times):
                self._decide(jump, t)
            elif jump.size > HOLD_MAX:
                self._fault(None)
            return
        if t is None or (not t.fix and self._fix_times):
            self._seg += p
            if t is not None and t.date is not None:
                self._zda_date(t)
            return
        if t.tod is None:
            if t.fix:
                self._untimed_piece(t.key)
            self._seg += p
            return
        self._fix_times |= t.fix
        self._timed(p, t)

    def _untimed_piece(self, key: bytes) -> None:
        if key in self._keys:  # a repeated fix sentence: the next burst of a receiver without time
            self._advance(self._mono + self.nominal_s)
            self._untimed += 1
            self.untimed_epochs += 1
            self._keys = set()
        elif not self._keys and self._epochs == 0:
            self._epochs = 1  # the log starts with an untimed burst
        self._keys.add(key)

    def _timed(self, p: bytes, t: LineTime) -> None:
        tod = t.tod
        assert tod is not None
        last = self._last_tod
        if last is None:
            self._accept(tod, self._mono + (self.nominal_s if self._epochs else 0.0), 0.0)
        else:
            step, nom = _wrap(tod - last), self._nominal
            if step == 0:
                self._keys.add(t.key)
            elif -jump_limit(nom) <= step <= jump_limit(nom) + self._untimed * nom:  # _limit()
                at = self._tod_mono + step  # a small step back (a receiver re-aligning its
                if self._untimed:  # time of fix) keeps mono where it is
                    at = max(at, self._mono + self.nominal_s)
                elif step > 0:
                    self._steps.append(step)
                    self._nominal = median(self._steps)
                self._accept(tod, max(at, self._mono), step)
                if self._lead is not None and len(self._steps) >= LEARN_STEPS:
                    self._repace_lead()
            else:
                self._jump = _Jump(tod, step, self._date_bad)
                self._jump.held.append((p, t))
                self._jump.size = len(p)
                if t.date is not None and date_problem(t.date, self._good, self._prev_bad):
                    self._jump.bad_date = True
                return
        self._keys.add(t.key)
        self._seg += p
        if t.date is not None:
            self._date(t.date, tod)

    def _limit(self) -> float:
        """Largest ordinary forward step now: untimed bursts since the last time stretch it."""
        return jump_limit(self.nominal_s) + self._untimed * self.nominal_s

    def _accept(self, tod: float, at: float, step: float) -> None:
        """A new timed epoch at mono `at`."""
        self._advance(at)
        self._last_tod, self._tod_mono, self._untimed = tod, self._mono, 0
        self._keys = set()
        self._epochs += 1
        if self._first_tod is None:
            self._first_tod = tod
            if self.untimed_epochs or self._mono > 0:  # the log began without times
                self._lead = self._mono
        self._utod += step
        if not self._dated:  # no valid date yet: follow the time of day on day 0
            self._guess = self._first_tod + self._utod - self._mono
            if self._base is not None:
                self._base = self._guess
        elif not self._date_bad and self._base is not None:
            self._valid = (self._base + self._mono, self._mono)

    def _advance(self, at: float) -> None:
        if at != self._mono:
            self._close_seg()
            self._mono = at

    def _decide(self, jump: _Jump, t: LineTime) -> None:
        tod = t.tod
        assert tod is not None
        limit = jump_limit(self.nominal_s)
        assert self._last_tod is not None
        old, step = _wrap(tod - self._last_tod), _wrap(tod - jump.chain)
        if 0 <= old <= self._limit() or not 0 <= step <= limit:
            self._fault(t)  # the old clock runs on (or neither does): the held jump was a fault
            return
        if t.date is not None and date_problem(t.date, self._good, self._prev_bad):
            jump.bad_date = True
        if step > 0:
            jump.seen += 1
            jump.chain = tod
        if jump.seen >= CONFIRM_EPOCHS:
            self._confirm(jump)

    def _confirm(self, jump: _Jump) -> None:
        self._jump = None
        hole = jump.step > 0 and not jump.bad_date  # trusted times on both sides: data missing
        at = self._tod_mono + jump.step if hole else self._mono + self.nominal_s
        lost = jump.bad_date and not self._date_bad and self._valid is not None
        self._accept(jump.tod, max(at, self._mono + (self.nominal_s if self._untimed else 0.0)),
                     jump.step)
        if lost and self._valid is not None:  # the receiver fell back to a default clock (a restart)
            self._lost = (*self._valid, self._mono)
        for p, t in jump.held:
            self._piece(p, t, parsed=True)

    def _fault(self, decider: LineTime | None) -> None:
        """The held leap was not confirmed: its lines keep the current stamp, its times are dropped."""
        jump = self._jump
        assert jump is not None
        self._jump = None
        self.time_faults += 1
        held = jump.held[:-1] if decider is not None else jump.held
        for p, t in held:
            if t is not None and t.tod is not None and (t.fix or not self._fix_times):
                self._seg += p  # part of the faulty chain
            else:
                self._piece(p, t, parsed=True)
        if decider is not None:
            p, t = jump.held[-1]
            self._piece(p, t, parsed=True)

    # -- dates ----------------------------------------------------------------------------
    def _zda_date(self, t: LineTime) -> None:
        if self._last_tod is None or t.tod is None or t.date is None:
            return
        d = t.date
        gap = self._last_tod - t.tod  # the ZDA's date is that of its own time of day
        if gap > _DAY / 2:
            d -= _dt.timedelta(days=1)
        elif gap < -_DAY / 2:
            d += _dt.timedelta(days=1)
        self._date(d, self._last_tod)

    def _date(self, d: _dt.date, tod: float) -> None:
        """The date of the current epoch (time of day `tod`) as the receiver states it."""
        key = (d, self._good, self._prev_bad)
        if key != self._problem[0]:  # the same date again (every RMC, ZDA): judged once
            self._problem = (key, date_problem(*key))
        if self._problem[1]:
            self._date_bad, self._prev_bad = True, d
            return
        self._date_bad, self._good, self._dated = False, d, True
        if self._lost is not None:
            self._restore(_midnight(d) + tod)
        self._base = _midnight(d) + tod - self._tod_mono
        self._valid = (self._base + self._tod_mono, self._tod_mono)

    def _restore(self, wall: float) -> None:
        """The valid time is back after a default clock: the real time that passed beyond what the
        epochs account for is a hole before the reset (a receiver restarting sends nothing)."""
        assert self._lost is not None
        wall0, mono0, reset = self._lost
        self._lost = None
        hole = (wall - wall0) - (self._tod_mono - mono0)
        if not STALL_S < hole < _DAY:
            return
        self._close_seg()
        ready, i = self._ready, 0
        while i < len(ready) and ready[i][0] < reset:
            i += 1
        prev = max((m for m, what, _ in ready[:i] if what == "chunk"), default=self._released)
        ready[i:] = [(m + hole, what, data) for m, what, data in ready[i:]]
        if prev is not None:
            ready[i:i] = [(prev + STALL_S, "stalled", f"{reset + hole - prev:.1f}".encode()),
                          (reset + hole, "again", b"")]
        self._mono += hole
        self._tod_mono += hole
        if self._last_emit is not None:
            self._last_emit += hole

    # -- output ---------------------------------------------------------------------------
    def _close_seg(self) -> None:
        if not self._seg:
            return
        mono = self._mono
        if not self._started:
            self._started = True
            self._queue(mono, "start", b"")
        elif self._last_emit is not None and mono - self._last_emit > STALL_S:
            self._queue(self._last_emit + STALL_S, "stalled", f"{mono - self._last_emit:.1f}".encode())
            self._queue(mono, "again", b"")
        self._queue(mono, "chunk", bytes(self._seg))
        self._seg.clear()
        self._last_emit = mono

    def _queue(self, mono: float, what: str, data: bytes) -> None:
        self._ready.append((mono, what, data))
        self._ready_size += len(data)
        if self._base is None and self._ready_size > HOLD_MAX:
            self._base = self._guess if self._guess is not None else 0.0  # no date in time

    def _repace_lead(self) -> None:
        """The untimed bursts before the first time were paced 1 s apart before the rate was
        known: now that it is, they take the nominal interval (a 10 Hz receiver's first 20 s of
        no fix are 200 bursts, not 200 s)."""
        lead, self._lead = self._lead, None
        assert lead is not None
        nom = self.nominal_s
        cut = lead * (1.0 - nom)  # lead bursts were k * 1 s, the first timed one at `lead`
        self._ready = [(m * nom if m < lead else m - cut, what, data) for m, what, data in self._ready]
        self._mono -= cut
        self._tod_mono -= cut
        if self._last_emit is not None:
            self._last_emit -= cut
        for name in ("_base", "_guess"):
            v = getattr(self, name)
            if v is not None:
                setattr(self, name, v + cut)
        if self._valid is not None:
            self._valid = (self._valid[0], self._valid[1] - cut)

    def _release(self) -> list[Item]:
        if self._lead is not None and self._ready_size > HOLD_MAX:
            self._lead = None  # the rate was not learned in time: the provisional 1 s stays
        if self._lost is not None and self._ready_size > HOLD_MAX:
            self._lost = None  # the valid time did not come back in time: no hole can be placed
        if self._lead is not None:
            return []
        if not self._ready or self._base is None or self._lost is not None:
            return []
        base, out = self._base, []
        for mono, what, data in self._ready:
            wall = base + mono
            if what == "chunk":
                out.append(Chunk(mono, wall, data))
                self._released = mono
            elif what == "start":
                out.append(LinkEvent(mono, wall, Link.STREAMING, "plain NMEA log"))
            elif what == "stalled":
                out.append(LinkEvent(mono, wall, Link.STALLED, f"no data for {data.decode()} s in the log"))
            else:
                out.append(LinkEvent(mono, wall, Link.STREAMING, "data again"))
        self._ready.clear()
        self._ready_size = 0
        return out


def iter_plain(f, limit: int = CHUNK_MAX) -> Iterator[Item]:  # noqa: ANN001 - binary file
    """Stamped items from a binary file object of NMEA text (any junk kept). Read a block at a
    time (livefix.record.plainblock); the items are those of feed() on each f.readline(limit)."""
    st = PlainStamper()
    for block in text_blocks(f, limit):
        yield from st.feed_lines(block) if type(block) is list else st.feed_block(block)
    yield from st.finish()
