"""The C pump (livefix._native.LinePump, the twin of Pipeline._lines and Pipeline.feed) against the
Python code: two
pipelines fed the same items must make the same calls on their analyses, with the same arguments
in the same order (a recording analysis logs each one), and end with the same snapshot and the same
list of recent refusals. Exceptions must leave both at the same point.
"""

from __future__ import annotations

import itertools
import json
import random
from pathlib import Path
from typing import Any

import pytest

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.engine import Analyzer
from livefix.decode.decoder import Decoder
from livefix.items import Chunk
from livefix.pipeline import Pipeline
from livefix.record.reader import RecordingReader
from livefix.sim import Scenario, SimReceiver
from livefix.sim.dialects import DIALECTS

native = pytest.importorskip("livefix._native", reason="livefix._native is not built (no compiler?)")
if not hasattr(native, "LinePump"):
    pytest.skip("livefix._native was built without LinePump", allow_module_level=True)

ROOT = Path(__file__).resolve().parents[1]


class Recorder:
    """An analysis that logs every feeding call with its arguments (as repr: 1 and 1.0 differ)
    and hands it on to a real Analyzer, so the snapshots can be compared too."""

    def __init__(self, fail_on: tuple[str, int] | None = None) -> None:
        self.inner = Analyzer(AnalysisConfig())
        self.log: list[str] = []
        self.fail_on = fail_on

    def _note(self, name: str, *args: Any) -> None:
        self.log.append(f"{name}{args!r}")
        if self.fail_on is not None and self.fail_on[0] == name and len(self.log) >= self.fail_on[1]:
            raise RuntimeError(f"deliberate fault in {name} at call {len(self.log)}")

    def on_chunk(self, mono: float, wall: float, nbytes: int) -> None:
        self._note("on_chunk", mono, wall, nbytes)
        self.inner.on_chunk(mono, wall, nbytes)

    def on_rejected(self, reason: str, mono: float, wall: float) -> None:
        self._note("on_rejected", reason, mono, wall)
        self.inner.on_rejected(reason, mono, wall)

    def on_event(self, ev: Any) -> None:
        self._note("on_event", ev)
        self.inner.on_event(ev)

    def on_epoch(self, ep: Any) -> None:
        self._note("on_epoch", ep)
        self.inner.on_epoch(ep)

    def snapshot(self, counters: Any) -> dict[str, Any]:
        return self.inner.snapshot(counters)


def pair(front: bool | None = None, **rec: Any) -> tuple[Pipeline, Pipeline]:
    """(C pump, Python loop), with the same kind of decoder (front: its C twin or not)."""
    pc = Pipeline(analyzer=Recorder(**rec), native=True)
    pp = Pipeline(analyzer=Recorder(**rec), native=False)
    assert "_lines" in vars(pc) and "_lines" not in vars(pp)
    if front is not None:
        pc.decoder, pp.decoder = Decoder(native=front or None, front=front), Decoder(native=front or None, front=front)
    return pc, pp


def figures(p: Pipeline) -> str:
    return (json.dumps(p.analyzer.snapshot(p.counters()), sort_keys=True) + repr(p.state.sky())
            + repr(p._rejects) + repr(p.counters()))


def run_both(items: list[Any], front: bool | None = None) -> tuple[Pipeline, Pipeline]:
    pc, pp = pair(front)
    for k, it in enumerate(items):
        pc.feed(it)
        pp.feed(it)
        # the stream time each part keeps (the model's is what its events and sky() read)
        assert (pc._mono, pc._wall, pc.state._mono, pc.state._wall) == (pp._mono, pp._wall, pp.state._mono,
                                                                        pp.state._wall), f"item {k}"
        if k % 50 == 0:  # step by step: the same calls so far
            assert pc.analyzer.log == pp.analyzer.log, f"item {k}"
            assert pc._rejects == pp._rejects, f"item {k}"
    pc.finish()
    pp.finish()
    assert pc.analyzer.log == pp.analyzer.log
    assert figures(pc) == figures(pp)
    return pc, pp


def sim_items(dialect: str, seconds: float, seed: int = 1) -> list[Chunk]:
    rx = SimReceiver(Scenario.load("rooftop"), rate_hz=10, seed=seed, dialect=dialect)
    return [Chunk(mono, 1.7e9 + mono, chunk) for mono, chunk in rx.epochs(seconds)]


def test_the_switch(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    assert "_lines" in vars(Pipeline())
    monkeypatch.setenv("LIVEFIX_PURE", "1")
    assert "_lines" not in vars(Pipeline())
    assert "_lines" in vars(Pipeline(native=True)) and "feed" in vars(Pipeline(native=True))

    class Own(Pipeline):
        pass

    assert "_lines" not in vars(Own(native=True)) and "feed" not in vars(Own(native=True))  # its own code


@pytest.mark.parametrize("name", sorted(p.name for p in (ROOT / "recordings").glob("*.lfr")))
@pytest.mark.parametrize("front", [None, False])
def test_recordings(name: str, front: bool | None) -> None:
    items = list(itertools.islice(RecordingReader(str(ROOT / "recordings" / name)).items(), 3000))
    pc, _ = run_both(items, front)
    log = pc.analyzer.log
    assert sum(x.startswith("on_epoch") for x in log) > 100 and any(x.startswith("on_event") for x in log)


@pytest.mark.parametrize("dialect", ["clean", *DIALECTS])
def test_simulator_dialects(dialect: str) -> None:
    pc, _ = run_both(sim_items(dialect, 20.0))
    assert any(x.startswith("on_epoch") for x in pc.analyzer.log)


@pytest.mark.parametrize("seed", [1, 2])
def test_damaged_streams(seed: int) -> None:
    """Bytes flipped, cut and inserted at random: refusals of every kind, more than 8 of them."""
    rng = random.Random(seed)
    items = []
    for c in sim_items("bad-checksum-times", 20.0, seed):
        b = bytearray(c.data)
        for _ in range(rng.randrange(4)):
            k = rng.randrange(len(b))
            b[k] = rng.choice([0, 0x2A, 0x2C, 0x0A, 0xB5, b[k] ^ 1])
        items.append(Chunk(c.mono, c.wall, bytes(b)))
    pc, _ = run_both(items)
    assert sum(x.startswith("on_rejected") for x in pc.analyzer.log) > 8 and len(pc._rejects) == 8


def test_an_instance_pump_events_is_called() -> None:
    """A _pump_events set on the instance is called for every epoch, as by the loop."""
    pc, pp = pair()
    calls: dict[str, int] = {"c": 0, "p": 0}
    for name, p in (("c", pc), ("p", pp)):
        real = p._pump_events

        def spy(name: str = name, real: Any = real) -> None:
            calls[name] += 1
            real()

        p._pump_events = spy
    for it in sim_items("clean", 10.0):
        pc.feed(it)
        pp.feed(it)
    assert calls["c"] == calls["p"] > 100 and pc.analyzer.log == pp.analyzer.log


def test_an_instance_drain_events_is_called() -> None:
    """A drain_events set on the model instance is called as by the loop (no shortcut then)."""
    pc, pp = pair()
    calls: dict[str, int] = {"c": 0, "p": 0}
    for name, p in (("c", pc), ("p", pp)):
        real = p.state.drain_events

        def spy(name: str = name, real: Any = real) -> list:
            calls[name] += 1
            return real()

        p.state.drain_events = spy
    for it in sim_items("clean", 10.0):
        pc.feed(it)
        pp.feed(it)
    assert calls["c"] == calls["p"] > 100 and pc.analyzer.log == pp.analyzer.log


@pytest.mark.parametrize("where", [("on_epoch", 40), ("on_rejected", 3), ("on_event", 2), ("on_chunk", 30)])
def test_exceptions_leave_both_at_the_same_point(where: tuple[str, int]) -> None:
    pc, pp = pair(fail_on=where)
    items = sim_items("bad-checksum-times", 10.0)
    errors = []
    for p in (pc, pp):
        try:
            for it in items:
                p.feed(it)
        except RuntimeError as err:
            errors.append(str(err))
    assert len(errors) == 2 and errors[0] == errors[1]
    assert pc.analyzer.log == pp.analyzer.log and pc._rejects == pp._rejects
    assert figures(pc) == figures(pp)


def test_swapped_analyzer_between_chunks() -> None:
    """The analysis swapped between two chunks: each call goes to the one in place at that time."""
    pc, pp = pair()
    items = sim_items("bad-checksum-times", 10.0)
    for k, it in enumerate(items):
        if k == len(items) // 2:
            pc.analyzer, pp.analyzer = Recorder(), Recorder()
        pc.feed(it)
        pp.feed(it)
    assert pc.analyzer.log == pp.analyzer.log and len(pc.analyzer.log) > 50


@pytest.mark.parametrize("seed", [3, 4])
def test_chunks_cut_anywhere(seed: int) -> None:
    """The same bytes cut at random places (lines across chunks, chunks without CRLF at the end, empty
    chunks): the framer's general path, in the C feed as in Pipeline.feed."""
    rng = random.Random(seed)
    data = b"".join(c.data for c in sim_items("binary", 15.0, seed))
    items, k, t = [], 0, 10.0
    while k < len(data):
        n = rng.choice([0, 1, 7, 80, 300, 1200, 5000])
        items.append(Chunk(t, 1.7e9 + t, data[k:k + n]))
        k, t = k + n, t + 0.05
    pc, pp = run_both(items)
    assert pc.framer.counters == pp.framer.counters and pc.framer.counters.binary_frames > 0


def test_a_replaced_model_on_chunk_framer_feed_or_split_is_called() -> None:
    """Parts not exactly the reference's are called, not stood in for: an on_chunk on the model
    instance, a feed on the framer instance, a framer without the C split (native=False)."""
    pc, pp = pair()
    calls: dict[str, int] = {}
    for name, p in (("c", pc), ("p", pp)):
        real_chunk, real_feed = p.state.on_chunk, p.framer.feed

        def on_chunk(mono: float, wall: float, name: str = name, real: Any = real_chunk) -> None:
            calls[name + "chunk"] = calls.get(name + "chunk", 0) + 1
            real(mono, wall)

        def feed(data: bytes, name: str = name, real: Any = real_feed) -> list[bytes]:
            calls[name + "feed"] = calls.get(name + "feed", 0) + 1
            return real(data)

        p.state.on_chunk, p.framer.feed = on_chunk, feed
    items = sim_items("clean", 10.0)
    for it in items[:50]:
        pc.feed(it)
        pp.feed(it)
    from livefix.framing import Framer

    pc.framer, pp.framer = Framer(native=False), Framer(native=False)  # the Python split
    for it in items[50:]:
        pc.feed(it)
        pp.feed(it)
    assert calls["cchunk"] == calls["pchunk"] == len(items) and calls["cfeed"] == calls["pfeed"] == 50
    assert pc.analyzer.log == pp.analyzer.log and figures(pc) == figures(pp)
