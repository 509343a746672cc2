"""Decoder outcomes: published example sentences, refusal reasons, counters, proprietary and other
sentences, and bad input."""

from __future__ import annotations

import datetime as dt
import random

import pytest
from pynmeagps import NMEAReader
from pynmeagps.nmeahelpers import calc_checksum

from livefix.decode import BAD_CHECKSUM, MALFORMED, NO_CHECKSUM, UNKNOWN, Decoded, Rejected
from livefix.decode.decoder import Decoder

# Public example sentences from the widely used public NMEA data reference page (which states it
# is not taken from the standard); checksums as listed in docs/sources.md#example-sentences.
EXAMPLES = [
    b"$GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,*47",
    b"$GPRMC,123519,A,4807.038,N,01131.000,E,022.4,084.4,230394,003.1,W*6A",
    b"$GPGSA,A,3,04,05,,09,12,,,24,,,,,2.5,1.3,2.1*39",
    b"$GPGSV,2,1,08,01,40,083,46,02,17,308,41,12,07,344,39,14,22,228,45*75",
]


def _cs(body: str) -> bytes:
    return f"${body}*{calc_checksum(body)}".encode("ascii")  # pynmeagps checksum helper


def _public(line: bytes) -> dict:
    msg = NMEAReader.parse(line)
    return {k: v for k, v in vars(msg).items() if not k.startswith("_")}


@pytest.mark.parametrize("line", EXAMPLES)
def test_published_examples_pass_checksum_and_match_reference(line: bytes) -> None:
    # Source: the public NMEA data reference page (checksum values); fields vs pynmeagps 1.1.8.
    got = Decoder().decode(line)
    assert isinstance(got, Decoded)
    assert got.fields == _public(line)


def test_published_gga_values() -> None:
    # Source: the public NMEA data reference page explains this GGA as 12:35:19 UTC, 48°07.038' N,
    # 11°31.000' E, quality 1, 8 satellites, HDOP 0.9, 545.4 m, geoid 46.9 m.
    f = Decoder().decode(EXAMPLES[0]).fields
    assert f["time"] == dt.time(12, 35, 19)
    assert f["lat"] == pytest.approx(48 + 7.038 / 60) and f["lon"] == pytest.approx(11 + 31.0 / 60)
    assert (f["quality"], f["numSV"], f["HDOP"], f["alt"], f["sep"]) == (1, 8, 0.9, 545.4, 46.9)
    # RMC of the same page: 23 March 1994, 22.4 knots, magnetic variation 3.1 W.
    r = Decoder().decode(EXAMPLES[1]).fields
    assert r["date"] == dt.date(1994, 3, 23) and r["spd"] == 22.4 and (r["mv"], r["mvEW"]) == (3.1, "W")


@pytest.mark.parametrize("line", EXAMPLES)
def test_any_single_character_change_is_a_bad_checksum(line: bytes) -> None:
    # NMEA 0183 checksum (XOR of the characters between $ and *): flipping one bit of one
    # character always changes it. Common practice: corrupt lines are refused, not guessed.
    dec = Decoder()
    star = line.index(b"*")
    for i in range(1, star):
        bad = bytearray(line)
        bad[i] ^= 0x01
        got = dec.decode(bytes(bad))
        assert isinstance(got, Rejected)
        assert got.reason in (BAD_CHECKSUM, MALFORMED)  # non-ASCII/odd headers are malformed first
    assert dec.counters.bad_checksum + dec.counters.malformed == star - 1


def test_lowercase_checksum_accepted() -> None:
    # pynmeagps 1.1.8 accepts lowercase hex (LIBRARY-NOTES); so do we.
    line = EXAMPLES[1][:-2] + b"6a"
    assert isinstance(Decoder().decode(line), Decoded)


def test_refusal_reasons_and_counters() -> None:
    dec = Decoder()
    cases = {
        b"$GPGGA,123519,4807.038,N*": NO_CHECKSUM,  # truncated at the checksum
        b"$GPGGA,123519,4807.038,N": NO_CHECKSUM,  # no '*' at all
        b"$GPGGA,123519*4": NO_CHECKSUM,
        b"$GPGGA,123519*00": BAD_CHECKSUM,
        b"$GPGGA,123519*ZZ": BAD_CHECKSUM,
        b"$GPGGA,123519*477": BAD_CHECKSUM,
        _cs("GPGGA,123519,4807.038,N,01131.000,E,x,08"): MALFORMED,  # quality not an int
        b"$GPGGA,12\xb03519*00": MALFORMED,  # non-ASCII
        _cs("GPXYZ,1,2"): UNKNOWN,
        _cs("ZZGGA,123519"): UNKNOWN,  # talker not in the NMEA list pynmeagps carries
    }
    for line, reason in cases.items():
        got = dec.decode(line)
        assert isinstance(got, Rejected) and got.reason == reason, (line, got)
        assert got.raw == line
    c = dec.counters
    assert (c.malformed, c.bad_checksum, c.unknown) == (5, 3, 2)  # malformed includes NO_CHECKSUM
    assert c.rejected_by_type["GGA"] == 9 and c.rejected_by_type["XYZ"] == 1
    assert c.decoded == 0


def test_counts_by_type_and_talker() -> None:
    dec = Decoder()
    for line in EXAMPLES * 3:
        dec.decode(line)
    dec.decode(_cs("GLGSV,1,1,01,70,10,200,30,1"))
    dec.decode(_cs("GNGLL,4807.038,N,01131.000,E,123519,A,A"))  # fallback type
    c = dec.counters
    assert c.decoded == 14 and c.fast == 13
    assert c.by_type == {"GGA": 3, "RMC": 3, "GSA": 3, "GSV": 4, "GLL": 1}
    assert c.by_talker_type["GPGSV"] == 3 and c.by_talker_type["GLGSV"] == 1
    snap = c.copy()
    dec.decode(EXAMPLES[0])
    assert snap.decoded == 14 and dec.counters.decoded == 15  # a copy does not move


def test_other_sentences_go_through_pynmeagps() -> None:
    # Reference: pynmeagps 1.1.8 for types outside the fast path.
    lines = [_cs("GNGLL,4807.038,N,01131.000,E,123519,A,A"), _cs("GPTXT,01,01,02,ANTENNA OK"),
             _cs("GNGBS,123519.00,1.2,0.8,2.1,,,,,1,1"), _cs("GPHDT,123.4,T")]
    dec = Decoder()
    for line in lines:
        got = dec.decode(line)
        assert isinstance(got, Decoded) and got.fields == _public(line), line
    assert dec.counters.fast == 0 and dec.counters.decoded == len(lines)


def test_proprietary_pass_through() -> None:
    # Invented proprietary sentence ("$P" + maker/type text), never handed to a parser that
    # does not know it.
    dec = Decoder()
    got = dec.decode(_cs("PXYZA,1,,hello"))
    assert isinstance(got, Decoded) and got.proprietary
    assert (got.talker, got.msg_id, got.fields) == ("P", "XYZA", {"payload": ["1", "", "hello"]})
    assert isinstance(dec.decode(_cs("PXYZA,1")[:-2] + b"00"), Rejected)
    c = dec.counters
    assert c.proprietary == 1 and c.by_talker_type["PXYZA"] == 1 and c.bad_checksum == 1


def test_exclamation_sentences_are_checked_and_unknown() -> None:
    # NMEA 0183: '!' sentences use the same checksum over the text between '!' and '*'.
    body = "XXABC,1,1,,A,hello,0"
    line = f"!{body}*{calc_checksum(body)}".encode("ascii")
    got = Decoder().decode(line)
    assert isinstance(got, Rejected) and got.reason == UNKNOWN


@pytest.mark.parametrize("talker", ["GP", "GL", "GA", "GB", "BD", "GQ", "GI", "GN"])
def test_every_gnss_talker(talker: str) -> None:
    # Talker list: NMEA 0183 (docs/sources.md#talker-ids); fields vs pynmeagps 1.1.8.
    line = _cs(f"{talker}GSV,1,1,02,01,40,083,46,02,17,308,,1")
    got = Decoder().decode(line)
    assert isinstance(got, Decoded) and got.talker == talker and got.fields == _public(line)
    assert got.fields["signalID"] == "1" and got.fields["cno_02"] == ""


def test_random_bytes_never_raise_and_every_line_is_counted() -> None:
    r = random.Random(5)
    dec = Decoder()
    seeds = EXAMPLES + [_cs("PXYZA,1"), _cs("GNGLL,4807.038,N,01131.000,E,123519,A,A")]
    n = 0
    for _ in range(4000):
        kind = r.random()
        if kind < 0.3:
            line = bytes(r.randrange(256) for _ in range(r.randint(0, 120)))
        elif kind < 0.5:
            line = b"$" + bytes(r.randrange(32, 127) for _ in range(r.randint(0, 90)))
        else:  # a real sentence with a few bytes overwritten, cut or doubled
            b = bytearray(r.choice(seeds))
            for _ in range(r.randint(1, 4)):
                i = r.randrange(len(b))
                op = r.random()
                if op < 0.5:
                    b[i] = r.randrange(256)
                elif op < 0.8:
                    del b[i:]
                    if not b:
                        b = bytearray(b"$")
                else:
                    b[i:i] = b[i:i + 3]
            line = bytes(b)
        got = dec.decode(line)
        assert isinstance(got, Decoded | Rejected)
        n += 1
    c = dec.counters
    assert c.decoded + c.bad_checksum + c.malformed + c.unknown == n


def test_repeated_lines_share_one_read_only_value() -> None:
    # Common practice: a repeated line gives the same value; since it is shared, nobody may change
    # it (a consumer that tries gets TypeError) and every repeat still equals the reference parse.
    dec = Decoder()
    a = dec.decode(EXAMPLES[2])
    b = dec.decode(EXAMPLES[2])
    assert b is a and b.fields == _public(EXAMPLES[2])
    with pytest.raises(TypeError):
        a.fields["PDOP"] = -1.0  # type: ignore[index]
    assert dec.decode(EXAMPLES[2]).fields == _public(EXAMPLES[2])
    assert dec.counters.decoded == 3


def test_oversized_gsv_goes_to_reference() -> None:
    # Reference: pynmeagps 1.1.8 names blocks past 99 with three digits (svid_100); the fast path
    # hands such a line to it rather than guess.
    blocks = ",".join(f"{i % 99 + 1:02d},10,100,30" for i in range(101))
    line = _cs(f"GPGSV,1,1,99,{blocks},1")
    got = Decoder().decode(line)
    assert isinstance(got, Decoded) and got.fields == _public(line) and "svid_100" in got.fields


@pytest.mark.parametrize("body", [
    "GPGGA", "GPGGA,", "GPGGA" + "," * 20, "GNRMC,,V,,,,,,,,,,N,V", "GPGSV,1,1,00",
    "GPGSV,1,1,00,1", "GPGSV,1", "GPGSA,A", "GNGGA,123519.00," + ",".join(["1"] * 40),
])
def test_short_long_and_empty_lines_match_reference(body: str) -> None:
    # Reference: pynmeagps 1.1.8 (too few fields -> attributes absent, extra fields dropped);
    # the last case is over 128 bytes and takes the general path.
    line = _cs(body)
    want = reference_or_none(line)
    got = Decoder().decode(line)
    if want is None:
        assert isinstance(got, Rejected)
    else:
        assert isinstance(got, Decoded) and got.fields == want


def reference_or_none(line: bytes) -> dict | None:
    try:
        return _public(line)
    except Exception:
        return None


def test_bytearray_and_memoryview_lines() -> None:
    # Common practice: framers may hand out bytearray slices; the result must not depend on it.
    dec = Decoder()
    for line in (bytearray(EXAMPLES[0]), memoryview(EXAMPLES[0])):
        got = dec.decode(line)
        assert isinstance(got, Decoded) and got.fields == _public(EXAMPLES[0])
