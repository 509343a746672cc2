"""The C projection memo (livefix/analysis/_epochcore_geo.c: EcefMemo, Projector) against the
reference, the Python classes of livefix/analysis/geo.py: every result type-exact and bit-exact
(float.hex), the same errors, the same memo identities (a hit hands back the very same tuple; a
projector is shared only for the very same floats), and the ECEF conversion against an outside
library.

Inputs: positions worldwide (poles, the antimeridian, heights from -500 m to 40 000 km, NaN, inf and
values of other types), the epochs of every log of the shared real-data corpus and of every
simulator dialect driven as the Analyzer's stages drive the memo, the whole Analyzer with and
without the C memo, and seeded random calls (bench/fuzz_geo.py, what `make fuzz` runs under the
sanitizers). Skipped when the extension is not built.
"""

from __future__ import annotations

import gc
import json
import math
import random
from collections.abc import Callable
from types import ModuleType

import numpy as np
import pytest
from twinkit import CORPUS, CORPUS_FILES, bench_module, corpus_epochs, sim_epochs

from livefix import geodesy
from livefix.analysis import geo
from livefix.analysis.engine import Analyzer
from livefix.analysis.geo import EcefMemo, Projector
from livefix.geodesy import LocalFrame, geodetic_to_ecef
from livefix.pipeline import StreamCounters
from livefix.sim.dialects import DIALECTS
from livefix.state.epoch import Epoch

core = pytest.importorskip("livefix.analysis._epochcore", reason="livefix.analysis._epochcore is not built")
if not hasattr(core, "configure_geo"):
    pytest.skip("livefix.analysis._epochcore was built without the projection memo", allow_module_level=True)


def _fuzz() -> ModuleType:
    return bench_module("fuzz_geo")  # the generators `make fuzz` runs under the sanitizers


FUZZ = _fuzz()
EDGES = [-90.0, 90.0, 0.0, -0.0, -180.0, 180.0, 179.99999999999997, -179.99999999999997, 360.0, 540.0]
HEIGHTS = [-500.0, 0.0, 8848.0, 20_200_000.0, 35_786_000.0, 4.0e7]


def _hex(t: object) -> list[str]:
    assert type(t) is tuple and len(t) == 3 and all(type(v) is float for v in t), t
    return [v.hex() for v in t]  # type: ignore[union-attr]


def _worldwide(n: int, seed: int) -> list[tuple[float, float, float]]:
    rng = random.Random(seed)
    pts = [(la, lo, h) for la in EDGES[:4] for lo in EDGES for h in HEIGHTS]  # poles, antimeridian
    pts += [(rng.uniform(-90, 90), rng.uniform(-180, 180), rng.uniform(-500, 4.0e7)) for _ in range(n)]
    pts += [(math.degrees(math.asin(rng.uniform(-1, 1))), rng.uniform(-540, 540), rng.uniform(-500, 3000))
            for _ in range(n)]  # uniform over the sphere, longitudes past +-180
    return pts


def _outcome(fn: Callable[..., object], *a: object) -> tuple[object, object]:
    try:
        return fn(*a), None
    except Exception as err:  # noqa: BLE001 - compared by the caller
        return None, (type(err), str(err))


def test_core_is_configured_and_selected(monkeypatch: pytest.MonkeyPatch) -> None:
    assert geo._CORE is core and core.API == 1
    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    assert type(EcefMemo()) is core.EcefMemo
    assert type(EcefMemo().projector(1.0, 2.0, 3.0)) is core.Projector
    assert type(Projector(LocalFrame(1.0, 2.0, 3.0))) is core.Projector
    monkeypatch.setenv("LIVEFIX_PURE", "1")
    assert type(EcefMemo()) is EcefMemo and type(Projector(LocalFrame(1.0, 2.0, 3.0))) is Projector
    assert type(EcefMemo(True)) is core.EcefMemo  # tests ask for it explicitly
    assert type(Projector(LocalFrame(1.0, 2.0, 3.0), native=True)) is core.Projector
    # a projector is of the kind of the memo it is given, whatever LIVEFIX_PURE says
    assert type(Projector(LocalFrame(1.0, 2.0, 3.0), EcefMemo(True))) is core.Projector
    monkeypatch.delenv("LIVEFIX_PURE")
    assert type(Projector(LocalFrame(1.0, 2.0, 3.0), EcefMemo(False))) is Projector
    assert type(Projector(LocalFrame(1.0, 2.0, 3.0), native=False)._ecef) is EcefMemo
    monkeypatch.setattr(geo, "_CORE", None)
    assert type(EcefMemo()) is EcefMemo and type(Projector(LocalFrame(1.0, 2.0, 3.0))) is Projector
    with pytest.raises(RuntimeError):
        EcefMemo(True)


def test_configure_and_constructors_refuse_what_they_cannot_use() -> None:
    with pytest.raises(TypeError):
        core.configure_geo(1, geo._frame_at, geodesy.A, geodesy.E2)
    with pytest.raises(TypeError):
        core.configure_geo(geodetic_to_ecef, geo._frame_at, "a", geodesy.E2)
    frame = LocalFrame(1.0, 2.0, 3.0)
    with pytest.raises(TypeError):
        core.Projector(frame, EcefMemo(False), geo._constants(frame))  # the C projector reads the C memo
    with pytest.raises(TypeError):
        core.Projector(frame, core.EcefMemo(), geo._constants(frame)[:10])
    with pytest.raises(TypeError):
        core.Projector(frame, core.EcefMemo(), (1,) * 11)
    with pytest.raises(TypeError):
        core.EcefMemo()(1.0, 2.0)
    with pytest.raises(TypeError):
        core.EcefMemo().projector(1.0, 2.0, 3.0, 4.0)
    # configured again as on import: the constants are those of livefix.geodesy, the WGS 84 ones
    assert geo._CORE is geo.load_core("configure_geo", geodetic_to_ecef, geo._frame_at, geodesy.A, geodesy.E2)


def test_ecef_bit_for_bit_worldwide() -> None:
    memo = EcefMemo(True)
    for pt in _worldwide(3000, 1):
        # reference: livefix.geodesy.geodetic_to_ecef itself, compared by float.hex
        assert _hex(memo(*pt)) == _hex(geodetic_to_ecef(*pt)), pt
    for pt in [(45, 7, 100), (0, 0, 0), (2**53, -(2**53), 2**53)]:  # exact ints: converted exactly
        assert _hex(memo(*pt)) == _hex(geodetic_to_ecef(*pt)), pt


def test_enu_bit_for_bit_worldwide() -> None:
    rng = random.Random(2)
    sites = _worldwide(60, 3)
    for k, site in enumerate(sites):
        c, p = EcefMemo(True).projector(*site), EcefMemo(False).projector(*site)
        frame = LocalFrame(*site)
        near = [(site[0] + rng.gauss(0, 1e-3), site[1] + rng.gauss(0, 1e-3), site[2] + rng.gauss(0, 30))
                for _ in range(5)]
        for pt in [*near, sites[(k * 7) % len(sites)], site]:
            want = _hex(p.enu(*pt))
            assert _hex(c.enu(*pt)) == want, (site, pt)
            assert _hex(frame.enu(*pt)) == want  # the reference's own reference: LocalFrame.enu


@pytest.mark.parametrize("native", [True, False])
def test_a_memo_answers_by_the_identity_of_the_floats(native: bool) -> None:
    memo = EcefMemo(native)
    lat, lon, h = 47.25, 8.5, 430.0
    first = memo(lat, lon, h)
    assert memo(lat, lon, h) is first  # the same three objects: the same tuple
    again = memo(float(repr(lat)), lon, h)  # an equal value in a new object: computed again
    assert again is not first and again == first
    assert memo(lat, lon, h) is not first  # only the latest point is held
    proj = memo.projector(lat, lon, h)
    out = proj.enu(lat, lon, h)
    assert proj.enu(lat, lon, h) is out and out == (0.0, 0.0, 0.0)
    xyz = memo(lat, lon, h)
    assert memo.projector(lat, lon, h).enu(lat, lon, h) is out and memo(lat, lon, h) is xyz
    other = memo.projector(lat + 1.0, lon, h)
    got = other.enu(lat, lon, h)  # its own memo misses; the shared ECEF memo hits
    assert memo(lat, lon, h) is xyz and got != out
    new_h = float(repr(h))
    assert proj.enu(lat, lon, new_h) is not out and proj.enu(lat, lon, new_h) == out
    assert memo(lat, lon, new_h) is not xyz and memo(lat, lon, new_h) == xyz  # the projector updated it


@pytest.mark.parametrize("native", [True, False])
def test_a_projector_is_shared_only_for_the_very_same_floats(native: bool) -> None:
    memo = EcefMemo(native)
    lat, lon, h = float("-33.5"), float("151.25"), float("58.0")  # float objects of their own
    first = memo.projector(lat, lon, h)
    assert memo.projector(lat, lon, h) is first
    assert memo.projector(float("-33.5"), lon, h) is not first  # equal, another object: a new one
    assert memo.projector(lat, lon, h) is not first  # the latest one only
    frame = first.frame
    assert type(frame) is LocalFrame and (frame.lat, frame.lon, frame.h) == (lat, lon, h)
    assert frame.lat is lat  # the frame itself is kept, for the inverse
    e, n, u = first.enu(lat + 1e-4, lon - 2e-4, h + 3.0)
    back = frame.geodetic(e, n, u)
    assert back == pytest.approx((lat + 1e-4, lon - 2e-4, h + 3.0), abs=1e-9)
    made = Projector(frame, memo)
    assert type(made) is type(first) and made.frame is frame and made is not first
    assert _hex(made.enu(lat, lon, h + 1.0)) == _hex(first.enu(lat, lon, h + 1.0))


def test_ecef_against_pyproj() -> None:
    pyproj = pytest.importorskip("pyproj")
    # outside reference: the WGS 84 ellipsoid (NIMA TR8350.2, 3rd edition, Table 3.1) as pyproj/PROJ
    # converts it: EPSG:4979 (geographic 3D) to EPSG:4978 (geocentric)
    tr = pyproj.Transformer.from_crs("EPSG:4979", "EPSG:4978", always_xy=True)
    memo = EcefMemo(True)
    for lat, lon, h in _worldwide(500, 4):
        want = tr.transform(lon, lat, h)
        got = memo(lat, lon, h)
        assert max(abs(a - b) for a, b in zip(got, want, strict=True)) < 1e-6, (lat, lon, h, got, want)


ODD = [None, "1", True, 7, 2**53 + 1, 10**400, math.nan, math.inf, -math.inf, 1e308, 5e-324, -0.0,
       FUZZ.SubFloat(10.5), np.float64(45.5), np.float32(1.5), np.int64(3), (1.0,)]


@pytest.mark.filterwarnings("ignore::RuntimeWarning")  # numpy overflow in both paths alike
def test_odd_values_give_the_same_results_and_errors() -> None:
    base = (47.25, 8.5, 430.0)
    for k in range(3):
        for v in ODD:
            pt = (*base[:k], v, *base[k + 1:])
            pair = FUZZ.Pair()
            for op in ("ecef", "projector", "enu", "enu", "new", "enu", "ecef"):
                if op == "enu" and not pair.p.projs:
                    assert pair.check("projector", 0, base) is None
                assert pair.check(op, 0, pt) is None, (op, pt)
            # after an error the memos hold what they held: the next call on the same point agrees
            assert pair.check("ecef", 0, base) is None and pair.check("enu", 0, base) is None
    assert _outcome(EcefMemo(True), None, 1.0, 2.0) == _outcome(geodetic_to_ecef, None, 1.0, 2.0)
    assert _outcome(EcefMemo(True), math.inf, 1.0, 2.0)[1] == (ValueError, "math domain error")


def _drive(pts: list[tuple]) -> tuple[int, int]:
    """The points as the Analyzer's stages project them (FixStats and PositionStats share the
    projector made at the first fix, a reference projector joins later), both ways, compared after
    every call; (calls, memo hits)."""
    pair = FUZZ.Pair()
    for i, pt in enumerate(pts):
        if i == 0 or i == 50:
            assert pair.check("projector" if i == 0 else "new", 0, pt) is None
        for op, j in (("enu", 0), ("projector", 0), ("enu", 0), ("enu", 1), ("ecef", 0)):
            if op == "projector" and i:
                continue  # the second stage anchors at the very same floats once
            assert pair.check(op, j, pt) is None, (i, op, pt)
    return pair.steps, pair.hits


def _fix_points(eps: list[Epoch]) -> list[tuple]:
    return [(ep.lat, ep.lon, ep.h or 0.0) for ep in eps if ep.lat is not None and ep.lon is not None]


@pytest.mark.skipif(not CORPUS_FILES, reason="shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
@pytest.mark.parametrize("name", CORPUS_FILES)
def test_corpus_logs(name: str) -> None:
    # shared/realdata/corpus/<name>: a public log, source in shared/realdata/SOURCES.md
    pts = _fix_points(corpus_epochs(CORPUS / name))
    if not pts:
        pytest.skip("a log without positions")
    steps, hits = _drive(pts)
    assert steps >= 4 * len(pts) and hits >= len(pts)  # every epoch hit the memo at least once


@pytest.mark.parametrize("dialect", ["clean", *DIALECTS])
def test_simulator_dialects(dialect: str) -> None:
    pts = _fix_points(list(sim_epochs(dialect, 60.0)))  # the first fix comes after ~30 s
    assert len(pts) > 20
    _drive(pts)


def test_the_analyzer_gives_the_same_figures_with_the_c_memo(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    eps = list(sim_epochs("clean", 120.0))
    out = []
    for c in (core, None):
        monkeypatch.setattr(geo, "_CORE", c)
        a = Analyzer()
        assert (type(a.fix._ecef) is core.EcefMemo) == (c is not None)  # the memo in use
        for ep in eps:
            a.on_chunk(ep.mono, ep.wall, 300)
            a.on_epoch(ep)
        snap = a.snapshot(StreamCounters())
        assert snap["internal_errors"] == 0
        out.append(json.dumps(snap, sort_keys=True, default=repr))
    assert out[0] == out[1]


@pytest.mark.filterwarnings("ignore::RuntimeWarning")
@pytest.mark.parametrize(("seed", "odd"), [(1, 0.0), (2, 0.02), (3, 0.2)])
def test_random_calls(seed: int, odd: float) -> None:
    n, bad, examples = FUZZ.diff(6000, seed, odd)
    assert bad == 0, examples
    rng = random.Random(seed)
    gen = FUZZ.points(rng, odd)
    pair = FUZZ.Pair()
    for _ in range(3000):
        assert pair.step(rng, next(gen)) is None
    assert n == 6000 and pair.hits > 300  # memo hits were compared, not only fresh conversions
    assert (pair.errors > 0) == (odd > 0)  # odd values raised in both, alike


def test_cycles_between_memo_and_projector_are_collected() -> None:
    def alive() -> int:
        gc.collect()
        return sum(1 for o in gc.get_objects() if type(o) in (core.EcefMemo, core.Projector))

    before = alive()
    for k in range(200):
        memo = EcefMemo(True)
        memo.projector(float(k), 1.0, 2.0).enu(1.0, 2.0, 3.0)  # memo -> projector -> memo
    del memo
    assert alive() == before
