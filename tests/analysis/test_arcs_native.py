"""ArcCollector.on_epoch in C (arc_sample, livefix/analysis/_epochcore_arcs.c) against the reference,
the Python code of livefix/analysis/arcs.py: the return value and the whole state of the collector
(its sampling time, every arc in progress with its typed arrays bit for bit, the arcs it finished)
after every epoch.

Inputs: the epochs of the simulator dialects through a whole ReflectionStats (what a report reads),
seeded random skies (bench/fuzz_arcs.py, what `make fuzz` runs under the sanitizers: whole-number and
float values, missing values, zero, negative and non-finite C/N0, gaps, time going back, a small
MAX_SAMPLES), and odd inputs the C code must hand back unchanged. Skipped when not built.
"""

from __future__ import annotations

import math
from dataclasses import replace
from types import ModuleType

import pytest
from twinkit import bench_module, sim_epochs

from livefix.analysis import arcs
from livefix.analysis.arcs import ArcCollector
from livefix.analysis.reflection import ReflectionConfig
from livefix.analysis.reflectors import ReflectionStats
from livefix.state.epoch import make_satobs

core = pytest.importorskip("livefix.analysis._epochcore", reason="livefix.analysis._epochcore is not built")
if not hasattr(core, "arc_sample"):
    pytest.skip("livefix.analysis._epochcore was built without the arc sampler", allow_module_level=True)


def _fuzz() -> ModuleType:
    return bench_module("fuzz_arcs")  # the generators `make fuzz` runs under the sanitizers


FUZZ = _fuzz()


def test_core_is_configured() -> None:
    assert arcs._CORE is core
    with pytest.raises(TypeError):  # a class attribute over an instance-dict name it reads
        core.configure_arcs(type("C", (), {"_tracks": {}}), *arcs._CONFIGURE[1:])
    with pytest.raises(TypeError):  # a track type whose fields are not slots
        core.configure_arcs(ArcCollector, type("T", (), dict.fromkeys(("t", "el", "az", "cn0", "last"))),
                            *arcs._CONFIGURE[2:])
    with pytest.raises(ValueError):
        core.configure_arcs(*arcs._CONFIGURE[:8], 0, arcs.EDGE_DEG)  # MAX_SAMPLES < 1
    assert arcs.load_core("configure_arcs", *arcs._CONFIGURE) is core
    assert core.arc_sample(object(), object()) is None  # not a collector: the Python code's


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_random_skies(seed: int) -> None:
    epochs, handed, bad, examples = FUZZ.diff(6000, seed)
    assert bad == 0, examples
    assert handed < epochs // 5  # the odd values only (0.2 % of the values)


def test_random_skies_with_odd_values() -> None:
    epochs, handed, bad, examples = FUZZ.diff(6000, 4, odd=0.05)
    assert bad == 0, examples
    assert handed > 100  # the odd values reach the hand-back


def _pair(cfg: ReflectionConfig | None = None) -> FUZZ.Pair:  # type: ignore[name-defined]
    return FUZZ.Pair(core, cfg or ReflectionConfig())


def _epoch(t: object, sats: tuple) -> object:
    import random

    ep = next(FUZZ.epochs(random.Random(0)))
    return replace(ep, mono=t, sats=sats)


def _sat(el: object = 10, az: object = 90, cn0: object = 40, system: object = "G", signal: object = "1",
         prn: object = 5) -> object:
    return make_satobs((system, prn, signal, el, az, cn0, True, 0.0))


def test_sampling_interval_and_arcs_by_hand() -> None:
    """The collector's rules on a hand-made sky (common practice: one sample a second, an arc ends
    when the satellite leaves the window or is missing longer than the gap), both sides alike."""
    p = _pair()
    steps = [(0.0, (_sat(),)), (0.5, (_sat(el=11),)), (1.0, (_sat(el=12.5),)), (2.0, (_sat(el=40),)),
             (3.0, (_sat(el=12),)), (100.0, (_sat(el=13),)), (99.0, (_sat(el=14),)), (101.0, ())]
    taken = []
    for t, sats in steps:
        assert p.step(_epoch(t, sats)) is None
        assert p._compare() is None
        taken.append(p.p._t)
    assert [p.c.tracks[k].t.tolist() for k in p.c.tracks] == [p.p.tracks[k].t.tolist() for k in p.p.tracks]
    assert p.done == len(steps) and p.handed == 0


@pytest.mark.parametrize("odd", [
    {"el": True}, {"cn0": "40"}, {"az": 2**60}, {"el": 1.5j}, {"cn0": -(2**60)},
])
def test_odd_values_are_handed_back_unchanged(odd: dict) -> None:
    p = _pair()
    for t in (0.0, 1.0, 2.0):
        p.step(_epoch(t, (_sat(el=10 + t), _sat(prn=7, el=12 + t))))
    before = FUZZ.state(p.c)
    ep = _epoch(3.0, (_sat(el=13), _sat(prn=9, **odd)))
    assert core.arc_sample(p.c, ep) is None
    assert FUZZ.state(p.c) == before  # nothing written
    assert p.step(ep) is None  # and the Python code's answer (or error) on both sides
    assert p._compare() is None


def test_unhashable_system_raises_as_the_reference() -> None:
    p = _pair()
    p.step(_epoch(0.0, (_sat(),)))
    ep = _epoch(1.0, (_sat(el=11), _sat(system=[])))
    with pytest.raises(TypeError, match="unhashable"):
        core.arc_sample(p.c, ep)
    with pytest.raises(TypeError, match="unhashable"):
        p.p.on_epoch(ep)
    assert p._compare() is None  # the same writes before the error (the time, the first sample)


@pytest.mark.parametrize("mono", [3, None, "t", math.nan, math.inf])
def test_odd_times(mono: object) -> None:
    p = _pair()
    p.step(_epoch(0.0, (_sat(),)))
    assert p.step(_epoch(mono, (_sat(el=11),))) is None
    assert p._compare() is None


@pytest.mark.parametrize("cfg", [
    ReflectionConfig(el_min_deg=5, el_max_deg=25, gap_s=60, sample_s=1),  # whole numbers from a TOML file
    ReflectionConfig(sample_s=0.0, gap_s=0.05),
])
def test_configurations(cfg: ReflectionConfig) -> None:
    p = _pair(cfg)
    for k in range(300):
        why = p.step(_epoch(k * 0.1, tuple(_sat(prn=n, el=4 + (k * 0.07 + n) % 30) for n in range(6))))
        assert why is None, why
    assert p._compare() is None
    assert p.handed == 0


@pytest.mark.parametrize("dialect", ["rate-10hz", "gsv-mixed-talkers", "gsa-no-sysid"])
def test_reflection_stats_on_dialects(dialect: str) -> None:
    """The whole reflection statistics on the simulated receiver: the same snapshot with the C
    sampler and with the Python one."""
    c, p = ReflectionStats(native=True), ReflectionStats(native=False)
    assert c._arcs._core is core and p._arcs._core is None
    for ep in sim_epochs(dialect, 900):
        c.on_epoch(ep)
        p.on_epoch(ep)
    assert FUZZ.state(c._arcs) == FUZZ.state(p._arcs)
    assert c.snapshot() == p.snapshot()
