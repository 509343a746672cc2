"""The clock's C common path (livefix/state/_clockcore.c) against the reference, UtcClock.resolve in
livefix/state/clock.py: call by call, the same return (utc by float.hex, the notes), the same raised
errors and every attribute alike (type-exact, and the very objects passed in kept where the
reference keeps them), on the calls the state model makes for every recording, corpus log and
simulator dialect, and on seeded random sequences (bench/fuzz_clock.py, also run by `make fuzz`)."""

from __future__ import annotations

import datetime as dt
import threading
from collections import deque
from collections.abc import Iterable
from pathlib import Path
from typing import Any

import pytest
from twinkit import CORPUS, CORPUS_FILES, bench_module

from livefix.decode import Rejected
from livefix.decode.decoder import Decoder
from livefix.framing import Framer
from livefix.items import Chunk
from livefix.record.reader import RecordingReader
from livefix.sim import Scenario, SimReceiver
from livefix.sim.dialects import DIALECTS
from livefix.sources import open_source
from livefix.state import clock
from livefix.state.clock import UtcClock
from livefix.state.model import StateModel

core = pytest.importorskip("livefix.state._clockcore", reason="livefix.state._clockcore is not built (no compiler?)")

FUZZ = bench_module("fuzz_clock")  # the generator `make fuzz` runs under the sanitizers
RECORDINGS = sorted((Path(__file__).resolve().parents[2] / "recordings").glob("*.lfr"))


class Checking(UtcClock):
    """The reference clock of a pure state model, replaying each of its calls on a ClockTwin."""

    def __init__(self) -> None:
        super().__init__()
        self.twin = FUZZ.ClockTwin(UtcClock(native=True), UtcClock(native=False))
        self.whys: list[str] = []

    def resolve(self, *args: Any, **kw: Any) -> Any:
        why = self.twin.call(args, kw)
        if why is not None and len(self.whys) < 3:
            self.whys.append(f"call {self.twin.calls}: {args!r}: {why}")
        return super().resolve(*args, **kw)

    def finish(self) -> Any:
        why = self.twin.call((), op="finish")
        if why is not None:
            self.whys.append(why)
        return super().finish()


def run_model(chunks: Iterable[tuple[float, float, bytes]]) -> Checking:
    """Chunks (mono, wall, data) through Framer, Decoder and a pure StateModel with a Checking clock."""
    fr, dec, sm = Framer(), Decoder(), StateModel(native=False)
    sm._clock = ck = Checking()
    for mono, wall, data in chunks:
        for ln in fr.feed(data):
            msg = dec.decode(ln)
            if type(msg) is not Rejected:
                sm.on_sentence(msg, mono, wall)
    sm.finish()
    assert ck.whys == []
    return ck


def test_core_constants_match_the_reference() -> None:
    # a stale build with other constants would silently fall back; this makes it fail instead
    from livefix import dates, timefmt

    assert (core.UNDATED_BEFORE, core.HALF_DAY_S, core.JUMP_FACTOR, core.JUMP_MIN_S) == (
        timefmt.UNDATED_BEFORE, clock._DAY / 2, dates.JUMP_FACTOR, dates.JUMP_MIN_S)
    assert clock._CORE is core


def test_the_switch(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    c = UtcClock()
    assert type(c) is clock._CoreClock and type(c.resolve.__func__) is core.Resolver
    assert type(StateModel()._clock) is clock._CoreClock
    assert type(UtcClock(native=False)) is UtcClock and type(Checking()) is Checking  # a subclass: the reference
    monkeypatch.setenv("LIVEFIX_PURE", "1")
    assert type(UtcClock()) is UtcClock and UtcClock().resolve.__func__ is UtcClock.resolve
    assert type(UtcClock(native=True)) is clock._CoreClock  # tests ask for it explicitly
    monkeypatch.setattr(clock, "_CORE", None)
    monkeypatch.delenv("LIVEFIX_PURE")
    assert type(UtcClock()) is UtcClock
    with pytest.raises(RuntimeError):
        UtcClock(native=True)


def test_the_common_path_is_taken_in_c(monkeypatch: pytest.MonkeyPatch) -> None:
    # a 10 Hz stream with a date each epoch: after the first epochs the reference is not called
    calls: list[tuple] = []

    def counting(*args: Any) -> Any:
        calls.append(args)
        return UtcClock.resolve(*args)

    monkeypatch.setattr(clock._CoreClock, "resolve", core.Resolver(counting, clock._CoreClock, deque))
    c, d, wall = UtcClock(native=True), dt.date(2026, 12, 5), 1.7808e9
    for k in range(200):
        utc, notes = c.resolve(36000.0 + k / 10, d, wall + k / 10, 5.0 + k / 10)
    assert len(calls) <= 3 and notes == []
    # Python datetime docs: an aware datetime's timestamp() is its POSIX time
    assert utc == dt.datetime(2026, 12, 5, 10, 0, 19, 900000, tzinfo=dt.UTC).timestamp()
    assert c.nominal_s == pytest.approx(0.1)  # median of the recent steps


@pytest.mark.parametrize("path", RECORDINGS, ids=[p.name for p in RECORDINGS])
def test_recordings(path: Path) -> None:
    ck = run_model((it.mono, it.wall, it.data) for it in RecordingReader(path).items() if type(it) is Chunk)
    assert ck.twin.calls > 1000


@pytest.mark.skipif(not CORPUS_FILES, reason="shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
@pytest.mark.parametrize("name", CORPUS_FILES)
def test_corpus_logs(name: str) -> None:
    # shared/realdata/corpus/<name>: a public log, source in shared/realdata/SOURCES.md
    items = open_source(str(CORPUS / name), speed=None).items(threading.Event())
    run_model((it.mono, it.wall, it.data) for it in items if type(it) is Chunk)


DIALECT_RUNS = ["clean", *DIALECTS, ",".join(n for n in DIALECTS if n not in (
    "rate-5hz", "rate-10hz", "rate-20hz", "gga-2hz-zda-1hz", "rmc-10hz-gga-1hz", "gns-only"))]


@pytest.mark.parametrize("host", ["dated", "undated", "zero"])
@pytest.mark.parametrize("dialect", DIALECT_RUNS, ids=[*DIALECT_RUNS[:-1], "all-at-once"])
def test_simulator_dialects(dialect: str, host: str) -> None:
    # default dates before the time is known, ZDA after the fix, RMC-only dates, bad checksums; the
    # host clock with a date, without one (before GPS time, livefix.timefmt) and at 0
    rx = SimReceiver(Scenario.load("rooftop"), rate_hz=10, seed=1, dialect=dialect)
    walls = {"dated": lambda m: 1.7e9 + m, "undated": lambda m: 36000.0 + m, "zero": lambda m: 0.0}[host]
    ck = run_model((mono, walls(mono), data) for mono, data in rx.epochs(60.0))
    assert ck.twin.calls >= 50


@pytest.mark.parametrize("seed", [1, 2, 3, 4, 5, 6])
def test_random_sequences(seed: int) -> None:
    calls, bad, examples = FUZZ.clock_diff(6000, seed)
    assert calls >= 6000 and bad == 0, examples


def test_odd_cases_step_by_step() -> None:
    # hand-made; the differential first, then the reference's own results against outside values
    d = dt.date(2026, 12, 31)
    old = d - dt.timedelta(weeks=1024)  # GPS week number rollover: 1024 weeks (IS-GPS-200)
    seq: list[tuple] = [
        (86399.8, d, 1.7986e9, 1.0), (86399.9, d, 1.7986e9, 1.1),
        (0.0, None, 1.7986e9, 1.2),  # midnight without a date (a GGA): the next day
        (0.1, None, 1.7986e9, 1.3), (0.2, dt.date(2027, 1, 1), 1.7986e9, 1.4),  # RMC date (NMEA 0183 ddmmyy)
        (0.3, old, 1.7986e9, 1.5),  # 1024 weeks early: not valid, no UTC
        (0.4, dt.date(2027, 1, 1), 1.7986e9, 1.6), (0.4, dt.date(2027, 1, 1), 1.7986e9, 1.6),  # repeated
        (500.0, None, 1.7986e9, 1.7), (0.6, None, 1.7986e9, 1.8), (0.7, None, 1.7986e9, 1.9),  # a stray jump
        (900.0, None, None, 2.0), (900.1, None, None, 2.1), (900.2, None, None, 2.2),  # a jump confirmed
        (900.3, None, 0.0, None), (900.25, None, 0.0, 2.4),  # a small step back (re-aligned)
        (4500.0, None, 0.0, 3602.4),  # a hole the host monotonic clock vouches for
        (4500.1, dt.date(2000, 1, 1), 0.0, 3602.5),  # a default date: the receiver lost the time
        (4500.2, dt.date(2027, 1, 1), 0.0, 3602.6), (4500.3, dt.date(2027, 1, 1), 0.0, 3602.7),
        (float("nan"), None, 0.0, 3602.8), (4500.4, None, float("inf"), 3602.9), (4500.5, "", 0.0, 3603.0),
    ]
    twin = FUZZ.ClockTwin(UtcClock(native=True), UtcClock(native=False))
    for i, args in enumerate(seq):
        assert twin.call(args) is None, f"step {i}: {args!r}"
    ref = UtcClock(native=False)
    out = [ref.resolve(*args) for args in seq[:16]]
    # Python datetime docs: date + timedelta(days=1) is the next day; timestamp() of an aware datetime
    assert out[2][0] == dt.datetime(2027, 1, 1, tzinfo=dt.UTC).timestamp()
    assert out[3][0] == out[2][0] + 0.1 and out[4][1][0][0] == "date_change"  # stated by the receiver: noted
    assert out[5][0] is None and out[5][1][0][0] == "receiver_date_invalid"
    assert out[8][0] is None and out[9][1][0][0] == "time_fault"  # not confirmed by the following epochs
    # a jump moves the clock once two more epochs run on from it (livefix.dates, common practice)
    assert out[11][0] is None and out[12][0] is None and out[13][1][0][0] == "time_jump"
    assert ref.time_faults == 1 and out[15][1][0][0] == "time_rollback"


def test_the_comparison_sees_a_difference() -> None:
    # the harness itself: one attribute off, an identity lost, a return value off by one ulp
    d = dt.date(2026, 12, 5)
    for spoil in ("steps", "identity", "utc"):
        twin = FUZZ.ClockTwin(UtcClock(native=True), UtcClock(native=False))
        for k in range(5):
            assert twin.call((36000.0 + k, d, 1.7808e9 + k, float(k))) is None
        args = (36005.0, d, 1.7808e9 + 5, 5.0)
        if spoil == "steps":
            twin.c._steps.append(1.0)
        elif spoil == "identity":  # the same value, not the object passed in
            assert twin.call(args) is None
            twin.c._last_tod = float(repr(args[0]))
            assert FUZZ.canon(vars(twin.c)) == FUZZ.canon(vars(twin.p))
            assert FUZZ._state(twin.c, args) != FUZZ._state(twin.p, args)
            continue
        else:
            twin.c.last_utc = twin.c.last_utc + 2 ** -20
        assert twin.call(args) is not None, spoil
