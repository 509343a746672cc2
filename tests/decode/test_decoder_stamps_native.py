"""The attribute cache of the C twin of Decoder.decode (livefix._native.DecoderFront): it keeps what
the decoder's __dict__ held while the dict's modification stamp stays the same, and looks again
whenever anything else wrote there. Each test changes the decoder's attributes from outside in a
way the cache must notice (between lines and in the middle of a line), then compares the twin
with the reference method over the same C parse after every line: the result, its identity on
repeats, the line cache, the pending counts and the GSV counters.
"""

from __future__ import annotations

import logging
import random
from typing import Any

import pytest

from livefix.checksum import with_checksum
from livefix.decode import Decoded
from livefix.decode import decoder as decoder_mod
from livefix.decode.decoder import Decoder
from livefix.sim import Scenario, SimReceiver

native = pytest.importorskip("livefix._native", reason="livefix._native is not built (no compiler?)")
if not hasattr(native, "DecoderFront"):
    pytest.skip("livefix._native was built without DecoderFront", allow_module_level=True)


def _lines(seconds: float = 3.0) -> list[bytes]:
    rx = SimReceiver(Scenario.load("rooftop"), rate_hz=10, seed=3, dialect="clean")
    out: list[bytes] = []
    for _, chunk in rx.epochs(seconds):
        out += chunk.split(b"\r\n")[:-1]
    return out


def _gsv(k: int) -> bytes:
    """A GSV line (NMEA 0183 4.11 layout: 3 header fields, 4 per satellite) unique for each k."""
    sats = ",".join(f"{s:02d},{(k + s) % 90:02d},{(7 * k + s) % 360:03d},{(k + s) % 60:02d}" for s in range(1, 5))
    return with_checksum(f"GPGSV,3,1,12,{sats}").encode()


class Pair:
    """The twin (c) and the reference method over the same C parse (w), compared after each line."""

    def __init__(self, line_cache: int = 1024) -> None:
        self.c = Decoder(line_cache, native=True, front=True)
        self.w = Decoder(line_cache, native=True, front=False)
        assert "decode" in vars(self.c) and "decode" not in vars(self.w)
        self.prev: dict[bytes, tuple[Any, Any]] = {}
        self.hits = 0

    def both(self, fn: Any) -> None:
        """The same change on both decoders."""
        fn(self.c)
        fn(self.w)

    def step(self, line: bytes) -> None:
        rc, rw = self.c.decode(line), self.w.decode(line)
        where = f"{line!r:.100}"
        assert type(rc) is type(rw) and repr(rc) == repr(rw), where
        if type(rc) is Decoded:
            assert type(rc.fields) is type(rw.fields), where
            old = self.prev.get(line)
            if old is not None:
                assert (old[0] is rc) == (old[1] is rw), where
                self.hits += old[1] is rw
            self.prev[line] = (rc, rw)
        c, w = self.c, self.w
        assert getattr(c, "_cacheable", None) is getattr(w, "_cacheable", None), where
        assert repr(c._pending) == repr(w._pending), where
        assert (repr(c._gsv_hits), repr(c._gsv_ins)) == (repr(w._gsv_hits), repr(w._gsv_ins)), where
        assert list(c._lines) == list(w._lines), where

    def feed(self, lines: list[bytes]) -> None:
        for ln in lines:
            self.step(ln)


def test_attributes_replaced_between_lines_are_read_again() -> None:
    lines = _lines()
    t = Pair()
    t.feed(lines)  # warm: the twin has its attributes cached
    # each change must be seen on the next line, not the cached value
    changes = [
        lambda d: setattr(d, "_lines", {}),  # a fresh line cache: no hit for lines seen before
        lambda d: setattr(d, "_pending", {"GPGSV": 5}),
        lambda d: setattr(d, "_gsv_hits", 10**6),  # a big count: GSV stays cacheable at the next refill
        lambda d: setattr(d, "_cacheable", decoder_mod._REPEATING),  # GSV leaves the cache
        lambda d: setattr(d, "_cache_max", 0),  # the cache off
        lambda d: setattr(d, "_cache_max", 8),  # back on, tiny: refills
        lambda d: setattr(d, "_gsv_ins", 2.5),  # a float count: the twin's int-only shortcut steps aside
        lambda d: setattr(d, "_gsv_hits", True),
        lambda d: d.__dict__.pop("_cacheable"),  # the class has no default: AttributeError -> internal
        lambda d: setattr(d, "_cacheable", decoder_mod._WITH_GSV),
    ]
    for change in changes:
        t.both(change)
        with_logs_quiet(t.feed, lines[:200])
    assert t.hits > 100 and t.c.counters.internal_errors == t.w.counters.internal_errors > 0


def test_a_swapped_parse_after_warm_up_goes_to_the_reference() -> None:
    lines = _lines(1.0)
    t = Pair()
    t.feed(lines)
    calls: list[bytes] = []
    real = t.c._native
    t.c._native = lambda ln: calls.append(ln) or real(ln)  # only the twin's: it must call it
    fresh = [_gsv(k) for k in range(50)]
    for ln in fresh:
        assert repr(t.c.decode(ln)) == repr(t.w.decode(ln))
    assert calls == fresh
    t.c._native = real
    t.c._make = None  # the Python make: still the same results, through the reference
    for ln in [_gsv(k) for k in range(50, 80)]:
        assert repr(t.c.decode(ln)) == repr(t.w.decode(ln))
    assert "_make" in vars(t.c) and t.c._make is None


def test_a_non_str_key_in_the_instance_dict_turns_the_cache_off() -> None:
    # a key of another type could run code in a dict write; results stay the reference's
    t = Pair()
    t.both(lambda d: d.__dict__.__setitem__(1, "odd"))
    lines = _lines(2.0)
    t.feed(lines)
    t.feed(lines)
    t.both(lambda d: d.__dict__.pop(1))
    t.feed(lines)
    assert t.hits > 100


class _Meddling(dict):
    """A _pending mapping whose update changes the decoder's other attributes in the middle of a line
    (after the twin read them): the rest of that line and the next lines must see the new values."""

    def __init__(self, owner: list[Decoder], every: int) -> None:
        super().__init__()
        self.owner, self.every, self.n = owner, every, 0

    def __setitem__(self, key: str, value: int) -> None:
        super().__setitem__(key, value)
        self.n += 1
        if self.n % self.every == 0:
            d = self.owner[0]
            d._lines = {}
            d._gsv_hits = d._gsv_hits + 1


def test_writes_in_the_middle_of_a_line_are_seen() -> None:
    t = Pair(line_cache=64)
    for d in (t.c, t.w):
        box: list[Decoder] = [d]
        d._pending = _Meddling(box, 40)
    lines = _lines(3.0) + [_gsv(k) for k in range(300)]
    t.feed(lines + lines)
    assert t.hits > 50 and t.c._pending.n == t.w._pending.n > 0


class _Count:
    """A hit count whose addition (self._gsv_hits += hit[2], between the twin's read of the count and
    its write) replaces the decoder's line cache: the write must not vouch for the stale cache."""

    def __init__(self, owner: Decoder) -> None:
        self.owner = owner

    def __radd__(self, other: Any) -> Any:
        self.owner._lines = {}
        return other + 1


@pytest.mark.parametrize("start", [0, 10**30, 7.5])
def test_code_run_by_the_count_update_is_seen(start: Any) -> None:
    lines = _lines(1.0)
    t = Pair()
    t.feed(lines)
    t.both(lambda d: setattr(d, "_gsv_hits", start))
    planted = lines[-1]
    for d in (t.c, t.w):
        hdr, value, _ = d._lines[planted]
        d._lines[planted] = (hdr, value, _Count(d))
    t.step(planted)
    assert t.c._lines == t.w._lines == {}
    t.feed(lines)  # no hit may come from the replaced cache
    assert t.c._lines.keys() == t.w._lines.keys() and len(t.c._lines) > 0


def test_random_attribute_churn() -> None:
    rng = random.Random(5)
    lines = _lines(2.0) + [_gsv(k) for k in range(100)]
    t = Pair(line_cache=32)
    values: dict[str, list[Any]] = {
        "_cache_max": [0, 4, 32, 1024],
        "_gsv_hits": [0, 3, 10**20, -1],
        "_gsv_ins": [0, 1, 10**20],
        "_cacheable": [decoder_mod._REPEATING, decoder_mod._WITH_GSV, frozenset()],
    }
    for _ in range(3000):
        if rng.random() < 0.05:
            name = rng.choice(sorted(values))
            v = rng.choice(values[name])
            t.both(lambda d, name=name, v=v: setattr(d, name, v))
        t.step(rng.choice(lines))
    assert t.hits > 100


def with_logs_quiet(fn: Any, *args: Any) -> None:
    """Internal errors are logged at CRITICAL with a traceback; they are outcomes here."""
    log = logging.getLogger("livefix")
    level = log.level
    log.setLevel(logging.CRITICAL + 1)
    try:
        fn(*args)
    finally:
        log.setLevel(level)
