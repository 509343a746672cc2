"""Conformance: each rule of NMEA 0183 (and of the GPS interface specification) that livefix relies
on, tested through the public pipeline with tiny invented fixtures, its source named beside it.

Sources: NMEA 0183 versions 4.10/4.11 (system IDs, signal IDs, talkers, GGA quality, mode letters,
checksum; the standard is paywalled, the facts used are in docs/sources.md#nmea-0183 with the ones not
verified against the document marked "from memory"); IS-GPS-200 for GPS time and the 10-bit week
number; RTCM 10403 for the framing of RTCM 3 messages; "common practice" where there is no standard.
Every fixture is invented (times, places and satellites made up); expected values are hand counts.
"""

from __future__ import annotations

import datetime as dt
import re

import pytest
from nmea_fixture import (
    POS,
    T0,
    b562_frame,
    bursts,
    crc24q,
    gga,
    gsa,
    gsv,
    hms,
    iso_dates,
    nmea,
    rmc,
    rtcm3,
    run_live,
    run_plain,
    seen,
    used,
)


# ---- checksum ------------------------------------------------------------------------------------------
@pytest.mark.parametrize("body, want", [
    # public example sentences with their checksums (docs/sources.md#example-sentences)
    ("GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,", "47"),
    ("GPRMC,123519,A,4807.038,N,01131.000,E,022.4,084.4,230394,003.1,W", "6A"),
    ("GPGSA,A,3,04,05,,09,12,,,24,,,,,2.5,1.3,2.1", "39"),
    ("GPGSV,2,1,08,01,40,083,46,02,17,308,41,12,07,344,39,14,22,228,45", "75"),
])
def test_checksum_helper_matches_published_examples(body, want):
    assert nmea(body) == f"${body}*{want}\r\n".encode()


def test_bad_checksum_refused_and_never_sets_the_clock(tmp_path):
    # NMEA 0183 checksum; issue case 5: a bad-checksum line with a plausible time of 18:00:00 must
    # neither make an epoch nor move the clock. 3 good epochs 1 s apart -> duration 2 s.
    bad = bytearray(gga(T0 + 6 * 3600))
    bad[-4:-2] = b"00" if bad[-4:-2] != b"00" else b"01"
    run = run_plain(tmp_path, [gga(T0), gga(T0 + 1), bytes(bad), gga(T0 + 2)])
    s = run.analysis["stream"]
    assert s["bad_checksum"] == 1 and s["malformed"] == 0
    assert len(run.epochs) == 3 and s["epochs"] == 3
    assert s["duration_s"] == pytest.approx(2.0)
    assert s["time_jumps"] == 0


# ---- which sentences make an epoch ---------------------------------------------------------------------
def test_zda_after_the_fix_is_not_an_epoch(tmp_path):
    # NMEA 0183: ZDA gives time and date, GGA/RMC the fix "as of" their time. A receiver that stamps
    # ZDA 50 ms after the fix: 10 fixes -> 10 epochs at 1 Hz, no gap (issue case 1).
    def burst(t):
        return [gga(t), rmc(t), nmea(f"GPZDA,{hms(t + 0.05)},15,03,2026,00,00")]
    run = run_plain(tmp_path, bursts(10, burst))
    s = run.analysis["stream"]
    assert (s["epochs"], s["rate_hz"], s["gaps"]) == (10, 1.0, 0)
    assert s["duration_s"] == pytest.approx(9.0)


def test_position_from_gns_only(tmp_path):
    # NMEA 0183 GNS: time, position, one mode letter per system, satellites, HDOP, altitude,
    # geoid separation. A receiver that reports its position only in GNS gets one (issue case 1).
    def burst(t):
        return [nmea(f"GNGNS,{hms(t)},{POS},AA,10,0.9,101.5,45.2,,,V")]
    run = run_plain(tmp_path, bursts(3, burst))
    ep = run.epochs[-1]
    assert len(run.epochs) == 3
    assert ep.has_fix and ep.fix == "single"  # mode A = autonomous (NMEA 0183)
    assert ep.lat == pytest.approx(48 + 7.038 / 60) and ep.lon == pytest.approx(11 + 31.0 / 60)
    assert ep.h == pytest.approx(101.5 + 45.2)  # height above ellipsoid = altitude + separation


def test_rmc_only_epoch_has_no_height(tmp_path):
    # NMEA 0183: RMC carries no height; only GGA/GNS do, so an RMC-only epoch has none, never 0
    # (issue case 4). 10 Hz RMC, GGA once a second at 100.0 and 102.0 m + 45.0 m separation.
    lines = []
    for k in range(20):
        t = T0 + k / 10
        lines.append(rmc(t))
        if k % 10 == 0:
            lines.append(gga(t, alt=f"{100.0 + 2 * (k // 10):.1f}", sep="45.0"))
    run = run_plain(tmp_path, lines)
    heights = [ep.h for ep in run.epochs]
    assert len(run.epochs) == 20
    assert heights.count(None) == 18
    assert sorted(h for h in heights if h is not None) == [145.0, 147.0]
    assert run.analysis["position"]["mean"]["h"] == pytest.approx(146.0)  # (145 + 147) / 2


# ---- talker IDs and system IDs -----------------------------------------------------------------------------
@pytest.mark.parametrize("talker, letter", [
    # NMEA 0183 talkers (docs/sources.md#talker-ids): GP GPS, GL GLONASS, GA Galileo, GB BeiDou (BD older),
    # GQ QZSS, GI NavIC; letters are the RINEX constellation letters
    ("GP", "G"), ("GL", "R"), ("GA", "E"), ("GB", "C"), ("BD", "C"), ("GQ", "J"), ("GI", "I"),
])
def test_gsv_talker_gives_constellation(tmp_path, talker, letter):
    # native number 5 under each talker (GLONASS written 65 + slot - 1 by NMEA: 69 = slot 5, memory)
    num = "69" if talker == "GL" else "05"
    def burst(t):
        return [gga(t, talker="GN"), gsv(talker, 1, 1, 1, [(num, 45, 90, 40)])]
    run = run_plain(tmp_path, bursts(3, burst))
    assert {(s.system, s.prn) for s in run.epochs[-1].sats} == {(letter, 5)}


@pytest.mark.parametrize("sysid, num, want", [
    # NMEA 0183 4.10/4.11 GSA system ID (docs/sources.md#system-ids): 1 GPS, 2 GLONASS, 3 Galileo,
    # 4 BeiDou, 5 QZSS, 6 NavIC. Numbers within: GLONASS keeps 65-96 (slot + 64), the others their
    # own numbers (from memory).
    ("1", "05", ("G", 5)), ("2", "65", ("R", 1)), ("3", "05", ("E", 5)),
    ("4", "05", ("C", 5)), ("5", "01", ("J", 1)), ("6", "05", ("I", 5)),
])
def test_gsa_system_id_gives_constellation(tmp_path, sysid, num, want):
    def burst(t):
        return [gga(t, talker="GN"), gsa([num], sysid=sysid)]
    run = run_plain(tmp_path, bursts(3, burst))
    assert used(run) == {want}


# ---- satellite-ID ranges when there is no system ID (before NMEA 4.10) ---------------------------------------------
@pytest.mark.parametrize("num, want", [
    ("01", ("G", 1)), ("32", ("G", 32)),  # GPS 1-32 (NMEA 0183; from memory)
    ("33", ("S", 120)), ("64", ("S", 151)),  # SBAS 33-64 = PRN - 87 (NMEA 0183; from memory)
    ("65", ("R", 1)), ("96", ("R", 32)),  # GLONASS 65-96 = slot + 64 (NMEA 0183; from memory)
    ("193", ("J", 1)),  # QZSS 193-202 = PRN 193 = J01 (receiver practice; from memory)
    ("301", ("E", 1)), ("336", ("E", 36)),  # Galileo 301-336 (receiver practice; from memory)
    ("401", ("C", 1)), ("437", ("C", 37)),  # BeiDou 401-437 (receiver practice; from memory)
])
def test_gsa_without_system_id_classified_by_range(tmp_path, num, want):
    # issue case 3, e.g. "GSA without system ID, GN talker, IDs 65-96 -> GLONASS used"
    def burst(t):
        return [gga(t, talker="GN"), gsa([num])]
    run = run_plain(tmp_path, bursts(3, burst))
    assert used(run) == {want}


def test_several_gsa_without_system_id_are_one_union(tmp_path):
    # common practice before NMEA 4.10: one GSA per constellation, one talker, no system ID. The
    # epoch's used satellites are their union: 3 GPS + 2 GLONASS + 2 Galileo = 7 (hand count).
    def burst(t):
        return [gga(t, talker="GN"), gsa(["05", "12", "24"]), gsa(["65", "70"]), gsa(["301", "302"])]
    run = run_plain(tmp_path, bursts(3, burst))
    assert used(run) == {("G", 5), ("G", 12), ("G", 24), ("R", 1), ("R", 6), ("E", 1), ("E", 2)}


def test_unknown_id_is_reported_not_dropped(tmp_path):
    # 99 fits none of the NMEA blocks above: an unknown constellation, reported, never guessed
    # (docs/sources.md#satellite-numbers: a number no block fits is an unknown constellation)
    def burst(t):
        return [gga(t, talker="GN"), gsa(["05", "99"])]
    run = run_plain(tmp_path, bursts(3, burst))
    ep = run.epochs[-1]
    assert used(run) == {("G", 5)}
    assert any(re.search(r"\b99\b", u) for u in ep.unknown_ids), ep.unknown_ids


# ---- GSV signal IDs and sets -------------------------------------------------------------------------------------
def test_gsv_signal_ids_kept_apart(tmp_path):
    # NMEA 0183 4.10/4.11: a GSV set per signal, the signal ID last (GPS 1 = L1 C/A, 6 = L2C-L;
    # Galileo 7 = E1; from memory). The same GPS satellite on two signals is two signals of one
    # satellite, each with its own C/N0.
    def burst(t):
        return [gga(t, talker="GN"),
                gsv("GP", 1, 1, 1, [("05", 45, 90, 44)], signal="1"),
                gsv("GP", 1, 1, 1, [("05", 45, 90, 38)], signal="6"),
                gsv("GA", 1, 1, 1, [("11", 30, 200, 41)], signal="7")]
    run = run_plain(tmp_path, bursts(3, burst))
    assert seen(run) == {("G", 5, "1"), ("G", 5, "6"), ("E", 11, "7")}
    cn0 = {(s.prn, s.signal): s.cn0 for s in run.epochs[-1].sats}
    assert cn0[(5, "1")] == 44 and cn0[(5, "6")] == 38


def test_gsv_set_spanning_talkers(tmp_path):
    # one set "x of 3" whose parts come from GP, GL and GA (issue case 2): 6 satellites kept,
    # 2 GPS / 2 GLONASS / 2 Galileo by talker (NMEA 0183 talkers; hand count)
    def burst(t):
        return [gga(t, talker="GN"),
                gsv("GP", 3, 1, 6, [("05", 45, 90, 44), ("12", 30, 180, 40)]),
                gsv("GL", 3, 2, 6, [("70", 50, 45, 42), ("71", 20, 300, 35)]),
                gsv("GA", 3, 3, 6, [("11", 30, 200, 41), ("24", 60, 10, 46)])]
    run = run_plain(tmp_path, bursts(3, burst))
    assert {(s.system, s.prn) for s in run.epochs[-1].sats} == {
        ("G", 5), ("G", 12), ("R", 6), ("R", 7), ("E", 11), ("E", 24)}


# ---- fix quality and mode letters ------------------------------------------------------------------------------
@pytest.mark.parametrize("q, want", [
    # NMEA 0183 GGA quality: 0 invalid, 1 GPS fix, 2 DGPS (verified); 4 RTK fixed, 5 RTK float,
    # 6 dead reckoning (from memory; docs/sources.md#gga-quality)
    (1, "single"), (2, "dgnss"), (4, "rtk_fixed"), (5, "rtk_float"), (6, "estimated"),
])
def test_gga_quality(tmp_path, q, want):
    run = run_plain(tmp_path, bursts(3, lambda t: [gga(t, q=q)]))
    assert run.epochs[-1].fix == want
    assert set(run.analysis["fix"]["availability"]) == {want}


def test_gga_quality_zero_is_no_fix(tmp_path):
    # NMEA 0183: quality 0 = fix not valid
    run = run_plain(tmp_path, bursts(3, lambda t: [gga(t, q=0)]))
    assert not any(ep.has_fix for ep in run.epochs)


@pytest.mark.parametrize("mode, status, want", [
    # NMEA 0183 RMC mode: A autonomous, D differential, E estimated, N not valid (with status V);
    # R RTK fixed, F RTK float (from memory; docs/sources.md#mode-letters)
    ("A", "A", "single"), ("D", "A", "dgnss"), ("R", "A", "rtk_fixed"), ("F", "A", "rtk_float"),
    ("E", "A", "estimated"),
])
def test_rmc_mode_letter(tmp_path, mode, status, want):
    run = run_plain(tmp_path, bursts(3, lambda t: [rmc(t, status=status, mode=mode)]))
    assert run.epochs[-1].fix == want


def test_rmc_not_valid(tmp_path):
    # NMEA 0183: status V / mode N = no valid fix
    run = run_plain(tmp_path, bursts(3, lambda t: [rmc(t, status="V", mode="N")]))
    assert not any(ep.has_fix for ep in run.epochs)


def test_gns_mode_string(tmp_path):
    # NMEA 0183 GNS: one mode letter per system (GPS, GLONASS, ...); RTK fixed on GPS, none on
    # GLONASS -> the receiver's fix is RTK fixed (R, from memory)
    run = run_plain(tmp_path, bursts(3, lambda t: [nmea(f"GNGNS,{hms(t)},{POS},RN,10,0.9,101.5,45.2,1.0,0000,V")]))
    assert run.epochs[-1].fix == "rtk_fixed"


# ---- dates: GPS week rollover, receiver default dates, two-digit years -----------------------------------------
def test_week_rollover_arithmetic():
    # IS-GPS-200: 10-bit week number, so the week rolls over every 1024 weeks = 7168 days; the
    # rollovers of 1999-08-22 and 2019-04-07 (GPS weeks start on Sunday 00:00) are 7168 days apart,
    # and week 0 started 1980-01-06 (docs/sources.md#gps-time)
    from livefix import dates

    assert dates.ROLLOVER_DAYS == 1024 * 7 == 7168
    assert dt.date(1980, 1, 6) + dt.timedelta(days=7168) == dt.date(1999, 8, 22)
    assert dt.date(1999, 8, 22) + dt.timedelta(days=7168) == dt.date(2019, 4, 7)
    assert dates.GPS_EPOCH_DATE == dt.date(1980, 1, 6)


def test_date_1024_weeks_early_never_places_the_session():
    # a receiver with an old week reference on 2019-10-01 reports 2000-02-15, 7168 days early
    # (IS-GPS-200): the host clock says 2019-10-01, so that date is not valid and never shown
    host = dt.datetime(2019, 10, 1, 12, 0, 0, tzinfo=dt.UTC).timestamp()
    early = dt.date(2019, 10, 1) - dt.timedelta(days=7168)
    assert early == dt.date(2000, 2, 15)  # hand count: 1999-08-22 + 177 days
    lines = bursts(5, lambda t: [gga(t), rmc(t, date=early.strftime("%d%m%y"))])
    run = run_live(lines, host, step_s=0.5)
    assert iso_dates(run.analysis) == {"2019-10-01"}  # placed by the host's date


@pytest.mark.parametrize("default", ["060180", "010100"])
def test_receiver_default_date_never_places_the_session(tmp_path, default):
    # before it knows the time a receiver reports the GPS epoch 1980-01-06 (IS-GPS-200) or
    # 2000-01-01 (common practice), with its own clock from power-on; then it learns the time
    # (12:00:00 on 2026-03-15 here) and the times run on. The session lies on 2026-03-15 only.
    lines = bursts(3, lambda t: [rmc(t, date=default, status="V", mode="N")], t0=5.0)
    lines += bursts(5, lambda t: [gga(t), rmc(t, date="150326")])
    run = run_plain(tmp_path, lines)
    assert iso_dates(run.analysis) == {"2026-03-15"}


def test_no_date_means_date_unknown(tmp_path):
    # GGA has no date (NMEA 0183): a GGA-only log has no date, and livefix invents none
    run = run_plain(tmp_path, bursts(5, lambda t: [gga(t)]))
    assert iso_dates(run.analysis) == set()
    assert run.analysis["stream"]["epochs"] == 5


def test_undated_lines_before_the_first_date_take_it(tmp_path):
    # issue case 7: a GGA before the first RMC, times running on at 1 Hz, takes the RMC's date;
    # no time jump
    lines = [gga(T0)] + bursts(4, lambda t: [gga(t), rmc(t, date="150326")], t0=T0 + 1)
    run = run_plain(tmp_path, lines)
    assert iso_dates(run.analysis) == {"2026-03-15"}
    assert run.analysis["stream"]["time_jumps"] == 0
    assert run.analysis["stream"]["duration_s"] == pytest.approx(4.0)


@pytest.mark.parametrize("ddmmyy, year", [
    # two-digit years (NMEA 0183 ddmmyy): 80-99 -> 19yy and 00-68 -> 20yy under any pivot in use
    # (the POSIX %y rule pivots at 68, a GPS-epoch rule at 80; common practice). No GPS date can
    # precede 1980-01-06 (IS-GPS-200), so 1999 is 1999.
    ("220899", 1999), ("150326", 2026), ("010668", 2068),
])
def test_two_digit_year(tmp_path, ddmmyy, year):
    run = run_plain(tmp_path, bursts(3, lambda t: [gga(t), rmc(t, date=ddmmyy)]))
    utc = run.epochs[-1].utc
    assert utc is not None and dt.datetime.fromtimestamp(utc, tz=dt.UTC).year == year
    assert {d[:4] for d in iso_dates(run.analysis)} == {str(year)}  # plain-log clock agrees


@pytest.mark.parametrize("yy", [f"{y:02d}" for y in range(69, 80)])
def test_one_year_pivot_everywhere(tmp_path, yy):
    # one pivot for the whole code: the clock that places the log and the decoder that dates the
    # epochs give the same year, or both refuse the date (issue case 7)
    run = run_plain(tmp_path, bursts(3, lambda t: [gga(t), rmc(t, date=f"1506{yy}")]))
    shown = {d[:4] for d in iso_dates(run.analysis)}
    years = {dt.datetime.fromtimestamp(ep.utc, tz=dt.UTC).year for ep in run.epochs if ep.utc is not None}
    assert len(shown) <= 1
    if shown and all(y >= 1980 for y in years):  # a year before GPS time is not a date to show
        assert shown == {str(y) for y in years}


# ---- '$' wherever it stands, and binary frames ------------------------------------------------------------------
def test_crc24q_known_value():
    # CRC-24Q of an empty message is 0; of "123456789" 0xCDE703 (the check value listed for
    # CRC-24/LTE-A, which shares the polynomial and initial value; from memory)
    assert crc24q(b"") == 0
    assert crc24q(b"123456789") == 0xCDE703


def test_dollar_after_binary_keeps_its_time(tmp_path):
    # NMEA 0183: '$' starts a sentence wherever it stands; a GGA right after binary bytes keeps its
    # time (issue case 8: duration 1.0 s, not 0.0)
    frame = b562_frame(0x01, 0x07, bytes(range(40)) + b"$GPGGA,1")  # a '$' inside the payload starts nothing
    lines = [frame + gga(T0), frame + gga(T0 + 1)]
    run = run_plain(tmp_path, lines)
    s = run.analysis["stream"]
    assert s["epochs"] == 2 and s["duration_s"] == pytest.approx(1.0)
    assert s["malformed"] == 0 and s["bad_checksum"] == 0
    assert s["binary_frames"] == 2


def test_rtcm3_frames_counted_as_binary(tmp_path):
    # RTCM 3 frames (RTCM 10403 framing) between NMEA lines are binary, not NMEA damage, even when
    # a payload byte is '$' (0x24) or a line end
    payload = b"\x3e\xd0\x00\x24\x0d\x0a" + bytes(range(14))
    lines = []
    for k in range(3):
        lines += [gga(T0 + k), rtcm3(payload)]
    run = run_plain(tmp_path, lines)
    s = run.analysis["stream"]
    assert (s["epochs"], s["malformed"], s["bad_checksum"], s["binary_frames"]) == (3, 0, 0, 3)
    assert s["duration_s"] == pytest.approx(2.0)
