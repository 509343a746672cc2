"""Random row streams for the differential of Track._settle in C (track_settle in
livefix/analysis/_epochcore_track.c) against its Python reference (livefix/analysis/track.py), for
bench/fuzz.py (`make fuzz`, under the sanitizers) and tests/analysis/test_track_native.py.
Deterministic for a seed.

Each stream is a standing receiver's E/N/U scatter with the rows a PositionStats queues (t, e, n, u,
sigmas, HDOP): epochs without a height (u NaN), repeated positions (distance 0 from the mean), time
steps across the 60 s block boundary and back, huge and non-finite values now and then, and batches
of every length from 1 to past the C code's bound (which it must hand back). Long streams fill the
Allan history, so its decimation (the factor doubling) and the ring's wrap are compared too.
"""

from __future__ import annotations

import math
import random
from collections.abc import Iterator
from typing import Any

from fuzz_epochcore import Exact

ODD = [math.nan, math.inf, -math.inf, 1e300, -1e300, 0.0, -0.0, 5e-324]


def rows(rng: random.Random, odd: float = 0.01) -> Iterator[tuple[float, ...]]:
    """Endless Track rows: (t, e, n, u, sigma lat, sigma lon, sigma alt, HDOP)."""
    t, s = 1000.0, rng.choice([0.01, 0.3, 2.0])
    e0, n0, u0 = rng.gauss(0, 1), rng.gauss(0, 1), rng.gauss(0, 1)
    while True:
        t += rng.choice([0.1] * 20 + [1.0, 0.0, 61.0, -0.5, 120.0])
        if rng.random() < 0.002:
            s = rng.choice([0.01, 0.3, 2.0, 0.0])
        e, n = e0 + rng.gauss(0, s), n0 + rng.gauss(0, s)
        u = math.nan if rng.random() < 0.05 else u0 + rng.gauss(0, 2 * s)
        row = [t, e, n, u, s, s * 1.1, math.nan if rng.random() < 0.3 else 2 * s, rng.choice([0.8, math.nan])]
        if rng.random() < 0.02:  # the same position again: distance 0 from a mean that equals it
            row[1], row[2] = e0, n0
        if rng.random() < odd:
            row[rng.randrange(4)] = rng.choice(ODD)
        yield tuple(row)


def state(trk: Any) -> Exact:
    """Everything a Track and its accumulators hold, type-exact and bit-exact."""
    m, hr, hv, b, a, r = trk._mom, trk._hist_r, trk._hist_v, trk._blocks, trk._allan, trk._ring

    def hist(h: Any) -> list:
        return [list(h.bins.items()), h.zeros, h.n]

    def pairs(p: Any) -> list:
        return [p.buf[: p._n].tobytes(), p._n, list(p._pend), p.factor, p._acc, p._k]

    return Exact([trk._pend, m.n, m.nu, m.m, m.c, hist(hr), hist(hv), b._start, b._acc, b._k, b._ku,
                  pairs(b.hist), pairs(a), r._pend, r.total, r._i, r._n, r.buf.tobytes()])


class Pair:
    """Two Tracks fed the same rows; full batches settle in C (c) and in Python (p)."""

    def __init__(self, core: Any) -> None:
        from livefix.analysis.track import Track

        self.core, self.c, self.p = core, Track(), Track()
        self.done = self.handed = 0

    def settle(self) -> str | None:
        r = self.core.track_settle(self.c)
        if r is False:
            self.handed += 1
            self.c._settle()
        else:
            self.done += 1
        self.p._settle()
        a, b = state(self.c), state(self.p)
        return None if a == b else f"state: {a[:1500]} != {b[:1500]}"


def diff(n: int, seed: int = 1, odd: float = 0.01) -> tuple[int, int, int, list[str]]:
    """n random batches through C and Python (a new stream and Pair every 400 batches): (batches,
    handed back, disagreements, the first few)."""
    from livefix.analysis import track

    rng = random.Random(seed)
    bad, examples, pair, gen = 0, [], Pair(track._CORE), rows(rng, odd)
    for i in range(n):
        if i and i % 400 == 0:
            pair, gen = Pair(track._CORE), rows(rng, odd)
        size = rng.choice([64] * 8 + [1, 2, 10, 63, 65, 255, 256, 257, 300])
        for _ in range(size):
            row = next(gen)
            pair.c._pend.append(row)
            pair.p._pend.append(row)
        why = pair.settle()
        if why is not None:
            bad += 1
            if len(examples) < 3:
                examples.append(f"batch {i}: {why}"[:3000])
    return n, pair.handed, bad, examples
