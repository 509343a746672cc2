"""The closed-form DOP solve (livefix/analysis/dopsolve.py) against numpy's inverse (livefix.geodesy.dop,
numpy/LAPACK as the outside reference) and handbook geometries, and its C twin
(livefix/analysis/_dopcore.c) against it bit for bit, with the C used-satellite pass
(livefix/analysis/_dopused.c) against livefix.analysis.dop._used: on seeded random geometries, epochs
and odd inputs (bench/fuzz_dop.py, the generators the fuzz run uses), and on the epochs of every real
log of the shared corpus and every simulator dialect through DopStats. The C parts are skipped when
it is not built.
"""

from __future__ import annotations

import importlib.util
import math
import random
import sys

import numpy as np
import pytest
from twinkit import CORPUS, CORPUS_FILES, bench_module, corpus_epochs, sim_epochs

from livefix.analysis import dop, dopsolve
from livefix.analysis.dop import DopStats
from livefix.geodesy import dop as numpy_dop
from livefix.sim.dialects import DIALECTS
from livefix.state.epoch import Epoch, SatObs

EPS = 2.0**-52


FUZZ = bench_module("fuzz_dop")
core = dopsolve._CORE
needs_core = pytest.mark.skipif(core is None, reason="livefix.analysis._dopcore is not built (no compiler?)")


def _cond(az: list, el: list, systems: list | None) -> float:
    """2-norm condition number of N = GᵀG (numpy), G built here from first principles."""
    a, e = np.radians(az), np.radians(el)
    names = sorted(set(systems)) if systems is not None else [None]
    clocks = [np.array([1.0 if systems is None or s == m else 0.0 for s in (systems or az)]) for m in names]
    g = np.column_stack([-np.cos(e) * np.sin(a), -np.cos(e) * np.cos(a), -np.sin(e), *clocks])
    return float(np.linalg.cond(g.T @ g))


# -- the reference against numpy -------------------------------------------------------------------

def test_random_geometries_match_numpy_inverse() -> None:
    # numpy/LAPACK's inverse (livefix.geodesy.dop) as the reference. Its own forward error is about
    # cond(N)·eps (Higham, "Accuracy and Stability of Numerical Algorithms", ch. 14), so the
    # tolerance is 1e-9 relative, or 1e-14·cond(N) on near-degenerate geometries. The None decisions
    # agree except within half a decade of cond(N) = 1e12, where neither value has digits left.
    rng = random.Random(11)
    tight = loose = nones = border = 0
    for _ in range(3000):
        az, el, systems = FUZZ._geometry(rng)  # 4..40 satellites, 1..6 systems, elevations -5..90
        ref, got = numpy_dop(az, el, systems), dopsolve.solve(az, el, systems)
        k = len(set(systems)) if systems is not None else 1
        cond = _cond(az, el, systems) if len(az) >= 3 + k else math.inf
        if (ref is None) != (got is None):
            assert 10**11.5 < cond < 10**12.5, (az, el, systems, cond)
            border += 1
            continue
        if ref is None:
            nones += 1
            continue
        assert list(got) == ["gdop", "pdop", "hdop", "vdop", "tdop"]
        rel = max(1e-9, 1e-14 * cond)
        for key, v in ref.items():
            assert got[key] == pytest.approx(v, rel=rel), (key, az, el, systems, cond)
        tight += rel == 1e-9
        loose += rel > 1e-9
    assert tight > 1500 and loose > 200 and nones > 500 and border < 30


def test_realistic_skies_agree_to_1e_9() -> None:
    # numpy inverse as the reference: open skies, 1..6 constellations, whole-degree az/el
    rng = random.Random(12)
    for _ in range(1000):
        n = rng.randint(4, 40)
        systems = [rng.choice("GRECJI"[: rng.randint(1, 6)]) for _ in range(n)]
        az = [float(rng.randrange(360)) for _ in range(n)]
        el = [float(rng.randint(5, 90)) for _ in range(n)]
        for sy in (systems, None):
            ref, got = numpy_dop(az, el, sy), dopsolve.solve(az, el, sy)
            assert (ref is None) == (got is None)
            if ref is not None:
                assert all(got[k] == pytest.approx(ref[k], rel=1e-9) for k in ref)


@pytest.mark.parametrize("elev", [0.0, 10.0, 30.0, 45.0])
def test_zenith_plus_three_closed_form(elev: float) -> None:
    # Handbook closed form (derivation in tests/analysis/test_dop_geometry.py): one satellite at the
    # zenith plus three at elevation E, azimuths 0/120/240: HDOP = 2/(√3·c), VDOP = 2/(√3·(1-s)),
    # TDOP = √(3s²+1)/(√3·(1-s)), s = sin E, c = cos E.
    s, c = math.sin(math.radians(elev)), math.cos(math.radians(elev))
    got = dopsolve.solve([0, 0, 120, 240], [90, elev, elev, elev])
    hd, vd = 2 / (math.sqrt(3) * c), 2 / (math.sqrt(3) * (1 - s))
    td = math.sqrt(3 * s * s + 1) / (math.sqrt(3) * (1 - s))
    assert got is not None
    assert got["hdop"] == pytest.approx(hd, rel=1e-12)
    assert got["vdop"] == pytest.approx(vd, rel=1e-12)
    assert got["tdop"] == pytest.approx(td, rel=1e-12)
    assert got["pdop"] == pytest.approx(math.hypot(hd, vd), rel=1e-12)
    assert got["gdop"] == pytest.approx(math.sqrt(hd * hd + vd * vd + td * td), rel=1e-12)
    # at E = 0: HDOP = VDOP = 2/√3 ≈ 1.1547, PDOP = √(8/3) ≈ 1.633 (tests/test_geodesy.py)
    if elev == 0.0:
        assert (round(got["hdop"], 4), round(got["pdop"], 4)) == (1.1547, 1.6330)


def test_two_systems_closed_form() -> None:
    # By hand: two clocks, each with its own copy of the four satellites above at E = 0. Eliminating
    # the clock unknowns (Schur complement, any linear-algebra handbook) leaves S = 2·S₁, S₁ the
    # one-clock scatter, so position DOPs are the one-clock ones over √2, and each clock's variance
    # is 1/n + ū₁ᵀS⁻¹ū₁ = 1/4 + ū₁ᵀS₁⁻¹ū₁/2, where 1/4 + ū₁ᵀS₁⁻¹ū₁ = TDOP₁² = 1/3 (closed form
    # above, s = 0): TDOP² = 1/4 + 1/24. numpy's inverse agrees.
    az = [0, 0, 120, 240] * 2
    el = [90, 0, 0, 0] * 2
    got = dopsolve.solve(az, el, ["G"] * 4 + ["E"] * 4)
    one = dopsolve.solve(az[:4], el[:4])
    assert got is not None and one is not None
    assert got["hdop"] == pytest.approx(one["hdop"] / math.sqrt(2), rel=1e-12)
    assert got["vdop"] == pytest.approx(one["vdop"] / math.sqrt(2), rel=1e-12)
    assert got["tdop"] == pytest.approx(math.sqrt(1 / 4 + 1 / 24), rel=1e-12)
    assert got["gdop"] == pytest.approx(math.sqrt(got["pdop"] ** 2 + 2 * got["tdop"] ** 2), rel=1e-12)
    assert numpy_dop(az, el, ["G"] * 4 + ["E"] * 4)["tdop"] == pytest.approx(got["tdop"], rel=1e-9)


@pytest.mark.parametrize(("az", "el", "systems"), [
    ([0, 90, 180], [30, 30, 30], None),  # fewer satellites than unknowns (tests/test_geodesy.py)
    ([0, 0, 0, 0, 0], [10, 10, 10, 10, 10], None),  # all on one line of sight (tests/test_geodesy.py)
    ([0, 90, 180, 270, 45], [30, 30, 30, 30, 30], None),  # one elevation, one clock: up = clock
    ([0, 90, 180, 270, 45, 10], [30, 30, 30, 30, 20, 20], list("GGGGEE")),  # one elevation per clock
    ([0, 90, 0, 90, 0], [20, 50, 20, 50, 20], None),  # two directions only
    ([10, 100, 200, 300], [20, 30, 40, 50], list("GGGE")),  # 5 unknowns, 4 satellites
    ([], [], None), ([], [], []),
])
def test_degenerate_and_too_few_give_none(az: list, el: list, systems: list | None) -> None:
    # common practice: no DOP for a rank-deficient geometry; numpy's cond(N) > 1e12 agrees
    assert numpy_dop(az, el, systems) is None
    assert dopsolve.solve(az, el, systems) is None
    if core is not None:
        assert core.solve(az, el, systems) is None


def test_lengths_that_differ_raise() -> None:
    with pytest.raises(ValueError):
        dopsolve.solve([1.0, 2.0, 3.0, 4.0], [10.0, 20.0, 30.0])
    with pytest.raises(ValueError):
        dopsolve.solve([1.0, 2.0, 3.0, 4.0], [10.0, 20.0, 30.0, 40.0], "GGG")


# -- the C twin against the reference --------------------------------------------------------------

def _hex(r: dict | None) -> object:
    return None if r is None else [(k, type(v), v.hex()) for k, v in r.items()]


@needs_core
def test_core_bit_identical_on_random_geometries() -> None:
    rng = random.Random(21)
    nones = 0
    for _ in range(20000):
        az, el, systems = FUZZ._geometry(rng)
        want = dopsolve.solve(az, el, systems)
        got = core.solve(az, el, systems)
        assert _hex(got) == _hex(want), (az, el, systems)
        nones += want is None
    assert 2000 < nones < 15000


@needs_core
def test_core_whole_degrees_bit_identical() -> None:
    # every whole-degree direction once (the values receivers give): libm sin/cos in both paths
    for e in range(-5, 91):
        az = [float(a) for a in range(0, 360, 7)]
        el = [float(e)] * len(az)
        el[0], el[1] = 90.0, float((e + 30) % 90)
        for sy in (None, ["G", "R"] * (len(az) // 2) + ["E"] * (len(az) % 2)):
            assert _hex(core.solve(az, el, sy)) == _hex(dopsolve.solve(az, el, sy))


@needs_core
@pytest.mark.parametrize(("seed", "odd"), [(1, 0.0), (2, 0.3), (3, 1.0)])
def test_core_fuzz_cases_including_odd_inputs(seed: int, odd: float) -> None:
    # bench/fuzz_dop.py: NaN, inf, None, wrong types, huge values, empty, lengths that differ, too
    # many systems; the C path (with its hand-over) and the reference: same result or same exception
    n, handed, bad, examples = FUZZ.dop_diff(4000, seed, core, odd)
    assert bad == 0, examples
    assert (handed > 500) == (odd > 0.2)


@needs_core
def test_core_odd_inputs_hand_over_or_match() -> None:
    good = ([0.0, 0.0, 120.0, 240.0], [90.0, 0.0, 0.0, 0.0])
    odd_cases = [
        ([0.0, 0.0, 120.0, math.nan], good[1], None), ([0.0, 0.0, 120.0, math.inf], good[1], None),
        (good[0], [90.0, 0.0, 0.0, None], None), (good[0], [90.0, 0.0, 0.0, "0"], None),
        (good[0], [90.0, 0.0, 0.0, True], None), (good[0], [90.0, 0.0, 0.0, 10**40], None),
        (good[0], good[1][:3], None), (good[0], good[1], ["G", "G", "G"]), (good[0], good[1], ["G", 1, "G", "G"]),
        (good[0], good[1], [["G"], "G", "G", "G"]), (np.array(good[0]), good[1], None),
        ([f"{a}" for a in good[0]], good[1], None), (good[0], good[1], "GGGG"), (good[0], good[1], 5),
    ]
    for case in odd_cases:
        assert core.solve(*case) is NotImplemented, case
        assert FUZZ.outcome(FUZZ.native_path(core), case) == FUZZ.outcome(dopsolve.solve, case)
    # what it takes itself: tuples, exact ints (as math.radians converts them), huge finite floats
    for case in [(tuple(good[0]), tuple(good[1]), ("G",) * 4), ([0, 0, 120, 240], [90, 0, 0, 0], None),
                 ([1e308, 0.0, 120.0, 240.0], good[1], None), (good[0], good[1], ["é"] * 4)]:
        assert _hex(core.solve(*case)) == _hex(dopsolve.solve(*case)), case
    many = [f"S{i}" for i in range(dopsolve.MAX_CLOCKS + 1)]  # more clocks than the C bound
    az = [float(i * 7 % 360) for i in range(60)]
    el = [float(5 + i % 80) for i in range(60)]
    assert core.solve(az, el, many * 3 + many[:9]) is NotImplemented


@needs_core
def test_core_keeps_reference_counts() -> None:
    az, el, sy = [10.0, 100.0, 200.0, 300.0, 45.0], [20.0, 30.0, 40.0, 50.0, 80.0], list("GGGEE")
    objs = [az, el, sy, *az, *el, *sy, None, NotImplemented]
    before = [sys.getrefcount(o) for o in objs]
    for _ in range(1000):
        core.solve(az, el, sy)
        core.solve(az, el)
        core.solve(az, el[:3], sy)  # handed over
        core.solve(az[:3], el[:3], sy[:3])  # None
    assert [sys.getrefcount(o) for o in objs] == before


@needs_core
@pytest.mark.parametrize(("seed", "odd"), [(1, 0.0), (2, 0.05), (3, 0.5)])
def test_core_used_pass_on_fuzz_epochs(seed: int, odd: float) -> None:
    # bench/fuzz_dop.py used_epochs: several signals per satellite, GSA lists naming satellites in
    # view or not, odd fields and containers; same tuples, same float objects, same count or error
    n, handed, bad, examples = FUZZ.used_diff(3000, seed, core, odd)
    assert bad == 0, examples
    assert handed < n // 2 if odd < 0.1 else handed > n // 4


@needs_core
def test_core_used_pass_by_hand() -> None:
    az = 123.0  # float(x) of a float is x itself: the C pass hands out that very object
    sats = (SatObs("G", 1, "1", 40, az, 45, True), SatObs("G", 1, "5", 40, 10, 42, True),
            SatObs("G", 2, "1", 30, 100, 40, False), SatObs("E", 3, "7", 60, 200, 44, True),
            SatObs("E", 4, "7", None, 200, 44, True), SatObs("C", 9, "1", 5, 5, 30, False))
    ep = Epoch(mono=0, wall=0, utc=None, quality=1, sats=sats, used_prns=(("G", 2), ("R", 7)))
    want = ((200.0, 60.0, "E"), (az, 40.0, "G"), (100.0, 30.0, "G"))  # sorted; E04 lacks elevation
    got = core.used(ep.sats, ep.used_prns)
    assert got == dop._used(ep) == (want, 5)  # G01 G02 E03 E04 flagged or listed, R07 listed
    assert got[0][1][0] is az
    assert core.used((), ()) == ((), 0)
    assert core.used(list(sats), ()) is NotImplemented  # not a tuple: the reference runs
    assert core.used(sats, (("G", 2.0),)) is NotImplemented


@needs_core
def test_core_used_needs_configure() -> None:
    spec = importlib.util.spec_from_file_location("livefix.analysis._dopcore", core.__file__)
    assert spec is not None and spec.loader is not None
    fresh = importlib.util.module_from_spec(spec)  # a second module instance: its own state
    spec.loader.exec_module(fresh)
    sats = (SatObs("G", 1, "1", 40, 10, 45, True),)
    assert fresh.used(sats, ()) is NotImplemented
    class NoSlots:
        system = prn = elev = azim = used = None

    with pytest.raises(TypeError):
        fresh.configure(NoSlots)  # fields, but not object slots
    with pytest.raises(AttributeError):
        fresh.configure(Epoch)  # a slots class without these fields
    with pytest.raises(TypeError):
        fresh.configure(5)
    assert fresh.used(sats, ()) is NotImplemented
    fresh.configure(SatObs)
    assert fresh.used(sats, ()) == (((10.0, 40.0, "G"),), 1)


def test_make_solver_picks(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("LIVEFIX_PURE", "1")
    assert dopsolve.make_solver() is dopsolve.solve and dop.make_used() is dop._used
    assert dopsolve.make_solver(native=False) is dopsolve.solve and dop.make_used(native=False) is dop._used
    monkeypatch.delenv("LIVEFIX_PURE")
    assert (dopsolve.make_solver() is dopsolve.solve) == (dop.make_used() is dop._used) == (core is None)
    monkeypatch.setattr(dopsolve, "_CORE", None)
    assert dopsolve.make_solver() is dopsolve.solve and dop.make_used() is dop._used
    with pytest.raises(RuntimeError):
        dopsolve.make_solver(native=True)
    with pytest.raises(RuntimeError):
        DopStats(native=True)


@needs_core
def test_stale_build_is_not_used(monkeypatch: pytest.MonkeyPatch) -> None:
    assert dopsolve._built_core() is core and (core.API, core.COND_MAX, core.MAX_CLOCKS) == (1, 1e12, 16)
    monkeypatch.setattr(dopsolve, "COND_MAX", 1e13)
    assert dopsolve._built_core() is None


# -- DopStats with the C solve and with the reference ----------------------------------------------

class Twin:
    """DopStats with the C solve and with the reference, fed the same epochs, compared after each."""

    def __init__(self) -> None:
        self.c, self.p = DopStats(native=True), DopStats(native=False)
        self.steps = self.solved = 0

    def step(self, ep: Epoch) -> None:
        calc, geo = self.p.current_calc, self.p._geo
        self.c.on_epoch(ep)
        self.p.on_epoch(ep)
        self.steps += 1
        self.solved += self.p.current_calc is not calc and self.p.current_calc is not None
        where = f"step {self.steps}: {ep.sats!r}"[:1000]
        if self.p._geo is not geo:  # the used-satellite pass ran
            assert repr(self.c._geo) == repr(self.p._geo), where
        assert self.c.current_used_listed == self.p.current_used_listed, where
        assert _hex(self.c.current_calc) == _hex(self.p.current_calc), where
        assert _hex(self.c.current_single) == _hex(self.p.current_single), where
        if self.steps % 500 == 0:
            self.check()

    def check(self) -> None:
        assert repr(self.c.snapshot()) == repr(self.p.snapshot())


@needs_core
@pytest.mark.skipif(not CORPUS_FILES, reason="shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
@pytest.mark.parametrize("name", CORPUS_FILES)
def test_dopstats_corpus_logs(name: str) -> None:
    # shared/realdata/corpus/<name>: a public log, source in shared/realdata/SOURCES.md
    t = Twin()
    for ep in corpus_epochs(CORPUS / name):
        t.step(ep)
    t.check()


DIALECT_RUNS = ["clean", *DIALECTS]


@needs_core
@pytest.mark.parametrize("dialect", DIALECT_RUNS)
def test_dopstats_simulator_dialects(dialect: str) -> None:
    t = Twin()
    for ep in sim_epochs(dialect, 60.0):
        t.step(ep)
    t.check()
    assert t.solved > 0  # geometries were solved
