"""The C twin of the sky store (livefix/state/_skycore.c) against the reference, the pure-Python
Sky: every replace / expire / in_view / obs / seen call, results type-exact (floats by repr),
raised errors, the stores after each call, and the identity pattern of the returned objects (the
same object on both or on neither; the statistics and the used tracker skip work by identity).

Inputs: real StateModels fed the recordings in recordings/, the logs of the shared real-data corpus
and every simulator dialect, each model's sky replaced by a pair that compares every call; and
seeded random call sequences (bench/fuzz_sky.py: groups appearing and expiring, more groups than
max_groups, equal keys, empty and odd sets, NaN and backward host times, changing used sets).
Skipped when the extension is not built.
"""

from __future__ import annotations

import gc
import random
import threading
import weakref
from itertools import islice
from pathlib import Path
from types import ModuleType
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
from livefix.state import model as state_model
from livefix.state import sky
from livefix.state.model import StateModel
from livefix.state.sky import make_sky

core = pytest.importorskip("livefix.state._skycore", reason="livefix.state._skycore is not built (no compiler?)")

RECORDINGS = Path(__file__).resolve().parents[2] / "recordings"


def _fuzz() -> ModuleType:
    return bench_module("fuzz_sky")  # the generator and comparison `make fuzz` runs under the sanitizers


class PairedSky:
    """A sky for a real StateModel: every call goes to the C twin and to the reference and is
    compared at once (bench/fuzz_sky.py SkyTwin); the model goes on with the reference's results."""

    def __init__(self, timeout_s: float = 5.0, max_groups: int = 64) -> None:
        self.twin = _fuzz().new_twin(timeout_s, max_groups)
        self.problems: list[str] = []

    def _call(self, *op: Any) -> Any:
        why = self.twin.call(op)
        if why is not None and len(self.problems) < 5:
            self.problems.append(f"step {self.twin.steps} {op[0]}: {why}"[:400])
        if isinstance(self.twin.result, Exception):
            raise self.twin.result
        return self.twin.result

    def replace(self, group: Any, sats: Any, mono: Any) -> None:
        self._call("replace", group, sats, mono)

    def expire(self, now: Any) -> None:
        self._call("expire", now)

    def in_view(self) -> Any:
        return self._call("in_view")

    def obs(self, used: Any) -> Any:
        return self._call("obs", used)

    def seen(self, used: Any) -> Any:
        return self._call("seen", used)


@pytest.fixture
def paired(monkeypatch: pytest.MonkeyPatch) -> list[PairedSky]:
    """Every StateModel made in the test gets a PairedSky; the list of them."""
    made: list[PairedSky] = []

    def make(timeout_s: float = 5.0, max_groups: int = 64) -> PairedSky:
        made.append(PairedSky(timeout_s, max_groups))
        return made[-1]

    monkeypatch.setattr(state_model, "make_sky", make)
    return made


def drive(chunks: Any, snapshot_every: int = 37) -> StateModel:
    """Chunks through Framer, Decoder and a StateModel as livefix does; a snapshot (sky(), that is
    seen()) every `snapshot_every` lines, so also in the middle of epochs."""
    fr, dec, sm = Framer(), Decoder(), StateModel()
    n = 0
    for mono, wall, data in chunks:
        for ln in fr.feed(data):
            msg = dec.decode(ln)
            if type(msg) is not Rejected:
                sm.on_sentence(msg, mono, wall)
                n += 1
                if n % snapshot_every == 0:
                    sm.sky()
    sm.finish()
    sm.sky()
    return sm


def file_chunks(path: Path) -> list[tuple[float, float, bytes]]:
    return [(it.mono, it.wall, it.data) for it in open_source(str(path), speed=None).items(threading.Event())
            if type(it) is Chunk]


def check(made: list[PairedSky]) -> tuple[int, int]:
    """No disagreement in any paired sky; (calls compared, results handed back again)."""
    assert made
    for p in made:
        assert p.problems == []
    return sum(p.twin.steps for p in made), sum(p.twin.same for p in made)


def test_core_api_matches_the_reference() -> None:
    # a stale build for another API would silently fall back; this makes it fail instead
    assert core.SKY_API == sky.SKY_API
    assert type(make_sky(native=True)).__module__ == "livefix.state._skycore"
    s = make_sky(2.5, 7, native=True)
    assert (s.timeout_s, s.max_groups) == (2.5, 7)


def test_make_sky_follows_the_switch(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    assert type(make_sky()) is core.Sky
    monkeypatch.setenv("LIVEFIX_PURE", "1")
    assert type(make_sky()) is sky.Sky
    assert type(make_sky(native=True)) is core.Sky  # tests ask for it explicitly
    monkeypatch.setattr(sky, "_CORE", None)
    monkeypatch.delenv("LIVEFIX_PURE")
    assert type(make_sky()) is sky.Sky
    with pytest.raises(RuntimeError):
        make_sky(native=True)


@pytest.mark.parametrize("name", sorted(p.name for p in RECORDINGS.glob("*.lfr")))
def test_recordings(paired: list[PairedSky], name: str) -> None:
    # recordings/<name>: livefix's own recordings of the simulated receiver (recordings/README.md)
    drive(file_chunks(RECORDINGS / name))
    steps, same = check(paired)
    assert steps > 5000 and same > 500  # epochs whose satellites were handed back as the same tuple


@pytest.mark.skipif(not CORPUS_FILES, reason="shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
@pytest.mark.parametrize("name", CORPUS_FILES)
def test_corpus_logs(paired: list[PairedSky], name: str) -> None:
    # shared/realdata/corpus/<name>: a public log, source in shared/realdata/SOURCES.md
    drive(file_chunks(CORPUS / name), snapshot_every=5)
    check(paired)


def test_corpus_has_skies(paired: list[PairedSky]) -> None:
    # the corpus runs above must have compared real skies: gsvnoise_test.nmea (see
    # shared/realdata/SOURCES.md) is a 10 Hz receiver whose GSV sets often repeat unchanged
    if not CORPUS_FILES:
        pytest.skip("shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
    drive(file_chunks(CORPUS / "gsvnoise_test.nmea"))
    steps, same = check(paired)
    assert steps > 1000 and same > 100


DIALECT_RUNS = ["clean", *DIALECTS, ",".join(n for n in DIALECTS if n not in (
    "rate-5hz", "rate-10hz", "rate-20hz", "gga-2hz-zda-1hz", "rmc-10hz-gga-1hz", "gns-only"))]


@pytest.mark.parametrize("dialect", DIALECT_RUNS, ids=[*DIALECT_RUNS[:-1], "all-at-once"])
def test_simulator_dialects(paired: list[PairedSky], dialect: str) -> None:
    rx = SimReceiver(Scenario.load("rooftop"), rate_hz=10, seed=1, dialect=dialect)
    drive((mono, 1.7e9 + mono, chunk) for mono, chunk in rx.epochs(30.0))
    steps, _ = check(paired)
    assert steps > 100


@pytest.mark.parametrize("seed", [1, 2, 3, 4])
def test_random_call_sequences(seed: int) -> None:
    fz = _fuzz()
    twin, seen, errors, same = fz.new_twin(), 0, 0, 0
    for op in islice(fz.sky_calls(random.Random(seed)), 40_000):
        if op[0] == "new":
            same += twin.same
            twin = fz.new_twin(op[1], op[2])
            continue
        why = twin.call(op)
        assert why is None, f"{op[0]} {op[1:]!r}"[:300] + f": {why}"
        seen += op[0] == "seen"
        errors += isinstance(twin.result, Exception)
    # the sequences must reach every method, the raising paths and the identity hits
    assert seen > 500 and errors > 100 and same + twin.same > 3000


def test_odd_inputs_step_by_step() -> None:
    # hand-made: eviction past max_groups, the same satellite in two groups of one signal, empty
    # sets, NaN and backward host times, used sets equal but other objects; expected values are the
    # reference's, and the hand-checked ones are marked (hand arithmetic)
    fz = _fuzz()
    twin = fz.new_twin(5.0, 2)
    a, b, c = [("G", 5, 40, 100, 45)], [("G", 5, 41, 101, 30.5), ("R", 3, None, None, None)], []
    used = frozenset({("G", 5)})
    ops: list[tuple] = [
        ("replace", ("GP", ""), a, 10.0), ("replace", ("GN", ""), b, 10.0), ("obs", used), ("obs", frozenset(used)),
        ("in_view",), ("replace", ("GL", ""), c, 10.1), ("in_view",), ("obs", used), ("seen", used), ("seen", used),
        ("replace", ("GA", "7"), a, float("nan")), ("expire", 20.0), ("in_view",), ("seen", used),
        ("replace", ("GB", ""), b, 3.0), ("expire", 7.0), ("expire", 9.0), ("obs", None), ("obs", [("G", 5)]),
    ]
    for op in ops:
        assert twin.call(op) is None, op
    p = twin.p
    # hand count: of GP, GN, GL, GA, GB with at most 2 held, GB went at 9 - 5 > 3; GA (NaN) stays
    assert list(p._groups) == [("GA", "7")]
    s = make_sky(5.0, 64, native=True)
    s.replace(("GP", ""), a, 1.0)
    s.replace(("GN", ""), b, 1.0)
    # the same satellite in two groups of one signal: one row, the later set's values (dict merge)
    assert [(o.key, o.elev, o.used) for o in s.obs(used)] == [(("G", 5, ""), 41, True), (("R", 3, ""), None, False)]


def test_identity_is_kept_as_the_reference_keeps_it() -> None:
    # the identity rules themselves, on both: obs() the same tuple while only listing times
    # change, in_view() the same frozenset while its content holds (sky.py docstrings)
    for s in (make_sky(native=True), make_sky(native=False)):
        a = [("G", 1, 10, 20, 30)]
        used: frozenset = frozenset()
        s.replace(("GP", ""), a, 1.0)
        o1, v1 = s.obs(used), s.in_view()
        s.replace(("GP", ""), a, 2.0)  # the same list again: only the listing time changed
        assert s.obs(used) is o1 and s.in_view() is v1
        s.replace(("GP", ""), list(a), 3.0)  # an equal list, another object: new rows, same content
        assert s.obs(used) is not o1 and s.obs(used) == o1 and s.in_view() is v1
        snap = s.seen(used)
        assert snap[0].last_seen_mono == 3.0 and s.seen(used) is snap


def test_reentrant_call_raises_and_the_sky_goes_on() -> None:
    s = make_sky(native=True)

    class Sneaky(tuple):
        def __eq__(self, other: object) -> bool:
            s.in_view()
            return tuple.__eq__(self, other)

        __hash__ = tuple.__hash__

    s.replace(Sneaky(("GP", "")), [("G", 1, 10, 20, 30)], 1.0)
    with pytest.raises(RuntimeError):
        s.replace(("GP", ""), [("G", 2, 10, 20, 30)], 2.0)  # the key comparison calls back in
    assert s.in_view() == {("G", 1)}


def test_cycles_through_the_sky_are_collected() -> None:
    # tp_traverse/tp_clear: a sky holding a list that holds it is freed by the collector
    class Probe:
        pass

    probe = Probe()
    ref = weakref.ref(probe)
    s = make_sky(native=True)
    sats: list[Any] = [("G", 1, 10, 20, 30)]
    s.replace(("GP", ""), sats, 1.0)
    s.obs(frozenset())
    sats.append(s)  # the sky holds the list, the list holds the sky
    sats.append(probe)
    del s, sats, probe
    gc.collect()
    assert ref() is None
