"""Random epoch streams for the differential of FixStats.on_epoch's C step
(livefix/analysis/_epochcore_fix.c) against its Python reference (livefix/analysis/fixes.py), for
bench/fuzz.py (`make fuzz`, under the sanitizers) and tests/analysis/test_fix_native.py.
Deterministic for a seed.

A stream is a list-free iterator of items: ("epoch", Epoch), ("event", Event) or ("gap", mono) (a
data gap noted by the integrity stage). It has runs of fixed epochs of one type with noise,
changes of fix type, jumps, outages, epochs that stop coming, data gaps, link events, commanded and
self restarts (the receiver's UTC going back, its date lost), time steps back and forward, epochs
without a time or a position sentence, and with share `odd` values of other types and ranges
(None, NaN, inf, huge values, ints, strs, empty tuples) in one field.
"""

from __future__ import annotations

import math
import random
from collections.abc import Iterator
from typing import Any

from fuzz_epochcore import Exact, exact

QUALITY = [4] * 6 + [5, 5, 2, 1, 0, 6, 9]
NOISE = {0: 0.0, 1: 3.0, 2: 0.8, 4: 0.01, 5: 0.3, 6: 5.0, 9: 1.0}
POS = [("GGA", "RMC", "GSA", "GSV"), ("GGA", "RMC", "GSA", "GSV"), ("RMC",), ("GNS", "GSV"), ()]
NO_POS = [("GSA", "GSV"), ("VTG",), ("GSV", "ZDA")]
ODD = [None, 0, 1, -3, 2**53 + 1, 10**400, True, math.nan, math.inf, -math.inf, -0.0, 1e308, "1", (), ("GGA", 1)]
FIELDS = ["mono", "wall", "utc", "quality", "lat", "lon", "h", "sentences"]
LINK = ["stalled", "lost", "reconnecting", "connected"]


def stream(rng: random.Random, odd: float = 0.02, rate: float = 10.0) -> Iterator[tuple[str, Any]]:
    """Endless items of one session (see the module notes); `rate` epochs per second nominal."""
    from livefix.state.epoch import Epoch, Event

    iv = 1.0 / rate
    mono, utc, q = 100.0, 1.7e9 + rng.random() * 1e6, rng.choice(QUALITY)
    lat0, lon0, h0 = rng.uniform(-80, 80), rng.uniform(-180, 360), rng.uniform(-50, 3000)
    jump = [0.0, 0.0]
    timed, down = True, 0  # down: epochs left without a fix after a restart command
    while True:
        r = rng.random()
        step = iv
        if r < 0.01:
            step = iv * rng.choice([2.5, 4.0, 30.0, 400.0])  # epochs stop coming, or a long hole
        elif r < 0.015:
            step = 0.0
        mono += step + rng.gauss(0, iv * 0.02)
        utc += step
        if rng.random() < 0.004:
            utc -= rng.choice([1.0, 20.0, 3600.0, 1e6])  # jitter back, a restart, a lost date
        if rng.random() < 0.003:
            utc += rng.choice([0.5, 100.0, 90000.0])
        if rng.random() < 0.01:
            timed = not timed
        if rng.random() < 0.02:
            q = rng.choice(QUALITY)
        if rng.random() < 0.01:
            jump = [rng.gauss(0, 20), rng.gauss(0, 20)] if rng.random() < 0.5 else [0.0, 0.0]
        r = rng.random()
        if r < 0.006:
            yield "event", Event(mono=mono, wall=mono, kind="receiver_restart", text="")
            down = rng.choice([0, 3, 40, 200])  # most receivers drop the fix, some not at once
        elif r < 0.009:
            yield "event", Event(mono=mono, wall=mono, kind="receiver_date_invalid", text="")
        elif r < 0.015:
            yield "event", Event(mono=mono, wall=mono, kind="link", text="", data={"state": rng.choice(LINK)})
        elif r < 0.02:
            yield "gap", mono + rng.choice([-0.05, 0.0, 0.05])
        s = NOISE.get(q, 1.0) * 1e-5
        f: dict[str, Any] = {
            "mono": mono, "wall": 1.7e9 + mono, "utc": utc if timed else None, "quality": q,
            "lat": lat0 + jump[0] * 1e-5 + rng.gauss(0, s), "lon": lon0 + jump[1] * 1e-5 + rng.gauss(0, s),
            "h": h0 + rng.gauss(0, 1.0), "sentences": rng.choice(NO_POS if rng.random() < 0.02 else POS)}
        if down:
            down -= 1
            f["quality"] = 0
        if f["quality"] == 0:
            f["lat"] = f["lon"] = f["h"] = None
        if rng.random() < 0.02:
            f["h"] = rng.choice([None, 0.0, math.nan])
        if rng.random() < odd:
            f[rng.choice(FIELDS)] = rng.choice(ODD)
        yield "epoch", Epoch(**f)


def state(fs: Any) -> Exact:
    """The whole state of a FixStats, type-exact and bit-exact (its Timeline, TimeBook and the recent
    scatter per fix type spelt out; the projector by its frame)."""
    from livefix.analysis.streaming import Timeline

    out: dict[str, Any] = {}
    for k, v in vars(fs).items():
        if k in ("_fast", "emit", "_valid", "_ecef", "cfg"):
            continue
        if k == "clock":
            v = [getattr(v, a) for a in Timeline.__slots__ if a != "_ep"] + [v._ep is None]
        elif k == "book":
            v = [v.time, v.prev_t, v.prev, v._marks]
        elif k == "_recent" and type(v) is dict:
            v = {f: [r.n, r.me, r.mn, r.ve, r.vn] for f, r in v.items()}
        elif k == "_proj":
            v = None if v is None else v.frame is fs._frame
        elif k == "_frame":
            v = None if v is None else [v.lat, v.lon, v.h, v._o, v._r]
        elif type(v).__name__ == "deque":
            v = list(v)
        out[k] = v
    return Exact(out)


def events_text(evs: list[Any]) -> Exact:
    return Exact([[e.mono, e.wall, e.kind, e.text, e.utc, e.data] for e in evs])


def _run(fn: Any, *a: Any) -> object:
    try:
        fn(*a)
    except Exception as err:  # noqa: BLE001 - compared by the caller
        return (type(err), str(err))
    return None


class Pair:
    """FixStats with the C step (c) and the reference (p), each with its own EcefMemo and fix_memo as
    the Analyzer wires them, fed the same items."""

    def __init__(self, cfg: Any = None) -> None:
        from livefix.analysis.config import AnalysisConfig
        from livefix.analysis.fixes import FixStats
        from livefix.analysis.geo import EcefMemo
        from livefix.analysis.streaming import fix_memo

        cfg = cfg or AnalysisConfig()
        self.ev_c: list[Any] = []
        self.ev_p: list[Any] = []
        self.c = FixStats(cfg, self.ev_c.append, EcefMemo(), fix_memo(), native=True)
        self.p = FixStats(cfg, self.ev_p.append, EcefMemo(False), fix_memo(), native=False)
        fast = self.c._fast
        self.steps = self.fast = 0

        def counted(fs: Any, ep: Any) -> bool:
            done = fast(fs, ep)
            self.fast += done is True
            return done  # type: ignore[no-any-return]

        self.c._fast = counted

    def step(self, item: tuple[str, Any]) -> str | None:
        """One item through both; None when they agree (error, events, whole state), else what differs."""
        self.steps += 1
        kind, x = item
        if kind == "epoch":
            got, want = _run(self.c.on_epoch, x), _run(self.p.on_epoch, x)
        elif kind == "event":
            got, want = _run(self.c.on_event, x), _run(self.p.on_event, x)
        else:
            got, want = _run(self.c.note_data_gap, x), _run(self.p.note_data_gap, x)
        if got != want:
            return f"error: {got} != {want}"
        if kind == "epoch" and self.c.clock._ep is not self.p.clock._ep:
            return "clock._ep"
        if events_text(self.ev_c) != events_text(self.ev_p):
            return f"events: {events_text(self.ev_c)[-500:]} != {events_text(self.ev_p)[-500:]}"
        sc, sp = state(self.c), state(self.p)
        if sc != sp:
            return f"state: {sc} != {sp}"
        return None

    def snapshots(self) -> tuple[str, str]:
        return exact(_run_snap(self.c)), exact(_run_snap(self.p))


def _run_snap(fs: Any) -> object:
    try:
        return fs.snapshot()
    except Exception as err:  # noqa: BLE001 - compared by the caller
        return (type(err), str(err))


def config(rng: random.Random) -> Any:
    """The default config, or one with other jump and outage limits (ints too)."""
    from livefix.analysis.config import AnalysisConfig

    if rng.random() < 0.5:
        return AnalysisConfig()
    return AnalysisConfig(jump_sigma=rng.choice([8.0, 3, 0.5]), jump_m=rng.choice([5.0, 1, 0.02]),
                          outage_s=rng.choice([1.0, 0, 5.5]))


def diff(n: int, seed: int = 1, odd: float = 0.02) -> tuple[int, int, list[str]]:
    """n random items through C and Python (a new Pair, config and session every 3000): (items,
    disagreements, the first few)."""
    rng = random.Random(seed)
    bad, examples = 0, []
    pair, gen = Pair(config(rng)), stream(rng, odd)
    for i in range(n):
        if i and i % 3000 == 0:
            pair, gen = Pair(config(rng)), stream(rng, odd, rng.choice([1.0, 5.0, 10.0, 20.0]))
        item = next(gen)
        why = pair.step(item)
        if why is None and i % 500 == 499:
            a, b = pair.snapshots()
            why = None if a == b else f"snapshot: {a} != {b}"
        if why is not None:
            bad += 1
            if len(examples) < 3:
                examples.append(f"item {i}: {why} on {item!r}"[:3000])
    return n, bad, examples
