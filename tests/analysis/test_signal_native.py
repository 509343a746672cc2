"""The C satellite loops of SignalStats (livefix/analysis/_sigcore.c) against the reference, the
pure-Python loops of livefix/analysis/signal.py: after every epoch the whole internal state (sums
by system, band and sky cell, regression sums, baselines, counters, the open episode; compared by
repr, so 1 and 1.0, -0.0 and 0.0, and dict order all count), the events emitted, and the snapshot.

Inputs: the epochs of every log of the shared real-data corpus, every simulator dialect at 10 Hz
for a minute, and seeded random epochs (bench/fuzz.py sig_epochs: odd cn0, elevation and azimuth
values and types, signals coming and going, time stepping back, masks and thresholds from config).
Where the Python loops raise, both must raise the same error and leave the same partial state.
Skipped when the extension is not built.
"""

from __future__ import annotations

import random
from types import ModuleType

import pytest
from twinkit import CORPUS, CORPUS_FILES, bench_fuzz, corpus_epochs, sim_epochs

from livefix.analysis import signal, signal_native
from livefix.analysis.config import AnalysisConfig
from livefix.analysis.signal import SignalStats
from livefix.sim.dialects import DIALECTS
from livefix.state.epoch import Epoch, SatObs

core = pytest.importorskip("livefix.analysis._sigcore", reason="livefix.analysis._sigcore is not built (no compiler?)")


def _fuzz() -> ModuleType:
    return bench_fuzz()  # bench/fuzz.py: the generators `make fuzz` runs under the sanitizers


FUZZ = _fuzz()


class Twin:
    """SignalStats with the C loops and the reference, fed the same epochs, compared after each."""

    def __init__(self, config: AnalysisConfig | None = None) -> None:
        cfg = config or AnalysisConfig()
        self.ec: list = []
        self.ep: list = []
        self.c = SignalStats(cfg, self.ec.append, native=True)
        self.p = SignalStats(cfg, self.ep.append, native=False)
        self.steps = self.runs = self.errors = 0

    def step(self, ep: Epoch, snapshot: bool = True) -> None:
        t0 = self.p._if_t
        errs = []
        for a in (self.c, self.p):
            try:
                a.on_epoch(ep)
                errs.append(None)
            except Exception as err:  # noqa: BLE001 - compared below
                errs.append((type(err), str(err)))
        self.steps += 1
        self.runs += self.p._if_t != t0
        self.errors += errs[1] is not None
        where = Where(self.steps, ep)  # spelt out only when an assertion fails
        assert errs[0] == errs[1], where
        assert FUZZ.sig_state(self.c) == FUZZ.sig_state(self.p), where
        assert repr(self.ec) == repr(self.ep), where
        if snapshot:  # odd values can make the snapshot raise too: the same error on both
            assert _snapshot(self.c) == _snapshot(self.p), where


class Where:
    """The step and epoch an assertion names; pytest shows its repr, built only on a failure."""

    def __init__(self, step: int, ep: Epoch) -> None:
        self.step, self.ep = step, ep

    def __repr__(self) -> str:
        return f"step {self.step}: {self.ep.mono!r} {self.ep.sats!r}"[:2000]


def _snapshot(s: SignalStats) -> str:
    try:
        return repr(s.snapshot())
    except Exception as err:  # noqa: BLE001 - compared by the caller
        return repr((type(err), str(err)))


def test_core_is_configured_and_selected(monkeypatch: pytest.MonkeyPatch) -> None:
    assert signal._CORE is core and core.API == 2
    cfg = AnalysisConfig()
    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    assert SignalStats(cfg, print)._core is core
    monkeypatch.setenv("LIVEFIX_PURE", "1")
    assert SignalStats(cfg, print)._core is None
    assert SignalStats(cfg, print, native=True)._core is core  # tests ask for it explicitly
    monkeypatch.setattr(signal, "_CORE", None)
    monkeypatch.delenv("LIVEFIX_PURE")
    assert SignalStats(cfg, print)._core is None
    with pytest.raises(RuntimeError):
        SignalStats(cfg, print, native=True)


def test_configure_refuses_what_it_cannot_hold() -> None:
    class NoSlots:
        system = prn = signal = elev = azim = cn0 = None

    args = signal._CORE_ARGS
    with pytest.raises(TypeError):
        core.configure(NoSlots, *args[1:])
    with pytest.raises(ValueError):
        core.configure(args[0], signal._SIN[:90], *args[2:])
    with pytest.raises(TypeError):
        core.configure(*args[:2], [float(b) for b in signal._BAND], *args[3:])
    class NoEpochSlots:
        mono = sats = None

    with pytest.raises(TypeError):  # the epoch type too must have its fields as slots
        core.configure(*args[:9], NoEpochSlots, *args[10:])
    assert signal_native.configure(core, signal._CORE_ARGS)  # configured again as on import, for what follows


@pytest.mark.skipif(not CORPUS_FILES, reason="shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
@pytest.mark.parametrize("name", CORPUS_FILES)
def test_corpus_logs(name: str) -> None:
    # shared/realdata/corpus/<name>: a public log, source in shared/realdata/SOURCES.md
    eps = corpus_epochs(CORPUS / name)
    t = Twin()
    for ep in eps:
        t.step(ep)
    assert t.steps == len(eps)


def test_corpus_runs_the_loops() -> None:
    if not CORPUS_FILES:
        pytest.skip("shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
    # gsvnoise_20220112_test.nmea (see shared/realdata/SOURCES.md): 10 Hz with up to ~70 signals,
    # so the once-per-second loops ran on large skies, and baselines were formed
    t = Twin()
    for ep in corpus_epochs(CORPUS / "gsvnoise_20220112_test.nmea"):
        t.step(ep, snapshot=False)
    assert t.runs > 300 and len(t.p.base) > 30 and t.p.cs[0] > 1000


DIALECT_RUNS = ["clean", *DIALECTS, ",".join(n for n in DIALECTS if n not in (
    "rate-5hz", "rate-10hz", "rate-20hz", "gga-2hz-zda-1hz", "rmc-10hz-gga-1hz", "gns-only"))]


@pytest.mark.parametrize("dialect", DIALECT_RUNS, ids=[*DIALECT_RUNS[:-1], "all-at-once"])
def test_simulator_dialects(dialect: str) -> None:
    t = Twin()
    for ep in sim_epochs(dialect, 60.0):
        t.step(ep)
    assert t.runs >= 50


@pytest.mark.parametrize(("seed", "odd"), [(1, 0.0), (2, 0.02), (3, 0.02), (4, 0.1)])
def test_random_epochs(seed: int, odd: float) -> None:
    rng = random.Random(seed)
    gen = FUZZ.sig_epochs(rng, odd)
    runs = errors = active = 0
    for _ in range(4):  # a new config each time (mask, threshold, int or float)
        t = Twin(FUZZ.sig_pair(rng)[0].config)
        for _ in range(1200):
            t.step(next(gen), snapshot=t.steps % 10 == 0)
            active += t.p.active is not None
        runs, errors = runs + t.runs, errors + t.errors
    assert runs > 3000 and active > 0  # loops ran, episodes were open
    assert (errors > 0) == (odd > 0)  # odd values made the Python loops raise, and the C path alike


def _odd_state(s: SignalStats) -> None:
    """Containers in shapes the C loops do not take (they must leave those to the Python loop)."""
    s.by_sys["G"] = [0, 0]  # an int sum
    s.bands[3] = [1.5, 2.0]  # a float count
    s.cells[(1, 2)] = [0.0, 0.0, 0.0]
    s.base[("G", 1, "")] = [40.0, 9, 100]  # an int time


@pytest.mark.parametrize("seed", [5, 6])
def test_odd_container_states(seed: int) -> None:
    rng = random.Random(seed)
    gen = FUZZ.sig_epochs(rng, 0.02)
    t = Twin()
    _odd_state(t.c)
    _odd_state(t.p)
    for _ in range(600):
        t.step(next(gen))
    assert t.runs > 300


def test_cs_of_another_shape_is_left_to_python() -> None:
    # cs with ints (or of another length) is not the C code's: the Python loop takes it as it is
    sat = SatObs("G", 1, "", 40, 100, 45, True)
    for cs in ([0, 0, 0, 0, 0], [0.0] * 4):
        t = Twin()
        t.c.cs, t.p.cs = list(cs), list(cs)
        t.step(Epoch(1.0, 1.7e9, None, 1, sats=(sat,)))
        assert t.errors == (len(cs) != 5)


def test_partial_state_after_a_raising_satellite() -> None:
    # a float elevation in 0..90 indexes a list: TypeError after the system sums of that satellite
    # were added (the satellites before it done in C, the rest in Python)
    ok = [SatObs("G", p, "", 30, 10 * p, 40, True) for p in range(1, 4)]
    bad = SatObs("G", 9, "", 45.0, 90, 41, True)  # type: ignore[arg-type]
    t = Twin()
    t.step(Epoch(1.0, 1.7e9, None, 1, sats=(*ok, bad, *ok)))
    assert t.errors == 1
    assert t.p.by_sys == {"G": [161.0, 4]} and t.p.bands[3] == [120.0, 3] and t.p.cs[0] == 3.0
