"""The settled case of Jumps.check in C (livefix/analysis/_epochcore_jumps.c) against the reference,
the Python code of livefix/analysis/jumps.py: after every epoch the answer, the error if any and the
whole state (centres, cached limits, open excursions, the list, the counters; type-exact and
bit-exact through bench/fuzz_epochcore.py's exact()).

Inputs: the check calls PositionStats makes on every log of the shared real-data corpus and on every
simulator dialect, PositionStats as a whole with and without the C case, odd states the C code must
leave to the Python code, and seeded random epochs (bench/fuzz_jumps.py, what `make fuzz` runs
under the sanitizers). Skipped when the extension is not built.
"""

from __future__ import annotations

import json
import math
import random
from types import ModuleType

import pytest
from twinkit import CORPUS, CORPUS_FILES, bench_module, corpus_epochs, sim_epochs

from livefix.analysis import jumps
from livefix.analysis.config import AnalysisConfig
from livefix.analysis.jumps import Jumps
from livefix.analysis.position import PositionStats
from livefix.sim.dialects import DIALECTS
from livefix.state.epoch import Epoch

core = pytest.importorskip("livefix.analysis._epochcore", reason="livefix.analysis._epochcore is not built")
if not hasattr(core, "jumps_settled"):
    pytest.skip("livefix.analysis._epochcore was built without the jump check", allow_module_level=True)


def _fuzz() -> ModuleType:
    return bench_module("fuzz_jumps")  # the generators `make fuzz` runs under the sanitizers


FUZZ = _fuzz()


def test_core_is_configured_and_selected(monkeypatch: pytest.MonkeyPatch) -> None:
    assert jumps._CORE is core and core.API == 1
    cfg = AnalysisConfig()
    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    assert Jumps(cfg)._core is core
    monkeypatch.setenv("LIVEFIX_PURE", "1")
    assert Jumps(cfg)._core is None
    assert Jumps(cfg, native=True)._core is core  # tests ask for it explicitly
    monkeypatch.setattr(jumps, "_CORE", None)
    monkeypatch.delenv("LIVEFIX_PURE")
    assert Jumps(cfg)._core is None
    with pytest.raises(RuntimeError):
        Jumps(cfg, native=True)


def test_configure_refuses_what_it_cannot_use() -> None:
    class NoSlots:
        n = c = vh = nu = vu = None

    with pytest.raises(TypeError):
        core.configure_jumps(NoSlots, jumps.WARMUP, jumps._EW_A, math.hypot)
    with pytest.raises(ValueError):
        core.configure_jumps(jumps._Centre, jumps.WARMUP, jumps._EW_A, 3)
    with pytest.raises(ValueError):
        core.configure_jumps(jumps._Centre, -1, jumps._EW_A, math.hypot)
    with pytest.raises(TypeError):
        core.jumps_settled(Jumps(AnalysisConfig()), "rtk_fixed", 0.0, 0.0)
    # configured again as on import, for what follows
    assert jumps._CORE is jumps.load_core("configure_jumps", jumps._Centre, jumps.WARMUP, jumps._EW_A, math.hypot)


def _checks(eps: list[Epoch]) -> list[tuple]:
    """The Jumps.check calls PositionStats makes on these epochs (their E/N/U do not depend on the
    answers)."""
    ps = PositionStats(AnalysisConfig(), lambda ev: None)
    calls: list[tuple] = []
    check = ps.jumps.check

    def record(*a: object) -> bool:
        calls.append(a)
        return check(*a)

    ps.jumps.check = record  # type: ignore[method-assign]
    for ep in eps:
        ps.on_epoch(ep)
    return calls


def _replay(calls: list[tuple]) -> FUZZ.Pair:
    pair = FUZZ.Pair()
    for i, a in enumerate(calls):
        assert pair.step(a) is None, (i, a)
    return pair


@pytest.mark.skipif(not CORPUS_FILES, reason="shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
@pytest.mark.parametrize("name", CORPUS_FILES)
def test_corpus_logs(name: str) -> None:
    # shared/realdata/corpus/<name>: a public log, source in shared/realdata/SOURCES.md
    calls = _checks(corpus_epochs(CORPUS / name))
    if not calls:
        pytest.skip("a log without positions")
    pair = _replay(calls)
    assert pair.steps == len(calls)


@pytest.mark.parametrize("dialect", ["clean", *DIALECTS])
def test_simulator_dialects(dialect: str) -> None:
    calls = _checks(list(sim_epochs(dialect, 90.0)))
    pair = _replay(calls)
    assert len(calls) > 30 and pair.settled > 0  # the C case ran


def test_position_stats_give_the_same_figures_with_the_c_case(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    eps = list(sim_epochs("clean", 150.0))
    out = []
    for c in (core, None):
        monkeypatch.setattr(jumps, "_CORE", c)
        ps = PositionStats(AnalysisConfig(), lambda ev: None)
        assert ps.jumps._core is c
        for ep in eps:
            ps.on_epoch(ep)
        out.append(json.dumps(ps.snapshot(), sort_keys=True, default=repr))
    assert out[0] == out[1]


def _odd_states(j: Jumps) -> None:
    """Centres and limits in shapes the C code does not take (it must leave them to the Python code)."""
    for f in ("rtk_fixed", "dgnss", "single", "rtk_float"):
        j.check(f, 0.0, None, 0.0, 0.0, 0.0)
    j.centres["rtk_fixed"].n = jumps.WARMUP + 0.0  # a float count
    j.centres["dgnss"].vh = -1.0  # a variance math.sqrt refuses: ValueError in the Python code
    j.centres["single"].c = [0, 0, 0.0]  # an int centre
    j._lims["rtk_float"] = (True, 0.5, 1.0)  # a bool k
    for f in ("dgnss", "single", "rtk_float"):
        j.centres[f].n = jumps.WARMUP


@pytest.mark.filterwarnings("ignore::RuntimeWarning")
def test_odd_states_are_left_to_python() -> None:
    rng = random.Random(5)
    gen = FUZZ.epochs(rng, 0.0)
    pair = FUZZ.Pair()
    _odd_states(pair.c)
    _odd_states(pair.p)
    for _ in range(1500):
        a = next(gen)
        assert pair.step((rng.choice(["rtk_fixed", "dgnss", "single", "rtk_float"]), *a[1:])) is None
    assert pair.errors > 0  # the negative variance raised in both, alike


@pytest.mark.filterwarnings("ignore::RuntimeWarning")
@pytest.mark.parametrize(("seed", "odd"), [(1, 0.0), (2, 0.02), (3, 0.2)])
def test_random_epochs(seed: int, odd: float) -> None:
    n, bad, examples = FUZZ.diff(4000, seed, odd)
    assert bad == 0, examples
    rng = random.Random(seed)
    gen = FUZZ.epochs(rng, odd)
    pair = FUZZ.Pair(FUZZ.config(rng))
    for _ in range(2500):
        assert pair.step(next(gen)) is None
    assert n == 4000 and pair.settled > 1000  # the C case ran, and excursions were left to Python
    assert pair.p.total > 0 and (pair.errors > 0) == (odd > 0)
