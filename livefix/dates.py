"""Which receiver dates and time steps can be trusted to place a session in time.

Why: a receiver that does not yet know the time still fills the date field, with a default (the
GPS epoch and the days after it, or 2000-01-01) or, after a GPS week rollover, with a date exactly
1024 weeks early. Such a date must be flagged and never used to place the session. And a time that
leaps (a corrupted line with a good checksum, a stale sentence) must be confirmed by the epochs that
follow before it may move the clock. The plain-log reader (livefix.record.plainlog) and the state
model's clock (livefix.state.clock) share these rules so they cannot disagree.
"""

from __future__ import annotations

import datetime as _dt

GPS_EPOCH_DATE = _dt.date(1980, 1, 6)  # start of GPS time (IS-GPS-200)
# The broadcast GPS week number has 10 bits and rolls over every 1024 weeks (IS-GPS-200); a
# receiver with an old week reference reports dates 1024 (or 2048) weeks early.
ROLLOVER_DAYS = 1024 * 7
# Dates receivers emit before they know the time (common practice): any date up to the end of 1980
# (a receiver that does not know the week counts from week 0, 1980-01-06, and dates before the GPS
# epoch are impossible; no NMEA 0183 log can date from 1980, the standard came later, from memory),
# and 2000-01-01.
DEFAULT_UNTIL = _dt.date(1980, 12, 31)
DEFAULT_DATES = frozenset({_dt.date(2000, 1, 1)})

# A time step is a jump when it goes back, or forward by more than JUMP_FACTOR nominal intervals
# and more than JUMP_MIN_S (common practice). A jump moves the clock only when CONFIRM_EPOCHS
# following epochs run on from it; otherwise it is a time fault (common practice: two epochs rule
# out one stray or corrupted sentence, and a repeated stale one).
JUMP_FACTOR = 10.0
JUMP_MIN_S = 2.0
CONFIRM_EPOCHS = 2
# Host and receiver agree on a step when they differ by at most this much (2 s, or 5 % of a long
# step: a serial link and a busy host delay single sentences by up to about a second).
AGREE_S = 2.0
AGREE_SHARE = 0.05


def jump_limit(nominal_s: float) -> float:
    """Largest forward step that is still an ordinary epoch step."""
    return max(JUMP_MIN_S, JUMP_FACTOR * nominal_s)


def agrees(step_s: float, host_s: float) -> bool:
    """The host clock vouches for a receiver time step (a hole in the data, not a jump)."""
    return step_s > 0 and abs(step_s - host_s) <= max(AGREE_S, AGREE_SHARE * step_s)


def default_date(d: _dt.date) -> bool:
    return d <= DEFAULT_UNTIL or d in DEFAULT_DATES


def rollover_early(d: _dt.date, ref: _dt.date | None) -> bool:
    """d lies 1024 or 2048 weeks (within a day) before a trusted reference date."""
    if ref is None:
        return False
    days = (ref - d).days
    return any(abs(days - k * ROLLOVER_DAYS) <= 1 for k in (1, 2))


def date_problem(d: _dt.date, ref: _dt.date | None = None, prev_bad: _dt.date | None = None) -> str | None:
    """Why a receiver date cannot place the session, or None when it can.

    ref: a trusted date to compare with (the host's, when it has one); prev_bad: the last date found
    not valid, so that a default clock running past midnight (2000-01-01 -> 01-02) stays not valid.
    """
    if default_date(d):
        return "default date before the receiver knows the time"
    if prev_bad is not None and d == prev_bad + _dt.timedelta(days=1):
        return "default date before the receiver knows the time (run past midnight)"
    if rollover_early(d, ref):
        return "1024 weeks early (GPS week rollover, IS-GPS-200)"
    return None
