"""Receiver time corner cases: midnight rollover, a leap second written 23:59:60, GPS week-number
rollover dates, and receiver clocks that start in 1980 or 2080.

Expected instants come from the standard library's proleptic Gregorian calendar (independent of
livefix). Two-digit years follow pynmeagps' reading of the same RMC text (reference library).
"""

from __future__ import annotations

import datetime as dt

import pytest
from pynmeagps import NMEAReader
from relkit import line

from livefix.pipeline import Pipeline
from livefix.sources.base import Chunk

UTC = dt.UTC
# GPS time starts 1980-01-06 00:00 UTC and the legacy 10-bit week number wraps every 1024 weeks
# (IS-GPS-200, navigation message week number field; from memory).
GPS_EPOCH = dt.datetime(1980, 1, 6, tzinfo=UTC)


def posix(*a: int) -> float:
    return dt.datetime(*a, tzinfo=UTC).timestamp()


def feed(seq: list[tuple[str, str | None]], wall0: float = 1.7e9) -> tuple[Pipeline, list]:
    """One epoch per item: GGA at `hms`, plus RMC with `date` (ddmmyy) when given."""
    p = Pipeline(source="time")
    eps = []
    orig = p.analyzer.on_epoch

    def keep(ep):  # noqa: ANN001, ANN202 - the real analyzer still gets every epoch
        eps.append(ep)
        orig(ep)

    p.analyzer.on_epoch = keep
    for i, (hms, date) in enumerate(seq):
        data = line(f"GPGGA,{hms},4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,") + b"\r\n"
        if date is not None:
            data += line(f"GPRMC,{hms},A,4807.038,N,01131.000,E,0.1,84.4,{date},,,A") + b"\r\n"
        p.feed(Chunk(float(i), wall0 + i, data))
    p.finish()
    return p, eps


def kinds(p: Pipeline) -> list[str]:
    return [e["kind"] for e in p.snapshot().analysis["events"]]


def test_midnight_rollover_carries_the_date_forward() -> None:
    p, eps = feed([("235958.00", "311299"), ("235959.00", None), ("000000.00", None), ("000001.00", None)])
    assert [e.utc for e in eps] == [posix(1999, 12, 31, 23, 59, 58), posix(1999, 12, 31, 23, 59, 59),
                                    posix(2000, 1, 1), posix(2000, 1, 1, 0, 0, 1)]
    assert "time_rollback" not in kinds(p) and "time_jump" not in kinds(p)


def test_leap_second_2359_60_is_kept_not_fatal() -> None:
    # A positive leap second was inserted at the end of 2016-12-31 (IERS Bulletin C 52; from memory).
    rows = [("235959.00", "311216"), ("235960.00", "311216"), ("000000.00", "010117"), ("000001.00", "010117")]
    p, eps = feed(rows)
    # pynmeagps (reference) reads 23:59:60 as an empty time field; the epoch is still published
    ref = NMEAReader.parse(line("GPGGA,235960.00,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,"))
    assert ref.time == ""
    assert len(eps) == 4
    assert eps[1].utc is None and eps[1].lat == pytest.approx(48.1173) and eps[1].quality == 1
    assert eps[2].utc == posix(2017, 1, 1) and eps[3].utc == posix(2017, 1, 1, 0, 0, 1)
    c = p.counters()
    assert c.decoded == 8 and c.malformed == 0
    assert "time_rollback" not in kinds(p)


@pytest.mark.parametrize("last_day", [dt.date(1999, 8, 21), dt.date(2019, 4, 6)])
def test_gps_week_rollover_dates(last_day: dt.date) -> None:
    nxt = last_day + dt.timedelta(days=1)
    weeks = (dt.datetime(nxt.year, nxt.month, nxt.day, tzinfo=UTC) - GPS_EPOCH).days / 7
    assert weeks % 1024 == 0  # the rollover falls on the midnight between the two dates
    d1, d2 = last_day.strftime("%d%m%y"), nxt.strftime("%d%m%y")
    p, eps = feed([("235958.00", d1), ("235959.00", d1), ("000000.00", d2), ("000001.00", d2)])
    want = [posix(last_day.year, last_day.month, last_day.day, 23, 59, 58) + k for k in range(4)]
    assert [e.utc for e in eps] == want
    assert "time_rollback" not in kinds(p) and "time_jump" not in kinds(p)


def test_receiver_with_the_week_rollover_bug_is_reported_not_hidden() -> None:
    # a receiver that ignores the 2019 rollover reports a date 1024 weeks early (IS-GPS-200; from memory)
    good = dt.date(2019, 4, 7)
    bad = good - dt.timedelta(weeks=1024)
    assert bad == dt.date(1999, 8, 22)
    p, eps = feed([("120000.00", good.strftime("%d%m%y")), ("120001.00", bad.strftime("%d%m%y"))])
    # issue 13 item 7: a date 1024 weeks early is flagged and never used to place the epoch
    assert eps[1].utc is None
    ev = [e for e in p.snapshot().analysis["events"] if e["kind"] == "receiver_date_invalid"]
    assert len(ev) == 1 and ev[0]["date"] == "1999-08-22" and "1024 weeks" in ev[0]["reason"]


@pytest.mark.parametrize("ddmmyy", ["060180", "010180", "010180", "311279", "010179", "010100"])
def test_two_digit_years_read_as_the_reference_library_reads_them(ddmmyy: str) -> None:
    body = f"GPRMC,000000.00,A,4807.038,N,01131.000,E,0.1,84.4,{ddmmyy},,,A"
    ref = NMEAReader.parse(line(body)).date  # pynmeagps
    p, eps = feed([("000000.00", ddmmyy)])
    # these are receiver default dates (1979/1980 before or at the GPS epoch, 2000-01-01): issue 13
    # item 7 flags them and gives the epoch no UTC; the date read must still be the reference's
    assert eps[0].utc is None
    ev = [e for e in p.snapshot().analysis["events"] if e["kind"] == "receiver_date_invalid"]
    assert [e["date"] for e in ev] == [ref.isoformat()]


def test_receiver_clock_starting_in_1980_then_correct_is_a_jump_event() -> None:
    rows = [("000000.00", "060180"), ("000001.00", "060180"), ("083000.00", "120526"), ("083001.00", "120526")]
    p, eps = feed(rows)
    # issue 13 item 7: the 1980 default date never places an epoch; the first valid date starts the
    # clock afresh (no 46-year jump)
    assert eps[0].utc is None and eps[1].utc is None
    assert eps[2].utc == posix(2026, 5, 12, 8, 30)
    assert "receiver_date_invalid" in kinds(p) and "time_jump" not in kinds(p)
    assert p.snapshot().analysis["internal_errors"] == 0


def test_receiver_clock_in_2080_beyond_32_bit_time_then_back() -> None:
    """ZDA carries a four-digit year (NMEA 0183): a clock in 2080, then the true date."""
    p = Pipeline(source="time")
    eps: list = []
    orig = p.analyzer.on_epoch
    p.analyzer.on_epoch = lambda ep: (eps.append(ep), orig(ep))
    for i, (hms, d, m, y) in enumerate([("120000.00", 1, 1, 2080), ("120001.00", 1, 1, 2080),
                                        ("120002.00", 12, 5, 2026), ("120003.00", 12, 5, 2026),
                                        ("120004.00", 12, 5, 2026)]):
        data = line(f"GPGGA,{hms},4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,") + b"\r\n"
        data += line(f"GPZDA,{hms},{d:02d},{m:02d},{y},00,00") + b"\r\n"
        p.feed(Chunk(float(i), 1.7e9 + i, data))
    p.finish()
    assert eps[0].utc == posix(2080, 1, 1, 12) and eps[0].utc > 2**31  # beyond 32-bit time_t
    assert eps[1].utc == posix(2080, 1, 1, 12, 0, 1)
    # issue 13 item 5: the step back moves the clock once two following epochs run on from it
    assert eps[2].utc is None and eps[3].utc is None
    assert eps[4].utc == posix(2026, 5, 12, 12, 0, 4)
    assert "time_rollback" in kinds(p) and "date_change" in kinds(p) and "time_fault" not in kinds(p)


def test_time_repeating_and_running_backwards_without_a_date() -> None:
    rows = [("120000.00", "120526"), ("120001.00", None), ("120001.00", None), ("115950.00", None),
            ("120002.00", None)]
    p, eps = feed(rows)
    assert len(eps) + p.state.late >= 4  # a repeated time joins/closes an epoch; nothing raises
    # issue 13 item 5: 11:59:50 is 11 s back (beyond the 10-interval jump limit) and the old clock
    # runs on at 12:00:02: a time fault, not a new clock
    assert "time_fault" in kinds(p) and "time_rollback" not in kinds(p)
