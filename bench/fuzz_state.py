"""Random streams for the differential of the state model's C epoch assembly (livefix/state/_statecore.c)
against the reference (livefix/state/model.py StateModel.on_sentence and _close), used by bench/fuzz.py
(`make fuzz`, under the sanitizers) and by tests/state/test_model_native.py. Deterministic for a seed.

state_ops() mutates a base of decoded simulator lines into stream calls; StateTwin.call() makes one
call on a model with the C core and on a reference model and compares what they return (epochs
field by field, type-exact, floats by repr, and the identity pattern of sats / used_prns tuples),
the raised errors, the counters, the drained events and now and then sky(); state_diff() runs N.
"""

from __future__ import annotations

import datetime as dt
import random
from collections.abc import Iterator
from types import MappingProxyType, SimpleNamespace
from typing import Any

from fuzz_exact import alike
from fuzz_twins import _Dict, _Fields, load_ext

from livefix.decode import Decoded, Rejected
from livefix.items import LinkEvent, Marker
from livefix.state.epoch import Epoch


class _Time(dt.time):
    """A time subclass: the core reads it through the reference's own _tod_of."""


ODD: list[Any] = ["", "", None, 0, 1, -1, 7, 1.5, -0.0, float("nan"), float("inf"), float("-inf"), 10**400, True,
                  False, "V", "A", "ADN", "NEX", "1.5", [1], dt.date(2026, 5, 12)]
TIMED_KEYS = ["lat", "lon", "alt", "sep", "quality", "numSV", "HDOP", "diffAge", "status", "posMode", "spd", "cog"]
OTHER_KEYS = ["PDOP", "HDOP", "VDOP", "navMode", "sogk", "sogn", "cogt", "stdLat", "stdLong", "stdAlt", "rangeRms",
              "per_system_dops", "day", "month", "year", "date", "time", "text"]
DATES: list[Any] = [dt.date(2026, 5, 12), dt.date(9999, 12, 31), dt.date(1, 1, 1), dt.datetime(2026, 5, 12, 1, 2)]
YMD: list[Any] = [(2026, 5, 12), (2026, 2, 30), (0, 1, 1), (10**20, 1, 1), (9999, 12, 31), (1, 1, 1), (2026, 13, 1)]
TALKERS: list[Any] = ["GP", "GN", "GL", "GA", None, 5, "", "XX"]
MSG_IDS: list[Any] = ["GGA", "RMC", "GNS", "GLL", "ZDA", "GST", "GSA", "GSV", "VTG", "TXT", "DTM", "XYZ", 5, None,
                      ("GGA",), ["GGA"]]
PROPRIETARY: list[Any] = [False, True, 0, 1, "", "x", None]


def sim_lines(dialect: str, seconds: float, seed: int = 1) -> list[tuple[Decoded, float, float]]:
    """(decoded line, mono, wall) of the simulated rooftop receiver at 10 Hz in one dialect."""
    from livefix.decode.decoder import Decoder
    from livefix.framing import Framer
    from livefix.sim import Scenario, SimReceiver

    fr, dec, out = Framer(), Decoder(), []
    for mono, chunk in SimReceiver(Scenario.load("rooftop"), rate_hz=10, seed=seed, dialect=dialect).epochs(seconds):
        for ln in fr.feed(chunk):
            m = dec.decode(ln)
            if type(m) is Decoded:
                out.append((m, mono, 1.7e9 + mono))
    return out


def _wrap(rng: random.Random, d: dict) -> Any:
    x = rng.random()
    return (MappingProxyType(d) if x < 0.5 else d if x < 0.8 else _Dict(d) if x < 0.9 else _Fields(d) if x < 0.97
            else MappingProxyType(_Fields(d)))


def _odd_time(rng: random.Random, recent: list[Any]) -> Any:
    x = rng.random()
    if x < 0.4 and recent:
        return rng.choice(recent)  # an earlier line's time object: the identity memo hits, or an old time
    if x < 0.6 and recent and isinstance(recent[-1], dt.time):
        t = recent[-1]
        return dt.time(t.hour, t.minute, t.second, t.microsecond)  # equal value, another object
    return rng.choice(["", None, 5, 1.5, dt.time(23, 59, 59, 999999), dt.time(0, 0), _Time(12, 0, 1),
                       dt.time(8, 30, 0, 100000), dt.datetime(2026, 1, 1, 8, 30)])


def _mutate(rng: random.Random, msg: Decoded, recent: list[Any]) -> Any:
    """The line with a few fields changed, or rebuilt with odd talker, id, flag or object type."""
    d = dict(msg.fields)
    for _ in range(rng.choice([1, 1, 2, 3])):
        k = rng.choice(TIMED_KEYS + OTHER_KEYS)
        if k == "time":
            d[k] = _odd_time(rng, recent)
        elif k == "date":
            d[k] = rng.choice(DATES + ["", None])
        elif k in ("day", "month", "year"):
            d["year"], d["month"], d["day"] = rng.choice(YMD)
            if rng.random() < 0.2:
                d[k] = rng.choice(ODD)
        elif k == "posMode":
            d[k] = "".join(rng.choice("NSMEAPDFRXa") for _ in range(rng.randrange(0, 5)))
        elif k in ("lat", "lon") and rng.random() < 0.5:
            d[k] = rng.choice([47.5, -8.25, 3, 10**400, "", None, True])
        else:
            d[k] = rng.choice(ODD)
    if rng.random() < 0.05:
        d.pop(rng.choice(list(d) or ["x"]), None)
    fields = _wrap(rng, d) if rng.random() > 0.01 else rng.choice([None, 5, "abc"])
    talker, mid, prop = msg.talker, msg.msg_id, msg.proprietary
    y = rng.random()
    if y < 0.03:
        talker = rng.choice(TALKERS)
    elif y < 0.05:
        mid = rng.choice(MSG_IDS)
    elif y < 0.06:
        prop = rng.choice(PROPRIETARY)
    if rng.random() < 0.02:  # not a Decoded at all: read through getattr
        return SimpleNamespace(talker=talker, msg_id=mid, fields=fields, proprietary=prop)
    return Decoded(talker, mid, fields, prop)


def state_ops(rng: random.Random, base: list[tuple[Decoded, float, float]]) -> Iterator[tuple]:
    """Endless calls: ("sentence", msg, mono, wall), ("link", ev), ("marker", m), ("chunk", mono, wall),
    ("rejected", r, mono, wall), ("finish",), ("sky",). The base lines in order with some reordered,
    dropped, repeated, mutated and made up (GNS, GLL, DTM, GST/ZDA before and after the fix), host
    times that jump (the untimed gap) or step back, and the base replayed again and again."""
    shift, recent, held = 0.0, [], None
    while True:
        for msg, mono, wall in base:
            m, t = mono + shift, wall + shift
            if rng.random() < 0.002:
                shift += rng.choice([2.5, 30.0, -1.0])  # a hole in the data, or host time stepping back
            tm = getattr(msg.fields, "get", lambda k: None)("time")
            if tm is not None:
                recent = [*recent[-5:], tm]
            x = rng.random()
            if x < 0.03:
                continue  # a lost line
            if x < 0.06:
                held = (msg, m, t)  # sent after the next line
                continue
            mono_v: Any = m if rng.random() > 0.01 else rng.choice([int(m), float("nan")])
            yield "sentence", (_mutate(rng, msg, recent) if x < 0.18 else msg), mono_v, t
            if held is not None:
                yield "sentence", held[0], held[1], held[2]
                held = None
            if x > 0.98:
                yield "sentence", msg, m, t  # repeated
            z = rng.random()
            if z < 0.01:
                yield "sentence", Decoded(rng.choice(["GN", "GP"]), rng.choice(["GNS", "GLL"]), _wrap(rng, {
                    "time": _odd_time(rng, recent), "lat": 47.1, "lon": 8.5, "posMode": rng.choice(["AN", "DA", ""]),
                    "status": rng.choice(["A", "V", ""]), "alt": 400.0, "sep": 48.0, "numSV": 9})), m, t
            elif z < 0.015:
                yield "sentence", Decoded("GP", "DTM", _wrap(rng, {"datum": rng.choice(["W84", "999", ""]),
                                                                   "subDatum": rng.choice(["", "A"]), "refDatum": "W84"})), m, t
            elif z < 0.02:
                yield "sentence", Decoded("GN", rng.choice(["GST", "ZDA"]), _wrap(rng, {
                    "time": _odd_time(rng, recent), "stdLat": 1.5, "stdLong": 2, "day": 12, "month": 5, "year": 2026})), m, t
            elif z < 0.022:
                yield "link", LinkEvent(m, t, rng.choice(["streaming", "lost", "stalled"]), rng.choice(["", "x"]))
            elif z < 0.024:
                yield "marker", Marker(m, t, rng.choice(["note", "receiver restart"]))
            elif z < 0.03:
                yield "chunk", m + rng.choice([0.0, 3.0]), t
            elif z < 0.032:
                yield "rejected", Rejected(rng.choice(["bad_checksum", "malformed"]), "GGA", b"$GPGGA"), m, t
            elif z < 0.034:
                yield ("finish",)
            elif z < 0.06:
                yield ("sky",)
        shift += base[-1][1] - base[0][1] + 1.0 if base else 1.0


def _epochs(x: Any) -> str:
    return repr(x) if not isinstance(x, list) else "[" + ", ".join(repr(e) for e in x) + "]"


class StateTwin:
    """A model with the C core (c) and a reference model (p) fed the same calls, compared after each."""

    ATTRS = ("late", "epochs", "txt_suppressed", "events_dropped", "gsv_incomplete", "rejected", "_mono", "_wall",
             "_closed_tod", "_gst_ahead", "_tod", "_used_sorted", "_gsv_unreported", "link", "last_epoch", "_tod_of")

    def __init__(self, c: Any, p: Any) -> None:
        self.c, self.p = c, p
        self.prev: list[Any] = [None, None]  # the last epoch of each
        self.agreed: dict[str, tuple[int, int]] = {}  # attribute -> ids of the epochs found alike
        self.held: dict[str, tuple[Any, Any]] = {}
        self.steps = self.epochs = self.errors = self.kept = 0

    def call(self, op: tuple) -> str | None:  # noqa: C901 - one comparison after another
        """One call on both; None when they agree, else what differs."""
        out = []
        for sm in (self.c, self.p):
            try:
                if op[0] == "sentence":
                    out.append(sm.on_sentence(*op[1:]))
                elif op[0] == "link":
                    out.append(sm.on_link(op[1]))
                elif op[0] == "marker":
                    out.append(sm.on_marker(op[1]))
                elif op[0] == "chunk":
                    out.append(sm.on_chunk(*op[1:]))
                elif op[0] == "rejected":
                    out.append(sm.on_rejected(*op[1:]))
                elif op[0] == "finish":
                    out.append(sm.finish())
                else:
                    out.append(sm.sky())
            except Exception as err:  # noqa: BLE001 - the same error on both is agreement
                out.append(err)
        self.steps += 1
        rc, rp = out
        if isinstance(rc, Exception) or isinstance(rp, Exception):
            if type(rc) is not type(rp) or str(rc) != str(rp):
                return f"errors {rc!r} / {rp!r}"
            self.errors += 1
        elif type(rc) is not type(rp) or not alike(rc, rp, _epochs):
            return f"results {rc!r} / {rp!r}"
        for a in self.ATTRS:
            vc, vp = getattr(self.c, a), getattr(self.p, a)
            if type(vc) is Epoch and self.agreed.get(a) == (id(vc), id(vp)):
                continue  # the very same (frozen) epochs as at the last call, where they agreed
            if not alike(vc, vp, repr):
                return f"{a}: {vc!r} / {vp!r}"
            if type(vc) is Epoch:
                self.agreed[a] = (id(vc), id(vp))
                self.held[a] = (vc, vp)  # kept alive, so their ids stay theirs
        if (self.c._open is None) != (self.p._open is None) or self.c._used != self.p._used:
            return "open epoch or used set differ"
        ec, ep_ = self.c.drain_events(), self.p.drain_events()
        if not alike(ec, ep_, repr):
            return f"events {ec!r} / {ep_!r}"
        if isinstance(rp, list):
            for ec1, ep1 in zip(rc, rp, strict=True):
                self.epochs += 1
                pc, pp = self.prev
                same_c = (pc is not None and ec1.sats is pc.sats, pc is not None and ec1.used_prns is pc.used_prns,
                          ec1.used_prns is self.c._used_sorted, ec1 is self.c.last_epoch)
                same_p = (pp is not None and ep1.sats is pp.sats, pp is not None and ep1.used_prns is pp.used_prns,
                          ep1.used_prns is self.p._used_sorted, ep1 is self.p.last_epoch)
                if same_c[:3] != same_p[:3]:
                    return f"identity of sats/used_prns differs: {same_c} / {same_p}"
                self.kept += same_p[0]
                self.prev = [ec1, ep1]
        return None


def state_diff(calls: int, seed: int = 1, dialects: tuple[str, ...] = ("clean", "multi-talker-gga", "zda-late")
               ) -> tuple[int, int, list[str]]:
    """(calls, disagreements, first examples) of the C core against the reference."""
    from livefix.state.model import StateModel

    rng = random.Random(seed)
    base = [x for d in dialects for x in sim_lines(d, 20.0, seed)]
    twin = StateTwin(StateModel(native=True), StateModel(native=False))
    bad, examples = 0, []
    for _, op in zip(range(calls), state_ops(rng, base), strict=False):
        why = twin.call(op)
        if why is not None:
            bad += 1
            if len(examples) < 5:
                examples.append(f"{op!r}: {why}"[:400])
            twin = StateTwin(StateModel(native=True), StateModel(native=False))  # go on from a clean start
    return calls, bad, examples


def load_state_core(path: str) -> None:
    """Use the core built at `path` (the sanitizer build) as livefix.state._statecore."""
    import livefix.state
    from livefix.state import model

    mod = load_ext("livefix.state._statecore", path)
    livefix.state._statecore = mod  # type: ignore[attr-defined]
    model._CORE = mod
