"""Random calls for the differential of the GSA used-set tracker's C twin (livefix/state/_usedcore.c)
against the reference (livefix/state/used.py UsedTracker), used by bench/fuzz.py (`make fuzz`, under
the sanitizers) and by tests/state/test_used_native.py. Deterministic for a seed.

used_calls() gives add_gsa / note_unknown / close calls; used_step() makes one call on both trackers
and compares results (type-exact), raised errors, the attributes and the identity pattern of the
returned objects; used_diff() runs N calls and counts disagreements.
"""

from __future__ import annotations

import random
from collections.abc import Callable, Iterator
from types import MappingProxyType
from typing import Any

from fuzz_exact import alike
from fuzz_twins import _Dict, _Fields, load_ext

# System IDs as decoders give them (NMEA 0183 4.10/4.11: 1-6; "" when absent) and odd ones: digits
# int() refuses ("\u00b2", 5000 digits), digits it reads ("\u0661" is 1), floats and bools equal to 1, huge values.
USED_SIDS: list[Any] = ["", "", "", "", 1, 1, 2, 3, 4, 5, 6, "1", "3", "01", 0, 7, 16, -1, "x", None, 1.0, True,
                        10**30, "99999999999999999999", "9" * 5000, "\u00b2", "\u0661", " 2", 2**63]
USED_TALKERS = ["GP", "GP", "GP", "GN", "GN", "GL", "GA", "GB", "GQ", "GI", "BD", "XX", "", "gp"]
USED_SVIDS: list[Any] = [*range(1, 97), *range(120, 159), *range(193, 264), *range(301, 337), *range(401, 464)]
USED_ODD: list[Any] = ["", "", None, 0, -3, 97, 500, 10**30, -(10**30), 1.0, True, False, "12", float("nan")]
_SVIDS = tuple(f"svid_{i:02d}" for i in range(1, 13))


def used_calls(rng: random.Random) -> Iterator[tuple]:
    """Endless calls: ("add", talker, fields), ("note", source, numbers), ("close", used, in_view, mono).

    Epochs of a few GSA lines over a slowly changing sky, the same lines again and again (as the
    decoder's shared read-only views, so the identity memo hits), GP/GN lists of other systems'
    own numbers, unknown numbers, floods of new lines past both memo caps, dicts and other mappings,
    skies that change content, object or both (and a mutable sky changed under the placing memo),
    epochs without GSA (the hold), odd host times, and now and then a call that must raise."""
    shared: dict[tuple, object] = {}
    skies = [frozenset((s, n) for s in "GREC" for n in rng.sample(range(1, 40), 8)) for _ in range(4)]
    live = set(skies[0])  # a mutable sky object, changed between closes
    mono = 100.0
    lists: list[tuple] = [(rng.choice(USED_SIDS[:12]), rng.choice(USED_TALKERS[:6]), rng.sample(range(1, 40), 5))
                          for _ in range(12)]
    pattern = [0, 1, 2, 3]

    def fields(sid: Any, nums: list) -> dict:
        d: dict[str, Any] = {"mode": "A", "navMode": 3}
        vals = nums + [""] * (12 - len(nums))
        d.update(zip(_SVIDS, vals[:12], strict=True))
        if sid is not _ABSENT:
            d["systemId"] = sid
        d["PDOP"] = 1.5
        return d

    def wrap(key: tuple, d: dict) -> object:
        x = rng.random()
        if x < 0.7:  # the decoder's shared read-only view of a repeated line
            if len(shared) > 3000:
                shared.clear()
            v = shared.get(key)
            if v is None:
                v = shared[key] = MappingProxyType(d)
            return v
        if x < 0.8:
            return MappingProxyType(d)  # a new view of the same content
        if x < 0.9:
            return d
        return rng.choice([_Fields(d), _Dict(d), MappingProxyType(_Fields(d))])

    while True:
        r = rng.random()
        if r < 0.0006:
            for _ in range(rng.choice([1100, 4200])):  # a flood of new lines: both memos clear
                nums = [rng.randrange(1, 500) for _ in range(rng.randrange(1, 13))]
                yield "add", rng.choice(USED_TALKERS), MappingProxyType(fields(rng.choice(USED_SIDS[:12]), nums))
            continue
        if rng.random() < 0.1:  # the receiver's epoch pattern changes now and then
            pattern = [rng.randrange(len(lists)) for _ in range(rng.choice([0, 1, 2, 3, 4, 4, 4, 5]))]
        for k in pattern:  # one epoch's GSA lines
            y = rng.random()
            if y < 0.93:
                sid, talker, nums = lists[k]
                nums = list(nums)
            else:
                sid, talker = rng.choice(USED_SIDS), rng.choice(USED_TALKERS)
                nums = [rng.choice(USED_SVIDS) if rng.random() < 0.85 else rng.choice(USED_ODD)
                        for _ in range(rng.randrange(0, 13))]
                if rng.random() < 0.1 and sid in USED_SIDS[:12]:  # a line the receiver keeps sending
                    lists[k] = (sid, talker, nums)
            if rng.random() < 0.02:
                sid = _ABSENT  # no systemId field at all (NMEA before 4.10)
            if rng.random() < 0.005:
                talker, sid = None, rng.choice([1, 2, 3])  # None + "GSA" raises when a number is unknown
            if rng.random() < 0.003:
                sid = rng.choice([[1], {}])  # unhashable: the memo look-up raises
            d = fields(sid, nums)
            yield "add", talker, (wrap((repr(sid), talker, repr(nums)), d) if rng.random() > 0.002 else 5)
        if rng.random() < 0.05:
            yield "note", rng.choice(["GPGSV", "GLGSV", "GNGSV"]), tuple(rng.choice([0, 500, 97, 999]) for _ in
                                                                           range(rng.randrange(1, 40)))
        if rng.random() < 0.003:
            yield "note", "GPGSV", rng.choice([None, [7, 8], "ab"])
        z = rng.random()
        if z < 0.05:
            skies[rng.randrange(4)] = frozenset((s, n) for s in "GREC" for n in rng.sample(range(1, 40), 8))
        if z < 0.08:
            live.add((rng.choice("GREC"), rng.randrange(1, 40)))  # the same object, new content
        w = rng.random()
        view: Any = (live if w < 0.1 else frozenset(skies[0]) if w < 0.15 else (1, 2) if w < 0.152
                     else _RAISE if w < 0.154 else rng.choice(skies))
        mono += rng.choice([0.1, 0.1, 0.1, 0.2, 1.0, 4.9, 5.0, 7.0, -1.0])
        t: Any = mono if rng.random() > 0.01 else rng.choice([int(mono), float("nan"), float("inf")])
        pairs = [(rng.choice("GRECS"), rng.randrange(1, 40)) for _ in range(rng.choice([0, 0, 0, 0, 1, 3]))]
        kind = rng.random()
        used: Any = pairs if kind < 0.98 else frozenset(pairs) if kind < 0.99 else (("G", 1),)
        yield "close", used, view, t


_ABSENT = object()
_RAISE = object()  # in_view() raises


def _in_view(view: Any, calls: list[int]) -> Callable[[], Any]:
    """in_view() for close(): the given sky (or the given in_view's), calls counted."""
    def in_view() -> Any:
        calls[0] += 1
        if view is _RAISE:
            raise LookupError("no sky")
        return view() if callable(view) else view

    return in_view


def _used_arg(used: Any) -> Any:
    """close()'s used set, one per tracker (close() adds to it); other types as they are."""
    return set(used) if type(used) in (list, set) else used


def _shown(x: Any) -> str:
    """repr, of a set's items in sorted order (a set's own order follows its history, not its content)."""
    return repr(sorted(map(repr, x))) if isinstance(x, (set, frozenset)) else repr(x)


class UsedTwin:
    """The C twin (c) and the reference (p) fed the same calls; the last results kept for identity."""

    ATTRS = ("unknown", "unknown_total", "_open", "_unknown", "_seen_gsa", "_last_mono")

    def __init__(self, c: Any, p: Any) -> None:
        self.c, self.p = c, p
        self.added: list[tuple[Any, Any]] = []  # recent add_gsa results (C, reference)
        self.closed: tuple[Any, Any] | None = None  # last close result
        self.steps = self.closes = self.kept = self.errors = 0
        self.result: Any = None  # the reference's result (or error) of the last call

    def call(self, op: tuple) -> str | None:  # noqa: C901 - one comparison after another
        """One call on both; None when they agree, else what differs."""
        out, extra = [], []
        for t in (self.c, self.p):
            calls = [0]
            args: tuple = op[1:]
            if op[0] == "close":
                args = (_used_arg(op[1]), _in_view(op[2], calls), op[3])
            try:
                out.append(getattr(t, {"add": "add_gsa", "note": "note_unknown", "close": "close"}[op[0]])(*args))
            except Exception as err:  # noqa: BLE001 - the same error on both is agreement
                out.append(err)
            extra.append((args[0] if op[0] == "close" else None, calls[0]))
        self.steps += 1
        rc, rp = out
        self.result = rp
        if isinstance(rc, Exception) or isinstance(rp, Exception):
            if type(rc) is not type(rp) or str(rc) != str(rp):
                return f"errors {rc!r} / {rp!r}"
            self.errors += 1
        elif type(rc) is not type(rp) or rc != rp or not alike(rc, rp, _shown):
            return f"results {rc!r} / {rp!r}"
        for a in self.ATTRS:
            if not alike(getattr(self.c, a), getattr(self.p, a), repr):
                return f"{a}: {getattr(self.c, a)!r} / {getattr(self.p, a)!r}"
        lc, lp = self.c._last, self.p._last
        if type(lc) is not type(lp) or not alike(lc, lp, _shown):
            return f"_last {lc!r} / {lp!r}"
        (uc, nc), (up, np_) = extra
        if nc != np_ or type(uc) is not type(up) or not alike(uc, up, _shown):
            return f"in_view calls {nc}/{np_} or used {uc!r} / {up!r}"
        if isinstance(rp, Exception):
            return None
        if op[0] == "add":
            for oc, op_ in self.added:
                if (oc is rc) != (op_ is rp):
                    return "placed pairs: identity differs"
            self.added = [(rc, rp), *self.added[:7]]
        elif op[0] == "close":
            self.closes += 1
            prev = self.closed or (None, None)
            if (rc is prev[0], rc is uc, rc is lc) != (rp is prev[1], rp is up, rp is lp):
                return "used set: identity differs"
            self.kept += rp is prev[1]
            self.closed = (rc, rp)
        return None


def used_diff(calls: int, seed: int = 1) -> tuple[int, int, list[str]]:
    """(calls, disagreements, first examples) of the C twin against the reference."""
    from livefix.state.used import make_used_tracker

    rng = random.Random(seed)
    twin = UsedTwin(make_used_tracker(native=True), make_used_tracker(native=False))
    bad, examples = 0, []
    for _, op in zip(range(calls), used_calls(rng), strict=False):
        why = twin.call(op)
        if why is not None:
            bad += 1
            if len(examples) < 5:
                examples.append(f"{op[0]} {op[1:]!r}: {why}"[:300])
    return calls, bad, examples


def load_used_core(path: str) -> None:
    """Use the tracker built at `path` (the sanitizer build) as livefix.state._usedcore."""
    import livefix.state
    from livefix.state import used

    mod = load_ext("livefix.state._usedcore", path)
    livefix.state._usedcore = mod  # type: ignore[attr-defined]
    used._CORE = mod
    # the state model's core hands a tracker of these classes the last epoch's set again: this one too
    used.TRACKER_TYPES = (used.UsedTracker, mod.UsedTracker)
    from livefix.state import model

    model._CORE_HELPERS = (*model._CORE_HELPERS[:-1], used.TRACKER_TYPES)


if __name__ == "__main__":
    import sys
    from pathlib import Path

    sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
    if len(sys.argv) > 3:  # a sanitizer build of the extension
        load_used_core(sys.argv[3])
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 100_000
    print("RESULT used calls={} disagreements={} {}".format(*used_diff(n, int(sys.argv[2]) if len(sys.argv) > 2 else 1)))
