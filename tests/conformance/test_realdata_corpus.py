"""Acceptance on public logs from real receivers (../shared/realdata/corpus, see
shared/realdata/SOURCES.md for each file's source, licence and situation).

Every expected figure here comes from outside livefix: from the NMEA 0183 standard (checksums,
sentence roles, satellite-ID ranges), from the situation SOURCES.md states for the file (rate,
date, static or moving, holes), from the issue text, or from the small reference readers in
corpus_ref.py, which read checksum-valid sentences on their own. Never from livefix's current output.
The files are read in place and never copied into the project (their licences differ).
"""

from __future__ import annotations

import json
import math
import statistics
import subprocess
import sys
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest
from corpus_ref import (
    FILES,
    HOLES_S,
    STATED,
    Ref,
    default_dates,
    gga_heights,
    gsv_sets,
    gsv_tracked,
    iso_dates,
    read_ref,
    ref_span,
    stype,
)

CORPUS = Path(__file__).resolve().parents[2].parent / "shared" / "realdata" / "corpus"
if not CORPUS.is_dir():
    pytest.skip(f"real-receiver corpus not present at {CORPUS} (see shared/realdata/SOURCES.md)",
                allow_module_level=True)


def _run_report(path: Path) -> dict:
    proc = subprocess.run([sys.executable, "-m", "livefix", "report", str(path), "--json"],
                          capture_output=True, text=True, timeout=300)
    assert proc.returncode == 0, f"{path.name}: {proc.stderr[-500:]}"
    return json.loads(proc.stdout)


@pytest.fixture(scope="module")
def reports() -> dict[str, dict]:
    """One `livefix report FILE --json` per file, two at a time, largest first (about 20 s of CPU
    for all 22)."""
    order = sorted(FILES, key=lambda f: -(CORPUS / f).stat().st_size)
    with ThreadPoolExecutor(2) as pool:
        return dict(zip(order, pool.map(_run_report, (CORPUS / f for f in order)), strict=True))


@pytest.fixture(scope="module")
def refs() -> dict[str, Ref]:
    return {f: read_ref(CORPUS / f) for f in FILES}


def _interval(name: str) -> float:
    rate = STATED[name].rate_hz
    return 1.0 / rate if rate else 1.0


# ---- every file ---------------------------------------------------------------------------------------
def test_corpus_is_the_described_one():
    # SOURCES.md lists 22 logs
    assert sorted(p.name for p in CORPUS.iterdir()) == FILES


@pytest.mark.parametrize("name", FILES)
def test_no_internal_errors(reports, name):
    assert reports[name]["internal_errors"] == 0  # livefix's own errors must stay zero (brief)


@pytest.mark.parametrize("name", [f for f in FILES if STATED[f].rate_hz])
def test_nominal_rate_from_fix_times(reports, name):
    # rate as SOURCES.md describes it; epochs are times of fix only (ZDA, GSV... never make one)
    want = STATED[name].rate_hz
    got = reports[name]["stream"]["rate_hz"]
    assert got is not None and abs(got - want) <= 0.05 * want, (got, want)


@pytest.mark.parametrize("name", [f for f in FILES if STATED[f].continuous])
def test_epochs_are_distinct_fix_times(reports, refs, name):
    # one epoch per time of fix (NMEA 0183: GGA/RMC/GNS/GLL carry it); reference: our own reader
    assert reports[name]["stream"]["epochs"] == len(refs[name].times)


@pytest.mark.parametrize("name", [f for f in FILES if STATED[f].continuous] + ["aerorust_nmea1.log"])
def test_no_gap_stall_or_time_jump_on_continuous_logs(reports, name):
    # continuous per SOURCES.md; aerorust_nmea1.log's 72 s no-fix bursts still send valid sentences,
    # so the receiver is alive: an outage, not a gap or a stall (issue, case 6)
    s = reports[name]["stream"]
    assert (s["gaps"], s["stall_count"], s["time_jumps"]) == (0, 0, 0), (s["gap_list"], s["stalls"])
    assert s["data_gaps"]["count"] == 0, s["data_gaps"]


@pytest.mark.parametrize("name", sorted(HOLES_S))
def test_holes_are_data_gaps_reported_once(reports, name):
    # holes as SOURCES.md states them (no line for that long): a gap in the data, reported once,
    # and never a receiver outage (issue, case 6). Tolerance: the silence or the step between
    # the fix times on either side, which differ by one nominal interval.
    want = HOLES_S[name]
    tol = _interval(name) + 0.5
    r = reports[name]
    gaps = [g["duration_s"] for g in r["stream"]["stalls"]]  # the data-gap list (no bytes)
    for hole in want:
        assert sum(1 for g in gaps if abs(g - hole) <= tol) == 1, (hole, gaps)
    outages = [o["duration_s"] for o in r["fix"]["outages"]]
    for hole in want:
        assert not any(abs(o - hole) <= tol for o in outages), (hole, outages)
    assert r["stream"]["gaps"] == 0, r["stream"]["gap_list"]  # not counted again as missed epochs
    if name != "ipygps_gps_log2.txt":  # its other silences are not described: count only the others
        assert r["stream"]["data_gaps"]["count"] == len(want), r["stream"]["data_gaps"]
        assert r["fix"]["outages_total"] == 0, outages  # fix held on both sides of every hole


@pytest.mark.parametrize("name", sorted(HOLES_S))
def test_holes_are_not_time_jumps(reports, name):
    # issue, case 6: a hole "was called both a stall and a receiver outage: it is a gap in the
    # data, reported once". A stall is livefix's word for "no bytes", the same figure as the data
    # gap; the hole must not also come back as a time jump.
    s = reports[name]["stream"]
    assert s["stall_count"] == s["data_gaps"]["count"], s["stalls"]
    assert s["time_jumps"] == 0, s["time_jumps"]


@pytest.mark.parametrize("name", [f for f in FILES if f != "nematode_nmea_log.txt"])  # see its own test
def test_refused_lines_only_for_broken_sentences(reports, refs, name):
    # a sentence whose checksum is right is not damage (NMEA 0183 checksum), even with a C/N0
    # written with a decimal (mphw_190110.LOG) or a '!' inside a proprietary field
    # (pysandbox_2020-10-04_20-24.nmea); binary frames and text without '$' are not NMEA damage
    # either (issue, case 8)
    s = reports[name]["stream"]
    refused = s["bad_checksum"] + s["malformed"]
    if refs[name].dollar_invalid == 0:
        assert refused == 0, (s["bad_checksum"], s["malformed"])
    else:
        assert refused <= refs[name].dollar_invalid, (refused, refs[name].dollar_invalid)


def test_refused_lines_nematode(reports, refs):
    # two wrong checksums and one unparsable line (SOURCES.md); one more GGA lacks its last field
    s = reports["nematode_nmea_log.txt"]["stream"]
    assert refs["nematode_nmea_log.txt"].dollar_invalid == 3  # our reader: 16 '$', 13 valid
    assert 3 <= s["bad_checksum"] + s["malformed"] <= 4


@pytest.mark.parametrize("name", ["pyubx2_2023-4-17_82912_serial-COM3.ubx", "pynmeagps_pygpsdata-mixed.log"])
def test_binary_frames_counted_as_binary(reports, refs, name):
    # 0xB5 0x62 frames found and checked by our own reader (160 per SOURCES.md for the .ubx log);
    # between them every '$' starts a valid sentence, so nothing is NMEA damage (issue, case 8)
    s = reports[name]["stream"]
    assert refs[name].dollar_invalid == 0
    assert s.get("binary_frames") == refs[name].binary_frames  # key named here: see report
    assert s["malformed"] == 0 and s["bad_checksum"] == 0


def test_binary_frames_count_matches_sources():
    assert read_ref(CORPUS / "pyubx2_2023-4-17_82912_serial-COM3.ubx").binary_frames == 160  # SOURCES.md


@pytest.mark.parametrize("name", FILES)
def test_session_placed_on_the_stated_date(reports, name):
    # the date SOURCES.md states; undated lines before the first date take it; receiver default
    # dates (1980-01-06 GPS epoch per IS-GPS-200, 2000-01-01, 1024 weeks early) never place the
    # session; logs without a date show no invented one (issue, case 7)
    dates = iso_dates(reports[name])
    want = STATED[name].dates
    if want:
        assert dates and dates <= want, sorted(dates)
    else:
        assert not any(d.startswith(("2000-01-01", "1980-01-0")) for d in dates), sorted(dates)


@pytest.mark.parametrize("name", FILES)
def test_date_known_only_with_a_valid_date(reports, name):
    # "date unknown" for logs without any date (issue, case 7)
    assert reports[name]["stream"]["date_known"] is bool(STATED[name].dates)


@pytest.mark.parametrize("name", FILES)
def test_receiver_default_dates_flagged(reports, refs, name):
    # flagged as "receiver date not valid" (issue, case 7): some when the log has such dates
    # (our reader: 060180 and 100180 in gpsanalysis_sample-raw.txt; 050180, 060180 and 100180 in
    # nmeadataset_5...), none otherwise
    n = default_dates(refs[name])
    got = reports[name]["stream"]["receiver_dates_invalid"]
    assert (got >= 1) if n else (got == 0), (got, n)


def test_time_fault_not_a_new_clock(reports):
    # nematode_nmea_log.txt: one checksum-valid RMC of 2018 after two 2011 epochs, with no valid
    # epoch after it to confirm it: one time fault, no jump (issue, case 5)
    s = reports["nematode_nmea_log.txt"]["stream"]
    assert (s["time_faults"], s["time_jumps"]) == (1, 0)


@pytest.mark.parametrize("name", [f for f in FILES if STATED[f].continuous and STATED[f].dates]
                         + ["aerorust_nmea1.log"])
def test_no_time_jump_from_dates(reports, name):
    # a GGA before the first dated sentence is not a jump of decades (issue, case 7)
    assert reports[name]["stream"]["time_jumps"] == 0
    assert not any(e.get("kind") == "time_jump" for e in reports[name]["events"])


# ---- durations ---------------------------------------------------------------------------------------
@pytest.mark.parametrize("name", [f for f in FILES if f not in (
    "gpsanalysis_sample-raw.txt", "nmeadataset_5.GPS-20170525T225915.txt", "nematode_nmea_log.txt",
    "ipygps_gps_log2.txt")])
def test_duration_from_valid_fix_times(reports, refs, name):
    # span of the checksum-valid fix times, plus the bursts with empty time outside that span at
    # the nominal interval (a receiver that sends valid sentences is alive: issue, case 6; the
    # issue gives 1,306 s for aerorust_nmea1.log). Tolerance: one nominal interval.
    ref = refs[name]
    dt = _interval(name)
    want = ref_span(ref) + ref.empty_outside * dt
    got = reports[name]["stream"]["duration_s"]
    assert abs(got - want) <= dt + 1e-6, (got, want)


def test_duration_aircraft_log_matches_issue(refs):
    ref = refs["aerorust_nmea1.log"]
    assert ref_span(ref) + ref.empty_outside == 1306.0  # issue, case 6: "a 1,306 s log"


def test_duration_nematode_one_second(reports):
    # two good epochs one second apart; the later RMC of another year is not confirmed by any
    # following valid epoch and bad-checksum lines never set the clock (issue, case 5)
    assert reports["nematode_nmea_log.txt"]["stream"]["duration_s"] == pytest.approx(1.0, abs=0.01)


def test_duration_cold_start_with_clock_step(reports, refs):
    # 264 GGA bursts at 1 Hz (our reader) while the receiver's clock steps from 1980 to 2017
    # (SOURCES.md): about 264 s, never the 79,000 s between the two clocks (issue, case 5)
    n = sum(1 for f in refs["gpsanalysis_sample-raw.txt"].sentences if stype(f) == "GGA")
    assert n == 264
    assert 250 <= reports["gpsanalysis_sample-raw.txt"]["stream"]["duration_s"] <= 275


def test_duration_host_stamped_restarts(reports):
    # lines stamped 22:50:04 to 22:59:10 by the host (546 s, read from the file); the receiver
    # clock steps through 1980 dates twice (SOURCES.md): the session lasts about that long
    assert 450 <= reports["nmeadataset_5.GPS-20170525T225915.txt"]["stream"]["duration_s"] <= 600


def test_duration_appended_captures(reports, refs):
    # at least the span of valid fix times, at most that plus the 104 leading empty bursts
    ref = refs["ipygps_gps_log2.txt"]
    got = reports["ipygps_gps_log2.txt"]["stream"]["duration_s"]
    assert ref_span(ref) <= got <= ref_span(ref) + ref.empty_outside + 1


# ---- fix, TTFF, outages --------------------------------------------------------------------------------
@pytest.mark.parametrize("name", FILES)
def test_ttff_not_observed_when_log_starts_with_fix(reports, refs, name):
    # the first GGA/RMC already has a fix: TTFF was not observed, null, never 0 (issue, case 11)
    if not refs[name].starts_with_fix:
        pytest.skip("log starts without a fix")
    assert reports[name]["fix"]["ttff_s"] is None


def test_ttff_cold_start(reports, refs):
    # first fix in GGA burst 210 of the file at 1 Hz (our reader; SOURCES.md: "~210 bursts"), so
    # a TTFF of about 209 s from the first burst was observed. 14 s before the first fix the
    # receiver's time steps back 1.146 s as its talker changes: clock jitter, not a restart (a
    # restart sends the clock back by far more, or to a default date; common practice).
    ggas = [f for f in refs["gpsanalysis_sample-raw.txt"].sentences if stype(f) == "GGA"]
    first = next(i for i, f in enumerate(ggas) if f[6] not in ("", "0"))
    assert first == 209
    ttff = reports["gpsanalysis_sample-raw.txt"]["fix"]["ttff_s"]
    assert ttff is not None and 205 <= ttff <= 215  # 209 one-second bursts, +-1 s per end


def test_ttff_after_restart(reports):
    # nmeadataset_5...: the receiver restarts at 22:55:04 (host stamps; its clock falls back to 1980)
    # and gives its first fix at 22:55:56-57 (SOURCES.md: "first fix 53 s after the restart");
    # the start before, cut by a silence of 57 s, never had a fix (our reading of the file)
    starts = reports["nmeadataset_5.GPS-20170525T225915.txt"]["fix"]["starts"]
    ttffs = [s["ttff_s"] for s in starts if s["ttff_s"] is not None]
    assert len(ttffs) == 1 and 50 <= ttffs[0] <= 56, starts


def test_no_fix_log(reports):
    # no fix in 90 s (SOURCES.md): no TTFF, no position, no height
    r = reports["pyubx2_2023-4-17_82912_serial-COM3.ubx"]
    assert r["fix"]["ttff_s"] is None
    assert not r["position"].get("mean") or r["position"]["mean"].get("h") is None


def test_outage_of_the_aircraft_log(reports):
    # 71 empty-time bursts between fixes at 11:01:30 and 11:02:42 (our reader): a 72 s outage,
    # never negative (issue, case 6)
    fx = reports["aerorust_nmea1.log"]["fix"]
    durations = [o["duration_s"] for o in fx["outages"]]
    assert any(70 <= d <= 73 for d in durations), durations
    assert all(d >= 0 for d in durations)
    assert fx["outage_now"] is None or fx["outage_now"]["duration_s"] >= 0


# ---- motion and the statistics that need a static receiver --------------------------------------------
def _motion(r: dict) -> tuple[str, float]:
    m = r.get("motion") or {}
    return m.get("state"), m.get("moving_share")


@pytest.mark.parametrize("name", [f for f in FILES if STATED[f].motion == "static"])
def test_static_logs_are_static(reports, name):
    state, share = _motion(reports[name])  # SOURCES.md: static
    assert state == "static" and share is not None and share < 0.05, (state, share)


@pytest.mark.parametrize("name", [f for f in FILES if STATED[f].motion in ("moving", "mostly_moving")])
def test_moving_logs_are_moving(reports, name):
    # SOURCES.md: aircraft, car, vehicle, robot. Our reader finds 77-100 % of GGA steps faster than
    # 0.5 m/s in each, so at least 60 % moving allows for stops and other thresholds
    state, share = _motion(reports[name])
    assert state in ("moving", "mixed") and share is not None and share >= 0.6, (state, share)
    if STATED[name].motion == "moving":
        assert state == "moving" and share >= 0.95


def test_static_ground_station_mostly_static(reports):
    # static ground station (SOURCES.md); our reader sees under 2 % of steps above 0.5 m/s
    state, share = _motion(reports["pysandbox_2020-10-04_20-24.nmea"])
    assert state in ("static", "mixed") and share is not None and share < 0.2, (state, share)


@pytest.mark.parametrize("name", [f for f in FILES if STATED[f].motion in ("moving", "mostly_moving")])
def test_scatter_not_from_motion(reports, name):
    # static figures come from static segments only (issue, case 10): a car at 50 kn has none, and
    # the stops of a vehicle scatter metres, never hundreds of metres (common practice)
    pos = reports[name]["position"]
    if STATED[name].motion == "moving":
        assert pos.get("cep50_m") is None
    else:
        assert pos.get("cep50_m") is None or pos["cep50_m"] < 50, pos.get("cep50_m")


# ---- sky ------------------------------------------------------------------------------------------------
def _lf_sats(r: dict) -> set[tuple[str, int]]:
    out = set()
    for s in r["signal"]["by_sat"]:
        sat = s["sat"].split("/")[0]
        out.add((sat[0], int(sat[1:])))
    return out


@pytest.mark.parametrize("name", FILES)
def test_constellations_seen(reports, refs, name):
    # constellation of each satellite from its GSV talker or, for GP/GN, from the NMEA ID ranges;
    # livefix's session-wide C/N0 by system lists the systems it tracked. A C/N0 written with a
    # decimal (48.4, mphw_190110.LOG) is still a C/N0 in dB-Hz.
    want = {c for c, _ in gsv_tracked(refs[name])}
    got = set(reports[name]["signal"]["by_system"])
    assert got == want, (sorted(got), sorted(want))


def _by_letter(sats: set[tuple[str, int]]) -> dict[str, int]:
    return {c: sum(1 for x, _ in sats if x == c) for c in sorted({x for x, _ in sats})}


def test_gsv_set_spanning_talkers(refs):
    # issue, case 2: 13 satellites, 6 GPS / 4 GLONASS / 3 Galileo in the GSV set whose parts come
    # from GP, GL and GA talkers; our reader agrees on the first set (later sets add GPS 6)
    sets = gsv_sets(refs["nmeaparser_R2SampleData.txt"])
    assert len(sets) == 34  # one set per second, 34 s (our reader)
    assert _by_letter(sets[0]) == {"E": 3, "G": 6, "R": 4}


def test_gsv_set_spanning_talkers_in_report(reports, refs):
    # the tracked satellites of the last epoch, as the last whole set lists them (our reader)
    r = reports["nmeaparser_R2SampleData.txt"]
    assert _by_letter(_lf_sats(r)) == _by_letter(gsv_sets(refs["nmeaparser_R2SampleData.txt"])[-1])
    assert r["dop"]["computed"]["hdop"] is not None


HDOP_CLEAN_STATIC = ("perlnmea_log-2013-02-16-23-16.nmea", "gpscar_nmea_data.txt", "ratatosk_nmea_log.txt",
                     "aerorust_nmea_with_sat_info.log", "gsvnoise_test.nmea", "ipygps_gps_log2.txt",
                     "nmeaparser_R2SampleData.txt")


@pytest.mark.parametrize("name", HDOP_CLEAN_STATIC)
def test_computed_hdop_close_to_reported(reports, name):
    # on clean static logs whose used satellites all appear in GSV, HDOP from the geometry agrees
    # with the receiver's within 20 % (common practice: the receiver weights and rounds az/el);
    # ratatosk_nmea_log.txt is the issue's case 3 (159 computed vs 1.3 reported)
    d = reports[name]["dop"]
    rep, comp = d["reported"]["hdop"], d["computed"]["hdop"]
    assert rep is not None and comp is not None and abs(comp - rep) <= 0.2 * rep, (comp, rep)


# ---- heights -----------------------------------------------------------------------------------------
@pytest.mark.parametrize("name", ("gsvnoise_20220112_test.nmea", "gsvnoise_test.nmea",
                                  "perlnmea_log-2013-02-16-23-16.nmea", "ratatosk_nmea_log.txt",
                                  "jamming_rtk_serial_output.txt", "aerorust_nmea_with_sat_info.log",
                                  "gpscar_nmea_data.txt", "mphw_190110.LOG"))
def test_mean_height_from_gga_only(reports, refs, name):
    # only GGA/GNS carry a height; RMC-only epochs have none, never 0 (issue, case 4). Reference:
    # mean of MSL height + geoid separation over GGA with a fix (one fix type in each of these
    # logs); 0.1 m allows for jump exclusion. gsvnoise_20220112_test.nmea: issue gives 163.54 m.
    hs = [h for _, h in gga_heights(refs[name])]
    want = statistics.fmean(hs)
    if name == "gsvnoise_20220112_test.nmea":
        assert want == pytest.approx(163.54, abs=0.005)
    got = reports[name]["position"]["mean"]["h"]
    assert got is not None and abs(got - want) <= 0.1, (got, want)


@pytest.mark.parametrize("name", [f for f in FILES if STATED[f].continuous and f != "pynmeagps_pygpsdata-mixed.log"])
def test_height_datum(reports, refs, name):
    # NMEA 0183 GGA: altitude above mean sea level plus geoid separation. With the separation empty
    # the height is above mean sea level only (issue, case 4); these logs are all one or the other
    seps = {bool(f[11]) for f in refs[name].sentences if stype(f) == "GGA" and len(f) > 11 and f[9]}
    if len(seps) != 1:
        pytest.skip("no GGA height, or both kinds")
    want = "ellipsoidal" if seps == {True} else "msl"
    assert reports[name]["position"]["height_datum"] == want


def test_vertical_drift_rtk_static(reports, refs):
    # issue, case 4: about -75 mm/h (was +12,459). Reference: least-squares slope of GGA heights
    # over time (our reader: about -86 mm/h); 150 mm/h allows for another noise model
    pts = gga_heights(refs["gsvnoise_20220112_test.nmea"])
    t = [p[0] / 3600 for p in pts]
    h = [p[1] * 1000 for p in pts]
    tm, hm = statistics.fmean(t), statistics.fmean(h)
    slope = sum((a - tm) * (b - hm) for a, b in zip(t, h, strict=True)) / sum((a - tm) ** 2 for a in t)
    assert -150 < slope < 0
    got = reports["gsvnoise_20220112_test.nmea"]["position"]["drift_mm_per_h"]["u"]
    assert got is not None and math.isfinite(got) and abs(got - slope) <= 150, (got, slope)
