"""FixStats.on_epoch's C step (livefix/analysis/_epochcore_fix.c) against the reference, the Python
code of livefix/analysis/fixes.py: after every epoch, event and data gap the error if any, the events
emitted and the whole state (the FixStats attributes, its Timeline, TimeBook and recent scatter;
type-exact and bit-exact through bench/fuzz_epochcore.py's exact()), and snapshot() at the end.

Inputs: the epochs and events of the demo recordings, of every log of the shared real-data corpus and
of every simulator dialect, whole Analyzers with and without the C step, odd states the C code must
leave to the Python code, and seeded random epoch streams (bench/fuzz_fix.py, what `make fuzz` runs
under the sanitizers). Skipped when the extension is not built.
"""

from __future__ import annotations

import copy
import json
import random
from pathlib import Path
from types import ModuleType
from typing import Any

import pytest
from twinkit import (
    CORPUS_FILES,
    bench_module,
    corpus_log_epochs,
    feed_stream,
    odd_states_agree,
    recording_items,
    sim_epochs,
)

from livefix.analysis import fixes, fixes_native
from livefix.analysis.config import AnalysisConfig
from livefix.analysis.engine import Analyzer
from livefix.analysis.fixes import FixStats, _Recent
from livefix.sim.dialects import DIALECTS
from livefix.state.epoch import Epoch

core = pytest.importorskip("livefix.analysis._epochcore", reason="livefix.analysis._epochcore is not built")
if not hasattr(core, "fix_step"):
    pytest.skip("livefix.analysis._epochcore was built without the fix step", allow_module_level=True)

RECORDINGS = Path(__file__).resolve().parents[2] / "recordings"


def _fuzz() -> ModuleType:
    return bench_module("fuzz_fix")  # the generators `make fuzz` runs under the sanitizers


FUZZ = _fuzz()


def _load() -> ModuleType | None:
    return fixes_native.load(FixStats, _Recent, fixes._POSITION_SENTENCES, fixes.DT_N, fixes.EW_MIN, fixes._EW_A)


def test_core_is_configured_and_selected(monkeypatch: pytest.MonkeyPatch) -> None:
    assert fixes._CORE is core and core.API == 1
    cfg = AnalysisConfig()
    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    assert FixStats(cfg, print)._fast == core.fix_step
    monkeypatch.setenv("LIVEFIX_PURE", "1")
    assert FixStats(cfg, print)._fast is None
    assert FixStats(cfg, print, native=True)._fast == core.fix_step  # tests ask for it explicitly
    monkeypatch.setattr(fixes, "_CORE", None)
    monkeypatch.delenv("LIVEFIX_PURE")
    assert FixStats(cfg, print)._fast is None
    with pytest.raises(RuntimeError):
        FixStats(cfg, print, native=True)


def test_configure_refuses_what_it_cannot_use() -> None:
    class NoSlots:
        n = me = mn = ve = vn = None

    with pytest.raises(TypeError):  # the recent scatter's fields must be slots
        core.configure_fix(FixStats, Epoch, *_args(recent=NoSlots))
    with pytest.raises(ValueError):
        core.configure_fix(FixStats, Epoch, *_args(hypot=3))
    with pytest.raises(ValueError):
        core.configure_fix(FixStats, Epoch, *_args(dt_n=0))
    with pytest.raises(TypeError):
        core.fix_step(FixStats(AnalysisConfig(), print))
    # a FixStats of another type (a subclass) and another epoch type are left to the Python code
    sub = type("Sub", (FixStats,), {})(AnalysisConfig(), print)
    assert core.fix_step(sub, Epoch(mono=1.0, wall=1.0, utc=None, quality=0)) is False
    assert core.fix_step(FixStats(AnalysisConfig(), print), object()) is False
    assert fixes._CORE is _load()  # configured again as on import, for what follows


def _args(recent: type = _Recent, hypot: object = None, dt_n: int = fixes.DT_N) -> tuple[Any, ...]:
    import math
    from collections import deque

    from livefix.analysis.availability import GAP_FACTOR, NOT_FIX_STATE, TimeBook
    from livefix.analysis.streaming import Timeline
    from livefix.state.epoch import FIX_NAMES

    return (Timeline, TimeBook, recent, deque, AnalysisConfig, FIX_NAMES, "none", fixes._POSITION_SENTENCES,
            NOT_FIX_STATE, math.hypot if hypot is None else hypot, 10.0, GAP_FACTOR, dt_n, fixes.EW_MIN, fixes._EW_A)


def _replay(items: list[tuple[str, Any]]) -> Any:
    pair = FUZZ.Pair()
    for i, it in enumerate(items):
        why = pair.step(it)
        assert why is None, (i, it, why[:2000])
    a, b = pair.snapshots()
    assert a == b
    return pair


def _recording_items(path: Path) -> list[tuple[str, Any]]:
    return recording_items(path)


@pytest.mark.parametrize("name", ["rooftop-5min.lfr", "building-5min.lfr", "soak-10min.lfr"])
def test_recordings(name: str) -> None:
    items = _recording_items(RECORDINGS / name)
    pair = _replay(items)
    assert pair.fast > 0.9 * sum(k == "epoch" for k, _ in items)  # nearly every epoch is the C case


@pytest.mark.skipif(not CORPUS_FILES, reason="shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
@pytest.mark.parametrize("name", CORPUS_FILES)
def test_corpus_logs(name: str) -> None:
    eps = corpus_log_epochs(name)  # a public log, source in shared/realdata/SOURCES.md
    _replay([("epoch", ep) for ep in eps])


@pytest.mark.parametrize("dialect", ["clean", *DIALECTS])
def test_simulator_dialects(dialect: str) -> None:
    eps = list(sim_epochs(dialect, 60.0))
    pair = _replay([("epoch", ep) for ep in eps])
    assert len(eps) > 100 and pair.fast > len(eps) // 2  # the C case ran


def test_analyzers_give_the_same_report_with_the_c_step(monkeypatch: pytest.MonkeyPatch) -> None:
    from livefix.pipeline import StreamCounters

    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    items = _recording_items(RECORDINGS / "rooftop-5min.lfr")
    out = []
    for c in (core, None):
        monkeypatch.setattr(fixes, "_CORE", c)
        an = Analyzer()
        assert (an.fix._fast is None) == (c is None)
        for kind, x in items:
            (an.on_epoch if kind == "epoch" else an.on_event)(x)
        an.reset()  # and on after a statistics reset
        for kind, x in items[: len(items) // 3]:
            (an.on_epoch if kind == "epoch" else an.on_event)(x)
        out.append(json.dumps(an.snapshot(StreamCounters()), sort_keys=True, default=repr))
    assert out[0] == out[1]


def _oddities() -> list[tuple[str, Any]]:
    """Attribute values of other types or shapes (set alike on both sides before an epoch)."""
    return [
        ("_iv", 1), ("_iv", None), ("epochs", 2.0), ("epochs", 2**70), ("_prev_t", 0), ("_last_fix", None),
        ("_last_fix", ["x"]), ("_lost_at", (1.0, 2.0)), ("_clock_lost", 1), ("_restart_at", -1.0),
        ("_await_loss", 0), ("_acquiring", True), ("current", None), ("_fix_marked", 1), ("_rtk_marked", False),
        ("_anchor", (1, 2)), ("_anchor", None), ("_dts_sorted", [1]), ("counts", {"none": 1}), ("_proj", None),
        ("_recent", {}), ("_recent", []), ("_start", None), ("_start", {}), ("_gaps_at", [])]


def _deep_oddities(fs: FixStats, k: int) -> None:
    """Values inside the Timeline, TimeBook, window and scatter."""
    if k == 0:
        fs.clock.t = int(fs.clock.t or 0)
    elif k == 1:
        fs.clock._utc = "x"
    elif k == 2:
        fs.book.time = {b: int(v) for b, v in fs.book.time.items()}
    elif k == 3:
        fs.book.prev = None
    elif k == 4:
        for r in fs._recent.values():
            r.n = float(r.n)
    elif k == 5:
        for r in fs._recent.values():
            r.ve = -1.0  # math.sqrt refuses: the Python code's ValueError
            r.n = 100
    elif k == 6:
        if fs._dts:
            fs._dts[0] = "x"
    elif k == 7:
        fs._start["_wait"] = (("ttff_s", "1"),)  # type: ignore[index]
    elif k == 8:
        fs.clock._mono = None


@pytest.mark.filterwarnings("ignore::RuntimeWarning")
def test_odd_states_are_left_to_the_python_code() -> None:
    eps = list(sim_epochs("clean", 20.0))
    base = [("epoch", ep) for ep in eps[:60]]
    cases: list[Any] = [("attr", *o) for o in _oddities()] + [("deep", k) for k in range(9)]

    def apply(fs: Any, case: Any) -> None:
        if case[0] == "attr":
            setattr(fs, case[1], copy.deepcopy(case[2]))  # one value each: a list is changed in place
        else:
            _deep_oddities(fs, case[1])

    odd_states_agree(FUZZ.Pair, base, cases, apply, [("epoch", ep) for ep in eps[60:80]])


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_random_streams(seed: int) -> None:
    n, bad, examples = FUZZ.diff(2500, seed=seed, odd=0.03)
    assert bad == 0, examples


def test_random_streams_reach_the_c_step() -> None:
    pair = FUZZ.Pair()
    epochs = feed_stream(pair, FUZZ.stream(random.Random(7), 0.0), 2500)
    assert pair.fast > epochs // 3  # the running-session case, amid restarts, outages and gaps


def test_a_steady_rtk_session_by_hand() -> None:
    """10 s of RTK-fixed epochs at 10 Hz, receiver time in tenths, through the C step: a nominal
    interval of 0.1 s, all the time RTK fixed, no outage, no jump (common practice: a steady fixed
    receiver is 100 % available at its own rate)."""
    fs = FixStats(AnalysisConfig(), print, native=True)
    fast, done = fs._fast, []
    fs._fast = lambda s, e: done.append(fast(s, e)) or done[-1]  # type: ignore[misc, func-returns-value]
    for i in range(101):
        fs.on_epoch(Epoch(mono=50.0 + i / 10, wall=1.7e9 + i / 10, utc=1.7e9 + i / 10, quality=4,
                          lat=45.0 + (i % 3) * 1e-9, lon=7.0, h=300.0, sentences=("GGA", "RMC")))
    snap = fs.snapshot()
    assert done.count(True) >= 98  # all but the first epochs (the start and the first fix: the Python code)
    assert snap["interval_s"] == 0.1 and snap["availability"] == {"rtk_fixed": 1.0}
    assert snap["outages_total"] == 0 and snap["jumps_total"] == 0 and snap["epochs"] == 101
