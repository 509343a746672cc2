"""Differential fuzz of the closed-form DOP solve: livefix/analysis/_dopcore.c against the reference
livefix.analysis.dopsolve.solve, on seeded geometries (realistic, near-degenerate, degenerate) and odd
inputs (NaN, inf, None, wrong types, huge values, empty, lengths that differ, too many systems); and
of its used-satellite pass (_dopused.c) against livefix.analysis.dop._used on seeded epochs.

The C path is taken as DopStats takes it (dopsolve.make_solver): its own result, or the reference's
when it hands over (NotImplemented). Outcomes are compared as float.hex of every value in key order,
None, or the exception type.

    PYTHONPATH=. python bench/fuzz_dop.py --cases 200000 [--seed 1] [--core path/to/_dopcore.so]
"""

from __future__ import annotations

import argparse
import math
import random
import sys
import time
from collections.abc import Callable, Iterator
from pathlib import Path
from types import ModuleType

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from fuzz_twins import load_ext  # noqa: E402

from livefix.analysis import dop, dopsolve  # noqa: E402
from livefix.state.epoch import Epoch, SatObs  # noqa: E402

SYSTEMS = "GRECJIS"
Case = tuple  # (az, el, systems) as handed to solve


class _F(float):
    """A float subclass (the C path hands it over)."""


class _S(str):
    """A str subclass."""


def _geometry(rng: random.Random) -> tuple[list, list, list | None]:
    """A realistic sky, sometimes squeezed towards a degenerate one."""
    n = rng.randint(4, 40)
    k = rng.randint(1, 6)
    letters = rng.sample(SYSTEMS, k)
    systems: list | None = [rng.choice(letters) for _ in range(n)]
    az = [rng.uniform(0.0, 360.0) for _ in range(n)]
    el = [rng.uniform(-5.0, 90.0) for _ in range(n)]
    squeeze = rng.random()
    if squeeze < 0.15:  # nearly one elevation
        e0, w = rng.uniform(-5.0, 90.0), 10.0 ** rng.uniform(-12.0, 0.0)
        el = [e0 + rng.gauss(0.0, w) for _ in range(n)]
    elif squeeze < 0.3:  # nearly one azimuth
        a0, w = rng.uniform(0.0, 360.0), 10.0 ** rng.uniform(-12.0, 0.0)
        az = [a0 + rng.gauss(0.0, w) for _ in range(n)]
    elif squeeze < 0.4:  # a few directions repeated
        m = rng.randint(1, 4)
        pick = [rng.randrange(m) for _ in range(n)]
        az, el = [az[i] for i in pick], [el[i] for i in pick]
    if rng.random() < 0.3:  # whole degrees, as receivers give them
        az = [float(round(a)) for a in az]
        el = [float(round(e)) for e in el]
    if rng.random() < 0.4:
        systems = None
    return az, el, systems


_ODD_VALUES: tuple = (math.nan, math.inf, -math.inf, None, "12", True, 10**30, 2**53 + 1, -(2**53), 1e308,
                      -1e308, 5e-324, -0.0, 12, _F(12.5), b"1", [1.0])


def _odd(rng: random.Random, case: tuple[list, list, list | None]) -> Case:
    """One odd change of a geometry."""
    az, el, systems = case
    az, el = list(az), list(el)
    n = len(az)
    kind = rng.randrange(12)
    if kind <= 2 and n:  # an odd value
        (az if kind == 0 else el)[rng.randrange(n)] = rng.choice(_ODD_VALUES)
        if kind == 2:
            az[rng.randrange(n)] = rng.choice(_ODD_VALUES)
    elif kind == 3:  # lengths differ
        (az if rng.random() < 0.5 else el).pop() if n else az.append(1.0)
    elif kind == 4:
        systems = ([rng.choice(SYSTEMS) for _ in range(n + rng.choice((-1, 1)))])
    elif kind == 5:  # odd system labels
        systems = [rng.choice(("G", "E", 7, None, _S("G"), "GPS", "", "é", ("G",))) for _ in range(n)]
    elif kind == 6:  # more systems than the C bound
        systems = [f"S{rng.randrange(40)}" for _ in range(n)]
        if rng.random() < 0.5:
            az += [rng.uniform(0.0, 360.0) for _ in range(60)]
            el += [rng.uniform(0.0, 90.0) for _ in range(60)]
            systems += [f"S{rng.randrange(40)}" for _ in range(60)]
    elif kind == 7:  # empty, or fewer satellites than unknowns
        m = rng.randint(0, 4)
        az, el = az[:m], el[:m]
        systems = None if systems is None else systems[:m]
    elif kind == 8:  # other containers
        conv: Callable = rng.choice((tuple, list, str, bytearray, dict.fromkeys))
        try:
            az = conv(az)
        except (TypeError, ValueError):
            pass
    elif kind == 9:  # many satellites (the C heap buffer)
        m = rng.randint(65, 300)
        az = [rng.uniform(0.0, 360.0) for _ in range(m)]
        el = [rng.uniform(-5.0, 90.0) for _ in range(m)]
        systems = None if rng.random() < 0.5 else [rng.choice(SYSTEMS) for _ in range(m)]
    elif kind == 10:  # ints, huge or not
        az = [int(a) * rng.choice((1, 1, 10**6)) if isinstance(a, float) else a for a in az]
    else:  # tuples, and a systems string (a sequence of letters)
        az, el = tuple(az), tuple(el)
        if systems is not None:
            systems = "".join(s for s in systems if isinstance(s, str))[:n] if rng.random() < 0.5 else tuple(systems)
    return az, el, systems


def dop_cases(rng: random.Random, odd: float = 0.1) -> Iterator[Case]:
    """Endless seeded cases; a share `odd` of them odd."""
    while True:
        case = _geometry(rng)
        yield _odd(rng, case) if rng.random() < odd else case


def outcome(fn: Callable, case: Case) -> object:
    """What fn makes of the case: float.hex of each value in key order (and its exact type), None,
    or the exception type."""
    try:
        r = fn(*case)
    except Exception as err:  # noqa: BLE001 - compared by the caller
        return ("raise", type(err).__name__)
    if r is None:
        return None
    return [(k, type(v).__name__, v.hex() if type(v) is float else repr(v)) for k, v in r.items()]


def native_path(core: ModuleType) -> Callable:
    """The solve DopStats runs with this build (as dopsolve.make_solver: hand-over to the reference)."""
    def solve(az: object, el: object, systems: object = None) -> object:
        r = core.solve(az, el, systems)
        return dopsolve.solve(az, el, systems) if r is NotImplemented else r  # type: ignore[arg-type]
    return solve


def dop_diff(cases: int, seed: int = 1, core: ModuleType | None = None,
             odd: float = 0.1) -> tuple[int, int, int, list[str]]:
    """(cases, handed over, disagreements, first examples) of the C solve against the reference."""
    core = core or dopsolve._CORE
    if core is None:
        raise RuntimeError("livefix.analysis._dopcore is not built")
    rng = random.Random(seed)
    gen = dop_cases(rng, odd)
    fast = native_path(core)
    bad = handed = 0
    examples: list[str] = []
    for _ in range(cases):
        case = next(gen)
        try:
            handed += core.solve(*case) is NotImplemented
        except Exception:  # noqa: BLE001 - the C solve never raises on its own (only MemoryError)
            bad += 1
        if outcome(fast, case) != outcome(dopsolve.solve, case):
            bad += 1
            if len(examples) < 5:
                examples.append(repr(case)[:300])
    return cases, handed, bad, examples


_ODD_FIELDS: tuple = (None, "", "GP", 1.0, True, -1, 10**20, math.nan, "12", _S("G"), 12.0, 2**53 + 1)


def _sat(rng: random.Random, system: object, prn: object, odd: float) -> SatObs:
    """A signal; with probability odd, one field odd."""
    el: object = rng.choice((None, rng.randint(-5, 90), float(rng.randint(0, 90)), rng.uniform(0, 90)))
    az: object = rng.choice((None, rng.randrange(360), float(rng.randrange(360))))
    used: object = rng.random() < 0.6
    fields = [system, prn, rng.choice(("1", "7", "")), el, az, 40, used]
    if rng.random() < odd:
        fields[rng.choice((0, 1, 3, 4, 6))] = rng.choice(_ODD_FIELDS)
    return SatObs(*fields)  # type: ignore[arg-type]


def used_epochs(rng: random.Random, odd: float = 0.05) -> Iterator[Epoch]:
    """Endless seeded epochs for _used: several signals per satellite, GSA lists that name satellites
    in view or not, sometimes odd fields or containers."""
    while True:
        n = rng.choice((0, 1, *[rng.randint(2, 60)] * 8, rng.randint(200, 300)))
        letters = SYSTEMS if rng.random() > 0.05 else [f"S{i}" for i in range(40)]
        keys = [(rng.choice(letters), rng.randint(1, 40)) for _ in range(max(1, n // 2))]
        sats = tuple(_sat(rng, *rng.choice(keys), odd if rng.random() < 0.1 else 0.0) for _ in range(n))
        listed: object = tuple(rng.sample(keys, rng.randint(0, len(keys)))) if rng.random() < 0.6 else ()
        listed = (*listed, *[(rng.choice(letters), rng.randint(1, 40)) for _ in range(rng.randint(0, 3))])
        if rng.random() < odd:
            listed = rng.choice((list(listed), (*listed, ("G", 1.0)), (*listed, ["G", 1]), (*listed, ("G", 1, 2)),
                                 (*listed, (1, "G")), (*listed, ("G", True))))
        if rng.random() < odd:
            sats = rng.choice((list(sats), (*sats, ("G", 1)), sats[::-1]))
        yield Epoch(mono=0.0, wall=0.0, utc=None, quality=1, sats=sats, used_prns=listed)  # type: ignore[arg-type]


def used_outcome(fn: Callable, ep: Epoch) -> object:
    """What fn makes of the epoch: each entry's values (float.hex) and whether each value is the very
    object of the epoch (float(x) of a float is x itself), the count; or the exception type."""
    try:
        geo, count = fn(ep)
    except Exception as err:  # noqa: BLE001 - compared by the caller
        return ("raise", type(err).__name__)
    mine = {id(x) for s in ep.sats for x in (getattr(s, "azim", None), getattr(s, "elev", None),
                                               getattr(s, "system", None))}
    return (type(geo).__name__, [(type(g).__name__, [(type(x).__name__, x.hex() if type(x) is float else repr(x),
                                                      id(x) in mine) for x in g]) for g in geo],
            type(count).__name__, count)


def used_diff(epochs: int, seed: int = 1, core: ModuleType | None = None,
              odd: float = 0.05) -> tuple[int, int, int, list[str]]:
    """(epochs, handed over, disagreements, first examples) of the C pass against dop._used."""
    core = core or dopsolve._CORE
    if core is None:
        raise RuntimeError("livefix.analysis._dopcore is not built")
    gen = used_epochs(random.Random(seed), odd)
    bad = handed = 0
    examples: list[str] = []

    def fast(ep: Epoch) -> object:
        r = core.used(ep.sats, ep.used_prns)
        return dop._used(ep) if r is NotImplemented else r

    for _ in range(epochs):
        ep = next(gen)
        handed += core.used(ep.sats, ep.used_prns) is NotImplemented
        if used_outcome(fast, ep) != used_outcome(dop._used, ep):
            bad += 1
            if len(examples) < 5:
                examples.append(f"{ep.sats!r} {ep.used_prns!r}"[:600])
    return epochs, handed, bad, examples


def load_dop_core(path: str) -> ModuleType:
    """The build at `path` (e.g. the sanitizer build), used as livefix.analysis._dopcore here."""
    mod = load_ext("livefix.analysis._dopcore", path)
    mod.configure(SatObs)
    dopsolve._CORE = mod
    return mod


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cases", type=int, default=100_000)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--epochs", type=int, default=20_000, help="epochs for the used-satellite pass")
    ap.add_argument("--core", help="a build of _dopcore to test (default: the built one)")
    args = ap.parse_args()
    core = load_dop_core(args.core) if args.core else None
    t0 = time.perf_counter()
    n, handed, bad, examples = dop_diff(args.cases, args.seed, core)
    for e in examples:
        print("dop disagreement:", e, file=sys.stderr)
    print(f"RESULT | dop fuzz cases | {n:,} ({handed:,} handed over) in {time.perf_counter() - t0:.0f} s | info | met")
    print(f"RESULT | dop fuzz disagreements | {bad} | 0 | {'met' if bad == 0 else 'NOT met'}")
    t0 = time.perf_counter()
    n, handed, bad2, examples = used_diff(args.epochs, args.seed, core)
    for e in examples:
        print("dop used disagreement:", e, file=sys.stderr)
    print(f"RESULT | dop used fuzz epochs | {n:,} ({handed:,} handed over) in {time.perf_counter() - t0:.0f} s | info | met")
    print(f"RESULT | dop used fuzz disagreements | {bad2} | 0 | {'met' if bad2 == 0 else 'NOT met'}")
    return 0 if bad == bad2 == 0 else 1


if __name__ == "__main__":
    sys.exit(main())
