"""StateModel epochs from decoded sentences. Fields come from pynmeagps (the reference decoder), so
the state model is checked against the attribute names and values it really produces."""

from __future__ import annotations

import datetime as dt

from hypothesis import given, settings
from hypothesis import strategies as st
from pynmeagps import NMEAReader, calc_checksum

from livefix.decode import Decoded
from livefix.sources.base import Link, LinkEvent, Marker
from livefix.state import StateModel

# Public example sentences (docs/sources.md#example-sentences).
GGA = b"$GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,*47"
RMC = b"$GPRMC,123519,A,4807.038,N,01131.000,E,022.4,084.4,230394,003.1,W*6A"
GSA = b"$GPGSA,A,3,04,05,,09,12,,,24,,,,,2.5,1.3,2.1*39"
GSV = b"$GPGSV,2,1,08,01,40,083,46,02,17,308,41,12,07,344,39,14,22,228,45*75"


def line(body: str) -> bytes:
    """An invented sentence with its checksum computed by pynmeagps."""
    return f"${body}*{calc_checksum(body)}".encode()


def dec(raw: bytes) -> Decoded:
    m = NMEAReader.parse(raw)
    fields = {k: v for k, v in vars(m).items() if not k.startswith("_")}
    return Decoded(m.talker, m.msgID, fields)


def feed(sm: StateModel, lines: list[bytes], mono: float = 100.0, wall: float = 1.7e9) -> list:
    out = []
    for raw in lines:
        out += sm.on_sentence(dec(raw), mono, wall)
    return out


def gga(t: str, q: int = 1) -> bytes:
    return line(f"GPGGA,{t},4807.038,N,01131.000,E,{q},08,0.9,545.4,M,46.9,M,,")


def test_public_example_epoch() -> None:
    sm = StateModel()
    gsv2 = line("GPGSV,2,2,08,15,55,120,44,17,30,200,,22,10,045,,24,70,300,48")  # invented 2nd part
    assert feed(sm, [GGA, RMC, GSA, GSV, gsv2]) == []  # one time of fix: still open
    [ep] = sm.finish()
    # Values as the public page explains them: 48 deg 07.038' N, 11 deg 31.000' E, fix quality 1,
    # 8 satellites, HDOP 0.9, 545.4 m above mean sea level, geoid 46.9 m; RMC 22.4 kn, 23 March 1994.
    assert abs(ep.lat - (48 + 7.038 / 60)) < 1e-9 and abs(ep.lon - (11 + 31.0 / 60)) < 1e-9
    assert (ep.quality, ep.num_sv, ep.hdop, ep.alt_msl, ep.sep) == (1, 8, 0.9, 545.4, 46.9)
    assert abs(ep.h - (545.4 + 46.9)) < 1e-9
    assert abs(ep.speed_mps - 22.4 * 1852 / 3600) < 1e-9  # 1 knot = 1852 m/h (SI brochure)
    assert ep.course == 84.4
    assert ep.utc == dt.datetime(1994, 3, 23, 12, 35, 19, tzinfo=dt.UTC).timestamp()
    # GSA: 3D fix, PRNs 04 05 09 12 24 used, PDOP 2.5 HDOP 1.3 VDOP 2.1 (same page)
    assert (ep.fix_dim, ep.pdop, ep.vdop) == (3, 2.5, 2.1)
    assert ep.used_prns == (("G", 4), ("G", 5), ("G", 9), ("G", 12), ("G", 24))
    assert ep.sentences == ("GGA", "RMC", "GSA", "GSV", "GSV")
    assert len(ep.sats) == 8  # GSV field 3: 8 satellites in view
    by = {s.prn: s for s in ep.sats}
    assert (by[1].elev, by[1].azim, by[1].cn0) == (40, 83, 46)  # first block of the public GSV
    assert by[24].used and not by[1].used
    assert by[17].cn0 is None  # in view, not tracked
    assert sum(s.cn0 is not None for s in ep.sats) == 6


def test_new_time_closes_epoch_untimed_join() -> None:
    sm = StateModel()
    assert feed(sm, [gga("120000.00"), GSA]) == []
    [ep1] = feed(sm, [gga("120001.00")])
    assert ep1.sentences == ("GGA", "GSA") and ep1.pdop == 2.5
    [ep2] = sm.finish()
    assert ep2.utc - ep1.utc == 1.0 and ep2.pdop is None


def test_untimed_lines_first_adopt_the_time() -> None:
    sm = StateModel()
    feed(sm, [GSA, gga("120000")])
    [ep] = sm.finish()
    assert ep.sentences == ("GSA", "GGA") and ep.utc is not None


def test_quality_from_mode_letters_without_gga() -> None:
    # RMC/GNS mode letters -> GGA quality (NMEA 0183 via docs/sources.md#mode-letters; F/R from memory)
    for mode, q in (("A", 1), ("D", 2), ("R", 4), ("F", 5), ("E", 6), ("N", 0)):
        sm = StateModel()
        feed(sm, [line(f"GNRMC,101010.00,A,4807.038,N,01131.000,E,0.0,,230394,,,{mode},V")])
        [ep] = sm.finish()
        assert ep.quality == q, mode
    sm = StateModel()
    feed(sm, [line("GNGNS,101010.00,4807.038,N,01131.000,E,RN,12,0.7,500.0,40.0,1.5,0001,V")])
    [ep] = sm.finish()
    assert (ep.quality, ep.num_sv, ep.h, ep.diff_age) == (4, 12, 540.0, 1.5)


def test_gst_sigmas_and_vtg_speed() -> None:
    sm = StateModel()
    feed(sm, [line("GPGST,101010.00,1.5,2.0,1.0,30.0,0.8,0.9,1.7"),
              line("GPVTG,084.4,T,,M,022.4,N,041.5,K,A")])
    [ep] = sm.finish()
    assert (ep.sigma_lat, ep.sigma_lon, ep.sigma_alt, ep.sigma_rms) == (0.8, 0.9, 1.7, 1.5)
    assert abs(ep.speed_mps - 41.5 / 3.6) < 1e-9 and ep.course == 84.4


def test_midnight_rollover_without_date() -> None:
    sm = StateModel()
    eps = feed(sm, [line("GPRMC,235959.00,A,4807.038,N,01131.000,E,0.0,0.0,311226,,"), gga("235959.00"),
                    gga("000000.00"), gga("000001.00")]) + sm.finish()
    assert len(eps) == 3
    # reference: datetime arithmetic (Python stdlib) - 2026-12-31 23:59:59 + 1 s = 2027-01-01 00:00:00
    t0 = dt.datetime(2026, 12, 31, 23, 59, 59, tzinfo=dt.UTC)
    assert [e.utc for e in eps] == [(t0 + dt.timedelta(seconds=k)).timestamp() for k in range(3)]
    assert not [e for e in sm.drain_events() if e.kind in ("time_jump", "time_rollback")]


def test_jump_and_rollback_are_events_and_epochs_still_emitted() -> None:
    sm = StateModel()
    # a jump moves the clock once two following epochs run on from it (issue 13 item 5; the rule
    # is livefix.dates.CONFIRM_EPOCHS): +38 s then -12 s, each confirmed
    times = ["120000", "120001", "120002", "120040", "120041", "120042", "120030", "120031", "120032"]
    eps = feed(sm, [gga(t) for t in times]) + sm.finish()
    assert len(eps) == len(times)
    kinds = [e.kind for e in sm.drain_events()]
    assert kinds == ["time_jump", "time_rollback"]


def test_late_sentence_of_closed_epoch_is_counted_not_reopened() -> None:
    sm = StateModel()
    gst = line("GPGST,120000.00,1.5,2.0,1.0,30.0,0.8,0.9,1.7")
    eps = feed(sm, [gga("120000.00"), gga("120001.00"), gst, gga("120002.00")]) + sm.finish()
    assert len(eps) == 3 and sm.late == 1
    assert not [e for e in sm.drain_events() if e.kind == "time_rollback"]


def test_leap_second_does_not_crash() -> None:
    # 23:59:60 is a valid UTC label (ITU-R TF.460); pynmeagps turns it into an empty time field
    sm = StateModel()
    eps = feed(sm, [gga("235959"), gga("235960"), gga("000000")]) + sm.finish()
    assert len(eps) == 3 and eps[1].lat is not None


def test_receiver_without_time_repeats_close_epochs() -> None:
    sm = StateModel()
    eps = feed(sm, [gga("", 0), GSA, gga("", 0), GSA, gga("", 0)]) + sm.finish()
    assert len(eps) == 3 and all(e.utc is None and e.quality == 0 for e in eps)


def test_link_and_marker_events() -> None:
    sm = StateModel()
    sm.on_link(LinkEvent(5.0, 1.7e9, Link.CONNECTING))
    sm.on_link(LinkEvent(6.0, 1.7e9 + 1, Link.STREAMING))
    sm.on_link(LinkEvent(7.0, 1.7e9 + 2, Link.STREAMING))  # repeat: no event, since kept
    sm.on_marker(Marker(8.0, 1.7e9 + 3, "antenna moved to mast"))
    assert sm.link == (Link.STREAMING, 6.0, "")
    ev = sm.drain_events()
    assert [(e.kind, e.mono) for e in ev] == [("link", 5.0), ("link", 6.0), ("marker", 8.0)]
    assert ev[2].text == "antenna moved to mast" and ev[1].data["state"] == Link.STREAMING


def test_long_stream_stays_bounded() -> None:
    sm = StateModel()
    for k in range(3000):
        s = k % 86400
        sm.on_sentence(dec(gga(f"{s // 3600:02d}{s // 60 % 60:02d}{s % 60:02d}")), float(k), 1.7e9 + k)
    assert sm.epochs == 2999 and sm.drain_events() == []
    assert len(sm._clock._steps) <= 15


values = st.one_of(st.none(), st.text(max_size=4), st.integers(-10**20, 10**20), st.floats(allow_nan=True),
                   st.times(), st.dates(), st.booleans())
names = st.sampled_from(["time", "lat", "lon", "quality", "numSV", "HDOP", "alt", "sep", "date", "day",
                         "month", "year", "numMsg", "msgNum", "svid_01", "elv_01", "cno_01", "signalID",
                         "systemId", "posMode", "status", "navMode", "PDOP", "spd", "sogk", "stdLat"])


@settings(max_examples=200, deadline=None)
@given(st.lists(st.tuples(st.sampled_from(["GP", "GN", "GL", "XX", ""]),
                          st.sampled_from(["GGA", "RMC", "GSA", "GSV", "GST", "VTG", "ZDA", "GNS", "GLL", "TXT"]),
                          st.dictionaries(names, values, max_size=8)), max_size=25))
def test_any_field_values_never_raise(msgs: list) -> None:
    # robustness (no outside reference needed): wrong types and values are ignored, never raised
    sm = StateModel()
    for k, (talker, mid, fields) in enumerate(msgs):
        sm.on_sentence(Decoded(talker, mid, fields), float(k), 1.7e9 + k)
        sm.sky()
    sm.finish()
    sm.drain_events()
