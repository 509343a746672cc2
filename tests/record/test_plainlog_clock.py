"""Plain-log clocks (issue 13 items 5, 6, 7, 8): checksums, time faults, untimed bursts, holes, dates.

Fixtures are hand-written NMEA built by `nmea()` (checksum: XOR of the bytes between '$' and '*',
NMEA 0183, docs/sources.md#checksum); every expected figure is hand arithmetic on the fixture.
"""

from __future__ import annotations

import calendar
import io
from pathlib import Path

import pytest

from livefix.pipeline import run_items
from livefix.record.plainlog import PlainStamper, iter_plain
from livefix.sources.base import Chunk, Link, LinkEvent

CORPUS = Path(__file__).resolve().parents[2] / ".." / "shared" / "realdata" / "corpus"


def nmea(body: str, bad: bool = False) -> bytes:
    cs = 0
    for ch in body.encode():
        cs ^= ch
    return f"${body}*{cs ^ (0x55 if bad else 0):02X}\r\n".encode()


def gga(t: str, q: int = 1, bad: bool = False) -> bytes:
    return nmea(f"GPGGA,{t},4807.038,N,01131.000,E,{q},08,0.9,545.4,M,46.9,M,,", bad)


def rmc(t: str, d: str, status: str = "A") -> bytes:
    return nmea(f"GPRMC,{t},{status},4807.038,N,01131.000,E,0.0,0.0,{d},,")


def burst(t: str, d: str = "150626") -> bytes:
    return gga(t) + nmea("GPGSA,A,3,04,05,09,12,24,,,,,,,,2.5,1.3,2.1") + rmc(t, d)


def untimed() -> bytes:
    return nmea("GPRMC,,V,,,,,,,,,,N") + nmea("GPGGA,,,,,,0,,,,,,,,") + nmea("GPGSV,1,1,00")


def stamp(data: bytes) -> tuple[list, PlainStamper]:
    st = PlainStamper()
    items = []
    for line in io.BytesIO(data):
        items += st.feed(line)
    items += st.finish()
    chunks = [it for it in items if type(it) is Chunk]
    assert b"".join(c.data for c in chunks) == data  # every byte kept, in order
    return items, st


def span(items: list) -> float:
    monos = [it.mono for it in items if type(it) is Chunk]
    return max(monos) - min(monos)


def states(items: list) -> list[tuple[str, float]]:
    return [(it.state, it.mono) for it in items if type(it) is LinkEvent]


def report(data: bytes) -> dict:
    p = run_items(iter_plain(io.BytesIO(data)), source="fixture")
    a = p.snapshot().analysis
    assert a["internal_errors"] == 0
    return a


def test_bad_checksum_time_never_moves_the_clock() -> None:
    # 2 epochs 1 s apart, then a GGA three hours later whose checksum is wrong
    data = burst("101500.00") + burst("101501.00") + gga("131500.00", bad=True)
    items, st = stamp(data)
    assert span(items) == 1.0  # hand arithmetic: 10:15:01 - 10:15:00
    assert st.time_faults == 0 and states(items) == [(Link.STREAMING, 0.0)]


def test_unconfirmed_leap_is_a_time_fault_not_a_new_clock() -> None:
    # a valid sentence eight hours (and years) away, then the old clock runs on
    data = (burst("092750.00", "280511") + burst("092751.00", "280511")
            + rmc("173138.00", "170318", "V") + burst("092752.00", "280511"))
    items, st = stamp(data)
    assert span(items) == 2.0 and st.time_faults == 1  # 09:27:52 - 09:27:50
    a = report(data)
    assert a["stream"]["duration_s"] == 2.0 and a["stream"]["time_faults"] == 1
    assert a["stream"]["time_jumps"] == 0
    assert [e["kind"] for e in a["events"]].count("time_fault") == 1


def test_leap_at_the_end_of_the_log_is_a_time_fault() -> None:
    data = burst("092750.00", "280511") + burst("092751.00", "280511") + rmc("173138.00", "170318", "V")
    items, st = stamp(data)
    assert span(items) == 1.0 and st.time_faults == 1
    assert report(data)["stream"]["time_faults"] == 1


def test_confirmed_hole_is_one_data_gap() -> None:
    # 3 epochs, no line for 116 s, then the receiver goes on (dated both sides: trusted times)
    data = b"".join(burst(f"0943{s:02d}.00") for s in (40, 41, 42))
    data += b"".join(burst(f"0945{s:02d}.00") for s in (38, 39, 40))
    items, st = stamp(data)
    assert span(items) == 120.0  # 09:45:40 - 09:43:40
    # hand arithmetic: the last bytes at mono 2, the next at 118: STALLED at 2 + 2 (STALL_S)
    assert states(items) == [(Link.STREAMING, 0.0), (Link.STALLED, 4.0), (Link.STREAMING, 118.0)]
    stalled = [it for it in items if type(it) is LinkEvent and it.state == Link.STALLED]
    assert stalled[0].detail == "no data for 116.0 s in the log"
    a = report(data)
    assert a["stream"]["stall_count"] == 1 and a["stream"]["time_jumps"] == 0


def test_untimed_bursts_are_paced_at_the_nominal_interval() -> None:
    # 240 bursts with empty time fields, then 5 timed epochs at 1 Hz
    data = untimed() * 240 + b"".join(burst(f"1200{s:02d}.00") for s in range(5))
    items, st = stamp(data)
    assert span(items) == 244.0  # 240 bursts 1 s apart (0..239), first timed at 240, last at 244
    assert st.untimed_epochs == 239 and states(items) == [(Link.STREAMING, 0.0)]
    assert report(data)["stream"]["duration_s"] == 244.0


def test_untimed_bursts_inside_a_log_are_not_a_stall() -> None:
    # timed 11:01:30, 71 untimed bursts, timed 11:02:42 (72 s later): no silence at all
    data = burst("110129.00") + burst("110130.00") + untimed() * 71 + burst("110242.00") + burst("110243.00")
    items, st = stamp(data)
    assert span(items) == 74.0  # hand arithmetic: 11:02:43 - 11:01:29
    assert states(items) == [(Link.STREAMING, 0.0)]
    a = report(data)
    assert a["stream"]["stall_count"] == 0 and a["stream"]["duration_s"] == 74.0


def test_sentence_after_binary_bytes_and_host_prefix_keeps_its_time() -> None:
    data = (b"\xd3\x00\x13\x3e\xd0\x00" + gga("101500.00") + b"2017-05-25T22:50:04 -->> " + gga("101501.00")
            + b"\xb5\x62\x01\x07" + gga("101502.00"))
    items, _ = stamp(data)
    assert span(items) == 2.0  # 10:15:02 - 10:15:00


def test_undated_lines_take_the_first_valid_date() -> None:
    # GGA first, the RMC with the date a second later: 2016-07-29 (ddmmyy, NMEA 0183)
    data = gga("072622.00") + gga("072623.00") + burst("072624.00", "290716")
    items, _ = stamp(data)
    chunks = [it for it in items if type(it) is Chunk]
    assert chunks[0].wall == calendar.timegm((2016, 7, 29, 7, 26, 22))  # calendar.timegm
    a = report(data)
    assert a["stream"]["time_jumps"] == 0 and a["stream"]["date_known"] is True
    assert a["fix"]["starts"][0]["start"] == "2016-07-29T07:26:22.000Z"


def test_default_dates_never_place_the_session_and_a_clock_set_is_no_hole() -> None:
    # cold start: the receiver counts from 1980-01-06 00:00:05 (GPS epoch, IS-GPS-200), then sets
    # its clock to 22:05:40 on 1980-01-10 and learns the date 2017-02-16 two epochs later
    data = b"".join(burst(f"0000{s:02d}.00", "060180") for s in (5, 6, 7))
    data += burst("220540.00", "100180") + burst("220541.00", "100180") + burst("220542.00", "160217")
    data += burst("220543.00", "160217")
    items, st = stamp(data)
    assert span(items) == 6.0  # 7 bursts at 1 Hz: the clock set costs one interval, no hole
    assert states(items) == [(Link.STREAMING, 0.0)] and st.time_faults == 0
    chunks = [it for it in items if type(it) is Chunk]
    # placed back from the first valid date: 22:05:43 on 2017-02-16 at mono 6
    assert chunks[0].wall == calendar.timegm((2017, 2, 16, 22, 5, 37))
    a = report(data)
    kinds = [e["kind"] for e in a["events"]]
    assert kinds.count("receiver_date_invalid") == 1 and "time_jump" not in kinds
    assert a["stream"]["duration_s"] == 6.0


def test_log_without_any_date_says_date_unknown() -> None:
    data = gga("101500.00") + gga("101501.00")
    a = report(data)
    assert a["stream"]["date_known"] is False
    # ISO 8601 time of day only, no made-up 2000-01-01
    assert a["fix"]["starts"][0]["start"] == "T10:15:00.000Z"


@pytest.mark.skipif(not CORPUS.is_dir(), reason="public receiver logs not present (../shared/realdata)")
@pytest.mark.parametrize(("name", "lo", "hi"), [
    ("nematode_nmea_log.txt", 0.9, 1.1),  # 1 s of good epochs (see shared/realdata/SOURCES.md)
    ("aerorust_nmea1.log", 1300, 1310),  # 1307 bursts at 1 Hz, 314 of them untimed
    ("zxcwhale_nmea.txt", 30, 40),
])
def test_corpus_durations(name: str, lo: float, hi: float) -> None:
    with open(CORPUS / name, "rb") as fh:
        p = run_items(iter_plain(fh), source=name)
    a = p.snapshot().analysis
    assert a["internal_errors"] == 0
    assert lo <= a["stream"]["duration_s"] <= hi
    assert a["stream"]["stall_count"] == 0


def test_restart_to_a_default_clock_places_the_silence_before_it() -> None:
    # valid epochs 10:00:00-02 on 2017-05-25, then (after a silence) the receiver restarts on its
    # default clock 1980-01-05 23:59:42-44, then knows the time again at 10:01:00-02 on 2017-05-25
    data = b"".join(burst(f"1000{s:02d}.00", "250517") for s in (0, 1, 2))
    data += b"".join(burst(f"2359{s:02d}.00", "050180") for s in (42, 43, 44))
    data += b"".join(burst(f"1001{s:02d}.00", "250517") for s in (0, 1, 2))
    items, st = stamp(data)
    # hand arithmetic: 10:00:02 -> 10:01:00 is 58 s of real time; the 3 restart epochs and the
    # first valid one run 1 s apart, so the restart began at 60 - 3 = 57 s: no data from 2 to 57
    assert span(items) == 62.0 and st.time_faults == 0
    assert states(items) == [(Link.STREAMING, 0.0), (Link.STALLED, 4.0), (Link.STREAMING, 57.0)]
    stalled = [it for it in items if type(it) is LinkEvent and it.state == Link.STALLED]
    assert stalled[0].detail == "no data for 55.0 s in the log"
    chunks = [it for it in items if type(it) is Chunk]
    assert chunks[-1].wall == calendar.timegm((2017, 5, 25, 10, 1, 2))  # calendar.timegm


def test_untimed_bursts_before_the_first_time_take_the_learned_rate() -> None:
    # a 10 Hz receiver: 50 bursts without time (5 s of no fix), then timed epochs 0.1 s apart
    timed = b"".join(gga(f"120000.{k}0") + rmc(f"120000.{k}0", "150626") for k in range(10))
    items, st = stamp(untimed() * 50 + timed)
    # hand arithmetic: 50 bursts at 0.1 s (0.0-4.9), first timed at 5.0, last (12:00:00.9) at 5.9
    assert span(items) == pytest.approx(5.9, abs=1e-6)
    assert states(items) == [(Link.STREAMING, 0.0)]
