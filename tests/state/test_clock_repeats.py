"""The UTC clock remembers what repeats epoch after epoch (the nominal interval, date verdicts, the
start of the day); these tests change each of them mid-stream and expect what a fresh computation
gives. Expected values are hand arithmetic on the fixture or Python's own datetime."""

from __future__ import annotations

import datetime as dt

from livefix.dates import JUMP_FACTOR, JUMP_MIN_S
from livefix.state.clock import UtcClock

D = dt.date


def utc_of(d: dt.date, tod: float) -> float:
    return dt.datetime(d.year, d.month, d.day, tzinfo=dt.UTC).timestamp() + tod


def test_nominal_interval_follows_a_rate_change() -> None:
    c = UtcClock()
    d = D(2026, 5, 12)
    tod, mono = 36000.0, 0.0
    for _ in range(20):  # 1 Hz
        c.resolve(tod, d, 0.0, mono)
        tod, mono = tod + 1.0, mono + 1.0
    assert c.nominal_s == 1.0
    for _ in range(20):  # then 10 Hz: the median of the last 15 steps (hand arithmetic) is 0.1 s
        c.resolve(tod, d, 0.0, mono)
        tod, mono = round(tod + 0.1, 1), mono + 0.1
    assert abs(c.nominal_s - 0.1) < 1e-6  # POSIX seconds near 1.8e9 carry about 2e-7 s of rounding
    # the jump limit follows it (livefix.dates: max(JUMP_MIN_S, JUMP_FACTOR * nominal)): 10 s at
    # 1 Hz, 2 s at 10 Hz, so a 5 s step with no host time passing is now held as a jump
    assert max(JUMP_MIN_S, JUMP_FACTOR * 1.0) > 5.0 > max(JUMP_MIN_S, JUMP_FACTOR * 0.1)
    utc, _ = c.resolve(tod + 5.0, d, 0.0, mono)
    assert utc is None


def test_a_five_second_step_at_one_hertz_is_ordinary() -> None:
    """The counterpart of the test above: the same step at 1 Hz is accepted."""
    c = UtcClock()
    d = D(2026, 5, 12)
    for k in range(20):
        c.resolve(36000.0 + k, d, 0.0, float(k))
    utc, _ = c.resolve(36019.0 + 5.0, d, 0.0, 19.1)
    assert utc == utc_of(d, 36024.0)


def test_date_verdicts_follow_the_receiver() -> None:
    """default date -> valid -> default again -> valid: each verdict as for a fresh clock."""
    c = UtcClock()
    wall = utc_of(D(2026, 5, 12), 600.0)
    seq = [(D(1980, 1, 6), None), (D(2026, 5, 12), utc_of(D(2026, 5, 12), 601.0)),
           (D(2026, 5, 12), utc_of(D(2026, 5, 12), 602.0)), (D(2000, 1, 1), None),
           (D(2026, 5, 12), utc_of(D(2026, 5, 12), 604.0))]
    kinds = []
    for k, (given, want) in enumerate(seq):
        utc, notes = c.resolve(600.0 + k, given, wall + k, 10.0 + k)
        assert utc == want, k
        kinds += [n[0] for n in notes]
    assert kinds == ["receiver_date_invalid", "receiver_date_invalid"]


def test_midnight_without_a_date_moves_to_the_next_day() -> None:
    c = UtcClock()
    d = D(2026, 12, 31)
    u1, _ = c.resolve(86399.9, d, 0.0, 0.0)
    u2, _ = c.resolve(0.0, None, 0.0, 0.1)  # 00:00:00.0 on 2027-01-01 (rollover, no date given)
    assert u1 == utc_of(d, 86399.9)
    assert u2 == utc_of(D(2027, 1, 1), 0.0)
    u3, _ = c.resolve(0.1, D(2027, 1, 1), 0.0, 0.2)
    assert u3 == utc_of(D(2027, 1, 1), 0.1)
