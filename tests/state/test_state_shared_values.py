"""Shared values on the hot path: the decoder hands back one read-only Decoded per repeated line and
the state model memoises by identity; none of that may change a single published value."""

from __future__ import annotations

from pynmeagps import calc_checksum

from livefix.decode.decoder import Decoder
from livefix.sources.base import Chunk
from livefix.state import StateModel


def line(body: str) -> bytes:
    return f"${body}*{calc_checksum(body)}".encode()


def _burst(hms: str, cno: int = 46) -> list[bytes]:
    """One epoch of invented sentences (GGA, GSA, two-part GPS GSV set, one GLONASS set)."""
    return [
        line(f"GPGGA,{hms},4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,"),
        line("GNGSA,A,3,01,02,12,14,,,,,,,,,1.8,0.9,1.5,1"),
        line(f"GPGSV,2,1,08,01,40,083,{cno},02,17,308,41,12,07,344,39,14,22,228,45,1"),
        line("GPGSV,2,2,08,15,55,120,44,17,30,200,,22,10,045,,24,70,300,48,1"),
        line("GLGSV,1,1,01,70,30,200,35,1"),
    ]


def _stream() -> list[tuple[float, bytes]]:
    """(mono, line): repeats, a C/N0 change, a broken set, a stray part and junk, at 10 Hz."""
    out: list[tuple[float, bytes]] = []
    for i in range(60):
        mono = 10.0 + i / 10
        hms = f"1200{i // 10:02d}.{i % 10}0"
        burst = _burst(hms, cno=46 if i < 30 else 47)
        if i == 40:
            del burst[3]  # part 2/2 lost: the set is broken, the old one stays
        if i == 45:
            burst.insert(2, line("GPGSV,2,2,08,15,55,120,44,17,30,200,,22,10,045,,24,70,300,48,1"))
        out += [(mono, ln) for ln in burst]
    return out


def _epochs(line_cache: int) -> tuple[list, list, list]:
    dec, sm = Decoder(line_cache=line_cache), StateModel()
    eps: list = []
    skies: list = []
    for mono, ln in _stream():
        sm.on_chunk(mono, 1.7e9 + mono)
        eps += sm.on_sentence(dec.decode(ln), mono, 1.7e9 + mono)
        skies.append(sm.sky())
    eps += sm.finish()
    return eps, skies, sm.drain_events()


def test_line_cache_on_and_off_give_the_same_epochs_sky_and_events() -> None:
    # Common practice (a differential check): memoising by identity is only an optimisation, so
    # the same stream with the decoder's line cache off must give equal values everywhere.
    on, off = _epochs(1024), _epochs(0)
    assert [repr(e) for e in on[0]] == [repr(e) for e in off[0]]
    assert [repr(s) for s in on[1]] == [repr(s) for s in off[1]]
    assert [repr(e) for e in on[2]] == [repr(e) for e in off[2]]
    assert len(on[0]) == 60


def test_epoch_sats_is_one_tuple_while_the_sky_is_unchanged() -> None:
    eps, skies, _ = _epochs(1024)
    first = eps[1].sats
    assert all(e.sats is first for e in eps[1:30])  # nothing but the listing times changed
    assert all(s.last_seen_mono == 0.0 for s in first)  # per-epoch times live in sky() only
    assert eps[30].sats is not first  # the C/N0 of G01 changed: a new tuple
    assert {s.cn0 for s in eps[30].sats if s.prn == 1 and s.system == "G"} == {47}
    # sky() says when each satellite was last listed: in the epoch just fed
    assert {s.last_seen_mono for s in skies[-1]} == {10.0 + 59 / 10}


def test_sky_seen_tracks_each_group_separately() -> None:
    dec, sm = Decoder(), StateModel()
    for mono, ln in ((10.0, _burst("120000.00")[4]), (11.0, _burst("120001.00")[2]),
                     (11.0, _burst("120001.00")[3])):
        sm.on_sentence(dec.decode(ln), mono, 1.7e9 + mono)
    seen = {s.system: s.last_seen_mono for s in sm.sky()}
    assert seen == {"R": 10.0, "G": 11.0}


def test_pipeline_counts_every_repeated_line() -> None:
    from livefix.pipeline import Pipeline

    p = Pipeline()
    data = b"".join(ln + b"\r\n" for _, ln in _stream())
    p.feed(Chunk(10.0, 1.7e9, data))
    p.finish()
    c = p.counters()
    assert c.lines == c.decoded == len(_stream())
    assert c.by_talker_type["GPGSV"] == sum(b"GPGSV" in ln for _, ln in _stream())


def test_assembler_hands_back_one_list_while_a_set_repeats() -> None:
    # Common practice: receivers repeat a set unchanged for a second at 10-20 Hz; the same list
    # object lets the sky keep its sorted layout; a changed C/N0 makes a new list.
    from livefix.state.sky import GsvAssembler

    dec, a = Decoder(), GsvAssembler()
    p1, p2, _ = _burst("120000.00")[2:5]
    _, first, _ = (a.add("GP", dec.decode(p1).fields), a.add("GP", dec.decode(p2).fields))[1]
    _, again, broken = (a.add("GP", dec.decode(p1).fields), a.add("GP", dec.decode(p2).fields))[1]
    assert again is first and broken == 0 and len(first) == 8
    # the same eight satellites split 4 + 3 + 1 (unusual, but a set is its satellites)
    parts = [line("GPGSV,3,1,08,01,40,083,46,02,17,308,41,12,07,344,39,14,22,228,45,1"),
             line("GPGSV,3,2,08,15,55,120,44,17,30,200,,22,10,045,,1"),
             line("GPGSV,3,3,08,24,70,300,48,1")]
    _, resplit, _ = [a.add("GP", dec.decode(x).fields) for x in parts][-1]
    assert resplit is first
    _, changed, _ = (a.add("GP", dec.decode(_burst("120000.00", cno=40)[2]).fields),
                     a.add("GP", dec.decode(p2).fields))[1]
    assert changed is not first and changed[0][4] == 40 and changed[1:] == first[1:]
