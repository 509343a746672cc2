"""Random call sequences for the differential of the clock's C common path (livefix/state/_clockcore.c)
against the reference (livefix/state/clock.py UtcClock.resolve), used by tests/state/test_clock_native.py
and meant for bench/fuzz.py (`make fuzz`, under the sanitizers). Deterministic for a seed.

clock_calls() makes resolve() arguments the way a receiver and a host make them: a time of day
stepping on at a rate, receiver dates (valid, default, 1024 weeks early, changing), midnight with
and without a date, jumps confirmed and not, steps back, holes the host clock vouches for, host
clocks with and without a date, and now and then odd values. ClockTwin.call() makes one call on a
clock with the C path and on a reference clock and compares the return, the raised error and every
attribute (type-exact, floats by float.hex, the identity of the objects passed in).
"""

from __future__ import annotations

import datetime as dt
import random
from collections import deque
from collections.abc import Iterator
from typing import Any

from fuzz_twins import load_ext

ROLLOVER = dt.timedelta(weeks=1024)  # GPS week number rollover (IS-GPS-200): 10 bits of weeks
DATES = [dt.date(2026, 12, 5), dt.date(2024, 2, 28), dt.date(2023, 12, 31), dt.date(2019, 4, 6), dt.date(2038, 1, 19)]
DEFAULTS = [dt.date(1980, 1, 6), dt.date(1980, 1, 7), dt.date(2000, 1, 1), dt.date(2000, 1, 2)]  # livefix.dates


class _Date(dt.date):
    """A date subclass: the C path leaves it to the reference."""


ODD: list[Any] = [None, "", 0, 1, -1, 7, 10**400, True, float("nan"), float("inf"), float("-inf"), -0.0, 1e300, "12",
                  [1.0], dt.datetime(2026, 12, 5, 1, 2), _Date(2026, 12, 5)]
RATES = [1.0, 0.5, 0.2, 0.1, 0.05, 5.0]


def _posix(d: dt.date, tod: float) -> float:
    return dt.datetime(d.year, d.month, d.day, tzinfo=dt.UTC).timestamp() + tod


def clock_calls(rng: random.Random, n: int) -> Iterator[tuple[tuple, dict]]:
    """n (args, kwargs) for UtcClock.resolve: mostly a receiver's epochs, with faults mixed in."""
    day = rng.choice(DATES)
    us = rng.randrange(0, 86400 * 10**6)  # time of day in microseconds, as decoded (datetime.time)
    rate = rng.choice(RATES)
    mono, host_off = 100.0 + rng.random(), rng.choice([0.0, 0.3, -1.5, 40.0, -86400.0, 3 * 86400.0])
    host_mode = rng.choice(["dated", "dated", "dated", "undated", "zero", "none"])
    date_every = rng.choice([1, 1, 2, 10, 0])  # RMC each epoch, every other, now and then, never
    mult = rng.choice([[1], [1], [1, 1, 1, 2], [1, 2, 3, 5]])  # epochs lost now and then
    for i in range(n):
        r = rng.random()
        if r < 0.02:  # a jump of the receiver time: it runs on from there, or the old clock comes back
            us += int(rng.choice([-1, 1]) * rng.uniform(3, 5000) * 1e6)
        elif r < 0.03:  # a small step back (re-aligned time of fix)
            us -= int(rng.uniform(0.001, 1.5) * 1e6)
        elif r < 0.04:  # a hole in the data: both clocks move on
            gap = rng.uniform(3, 3000)
            us += int(gap * 1e6)
            mono += gap
        elif r < 0.05:  # a repeated epoch time
            pass
        elif r < 0.06:  # the time-of-fix comes back after a stray one
            us -= int(rng.uniform(3, 100) * 1e6)
        else:  # the next epoch, or one after lost ones (steps of other lengths: a median that moves)
            us += int(rate * 1e6) * rng.choice(mult)
        mono += rate * rng.choice([1.0, 1.0, 1.0, 0.9, 1.3])
        while us >= 86400 * 10**6:  # midnight: the receiver's date goes on
            us -= 86400 * 10**6
            day += dt.timedelta(days=1)
        while us < 0:
            us += 86400 * 10**6
            day -= dt.timedelta(days=1)
        t = dt.time(us // 3600_000_000, us // 60_000_000 % 60, us // 1_000_000 % 60, us % 1_000_000)
        tod = t.hour * 3600 + t.minute * 60 + t.second + t.microsecond / 1e6  # clock.tod_seconds
        given: Any = None
        if date_every and i % date_every == 0:
            given = day
        q = rng.random()
        if q < 0.03:
            given = rng.choice(DEFAULTS)  # a receiver that does not know the time yet (or lost it)
        elif q < 0.05:
            given = day - ROLLOVER * rng.choice([1, 2])  # an old week reference
        elif q < 0.06:
            given = day + dt.timedelta(days=rng.choice([-1, 1, 400]))
        elif q < 0.07:
            day = rng.choice(DATES)  # the receiver's date changes for good
        host = _posix(day, tod) + host_off
        wall: Any = {"dated": host, "undated": mono, "zero": 0.0, "none": None}[host_mode]
        if rng.random() < 0.02 and wall is not None:  # a wall just before the host's midnight
            wall = _posix(day, 0.0) - rng.choice([0.0005, 0.001, 0.0015, 1e-7])
        args: list[Any] = [tod, given, wall, mono]
        if rng.random() < 0.02:
            args[rng.randrange(4)] = rng.choice(ODD)
        if rng.random() < 0.03:
            args[3] = None  # no host monotonic clock
        kw: dict = {}
        if rng.random() < 0.01:
            args.pop()  # mono left to its default
        elif rng.random() < 0.01:
            kw = {"mono": args.pop()}
        if rng.random() < 0.005:
            host_mode = rng.choice(["dated", "undated", "zero", "none"])
        yield tuple(args), kw


def canon(x: Any) -> Any:
    """A type-exact, comparable form: floats by float.hex, containers element by element."""
    t = type(x)
    if t is float:
        return "float", x.hex()
    if t is tuple or t is list:
        return t.__name__, [canon(v) for v in x]
    if t is deque:
        return "deque", x.maxlen, [canon(v) for v in x]
    if t is dict:
        return "dict", [(canon(k), canon(v)) for k, v in x.items()]
    return t.__name__, repr(x)


def _state(c: Any, args: tuple) -> Any:
    """Every attribute, and which of them are the very objects passed in (by position)."""
    ids = [id(a) for a in args]
    return canon(vars(c)), [ids.index(id(v)) if id(v) in ids else -1 for v in vars(c).values()]


class ClockTwin:
    """A clock with the C path (c) and a reference clock (p), called alike and compared."""

    def __init__(self, c: Any, p: Any) -> None:
        self.c, self.p = c, p
        self.calls = self.fast = 0

    def call(self, args: tuple, kw: dict | None = None, op: str = "resolve") -> str | None:
        """One call on both clocks; None when they agree, else what differs."""
        kw = kw or {}
        self.calls += 1
        out = []
        for clock in (self.c, self.p):
            try:
                if op == "resolve":
                    r: Any = clock.resolve(*args, **kw)
                elif op == "finish":
                    r = clock.finish()
                else:
                    r = clock.nominal_s
                out.append(("ok", canon(r), type(r).__name__))
            except Exception as e:  # noqa: BLE001 - the same error on both is agreement
                out.append(("raised", type(e).__name__, str(e)))
        if out[0] != out[1]:
            return f"{op}: {out[0]!r} != {out[1]!r}"
        sc, sp = _state(self.c, args), _state(self.p, args)
        if sc != sp:
            diff = [k for k, a, b in zip(vars(self.p), sc[0][1], sp[0][1], strict=False) if a != b]
            return f"{op}: attributes differ {diff or 'identity'}: {sc!r} != {sp!r}"[:2000]
        return None


def clock_diff(calls: int, seed: int = 1, runs: int = 40) -> tuple[int, int, list[str]]:
    """(calls, disagreements, first examples) of the C path against the reference."""
    from livefix.state.clock import UtcClock

    rng = random.Random(seed)
    bad, examples, done = 0, [], 0
    while done < calls:
        twin = ClockTwin(UtcClock(native=True), UtcClock(native=False))
        for args, kw in clock_calls(rng, max(1, calls // runs)):
            op = "resolve" if rng.random() < 0.97 else rng.choice(["finish", "nominal_s"])
            why = twin.call(args, kw, op)
            done += 1
            if why is not None:
                bad += 1
                if len(examples) < 5:
                    examples.append(f"{args!r} {kw!r}: {why}"[:400])
                twin = ClockTwin(UtcClock(native=True), UtcClock(native=False))  # go on from a clean start
    return done, bad, examples


def load_clock_core(path: str) -> None:
    """Use the core built at `path` (the sanitizer build) as livefix.state._clockcore."""
    import livefix.state
    from livefix.state import clock

    mod = load_ext("livefix.state._clockcore", path)
    livefix.state._clockcore = mod  # type: ignore[attr-defined]
    clock._CORE = mod
    clock._CoreClock.resolve = mod.Resolver(clock.UtcClock.resolve, clock._CoreClock, deque)  # type: ignore[method-assign]


# ---- GSV part values for gsv._part_sats vs livefix.state._gsvcore.part_sats ----
PART_SYSTEMS: list[Any] = [None, None, "G", "R", "E", "C", "J", "I", "S", "GG", ""]  # TALKER_SYSTEM values, others
PART_ODD: list[Any] = [None, "", "7", 7.0, True, False, -1, 0, 10**30, -(10**30), float("nan"), 2**63, -(2**63) - 1]


def part_vals(rng: random.Random) -> tuple[Any, tuple]:
    """(system, 16 block values) as GsvAssembler._part hands them over: numbers of every block and
    none, elevations, azimuths and C/N0 as decoded (int, "" for empty, dd.d float), odd values."""
    vals: list[Any] = []
    for _ in range(4):
        svid = rng.choice([rng.randrange(0, 500), rng.randrange(0, 100), rng.choice([0, 500, 999, 10**6])])
        block = [svid, rng.choice([rng.randrange(-5, 91), ""]), rng.choice([rng.randrange(0, 360), ""]),
                 rng.choice([rng.randrange(0, 60), "", round(rng.uniform(0, 60), 1)])]
        for j in range(4):
            if rng.random() < 0.08:
                block[j] = rng.choice(PART_ODD)
        vals += block
    return rng.choice(PART_SYSTEMS), tuple(vals)


def parts_diff(calls: int, seed: int = 1) -> tuple[int, int, list[str]]:
    """(calls, disagreements, first examples) of _gsvcore.part_sats against gsv._part_sats: the same
    tuples, type-exact, floats by float.hex; (0, 0, []) when the core was built without it."""
    from livefix.state import gsv

    fn = getattr(gsv._CORE, "part_sats", None)
    if fn is None:
        return 0, 0, []
    rng = random.Random(seed)
    bad, examples = 0, []
    for _ in range(calls):
        system, vals = part_vals(rng)
        out = []
        for f in (fn, gsv._part_sats):
            try:
                out.append(canon(f(system, vals)))
            except Exception as e:  # noqa: BLE001 - the same error on both is agreement
                out.append(type(e).__name__)
        if out[0] != out[1]:
            bad += 1
            if len(examples) < 5:
                examples.append(f"{system!r} {vals!r}: {out[0]!r} != {out[1]!r}"[:400])
    return calls, bad, examples
