"""Random calls for the differential of the sky store's C twin (livefix/state/_skycore.c) against the
reference (livefix/state/sky.py Sky), used by bench/fuzz.py (`make fuzz`, under the sanitizers) and
by tests/state/test_sky_native.py. Deterministic for a seed.

sky_calls() gives replace / expire / in_view / obs / seen calls in epochs, now and then a fresh pair
of skies with other settings; SkyTwin.call() makes one call on both and compares results
(type-exact, floats by repr), raised errors, the stores and the identity pattern of the returned
objects; sky_diff() runs N calls and counts disagreements.
"""

from __future__ import annotations

import random
from collections.abc import Iterator
from typing import Any

from fuzz_exact import alike
from fuzz_twins import load_ext

NAN = float("nan")
# group keys as the assembler gives them (talker, signal ID), and odd ones: a 2-letter str unpacks,
# other lengths and non-iterables raise where the rows are merged, a list cannot be a key at all
SKY_GROUPS: list[Any] = [("GP", ""), ("GL", ""), ("GA", ""), ("GB", ""), ("GP", "1"), ("GP", "8"), ("GA", "7"),
                         ("GN", ""), ("GQ", "1"), ("GI", "")]
SKY_ODD_GROUPS: list[Any] = [("GP", 1), ("GP", None), "GP", ("GP",), ("GP", "", "x"), 5, None, ["GP", ""]]
SKY_SYSTEMS = "GGGRRECJIS"
SKY_ODD_VALUES: list[Any] = [None, NAN, float("inf"), -0.0, 10**30, True, "40", 45.5, -1]


def _sat(rng: random.Random, system: str | None = None) -> Any:
    """(system, prn, elev, azim, cn0): mostly well formed, now and then anything."""
    s = system or rng.choice(SKY_SYSTEMS)
    prn: Any = rng.randrange(1, 12)
    elev: Any = rng.randrange(0, 91) if rng.random() > 0.1 else None
    azim: Any = rng.randrange(0, 360) if rng.random() > 0.1 else None
    cn0: Any = rng.choice([rng.randrange(20, 50), rng.randrange(20, 50) + 0.5, None])
    x = rng.random()
    if x < 0.008:
        elev, azim, cn0 = (rng.choice(SKY_ODD_VALUES) for _ in range(3))
    elif x < 0.01:
        prn = rng.choice([None, NAN, 10**30, 1.0, True, "3", -2])  # None and "3" cannot sort among ints
    elif x < 0.011:
        s = rng.choice([None, 7, "", "X"])
    elif x < 0.012:
        return rng.choice([(s, prn, elev, azim), (s, prn, elev, azim, cn0, 1), [s, prn, elev, azim, cn0], "GRECJ",
                           5, None, (s, [prn], elev, azim, cn0)])  # unpack errors, a list, an unhashable prn
    return (s, prn, elev, azim, cn0)


def _used(rng: random.Random, sats: list) -> frozenset:
    pairs = [(t[0], t[1]) for t in sats if type(t) is tuple and len(t) == 5 and type(t[1]) is int]
    return frozenset(rng.sample(pairs, min(len(pairs), rng.randrange(0, 12))))


def sky_calls(rng: random.Random) -> Iterator[tuple]:  # noqa: C901 - one epoch's calls after another
    """Endless calls: ("new", timeout_s, max_groups), ("replace", group, sats, mono), ("expire", now),
    ("in_view",), ("obs", used), ("seen", used).

    Epochs of a few sets whose lists repeat as the same objects (as the assembler hands them back),
    change values or members now and then, groups that stop being listed and expire, more groups
    than max_groups, the same satellite in two groups of one signal (the later set wins), empty
    sets, odd values and keys, host time going backwards or NaN, used sets that stay the same
    object, change, or are not sets."""
    lists: dict[Any, list] = {}
    used: Any = frozenset()
    mono = 100.0
    active = SKY_GROUPS[:4]
    while True:
        if rng.random() < 0.004:
            yield "new", rng.choice([5.0, 5.0, 5.0, 1.0, 0.0, 5, NAN, float("inf")]), rng.choice([64, 64, 64, 64, 64, 3, 3, 1, 0])
            lists.clear()
        if rng.random() < 0.03:  # the receiver's groups change
            active = rng.sample(SKY_GROUPS, rng.randrange(1, 8))
            if rng.random() < 0.05:
                active.append(rng.choice(SKY_ODD_GROUPS))
        if rng.random() < 0.003:  # a flood of groups past max_groups
            for i in range(rng.choice([70, 130])):
                yield "replace", (f"Q{i % 40}", str(i)), [_sat(rng)], mono
        step: Any = rng.choice([0.1, 0.1, 0.1, 0.1, 0.2, 1.0, 3.0, 6.0, -0.5])
        mono += step
        now: Any = mono if rng.random() > 0.01 else rng.choice([int(mono), NAN, float("inf"), -float("inf")])
        for g in active:
            if rng.random() < 0.05:
                continue  # not listed this epoch
            key = repr(g)
            sats = lists.get(key)
            y = rng.random()
            if sats is None or y < 0.02:  # a new list: other members
                system = rng.choice(SKY_SYSTEMS) if rng.random() < 0.3 else None
                sats = [_sat(rng, system) for _ in range(rng.choice([0, 1, 3, 4, 6, 8, 12]))]
            elif y < 0.07:  # the same members, new values (a new list, as once a second)
                sats = [(t[0], t[1], t[2], t[3], rng.randrange(20, 50)) if type(t) is tuple and len(t) == 5 else t
                        for t in sats]
            elif y < 0.08:
                sats = list(sats)  # an equal list, another object
            elif y < 0.082:
                sats = rng.choice([None, 5, (), "", tuple(sats)])  # not a list
            if isinstance(sats, list):
                lists[key] = sats
            yield "replace", g, sats, now
        if rng.random() < 0.1:
            yield "seen", used  # a snapshot in the middle of an epoch
        yield "expire", now
        yield "in_view",
        yield "expire", now
        z = rng.random()
        if z < 0.1:
            every = [t for s in lists.values() for t in s]
            used = _used(rng, every)
        elif z < 0.12:
            used = frozenset(used)  # equal, another object
        odd = rng.choice([set(used), list(used), None, 5, dict.fromkeys(used)]) if z > 0.995 else used
        yield "obs", odd  # an odd one for one epoch: not a set, None, a mutable set
        if rng.random() < 0.2:
            yield "seen", odd


def _shown(x: Any) -> str:
    """repr, a frozenset's items in sorted order (a set's own order follows its history)."""
    return repr(sorted(map(repr, x))) if isinstance(x, (set, frozenset)) else repr(x)


class SkyTwin:
    """The C twin (c) and the reference (p) fed the same calls; recent results kept for identity."""

    def __init__(self, c: Any, p: Any) -> None:
        self.c, self.p = c, p
        self.recent: dict[str, list[tuple[Any, Any]]] = {}  # method -> recent (C, reference) results
        self.steps = self.errors = self.same = 0
        self.result: Any = None  # the reference's result (or error) of the last call

    def call(self, op: tuple) -> str | None:  # noqa: C901 - one comparison after another
        """One call on both; None when they agree, else what differs."""
        out = []
        for t in (self.c, self.p):
            try:
                out.append(getattr(t, op[0])(*op[1:]))
            except Exception as err:  # noqa: BLE001 - the same error on both is agreement
                out.append(err)
        self.steps += 1
        rc, rp = out
        self.result = rp
        if isinstance(rc, Exception) or isinstance(rp, Exception):
            if type(rc) is not type(rp) or str(rc) != str(rp):
                return f"errors {rc!r} / {rp!r}"
            self.errors += 1
        elif type(rc) is not type(rp) or not alike(rc, rp, _shown):
            return f"results {rc!r} / {rp!r}"
        gc_, gp = self.c._groups, self.p._groups
        if not alike(list(gc_), list(gp), repr) or any(a is not b for a, b in zip(gc_.values(), gp.values(), strict=True)):
            return f"groups {gc_!r} / {gp!r}"
        if not alike(list(self.c._mono.items()), list(self.p._mono.items()), repr):
            return f"monos {self.c._mono!r} / {self.p._mono!r}"
        if not alike(self.c._oldest, self.p._oldest, repr):
            return f"oldest {self.c._oldest!r} / {self.p._oldest!r}"
        if isinstance(rp, Exception) or op[0] not in ("in_view", "obs", "seen"):
            return None
        recent = self.recent.setdefault(op[0], [])
        for oc, op_ in recent:
            if (oc is rc) != (op_ is rp):
                return f"{op[0]}: identity differs"
        self.same += bool(recent) and recent[0][1] is rp
        recent.insert(0, (rc, rp))
        del recent[4:]
        return None


def new_twin(timeout_s: Any = 5.0, max_groups: int = 64) -> SkyTwin:
    from livefix.state.sky import make_sky

    return SkyTwin(make_sky(timeout_s, max_groups, native=True), make_sky(timeout_s, max_groups, native=False))


def sky_diff(calls: int, seed: int = 1) -> tuple[int, int, list[str]]:
    """(calls, disagreements, first examples) of the C twin against the reference."""
    rng = random.Random(seed)
    twin = new_twin()
    bad, examples = 0, []
    for _, op in zip(range(calls), sky_calls(rng), strict=False):
        if op[0] == "new":
            twin = new_twin(op[1], op[2])
            continue
        why = twin.call(op)
        if why is not None:
            bad += 1
            if len(examples) < 5:
                examples.append(f"{op[0]} {op[1:]!r}: {why}"[:300])
    return calls, bad, examples


def load_sky_core(path: str) -> None:
    """Use the sky built at `path` (the sanitizer build) as livefix.state._skycore."""
    import livefix.state
    from livefix.state import sky

    mod = load_ext("livefix.state._skycore", path)
    livefix.state._skycore = mod  # type: ignore[attr-defined]
    sky._CORE = mod
