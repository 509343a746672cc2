"""Shared parts of the C twins' differential tests: the real-data corpus and the bench fuzz inputs.

Why tests read bench/: `make fuzz` runs millions of the same random inputs through the C twins under
the sanitizers; the tests run a sample of exactly those inputs, so the generators live in one place.
"""

from __future__ import annotations

import functools
import importlib.util
import sys
import threading
from collections.abc import Callable, Iterable, Iterator
from pathlib import Path
from types import ModuleType
from typing import Any

import pytest

from livefix.decode import Rejected
from livefix.decode.decoder import Decoder
from livefix.framing import Framer
from livefix.items import Chunk
from livefix.record.reader import RecordingReader
from livefix.sim import Scenario, SimReceiver
from livefix.sources import open_source
from livefix.state.epoch import Epoch, Event
from livefix.state.model import StateModel

ROOT = Path(__file__).resolve().parents[1]
# Public logs from real receivers; each file's repository, commit and licence are listed in
# shared/realdata/SOURCES.md (read in place, never copied into the project).
CORPUS = ROOT.parent / "shared" / "realdata" / "corpus"
CORPUS_FILES = sorted(p.name for p in CORPUS.iterdir()) if CORPUS.is_dir() else []


@functools.cache
def bench_module(stem: str) -> ModuleType:
    """bench/<stem>.py as a module: the generators and comparisons `make fuzz` runs. Registered in
    sys.modules first, as an import would, so its dataclasses can resolve their own module."""
    spec = importlib.util.spec_from_file_location(f"livefix_bench_{stem}", ROOT / "bench" / f"{stem}.py")
    assert spec is not None and spec.loader is not None
    if str(ROOT / "bench") not in sys.path:  # as running the script would: bench/ modules import each other
        sys.path.insert(0, str(ROOT / "bench"))
    mod = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = mod
    spec.loader.exec_module(mod)
    return mod


def bench_fuzz() -> ModuleType:
    """bench/fuzz.py as a module (it also re-exports bench/fuzz_twins.py's generators)."""
    return bench_module("fuzz")


def corpus_epochs(path: Path) -> list[Epoch]:
    """The epochs livefix makes of a log: its file source's timed chunks through Framer, Decoder and
    StateModel."""
    fr, dec, sm = Framer(), Decoder(), StateModel()
    out: list[Epoch] = []
    for it in open_source(str(path), speed=None).items(threading.Event()):
        if type(it) is not Chunk:
            continue
        for ln in fr.feed(it.data):
            msg = dec.decode(ln)
            if type(msg) is not Rejected:
                out += [e for e in sm.on_sentence(msg, it.mono, it.wall) if type(e) is Epoch]
    return out + [e for e in sm.finish() if type(e) is Epoch]


def sim_epochs(dialect: str, seconds: float) -> Iterator[Epoch]:
    """The epochs of the simulated rooftop receiver (10 Hz, seed 1) in one dialect, made as live:
    lazily, so a caller's state between epochs is what the analyzer would have."""
    rx = SimReceiver(Scenario.load("rooftop"), rate_hz=10, seed=1, dialect=dialect)
    fr, dec, sm = Framer(), Decoder(), StateModel()
    for mono, chunk in rx.epochs(seconds):
        for ln in fr.feed(chunk):
            msg = dec.decode(ln)
            if type(msg) is not Rejected:
                for ep in sm.on_sentence(msg, mono, 1.7e9 + mono):
                    if type(ep) is Epoch:
                        yield ep


def corpus_log_epochs(name: str) -> list[Epoch]:
    """corpus_epochs of shared/realdata/corpus/<name> (a public log, its source in
    shared/realdata/SOURCES.md); the calling test skips a log that gives no epoch."""
    eps = corpus_epochs(CORPUS / name)
    if not eps:
        pytest.skip("a log without epochs")
    return eps


def feed_stream(pair: Any, items: Iterator[tuple[str, Any]], n: int) -> int:
    """n items of a random stream through a twin pair (C side and reference), agreeing after each;
    how many were epochs."""
    epochs = 0
    for _ in range(n):
        it = next(items)
        epochs += it[0] == "epoch"
        assert pair.step(it) is None
    return epochs


def odd_states_agree(make_pair: Callable[[], Any], base: Iterable[Any], cases: Iterable[Any],
                     apply: Callable[[Any, Any], None], after: Iterable[Any]) -> None:
    """For each case: a fresh pair fed `base`, the case applied alike to both sides, then `after`,
    agreeing at every step: states the C code does not take must go to the Python code unchanged."""
    base, after = list(base), list(after)
    for case in cases:
        pair = make_pair()
        for it in base:
            assert pair.step(it) is None
        for side in (pair.c, pair.p):
            apply(side, case)
        for i, it in enumerate(after):
            why = pair.step(it)
            assert why is None, (case, i, why[:1500])


def recording_items(path: Path, chunks: bool = False) -> list[tuple[str, Any]]:
    """The epochs and the state model's events of a recording, in stream order, as ("epoch", Epoch)
    and ("event", Event); with chunks, each chunk first as ("chunk", (mono, wall, bytes))."""
    fr, dec, sm = Framer(), Decoder(), StateModel()
    out: list[tuple[str, Any]] = []
    for it in RecordingReader(str(path)).items():
        if type(it) is not Chunk:
            continue
        if chunks:
            out.append(("chunk", (it.mono, it.wall, len(it.data))))
        for ln in fr.feed(it.data):
            msg = dec.decode(ln)
            if type(msg) is Rejected:
                continue
            for x in sm.on_sentence(msg, it.mono, it.wall) or ():
                if type(x) is Epoch:
                    out.append(("epoch", x))
                elif type(x) is Event:
                    out.append(("event", x))
    return out
