"""The C step of SignalStats.on_epoch (livefix.analysis._sigcore.step, _sigcore_step.c and
_sigcore_interf.c) against the reference, SignalStats.on_epoch in pure Python.

After every epoch the whole state is compared: every instance variable (floats by float.hex, so
-0.0, nan and the last bit count; ints and floats kept apart; lists and dicts item by item, in
order), the satellite objects by identity (cur holds the epoch's own SatObs, _last_sats is the
epoch's tuple), the containers by identity (cs, by_sys, bands, cells, base, events are mutated,
never replaced) and the events emitted. The step's answers are counted: done in C, handed back
(False, nothing changed) and the Python methods it called for parts it does not take.

Inputs: the repository's recordings, every simulator dialect, the fault scenario, broadband drops
written here (interference episodes open and close), seeded random epochs (bench/fuzz_twins.py
sig_epochs) and odd epochs (cn0 None/0/-0.0/nan/inf/huge/bool, empty skies, time going back).
"""

from __future__ import annotations

import dataclasses
import math
import random
from collections.abc import Iterable, Iterator
from typing import Any

import pytest
from twinkit import ROOT, bench_fuzz, bench_module

from livefix.analysis import signal
from livefix.analysis.config import AnalysisConfig
from livefix.analysis.signal import SignalStats
from livefix.decode import Rejected
from livefix.decode.decoder import Decoder
from livefix.framing import Framer
from livefix.items import Chunk
from livefix.record.reader import RecordingReader
from livefix.sim import Scenario, SimReceiver
from livefix.sim.dialects import DIALECTS
from livefix.state.epoch import Epoch, SatObs
from livefix.state.model import StateModel

core = pytest.importorskip("livefix.analysis._sigcore", reason="livefix.analysis._sigcore is not built (no compiler?)")
FUZZ = bench_fuzz()
EXACT = bench_module("fuzz_exact")  # how the twins' states are compared
RECORDINGS = sorted(p.name for p in (ROOT / "recordings").glob("*.lfr"))
CONTAINERS = ("cs", "by_sys", "bands", "cells", "base", "events")
METHODS = ("_accumulate", "_accumulate_sats", "_interference", "_baseline_sats")


class CountingCore:
    """The C module with step() counted; `inside` while a step runs (for CountedStats)."""

    def __init__(self) -> None:
        self.done = self.handed = 0
        self.inside = False

    def __getattr__(self, name: str) -> Any:
        return getattr(core, name)

    def step(self, stats: SignalStats, ep: Epoch) -> bool:
        self.inside = True
        try:
            r = core.step(stats, ep)
        finally:
            self.inside = False
        self.done += r is True
        self.handed += r is False
        return r


class CountedStats(SignalStats):
    """SignalStats counting the Python methods the C step calls (inside a step only)."""

    def __init__(self, *a: Any, **k: Any) -> None:
        self.called = dict.fromkeys(METHODS, 0)
        super().__init__(*a, **k)

    def _count(self, name: str) -> None:
        if isinstance(self._core, CountingCore) and self._core.inside:
            self.called[name] += 1

    def _accumulate(self) -> None:
        self._count("_accumulate")
        super()._accumulate()

    def _accumulate_sats(self, sats: list[SatObs]) -> None:
        self._count("_accumulate_sats")
        super()._accumulate_sats(sats)

    def _interference(self, ep: Epoch) -> None:
        self._count("_interference")
        super()._interference(ep)

    def _baseline_sats(self, *a: Any) -> None:
        self._count("_baseline_sats")
        super()._baseline_sats(*a)


def canon(x: Any) -> Any:
    """x as comparable data: floats by hex, types kept, satellites by identity."""
    t = type(x)
    if t is float:
        return ("float", x.hex())
    if x is None or t in (int, bool, str):
        return (t.__name__, x)
    if t in (list, tuple):
        return (t.__name__, [canon(v) for v in x])
    if t is dict:
        return ("dict", [(canon(k), canon(v)) for k, v in x.items()])
    if t is SatObs:
        return ("sat", id(x))
    return ("other", repr(x))


def state(s: SignalStats) -> dict[str, Any]:
    return {k: canon(v) for k, v in vars(s).items() if k not in ("config", "emit", "_core", "called")}


def same_state(a: SignalStats, b: SignalStats) -> bool:
    """state(a) == state(b), decided by the quick key where the keys agree (the satellites by
    identity there too); canon() only for the rest (NaN signs, which float.hex does not see)."""
    va, vb = ({k: v for k, v in vars(s).items() if k not in ("config", "emit", "_core", "called")} for s in (a, b))
    ka = EXACT.key(va, (SatObs,))
    return (ka is not None and ka == EXACT.key(vb, (SatObs,))) or state(a) == state(b)


class Twin:
    """The C step and the reference fed the same epochs, compared after each."""

    def __init__(self, config: AnalysisConfig | None = None) -> None:
        cfg = config or AnalysisConfig()
        self.ec: list = []
        self.ep: list = []
        self.c = CountedStats(cfg, self.ec.append, native=True)
        self.core = self.c._core = CountingCore()
        self.p = CountedStats(cfg, self.ep.append, native=False)  # the same class: the same error texts
        self.steps = self.errors = 0

    def step(self, ep: Any) -> None:
        held = [getattr(self.c, k, None) for k in CONTAINERS]
        errs = []
        for a in (self.c, self.p):
            try:
                a.on_epoch(ep)
                errs.append(None)
            except Exception as err:  # noqa: BLE001 - compared below
                errs.append((type(err), str(err)))
        self.steps += 1
        self.errors += errs[1] is not None
        where = f"step {self.steps}: {ep!r}"[:1500]
        assert errs[0] == errs[1], where
        assert same_state(self.c, self.p), where
        assert repr(self.ec) == repr(self.ep), where
        assert all(getattr(self.c, k, None) is h for k, h in zip(CONTAINERS, held, strict=True)), where
        if type(ep) is Epoch and isinstance(self.c.cur, list) and self.c._last_sats is ep.sats:
            assert all(any(s is x for x in ep.sats) for s in self.c.cur), where

    def run(self, eps: Iterable[Any]) -> Twin:
        for ep in eps:
            self.step(ep)
        return self


def _epochs(chunks: Iterable[tuple[float, float, bytes]]) -> Iterator[Epoch]:
    fr, dec, sm = Framer(), Decoder(), StateModel()
    for mono, wall, data in chunks:
        for ln in fr.feed(data):
            msg = dec.decode(ln)
            if type(msg) is not Rejected:
                yield from (e for e in sm.on_sentence(msg, mono, wall) if type(e) is Epoch)
    yield from (e for e in sm.finish() if type(e) is Epoch)


def recording_epochs(name: str) -> Iterator[Epoch]:
    items = RecordingReader(ROOT / "recordings" / name).items()
    return _epochs((it.mono, it.wall, it.data) for it in items if type(it) is Chunk)


def sim_epochs(scenario: str, dialect: str | None, seconds: float, rate: int = 10) -> Iterator[Epoch]:
    rx = SimReceiver(Scenario.load(scenario), rate_hz=rate, seed=1, dialect=dialect)
    return _epochs((mono, 1.7e9 + mono, chunk) for mono, chunk in rx.epochs(seconds))


def test_step_is_the_core_of_the_c_path() -> None:
    assert signal._CORE is core and core.API == 2 and callable(core.step)
    assert SignalStats(AnalysisConfig(), print, native=False)._core is None
    with pytest.raises(TypeError):
        core.step(SignalStats(AnalysisConfig(), print, native=True))


@pytest.mark.parametrize("name", RECORDINGS)
def test_recordings(name: str) -> None:
    t = Twin().run(recording_epochs(name))
    assert t.steps > 1000 and t.p.n > 0 and t.p.base
    assert t.core.done == t.steps and t.c.called == dict.fromkeys(METHODS, 0)  # all of it in C


DIALECT_RUNS = ["clean", *DIALECTS]


@pytest.mark.parametrize("dialect", DIALECT_RUNS)
def test_simulator_dialects(dialect: str) -> None:
    t = Twin().run(sim_epochs("rooftop", dialect, 40.0))
    assert t.steps >= 40 and t.p.top4_n >= 35
    assert t.core.done == t.steps


def test_fault_scenario() -> None:
    # soak.toml: outage (nothing tracked), stall, garbage, checksum bursts, receiver restarts
    t = Twin().run(sim_epochs("soak", None, 600.0, rate=2))
    assert t.steps > 900 and t.core.done == t.steps


def _drop(eps: Iterable[Epoch], windows: list[tuple[float, float, float]], lose: float = 0.0) -> Iterator[Epoch]:
    """Broadband drops written here: in each (from, to, dB) window of stream time every signal's C/N0
    is that much lower, and a share `lose` of them (the weakest) loses lock."""
    t0 = None
    for ep in eps:
        t0 = ep.mono if t0 is None else t0
        t = ep.mono - t0
        db = next((d for a, b, d in windows if a <= t < b), 0.0)
        if db:
            weak = sorted(s.cn0 or 0 for s in ep.sats)[: int(len(ep.sats) * lose)]
            sats = tuple(dataclasses.replace(s, cn0=None if (s.cn0 or 0) in weak else s.cn0 - db)
                         if s.cn0 else s for s in ep.sats)
            ep = dataclasses.replace(ep, sats=sats)
        yield ep


@pytest.mark.parametrize(("lose", "rate"), [(0.0, 10), (0.2, 10), (0.0, 1)])
def test_interference_episodes(lose: float, rate: int) -> None:
    # common practice (docs/sources.md#interference-indicator): a jammer lowers C/N0 on every
    # satellite at once; 12 dB for 40 s opens an episode, the recovery closes it
    windows = [(90.0, 130.0, 12.0), (170.0, 175.0, 12.0), (200.0, 260.0, 3.0), (300.0, 340.0, 15.0)]
    t = Twin().run(_drop(sim_epochs("rooftop", "clean", 360.0, rate), windows, lose))
    phases = [e.data["phase"] for e in t.ep if e.kind == "interference"]
    assert phases.count("start") >= 2 and phases.count("end") >= 2
    assert t.c.called["_interference"] > 30  # open or starting episodes: the Python method
    assert t.c.called["_accumulate"] == 0 and t.core.handed == 0


@pytest.mark.parametrize(("seed", "odd"), [(1, 0.0), (2, 0.02), (3, 0.1)])
def test_random_epochs(seed: int, odd: float) -> None:
    rng = random.Random(seed)
    gen = FUZZ.sig_epochs(rng, odd)
    done = handed = errors = called = 0
    for _ in range(3):  # a new config each time (mask, threshold, int or float)
        t = Twin(FUZZ.sig_pair(rng)[0].config).run(next(gen) for _ in range(1500))
        done, handed, errors = done + t.core.done, handed + t.core.handed, errors + t.errors
        called += sum(t.c.called.values())
    assert done > 1000 and called > 0  # signals listed twice: the Python methods
    assert (handed > 0) == (odd > 0) and (errors > 0) == (odd > 0)  # bools, huge ints; values Python raises on


def _sat(prn: int, cn0: Any, el: Any = 40, az: Any = 100, system: str = "G", sig: str = "") -> SatObs:
    return SatObs(system, prn, sig, el, az, cn0, True)


def _sky(cn0s: list[Any]) -> tuple[SatObs, ...]:
    return tuple(_sat(i + 1, c, el=10 + 7 * i, az=(47 * i) % 360) for i, c in enumerate(cn0s))


ODD_CN0 = [None, 0, 0.0, -0.0, -3, -2.5, math.nan, math.inf, 2**53, 2**60, True, False, 1e308, 5e-324, 99]


@pytest.mark.parametrize("odd", ODD_CN0, ids=repr)
def test_odd_cn0(odd: Any) -> None:
    t = Twin()
    base = [40.0, 41, 45.5, 38, 50.25, 47]
    for k in range(40):  # baselines formed, then the odd value in and out
        cn0s = list(base)
        if k % 3 == 1:
            cn0s[k % 6] = odd
        t.step(Epoch(100.0 + k, 1.7e9 + k, None, 1, sats=_sky(cn0s)))
    handed = type(odd) is bool or (type(odd) is int and odd > 2**53)
    assert (t.core.handed > 0) == handed
    assert t.core.done + t.core.handed == t.steps


def test_skies_empty_repeated_and_time_going_back() -> None:
    t = Twin()
    sky = _sky([40.0, 41, 45.5, 38, 50.25, 47])
    monos = [1.0, 1.5, 2.0, 2.1, 3.5, 2.0, 2.0, 10.0, 9.99, 11.0, 11.95, 12.9, 100.0, 1e9, -5.0, math.inf, math.nan,
             -math.inf, 20.0, 21.0]
    for i, m in enumerate(monos):
        sats = () if i % 7 == 3 else sky if i % 2 else _sky([40.0, 41, 45.5, 38, 50.25, 47][: 2 + i % 5])
        t.step(Epoch(m, 1.7e9, None, 1, sats=sats))
    assert t.core.done == t.steps


def test_sum_order_and_stable_top4() -> None:
    # sum() adds left to right from the int 0, ints as ints until the first float (CPython
    # builtin sum); sorted(reverse=True) keeps equal values in list order (Python sorting HOWTO)
    skies = [[1e16, 1.0, 1.0, 3], [3, 1.0, 1e16, 1.0], [40, 40.0, 45.5, 40, 41, 45.5, 45.5],
             [2**53, 1, 1.0], [2**52, 2**52, 7], [0.1, 0.2, 0.3, 0.7, 0.1], [5, 6, 7, 8, 9], [math.inf, 40.0]]
    t = Twin()
    for i, cn0s in enumerate(skies):
        t.step(Epoch(1.0 + i * 0.01, 1.7e9, None, 1, sats=_sky(cn0s)))
        assert canon(t.c._cur_sum) == canon(sum(c for c in cn0s if c > 0))
    assert t.core.handed == 1  # 2**53 + 1 as an int sum: Python divides it exactly, so its own


def test_hand_back_changes_nothing() -> None:
    s = SignalStats(AnalysisConfig(), print, native=True)
    for k in range(10):
        s.on_epoch(Epoch(100.0 + k, 1.7e9, None, 1, sats=_sky([40.0, 41, 45.5, 38, 50.25])))
    before = state(s)
    odd_sats = _sky([40.0, True, 45.5])
    # a bool C/N0, an int time, a list of satellites, something that is no Epoch
    for ep in (Epoch(200.0, 1.7e9, None, 1, sats=odd_sats), Epoch(200, 1.7e9, None, 1, sats=s._last_sats),
               Epoch(200.0, 1.7e9, None, 1, sats=list(odd_sats)), odd_sats):  # type: ignore[arg-type]
        assert core.step(s, ep) is False
        assert state(s) == before


def test_odd_stats_state() -> None:
    # attributes of other types: _if_t an int (handed back), containers the C code does not take
    # (the Python methods run them), an int threshold and mask, a count of -1 in a baseline
    cfg = AnalysisConfig(elev_mask_deg=5, interference_drop_db=6)
    t = Twin(cfg)
    sky = _sky([40.0, 41, 45.5, 38, 50.25, 47])
    for k in range(8):
        t.step(Epoch(100.0 + k, 1.7e9, None, 1, sats=sky))
    for s in (t.c, t.p):
        s._if_t = 107
    t.step(Epoch(108.0, 1.7e9, None, 1, sats=sky))
    assert t.core.handed == 1
    for s in (t.c, t.p):
        s.base[("G", 3, "")][1] = -1  # 1.0 / (count + 1) raises ZeroDivisionError in the reference
        s.by_sys["G"] = [0, 0]  # an int sum: the C loop leaves it to the Python loop
    for k in range(9, 14):
        t.step(Epoch(100.0 + k, 1.7e9, None, 1, sats=sky))
    # every epoch the baseline loop raises (the count stays -1); the int sum of "G" is the Python
    # loop's once (it adds a float to it)
    assert t.c.called["_interference"] == 5 and t.c.called["_accumulate_sats"] == 1 and t.errors == 5
    class Cells(dict):
        pass

    for s in (t.c, t.p):
        s.cells = Cells(s.cells)  # not an exact dict: the Python method (and there the Python loop)
    t.step(Epoch(120.0, 1.7e9, None, 1, sats=sky))
    assert t.c.called["_accumulate"] == 1 and t.errors == 6


def test_missing_attribute_raises_as_the_reference() -> None:
    t = Twin()
    sky = _sky([40.0, 41, 45.5, 38, 50.25, 47])
    t.step(Epoch(100.0, 1.7e9, None, 1, sats=sky))
    for s in (t.c, t.p):
        del s.base
    t.step(Epoch(101.0, 1.7e9, None, 1, sats=sky))
    assert t.errors == 1 and t.c.called["_interference"] == 1


def test_forgetting_and_lost_signals() -> None:
    # signals leave and come back: lost ones count as dropped for LOST_S, baselines are forgotten
    # after FORGET_S (their entries deleted), the same signal listed twice goes to the Python method
    t = Twin()
    full = _sky([40.0, 41, 45.5, 38, 50.25, 47, 44, 39.5])
    for k in range(200):
        sats = full if k < 20 or k > 150 else full[:5] if k < 40 else full[2:]
        if k == 60:
            sats = (*sats, sats[0])
        t.step(Epoch(100.0 + k, 1.7e9, None, 1, sats=sats))
    assert t.c.called["_interference"] == 1 and t.core.done == t.steps

