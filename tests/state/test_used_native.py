"""The C twin of the GSA used-set tracker (livefix/state/_usedcore.c) against the reference, the
pure-Python UsedTracker: every add_gsa / note_unknown / close result (type-exact), the raised errors,
the attributes after each call (unknown, unknown_total and the open epoch's lists and labels), and
the identity pattern of the returned objects (a GSA's placed pairs, and close()'s frozenset, which
is the previous one while the used list holds: the state model and the statistics skip work by it).

Inputs: a StateModel fed every log of the shared real-data corpus and every simulator dialect at
10 Hz with both trackers behind it, seeded random calls (bench/fuzz_used.py used_calls: odd system
IDs, talkers and numbers, dicts and other mappings, floods past both memo caps, skies that change
under the placing memo), and hand-made odd cases. Skipped when the extension is not built.
"""

from __future__ import annotations

import gc
import random
import threading
import weakref
from itertools import islice
from pathlib import Path
from types import MappingProxyType
from typing import Any

import pytest
from twinkit import CORPUS, CORPUS_FILES, bench_module

from livefix.decode import Rejected
from livefix.decode.decoder import Decoder
from livefix.framing import Framer
from livefix.items import Chunk
from livefix.sim import Scenario, SimReceiver
from livefix.sim.dialects import DIALECTS
from livefix.sources import open_source
from livefix.state import used
from livefix.state.model import StateModel
from livefix.state.used import UsedTracker, classify, make_used_tracker, place

core = pytest.importorskip("livefix.state._usedcore", reason="livefix.state._usedcore is not built (no compiler?)")


FUZZ = bench_module("fuzz_used")  # the generator `make fuzz` runs under the sanitizers


def twin() -> Any:
    return FUZZ.UsedTwin(make_used_tracker(native=True), make_used_tracker(native=False))


class ModelTwin:
    """Stands in a StateModel for its tracker: each call goes to the C twin and to the reference,
    compared after it, and the model goes on with the reference's answer."""

    def __init__(self) -> None:
        self.t = twin()

    def _call(self, op: tuple) -> Any:
        why = self.t.call(op)
        assert why is None, f"step {self.t.steps}: {op!r}"[:2000] + f": {why}"
        if isinstance(self.t.result, Exception):
            raise self.t.result
        return self.t.result

    def add_gsa(self, talker: str, f: Any) -> Any:
        return self._call(("add", talker, f))

    def note_unknown(self, source: str, nums: tuple) -> None:
        self._call(("note", source, nums))

    def close(self, used_: set, in_view: Any, mono: float) -> frozenset:
        return self._call(("close", used_, in_view, mono))

    @property
    def unknown(self) -> tuple[str, ...]:
        return self.t.p.unknown


def model() -> tuple[StateModel, ModelTwin]:
    sm, mt = StateModel(), ModelTwin()
    sm._gsa = mt  # type: ignore[assignment]  # the model's only tracker, compared at every call
    return sm, mt


def feed(sm: StateModel, items: Any) -> list:
    """(mono, bytes) chunks through Framer and Decoder into the model; -> its epochs."""
    fr, dec, out = Framer(), Decoder(), []
    for mono, data in items:
        for ln in fr.feed(data):
            msg = dec.decode(ln)
            if type(msg) is not Rejected:
                out += sm.on_sentence(msg, mono, 1.7e9 + mono)
    return out + sm.finish()


def test_core_caps_match_the_reference() -> None:
    # a stale build with other caps would silently fall back; this makes it fail instead
    assert (core.BY_VALUE_MAX, core.BY_ID_MAX, core.MAX_UNKNOWN, core.USED_HOLD_S) == (
        used.BY_VALUE_MAX, used.BY_ID_MAX, used.MAX_UNKNOWN, used.USED_HOLD_S)
    assert used._CORE is core and type(make_used_tracker(native=True)) is core.UsedTracker


def test_make_used_tracker_follows_the_switch(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    assert type(make_used_tracker()) is core.UsedTracker
    assert type(StateModel()._gsa) is core.UsedTracker
    monkeypatch.setenv("LIVEFIX_PURE", "1")
    assert type(make_used_tracker()) is UsedTracker
    assert type(StateModel()._gsa) is UsedTracker
    assert type(make_used_tracker(native=True)) is core.UsedTracker  # tests ask for it explicitly
    monkeypatch.setattr(used, "_CORE", None)
    monkeypatch.delenv("LIVEFIX_PURE")
    assert type(make_used_tracker()) is UsedTracker
    with pytest.raises(RuntimeError):
        make_used_tracker(native=True)


def _source_items(path: Path) -> Any:
    for it in open_source(str(path), speed=None).items(threading.Event()):
        if type(it) is Chunk:
            yield it.mono, it.data


@pytest.mark.skipif(not CORPUS_FILES, reason="shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
@pytest.mark.parametrize("name", CORPUS_FILES)
def test_corpus_logs(name: str) -> None:
    # shared/realdata/corpus/<name>: a public log, source in shared/realdata/SOURCES.md
    sm, mt = model()
    feed(sm, _source_items(CORPUS / name))
    assert mt.t.steps >= sm.epochs


def test_corpus_has_gsa_epochs() -> None:
    # the corpus runs above must have compared GSA lists and kept used sets, not only empty epochs
    if not CORPUS_FILES:
        pytest.skip("shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
    # gsvnoise_20220112_test.nmea (see shared/realdata/SOURCES.md): 10 Hz with GSA lines every epoch
    sm, mt = model()
    feed(sm, _source_items(CORPUS / "gsvnoise_20220112_test.nmea"))
    assert mt.t.closes > 4000 and mt.t.kept > 4000 and mt.t.steps > 20_000


DIALECT_RUNS = ["clean", *DIALECTS, ",".join(n for n in DIALECTS if n not in (
    "rate-5hz", "rate-10hz", "rate-20hz", "gga-2hz-zda-1hz", "rmc-10hz-gga-1hz", "gns-only"))]


@pytest.mark.parametrize("dialect", DIALECT_RUNS, ids=[*DIALECT_RUNS[:-1], "all-at-once"])
def test_simulator_dialects(dialect: str) -> None:
    def chunks() -> Any:
        return SimReceiver(Scenario.load("rooftop"), rate_hz=10, seed=1, dialect=dialect).epochs(60.0)

    sm, mt = model()
    feed(sm, chunks())
    assert mt.t.closes >= 50
    # and end to end: the epochs of a model with the C twin are those of one with the reference
    both = []
    for native in (True, False):
        m = StateModel()
        m._gsa = make_used_tracker(native=native)
        both.append(repr(feed(m, chunks())))
    assert both[0] == both[1]


@pytest.mark.parametrize("seed", [1, 2, 3, 4])
def test_random_calls(seed: int) -> None:
    t = twin()
    for i, op in enumerate(islice(FUZZ.used_calls(random.Random(seed)), 20_000)):
        why = t.call(op)
        assert why is None, f"call {i}: {op!r}"[:2000] + f": {why}"
    # the runs compared errors, used sets kept as the same object, and both memos past their caps
    assert t.errors > 50 and t.closes > 2000 and t.kept > 300
    assert len(t.p._by_id) < used.BY_ID_MAX and len(t.p._by_value) < used.BY_VALUE_MAX


def test_the_comparison_sees_a_difference() -> None:
    # the harness itself: a twin that places differently, and one that returns a new set each epoch
    sky = frozenset({("E", 10), ("E", 12)})
    wrong = FUZZ.UsedTwin(core.UsedTracker(classify, lambda nums, view: ((), nums)), UsedTracker())
    assert wrong.call(("add", "GP", MappingProxyType({"svid_01": 10, "svid_02": 12}))) is None
    assert wrong.call(("close", [], sky, 1.0)) is not None

    class Copying(UsedTracker):
        def close(self, *args: Any) -> frozenset:
            return frozenset(set(super().close(*args)))

    copying = FUZZ.UsedTwin(core.UsedTracker(classify, place), Copying())
    assert copying.call(("add", "GP", MappingProxyType({"systemId": 1, "svid_01": 5}))) is None
    assert copying.call(("close", [], sky, 1.0)) == "used set: identity differs"


def _gsa(sid: Any, *nums: Any) -> dict:
    d: dict[str, Any] = {f"svid_{i:02d}": n for i, n in enumerate(nums, 1)}
    if sid is not None:
        d["systemId"] = sid
    return d


def test_odd_inputs_step_by_step() -> None:
    # hand-made cases; the expected values are the reference's
    gal = frozenset({("G", 10), ("E", 10), ("E", 12), ("E", 16), ("C", 11), ("C", 34)})
    live = set(gal)
    seq: list[tuple] = [
        # NMEA 0183 4.10/4.11: system ID 1-6 names the constellation (3 = Galileo, 4 = BeiDou)
        ("add", "GN", MappingProxyType(_gsa(3, 10, 12, 16, 40))), ("add", "GN", _gsa("4", 11, 34, 64, "")),
        # common practice before 4.10: one GP list per constellation, placed at close against the sky
        ("add", "GP", MappingProxyType(_gsa(None, 10, 12, 16))), ("add", "GP", _gsa("", 11, 34)),
        ("close", [], gal, 10.0), ("close", [], gal, 10.1), ("close", [], gal, 16.0),  # the hold, then not
        ("add", "GP", _gsa(1.0, 3)), ("add", "GP", _gsa(True, 3)), ("add", "GP", _gsa(1, 3)),  # equal keys
        ("add", "GL", _gsa("\u0661", 65, 1, 99)), ("add", "GL", _gsa("\u00b2", 1)), ("add", "GL", _gsa("9" * 5000)),
        ("add", None, _gsa(2, 5)), ("add", None, _gsa(2, 50)), ("add", "GA", _gsa([3], 1)), ("add", "GA", 7),
        ("add", "GP", _gsa(None, -1, 0, 10**30, 1e3, float("nan"), "7", None, False, 500, 97, 333, 463)),
        ("note", "GPGSV", (600, 700) * 20), ("note", "GPGSV", None), ("note", 5, [1]), ("note", "GLGSV", "ab"),
        ("close", (("G", 1),), gal, 20.0), ("close", frozenset({("G", 3)}), gal, 20.0), ("close", [], gal, 20.1),
        ("add", "GP", _gsa(None, 10, 12)), ("close", [], live, 21.0), ("close", [], live, 21.1),
        ("add", "GP", _gsa(None, 10, 12)), ("close", [], live, 21.2),
    ]
    t = twin()
    for i, op in enumerate(seq):
        if i == len(seq) - 2:
            live.discard(("G", 10))  # the same sky object, new content: the placing memo is by object
        assert t.call(op) is None, f"step {i}: {op!r}"[:500]
    assert t.errors >= 8 and t.p.unknown_total > 40


def test_memo_caps_and_clearing_give_the_same_objects() -> None:
    # the reference's rules: by value up to BY_VALUE_MAX entries, then cleared; by read-only view up
    # to BY_ID_MAX, then cleared; a line's placed pairs are the same object until both memos lost it
    for flood_values in (used.BY_VALUE_MAX - 1, used.BY_VALUE_MAX):
        for flood_views in (used.BY_ID_MAX - 1, used.BY_ID_MAX):
            t = twin()
            first = MappingProxyType(_gsa(1, 5, 6))
            assert t.call(("add", "GP", first)) is None
            keep = t.added[0]
            for i in range(flood_values):  # new lines, as dicts: only the value memo fills
                rc, rp = (tr.add_gsa(f"T{i}", _gsa(1, 7)) for tr in (t.c, t.p))
                assert repr(rc) == repr(rp)
            t.added = [keep]
            assert t.call(("add", "GP", first)) is None  # the view memo still has it
            assert t.result is keep[1]
            for i in range(flood_views):  # new read-only views: the view memo fills too
                rc, rp = (tr.add_gsa(f"V{i}", MappingProxyType(_gsa(1, 8))) for tr in (t.c, t.p))
                assert repr(rc) == repr(rp)
            t.added = [keep]
            assert t.call(("add", "GP", first)) is None
            # 1 + flood_views views: the view memo cleared at the 1025th; the value memo cleared by now
            assert (t.result is keep[1]) == (flood_views < used.BY_ID_MAX)


def test_reentrant_calls_raise_and_the_tracker_goes_on() -> None:
    tr = make_used_tracker(native=True)

    class Sneaky(dict):
        def get(self, k: str, d: Any = None) -> Any:
            if k == "svid_03":
                tr.add_gsa("GP", MappingProxyType(_gsa(1, 3)))
            return super().get(k, d)

    with pytest.raises(RuntimeError):
        tr.add_gsa("GP", Sneaky(_gsa(1, 5)))
    assert tr.add_gsa("GP", _gsa(None, 3)) == ()  # open until close
    with pytest.raises(RuntimeError):
        tr.close(set(), lambda: tr.close(set(), frozenset, 0.0), 1.0)
    placed = tr.add_gsa("GP", _gsa(1, 5))
    assert placed == (("G", 5),)
    assert tr.close(set(placed), frozenset, 2.0) == frozenset({("G", 5), ("G", 3)})  # the open list was kept


def test_cycles_through_the_tracker_are_collected() -> None:
    # tp_traverse/tp_clear: a tracker holding a mapping that holds it is freed by the collector
    class Probe:
        pass

    probe = Probe()
    ref = weakref.ref(probe)
    tr = make_used_tracker(native=True)
    d = _gsa(None, 3)
    d["probe"], d["tracker"] = probe, tr
    tr.add_gsa("GP", MappingProxyType(d))  # the view memo and the open list hold the view -> dict -> tr
    del tr, d, probe
    gc.collect()
    assert ref() is None
