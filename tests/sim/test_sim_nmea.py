"""Everything the simulator writes is valid NMEA 0183 as pynmeagps reads it, with exact padding,
and the decoded values agree with the simulator's ground truth."""

from __future__ import annotations

import re

import pytest
from pynmeagps import NMEAParseError, NMEAReader

from livefix.sim import Scenario, SimReceiver, list_scenarios, nmea

# Public example sentences from a public NMEA example page (docs/sources.md#example-sentences)
EXAMPLES = [
    "$GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,*47",
    "$GPRMC,123519,A,4807.038,N,01131.000,E,022.4,084.4,230394,003.1,W*6A",
    "$GPGSA,A,3,04,05,,09,12,,,24,,,,,2.5,1.3,2.1*39",
    "$GPGSV,2,1,08,01,40,083,46,02,17,308,41,12,07,344,39,14,22,228,45*75",
]


@pytest.mark.parametrize("line", EXAMPLES)
def test_checksum_matches_published_examples(line):
    body, cs = line[1:].split("*")
    assert nmea.checksum(body) == cs  # NMEA 0183: XOR between '$' and '*'


def _lines(data: bytes) -> list[bytes]:
    assert data.endswith(b"\r\n")
    return [ln + b"\r\n" for ln in data.split(b"\r\n")[:-1]]


# field formats we promise (zero padding per NMEA 0183 practice)
FORMATS = {
    "GGA": re.compile(rb"^\$(GN|GP)GGA,\d{6}\.\d{2},(\d{4}\.\d{6},[NS],\d{5}\.\d{6},[EW]|,,,),[0-8],\d{2},"),
    "GSV": re.compile(rb"^\$G[PLAB]GSV,\d,\d,\d{2}(,\d{2},\d{2},\d{3},(\d{2})?)*,[0-9A-F]\*[0-9A-F]{2}\r\n$"),
    "ZDA": re.compile(rb"^\$(GN|GP)ZDA,\d{6}\.\d{2},\d{2},\d{2},\d{4},00,00\*"),
    "RMC": re.compile(rb"^\$(GN|GP)RMC,\d{6}\.\d{2},[AV],"),
}


@pytest.mark.parametrize("name", ["rooftop", "building", "soak"])
@pytest.mark.parametrize("rate", [1, 10, 20])
def test_every_sentence_parses_in_pynmeagps(name, rate):
    assert name in list_scenarios()
    sc = Scenario.load(name)
    rx = SimReceiver(sc, rate_hz=rate, seed=2)
    seen: set[str] = set()
    count = 0
    for _t, data in rx.epochs(duration=sc.ttff_s + 20.0):  # no fix, first fix, RTK convergence
        for line in _lines(data):
            msg = NMEAReader.parse(line)  # reference parser; raises NMEAParseError on a bad checksum
            assert msg is not None, line
            seen.add(msg.msgID)
            count += 1
            fmt = FORMATS.get(msg.msgID)
            if fmt is not None:
                assert fmt.match(line), line
            assert len(line) <= 86  # NMEA 0183 nominal 82 chars; receivers reach 86 (docs/sources.md#sentence-length)
    assert {"GGA", "RMC", "GSA", "GSV", "GST", "VTG", "ZDA"} <= seen
    assert count > 40 * rate * 5


def test_decoded_values_match_truth():
    sc = Scenario.load("rooftop")
    rx = SimReceiver(sc, rate_hz=5, seed=4)
    checked = 0
    for _t, data in rx.epochs(duration=90.0):
        truth = rx.last
        msgs = {m.msgID: m for m in (NMEAReader.parse(ln) for ln in _lines(data)) if m.msgID != "GSA"}
        gsas = [m for m in (NMEAReader.parse(ln) for ln in _lines(data)) if m.msgID == "GSA"]
        gga = msgs["GGA"]
        assert gga.quality == nmea.MODES[truth.fix][0]
        if truth.fix == "none":
            assert gga.lat == "" and gga.numSV == 0
            continue
        e, n, u = rx.frame.enu(gga.lat, gga.lon, gga.alt + gga.sep)  # GGA alt = h - sep
        assert (e, n, u) == pytest.approx(truth.err_enu, abs=2e-3)  # 1e-6 minute = 1.9 mm
        assert gga.sep == pytest.approx(sc.sep, abs=0.05)
        assert gga.numSV == sum(s.used for s in truth.sats)
        assert sorted(m.systemId for m in gsas) == ["1", "2", "3", "4"]  # NMEA 4.10+ system ids
        assert gsas[0].PDOP == pytest.approx(truth.dop["pdop"], abs=0.006)
        assert msgs["RMC"].posMode == nmea.MODES[truth.fix][1]
        checked += 1
    assert checked > 200


def test_gsv_lists_signal_id_and_empty_cn0_for_untracked():
    rx = SimReceiver(Scenario.load("building"), rate_hz=1, seed=1)
    empty = 0
    for _t, data in rx.epochs(duration=60.0):
        for line in _lines(data):
            if b"GSV" not in line[:7]:
                continue
            m = NMEAReader.parse(line)
            assert m.signalID in ("1", "7")  # GPS/GLONASS/BeiDou 1, Galileo E1 7 (docs/sources.md#signal-ids, from memory)
            for i in range(1, 5):
                if hasattr(m, f"svid_{i:02d}"):
                    empty += getattr(m, f"cno_{i:02d}") == ""
    assert empty > 0


def test_corrupted_sentences_fail_the_reference_checksum():
    rx = SimReceiver(Scenario.load("soak"), rate_hz=1, seed=1)
    bad = corrupted = noise = 0
    for t, data in rx.epochs(duration=600.0):  # also covers both restarts and the 1980 clock
        if t < 320:
            continue
        truth = rx.last
        corrupted += truth.corrupted
        noise += truth.garbage
        for line in _lines(data):
            start = line.find(b"$")
            if truth.garbage:
                assert start >= 0  # noise never swallows a sentence start
            try:
                NMEAReader.parse(line[start:])
            except NMEAParseError:
                bad += 1
    assert corrupted > 0 and bad == corrupted  # each corrupted sentence fails pynmeagps' checksum
    assert noise == 20 * 40  # soak: 20 s of garbage at 40 bytes per epoch
