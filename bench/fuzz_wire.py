"""Random call streams for the differential of the packed wire (livefix/_wirecore.c) against the
pickled reference (livefix/wire.py: encode and Replayer.run), for bench/fuzz.py (`make fuzz`, under
the sanitizers) and tests/test_wire.py. Deterministic for a seed.

A stream is what the front records for the child: epochs, and (kind, args...) records for chunks,
refusals and events. Epoch fields take ordinary values and odd ones: NaN with a payload, -0.0 and
infinities, bools, ints past 64 bits, subclasses of float, int, str and tuple, strs with a lone
surrogate or outside ASCII, lists, bytes, tuples nested past the packer's depth, satellite tuples
made of the previous epoch's objects (shifted, reordered, repeated) or the very previous tuple.
Now and then a record of an odd shape (a tuple of the wrong length, an unknown kind), which both
paths meet with the reference's own error. Each stream is cut into batches at random and sent
through the wires, pickled as parallel.py sends them: the C packer given the list of calls, the C
packer as the sink whose methods the pipeline calls (the stream without the odd shapes, which no
method call can make), and the pickled records on ordinary values.

What must hold (a disagreement otherwise): the calls the child makes are the front's, in order,
value for value and type for type (floats by their bits); an error is the same type and text at
the same call; consecutive epochs share each tuple field exactly when the front's do. A second
part feeds mutated packed batches to a fresh reader: each must end in calls or a ValueError,
never anything else (and, under the sanitizers, never a memory error).
"""

from __future__ import annotations

import math
import pickle
import random
import struct
from typing import Any

from livefix.state.epoch import EPOCH_FIELDS, Epoch, Event, SatObs, make_epoch, make_satobs
from livefix.wire import CHUNK, EVENT, REJECTED, Replayer, encode, packer, sink


class OddFloat(float):
    pass


class OddInt(int):
    pass


class OddStr(str):
    pass


class OddTuple(tuple):  # noqa: SLOT001 - a plain subclass is the point
    pass


NAN_PAYLOAD = struct.unpack("<d", struct.pack("<Q", 0x7FF8_0000_0000_BEEF))[0]
TUPLE_FIELDS = ("sats", "used_prns", "sentences", "unknown_ids", "datum")


def _deep(depth: int) -> Any:
    t: Any = 1
    for _ in range(depth):
        t = (t,)
    return t


def _odd(rng: random.Random) -> Any:
    return rng.choice([
        True, False, 2**63, -(2**63) - 1, 2**64 + 5, 2**63 - 1, -(2**63), OddFloat(1.5), OddInt(3), OddStr("G"),
        OddTuple((1, 2)), "\ud800x", "é°", "", [1, 2], b"GGA", NAN_PAYLOAD, -0.0, math.inf, -math.inf, _deep(7),
        _deep(9), _deep(12), (None, (True, 1.0)), {"a": 1}, 1.5j,
    ])


def _num(rng: random.Random, odd: float) -> Any:
    r = rng.random()
    if r < odd:
        return _odd(rng)
    if r < 0.1:
        return None
    return rng.choice([rng.uniform(-1e6, 1e6), rng.randint(-5, 400), round(rng.uniform(0, 60), 1)])


def _sat(rng: random.Random, odd: float) -> SatObs:
    return make_satobs((rng.choice(["G", "R", "E", "C", "J"]), rng.randint(1, 40), rng.choice(["1", "7", ""]),
                        _num(rng, odd), _num(rng, odd), _num(rng, odd), rng.random() < 0.7,
                        0.0 if rng.random() < 0.9 else _num(rng, odd)))


def _sats(rng: random.Random, prev: tuple, odd: float) -> Any:
    """A new satellite tuple, mostly of the previous one's objects."""
    r = rng.random()
    if r < 0.02 and odd:
        return _odd(rng)  # not a tuple at all
    base = list(prev) if isinstance(prev, tuple) else []
    if base and r < 0.4:
        k = rng.randrange(len(base))
        base[k] = _sat(rng, odd)  # one satellite's values changed
    elif base and r < 0.55:
        del base[rng.randrange(len(base))]
    elif base and r < 0.65:
        rng.shuffle(base)
    elif base and r < 0.7:
        base = base + base[: rng.randint(0, 3)]  # the same object twice
    else:
        base.insert(rng.randint(0, len(base)), _sat(rng, odd))
    if odd and rng.random() < 0.02:
        base.append(_odd(rng))
    return OddTuple(base) if odd and rng.random() < 0.01 else tuple(base)


def _epoch(rng: random.Random, prev: Epoch | None, odd: float) -> Epoch:
    v: dict[str, Any] = {f: _num(rng, odd) for f in EPOCH_FIELDS}
    v["mono"], v["wall"] = rng.uniform(0, 1e6), rng.uniform(1.6e9, 1.8e9)
    v["quality"] = rng.choice([0, 1, 2, 4, 5]) if rng.random() > odd else _odd(rng)
    v["date_known"] = rng.random() < 0.9 if rng.random() > odd else _odd(rng)
    for f in TUPLE_FIELDS:
        old = getattr(prev, f) if prev is not None else ()
        if prev is not None and rng.random() < 0.7:
            v[f] = old  # the very same object
        elif f == "sats":
            v[f] = _sats(rng, old, odd)
        elif f == "used_prns":
            v[f] = tuple((rng.choice("GRE"), rng.randint(1, 32)) for _ in range(rng.randint(0, 12)))
        elif f == "datum":
            v[f] = None if rng.random() < 0.5 else (rng.choice(["W84", "999", "P90"]), "W84")
        else:
            pool = ["GGA", "RMC", "GSA", "GSV", "GST", "ZDA", "GPGSA 250"]
            v[f] = tuple(rng.choice(pool) for _ in range(rng.randint(0, 8)))
        if rng.random() < odd:
            v[f] = _odd(rng)
    return make_epoch(tuple(v[f] for f in EPOCH_FIELDS))


def stream(rng: random.Random, n: int, odd: float) -> list:
    """n recorded calls, about half epochs."""
    calls: list = []
    prev: Epoch | None = None
    for _ in range(n):
        r = rng.random()
        if r < 0.5:
            prev = _epoch(rng, prev, odd)
            calls.append(prev)
        elif r < 0.85:
            calls.append((CHUNK, rng.uniform(0, 1e6), rng.uniform(1.6e9, 1.8e9), rng.randint(0, 4096)))
        elif r < 0.95:
            calls.append((REJECTED, rng.choice(["bad checksum", "too long", OddStr("x")]), _num(rng, odd),
                          _num(rng, odd)))
        elif r < 0.995:
            calls.append((EVENT, Event(1.0, 2.0, "note", "a note", None, {"k": rng.random()})))
        else:  # odd shapes: the reference's own error
            calls.append(rng.choice([(CHUNK, 1.0), (EVENT,), (7, 1), (REJECTED, "x", 1.0, 2.0, 3.0)]))
    return calls


class Sink:
    """An analyzer that keeps the calls it gets, in the recorded form."""

    def __init__(self) -> None:
        self.calls: list = []

    def on_chunk(self, mono: Any, wall: Any, nbytes: Any) -> None:
        self.calls.append((CHUNK, mono, wall, nbytes))

    def on_rejected(self, reason: Any, mono: Any, wall: Any) -> None:
        self.calls.append((REJECTED, reason, mono, wall))

    def on_event(self, ev: Any) -> None:
        self.calls.append((EVENT, ev))

    def on_epoch(self, ep: Any) -> None:
        self.calls.append(ep)


def same(a: Any, b: Any) -> bool:
    """Equal value for value and type for type, floats by their bits, slotted records by their slots."""
    if type(a) is not type(b):
        return False
    if type(a) is float:
        return struct.pack("<d", a) == struct.pack("<d", b)
    if isinstance(a, tuple | list):
        return len(a) == len(b) and all(same(x, y) for x, y in zip(a, b, strict=True))
    if type(a) in (Epoch, SatObs):
        return all(same(getattr(a, f), getattr(b, f)) for f in a.__slots__)
    return bool(a == b)


def direct(calls: list) -> tuple[list, str | None]:
    """What one process does with the calls: the reference of both wires (an odd record meets the
    replayer's own error, as on the wire); and the error, if any."""
    sink = Sink()
    rep = Replayer(sink)
    try:
        for c in calls:
            if type(c) is Epoch:
                sink.on_epoch(c)
            else:
                rep.run([c])
    except Exception as exc:  # noqa: BLE001 - compared with the wires'
        return sink.calls, f"{type(exc).__name__}: {exc}"
    return sink.calls, None


NARGS = {CHUNK: 3, REJECTED: 3, EVENT: 1}


def callable_shape(c: Any) -> bool:
    """An epoch or a (kind, args...) record the Analyzer's methods can be called with."""
    return type(c) is Epoch or (type(c) is tuple and len(c) >= 1 and c[0] in NARGS and len(c) == NARGS[c[0]] + 1)


def through(calls: list, cuts: list[int], mode: str) -> tuple[list, str | None]:
    """The calls a child makes from `calls` sent in the batches `cuts` gives, by the wire `mode`:
    "pickled" (encode), "packed" (the C packer on the list of calls) or "sink" (the C packer's own
    feeding methods, called as the pipeline calls them: only callable shapes); and the error, if any."""
    out = Sink()
    rep = Replayer(out)
    pack = packer(True) if mode == "packed" else None
    rec = sink(0, lambda: None, True) if mode == "sink" else None
    table: dict = {}
    next_id = [0]
    start = 0
    try:
        for end in [*cuts, len(calls)]:
            batch = calls[start:end]
            start = end
            if rec is not None:
                feed = {CHUNK: rec.on_chunk, REJECTED: rec.on_rejected, EVENT: rec.on_event}
                for c in batch:
                    if type(c) is Epoch:
                        rec.on_epoch(c)
                    else:
                        feed[c[0]](*c[1:])
                rep.run_packed(*pickle.loads(pickle.dumps(rec.take(), 5)))
            elif pack is not None:
                rep.run_packed(*pickle.loads(pickle.dumps(pack(batch), 5)))
            else:
                rep.run(pickle.loads(pickle.dumps(encode(batch, table, next_id), 5)))
    except Exception as exc:  # noqa: BLE001 - compared between the two paths
        return out.calls, f"{type(exc).__name__}: {exc}"
    return out.calls, None


def sharing(calls: list, front: list) -> list[tuple[bool | None, ...]]:
    """For consecutive epochs, whether each tuple field is the same object; None where the front's
    values are not both plain tuples (odd values go pickled, one batch at a time)."""
    eps = [c for c in calls if type(c) is Epoch]
    fps = [c for c in front if type(c) is Epoch]
    out = []
    for (a, b), (fa, fb) in zip(zip(eps, eps[1:], strict=False), zip(fps, fps[1:], strict=False), strict=False):
        out.append(tuple(getattr(a, f) is getattr(b, f) if type(getattr(fa, f)) is tuple is type(getattr(fb, f))
                         else None for f in TUPLE_FIELDS))
    return out


def wire_diff(n: int, seed: int) -> tuple[int, int, list[str]]:
    """n calls in streams of 1-400 (a quarter with odd values), then n // 4 mutated packed batches;
    returns (calls + batches compared, disagreements, the first few described)."""
    rng = random.Random(seed)
    done = bad = 0
    examples: list[str] = []

    def disagree(text: str) -> None:
        nonlocal bad
        bad += 1
        if len(examples) < 5:
            examples.append(text)

    while done < n:
        k = rng.randint(1, 400)
        odd = rng.choice([0.0, 0.0, 0.0, 0.05])
        calls = stream(rng, k, odd)
        cuts = sorted(rng.sample(range(1, k), min(k - 1, rng.randint(0, 6)))) if k > 1 else []
        # the pickled wire is exact on ordinary values only (it rebuilds satellites from tuples);
        # the sink is fed by method calls, so only the shapes those can have
        for mode in ("packed", "sink", "pickled") if odd == 0 else ("packed", "sink"):
            fed = [c for c in calls if callable_shape(c)] if mode == "sink" else calls
            ref, ref_err = direct(fed)
            got, got_err = through(fed, [c for c in cuts if c < len(fed)], mode)
            if got_err != ref_err:
                disagree(f"{mode} seed {seed} calls {done}: error {got_err!r}, reference {ref_err!r}")
            elif len(got) != len(ref) or not all(same(a, b) for a, b in zip(got, ref, strict=True)):
                at = next((i for i, (a, b) in enumerate(zip(got, ref, strict=False)) if not same(a, b)), len(ref))
                disagree(f"{mode} seed {seed} calls {done}: call {at} differs")
            elif mode != "pickled" and ref_err is None and sharing(got, fed) != sharing(fed, fed):
                disagree(f"{mode} seed {seed} calls {done}: tuple sharing differs from the front's")
        done += k
    for _ in range(n // 4):
        _mutated(rng, disagree)
        done += 1
    return done, bad, examples


def _mutated(rng: random.Random, disagree: Any) -> None:
    calls = [c for c in stream(rng, rng.randint(1, 30), 0.05) if type(c) is Epoch or c[0] in (CHUNK, REJECTED)]
    data, others = packer(True)(calls)  # type: ignore[misc]
    b = bytearray(data)
    for _ in range(rng.randint(1, 4)):
        r = rng.random()
        if r < 0.4 and b:
            b[rng.randrange(len(b))] = rng.randrange(256)
        elif r < 0.6 and b:
            del b[rng.randrange(len(b)):]
        elif r < 0.8:
            at = rng.randint(0, len(b))
            b[at:at] = bytes(rng.randrange(256) for _ in range(rng.randint(1, 9)))
        else:
            others = others[: rng.randint(0, len(others))] + [_odd(rng)] * rng.randint(0, 2)
    try:
        Replayer(Sink()).run_packed(bytes(b), others)
    except (ValueError, IndexError, TypeError, KeyError):
        pass  # refused as corrupt (ValueError), or a junk record met the reference replayer's own error
    except Exception as exc:  # noqa: BLE001 - anything else is a disagreement
        disagree(f"mutated batch: {type(exc).__name__}: {exc}")


def load_wire_core(path: str) -> None:
    """Use the core built at `path` (the sanitizer build) as livefix._wirecore."""
    from fuzz_twins import load_ext

    import livefix.wire

    mod = load_ext("livefix._wirecore", path)
    livefix.wire._CORE = mod  # type: ignore[attr-defined]
