"""GSA used lists (issue 13, case 3): several GSA per epoch without system ID, the union over the
epoch, placing by NMEA number blocks and by the satellites in view, three-digit BeiDou numbers,
unknown numbers reported, NMEA 4.10 system IDs, and the used list between 1 Hz GSA at 20 Hz."""

from __future__ import annotations

from pathlib import Path

import pytest
from nmeakit import sentence as cs  # checksum from the standard's definition

from livefix.decode.decoder import Decoder
from livefix.state import StateModel
from livefix.state.prn import user_prn
from livefix.state.used import USED_HOLD_S, classify, place

CORPUS = Path(__file__).resolve().parents[3] / "shared" / "realdata" / "corpus"




def gga(t: str, n: int = 12, hdop: str = "1.3") -> str:
    return f"GPGGA,{t},5000.000,N,01000.000,E,1,{n:02d},{hdop},100.0,M,45.0,M,,"


# A receiver that talks GP for everything (invented values): GPS, GLONASS, Galileo and BeiDou in
# view, Galileo and BeiDou numbered as their own systems number them.
SKY = [
    "GPGSV,1,1,04,10,65,099,37,23,31,052,24,27,59,156,46,08,70,261,",
    "GLGSV,1,1,02,69,47,099,40,85,63,303,",
    "GAGSV,1,1,04,10,71,255,30,12,82,078,21,16,46,244,34,24,34,212,38",
    "GBGSV,1,1,04,11,48,106,36,34,23,110,32,42,46,124,38,43,75,125,32",
]
# One GSA per constellation, all GP, no system ID (pre-4.10 practice, docs/sources.md#gsa-per-constellation)
GSAS = ["GPGSA,A,3,10,23,27,,,,,,,,,,2.1,1.3,1.7",
        "GPGSA,A,3,69,,,,,,,,,,,,2.1,1.3,1.7",
        "GPGSA,A,3,10,12,16,24,,,,,,,,,2.1,1.3,1.7",
        "GPGSA,A,3,11,34,42,43,,,,,,,,,2.1,1.3,1.7"]


def run(epochs: list[list[str]], step: float = 1.0, cache: int = 1024) -> list:
    sm, dec = StateModel(), Decoder(line_cache=cache)
    out = []
    for i, lines in enumerate(epochs):
        mono = 10.0 + i * step
        for body in lines:
            out += sm.on_sentence(dec.decode(cs(body)), mono, 1.7e9 + mono)
    return out + sm.finish()


def test_one_gsa_per_constellation_without_system_id_is_placed_and_united() -> None:
    eps = run([[gga("120000.00"), *GSAS, *SKY], [gga("120001.00"), *GSAS, *SKY]])
    # hand placement: GPS 10/23/27 are GPS in view; 69 is GLONASS slot 5 (NMEA 65-96 = slot + 64,
    # common practice); 10/12/16/24 are not all GPS in view but all Galileo in view; 11/34/42/43
    # are BeiDou in view (34, 42, 43 would read as SBAS, which is not in view)
    want = {("G", 10), ("G", 23), ("G", 27), ("R", 5), ("E", 10), ("E", 12), ("E", 16), ("E", 24),
            ("C", 11), ("C", 34), ("C", 42), ("C", 43)}
    for ep in eps:
        assert set(ep.used_prns) == want  # the union of the four lists; 12 = GGA's count
        assert ep.unknown_ids == ()
    assert sum(s.used for s in eps[-1].sats) == 12


def test_line_cache_on_and_off_agree() -> None:
    # the decoder's shared values memoise by identity only (DEVELOPERS.md): equal epochs both ways
    epochs = [[gga(f"12000{i}.00"), *GSAS, *SKY] for i in range(4)]
    assert [repr(e) for e in run(epochs, cache=1024)] == [repr(e) for e in run(epochs, cache=0)]


def test_block_reading_wins_when_it_is_in_view() -> None:
    # numbers 1-32 that are GPS satellites in view stay GPS even if Galileo has the same numbers
    view = frozenset({("G", 10), ("G", 12), ("E", 10), ("E", 12)})
    assert place((10, 12), view) == ((("G", 10), ("G", 12)), ())
    # two other constellations list them all: ambiguous, so the NMEA reading stands
    view = frozenset({("E", 3), ("E", 4), ("C", 3), ("C", 4)})
    assert place((3, 4), view) == ((("G", 3), ("G", 4)), ())


def test_three_digit_beidou_and_other_blocks() -> None:
    # BeiDou written 201-263 or 401-463, Galileo 301-336, QZSS 193-, SBAS 120-158 written as is
    # (docs/sources.md#satellite-numbers, from memory: 201-263 or 401-463 for BeiDou)
    assert [user_prn(None, n) for n in (203, 263, 401, 463, 305, 193, 133)] == [
        ("C", 3), ("C", 63), ("C", 1), ("C", 63), ("E", 5), ("J", 1), ("S", 133)]
    eps = run([[gga("120000.00", n=4), "GNGSA,A,3,203,214,438,458,,,,,,,,,2.0,1.1,1.7",
                "GBGSV,1,1,04,03,40,050,45,14,35,120,44,38,60,200,47,58,25,280,41"]])
    assert set(eps[0].used_prns) == {("C", 3), ("C", 14), ("C", 38), ("C", 58)}


def test_unknown_numbers_are_reported_not_dropped() -> None:
    # 97-119 and 159-192 fit no NMEA block (docs/sources.md#satellite-numbers: a number no block fits is unknown)
    eps = run([[gga("120000.00", n=3), "GNGSA,A,3,05,99,170,,,,,,,,,,2.0,1.1,1.7",
                "GPGSV,1,1,02,05,40,050,45,99,35,120,44"]])
    ep = eps[0]
    assert ep.used_prns == (("G", 5),)
    assert ep.unknown_ids == ("GNGSA 170", "GNGSA 99", "GPGSV 99")


def test_system_id_of_nmea_410_still_places() -> None:
    # NMEA 4.10 system IDs (docs/sources.md#system-ids): 1 GPS, 2 GLONASS, 3 Galileo, 4 BeiDou; numbers native
    eps = run([[gga("120000.00", n=6), "GNGSA,A,3,03,07,,,,,,,,,,,1.8,0.9,1.5,1",
                "GNGSA,A,3,66,,,,,,,,,,,,1.8,0.9,1.5,2", "GNGSA,A,3,11,,,,,,,,,,,,1.8,0.9,1.5,3",
                "GNGSA,A,3,22,401,,,,,,,,,,,1.8,0.9,1.5,4"]])
    assert set(eps[0].used_prns) == {("G", 3), ("G", 7), ("R", 2), ("E", 11), ("C", 22), ("C", 1)}
    assert classify(3, "GN", (11, 311, "")).placed == (("E", 11), ("E", 11))  # 311 = Galileo + 300


def test_gpgsa_with_an_empty_glgsa() -> None:
    # a receiver sending GPGSA and an empty GLGSA (both with DOPs): the used list is the GPS one
    eps = run([[gga("120000.00", n=4, hdop="1.00"), "GLGSA,A,1,,,,,,,,,,,,,,,",
                "GPGSA,A,3,31,27,16,08,,,,,,,,,1.95,1.00,1.68"]])
    ep = eps[0]
    assert set(ep.used_prns) == {("G", 31), ("G", 27), ("G", 16), ("G", 8)}
    assert (ep.pdop, ep.vdop, ep.fix_dim) == (1.95, 1.68, 3)  # from the GSA that carries DOPs


def test_used_list_holds_between_gsa_at_a_lower_rate() -> None:
    # fixes at 20 Hz, GSA once a second: epochs between keep the last list for USED_HOLD_S
    epochs = [[gga(f"1200{i // 20:02d}.{(i % 20) * 5:02d}"), *(GSAS[:1] if i % 20 == 0 else [])]
              for i in range(40)]
    eps = run(epochs, step=0.05)
    assert all(set(e.used_prns) == {("G", 10), ("G", 23), ("G", 27)} for e in eps)
    late = run([[gga("120000.00"), GSAS[0]], [gga("120010.00")]], step=USED_HOLD_S + 1)
    assert late[1].used_prns == ()  # a GSA older than USED_HOLD_S no longer says what is used


def test_corpus_one_gsa_per_constellation() -> None:
    path = CORPUS / "ratatosk_nmea_log.txt"
    if not path.exists():
        pytest.skip("shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
    # ratatosk_nmea_log.txt (see shared/realdata/SOURCES.md): GP talker for everything, four GSA
    # without system ID; every fix epoch's used count must equal the GGA satellites-used field
    sm, dec = StateModel(), Decoder()
    eps = []
    for i, raw in enumerate(path.read_bytes().splitlines()):
        msg = dec.decode(raw.strip())
        if hasattr(msg, "fields"):
            eps += sm.on_sentence(msg, 10.0 + i * 0.02, 1.7e9 + i * 0.02)
    eps += sm.finish()
    fixed = [e for e in eps[1:] if e.quality and e.num_sv]
    assert len(fixed) > 20
    assert all(len(e.used_prns) == e.num_sv for e in fixed)
    assert all(not e.unknown_ids for e in eps)


def test_gsa_with_per_constellation_dops_gives_no_solution_dop() -> None:
    # A receiver whose GSA per constellation carries that constellation's own DOPs (GPS 1.9, GLONASS
    # 3.9, Galileo 0.0): none is the solution's, so PDOP/VDOP are not measured and HDOP is GGA's
    eps = run([[gga("120000.00", n=9, hdop="0.6"), "GPGSA,A,3,10,12,14,15,,,,,,,,,1.9,1.2,1.5",
                "GLGSA,A,3,65,71,72,,,,,,,,,,3.9,2.1,3.3", "GAGSA,A,3,04,19,,,,,,,,,,,0.0,0.0,0.0"]])
    ep = eps[0]
    assert (ep.pdop, ep.vdop, ep.hdop, ep.fix_dim) == (None, None, 0.6, 3)
    assert len(ep.used_prns) == 9  # hand count: 4 + 3 + 2
