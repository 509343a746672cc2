"""Random inputs for the differentials of the C twins against their Python references, used by
bench/fuzz.py (`make fuzz`, under the sanitizers) and by the twins' tests: GSV parts for the set
assembler (livefix/state/_gsvcore.c vs livefix/state/gsv.py) and epochs for the SignalStats
satellite loops (livefix/analysis/_sigcore.c vs livefix/analysis/signal.py). Deterministic for a seed.
"""

from __future__ import annotations

import importlib.util
import random
import sys
from collections.abc import Iterator, Mapping
from types import MappingProxyType, ModuleType
from typing import Any


def load_ext(name: str, path: str) -> ModuleType:
    """The extension module built at `path` (e.g. the sanitizer build), imported as `name` (and
    registered in sys.modules): the fuzzers' way to put a build in place of the installed one."""
    spec = importlib.util.spec_from_file_location(name, path)
    assert spec is not None and spec.loader is not None
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    sys.modules[name] = mod
    return mod

# ---- GSV parts for the set assembler differential (livefix/state/_gsvcore.c vs gsv.GsvAssembler) ----
GSV_TALKERS = ["GP", "GP", "GL", "GA", "GB", "BD", "GQ", "GI", "GN", "GN", "XX", ""]
GSV_SIGNALS = ["", "", "", "1", "1", "7", "8", 1, None]  # as the decoder gives them, and odd ones
GSV_ODD = [0, -1, 100, 10**30, "2", 2.0, True, None, float("nan"), [2]]  # part numbers/totals that break
GSV_SVIDS = [*range(1, 100), *range(120, 159), *range(193, 264), *range(301, 337), *range(401, 464), 0, 500]
_NONE = object()


class _Fields(Mapping):
    """A mapping that is neither a dict nor a read-only view: read through its own get()."""

    def __init__(self, d: dict) -> None:
        self._d = d

    def __getitem__(self, k: str) -> object:
        return self._d[k]

    def __iter__(self) -> Iterator[str]:
        return iter(self._d)

    def __len__(self) -> int:
        return len(self._d)


class _Dict(dict):
    pass


def gsv_parts(rng: random.Random) -> Iterator[tuple[Any, Any]]:
    """Endless (talker, fields) for GsvAssembler.add(): skies of a few groups that change slowly,
    sent as sets with lost, repeated, swapped and stray parts, sets that change talker, broken part
    numbers and totals, floods of unfinished sets (> MAX_GROUPS), odd block values, as read-only
    views (the same object again for the same content, like the decoder's line cache), dicts and
    other mappings, and now and then an input that must raise (the same error on both)."""
    skies: dict[tuple, list] = {}
    shared: dict[tuple, object] = {}

    def sat() -> list:
        return [rng.choice(GSV_SVIDS) if rng.random() < 0.97 else rng.choice([None, "", "12", 3.0]),
                rng.choice([rng.randrange(91), rng.randrange(91), None, ""]),
                rng.choice([rng.randrange(360), rng.randrange(360), None]),
                rng.choice([rng.randrange(20, 52), rng.randrange(20, 52), None, "", 44.5, 45.0])]

    def fields(num: object, k: object, total: object, blocks: list, sid: object) -> dict:
        d: dict[str, object] = {"numMsg": num, "msgNum": k, "numSV": total}
        for i, b in enumerate(blocks, 1):
            d.update(zip((f"svid_{i:02d}", f"elv_{i:02d}", f"az_{i:02d}", f"cno_{i:02d}"), b, strict=True))
        if sid is not _NONE:
            d["signalID"] = sid
        return d

    def wrap(talker: str, d: dict) -> object:
        key = (talker, repr(list(d.items())))
        if key in shared and rng.random() < 0.85:
            return shared[key]
        k = rng.random()
        if k < 0.75:
            f: object = MappingProxyType(d if k < 0.72 else _Fields(d))  # a view of another mapping too
            if len(shared) > 20000:
                shared.clear()
            shared[key] = f
            return f
        return d if k < 0.9 else _Dict(d) if k < 0.95 else _Fields(d)

    def one_set(talker: str, sid: object) -> list[list]:
        sky = skies.setdefault((talker, sid), [sat() for _ in range(rng.randrange(0, 14))])
        if rng.random() < 0.3 and sky:  # a value changes, a satellite rises or sets
            sky[rng.randrange(len(sky))][3] = rng.randrange(20, 52)
        if rng.random() < 0.05:
            if rng.random() < 0.5 or not sky:
                sky.append(sat())
            else:
                sky.pop(rng.randrange(len(sky)))
        num = max(1, -(-len(sky) // 4))
        total: object = len(sky) if rng.random() < 0.95 else rng.choice(GSV_ODD[:3] + [len(sky) + 1])
        return [[talker, num, k + 1, total, sky[4 * k:4 * k + 4], sid] for k in range(num)]

    groups = [(t, s) for t in GSV_TALKERS[:9] for s in GSV_SIGNALS[:5]]
    while True:
        if rng.random() < 0.002:  # a flood of groups: unfinished sets, or one-part sets (> MAX_GROUPS)
            num = rng.choice([1, 3])
            for i in range(rng.randrange(60, 80)):
                yield "Q" + chr(65 + i % 26), MappingProxyType(fields(num, 1, 9, [sat()], str(i)))
            continue
        if rng.random() < 0.001:  # inputs that raise
            yield rng.choice([("GP", 5), ("GP", fields(1, 1, 1, [[[7], 1, 2, 3]], ""))])
            continue
        g = rng.choice(groups) if rng.random() < 0.95 else (rng.choice(GSV_TALKERS), rng.choice(GSV_SIGNALS))
        parts = one_set(*g)
        r = rng.random()
        if r < 0.08 and len(parts) > 1:
            del parts[rng.randrange(len(parts))]  # a lost part
        elif r < 0.14:
            i = rng.randrange(len(parts))
            parts.insert(rng.choice([i + 1, len(parts)]), list(parts[i]))  # a repeated part
        elif r < 0.18 and len(parts) > 1:
            i = rng.randrange(len(parts) - 1)
            parts[i], parts[i + 1] = parts[i + 1], parts[i]
        elif r < 0.26:
            for p in parts[1:]:  # one set over several talkers
                p[0] = rng.choice(GSV_TALKERS)
        elif r < 0.31:
            p = rng.choice(parts)
            p[rng.choice([1, 2, 3])] = rng.choice(GSV_ODD)  # broken numbers or total
        elif r < 0.34:
            rng.choice(parts)[rng.choice([1, 2, 3, 5])] = _NONE  # a missing key
        elif r < 0.40:  # interleaved with another group's set
            other = one_set(*rng.choice(groups))
            merged = []
            while parts or other:
                src = parts if parts and (not other or rng.random() < 0.5) else other
                merged.append(src.pop(0))
            parts = merged
        for talker, num, k, total, blocks, sid in parts:
            d = fields(num, k, total, blocks, sid)
            for name, v in (("numMsg", num), ("msgNum", k), ("numSV", total)):
                if v is _NONE:
                    del d[name]
            yield talker, wrap(talker, d)


def gsv_step(c: Any, p: Any, talker: Any, f: Any, last: dict) -> bool:
    """One add() on the C twin (c) and the reference (p): results and counters type-exact (repr),
    raised errors alike, and a returned list the previous one of its group on both or on neither."""
    out = []
    for a in (c, p):
        try:
            out.append(a.add(talker, f))
        except Exception as err:  # noqa: BLE001 - the same error on both is agreement
            out.append(err)
    rc, rp = out
    if isinstance(rc, Exception) or isinstance(rp, Exception):
        return type(rc) is type(rp) and str(rc) == str(rp)
    if repr(rc) != repr(rp) or (c.broken, c.unmapped, repr(c.last_unknown)) != (
            p.broken, p.unmapped, repr(p.last_unknown)):
        return False
    if rc[1] is None:
        return True
    prev = last.get(rp[0])
    last[rp[0]] = (rc[1], rp[1])
    return prev is None or (prev[0] is rc[1]) == (prev[1] is rp[1])


def gsv_diff(adds: int, seed: int = 1) -> tuple[int, int, list[str]]:
    """(adds, disagreements, first examples) of the C twin against the reference."""
    from livefix.state.gsv import make_assembler

    rng = random.Random(seed)
    c, p = make_assembler(native=True), make_assembler(native=False)
    last: dict = {}
    bad, examples = 0, []
    for _, (talker, f) in zip(range(adds), gsv_parts(rng), strict=False):
        if not gsv_step(c, p, talker, f, last):
            bad += 1
            if len(examples) < 5:
                examples.append(f"{talker!r} {dict(f) if hasattr(f, 'items') else f!r}"[:300])
    return adds, bad, examples


# ---- epochs for the SignalStats satellite loops (livefix/analysis/_sigcore.c vs signal.py) ----
SIG_SYSTEMS = ["G", "G", "R", "E", "C", "J", "S"]
SIG_CN0_ODD = [None, 0, 0.0, -0.0, -5, -3.5, 0.25, 45.25, float("nan"), float("inf"), 2**60, True]
SIG_ELEV_ODD = [None, -1, -90, 91, 180, 10**20, 45.0, 0.0, 90.0, -0.5, 90.5, float("nan"), True]
SIG_AZIM_ODD = [None, -1, -359, 360, 720, 359.75, -0.0, -1e-20, 1e300, float("inf"), float("nan"), 10**30, 12.5]
SIG_STEPS = [1.0] * 12 + [0.1, 0.5, 0.94, 0.95, 2.0, -3.0, -0.5, 15.0, 70.0]  # stream time between epochs
# SignalStats fields compared after each step (repr: 1 and 1.0 differ, dicts show their order)
SIG_STATE = ("n", "sum", "top4_sum", "top4_n", "by_sys", "bands", "cs", "cells", "base", "active", "events",
             "events_total", "_if_t", "_cur_sum", "cur_mean", "cur_top4")


def sig_epochs(rng: random.Random, odd: float = 0.02) -> Iterator[Any]:
    """Endless epochs for SignalStats: a sky of signals that rise, set, lose lock, come back or are
    listed twice, with broadband C/N0 drops (interference episodes), time that steps back or jumps,
    the same satellite tuple again (the unchanged-sky path), systems out of order, and with share
    `odd` values of other types and ranges (cn0 0/negative/float/nan, elevation negative/above 90/float, azimuth negative/
    past 360/float/non-finite, huge ints, bools) on which the Python loops may raise."""
    from dataclasses import replace

    from livefix.state.epoch import Epoch, SatObs

    sky: dict[tuple, list] = {}
    mono, drop_left, last = 100.0, 0, ()
    while True:
        if rng.random() < 0.05 or not sky:  # a signal appears
            key = (rng.choice(SIG_SYSTEMS), rng.randrange(1, 40), rng.choice(["", "", "1", "7"]))
            sky[key] = [rng.randrange(-5, 91), rng.randrange(0, 360), float(rng.randrange(25, 52))]
        if rng.random() < 0.04 and len(sky) > 1:  # one sets
            del sky[rng.choice(list(sky))]
        if drop_left == 0 and rng.random() < 0.01:
            drop_left = rng.randrange(5, 60)
        drop_left = max(0, drop_left - 1)
        if rng.random() < 0.1 and last:
            sats = last  # the same tuple again
        else:
            out = []
            for (system, prn, sig), v in sky.items():
                if rng.random() < 0.2:
                    v[2] = min(55.0, max(10.0, v[2] + rng.choice([-1.0, 1.0, 0.5])))
                c: object = v[2] - (12 if drop_left else 0)
                c = int(c) if rng.random() < 0.5 else c
                if rng.random() < 0.05:
                    c = None  # lost lock
                el: object = v[0]
                az: object = v[1]
                if rng.random() < odd:
                    c = rng.choice(SIG_CN0_ODD)
                if rng.random() < odd:
                    el = rng.choice(SIG_ELEV_ODD)
                if rng.random() < odd:
                    az = rng.choice(SIG_AZIM_ODD)
                out.append(SatObs(system, prn, sig, el, az, c, rng.random() < 0.5))  # type: ignore[arg-type]
            if rng.random() < 0.03 and out:  # a signal listed twice (another value)
                out.append(replace(rng.choice(out), cn0=rng.choice([None, 30, 41.5])))
            if rng.random() < 0.9:
                out.sort(key=lambda x: x.system)
            sats = last = tuple(out)
        mono += rng.choice(SIG_STEPS)
        yield Epoch(mono, 1.7e9 + mono, rng.choice([None, 1.7e9 + mono]), 1, sats=sats)


def sig_state(s: Any) -> str:
    return repr([getattr(s, a) for a in SIG_STATE])


def sig_step(c: Any, p: Any, ep: Any, snapshot: bool = False) -> bool:
    """One epoch on SignalStats with the C loops (c) and the reference (p): the same error or none,
    then the same state (type-exact) and, with snapshot, the same snapshot."""
    errs = []
    for a in (c, p):
        try:
            a.on_epoch(ep)
            errs.append(None)
        except Exception as err:  # noqa: BLE001 - the same error on both is agreement
            errs.append((type(err), str(err)))
    if errs[0] != errs[1] or sig_state(c) != sig_state(p):
        return False
    if snapshot:
        try:
            sc = repr(c.snapshot())
        except Exception as err:  # noqa: BLE001
            sc = repr((type(err), str(err)))
        try:
            sp = repr(p.snapshot())
        except Exception as err:  # noqa: BLE001
            sp = repr((type(err), str(err)))
        return sc == sp
    return True


def sig_pair(rng: random.Random) -> tuple[Any, Any, list, list]:
    """SignalStats with the C loops and the reference, on one random config; their emitted events."""
    from livefix.analysis.config import AnalysisConfig
    from livefix.analysis.signal import SignalStats

    cfg = AnalysisConfig(elev_mask_deg=rng.choice([5.0, 5.0, 0, 10, -5, 15.5, 90]),
                         interference_drop_db=rng.choice([6.0, 6.0, 6, 3.5, 10.0]))
    ec: list = []
    ep: list = []
    return SignalStats(cfg, ec.append, native=True), SignalStats(cfg, ep.append, native=False), ec, ep


def sig_diff(epochs: int, seed: int = 1) -> tuple[int, int, int, list[str]]:
    """(epochs, loop calls, disagreements, first examples) of the C loops against the reference:
    a new pair and config every 2,000 epochs, state compared after every epoch, snapshots and
    emitted events every 500."""
    rng = random.Random(seed)
    gen = sig_epochs(rng)
    bad, calls, examples = 0, 0, []
    c = p = None
    ec: list = []
    ep_: list = []
    for n in range(epochs):
        if n % 2000 == 0:
            c, p, ec, ep_ = sig_pair(rng)
        ep = next(gen)
        t0 = c._if_t
        ok = sig_step(c, p, ep, snapshot=n % 500 == 499)
        calls += 2 * (c._if_t != t0)
        if ok and n % 500 == 499:
            ok = repr(ec) == repr(ep_)
        if not ok:
            bad += 1
            if len(examples) < 5:
                examples.append(f"epoch {n}: {ep!r}"[:300])
            c, p, ec, ep_ = sig_pair(rng)  # start over from equal states
    return epochs, calls, bad, examples
