"""GSV sets assembled by total and sequence number (issue 13, case 2): sets whose parts change
talker, repeated and lost parts, NMEA 4.10 signal sets interleaved, and the corpus log that has the
mixed-talker pattern. Fixtures are invented; checksums are computed here."""

from __future__ import annotations

from collections import Counter
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from nmeakit import sentence as cs  # checksum from the standard's definition

from livefix.decode.decoder import Decoder
from livefix.state import StateModel, gsv
from livefix.state import model as state_model

CORPUS = Path(__file__).resolve().parents[3] / "shared" / "realdata" / "corpus"


@pytest.fixture(autouse=True, params=[False, True], ids=["reference", "native"])
def assembler(request: pytest.FixtureRequest, monkeypatch: pytest.MonkeyPatch) -> Callable[[], object]:
    """Every test on both GSV assemblers: the pure-Python reference and its C twin (when built),
    in the state model too (whichever name it builds its assembler from)."""
    native = request.param
    if native and gsv._CORE is None:
        pytest.skip("livefix.state._gsvcore is not built")

    def make(*_: object) -> object:
        return gsv.make_assembler(native)

    monkeypatch.setattr(state_model, "GsvAssembler", make, raising=False)
    monkeypatch.setattr(state_model, "make_assembler", make, raising=False)
    return make




# One set of 13 satellites whose parts come from three talkers, all "x of 4" (invented values).
MIXED = [
    "GPGSV,4,1,13,02,40,050,45,05,35,120,44,12,60,200,47,15,25,280,41",
    "GPGSV,4,2,13,18,50,330,46,25,15,020,38",
    "GLGSV,4,3,13,66,45,090,43,67,30,160,40,75,55,240,42,82,20,300,39",
    "GAGSV,4,4,13,03,65,010,46,11,35,210,44,27,20,140,41",
]


def feed(lines: list[str], sm: StateModel | None = None, dec: Decoder | None = None,
         mono: float = 10.0) -> tuple[StateModel, list]:
    sm = sm or StateModel()
    dec = dec or Decoder()
    eps = []
    for body in lines:
        eps += sm.on_sentence(dec.decode(cs(body)), mono, 1.7e9 + mono)
    return sm, eps


def by_system(sm: StateModel) -> dict[str, int]:
    return dict(Counter(s.system for s in sm.sky()))


def test_set_spanning_talkers_is_one_set() -> None:
    # Issue 13, case 2: 13 satellites, 6 GPS / 4 GLONASS / 3 Galileo (hand count of MIXED)
    sm, _ = feed(MIXED)
    assert by_system(sm) == {"G": 6, "R": 4, "E": 3}
    assert len(sm.sky()) == 13  # the satellites-in-view total of every part
    assert sm.gsv_incomplete == 0
    # each satellite's constellation from its own part's talker: GLONASS 66 -> slot 2 (NMEA 65-96 =
    # slot + 64, common practice), Galileo as written under GA
    labels = {s.label for s in sm.sky()}
    assert {"R02", "R03", "R11", "R18", "E03", "E11", "E27", "G02", "G25"} <= labels


def test_set_spanning_talkers_repeats_with_line_cache_on_and_off() -> None:
    # The identity memo of the decoder's shared values must not change a result (DEVELOPERS.md)
    skies = []
    for cache in (1024, 0):
        sm, dec = StateModel(), Decoder(line_cache=cache)
        for i in range(3):
            feed(MIXED, sm, dec, mono=10.0 + i)
        skies.append([repr(s) for s in sm.sky()])
        assert sm.gsv_incomplete == 0
    assert skies[0] == skies[1] and len(skies[0]) == 13


def test_gn_parts_take_constellation_from_the_nmea_ranges() -> None:
    # A set listed under GN: 1-32 GPS, 33-64 SBAS (PRN = n + 87), 65-96 GLONASS (slot + 64)
    # (NMEA 0183, docs/sources.md#satellite-numbers, from memory); a GN part inside a mixed set reads the same way
    sm, _ = feed(["GPGSV,2,1,06,07,40,050,45,08,35,120,44,44,30,200,40,70,20,280,41",
                  "GNGSV,2,2,06,71,50,330,46,09,15,020,38"])
    assert sorted(s.label for s in sm.sky()) == ["G07", "G08", "G09", "R06", "R07", "S131"]


def test_repeated_part_is_not_a_new_set() -> None:
    sm, _ = feed(["GPGSV,3,1,09,01,40,083,46,02,17,308,41,12,07,344,39,14,22,228,45",
                  "GPGSV,3,2,09,15,55,120,44,17,30,200,,22,10,045,,24,70,300,48",
                  "GPGSV,3,2,09,15,55,120,44,17,30,200,,22,10,045,,24,70,300,48",  # sent twice
                  "GPGSV,3,3,09,30,10,010,30"])
    assert len(sm.sky()) == 9 and sm.gsv_incomplete == 0  # hand count: 4 + 4 + 1


def test_lost_part_keeps_what_arrived_whole() -> None:
    first = ["GPGSV,3,1,09,01,40,083,46,02,17,308,41,12,07,344,39,14,22,228,45",
             "GPGSV,3,2,09,15,55,120,44,17,30,200,,22,10,045,,24,70,300,48",
             "GPGSV,3,3,09,30,10,010,30"]
    # a log that starts with the last parts of a set: they are kept, not thrown away
    sm, _ = feed(first[1:])
    assert sorted(s.prn for s in sm.sky()) == [15, 17, 22, 24, 30]
    assert sm.gsv_incomplete == 1
    sm, _ = feed(first, sm)
    # next second, part 2 is lost and part 1 has new C/N0: 5 arrived; the total (9) says the 4
    # satellites not listed are exactly the previous set's 15, 17, 22, 24 -> carried over
    feed([first[0].replace("083,46", "083,40"), first[2]], sm, mono=11.0)
    sky = {s.prn: s for s in sm.sky()}
    assert sorted(sky) == [1, 2, 12, 14, 15, 17, 22, 24, 30]
    assert sky[1].cn0 == 40 and sky[15].cn0 == 44
    assert sm.gsv_incomplete == 2


def test_signal_sets_interleave() -> None:
    # NMEA 4.10 GSV signal IDs (docs/sources.md#signal-ids, from memory): GPS 1 = L1 C/A, 8 = L5-Q; one set per
    # constellation and signal, parts of the two sets interleaved
    sm, _ = feed(["GPGSV,2,1,05,01,40,083,46,02,17,308,41,12,07,344,39,14,22,228,45,1",
                  "GPGSV,1,1,02,01,40,083,44,12,07,344,36,8",
                  "GPGSV,2,2,05,15,55,120,44,1"])
    keys = sorted((s.prn, s.signal) for s in sm.sky())
    assert keys == [(1, "1"), (1, "8"), (2, "1"), (12, "1"), (12, "8"), (14, "1"), (15, "1")]
    assert sm.gsv_incomplete == 0


def test_a_talker_change_needs_the_same_total_and_the_next_part(assembler: Callable[[], object]) -> None:
    # a GL part 3/4 with another satellites-in-view total is not the GP set's part 3
    a: Any = assembler()
    dec = Decoder()
    for body in MIXED[:2]:
        a.add(body[:2], dec.decode(cs(body)).fields)
    _, sats, n = a.add("GL", dec.decode(cs(MIXED[2].replace("4,3,13", "4,3,12"))).fields)
    assert sats is None and n == 0
    assert len(a._pending) == 2  # the GP set still waits; the GL part started its own


def _first_full_set(path: Path) -> dict[str, int]:
    sm, dec = StateModel(), Decoder()
    for raw in path.read_bytes().splitlines():
        if b"GSV" not in raw[:6]:
            continue
        msg = dec.decode(raw.strip())
        if not hasattr(msg, "fields"):
            continue
        sm.on_sentence(msg, 10.0, 1.7e9)
        if msg.fields.get("msgNum") == msg.fields.get("numMsg") == 4:
            return by_system(sm)
    return {}


def test_corpus_set_spanning_talkers() -> None:
    path = CORPUS / "nmeaparser_R2SampleData.txt"
    if not path.exists():
        pytest.skip("shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
    # nmeaparser_R2SampleData.txt (see shared/realdata/SOURCES.md): its first set, GPGSV 1-2/4,
    # GLGSV 3/4, GAGSV 4/4, is 13 satellites, 6 GPS / 4 GLONASS / 3 Galileo (issue 13, case 2)
    assert _first_full_set(path) == {"G": 6, "R": 4, "E": 3}


def test_last_part_sent_twice_after_the_set_completed() -> None:
    sm, _ = feed(["GPGSV,2,1,05,01,40,083,46,02,17,308,41,12,07,344,39,14,22,228,45",
                  "GPGSV,2,2,05,15,55,120,44", "GPGSV,2,2,05,15,55,120,44"])
    assert len(sm.sky()) == 5 and sm.gsv_incomplete == 0  # a repeat, not a stray part of a new set
