"""Random epoch streams for the differential of the common case of PositionStats.on_epoch in C
(livefix/analysis/_epochcore_pos.c) against its Python reference (livefix/analysis/position.py), for
bench/fuzz.py (`make fuzz`, under the sanitizers) and tests/analysis/test_position_native.py.
Deterministic for a seed.
"""

from __future__ import annotations

import json
import math
import random
from collections.abc import Iterator
from typing import Any

from fuzz_epochcore import Exact
from fuzz_jumps import state_value as jumps_state

LAT0, LON0, H0 = 47.25, 8.5, 520.0  # an arbitrary site
M_PER_DEG = 111_320.0
NOISE = {1: 2.0, 2: 0.6, 4: 0.01, 5: 0.2}  # GGA quality -> metres of scatter
SIGMA_ODD = [None, 0, 2, math.nan, math.inf, -math.inf, 1e308, "", "1.5", True, -0.0]
NUM_ODD = [None, 0, 3, 2**53 + 1, 10**400, True, math.nan, math.inf, -math.inf, "1", ""]


def epochs(rng: random.Random, odd: float = 0.02) -> Iterator[tuple[Any, ...]]:
    """Endless (epoch, pre_step, reference) items: a receiver that mostly stands still with noise
    per fix type, moves and stops (with or without a speed over ground), jumps and comes back, loses
    its fix, its height (then MSL only, or none) and its time; reference: None, or (lat, lon, h) set
    by the user before this epoch. pre_step: the clock is stepped first (as FixStats does in the
    Analyzer). With share `odd`, one field takes a value of another type or range."""
    from livefix.state.epoch import Epoch

    mono, utc = 100.0, 1.8e9
    e = n = 0.0
    q, vel, away, msl_only = 4, None, None, False
    while True:
        mono += rng.choice([0.1] * 30 + [0.0, 1.0, 5.0, -0.2])
        utc = None if rng.random() < 0.03 else mono + 1.8e9 + rng.choice([0.0] * 50 + [-30.0, 3.0])
        if rng.random() < 0.01:
            q = rng.choice([1, 2, 4, 4, 5, 0, 6])
        if vel is None and rng.random() < 0.004:
            v = rng.choice([1.5, 4.0, 15.0, 30.0])
            a = rng.uniform(0, 2 * math.pi)
            vel = [v * math.cos(a), v * math.sin(a), rng.randint(30, 400)]
        if vel is not None:
            e, n = e + vel[0] * 0.1, n + vel[1] * 0.1
            vel[2] -= 1
            if vel[2] <= 0:
                vel = None
        if away is None and rng.random() < 0.005:
            away = [rng.gauss(0, 5.0), rng.gauss(0, 5.0), rng.randint(5, 200)]
        elif away is not None:
            away[2] -= 1
            if away[2] <= 0:
                away = None
        if rng.random() < 0.003:
            msl_only = not msl_only
        s = NOISE.get(q, 3.0)
        de, dn = e + rng.gauss(0, s), n + rng.gauss(0, s)
        if away is not None:
            de, dn = de + away[0], dn + away[1]
        lat = LAT0 + dn / M_PER_DEG
        lon = LON0 + de / (M_PER_DEG * math.cos(math.radians(LAT0)))
        hv = H0 + rng.gauss(0, 2 * s)
        h: Any = None if msl_only or rng.random() < 0.02 else hv
        alt: Any = hv - 48.0 if rng.random() < 0.9 else None
        speed: Any = None
        if rng.random() < 0.7:
            speed = math.hypot(vel[0], vel[1]) + abs(rng.gauss(0, 0.05)) if vel else abs(rng.gauss(0, 0.05))
        f = {"mono": mono, "wall": mono + 1.7e9, "utc": utc, "quality": q if rng.random() > 0.02 else 0,
             "lat": lat, "lon": lon, "h": h, "alt_msl": alt, "hdop": rng.choice([0.8, 1.2, None]),
             "sigma_lat": s, "sigma_lon": s * 1.1, "sigma_alt": rng.choice([2 * s, None]), "speed_mps": speed}
        if rng.random() < odd:
            k = rng.choice(["quality", "lat", "lon", "h", "alt_msl", "speed_mps", "hdop", "sigma_lat",
                            "sigma_lon", "sigma_alt"])
            f[k] = rng.choice(SIGMA_ODD if k.startswith(("sigma", "hdop")) else NUM_ODD)
        ref = None
        if rng.random() < 0.0008:
            ref = (LAT0 + rng.gauss(0, 1e-5), LON0 + rng.gauss(0, 1e-5), rng.choice([H0, 0, H0 - 48.0]))
        yield Epoch(**f), rng.random() < 0.95, ref


def config(rng: random.Random) -> Any:
    """The default config, or one with a user reference, another convergence radius or motion rule."""
    from livefix.analysis.config import AnalysisConfig

    r = rng.random()
    if r < 0.5:
        return AnalysisConfig()
    if r < 0.7:
        return AnalysisConfig(ref=(LAT0, LON0, H0))
    return AnalysisConfig(motion_spread_m=rng.choice([10.0, 2, 0.5]), motion_hold_s=rng.choice([10.0, 1, 0.0]),
                          motion_window_s=rng.choice([20.0, 4, 2.5]), converge_hold_s=rng.choice([60.0, 2]))


def state(ps: Any) -> Exact:
    """The whole per-epoch state of a PositionStats and its stages, type-exact and bit-exact."""
    m, c, clk = ps.motion, ps.conv, ps.clock
    mo = [getattr(m, k) for k in type(m).__slots__ if k not in ("cfg", "_full", "_half")]
    tracks = {k: [t._pend, t._mom.n, t._mom.nu, t._mom.m, t._mom.c, list(t._hist_r.bins.items()), t._hist_r.n,
                  t._hist_v.n, t._hist_v.zeros, t._blocks._acc, t._blocks._k, t._blocks._ku, t._allan._acc,
                  t._allan._k, t._allan.factor, t._ring.total, len(t._ring._pend)]
              for k, t in ps.tracks.items()}  # the accumulators a full batch settles (in C: _epochcore_track.c)
    head = c.head[: c._done].tobytes().hex() if c._done < 600 else c.head[c._done - 300: c._done].tobytes().hex()
    return Exact([ps._epochs, ps.segments, ps._best_n, ps._was_moving, ps._user_ref, ps._user_source, ps.ref,
                  ps.ref_source, ps.ref_enu, ps.ref_fix, ps._last, ps._site_en, ps._fixed_now, ps.no_height,
                  ps.h_datum, ps.other_datum, ps._auto, [clk.t, clk.abs_time, clk.reset],
                  mo, list(m._full)[-5:], list(m._half)[:5], len(m._full), len(m._half),
                  [c.n, c._pend, c._done, c.first_fix, c.trk_h.start, c.trk_h.done, c.trk_v.start, c.trk_v.done],
                  tracks, head, jumps_state(ps.jumps)])


def _run(fn: Any, *a: Any) -> tuple[object, object]:
    try:
        return fn(*a), None
    except Exception as err:  # noqa: BLE001 - compared by the caller
        return None, (type(err), str(err))


class Counted:
    """A C core whose position_epoch counts the epochs it took (True) and handed back (False)."""

    def __init__(self, core: Any) -> None:
        self.core, self.done, self.handed = core, 0, 0

    def position_epoch(self, ps: Any, ep: Any) -> bool:
        r = self.core.position_epoch(ps, ep)
        self.done += r is True
        self.handed += r is False
        return r  # type: ignore[no-any-return]


class Pair:
    """PositionStats with the C step (c) and the reference (p), fed the same epochs."""

    def __init__(self, cfg: Any = None) -> None:
        from livefix.analysis.config import AnalysisConfig
        from livefix.analysis.geo import EcefMemo
        from livefix.analysis.position import PositionStats

        cfg = cfg or AnalysisConfig()
        self.events: tuple[list[Any], list[Any]] = ([], [])
        # the C step takes the C projector only; the reference projects in Python (their own twins agree)
        self.c = PositionStats(cfg, self.events[0].append, EcefMemo(native=True), native=True)
        self.p = PositionStats(cfg, self.events[1].append, EcefMemo(native=False), native=False)
        self.core = self.c._core = Counted(self.c._core)
        self.steps = self.errors = 0

    def step(self, item: tuple[Any, ...], snapshot: bool = False) -> str | None:
        """One epoch through both; None when they agree (error, whole state, events, and the snapshot
        when asked), else what differs."""
        ep, pre, ref = item
        self.steps += 1
        out = []
        for ps in (self.c, self.p):
            if ref is not None:
                ps.set_reference(*ref)
            if pre:
                _run(ps.clock.step, ep)
            out.append(_run(ps.on_epoch, ep))
        self.errors += out[1][1] is not None
        if out[0] != out[1]:
            return f"on_epoch: {out[0]} != {out[1]}"
        a, b = state(self.c), state(self.p)
        if a != b:
            return f"state: {a[:1500]} != {b[:1500]}"
        if Exact(self.events[0]) != Exact(self.events[1]):
            return "events differ"
        if snapshot:
            sa, sb = (json.dumps(_run(ps.snapshot)[0], sort_keys=True, default=repr) for ps in (self.c, self.p))
            if sa != sb:
                return "snapshot differs"
        return None


def diff(n: int, seed: int = 1, odd: float = 0.02) -> tuple[int, int, list[str]]:
    """n random epochs through C and Python (a new Pair and config every 4000): (epochs,
    disagreements, the first few)."""
    rng = random.Random(seed)
    gen = epochs(rng, odd)
    bad, examples, pair = 0, [], Pair(config(rng))
    for i in range(n):
        if i and i % 4000 == 0:
            pair = Pair(config(rng))
        item = next(gen)
        why = pair.step(item, snapshot=i % 500 == 499)
        if why is not None:
            bad += 1
            if len(examples) < 3:
                examples.append(f"epoch {i}: {why} on {item!r}"[:3000])
    return n, bad, examples
