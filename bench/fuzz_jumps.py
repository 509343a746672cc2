"""Random epochs for the differential of the settled case of Jumps.check in C
(livefix/analysis/_epochcore_jumps.c) against its Python reference (livefix/analysis/jumps.py), for
bench/fuzz.py (`make fuzz`, under the sanitizers) and tests/analysis/test_jumps_native.py.
Deterministic for a seed.

Run by bench/fuzz.py (bench/fuzz_later.py), whose --twin-core loads the sanitizer build of the module.
"""

from __future__ import annotations

import math
import random
from collections.abc import Iterator
from typing import Any

from fuzz_epochcore import Exact

FIXES = ["rtk_fixed", "rtk_fixed", "rtk_fixed", "rtk_float", "dgnss", "single", "dead_reckoning"]
NOISE = {"rtk_fixed": 0.01, "rtk_float": 0.2, "dgnss": 0.5, "single": 2.0, "dead_reckoning": 5.0}
FIX_ODD = [None, 1, "".join(["rtk_", "fixed"]), ("rtk_fixed",)]  # the third: equal to a key, another object
NUM_ODD = [None, 0, 3, -2, 2**53 + 1, 10**400, True, math.nan, math.inf, -math.inf, -0.0, 1e308, "1"]
STEPS = [0.1] * 20 + [1.0, 0.0, -0.5, 12.0, 400.0]


def config(rng: random.Random) -> Any:
    """The default config, or one with other limits (ints too) and times."""
    from livefix.analysis.config import AnalysisConfig

    if rng.random() < 0.5:
        return AnalysisConfig()
    return AnalysisConfig(jump_sigma=rng.choice([8.0, 3, 0.5, 100.0]), jump_m=rng.choice([5.0, 1, 0.02]),
                          jump_hold_s=rng.choice([10.0, 1, 0.0]), jump_level_s=rng.choice([300.0, 5, 2.5]),
                          converge_h=(("rtk_fixed", rng.choice([0.05, 0, 1])), ("dgnss", 1.0)),
                          converge_v=(("rtk_fixed", rng.choice([0.1, 2])),))


def epochs(rng: random.Random, odd: float = 0.02) -> Iterator[tuple[Any, ...]]:
    """Endless check(fix, t, abs_t, e, n, u) arguments: noise about a centre per fix type, jumps
    that return or stay (new levels), epochs without a height (NaN), time that stops, steps back
    or jumps, and with share `odd` values of other types and ranges in one place."""
    t, fix = 0.0, "rtk_fixed"
    level = {f: [0.0, 0.0, 0.0] for f in NOISE}
    away: list[float] | None = None
    while True:
        t += rng.choice(STEPS)
        if rng.random() < 0.02:
            fix = rng.choice(FIXES)
        s = NOISE[fix]
        if away is None and rng.random() < 0.01:
            away = [rng.gauss(0, 30 * s + 0.1), rng.gauss(0, 30 * s + 0.1), rng.gauss(0, 3.0)]
        elif away is not None and rng.random() < 0.03:
            if rng.random() < 0.3:
                level[fix] = [a + b for a, b in zip(level[fix], away, strict=True)]  # it stays there
            away = None
        off = away or [0.0, 0.0, 0.0]
        c = level[fix]
        e, n, u = (c[0] + off[0] + rng.gauss(0, s), c[1] + off[1] + rng.gauss(0, s),
                   c[2] + off[2] + rng.gauss(0, 2 * s))
        if rng.random() < 0.05:
            u = math.nan  # no height
        args: list[Any] = [fix, t, 1.8e9 + t, e, n, u]
        if rng.random() < odd:
            k = rng.choice([0, 3, 4, 5])
            args[k] = rng.choice(FIX_ODD if k == 0 else NUM_ODD)
        yield tuple(args)


def state_value(j: Any) -> list:
    """The whole state of a Jumps."""
    cs = {f: [c.n, c.c, c.vh, c.nu, c.vu] for f, c in j.centres.items()}
    return [cs, j._lims, j.open, list(j.items), j.total, j.excluded, j.excluded_s]


def state(j: Any) -> Exact:
    """The whole state of a Jumps, type-exact and bit-exact."""
    return Exact(state_value(j))


def _run(fn: Any, *a: Any) -> tuple[object, object]:
    try:
        return fn(*a), None
    except Exception as err:  # noqa: BLE001 - compared by the caller
        return None, (type(err), str(err))


class Pair:
    """Jumps with the C settled case (c) and the reference (p), fed the same epochs."""

    def __init__(self, cfg: Any = None) -> None:
        from livefix.analysis.config import AnalysisConfig
        from livefix.analysis.jumps import Jumps

        cfg = cfg or AnalysisConfig()
        self.c, self.p = Jumps(cfg, native=True), Jumps(cfg, native=False)
        self.steps = self.settled = self.errors = 0

    def step(self, args: tuple) -> str | None:
        """One epoch through both; None when they agree (result, error, whole state), else what differs."""
        self.steps += 1
        before = self.p.excluded
        got, want = _run(self.c.check, *args), _run(self.p.check, *args)
        self.errors += want[1] is not None
        self.settled += want[0] is True and self.p.excluded == before and args[0] in self.p._lims
        if got != want:
            return f"check: {got} != {want}"
        if state(self.c) != state(self.p):
            return f"state: {state(self.c)} != {state(self.p)}"
        return None


def diff(n: int, seed: int = 1, odd: float = 0.02) -> tuple[int, int, list[str]]:
    """n random epochs through C and Python (a new Pair and config every 3000): (epochs,
    disagreements, the first few)."""
    rng = random.Random(seed)
    gen = epochs(rng, odd)
    bad, examples, pair = 0, [], Pair(config(rng))
    for i in range(n):
        if i and i % 3000 == 0:
            pair = Pair(config(rng))
        args = next(gen)
        why = pair.step(args)
        if why is not None:
            bad += 1
            if len(examples) < 3:
                examples.append(f"epoch {i}: {why} on {args!r}"[:3000])
    return n, bad, examples
