"""Satellites: GSV set assembly (incl. broken sets), system ids, PRN numbering, sky expiry."""

from __future__ import annotations

from pynmeagps import NMEAReader, calc_checksum
from pynmeagps.nmeatypes_decodes import SYSTEMID

from livefix.decode import Decoded
from livefix.state import StateModel
from livefix.state.epoch import SYSTEM_ID
from livefix.state.sky import GsvAssembler

GSV = b"$GPGSV,2,1,08,01,40,083,46,02,17,308,41,12,07,344,39,14,22,228,45*75"  # public example (docs/sources.md#example-sentences)


def line(body: str) -> bytes:
    return f"${body}*{calc_checksum(body)}".encode()


def dec(raw: bytes) -> Decoded:
    m = NMEAReader.parse(raw)
    return Decoded(m.talker, m.msgID, {k: v for k, v in vars(m).items() if not k.startswith("_")})


def feed(sm: StateModel, lines: list[bytes], mono: float = 10.0) -> list:
    out = []
    for raw in lines:
        out += sm.on_sentence(dec(raw), mono, 1.7e9 + mono)
    return out


GSV_2_2 = line("GPGSV,2,2,08,15,55,120,44,17,30,200,,22,10,045,,24,70,300,48")  # invented 2nd part


def prns(sm: StateModel) -> list[str]:
    return [s.label for s in sm.sky()]


def test_complete_set_replaces_group() -> None:
    sm = StateModel()
    feed(sm, [GSV, GSV_2_2])
    assert prns(sm) == ["G01", "G02", "G12", "G14", "G15", "G17", "G22", "G24"]
    feed(sm, [line("GPGSV,1,1,02,05,10,010,30,06,20,020,31")])
    assert prns(sm) == ["G05", "G06"]  # the whole group is replaced, never merged


def test_incomplete_sets_keep_what_is_whole() -> None:
    # Issue 13, case 2 (replaces "broken sets are discarded"): a repeated part is not a new set; a
    # set that lost a part keeps the parts that arrived whole, filled from the last set only when
    # the satellites-in-view total says exactly which satellites the lost part held.
    sm = StateModel()
    feed(sm, [GSV, GSV_2_2])
    before = prns(sm)
    third = line("GPGSV,3,3,09,30,10,010,30")
    feed(sm, [GSV, GSV])  # part 1 twice, byte for byte: one part, not a restart
    assert sm.gsv_incomplete == 0
    # numMsg changes: the open 2-part set ended with part 1 only; 4 seen + 4 carried = its total 8
    feed(sm, [third])
    # ... and the stray 3/3: 1 seen + the last set's 8 = its total 9, so they are carried
    assert prns(sm) == sorted(before + ["G30"])
    feed(sm, [line("GPGSV,3,1,09,03,40,083,46,04,17,308,41,05,07,344,39,06,22,228,45"),
              line("GPGSV,3,3,09,30,10,010,30")])  # part 2 lost: 5 seen, 5 + 8 carried != 9
    assert prns(sm) == ["G03", "G04", "G05", "G06", "G30"]  # what arrived whole, nothing guessed
    assert sm.gsv_incomplete == 3  # hand count: the cut 2-part set, the stray 3/3, the set missing 2/3
    ev = [e for e in sm.drain_events() if e.kind == "gsv_incomplete"]
    assert len(ev) == 1  # rate-limited: one event for the burst
    sm.finish()
    tail = [e for e in sm.drain_events() if e.kind == "gsv_incomplete"]
    assert sum(e.data["count"] for e in ev + tail) == 3


def test_groups_per_talker_and_signal() -> None:
    # NMEA 4.10 GSV signal ids (docs/sources.md#signal-ids, from memory): GPS 1 = L1 C/A, 8 = L5-Q; GLONASS 1 = G1
    sm = StateModel()
    feed(sm, [line("GPGSV,1,1,01,10,45,100,42,1"), line("GPGSV,1,1,01,10,45,100,38,8"),
              line("GLGSV,1,1,01,70,30,200,35,1")])
    sky = {s.key: s for s in sm.sky()}
    assert set(sky) == {("G", 10, "1"), ("G", 10, "8"), ("R", 6, "1")}  # GLONASS 70 -> slot 6
    assert sky[("G", 10, "8")].cn0 == 38


def test_glonass_and_sbas_numbering() -> None:
    # NMEA numbering: GLONASS 65-96 = slot + 64, SBAS 33-64 = PRN - 87 (common practice)
    sm = StateModel()
    feed(sm, [line("GLGSV,1,1,02,65,30,200,35,88,20,100,30"), line("GPGSV,1,1,01,46,30,190,40"),
              line("GQGSV,1,1,01,02,60,180,44"), line("GAGSV,1,1,01,11,50,090,41,7"),
              line("GBGSV,1,1,01,35,50,090,41,1")])
    assert sorted(prns(sm)) == sorted(["R01", "R24", "S133", "J02", "E11", "C35"])


def test_gsa_system_ids_and_used() -> None:
    # NMEA 4.10 GSA system id (docs/sources.md#system-ids) - our table must agree with pynmeagps' SYSTEMID
    names = {"G": "GPS", "R": "GLONASS", "E": "Galileo", "C": "Beidou", "J": "QZSS", "I": "NavIC"}
    assert {str(k): names[v] for k, v in SYSTEM_ID.items()} == SYSTEMID
    sm = StateModel()
    feed(sm, [line("GNGGA,101010.00,4807.038,N,01131.000,E,1,05,0.9,545.4,M,46.9,M,,"),
              line("GNGSA,A,3,03,07,,,,,,,,,,,1.8,0.9,1.5,1"),
              line("GNGSA,A,3,66,67,,,,,,,,,,,1.8,0.9,1.5,2"),
              line("GNGSA,A,3,11,,,,,,,,,,,,1.8,0.9,1.5,3"),
              line("GPGSV,1,1,03,03,40,083,46,07,17,308,41,08,10,100,"),
              line("GLGSV,1,1,02,66,30,200,35,68,40,210,36"), line("GAGSV,1,1,01,11,50,090,41,7")])
    [ep] = sm.finish()
    assert ep.used_prns == (("E", 11), ("G", 3), ("G", 7), ("R", 2), ("R", 3))
    flags = {s.label: (s.cn0 is not None, s.used) for s in ep.sats}
    assert flags == {"G03": (True, True), "G07": (True, True), "G08": (False, False),
                     "R02": (True, True), "R04": (True, False), "E11": (True, True)}


def test_combined_gsa_without_system_id_uses_prn_ranges() -> None:
    sm = StateModel()
    feed(sm, [line("GNGSA,A,3,05,44,70,,,,,,,,,,2.0,1.0,1.7")])
    [ep] = sm.finish()
    assert set(ep.used_prns) == {("G", 5), ("S", 131), ("R", 6)}


def test_silent_group_drops_out_after_5_s() -> None:
    sm = StateModel()
    feed(sm, [GSV, GSV_2_2, line("GLGSV,1,1,01,70,30,200,35")], mono=10.0)
    feed(sm, [GSV, GSV_2_2], mono=14.0)
    assert "R06" in prns(sm)
    feed(sm, [GSV, GSV_2_2], mono=15.5)  # GLONASS last listed 5.5 s ago
    assert "R06" not in prns(sm) and len(prns(sm)) == 8
    assert all(s.last_seen_mono == 15.5 for s in sm.sky())


def test_pending_parts_bounded() -> None:
    a = GsvAssembler()
    for k in range(500):
        talker = f"{chr(65 + k % 26)}{chr(65 + k // 26 % 26)}"
        a.add(talker, {"numMsg": 3, "msgNum": 1, "numSV": 9})
    assert len(a._pending) <= GsvAssembler.MAX_GROUPS
