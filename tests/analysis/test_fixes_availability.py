"""Outages, data gaps, availability on time and TTFF observation, through the whole pipeline.

Fixtures are hand-written NMEA (checksums computed by `_nmea`, NMEA 0183: XOR of the bytes between
'$' and '*') stamped one chunk per epoch, as a live source or livefix's plain-log stamper would.
Every expected figure is hand arithmetic on the fixture, written beside the check.
"""

from __future__ import annotations

import json
import threading
from pathlib import Path
from typing import Any

import pytest
from nmeakit import line as _nmea  # checksum from the standard's definition

from livefix.pipeline import Pipeline, run_items
from livefix.sources import open_source
from livefix.sources.base import Chunk, Link, LinkEvent, Marker

W0 = 1_780_000_000.0  # host UTC of the first chunk (invented)
CORPUS = Path(__file__).resolve().parents[3] / "shared" / "realdata" / "corpus"




def _hms(sec: int) -> str:
    return f"{sec // 3600:02d}{sec % 3600 // 60:02d}{sec % 60:02d}"


def fix_burst(sec: int, q: int = 1) -> bytes:
    """GGA + RMC of a fixed epoch at `sec` seconds of 2026-05-20 (invented site)."""
    return (_nmea(f"GPGGA,{_hms(sec)},4807.038,N,01131.000,E,{q},08,0.9,545.4,M,46.9,M,,")
            + _nmea(f"GPRMC,{_hms(sec)},A,4807.038,N,01131.000,E,0.0,0.0,200526,,,A"))


def nofix_burst(sec: int | None) -> bytes:
    """A receiver without a fix: quality 0 / status V; sec None gives the empty time fields that
    many receivers send before or between fixes."""
    t = "" if sec is None else _hms(sec)
    return _nmea(f"GPGGA,{t},,,,,0,00,,,,,,,") + _nmea(f"GPRMC,{t},V,,,,,,,,,,N")


def run(bursts: list[tuple[float, bytes]], extra: list[Any] = (), reset_at: float | None = None
        ) -> dict[str, Any]:
    """Feed (host second, bytes) chunks, plus LinkEvents/Markers placed by their stamps."""
    items: list[Any] = [LinkEvent(bursts[0][0], W0 + bursts[0][0], Link.STREAMING, "fixture")]
    items += [Chunk(m, W0 + m, data) for m, data in bursts]
    items += list(extra)
    items.sort(key=lambda it: (it.mono, 0 if isinstance(it, (LinkEvent, Marker)) else 1))
    p = Pipeline(source="fixture")
    for it in items:
        if reset_at is not None and it.mono >= reset_at:
            p.reset_analysis()
            reset_at = None
        p.feed(it)
    p.finish()
    a = p.snapshot().analysis
    assert a["internal_errors"] == 0, a["last_error"]
    json.dumps(a, allow_nan=False)
    return a


def test_log_that_starts_with_a_fix_has_no_ttff() -> None:
    a = run([(i, fix_burst(36000 + i)) for i in range(20)])
    f = a["fix"]
    # issue item 11: the receiver had its fix before we looked; TTFF is not observed, never 0
    assert f["ttff_s"] is None and f["ttff_dgnss_s"] is None and f["ttff_rtk_fixed_s"] is None
    assert f["ttff_observed"] is False and f["ttff_note"].startswith("not observed")
    assert f["starts"][0]["ttff_s"] is None and f["starts"][0]["observed"] is False
    # hand arithmetic: 20 fixed epochs, nothing else -> availability 1, also after the first fix
    assert f["availability"] == {"single": 1.0} and f["fix_share_after_first_fix"] == 1.0


def test_ttff_observed_when_the_receiver_is_seen_without_a_fix() -> None:
    bursts = [(i, nofix_burst(None if i < 5 else 36000 + i)) for i in range(12)]
    bursts += [(i, fix_burst(36000 + i, 1 if i < 20 else 4)) for i in range(12, 40)]
    f = run(bursts)["fix"]
    # fixture: first epoch at host second 0, first fix at second 12, RTK fixed at second 20
    assert f["ttff_s"] == 12.0 and f["ttff_rtk_fixed_s"] == 20.0 and f["ttff_observed"] is True
    # 12 no-fix epochs of 40 at 1 s each: 0.3 none; from the first fix on: 28 of 28 fixed
    assert f["availability"] == {"none": 0.3, "single": 0.2, "rtk_fixed": 0.5}
    assert f["fix_share_after_first_fix"] == 1.0 and f["rtk_fixed_share_after_first"] == 1.0


def test_rtk_time_observed_when_the_session_began_with_a_plain_fix() -> None:
    f = run([(i, fix_burst(36000 + i, 1 if i < 30 else 4)) for i in range(40)])["fix"]
    # the session saw the receiver without RTK fixed: time to RTK fixed 30 s (fixture), first fix not
    assert f["ttff_s"] is None and f["ttff_rtk_fixed_s"] == 30.0


def test_empty_time_no_fix_period_is_an_outage_with_real_start_and_end() -> None:
    bursts = [(i, fix_burst(36000 + i)) for i in range(10)]
    bursts += [(i, nofix_burst(None)) for i in range(10, 40)]  # 30 s without fix, empty times
    bursts += [(i, fix_burst(36000 + i)) for i in range(40, 60)]
    a = run(bursts)
    f = a["fix"]
    # fixture: last fix at second 9, no fix at seconds 10..39, fix again at 40 -> one 30 s outage
    # starting at second 10 (receiver UTC 10:00:10 of 2026-05-20); no data gap, no stall
    assert f["outages"] == [{"start": "2026-05-20T10:00:10.000Z", "duration_s": 30.0}]
    assert f["fix_losses"] == 1 and f["reacquisition_s"] == [30.0] and f["outage_now"] is None
    assert a["stream"]["stall_count"] == 0 and a["stream"]["data_gaps"] == {"count": 0, "total_s": 0.0}
    # 30 of 60 s without fix
    assert f["availability"] == {"none": 0.5, "single": 0.5}


def test_session_ending_without_fix_has_an_ongoing_outage_never_negative() -> None:
    bursts = [(i, fix_burst(36000 + i)) for i in range(10)] + [(i, nofix_burst(None)) for i in range(10, 25)]
    f = run(bursts)["fix"]
    # fixture: 15 no-fix epochs at 1 s (seconds 10..24) -> 15 s, ongoing at the end of the data
    assert f["outage_now"] == {"start": "2026-05-20T10:00:10.000Z", "duration_s": 15.0}
    assert f["outages"] == [{"start": "2026-05-20T10:00:10.000Z", "duration_s": 15.0, "ongoing": True}]
    assert f["longest_outage_s"] == 15.0 and f["outages_total"] == 1
    # no-fix lines stamped at the very time of the last fix (no host time of their own): 0 s, not -1 s
    bursts = [(i, fix_burst(36000 + i)) for i in range(10)] + [(9, nofix_burst(None))]
    f = run(bursts)["fix"]
    assert f["outage_now"]["duration_s"] >= 0.0


def test_hole_in_the_data_is_one_data_gap_not_an_outage() -> None:
    bursts = [(i, fix_burst(36000 + i)) for i in range(20)]
    bursts += [(i, fix_burst(36000 + i)) for i in range(50, 70)]  # no bytes at all for seconds 20..49
    stalled = LinkEvent(21.0, W0 + 21.0, Link.STALLED, "no bytes")  # as a live source says it
    a = run(bursts, [stalled, LinkEvent(50.0, W0 + 50.0, Link.STREAMING, "again")])
    f, st = a["fix"], a["stream"]
    # fixture: chunks at seconds 19 and 50 -> one data gap of 31 s between them (reported once)
    assert st["data_gaps"] == {"count": 1, "total_s": 31.0} and st["stall_count"] == 1
    assert f["outages"] == [] and f["fix_losses"] == 0 and f["outage_now"] is None
    assert not [e for e in a["events"] if e["kind"] in ("fix_lost", "fix_regained")]
    # the receiver's state in the hole is unknown: 40 fixed seconds of 40 known -> availability 1;
    # the excluded time is epoch 19's interval end (second 20) to the epoch at second 50 = 30 s
    assert f["availability"] == {"single": 1.0}
    assert f["availability_basis"]["data_gap_s"] == 30.0 and f["availability_basis"]["known_s"] == 40.0


def test_hole_without_link_event_is_found_from_the_chunk_gap() -> None:
    bursts = [(i, fix_burst(36000 + i)) for i in range(10)] + [(i, fix_burst(36000 + i)) for i in range(30, 40)]
    a = run(bursts)
    # fixture: chunks at 9 and 30 -> 21 s without bytes (above the 2 s stall limit)
    assert a["stream"]["data_gaps"] == {"count": 1, "total_s": 21.0}
    assert a["fix"]["outages"] == [] and a["fix"]["availability"] == {"single": 1.0}


def test_data_gap_inside_an_outage_cuts_it() -> None:
    bursts = [(i, fix_burst(36000 + i)) for i in range(10)]
    bursts += [(i, nofix_burst(36000 + i)) for i in range(10, 20)]
    bursts += [(i, nofix_burst(36000 + i)) for i in range(80, 90)]  # hole: seconds 20..79
    bursts += [(i, fix_burst(36000 + i)) for i in range(90, 100)]
    f = run(bursts)["fix"]
    # fixture: no fix at 10..19 (10 s), unknown 20..79, no fix at 80..89 (10 s), fix at 90
    assert [o["duration_s"] for o in f["outages"]] == [10.0, 10.0]
    assert f["outages"][0]["start"] == "2026-05-20T10:00:10.000Z" and "end" in f["outages"][0]
    assert f["outages"][1]["start"] == "2026-05-20T10:01:20.000Z" and f["outages"][1]["after_data_gap"]
    assert f["fix_losses"] == 1  # the fix was lost once
    # 20 no-fix seconds, 20 fixed seconds are known; 60 s of data gap excluded
    assert f["availability"] == {"none": 0.5, "single": 0.5}
    assert f["availability_basis"]["data_gap_s"] == 60.0


def test_epochs_missing_while_bytes_flow_are_an_outage() -> None:
    # the receiver keeps talking (GSV only) but gives no position for seconds 20..29
    gsv = _nmea("GPGSV,1,1,01,05,40,083,46")
    bursts = [(i, fix_burst(36000 + i)) for i in range(20)] + [(i + 0.5, gsv) for i in range(19, 30)]
    bursts += [(i, fix_burst(36000 + i)) for i in range(30, 40)]
    a = run(bursts)
    f = a["fix"]
    # no hole in the bytes (a chunk every second): no data gap. The user got no position for
    # seconds 20..29: an outage of 10 s from one interval after the last fix (second 19)
    assert a["stream"]["data_gaps"]["count"] == 0
    assert f["outages"] == [{"start": "2026-05-20T10:00:20.000Z", "duration_s": 10.0}] and f["fix_losses"] == 1
    # 30 fixed seconds (0..19, 30..39) and 10 without: 0.75 / 0.25
    assert f["availability"] == {"none": 0.25, "single": 0.75}


def test_commanded_restart_is_a_restart_not_an_outage() -> None:
    bursts = [(i, fix_burst(36000 + i)) for i in range(30)]
    bursts += [(i, nofix_burst(36000 + i)) for i in range(30, 42)]
    bursts += [(i, fix_burst(36000 + i)) for i in range(42, 60)]
    marker = Marker(29.5, W0 + 29.5, "receiver restart: hot (TTFF cycle 1)")  # livefix.state.model.RESTART_NOTE
    f = run(bursts, [marker])["fix"]
    # fixture: first epoch after the command at second 30, fix again at 42 -> TTFF 12 s
    assert f["ttff_from"] == "restart" and f["ttff_s"] == 12.0 and f["starts"][-1]["commanded"] is True
    assert f["restarts"] == {"commanded": 1, "receiver": 0}
    assert f["outages"] == [] and f["fix_losses"] == 0
    # the 12 s of acquisition are TTFF time, outside availability: 48 fixed seconds of 48
    assert f["availability"] == {"single": 1.0} and f["availability_basis"]["restart_s"] == 12.0


def test_receiver_initiated_restart_is_an_outage() -> None:
    bursts = [(i, fix_burst(36000 + i)) for i in range(30)]
    # the receiver restarts by itself: no fix, its clock back at the GPS time origin 1980-01-06
    # (IS-GPS-200: GPS time starts 1980-01-06; receivers report it before they know the time)
    bursts += [(i, _nmea(f"GPGGA,{_hms(100 + i)},,,,,0,00,,,,,,,") + _nmea(f"GPRMC,{_hms(100 + i)},V,,,,,,,060180,,,N"))
               for i in range(30, 40)]
    bursts += [(i, fix_burst(36000 + i)) for i in range(40, 50)]
    f = run(bursts)["fix"]
    # no marker: livefix did not command it. Fixture: no fix at seconds 30..39 -> 10 s outage
    assert f["restarts"] == {"commanded": 0, "receiver": 1} and f["starts"][-1]["commanded"] is False
    assert [o["duration_s"] for o in f["outages"]] == [10.0] and f["fix_losses"] == 1
    assert f["starts"][-1]["ttff_s"] == 10.0  # fix at 40, restart seen at 30
    assert f["availability"] == {"none": 0.2, "single": 0.8}


def test_statistics_reset_makes_ttff_not_observed() -> None:
    bursts = [(i, nofix_burst(36000 + i)) for i in range(10)] + [(i, fix_burst(36000 + i)) for i in range(10, 40)]
    f = run(bursts, reset_at=20)["fix"]
    assert f["ttff_from"] == "reset" and f["ttff_s"] is None and f["ttff_note"] == "not observed: statistics were reset"


# -- public logs from real receivers (see shared/realdata/SOURCES.md) --------------------------------
def _report(name: str) -> dict[str, Any]:
    if not (CORPUS / name).exists():
        pytest.skip(f"public corpus not present at {CORPUS}")
    src = open_source(str(CORPUS / name))
    p = run_items(src.items(threading.Event()), source=src.name)
    a = p.snapshot().analysis
    assert a["internal_errors"] == 0, a["last_error"]
    return a


def test_corpus_log_with_one_hole_has_one_data_gap() -> None:
    a = _report("ratatosk_nmea_log.txt")  # 116 s with no line, then the receiver goes on
    assert a["stream"]["data_gaps"]["count"] == 1 and 115 <= a["stream"]["data_gaps"]["total_s"] <= 117
    assert a["fix"]["outages_total"] == 0 and a["fix"]["availability"] == {"single": 1.0}
    assert a["fix"]["ttff_s"] is None  # the log starts with a fix


def test_corpus_log_starting_with_a_fix_has_no_ttff() -> None:
    f = _report("perlnmea_log-2013-02-16-23-16.nmea")["fix"]
    assert f["ttff_s"] is None and f["ttff_note"].startswith("not observed")


def test_corpus_log_with_appended_captures_ends_in_an_outage_not_a_gap() -> None:
    a = _report("ipygps_gps_log2.txt")  # captures appended (holes of 28/48/207 s), ends ~92 s without fix
    f = a["fix"]
    assert f["outage_now"] is not None and 90 <= f["outage_now"]["duration_s"] <= 94
    assert a["stream"]["data_gaps"]["count"] >= 3
    assert all(o["duration_s"] < 200 for o in f["outages"])  # the 207 s hole is not an outage


def test_corpus_log_with_empty_time_no_fix_bursts_has_outages_not_stalls() -> None:
    a = _report("aerorust_nmea1.log")  # 1 Hz; 71 then 243 no-fix bursts with empty time fields
    f = a["fix"]
    assert a["stream"]["data_gaps"]["count"] == 0  # the receiver kept talking: no hole in the data
    # 71 empty-time bursts between the fix at 11:01:30 and the next at 11:02:42: 71 s from the
    # first no-fix second (72 s from fix to fix); then 243 bursts to the end of the log
    assert 71.0 <= f["outages"][0]["duration_s"] <= 72.0
    assert f["outage_now"] is not None and 242.0 <= f["outage_now"]["duration_s"] <= 244.0
    assert f["ttff_s"] is None  # the log starts with a fix
    # hand count of the file: 314 no-fix and 993 fixed bursts at 1 s -> 314 / 1307
    assert f["availability"]["none"] == pytest.approx(314 / 1307, abs=1e-3)


def test_corpus_receiver_initiated_restart_is_not_a_commanded_one() -> None:
    f = _report("nmeadataset_5.GPS-20170525T225915.txt")["fix"]  # the receiver restarts itself mid-log
    assert f["restarts"]["commanded"] == 0 and f["restarts"]["receiver"] >= 1
    assert f["ttff_from"] == "restart" and f["ttff_s"] is not None
