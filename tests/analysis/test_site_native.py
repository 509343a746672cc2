"""The C steps of StreamIntegrity.on_epoch (livefix/analysis/_epochcore_site.c) and
MedianPosition.on_epoch (livefix/analysis/_epochcore_median.c) against the references, the Python code
of livefix/analysis/integrity.py and median.py: after every item the error if any, the events emitted
and the whole state of both stages (type-exact and bit-exact through
bench/fuzz_epochcore.py's same(), with which stored objects are the epochs' own), and the snapshots.

Inputs: the chunks, epochs and events of the demo recordings, of every log of the shared real-data
corpus and of every simulator dialect, whole Analyzers with and without the C steps, odd states the C
code must leave to the Python code, and seeded random item streams (bench/fuzz_site.py, what
`make fuzz` runs under the sanitizers). Skipped when the extension is not built.
"""

from __future__ import annotations

import copy
import json
import math
import random
from collections import deque
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

from livefix.analysis import integrity, median
from livefix.analysis.config import AnalysisConfig
from livefix.analysis.engine import Analyzer
from livefix.analysis.integrity import StreamIntegrity
from livefix.analysis.median import BinnedMedian, MedianPosition, _FixMedians
from livefix.sim.dialects import DIALECTS
from livefix.state.epoch import FIX_NAMES, Epoch

core = pytest.importorskip("livefix.analysis._epochcore", reason="livefix.analysis._epochcore is not built")
if not hasattr(core, "median_epoch"):
    pytest.skip("livefix.analysis._epochcore was built without the site steps", allow_module_level=True)

RECORDINGS = Path(__file__).resolve().parents[2] / "recordings"
STAGES = [(integrity, lambda **k: StreamIntegrity(AnalysisConfig(), print, **k), "integrity"),
          (median, lambda **k: MedianPosition(**k), "median")]


def _fuzz() -> ModuleType:
    return bench_module("fuzz_site")  # the generators `make fuzz` runs under the sanitizers


FUZZ = _fuzz()


def _bound(stage: Any) -> bool:
    """The stage's on_epoch is the bound C step (an instance attribute over the class's reference)."""
    fn = vars(stage).get("on_epoch")
    return fn is not None and type(fn).__name__ == "builtin_function_or_method" and fn.__self__ is stage


@pytest.mark.parametrize(("mod", "make", "kind"), STAGES)
def test_core_is_configured_and_selected(monkeypatch: pytest.MonkeyPatch, mod: ModuleType, make: Any,
                                         kind: str) -> None:
    assert mod._CORE is core and core.API == 1
    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    st = make()
    # named as the reference (the Analyzer's error notes say where), which it runs when handed back
    assert _bound(st) and st.on_epoch.__qualname__ == type(st).on_epoch.__qualname__
    monkeypatch.setenv("LIVEFIX_PURE", "1")
    assert not _bound(make())
    assert _bound(make(native=True))  # tests ask for it explicitly
    sub = type("Sub", (type(st),), {})
    assert not _bound(sub(**({} if mod is not integrity else {"config": AnalysisConfig(), "emit": print}),
                          native=True))  # a subclass keeps its own (maybe overridden) on_epoch
    monkeypatch.setattr(mod, "_CORE", None)
    monkeypatch.delenv("LIVEFIX_PURE")
    assert not _bound(make())
    with pytest.raises(RuntimeError):
        make(native=True)


def test_configure_refuses_what_it_cannot_use() -> None:
    class NoSlots:
        mono = wall = utc = date_known = datum = width = bins = _n = _last = _run = None

    with pytest.raises(TypeError):  # the epoch's fields must be slots
        core.configure_integrity(StreamIntegrity, NoSlots, deque, integrity.WINDOW, integrity.GAP_FACTOR)
    with pytest.raises(ValueError):
        core.configure_integrity(StreamIntegrity, Epoch, deque, 4, integrity.GAP_FACTOR)
    with pytest.raises(ValueError):
        core.configure_integrity(StreamIntegrity, Epoch, deque, integrity.WINDOW, math.nan)
    with pytest.raises(TypeError):  # the binned medians' fields must be slots
        core.configure_median(MedianPosition, _FixMedians, NoSlots, Epoch, FIX_NAMES, "none", 64, 2048)
    with pytest.raises(ValueError):
        core.configure_median(MedianPosition, _FixMedians, BinnedMedian, Epoch, FIX_NAMES, "none", 0, 2048)
    with pytest.raises(TypeError):
        core.integrity_epoch(StreamIntegrity(AnalysisConfig(), print))
    with pytest.raises(ValueError):  # SessionSpan's step was dropped: slower than its Python body
        core.bind_step("span", MedianPosition(), MedianPosition.on_epoch)
    with pytest.raises(TypeError):
        core.bind_step("median", MedianPosition(), None)
    with pytest.raises(ValueError):  # one reference per kind
        core.bind_step("median", MedianPosition(), StreamIntegrity.on_epoch)
    ep = Epoch(mono=1.0, wall=1.0, utc=None, quality=0)
    # stages of another type (subclasses) and another epoch type are left to the Python code
    for cls, make, fn in ((StreamIntegrity, lambda c: c(AnalysisConfig(), print), core.integrity_epoch),
                          (MedianPosition, lambda c: c(), core.median_epoch)):
        assert fn(make(type("Sub", (cls,), {})), ep) is False
        assert fn(make(cls), object()) is False
    # configured again as on import, for what follows
    assert integrity._CORE is median.load_core("configure_integrity", StreamIntegrity, Epoch, deque,
                                                integrity.WINDOW, integrity.GAP_FACTOR)
    assert median._CORE is median.load_core("configure_median", MedianPosition, _FixMedians, BinnedMedian, Epoch,
                                            FIX_NAMES, "none", median.BATCH, median.MAX_BINS)


def _replay(items: list[tuple[str, Any]], memo: bool = True) -> Any:
    pair = FUZZ.Pair(memo)
    for i, it in enumerate(items):
        why = pair.step(it)
        assert why is None, (i, it, why[:2000])
    a, b = pair.snapshots()
    assert a == b
    assert pair.compare() is None  # and after the snapshots' settles
    return pair


def _recording_items(path: Path) -> list[tuple[str, Any]]:
    return recording_items(path, chunks=True)


@pytest.mark.parametrize("name", ["rooftop-5min.lfr", "building-5min.lfr", "soak-10min.lfr"])
def test_recordings(name: str) -> None:
    items = _recording_items(RECORDINGS / name)
    pair = _replay(items)
    assert pair.fast > 0.95 * 2 * sum(k == "epoch" for k, _ in items)  # nearly every epoch is the C case


@pytest.mark.skipif(not CORPUS_FILES, reason="shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
@pytest.mark.parametrize("name", CORPUS_FILES)
def test_corpus_logs(name: str) -> None:
    eps = corpus_log_epochs(name)  # a public log, source in shared/realdata/SOURCES.md
    _replay([("epoch", ep) for ep in eps])


@pytest.mark.parametrize("dialect", ["clean", *DIALECTS])
def test_simulator_dialects(dialect: str) -> None:
    eps = list(sim_epochs(dialect, 60.0))
    pair = _replay([("epoch", ep) for ep in eps], memo=dialect != "clean")
    assert len(eps) > 100 and pair.fast > len(eps)  # the C cases ran


def test_analyzers_give_the_same_report_with_the_c_steps(monkeypatch: pytest.MonkeyPatch) -> None:
    from livefix.pipeline import StreamCounters

    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    items = _recording_items(RECORDINGS / "building-5min.lfr")
    ep = next(x for k, x in items[500:] if k == "epoch")  # an epoch the references raise on: the same note
    items.insert(items.index(("epoch", ep)) + 1, ("epoch", Epoch(mono="x", wall=ep.wall, utc=ep.utc, quality=4,
                                                                 lat=ep.lat, lon=ep.lon, datum=(1, 2))))
    out = []
    for c in (core, None):
        for mod in (integrity, median):
            monkeypatch.setattr(mod, "_CORE", c)
        an = Analyzer()
        assert _bound(an.integrity) == _bound(an.median) == (c is not None) and not _bound(an.span)
        for _ in range(2):  # and on after a statistics reset
            for kind, x in items:
                if kind == "chunk":
                    an.on_chunk(*x)
                else:
                    (an.on_epoch if kind == "epoch" else an.on_event)(x)
            out.append(json.dumps(an.snapshot(StreamCounters()), sort_keys=True, default=repr))
            an.reset()
    assert out[:2] == out[2:]
    first = json.loads(out[0])  # the odd epoch's notes, by stage name: the same on both paths
    assert first["internal_errors"] == 6 and first["last_error"].startswith("StreamIntegrity.on_epoch: TypeError")


def _oddities() -> list[tuple[str, str, Any]]:
    """Attribute values of other types or shapes (set alike on both sides before an epoch)."""
    return [
        ("integrity", "epochs", 2.0), ("integrity", "epochs", 2**70), ("integrity", "prev", None),
        ("integrity", "prev", "x"), ("integrity", "_holes", [1.0]), ("integrity", "_holes", deque([1e9])),
        ("integrity", "_nominal", 0), ("integrity", "_nominal", 1e-9), ("integrity", "_nominal", None),
        ("integrity", "iv_host", []), ("integrity", "iv_nominal", deque([0.1] * 300)),
        ("integrity", "iv_nominal", deque([0.1] * 256)), ("integrity", "_iv_sorted", (0.1,)),
        ("integrity", "_iv_sorted", [0.1, 1, 0.2]), ("integrity", "_iv_sorted", []), ("integrity", "_iv_nan", 1),
        ("integrity", "_iv_nan", False),
        ("median", "by_fix", []), ("median", "by_fix", {}), ("median", "_valid", lambda ep: 1),
        ("median", "_valid", lambda ep: 1 / 0), ("median", "by_fix", {"rtk_fixed": None})]


def _deep_oddities(m: MedianPosition, k: int) -> None:
    """Values inside the binned medians and the pending rows."""
    for fm in m.by_fix.values():
        if k == 0:
            fm._pend.append((1, 2, 3, 4, 5))
        elif k == 1:
            fm._pend.append((1.0, 2.0))
        elif k == 2:
            fm.lat.width = 0.0  # ZeroDivisionError in the Python code
        elif k == 3:
            fm.h.bins = {key: (c, s) for key, (c, s) in fm.h.bins.items()}
        elif k == 4:
            fm.lon.bins = {key: [float(c), s] for key, (c, s) in fm.lon.bins.items()}
        elif k == 5:
            fm.alt._last = None
        elif k == 6:
            fm.sep._run = -1
        elif k == 7:
            fm.lat.width = 1e-300  # a bin index floor() refuses: OverflowError in the Python code
        elif k == 8:
            fm._pend = [r + (0,) for r in fm._pend]
        elif k == 9:
            fm._pend.extend([fm._pend[-1]] * 1100 if fm._pend else [])
        elif k == 10:
            fm.alt = fm.sep  # one median in two places
        elif k == 11:
            fm.lon.bins = fm.lat.bins


@pytest.mark.filterwarnings("ignore::RuntimeWarning")
def test_odd_states_are_left_to_the_python_code() -> None:
    eps = list(sim_epochs("clean", 20.0))
    base = [("epoch", ep) for ep in eps[:70]]
    cases: list[Any] = [("attr", *o) for o in _oddities()] + [("deep", k) for k in range(12)]

    def apply(side: Any, case: Any) -> None:
        if case[0] == "attr":
            setattr(getattr(side, case[1]), case[2], copy.deepcopy(case[3]))
        else:
            _deep_oddities(side.median, case[1])

    odd_states_agree(FUZZ.Pair, base, cases, apply, [("epoch", ep) for ep in eps[70:200]])


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_random_streams(seed: int) -> None:
    n, bad, examples = FUZZ.diff(2500, seed=seed, odd=0.03)
    assert bad == 0, examples


def test_random_streams_reach_the_c_steps() -> None:
    pair = FUZZ.Pair()
    epochs = feed_stream(pair, FUZZ.stream(random.Random(7), 0.0), 3000)
    assert pair.fast > epochs  # the running-session cases, amid gaps, stalls and lost fixes


def test_wide_scatter_coarsens_the_same_way() -> None:
    """Latitudes spread over far more than MAX_BINS starting bins: the Python settle coarsens, the C
    settle takes the batches between; both give the same bins and width (doubled, BinnedMedian)."""
    rng = random.Random(5)
    pair = FUZZ.Pair(memo=False)
    for i in range(3000):
        lat = 45.0 + rng.uniform(-1e-4, 1e-4)
        ep = Epoch(mono=10.0 + i / 10, wall=1.7e9 + i / 10, utc=1.7e9 + i / 10, quality=4, lat=lat, lon=7.0,
                   h=300.0 + rng.gauss(0, 5.0), alt_msl=250.0, sep=50.0)
        assert pair.step(("epoch", ep)) is None
    fm = pair.c.median.by_fix["rtk_fixed"]
    assert fm.lat.width > median.DEG_WIDTH and fm.lon.width == median.DEG_WIDTH
    assert pair.fast > 1.9 * 3000


def test_a_steady_session_by_hand() -> None:
    """60 s of RTK-fixed epochs at 10 Hz, receiver time in tenths, through the C steps: a nominal
    interval of 0.1 s (10 Hz), no gap, and a median equal to the constant coordinates (common practice:
    the median of equal values is that value)."""
    si, md = StreamIntegrity(AnalysisConfig(), print, native=True), MedianPosition(native=True)
    before = core.site_counts()
    for i in range(601):
        ep = Epoch(mono=50.0 + i / 10, wall=1.7e9 + i / 10, utc=1.7e9 + round(i / 10, 1), quality=4,
                   lat=45.0, lon=7.0, h=300.0, alt_msl=250.0, sep=50.0, datum=("W84", "W84"))
        for st in (si, md):
            st.on_epoch(ep)
    done = {k: core.site_counts()[k][0] - before[k][0] for k in ("integrity", "median")}
    assert done == {"integrity": 600, "median": 600}  # all but the first (no interval, medians)
    snap = si.snapshot(None)
    assert snap["epochs"] == 601 and snap["rate_hz"] == 10.0 and snap["gaps"] == 0
    m = md.snapshot()["by_fix"]["rtk_fixed"]
    assert m["n"] == 601 and (m["lat"], m["lon"], m["h"], m["sep"]) == (45.0, 7.0, 300.0, 50.0)
