"""Random epoch streams for the differential of ArcCollector.on_epoch in C (arc_sample in
livefix/analysis/_epochcore_arcs.c) against its Python reference (livefix/analysis/arcs.py), for
bench/fuzz.py (`make fuzz`, under the sanitizers) and tests/analysis/test_arcs_native.py.
Deterministic for a seed.

Each stream is a sky of satellite signals rising and setting through the arc window, sampled at
10 Hz: signals with and without a known carrier, elevations, azimuths and C/N0 as whole numbers
or floats, missing values, zero and negative C/N0, NaN and infinities (azimuths stay finite: a
non-finite one would only meet LAPACK's complaint in the smoothing fit, the same Python code on
both sides), time steps across the sampling interval, gaps longer than the arc gap (and, on a
binary grid of times, exactly as long), time going back, the same signal twice in one epoch. Now
and then a value of another type (bool, str, a huge int, an int time, a list for a satellite
system), which the C code must hand back unchanged or meet with the reference's own error. The
configuration changes per stream (whole-number and float window edges, sampling interval 0), and
every second stream runs with MAX_SAMPLES 60 so the cap that closes a long arc is met.
"""

from __future__ import annotations

import math
import random
import warnings
from collections.abc import Iterator
from typing import Any

from fuzz_exact import Exact

from livefix.state.epoch import EPOCH_FIELDS, Epoch, make_epoch, make_satobs

SIGNALS = [("G", "1"), ("G", ""), ("G", "8"), ("E", "7"), ("E", "2"), ("C", "1"), ("J", ""), ("R", "1"),
           ("G", "9"), ("E", "")]  # R and G/9: no carrier known (no arc kept)
ODD_VALUES: list[Any] = [True, "12", 2**60, -(2**60), 1.5j, [], None]
_BLANK = dict.fromkeys(EPOCH_FIELDS)


def _value(rng: random.Random, x: float, odd: float, finite: bool = False) -> Any:
    r = rng.random()
    if r < odd:
        return rng.choice(ODD_VALUES)
    if r < 0.03:  # (a non-finite azimuth would only test LAPACK's complaint in the smoothing fit)
        return rng.choice([None, 0, 0.0, -0.0, -3] + ([] if finite else [math.nan, math.inf, -math.inf]))
    return round(x) if rng.random() < 0.7 else x  # NMEA gives whole degrees and dB-Hz; some receivers more


def config(rng: random.Random) -> Any:
    from livefix.analysis.reflection import ReflectionConfig

    return ReflectionConfig(el_min_deg=rng.choice([5.0, 5, 10.5]), el_max_deg=rng.choice([25.0, 25, 30.0]),
                            gap_s=rng.choice([60.0, 60, 2.5]), sample_s=rng.choice([0.95] * 4 + [0, 1, 0.1]),
                            min_points=rng.choice([40, 5, 3]))


def epochs(rng: random.Random, odd: float = 0.002) -> Iterator[Epoch]:
    """Endless epochs of a random sky (about 20 signals in view, a few in the arc window)."""
    n = rng.randrange(4, 24)
    sky = [[*rng.choice(SIGNALS), rng.randrange(1, 40), rng.uniform(-5, 60), rng.uniform(0, 360),
            rng.choice([-1, 1]) * rng.uniform(0.002, 0.05), rng.uniform(25, 50)] for _ in range(n)]
    grid = rng.random() < 0.3  # times on a binary grid: a gap or an interval met exactly
    t = float(rng.randrange(1000)) if grid else rng.uniform(0, 1e5)
    steps = ([0.25] * 8 + [0.5, 1.0, 2.5, 60.0, 0.0, -1.0] if grid
             else [0.1] * 30 + [0.0, 0.95, 1.0, 3.0, 61.0, -0.4, -120.0])
    while True:
        t += rng.choice(steps)
        sats = []
        for s in sky:
            system, signal, prn, el, az, rate, cn0 = s
            s[3] = el + rate
            if s[3] < -5 or s[3] > 80 or rng.random() < 0.001:  # set or risen away: a new signal there
                s[3], s[5] = rng.uniform(0, 30), rng.choice([-1, 1]) * rng.uniform(0.002, 0.05)
            if rng.random() < 0.02:
                continue  # not in this epoch's GSV
            sats.append(make_satobs((rng.choice(ODD_VALUES) if rng.random() < odd / 4 else system, prn, signal,
                                     _value(rng, s[3], odd), _value(rng, az + rng.gauss(0, 0.2), odd, True),
                                     _value(rng, cn0 + rng.gauss(0, 1), odd), True, t)))
        if sats and rng.random() < 0.01:
            sats.append(sats[0])  # the same signal twice
        rng.shuffle(sats)
        mono: Any = t
        if rng.random() < odd:
            mono = rng.choice([int(t), None, "t"])
        yield make_epoch(tuple({**_BLANK, "mono": mono, "wall": 1.7e9 + t, "quality": 1, "sats": tuple(sats),
                                "used_prns": frozenset(), "sentences": frozenset(), "unknown_ids": frozenset(),
                                "date_known": False}.values()))


def state(ac: Any) -> Exact:
    """Everything an ArcCollector holds, type-exact and bit-exact (the arcs it finished included)."""
    tracks = [[k, tr.t.tobytes(), tr.el.tobytes(), tr.az.tobytes(), tr.cn0.tobytes(), tr.last]
              for k, tr in ac.tracks.items()]
    done = [[a.system, a.prn, a.signal, a.lam, a.t.tobytes(), a.el.tobytes(), a.az.tobytes(), a.cn0.tobytes()]
            for a in ac.done]
    return Exact([ac._t, tracks, done])


def _outcome(fn: Any, *args: Any) -> Any:
    try:
        return fn(*args)
    except Exception as exc:  # noqa: BLE001 - the same error from both sides is agreement
        return f"{type(exc).__name__}: {exc}"


class Pair:
    """Two collectors fed the same epochs: c through arc_sample (the Python code when it hands
    back), p through the reference."""

    def __init__(self, core: Any, cfg: Any) -> None:
        from livefix.analysis.arcs import ArcCollector

        self.core, self.c, self.p = core, ArcCollector(cfg, native=False), ArcCollector(cfg, native=False)
        self.done = self.handed = 0

    def _native(self, ep: Epoch) -> Any:
        r = self.core.arc_sample(self.c, ep)
        if r is None:
            self.handed += 1
            return self.c.on_epoch(ep)
        self.done += 1
        return r

    def step(self, ep: Epoch) -> str | None:
        a, b = _outcome(self._native, ep), _outcome(self.p.on_epoch, ep)
        if type(a) is not type(b) or a != b:
            return f"returned {a!r} != {b!r}"
        if len(self.c.done) > 50:  # the owner empties it (ReflectionStats); compared first
            why = self._compare()
            self.c.done.clear()
            self.p.done.clear()
            return why
        return None

    def _compare(self) -> str | None:
        sa, sb = state(self.c), state(self.p)
        return None if sa == sb else f"state: {sa[:1500]} != {sb[:1500]}"


def diff(n: int, seed: int = 1, odd: float = 0.002, every: int = 1) -> tuple[int, int, int, list[str]]:
    """n random epochs through C and Python (a new stream, configuration and Pair every 3,000;
    every second stream with MAX_SAMPLES 60), the states compared after every `every` epochs:
    (epochs, handed back, disagreements, the first few)."""
    from livefix.analysis import arcs

    rng = random.Random(seed)
    bad, examples, handed = 0, [], 0
    cap = arcs.MAX_SAMPLES
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # polyfit on odd arcs warns; both sides alike
            i, stream = 0, 0
            while i < n:
                small = stream % 2 == 1
                arcs.MAX_SAMPLES = 60 if small else cap
                arcs._CORE.configure_arcs(*arcs._CONFIGURE[:-2], arcs.MAX_SAMPLES, arcs.EDGE_DEG)
                pair, gen = Pair(arcs._CORE, config(rng)), epochs(rng, odd)
                for _ in range(min(3000, n - i)):
                    why = pair.step(next(gen))
                    if why is None and i % every == 0:
                        why = pair._compare()
                    if why is not None:
                        bad += 1
                        if len(examples) < 3:
                            examples.append(f"epoch {i}: {why}"[:3000])
                    i += 1
                why = pair._compare()
                if why is not None:
                    bad += 1
                handed += pair.handed
                stream += 1
    finally:
        arcs.MAX_SAMPLES = cap
        arcs._CORE.configure_arcs(*arcs._CONFIGURE)
    return n, handed, bad, examples
