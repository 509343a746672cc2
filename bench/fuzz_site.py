"""Random item streams for the differential of the C steps of StreamIntegrity.on_epoch
(livefix/analysis/_epochcore_site.c) and MedianPosition.on_epoch (livefix/analysis/_epochcore_median.c)
against their Python references (livefix/analysis/integrity.py, median.py), for bench/fuzz.py (`make fuzz`, under the sanitizers) and
tests/analysis/test_site_native.py. Deterministic for a seed.

A stream is an endless iterator of items: ("epoch", Epoch), ("chunk", mono) (bytes came at host time
mono: a long pause before one is a stall, whose hole the next epochs place) or ("event", Event). It
has runs of fixed epochs of one type with noise (narrow, and wide enough for the medians to coarsen),
changes of fix type, epochs without a fix, a height, an MSL height or a time, the receiver's time
going back or jumping, host time standing still or going back, epochs that stop coming (gaps), data
that stops coming (stalls), datums coming and going (more kinds than are listed), dates unknown, and
with share `odd` values of other types and ranges (None, NaN, inf, huge values, ints, bools, strs).
"""

from __future__ import annotations

import math
import random
from collections.abc import Iterator
from typing import Any

from fuzz_epochcore import exact, same

QUALITY = [4] * 6 + [5, 5, 2, 1, 0, 6, 9, 8]
NOISE = {1: 3.0, 2: 0.8, 4: 0.01, 5: 0.3, 6: 5.0, 8: 0.0, 9: 1.0}  # metres (8: a simulator repeats itself)
DATUMS = [("W84", "W84"), ("P90", "W84"), ("999", "W84"), ("W72", "W84"), ("S85", "W84"), ("A", "B"),
          ("C", "D"), ("E", "F"), ("G", "H"), ("I", "J")]
ODD = [None, 0, 1, -3, 2**53 + 1, 10**400, True, False, math.nan, math.inf, -math.inf, -0.0, 1e308, "1", (),
       ("W84",), ("W84", 1), ["W84", "W84"]]
FIELDS = ["mono", "wall", "utc", "quality", "lat", "lon", "h", "alt_msl", "sep", "date_known", "datum"]


def stream(rng: random.Random, odd: float = 0.02, rate: float = 10.0) -> Iterator[tuple[str, Any]]:
    """Endless items of one session (see the module notes); `rate` epochs per second nominal."""
    from livefix.state.epoch import Epoch, Event

    iv = 1.0 / rate
    mono, utc, q = 100.0, 1.7e9 + rng.random() * 1e6, rng.choice(QUALITY)
    lat0, lon0, h0, sep = rng.uniform(-80, 80), rng.uniform(-180, 360), rng.uniform(-50, 3000), rng.uniform(-40, 60)
    wide, timed, msl, datum, known = 1.0, True, False, None, True
    while True:
        r = rng.random()
        step = iv
        if r < 0.01:
            step = iv * rng.choice([2.5, 4.0, 30.0, 400.0, 1e5])  # epochs stop coming, or a long hole
        elif r < 0.015:
            step = rng.choice([0.0, -iv, -5.0])
        mono += step + rng.gauss(0, iv * 0.02) * (rng.random() < 0.5)
        utc += iv if rng.random() < 0.8 else step
        if rng.random() < 0.004:
            utc -= rng.choice([1.0, 20.0, 3600.0, 1e6])
        if rng.random() < 0.003:
            utc += rng.choice([0.5, 100.0, 4000.0, 90000.0])
        if rng.random() < 0.01:
            timed = not timed
        if rng.random() < 0.02:
            q = rng.choice(QUALITY)
        if rng.random() < 0.005:
            wide = rng.choice([1.0, 1.0, 300.0, 1e4])  # wide: thousands of bins, the medians coarsen
        if rng.random() < 0.005:
            msl = not msl
        if rng.random() < 0.01:
            datum = rng.choice([None, None, *DATUMS])
        if rng.random() < 0.003:
            known = not known
        if rng.random() < 0.03:
            yield "chunk", mono + rng.choice([0.01, -0.02, 0.5, 3.0, 20.0, 600.0])
        elif rng.random() < 0.005:
            yield "event", Event(mono=mono, wall=mono, kind="link", text="", data={"state": "stalled"})
        s = NOISE.get(q, 1.0) * 1e-5 * wide
        h = h0 + rng.gauss(0, 1.0) * min(wide, 100.0)
        f: dict[str, Any] = {
            "mono": mono, "wall": 1.7e9 + mono, "utc": utc if timed else None, "quality": q,
            "lat": lat0 + rng.gauss(0, s), "lon": lon0 + rng.gauss(0, s), "h": None if msl else h,
            "alt_msl": h - sep, "sep": None if msl and rng.random() < 0.5 else sep, "date_known": known,
            "datum": datum}
        if q == 8:
            f["lat"], f["lon"] = lat0, lon0
        if q == 0 or rng.random() < 0.01:
            f["lat"] = f["lon"] = f["h"] = None
        if rng.random() < 0.02:
            f[rng.choice(["h", "alt_msl", "sep"])] = rng.choice([None, 0.0, math.nan, math.inf, 1e300])
        if rng.random() < 0.01:
            f["utc"] = rng.choice([None, math.nan, f["utc"]])
        if rng.random() < odd:
            f[rng.choice(FIELDS)] = rng.choice(ODD)
        yield "epoch", Epoch(**f)


# attributes that hold the epochs' own objects: the C step must store the very same ones
SAME_OBJECTS = {"integrity": ("prev", "date_known")}


def integrity_state(s: Any) -> list[Any]:
    """The whole state of a StreamIntegrity (for fuzz_epochcore.same: type-exact and bit-exact), with
    which stored floats are one object (the host and nominal interval of an epoch without a receiver
    interval, the nominal interval and its place in the sorted window)."""
    out = [(k, list(v) if type(v).__name__ == "deque" else v) for k, v in vars(s).items()
           if k not in ("config", "emit", "on_gap", "on_epoch", "prev")]
    h, q, srt, nom = s.iv_host, s.iv_nominal, s._iv_sorted, s._nominal
    out.append(("#alias", [bool(h) and bool(q) and h[-1] is q[-1], [i for i, x in enumerate(srt) if x is nom],
                           [any(x is y for y in srt) for x in list(q)[-1:]]]))
    return out


def median_state(m: Any, full: bool = True) -> list[Any]:
    """The state of a MedianPosition: per fix type the pending rows and (full) the five binned medians;
    else the count of pending rows and the newest (the bins change only when a batch settles)."""
    out: list[Any] = [] if _medians(m) else [m.by_fix]  # an odd value: itself
    for fix, fm in _medians(m).items():
        rows = fm._pend if full or type(fm._pend) is not list else [len(fm._pend), fm._pend[-1:]]
        out.append((fix, rows, [[b.width, b.bins, b._n, b._last, b._run] if full else [b._n, b._run]
                                for b in (fm.lat, fm.lon, fm.h, fm.alt, fm.sep)]))
    return out


def _medians(m: Any) -> dict[str, Any]:
    """m.by_fix when it is what the stage makes (odd states may put anything there), else {}."""
    from livefix.analysis.median import _FixMedians

    by_fix = m.by_fix
    ok = type(by_fix) is dict and all(type(v) is _FixMedians for v in by_fix.values())
    return by_fix if ok else {}


def same_objects(c: Any, p: Any, full: bool = True) -> str | None:
    """Where the reference stores an epoch's own objects, the C side holds the very same ones (full:
    in every pending row, else in the newest)."""
    for part in ("integrity",):
        for k in SAME_OBJECTS[part]:
            if getattr(getattr(c, part), k) is not getattr(getattr(p, part), k):
                return f"{part}.{k} is another object"
    for fix, fm in _medians(c.median).items():
        pm = _medians(p.median).get(fix)
        if pm is None or len(fm._pend) != len(pm._pend):
            return f"median {fix}: pending rows differ"
        rows = zip(fm._pend, pm._pend, strict=True) if full else zip(fm._pend[-1:], pm._pend[-1:], strict=True)
        if any(a is not b for ra, rb in rows for a, b in zip(ra, rb, strict=True)):
            return f"median {fix}: a pending row holds other objects"
        for k in ("lat", "lon", "h", "alt", "sep"):
            if getattr(fm, k)._last is not getattr(pm, k)._last:
                return f"median {fix}.{k}: _last is another object"
    return None


def _run(fn: Any, *a: Any) -> object:
    try:
        fn(*a)
        return None
    except Exception as err:  # noqa: BLE001 - compared by the caller
        return (type(err), str(err))


class Side:
    """The two stages as the Analyzer wires them (one fix test shared), C steps on or off."""

    def __init__(self, native: bool, memo: bool) -> None:
        from livefix.analysis.config import AnalysisConfig
        from livefix.analysis.integrity import StreamIntegrity
        from livefix.analysis.median import MedianPosition
        from livefix.analysis.streaming import fix_memo, valid_fix

        self.events: list[Any] = []
        self.integrity = StreamIntegrity(AnalysisConfig(), self.events.append, native=native)
        self.median = MedianPosition(fix_memo() if memo else valid_fix, native=native)


def _done() -> int:
    """Epochs the bound C steps did themselves so far (all stages, this process)."""
    from livefix.analysis import median

    core = median._CORE
    return 0 if core is None else sum(done for done, _ in core.site_counts().values())


class Pair:
    """C steps (c) and the references (p), fed the same items."""

    def __init__(self, memo: bool = True) -> None:
        self.c, self.p = Side(True, memo), Side(False, memo)
        self.steps = self.fast = 0  # fast: epoch steps the C code did (the rest it handed back)
        self._pend: list[tuple[str, int]] = []  # the C side's pending rows per fix type after the last step

    def step(self, item: tuple[str, Any]) -> str | None:
        """One item through both; None when they agree (errors, events, whole states), else what differs."""
        kind, x = item
        self.steps += 1
        if kind == "chunk":  # x: host time, or (mono, wall, bytes)
            mono, wall, nbytes = x if type(x) is tuple else (x, 1.7e9 + x, 100)
            for s in (self.c, self.p):
                s.integrity.on_chunk(mono, wall, nbytes)
            return None
        if kind == "event":
            for s in (self.c, self.p):
                s.integrity.on_event(x)
            return None
        for name in ("integrity", "median"):
            before = _done()
            got = _run(getattr(self.c, name).on_epoch, x)
            self.fast += _done() - before
            want = _run(getattr(self.p, name).on_epoch, x)
            if got != want:
                return f"{name}: {got} != {want}"
        return self.compare()

    def compare(self) -> str | None:
        c, p = self.c, self.p
        # the bins in full when a batch settled (a fix type's rows went down, or a new fix type), else cheaply
        fms = _medians(c.median)
        pend = [(k, len(v._pend) if type(v._pend) is list else -1) for k, v in fms.items()]
        before = dict(self._pend)
        full = self.steps % 97 == 0 or len(pend) != len(before) or any(n < before.get(k, n) for k, n in pend)
        self._pend = pend
        for name, fn in (("integrity", integrity_state), ("median", lambda m: median_state(m, full))):
            a, b = fn(getattr(c, name)), fn(getattr(p, name))
            if not same(a, b):
                return f"{name} state: {exact(a)[:1500]} != {exact(b)[:1500]}"
        if len(c.events) != len(p.events) or (c.events and c.events[-1].to_json() != p.events[-1].to_json()):
            return "events differ"
        return same_objects(c, p, full)

    def snapshots(self) -> tuple[Any, Any]:
        from types import SimpleNamespace

        counters = SimpleNamespace(lines=1, by_type={"GGA": 1})
        out = []
        for s in (self.c, self.p):
            snap: list[Any] = []
            for fn, a in ((s.integrity.snapshot, (counters,)), (s.median.snapshot, ())):
                try:
                    snap.append(fn(*a))
                except Exception as err:  # noqa: BLE001 - odd values may fail both alike
                    snap.append((type(err), str(err)))
            out.append(exact(snap))
        return out[0], out[1]


def diff(n: int, seed: int = 1, odd: float = 0.02) -> tuple[int, int, list[str]]:
    """n random items through C and Python (a new Pair and stream every 4000, the fix test memo'd or
    not): (items, disagreements, the first few)."""
    rng = random.Random(seed)
    bad, examples = 0, []
    pair, gen = Pair(), stream(rng, odd)
    for i in range(n):
        if i and i % 4000 == 0:
            a, b = pair.snapshots()
            if a != b:
                bad += 1
                examples.append(f"item {i}: snapshots differ")
            pair, gen = Pair(rng.random() < 0.7), stream(rng, odd, rng.choice([10.0, 1.0, 20.0]))
        it = next(gen)
        why = pair.step(it)
        if why is not None:
            bad += 1
            if len(examples) < 3:
                examples.append(f"item {i}: {why} on {it!r}"[:3000])
            pair, gen = Pair(), stream(rng, odd)  # one disagreement would repeat on every later item
    return n, bad, examples
