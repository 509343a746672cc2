"""The common case of PositionStats.on_epoch in C (livefix/analysis/_epochcore_pos.c) against the
reference, the Python code of livefix/analysis/position.py: after every epoch the error if any, the
events and the whole state of PositionStats and of the stages it drives (MotionDetector, Convergence,
Jumps, the tracks' waiting rows and moments; type-exact and bit-exact through
bench/fuzz_epochcore.py's exact()), and the snapshots.

Inputs: every log of the shared real-data corpus and every simulator dialect (the clock stepped
first, as FixStats does in the Analyzer), two Analyzers with and without the C step, states the C
code must leave to the Python code, and seeded random epoch streams (bench/fuzz_pos.py: moves and
stops, jumps, heights missing or MSL only, lost fixes, odd field values, references set mid-stream).
Skipped when the extension is not built.
"""

from __future__ import annotations

import json
import math
import random
from collections import deque
from types import ModuleType

import pytest
from twinkit import CORPUS_FILES, bench_module, corpus_log_epochs, sim_epochs

from livefix.analysis import convergence, position
from livefix.analysis.config import AnalysisConfig
from livefix.analysis.engine import Analyzer
from livefix.analysis.position import PositionStats
from livefix.sim.dialects import DIALECTS
from livefix.state.epoch import Epoch

core = pytest.importorskip("livefix.analysis._epochcore", reason="livefix.analysis._epochcore is not built")
if not hasattr(core, "position_epoch"):
    pytest.skip("livefix.analysis._epochcore was built without the position step", allow_module_level=True)


def _fuzz() -> ModuleType:
    return bench_module("fuzz_pos")  # the generators `make fuzz` runs under the sanitizers


FUZZ = _fuzz()


def _feed(eps: list[Epoch], cfg: AnalysisConfig | None = None, pre: bool = True) -> FUZZ.Pair:
    pair = FUZZ.Pair(cfg)
    for i, ep in enumerate(eps):
        why = pair.step((ep, pre, None), snapshot=i % 997 == 0)
        assert why is None, (i, why)
    assert pair.step((eps[-1], False, None), snapshot=True) is None  # the same epoch again, and the end
    return pair


def test_core_is_configured_and_selected(monkeypatch: pytest.MonkeyPatch) -> None:
    assert position._CORE is core
    cfg = AnalysisConfig()
    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    assert PositionStats(cfg, print)._core is core
    monkeypatch.setenv("LIVEFIX_PURE", "1")
    assert PositionStats(cfg, print)._core is None
    assert PositionStats(cfg, print, native=True)._core is core  # tests ask for it explicitly
    monkeypatch.setattr(position, "_CORE", None)
    monkeypatch.delenv("LIVEFIX_PURE")
    assert PositionStats(cfg, print)._core is None
    with pytest.raises(RuntimeError):
        PositionStats(cfg, print, native=True)


def test_configure_refuses_what_it_cannot_use() -> None:
    class NoSlots:
        clock = None

    args = list(position._CONFIGURE)
    with pytest.raises(TypeError):
        core.configure_position((NoSlots, *args[0][1:]), *args[1:])
    with pytest.raises(ValueError):
        core.configure_position(*args[:6], 3, *args[7:])  # hypot not callable
    with pytest.raises(TypeError):
        core.position_epoch(PositionStats(AnalysisConfig(), print))
    assert core.position_epoch(object(), None) is False  # not a PositionStats: the Python code's
    # configured again as on import, for what follows
    assert position.load_core("configure_position", *position._CONFIGURE) is core


@pytest.mark.skipif(not CORPUS_FILES, reason="shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
@pytest.mark.parametrize("name", CORPUS_FILES)
def test_corpus_logs(name: str) -> None:
    pair = _feed(corpus_log_epochs(name))  # a public log, source in shared/realdata/SOURCES.md
    assert pair.core.done + pair.core.handed == pair.steps


@pytest.mark.parametrize("dialect", ["clean", *DIALECTS])
def test_simulator_dialects(dialect: str) -> None:
    pair = _feed(list(sim_epochs(dialect, 90.0)))
    assert pair.steps > 150 and pair.core.done > 50  # the C step ran


def test_clock_not_stepped_first_is_left_to_python() -> None:
    pair = _feed(list(sim_epochs("clean", 20.0)), pre=False)
    assert pair.core.done <= 1 and pair.core.handed >= pair.steps - 1  # but _feed's last step: the same epoch


def test_analyzers_give_the_same_reports_with_the_c_step(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    eps = list(sim_epochs("clean", 150.0))
    out = []
    for native in (True, False):
        an = Analyzer()
        if not native:
            an.position._core = None
        assert (an.position._core is core) == native
        for ep in eps:
            an.on_epoch(ep)
        ps = an.position
        out.append(json.dumps([ps.snapshot(), ps.motion.snapshot()], sort_keys=True, default=repr))
    assert out[0] == out[1]


def _odd_states(ps: PositionStats) -> None:
    """Stage states in shapes the C code does not take (it must call the Python code for them)."""
    ps.motion._w = 3  # an int window: the same number, the reference's update
    ps.motion._full = deque(ps.motion._full, maxlen=50)  # a short window: the append drops items
    ps.conv.n = convergence.HEAD_CAP - 40  # the head fills: Convergence.add seeds the trackers


def test_odd_states_are_left_to_python() -> None:
    rng = random.Random(7)
    gen = FUZZ.epochs(rng, 0.0)
    pair = FUZZ.Pair()
    for i in range(600):
        if i == 100:
            _odd_states(pair.c)
            _odd_states(pair.p)
        assert pair.step(next(gen), snapshot=i % 50 == 0) is None, i
    assert pair.c.conv.frozen is not None and pair.core.done > 300


def test_a_replaced_jump_check_is_called() -> None:
    # the reference calls self.jumps.check; a replaced one must be called by the C step too
    pair = FUZZ.Pair()
    calls = [0, 0]
    for i, ps in enumerate((pair.c, pair.p)):
        check = ps.jumps.check

        def record(*a: object, check: object = check, i: int = i) -> bool:
            calls[i] += 1
            return check(*a)  # type: ignore[operator, no-any-return]

        ps.jumps.check = record  # type: ignore[method-assign]
    for ep in sim_epochs("clean", 90.0):
        assert pair.step((ep, True, None)) is None
    assert calls[0] == calls[1] > 300 and pair.core.done > 800


@pytest.mark.filterwarnings("ignore::RuntimeWarning")
@pytest.mark.parametrize(("seed", "odd"), [(1, 0.0), (2, 0.02), (3, 0.2)])
def test_random_streams(seed: int, odd: float) -> None:
    n, bad, examples = FUZZ.diff(2000, seed, odd)
    assert bad == 0, examples
    rng = random.Random(seed)
    gen = FUZZ.epochs(rng, odd)
    pair = FUZZ.Pair(FUZZ.config(rng))
    for i in range(2500):
        assert pair.step(next(gen), snapshot=i % 400 == 0) is None, i
    assert pair.core.done > 300 and pair.core.handed > 100  # the C step ran, and the rest was left to Python
    assert (pair.errors > 0) == (odd > 0)
    assert pair.c.motion.moves > 0 and pair.c.segments > 1  # moves and stops at new places


def test_user_reference_mid_stream() -> None:
    rng = random.Random(11)
    gen = FUZZ.epochs(rng, 0.0)
    pair = FUZZ.Pair()
    for i in range(3000):
        ep, pre, _ = next(gen)
        ref = (FUZZ.LAT0, FUZZ.LON0, FUZZ.H0) if i in (700, 2100) else None
        assert pair.step((ep, pre, ref), snapshot=i % 300 == 0) is None, i
    assert pair.c.ref_source == "user" and pair.core.done > 500
    assert not math.isnan(pair.c.h_error() or 0.0)
