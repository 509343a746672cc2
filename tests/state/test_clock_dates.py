"""Receiver dates and the UTC clock (issue 13 items 5 and 7): one two-digit-year pivot, default and
rolled-over dates, jumps confirmed by the host clock or by the following epochs, "date unknown"."""

from __future__ import annotations

import datetime as dt

from pynmeagps.nmeahelpers import date2utc

from livefix.dates import ROLLOVER_DAYS, date_problem
from livefix.decode.fast import parse_date
from livefix.record.linetime import line_time
from livefix.state.clock import UtcClock
from livefix.timefmt import GPS_EPOCH, iso, year_from_yy

D = dt.date


def utc_of(d: dt.date, tod: float) -> float:
    return dt.datetime(d.year, d.month, d.day, tzinfo=dt.UTC).timestamp() + tod


def test_one_two_digit_year_pivot_everywhere() -> None:
    # reference decoder pynmeagps date2utc (POSIX strptime %y): 68 -> 2068, 69 -> 1969
    for text in ("010168", "010169", "311299", "010100"):
        want = date2utc(text)
        assert parse_date(text) == want  # the fast decoder
        assert D(year_from_yy(int(text[4:])), int(text[2:4]), int(text[:2])) == want
        body = f"GPRMC,120000.00,A,4807.038,N,01131.000,E,0.0,0.0,{text},,"
        cs = 0
        for ch in body.encode():
            cs ^= ch
        t = line_time(f"${body}*{cs:02X}\r\n".encode())  # the plain-log reader
        assert t is not None and t.date == want


def test_default_and_rolled_over_dates_are_not_valid() -> None:
    assert date_problem(D(1980, 1, 6)) is not None  # GPS epoch (IS-GPS-200): a receiver default
    assert date_problem(D(1980, 1, 10)) is not None
    assert date_problem(D(2000, 1, 1)) is not None  # common practice default
    assert date_problem(D(2000, 1, 2), prev_bad=D(2000, 1, 1)) is not None  # default run past midnight
    assert date_problem(D(2011, 5, 28)) is None
    # IS-GPS-200: the 10-bit week number rolls over every 1024 weeks = 7168 days (hand arithmetic)
    assert ROLLOVER_DAYS == 7168
    # 2019-04-07 was a rollover day (docs/sources.md#gps-time); 7168 days earlier is 1999-08-22
    assert D(2019, 4, 7) - dt.timedelta(days=7168) == D(1999, 8, 22)
    assert "1024 weeks" in (date_problem(D(1999, 8, 22), ref=D(2019, 4, 7)) or "")
    assert date_problem(D(2019, 4, 6), ref=D(2019, 4, 7)) is None


def test_default_date_gives_no_utc_and_one_event() -> None:
    c = UtcClock()
    wall = utc_of(D(2017, 2, 16), 0.0)
    notes_all = []
    for k in range(3):
        utc, notes = c.resolve(5.0 + k, D(1980, 1, 6), wall + k, 100.0 + k)
        assert utc is None
        notes_all += notes
    assert [n[0] for n in notes_all] == ["receiver_date_invalid"]
    utc, notes = c.resolve(79542.0, D(2017, 2, 16), wall + 3, 103.0)
    assert utc == utc_of(D(2017, 2, 16), 79542.0) and not notes  # a fresh start, not a jump


def test_hole_vouched_by_the_host_clock_is_no_jump() -> None:
    c = UtcClock()
    d = D(2025, 6, 19)
    for k in range(3):
        c.resolve(35038.0 + k, d, 0.0, 10.0 + k)
    utc, notes = c.resolve(35156.0, d, 0.0, 12.0 + 116)  # 116 s later by both clocks
    assert utc == utc_of(d, 35156.0) and notes == []


def test_unconfirmed_jump_is_a_time_fault_and_leaves_the_date_alone() -> None:
    c = UtcClock()
    d = D(2011, 5, 28)
    c.resolve(34070.0, d, 0.0, 0.0)
    c.resolve(34071.0, d, 0.0, 1.0)
    utc, notes = c.resolve(63098.0, D(2018, 3, 17), 0.0, 1.0)  # host: no time passed
    assert utc is None and notes == []  # held, no date_change yet
    utc, notes = c.resolve(34072.0, None, 0.0, 2.0)  # the old clock runs on
    assert utc == utc_of(d, 34072.0)
    assert [n[0] for n in notes] == ["time_fault"] and c.time_faults == 1


def test_undated_times_are_shown_as_time_of_day() -> None:
    assert iso(36000.5) == "T10:00:00.500Z"  # ISO 8601 time of day with designator T
    assert iso(GPS_EPOCH) == "1980-01-06T00:00:00.000Z"  # IS-GPS-200: start of GPS time
    c = UtcClock()
    utc, _ = c.resolve(36000.0, None, 36000.0, 0.0)  # no receiver date, host without a date
    assert utc == 36000.0 and c.date_known is False
