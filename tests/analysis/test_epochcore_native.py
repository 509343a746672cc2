"""The C passes of livefix/analysis/_epochcore.c against the reference, the Python code of
livefix/analysis/counts.py (epoch_counts), trend.py (Trend.add_values) and sky.py (SkyMap.on_epoch):
after every epoch the returned counts (type-exact, key order included) and the whole state of the
Trend and the SkyMap (types item by item, floats by their bits), and the same error or none.

Inputs: the epochs of every log of the shared real-data corpus, every simulator dialect at 10 Hz,
and seeded random epochs (bench/fuzz_epochcore.py: odd types and values, duplicate satellites,
empty skies, time stepping back, widths that force bucket merges). Skipped when not built.
"""

from __future__ import annotations

import random

import pytest
from twinkit import CORPUS, CORPUS_FILES, bench_module, corpus_epochs, sim_epochs

from livefix.analysis import counts, sky, trend
from livefix.analysis.config import AnalysisConfig
from livefix.analysis.counts import SatCounts
from livefix.analysis.sky import SkyMap
from livefix.analysis.trend import Trend
from livefix.sim.dialects import DIALECTS
from livefix.state.epoch import Epoch, SatObs

core = pytest.importorskip("livefix.analysis._epochcore", reason="livefix.analysis._epochcore is not built")


FUZZ = bench_module("fuzz_epochcore")  # the generator and comparison `make fuzz` runs under the sanitizers


class Run:
    """A Trio (C and reference) fed epochs as the Analyzer feeds them, plus SatCounts both ways."""

    def __init__(self) -> None:
        self.trio = FUZZ.Trio()
        self.cc, self.pc = SatCounts(native=True), SatCounts(native=False)

    def step(self, ep: Epoch, suspend: bool = False) -> None:
        fixed = ep.quality > 0
        vals = (None if ep.hdop is None else ep.hdop * 2.5, None, ep.num_sv, ep.lat if fixed else None, ep.lon, ep.h)
        why = self.trio.step(ep, suspend, vals)
        assert why is None, f"step {self.trio.steps}: {why}"[:3000]
        self.cc.on_epoch(ep)
        self.pc.on_epoch(ep)
        assert FUZZ.Exact([self.cc.hist, self.cc._cur, self.cc._run, self.cc.epochs]) == \
            FUZZ.Exact([self.pc.hist, self.pc._cur, self.pc._run, self.pc.epochs])


def test_core_is_configured_and_selected(monkeypatch: pytest.MonkeyPatch) -> None:
    assert counts._CORE is trend._CORE is sky._CORE is core and core.API == counts.CORE_API
    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    assert Trend()._core is SkyMap(AnalysisConfig())._core is SatCounts()._core is core
    monkeypatch.setenv("LIVEFIX_PURE", "1")
    assert Trend()._core is SkyMap(AnalysisConfig())._core is SatCounts()._core is None
    assert Trend(native=True)._core is core  # tests ask for it explicitly
    monkeypatch.setattr(sky, "_CORE", None)
    monkeypatch.delenv("LIVEFIX_PURE")
    assert SkyMap(AnalysisConfig())._core is None
    with pytest.raises(RuntimeError):
        SkyMap(AnalysisConfig(), native=True)


def test_configure_refuses_what_it_cannot_hold() -> None:
    class NoSlots:
        system = prn = elev = azim = cn0 = used = None

    with pytest.raises(TypeError):
        core.configure_counts(NoSlots, Epoch, "all")
    with pytest.raises(ValueError):
        core.configure_sky(SatObs, Epoch, sky._ROW[:90], sky._COL, 0.95, 4, 512)
    with pytest.raises(ValueError):
        core.configure_trend(12)
    assert counts.load_core("configure_trend", 12) is None  # refused: the Python code is used
    assert counts.load_core("configure_nothing") is None


def test_comparison_tells_types_and_bits_apart() -> None:
    # the comparison itself must fail on what the twins must not differ in
    same = FUZZ.same
    assert same([[1.0, 2.0], None], [[1.0, 2.0], None])
    assert not same([[1.0, 2.0], None], [[1.0, 2], None])
    assert not same([0.0], [-0.0]) and not same([1], [True]) and not same((1.0,), [1.0])
    assert not same([0.1 + 0.2], [0.3])
    assert not same({("G", 1), ("G", 2)}, {("G", 1), ("G", 3)})
    assert not same({"G": (1, 2, 3), "all": (1, 2, 3)}, {"all": (1, 2, 3), "G": (1, 2, 3)})  # key order


@pytest.mark.skipif(not CORPUS_FILES, reason="shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
@pytest.mark.parametrize("name", CORPUS_FILES)
def test_corpus_logs(name: str) -> None:
    # shared/realdata/corpus/<name>: a public log, source in shared/realdata/SOURCES.md
    eps = corpus_epochs(CORPUS / name)
    r = Run()
    for ep in eps:
        r.step(ep)
    assert r.trio.steps == len(eps)
    if name == "gsvnoise_20220112_test.nmea":  # 10 Hz with up to ~70 signals: every C path ran on large skies
        p = r.trio.p_sky
        assert r.trio.samples > 300 and sum(p.tracked) > 1000 and len(p.seen) > 30
        assert r.trio.counted == r.trio.steps and r.pc.epochs > 1000


DIALECT_RUNS = ["clean", *DIALECTS]


@pytest.mark.parametrize("dialect", DIALECT_RUNS)
def test_simulator_dialects(dialect: str) -> None:
    r = Run()
    for ep in sim_epochs(dialect, 40.0):
        r.step(ep, suspend=r.trio.steps % 97 == 0)
    assert r.trio.samples >= 10, (r.trio.steps, r.trio.samples)


@pytest.mark.parametrize(("seed", "odd"), [(1, 0.0), (2, 0.02), (3, 0.1)])
def test_random_epochs(seed: int, odd: float) -> None:
    n, bad, examples = FUZZ.diff(3000, seed, odd)
    assert bad == 0, examples


def test_random_epochs_reach_every_path() -> None:
    rng = random.Random(7)
    gen, trio = FUZZ.epochs(rng, 0.05), FUZZ.Trio()
    calls = {"trend_add": [0, 0], "sky_epoch": [0, 0]}

    class Counting:  # the core, counting its answers (True: done in C, False: handed over)
        counts = staticmethod(core.counts)

        def trend_add(self, *a: object) -> bool:
            r = core.trend_add(*a)
            calls["trend_add"][r] += 1
            return r

        def sky_epoch(self, *a: object) -> bool:
            r = core.sky_epoch(*a)
            calls["sky_epoch"][r] += 1
            return r

    trio.c_trend._core = trio.c_sky._core = Counting()
    for _ in range(2000):
        assert trio.step(*next(gen)) is None
    assert min(calls["trend_add"] + calls["sky_epoch"]) > 50 and trio.handed > 50 and trio.errors > 50
    assert trio.p_trend.width > 1.0  # buckets were merged


def test_bucket_merges() -> None:
    # 3 buckets of 0.1 s: every 0.3 s of stream time the buckets merge (the Python _merge, as asked)
    c, p = Trend(3, 0.1, native=True), Trend(3, 0.1, native=False)
    for k in range(50):
        for t in (c, p):
            t.add_values(10.0 + 0.07 * k, "T", 0.5 * k, 40 + k % 3, k % 7, 47.0 + 1e-6 * k, 8, 500 + k)
        assert FUZZ.same(FUZZ.trend_state(c), FUZZ.trend_state(p))
    assert p.width == 0.1 * 2**4  # 3.43 s of data in 3 buckets: 0.1 doubled four times (arithmetic)
    # an int longitude makes the origin and the differences ints: Python's float + int (language rule)
    assert type(p.origin[1]) is int and p.buckets[0][10] == 0.0


def test_int_and_float_cn0_in_one_cell() -> None:
    # one cell (el 40-45, az 100-110): C/N0 sums 40 + 41.5 + 43 = 124.5 (arithmetic), untracked counted apart
    sats = (SatObs("G", 1, "", 41, 101, 40, True), SatObs("G", 2, "", 42, 102, 41.5, True),
            SatObs("E", 1, "", 43, 109, 43, True), SatObs("E", 1, "7", 43, 109, 30.0, False),
            SatObs("R", 3, "", 44, 105, None, False), SatObs("C", 9, "", 60, 200, 35, True))
    ep = Epoch(5.0, 1.7e9, None, 1, sats=sats)
    c, p = SkyMap(AnalysisConfig(), native=True), SkyMap(AnalysisConfig(), native=False)
    c.on_epoch(ep)
    p.on_epoch(ep)
    i = 8 * 36 + 10
    assert (p.tracked[i], p.untracked[i], p.cn0[i]) == (3, 1, 124.5)
    assert FUZZ.same(FUZZ.sky_state(c), FUZZ.sky_state(p)) and c._seen_of is p._seen_of is sats


def test_seen_overflow() -> None:
    # more satellites than MAX_SEEN keys: the rest are only counted, on both paths
    c, p = SkyMap(AnalysisConfig(), native=True), SkyMap(AnalysisConfig(), native=False)
    for k in range(3):
        sats = tuple(SatObs("G", 300 * k + n, "", 30, 10, 40, True) for n in range(300))
        ep = Epoch(float(k), 1.7e9, None, 1, sats=sats)
        c.on_epoch(ep)
        p.on_epoch(ep)
    assert len(p.seen) == sky.MAX_SEEN and p.seen_overflow == 900 - sky.MAX_SEEN
    assert FUZZ.same(FUZZ.sky_state(c), FUZZ.sky_state(p))


def test_partial_state_after_a_raising_satellite() -> None:
    # a float elevation in 0..90 indexes a list in SkyMap: TypeError after _t was set; the C pass
    # hands the epoch over having changed nothing but the count of satellites seen
    ok = [SatObs("G", n, "", 30, 10 * n, 40, True) for n in range(1, 6)]
    bad = SatObs("G", 9, "", 45.0, 90, 41, True)  # type: ignore[arg-type]
    ep = Epoch(1.0, 1.7e9, None, 1, sats=(*ok, bad))
    errs = []
    for native in (True, False):
        s = SkyMap(AnalysisConfig(), native=native)
        with pytest.raises(TypeError) as e:
            s.on_epoch(ep)
        errs.append((str(e.value), FUZZ.exact(FUZZ.sky_state(s))))
    assert errs[0] == errs[1] and "f0x1.0000000000000p+0" in errs[1][1]  # _t = 1.0 set before the raise


def test_counts_of_odd_epochs_are_left_to_python() -> None:
    sat = SatObs("G", 1, "", 30, 10, 40, True)
    assert core.counts(Epoch(1.0, 1.7e9, None, 1, sats=(sat,), used_prns=(("G", "1"),))) is None
    assert core.counts(Epoch(1.0, 1.7e9, None, 1, sats=(SatObs("G", True, "", 1, 1, 1, 1),))) is None
    got = core.counts(Epoch(1.0, 1.7e9, None, 1, sats=(sat, sat), used_prns=(("R", 5),)))
    # one satellite in view, tracked and used in G; R used only (GSA lists it, GSV does not)
    assert got == counts.epoch_counts(Epoch(1.0, 1.7e9, None, 1, sats=(sat,), used_prns=(("R", 5),)))
    assert got["G"] == (1, 1, 1) and got["R"] == (0, 0, 1) and got["all"] == (1, 1, 2)
