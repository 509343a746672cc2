"""Random epochs for the differential of livefix/analysis/_epochcore.c (satellite counts, trend
buckets, sky sampling) against its Python reference (counts.epoch_counts, Trend.add_values,
SkyMap.on_epoch), for bench/fuzz.py (`make fuzz`, under the sanitizers) and
tests/analysis/test_epochcore_native.py. Deterministic for a seed.

Run alone: python bench/fuzz_epochcore.py [--epochs N] [--seed S] [--core PATH (another build)]
"""

from __future__ import annotations

import argparse
import random
import sys
import time
from collections.abc import Iterator
from pathlib import Path
from types import ModuleType, SimpleNamespace
from typing import Any

from fuzz_exact import Exact, alike, exact, same  # noqa: F401 - Exact, exact: read from here too
from fuzz_twins import load_ext

SYSTEMS = ["G", "G", "R", "E", "C", "J", "S", "I"]
CN0_ODD = [None, 0, 0.0, -0.0, -5, -3.5, 0.25, 45.25, float("nan"), float("inf"), 2**53 + 1, 2**60, True, "40"]
ELEV_ODD = [None, -1, 91, 10**20, -(10**20), 45.0, 0.0, 90.0, -0.5, 90.5, float("nan"), True, "30"]
AZIM_ODD = [None, -1, -359, 360, 725, 359.75, -0.5, -1e-20, 1e300, float("inf"), float("nan"), 10**30, True, "90"]
PRN_ODD = [True, 0, -1, 2**70, "5", 5.0, None]
SYSTEM_ODD = [None, 1, "GPS", "".join(["G"])]  # the last: equal to "G", another object
USED_ODD = [None, 1, 0, 0.0, "x"]
STEPS = [0.1] * 10 + [1.0, 0.5, 0.94, 0.95, 2.0, -3.0, -0.5, 15.0, 700.0]  # stream time between epochs
NUM_ODD = [None, 0, -7, 3, 2**53, 2**60, 10**400, True, float("nan"), float("inf"), -float("inf"), -0.0, 1e308, "1"]
WIDTHS = [(600, 1.0), (600, 1.0), (8, 0.25), (3, 0.1), (5, 1), (4, 0.0)]  # (max_points, width_s)


def _odd(rng: random.Random, p: float, value: object, choices: list) -> object:
    return rng.choice(choices) if rng.random() < p else value


def epochs(rng: random.Random, odd: float = 0.02) -> Iterator[tuple[Any, Any, tuple]]:
    """Endless (epoch, suspend, trend values) triples: a sky of satellites with one or more signals
    that rise, set and lose lock, the same tuple again, empty skies, duplicate satellites, used sets
    from GSA, time that steps back or jumps, fix quality coming and going, and with share `odd`
    values of other types and ranges (None, NaN, inf, negatives, azimuth past 360, bools, huge
    ints, int vs float C/N0, strings, satellites and epochs of other types)."""
    from livefix.state.epoch import Epoch, SatObs

    sky: dict[tuple[str, int], list] = {}
    mono, last, quality = 100.0, (), 1
    while True:
        if rng.random() < 0.08 or len(sky) < 3:
            sky[(rng.choice(SYSTEMS), rng.randrange(1, 40))] = [rng.randrange(-5, 91), rng.randrange(0, 360),
                                                                float(rng.randrange(20, 52))]
        if rng.random() < 0.05 and sky:
            del sky[rng.choice(list(sky))]
        if rng.random() < 0.02:
            sky.clear()  # an empty sky (no GSV)
        if rng.random() < 0.6 and last is not None:
            sats = last  # the same tuple again (the unchanged-sky path)
        else:
            out: list[Any] = []
            for (system, prn), v in sky.items():
                v[2] = min(55.0, max(5.0, v[2] + rng.choice([-1.0, 1.0, 0.5, 0.0])))
                for sig in rng.choice([("",), ("1",), ("1", "7")]):
                    c: object = v[2] - (3 if sig == "7" else 0)
                    c = int(c) if rng.random() < 0.5 else c
                    if rng.random() < 0.1:
                        c = None  # lost lock
                    s = SatObs(_odd(rng, odd, system, SYSTEM_ODD), _odd(rng, odd, prn, PRN_ODD), sig,  # type: ignore[arg-type]
                               _odd(rng, odd, v[0], ELEV_ODD), _odd(rng, odd, v[1], AZIM_ODD),  # type: ignore[arg-type]
                               _odd(rng, odd, c, CN0_ODD), _odd(rng, odd, rng.random() < 0.6, USED_ODD))  # type: ignore[arg-type]
                    out.append(s)
            if rng.random() < 0.05 and out:  # a satellite listed twice with another value
                out.insert(rng.randrange(len(out) + 1), rng.choice(out))
            if rng.random() < odd and out:  # something else than a SatObs
                out[rng.randrange(len(out))] = SimpleNamespace(system="G", prn=1, signal="", elev=30, azim=10,
                                                               cn0=40, used=True)
            if rng.random() < 0.5:
                rng.shuffle(out)
            sats = last = tuple(out)
        used = tuple((s.system, s.prn) for s in sats if rng.random() < 0.3)
        if rng.random() < odd:
            used = rng.choice([(("G", "1"),), (("G", 1, 2),), (["G", 1],), ((1, "G"),), (("G", 2**70),)])
        if rng.random() < 0.03:
            quality = rng.choice([0, 1, 1, 2, 4])
        q: object = _odd(rng, odd, quality, [None, 1.5, True, -1, "1"])
        mono += rng.choice(STEPS)
        m: object = _odd(rng, odd / 4, mono, [float("nan"), float("inf"), int(mono)])
        ep: Any = Epoch(m, 1.7e9 + mono, None, q, sats=sats, used_prns=used)  # type: ignore[arg-type]
        if rng.random() < odd / 4:
            ep = SimpleNamespace(mono=m, quality=q, sats=sats, used_prns=used)
        suspend: object = _odd(rng, odd, rng.random() < 0.05, [None, 0, 1, "x"])
        lat, lon, h = 47.0 + rng.gauss(0, 1e-5), 8.0 + rng.gauss(0, 1e-5), 500.0 + rng.gauss(0, 0.02)
        if rng.random() < 0.1:
            lat = lon = None  # no fix
        vals = tuple(_odd(rng, odd, x, NUM_ODD) for x in (
            rng.uniform(0, 3), rng.uniform(20, 50), rng.choice([rng.randrange(4, 30), float(rng.randrange(4, 30))]),
            lat, lon, rng.choice([h, None, int(h)])))
        yield ep, suspend, vals


def trend_state(t: Any) -> list:
    return [t.t0, t.t0_iso, t.origin, t.width, t.buckets]


def sky_state(s: Any) -> list:
    return [s.tracked, s.untracked, s.cn0, s.seen, s.seen_overflow, s._t]


def _run(fn: Any, *a: Any) -> tuple[object, object]:
    try:
        return fn(*a), None
    except Exception as err:  # noqa: BLE001 - compared by the caller
        return None, (type(err), str(err))


class Trio:
    """The three passes with the C core (c_*) and the reference (p_*), fed the same epochs."""

    def __init__(self, rng: random.Random | None = None) -> None:
        from livefix.analysis.config import AnalysisConfig
        from livefix.analysis.sky import SkyMap
        from livefix.analysis.trend import Trend

        mp, w = rng.choice(WIDTHS) if rng is not None else (600, 1.0)
        self.c_trend, self.p_trend = Trend(mp, w, native=True), Trend(mp, w, native=False)
        self.c_sky, self.p_sky = SkyMap(AnalysisConfig(), native=True), SkyMap(AnalysisConfig(), native=False)
        self.steps = self.counted = self.handed = self.errors = self.samples = 0

    def step(self, ep: Any, suspend: Any, vals: tuple) -> str | None:
        """One epoch through both; None when they agree, else what differs (the whole states,
        type-exact and bit-exact)."""
        from livefix.analysis import counts

        self.steps += 1
        core = self.c_sky._core
        got = core.counts(ep)
        want, err = _run(counts.epoch_counts, ep)
        self.counted += got is not None
        self.handed += got is None
        if got is not None and (err is not None or not alike(got, want, exact)):
            return f"counts: {exact(got)} != {exact(want)} {err}"
        t_before = self.p_sky._t
        for name, c, p, state, args in (
                ("sky", self.c_sky, self.p_sky, sky_state, (ep, suspend)),
                ("trend", self.c_trend, self.p_trend, trend_state, (getattr(ep, "mono", None), "T", *vals))):
            fn = "on_epoch" if name == "sky" else "add_values"
            _, ec = _run(getattr(c, fn), *args)
            _, ep_ = _run(getattr(p, fn), *args)
            self.errors += ep_ is not None
            if ec != ep_:
                return f"{name} error: {ec} != {ep_}"
            if not same(state(c), state(p)):
                return f"{name} state: {exact(state(c))} != {exact(state(p))}"
        if (self.c_sky._seen_of is ep.sats) != (self.p_sky._seen_of is ep.sats):
            return "sky: _seen_of"
        self.samples += self.p_sky._t is not t_before
        return None


def diff(n: int, seed: int = 1, odd: float = 0.02) -> tuple[int, int, list[str]]:
    """n random epochs through C and Python (a new Trio every 1500): (epochs, disagreements, the
    first few)."""
    rng = random.Random(seed)
    gen = epochs(rng, odd)
    bad, examples, trio = 0, [], Trio(rng)
    for i in range(n):
        if i and i % 1500 == 0:
            trio = Trio(rng)
        item = next(gen)
        why = trio.step(*item)
        if why is not None:
            bad += 1
            if len(examples) < 3:
                examples.append(f"epoch {i}: {why} on {item!r}"[:3000])
    return n, bad, examples


def load_epoch_core(path: str) -> ModuleType:
    """Use the build at `path` (e.g. the sanitizer build) as livefix.analysis._epochcore everywhere."""
    import math

    import livefix.analysis
    from livefix import geodesy
    from livefix.analysis import (
        arcs,
        counts,
        fixes,
        geo,
        integrity,
        jumps,
        median,
        position,
        sky,
        track,
        trend,
    )

    mod = load_ext("livefix.analysis._epochcore", path)
    livefix.analysis._epochcore = mod  # type: ignore[attr-defined]
    counts._CORE = counts.load_core("configure_counts", counts.SatObs, counts.Epoch, counts.ALL)
    trend._CORE = counts.load_core("configure_trend", trend._BUCKET_LEN)
    sky._CORE = counts.load_core("configure_sky", sky.SatObs, sky.Epoch, sky._ROW, sky._COL, sky.SAMPLE_S,
                                 sky.MIN_TRACKED, sky.MAX_SEEN)
    geo._CORE = counts.load_core("configure_geo", geodesy.geodetic_to_ecef, geo._frame_at, geodesy.A, geodesy.E2)
    jumps._CORE = counts.load_core("configure_jumps", jumps._Centre, jumps.WARMUP, jumps._EW_A, math.hypot)
    types = position._CONFIGURE[0][:-1] + (getattr(geo._CORE, "Projector", None),)  # this build's projector
    position._CONFIGURE = (types, *position._CONFIGURE[1:])
    position._CORE = counts.load_core("configure_position", *position._CONFIGURE)
    fixes._CORE = fixes.fixes_native.load(fixes.FixStats, fixes._Recent, fixes._POSITION_SENTENCES, fixes.DT_N,
                                          fixes.EW_MIN, fixes._EW_A)
    integrity._CORE = counts.load_core("configure_integrity", integrity.StreamIntegrity, integrity.Epoch,
                                       integrity.deque, integrity.WINDOW, integrity.GAP_FACTOR)
    median._CORE = counts.load_core("configure_median", median.MedianPosition, median._FixMedians,
                                    median.BinnedMedian, median.Epoch, median.FIX_NAMES, "none", median.BATCH,
                                    median.MAX_BINS)
    track._CORE = counts.load_core("configure_track", *track._CONFIGURE)
    arcs._CORE = counts.load_core("configure_arcs", *arcs._CONFIGURE)
    if not (counts._CORE is trend._CORE is sky._CORE is geo._CORE is jumps._CORE is position._CORE is fixes._CORE
            is integrity._CORE is median._CORE is track._CORE is arcs._CORE is mod):
        raise RuntimeError(f"{path}: not a usable build of livefix.analysis._epochcore")
    return mod


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--epochs", type=int, default=20000)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--odd", type=float, default=0.02)
    ap.add_argument("--core", help="a build of _epochcore to use (default: the one in livefix/analysis)")
    a = ap.parse_args()
    sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
    if a.core:
        load_epoch_core(a.core)
    t0 = time.perf_counter()
    n, bad, examples = diff(a.epochs, a.seed, a.odd)
    for e in examples:
        print("epochcore disagreement:", e, file=sys.stderr)
    print(f"RESULT | epochcore fuzz epochs | {n:,} in {time.perf_counter() - t0:.0f} s | info | met")
    print(f"RESULT | epochcore fuzz disagreements | {bad} | 0 | {'met' if bad == 0 else 'NOT met'}")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
