"""The C twin of the GSV set assembler (livefix/state/_gsvcore.c) against the reference, the
pure-Python GsvAssembler: every add() result (type-exact), the counters, last_unknown and the
unfinished sets after each step, and the identity pattern of the returned lists (a repeated set is
the same list object on both or on neither; livefix.state.sky skips work by that identity).

Inputs: the GSV lines of every log of the shared real-data corpus, every simulator dialect at
10 Hz, and seeded random part sequences (bench/fuzz.py gsv_parts: lost, repeated and stray parts,
sets over several talkers, broken part numbers, floods of groups, dicts and other mappings).
Skipped when the extension is not built.
"""

from __future__ import annotations

import gc
import random
import weakref
from itertools import islice
from types import MappingProxyType, ModuleType
from typing import Any

import pytest
from twinkit import CORPUS, CORPUS_FILES, bench_fuzz

from livefix.decode.decoder import Decoder
from livefix.framing import Framer
from livefix.sim import Scenario, SimReceiver
from livefix.sim.dialects import DIALECTS
from livefix.state import gsv
from livefix.state.gsv import make_assembler

core = pytest.importorskip("livefix.state._gsvcore", reason="livefix.state._gsvcore is not built (no compiler?)")


def _fuzz() -> ModuleType:
    return bench_fuzz()  # bench/fuzz.py: the generators `make fuzz` runs under the sanitizers


class Twin:
    """Both assemblers fed the same parts, compared after every step."""

    def __init__(self) -> None:
        self.c, self.p = make_assembler(native=True), make_assembler(native=False)
        self.last: dict[Any, tuple[list, list]] = {}  # group -> (C list, reference list) last returned
        self.steps = self.sets = self.reused = 0

    def add(self, talker: Any, f: Any) -> None:
        c, p = self.c, self.p
        errors: list[Exception | None] = []
        results = []
        for a in (c, p):
            try:
                results.append(a.add(talker, f))
                errors.append(None)
            except Exception as err:  # noqa: BLE001 - compared below
                results.append(None)
                errors.append(err)
        self.steps += 1
        where = f"step {self.steps}: {talker!r} {dict(f) if hasattr(f, 'items') else f!r}"
        if errors != [None, None]:
            assert [type(e) for e in errors] == [type(errors[1])] * 2, where
            assert str(errors[0]) == str(errors[1]), where
            return
        rc, rp = results
        assert repr(rc) == repr(rp), where  # repr: 45 and 45.0 and True differ
        assert (c.broken, c.unmapped, repr(c.last_unknown)) == (p.broken, p.unmapped, repr(p.last_unknown)), where
        pending = {k: (q.num_msg, q.next_msg, int(q.missing)) for k, q in p._pending.items()}
        assert list(c._pending.items()) == list(pending.items()), where  # same sets waiting, same order
        if rc[1] is not None:
            self.sets += 1
            prev = self.last.get(rp[0])
            if prev is not None:
                assert (prev[0] is rc[1]) == (prev[1] is rp[1]), where + ": list identity differs"
                self.reused += prev[1] is rp[1]
            self.last[rp[0]] = (rc[1], rp[1])


def gsv_messages(data: bytes, chunk: int = 4096) -> list[tuple[str, Any]]:
    """(talker, fields) of every GSV line of a byte stream, framed and decoded as livefix does."""
    fr, dec = Framer(), Decoder()
    lines: list[bytes] = []
    for i in range(0, len(data), chunk):
        lines += fr.feed(data[i:i + chunk])
    lines += fr.finish()
    out = []
    for ln in lines:
        msg = dec.decode(ln)
        if getattr(msg, "msg_id", None) == "GSV" and hasattr(msg, "fields"):
            out.append((msg.talker, msg.fields))
    return out


def run(messages: list[tuple[str, Any]]) -> Twin:
    t = Twin()
    for talker, f in messages:
        t.add(talker, f)
    return t


def test_core_caps_match_the_reference() -> None:
    # a stale build with other caps would silently fall back; this makes it fail instead
    assert (core.MAX_PARTS, core.MEMO_MAX, core.MAX_GROUPS) == (gsv.MAX_PARTS, gsv.MEMO_MAX, gsv.GsvAssembler.MAX_GROUPS)
    assert type(make_assembler(native=True)).__module__ == "livefix.state._gsvcore"


def test_make_assembler_follows_the_switch(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    assert type(make_assembler()) is core.GsvAssembler
    monkeypatch.setenv("LIVEFIX_PURE", "1")
    assert type(make_assembler()) is gsv.GsvAssembler
    assert type(make_assembler(native=True)) is core.GsvAssembler  # tests ask for it explicitly
    monkeypatch.setattr(gsv, "_CORE", None)
    monkeypatch.delenv("LIVEFIX_PURE")
    assert type(make_assembler()) is gsv.GsvAssembler
    with pytest.raises(RuntimeError):
        make_assembler(native=True)


@pytest.mark.skipif(not CORPUS_FILES, reason="shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
@pytest.mark.parametrize("name", CORPUS_FILES)
def test_corpus_logs(name: str) -> None:
    # shared/realdata/corpus/<name>: a public log, source in shared/realdata/SOURCES.md
    msgs = gsv_messages((CORPUS / name).read_bytes())
    t = run(msgs)
    assert t.steps == len(msgs)


def test_corpus_has_sets() -> None:
    # the corpus runs above must have compared real sets, not only stray lines
    if not CORPUS_FILES:
        pytest.skip("shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
    # gsvnoise_test.nmea (see shared/realdata/SOURCES.md): a 10 Hz receiver whose GSV sets often
    # repeat unchanged, so list reuse is compared too
    t = run(gsv_messages((CORPUS / "gsvnoise_test.nmea").read_bytes()))
    assert t.sets > 100 and t.reused > 100


DIALECT_RUNS = ["clean", *DIALECTS, ",".join(n for n in DIALECTS if n not in (
    "rate-5hz", "rate-10hz", "rate-20hz", "gga-2hz-zda-1hz", "rmc-10hz-gga-1hz", "gns-only"))]


@pytest.mark.parametrize("dialect", DIALECT_RUNS, ids=[*DIALECT_RUNS[:-1], "all-at-once"])
def test_simulator_dialects(dialect: str) -> None:
    rx = SimReceiver(Scenario.load("rooftop"), rate_hz=10, seed=1, dialect=dialect)
    data = b"".join(chunk for _, chunk in rx.epochs(60.0))
    t = run(gsv_messages(data))
    assert t.sets > 0


@pytest.mark.parametrize("seed", [1, 2, 3, 4])
def test_random_part_sequences(seed: int) -> None:
    t = run(list(islice(_fuzz().gsv_parts(random.Random(seed)), 25_000)))
    assert t.sets > 1000 and t.reused > 100  # complete sets, and sets handed back as the same list


def _part(num: Any, k: Any, total: Any, svids: list[int], sid: Any = "") -> dict:
    d: dict[str, Any] = {"numMsg": num, "msgNum": k, "numSV": total}
    for i, s in enumerate(svids, 1):
        d.update({f"svid_{i:02d}": s, f"elv_{i:02d}": 40, f"az_{i:02d}": 100 + i, f"cno_{i:02d}": 40 + i})
    d["signalID"] = sid
    return d


def test_odd_inputs_step_by_step() -> None:
    # hand-made sequences of the odd cases; the expected values are the reference's
    p1, p2, p3 = (MappingProxyType(_part(3, k, 9, [4 * k - 3 + j for j in range(4)][: 9 - 4 * (k - 1)]))
                  for k in (1, 2, 3))
    seq: list[tuple[Any, Any]] = [
        ("GP", p1), ("GP", p2), ("GP", p3), ("GP", p1), ("GP", p2), ("GP", p3),  # a set that repeats
        ("GP", p1), ("GP", p3),  # part 2 lost: carried over (the total says exactly which)
        ("GP", p1), ("GP", p1), ("GP", p2), ("GP", p2), ("GP", p3), ("GP", p3),  # repeated parts
        ("GP", p2), ("GP", p3),  # a set whose first part was lost
        ("GP", dict(p1)), ("GL", p2), ("GA", dict(p3)),  # one set over three talkers, dicts and views
        ("GP", _part("3", 1, 9, [1])), ("GP", _part(3, 0, 9, [1])), ("GP", _part(100, 100, 9, [1])),
        ("GP", _part(3, True, 9, [1])), ("GP", _part(2.0, 1, 9, [1])), ("GP", _part(None, 1, 9, [1])),
        ("GP", {"msgNum": 1}), ("GP", {}), ("GP", _part(1, 1, "x", [500, 0, 33, 65])),
        ("GN", _part(2, 1, None, [1, 40, 70, 130], sid=1)), ("GN", _part(2, 2, None, [201, 301], sid=None)),
        ("XX", p1), (None, _part(1, 1, 1, [7])), ("GP", 5), ("GP", _part(1, 1, 1, [[7]])),
    ]
    seq += [(f"Q{i}", MappingProxyType(_part(2, 1, 5, [i % 32 + 1], sid=str(i)))) for i in range(70)]
    seq += [(f"Q{i}", MappingProxyType(_part(1, 1, 1, [i % 32 + 1], sid=str(i)))) for i in range(70)]
    t = run(seq)
    assert t.c.broken == t.p.broken > 0 and t.sets > 5


def test_reentrant_add_raises_and_the_assembler_goes_on() -> None:
    a = make_assembler(native=True)

    class Sneaky(dict):
        def get(self, k: str, d: Any = None) -> Any:
            if k == "numSV":
                a.add("GP", MappingProxyType(_part(1, 1, 1, [3])))
            return super().get(k, d)

    with pytest.raises(RuntimeError):
        a.add("GP", Sneaky(_part(1, 1, 1, [5])))
    assert a.add("GP", _part(1, 1, 1, [5]))[1] == [("G", 5, 40, 101, 41)]


def test_cycles_through_the_assembler_are_collected() -> None:
    # tp_traverse/tp_clear: an assembler holding a mapping that holds it is freed by the collector
    class Probe:
        pass

    probe = Probe()
    ref = weakref.ref(probe)
    a = make_assembler(native=True)
    d = _part(2, 1, a, [1, 2])
    d["probe"] = probe
    a.add("GP", MappingProxyType(d))  # pending set and the identity memo hold the view -> dict -> a
    del a, d, probe
    gc.collect()
    assert ref() is None
