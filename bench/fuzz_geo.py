"""Random calls for the differential of the projection memo in C (livefix/analysis/_epochcore_geo.c:
EcefMemo, Projector) against its Python reference (livefix/analysis/geo.py), for bench/fuzz.py
(`make fuzz`, under the sanitizers) and tests/analysis/test_geo_native.py. Deterministic for a seed.

Run by bench/fuzz.py (bench/fuzz_later.py), whose --twin-core loads the sanitizer build of the module.
"""

from __future__ import annotations

import math
import random
from collections.abc import Iterator
from typing import Any

from fuzz_epochcore import exact


class SubFloat(float):
    """A float of another type: the C code must leave it to the Python code."""


# values of other types and ranges: None, strings, bools, ints (exact, past 2**53, past a double),
# NaN and inf, the largest and smallest doubles, -0.0, a float subclass, a numpy float
ODD = [None, "1", "", True, False, 0, 7, -45, 2**53, 2**53 + 1, 10**400, -(10**400), math.nan, -math.nan,
       math.inf, -math.inf, 1e308, -1e308, 5e-324, -0.0, SubFloat(12.5), (1.0,), [2.0]]
SITES = [(47.3769, 8.5417, 408.0), (90.0, 0.0, 0.0), (-90.0, 135.0, 2800.0), (0.0, 180.0, 0.0),
         (-33.9, -180.0, 12.0), (64.1, -21.9, 30.0), (0.0, 0.0, -500.0), (35.0, 139.0, 4.0e7)]


def _numpy_odd() -> list[object]:
    import numpy as np

    return [np.float64(45.5), np.float32(1.5), np.int64(3)]


def points(rng: random.Random, odd: float = 0.02) -> Iterator[tuple[Any, Any, Any]]:
    """Endless (lat, lon, h): a receiver wandering about one of SITES (poles, the antimeridian,
    -500 m, 40 000 km) or anywhere on Earth (latitude past +-90 and longitude past +-180 too), the
    same three objects again (a memo hit), equal values in new objects (a miss), and with share `odd`
    values of other types and ranges in one of the three places."""
    extra = ODD + _numpy_odd()
    site = rng.choice(SITES)
    last: tuple[Any, Any, Any] = site
    while True:
        r = rng.random()
        if r < 0.35:
            pt = last  # the same objects: every memo on this point hits
        elif r < 0.45:
            pt = tuple(float(repr(v)) if type(v) is float else v for v in last)  # equal values, new objects
        elif r < 0.5:
            site = rng.choice(SITES)
            pt = site
        elif r < 0.6:
            pt = (rng.uniform(-90.0, 90.0), rng.uniform(-180.0, 180.0), rng.uniform(-500.0, 4.0e7))
        elif r < 0.62:
            pt = (rng.uniform(-1e3, 1e3), rng.uniform(-1e6, 1e6), rng.uniform(-1e7, 1e9))
        else:
            pt = (site[0] + rng.gauss(0, 1e-4), site[1] + rng.gauss(0, 1e-4), site[2] + rng.gauss(0, 5.0))
        if rng.random() < odd:
            k = rng.randrange(3)
            pt = (*pt[:k], rng.choice(extra), *pt[k + 1:])
        last = pt
        yield pt


def _run(fn: Any, *a: Any) -> tuple[object, object]:
    try:
        return fn(*a), None
    except Exception as err:  # noqa: BLE001 - compared by the caller
        return None, (type(err), str(err))


class Side:
    """One memo and the projectors made through it (by the memo and by the class), with the latest
    result of each call kept to compare identities."""

    def __init__(self, native: bool) -> None:
        from livefix.analysis.geo import EcefMemo

        self.native = native
        self.memo = EcefMemo(native)
        self.projs: list[Any] = []
        self.last: dict[object, object] = {}

    def call(self, op: str, j: int, pt: tuple) -> tuple[object, object, bool]:
        """(result, error, whether the result is the object the same call gave last time)."""
        from livefix.analysis.geo import Projector
        from livefix.geodesy import LocalFrame

        if op == "ecef":
            res, err = _run(self.memo, *pt)
        elif op == "projector":
            res, err = _run(self.memo.projector, *pt)
            if err is None:
                self.projs.append(res)
        elif op == "new":
            res, err = _run(lambda: Projector(LocalFrame(*pt), self.memo))
            if err is None:
                self.projs.append(res)
        else:
            proj = self.projs[j % len(self.projs)]
            res, err = _run(proj.enu, *pt)
            op = ("enu", id(proj))  # the object, not the slot: projectors are shared
        same_obj = err is None and self.last.get(op) is res
        if err is None:
            self.last[op] = res
        return res, err, same_obj


def _shown(res: object) -> str:
    """exact() of a result; a projector as its frame's origin and rotation (and whose memo)."""
    if hasattr(res, "frame"):
        f = res.frame
        return f"proj[{exact(f.origin.tolist())},{exact(f.rot.tolist())},{exact([f.lat, f.lon, f.h])}]"
    return exact(res)


class Pair:
    """The C memo (c) and the reference (p), given the same calls."""

    def __init__(self) -> None:
        self.c, self.p = Side(True), Side(False)
        self._prev: tuple[str, int, object] = ("", 0, None)
        self.steps = self.errors = self.hits = 0

    def step(self, rng: random.Random, pt: tuple) -> str | None:
        """One random call on both; None when they agree, else what differs."""
        r, prev = rng.random(), self._prev
        if prev[2] is pt and r < 0.6:
            op, j = prev[0], prev[1]  # the same call on the same point: a memo hit
        else:
            op = "ecef" if r < 0.15 else "projector" if r < 0.2 or not self.p.projs else "new" if r < 0.22 else "enu"
            j = rng.randrange(1 << 20)
        self._prev = (op, j, pt)
        return self.check(op, j, pt)

    def check(self, op: str, j: int, pt: tuple) -> str | None:
        """Side.call(op, j, pt) on both (op "enu" needs a projector); None when they agree (result
        type-exact and bit-exact, error type and text, memo identity), else what differs."""
        got, want = self.c.call(op, j, pt), self.p.call(op, j, pt)
        self.steps += 1
        self.errors += want[1] is not None
        self.hits += want[2]
        if got[1] != want[1]:
            return f"{op}: error {got[1]} != {want[1]}"
        if got[2] != want[2]:
            return f"{op}: memo identity {got[2]} != {want[2]}"
        if op in ("projector", "new") and want[1] is None and (
                type(got[0]).__module__, type(want[0]).__module__) != ("livefix.analysis._epochcore", "livefix.analysis.geo"):
            return f"{op}: a projector of the other kind"
        if want[1] is None and _shown(got[0]) != _shown(want[0]):
            return f"{op}: {_shown(got[0])} != {_shown(want[0])}"
        return None


def diff(n: int, seed: int = 1, odd: float = 0.02) -> tuple[int, int, list[str]]:
    """n random calls through C and Python (a new Pair every 2000): (calls, disagreements, the
    first few)."""
    rng = random.Random(seed)
    gen = points(rng, odd)
    bad, examples, pair = 0, [], Pair()
    for i in range(n):
        if i and i % 2000 == 0:
            pair = Pair()
        pt = next(gen)
        why = pair.step(rng, pt)
        if why is not None:
            bad += 1
            if len(examples) < 3:
                examples.append(f"call {i}: {why} on {pt!r}"[:3000])
    return n, bad, examples
