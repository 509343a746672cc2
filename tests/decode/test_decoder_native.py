"""The C twin of Decoder.decode (livefix._native.DecoderFront) against the Python reference, step by
step: after every line the returned object (type, values, identity across repeats), the line
cache, the pending counts, the GSV cache switch and the counters must be those of the reference.

Three decoders see each line: the twin; the reference method over the same C parse (only the
wrapper differs, so everything must match exactly); and the pure decoder (no C at all, so the
values and the folded counters must match). Inputs: the recordings, the shared real-data corpus,
every simulator dialect, random and mutated lines, odd types, and cache-churn streams that flip the
GSV cache switch both ways.
"""

from __future__ import annotations

import logging
import operator
import random
import threading
from collections.abc import Iterable
from pathlib import Path
from typing import Any

import pytest
from twinkit import CORPUS, CORPUS_FILES, ROOT

from livefix.checksum import with_checksum
from livefix.decode import INTERNAL, Decoded, Rejected
from livefix.decode import decoder as decoder_mod
from livefix.decode.decoder import Decoder
from livefix.framing import Framer
from livefix.items import Chunk
from livefix.record.reader import RecordingReader
from livefix.sim import Scenario, SimReceiver
from livefix.sim.dialects import DIALECTS
from livefix.sources import open_source

native = pytest.importorskip("livefix._native", reason="livefix._native is not built (no compiler?)")
if not hasattr(native, "DecoderFront"):
    pytest.skip("livefix._native was built without DecoderFront", allow_module_level=True)


def _value(r: Any) -> str:
    """A result as text, the fields as a plain dict (the pure path may not cache what the C parse
    caches, so a view there can be a dict here)."""
    if type(r) is Decoded:
        return repr(("Decoded", r.talker, r.msg_id, dict(r.fields), r.proprietary))
    return repr(r)


HEAD_GSV = operator.itemgetter(0, 2)  # a line cache entry's head and GSV parts


class Trio:
    """The twin (c), the reference wrapper over the same C parse (w) and the pure decoder (p)."""

    def __init__(self, line_cache: int = 1024) -> None:
        self.c = Decoder(line_cache, native=True, front=True)
        self.w = Decoder(line_cache, native=True, front=False)
        self.p = Decoder(line_cache, native=False)
        assert "decode" in vars(self.c) and "decode" not in vars(self.w) and "decode" not in vars(self.p)
        self.seen: dict[Any, tuple[Any, Any]] = {}
        self.steps = self.hits = self.flips = 0
        self.last_cacheable = self.w._cacheable

    def step(self, line: Any, where: str = "") -> None:
        out = []
        for d in (self.c, self.w, self.p):
            try:
                out.append(("ok", d.decode(line)))
            except Exception as err:  # noqa: BLE001 - an exception is an outcome to compare
                out.append(("raise", err))
        (kc, rc), (kw, rw), (kp, rp) = out
        where = f"{where} step {self.steps}: {line!r:.120}"
        self.steps += 1
        assert kc == kw == kp, where
        if kc == "raise":
            assert type(rc) is type(rw) is type(rp) and str(rc) == str(rw) == str(rp), where
            return
        assert type(rc) is type(rw) and repr(rc) == repr(rw), where  # repr: 1 and 1.0 and True differ
        assert _value(rc) == _value(rp), where
        if type(rc) is Decoded:
            assert type(rc.fields) is type(rw.fields), where  # a read-only view exactly when cached
            key = bytes(line)
            prev = self.seen.get(key)
            if prev is not None:  # a cache hit hands back the very same object, both ways
                assert (prev[0] is rc) == (prev[1] is rw), where
                assert (prev[0].fields is rc.fields) == (prev[1].fields is rw.fields), where
                self.hits += prev[1] is rw
            self.seen[key] = (rc, rw)
        c, w = self.c, self.w
        assert c._cacheable is w._cacheable, where
        self.flips += w._cacheable is not self.last_cacheable
        self.last_cacheable = w._cacheable
        assert list(c._pending.items()) == list(w._pending.items()), where
        assert (c._gsv_hits, c._gsv_ins) == (w._gsv_hits, w._gsv_ins), where
        assert (type(c._gsv_hits), type(c._gsv_ins)) == (type(w._gsv_hits), type(w._gsv_ins)), where
        assert list(c._lines) == list(w._lines), where
        assert list(map(HEAD_GSV, c._lines.values())) == list(map(HEAD_GSV, w._lines.values())), where

    def finish(self) -> None:
        """The folded counters: the twin's equal the reference wrapper's and the pure decoder's."""
        cc, cw, cp = self.c.counters, self.w.counters, self.p.counters
        assert repr(cc) == repr(cw)
        for name in ("decoded", "bad_checksum", "malformed", "unknown", "proprietary", "internal_errors"):
            assert getattr(cc, name) == getattr(cp, name), name
        assert (cc.by_type, cc.by_talker_type, cc.rejected_by_type) == (cp.by_type, cp.by_talker_type,
                                                                         cp.rejected_by_type)


def feed_all(t: Trio, lines: Iterable[Any], where: str = "") -> Trio:
    for i, ln in enumerate(lines):
        t.step(ln, where)
        if i % 997 == 996:  # fold the pending counts midway too, on all three at once
            _ = (t.c.counters, t.w.counters, t.p.counters)
            assert t.c._pending == t.w._pending == {}
    t.finish()
    return t


def framed(chunks: Iterable[bytes]) -> list[bytes]:
    fr = Framer()
    out: list[bytes] = []
    for data in chunks:
        out += fr.feed(data)
    return out + fr.finish()


def recording_lines(path: Path) -> list[bytes]:
    return framed(it.data for it in RecordingReader(str(path)).items() if type(it) is Chunk)


# -- wiring -------------------------------------------------------------------------------------

def test_the_switches(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    assert "decode" in vars(Decoder(native=True))  # the twin by default when built
    assert "decode" not in vars(Decoder(native=False))  # no C parse: the reference
    assert "decode" not in vars(Decoder(front=False))
    monkeypatch.setenv("LIVEFIX_PURE", "1")
    assert "decode" not in vars(Decoder(native=True))
    assert "decode" in vars(Decoder(native=True, front=True))  # tests ask for it explicitly
    with pytest.raises(RuntimeError):
        Decoder(native=False, front=True)
    monkeypatch.setattr(decoder_mod, "_CORE", None)
    monkeypatch.delenv("LIVEFIX_PURE")
    with pytest.raises(RuntimeError):
        Decoder(native=True, front=True)


def test_a_subclass_that_overrides_decode_keeps_it() -> None:
    class Own(Decoder):
        def decode(self, line: bytes) -> Decoded | Rejected:
            return super().decode(line)

    assert "decode" not in vars(Own(native=True, front=True))


# -- real and simulated streams -------------------------------------------------------------------

@pytest.mark.parametrize("name", sorted(p.name for p in (ROOT / "recordings").glob("*.lfr")))
def test_recordings(name: str) -> None:
    lines = recording_lines(ROOT / "recordings" / name)
    t = feed_all(Trio(), lines, name)
    assert t.steps == len(lines) > 1000 and t.hits > 100  # cache hits were compared too


@pytest.mark.skipif(not CORPUS_FILES, reason="shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
@pytest.mark.parametrize("name", CORPUS_FILES)
def test_corpus_logs(name: str) -> None:
    # shared/realdata/corpus/<name>: a public log, source in shared/realdata/SOURCES.md
    items = open_source(str(CORPUS / name), speed=None).items(threading.Event())
    lines = framed(it.data for it in items if type(it) is Chunk)
    assert feed_all(Trio(), lines, name).steps == len(lines)


ALL_AT_ONCE = ",".join(n for n in DIALECTS if n not in (  # the dialects that combine
    "rate-5hz", "rate-10hz", "rate-20hz", "gga-2hz-zda-1hz", "rmc-10hz-gga-1hz", "gns-only"))
DIALECT_RUNS = ["clean", *DIALECTS, ALL_AT_ONCE]


@pytest.mark.parametrize("dialect", DIALECT_RUNS)
def test_simulator_dialects(dialect: str) -> None:
    rx = SimReceiver(Scenario.load("rooftop"), rate_hz=10, seed=1, dialect=dialect)
    lines = framed(chunk for _, chunk in rx.epochs(30.0))
    assert feed_all(Trio(), lines, dialect).steps == len(lines) > 0


# -- random, mutated and odd inputs ------------------------------------------------------------------

def _base_lines() -> list[bytes]:
    rx = SimReceiver(Scenario.load("rooftop"), rate_hz=10, seed=2, dialect=ALL_AT_ONCE)
    return framed(chunk for _, chunk in rx.epochs(5.0))


def _mutate(rng: random.Random, ln: bytes) -> Any:
    """One damaged or oddly typed version of a good line."""
    k = rng.randrange(12)
    b = bytearray(ln)
    if k == 0 and len(b) > 2:  # a flipped character: usually a bad checksum
        b[rng.randrange(1, len(b))] ^= 1 << rng.randrange(7)
    elif k == 1:  # the checksum in lower case (NMEA 0183 allows either case)
        return bytes(b).lower()[:1] + bytes(b)[1:-2] + bytes(b)[-2:].lower()
    elif k == 2:  # overlong: padded past the 128 bytes of the fast shape, checksum fixed
        body = ln[1:ln.rfind(b"*")] + b"," * rng.randrange(60, 120)
        return with_checksum(body.decode("ascii", "replace")).encode("ascii", "replace")
    elif k == 3:
        b.insert(rng.randrange(len(b) + 1), 0)  # a NUL
    elif k == 4:
        b.insert(rng.randrange(len(b) + 1), rng.randrange(128, 256))  # non-ASCII
    elif k == 5:
        return bytearray(ln)
    elif k == 6:
        return memoryview(ln)
    elif k == 7:
        return bytes(b[: rng.randrange(len(b) + 1)])  # cut
    elif k == 8:  # a field replaced by junk, checksum recomputed: the reference decides
        parts = ln[1:ln.rfind(b"*")].split(b",")
        parts[rng.randrange(len(parts))] = rng.choice([b"", b"x", b"1e5", b"-", b"nan", b"999999999999"])
        return with_checksum(b",".join(parts).decode("ascii")).encode("ascii")
    elif k == 9:
        return bytes(rng.randrange(256) for _ in range(rng.randrange(40)))
    elif k == 10:
        return rng.choice([None, 7, 1.5, float("nan"), "$GPGSA,A,3*00", (), b"", b"$", b"*00"])
    return bytes(b)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_random_and_mutated_lines(seed: int, caplog: pytest.LogCaptureFixture) -> None:
    rng = random.Random(seed)
    base = _base_lines()
    lines = [_mutate(rng, rng.choice(base)) if rng.random() < 0.5 else rng.choice(base) for _ in range(6000)]
    with caplog.at_level(logging.CRITICAL, logger="livefix"):  # odd types count as internal errors
        t = feed_all(Trio(), lines, f"seed {seed}")
    assert t.hits > 100 and t.c.counters.bad_checksum > 0 and t.c.counters.internal_errors > 0


def _gsv(rng: random.Random, k: int) -> bytes:
    """A GSV line (NMEA 0183 4.11 layout: 3 header fields, 4 per satellite) unique for each k."""
    sats = ",".join(f"{s:02d},{rng.randrange(90):02d},{rng.randrange(360):03d},{(k + s) % 60:02d}"
                    for s in range(1, 5))
    return with_checksum(f"GPGSV,3,1,12,{sats}").encode()


def _gsa(k: int) -> bytes:
    return with_checksum(f"GPGSA,A,3,{k % 32 + 1:02d},,,,,,,,,,,,{1 + k / 1000:.3f},1.0,1.0").encode()


@pytest.mark.parametrize("line_cache", [16, 1024])
def test_cache_churn_flips_the_gsv_switch_both_ways(line_cache: int) -> None:
    rng = random.Random(line_cache)
    n = line_cache * 3
    # phase 1: distinct GSV lines (no repeats: GSV leaves the cache); phase 2: distinct GSA lines
    # (GSV gets back in at the next refill); phase 3: a few GSV lines over and over (it stays)
    fresh = [_gsv(rng, k) for k in range(n)]
    gsa = [_gsa(k) for k in range(n)]
    few = [_gsv(rng, k) for k in range(4)]
    t = Trio(line_cache)
    states = []
    for part in (fresh, gsa, [few[i % 4] for i in range(n)], fresh):
        feed_all(t, part)
        states.append(t.w._cacheable)
    assert decoder_mod._REPEATING in states and decoder_mod._WITH_GSV in states
    assert t.flips >= 2 and t.hits > n // 2


def test_no_cache() -> None:
    t = feed_all(Trio(line_cache=0), _base_lines() * 2)
    assert len(t.c._lines) == 0 and t.hits == 0


def test_swapped_parse_goes_to_the_reference() -> None:
    """A decoder whose C parse was swapped after construction: the twin defers to the method."""
    t = Trio()
    seen: dict[str, list[bytes]] = {"c": [], "w": []}
    for name, d in (("c", t.c), ("w", t.w)):
        real = d._native
        d._native = lambda ln, real=real, log=seen[name]: log.append(ln) or real(ln)
    feed_all(t, _base_lines()[:300])
    assert seen["c"] == seen["w"] and len(seen["c"]) > 100  # every miss went through the swapped parse


def test_broken_state_ends_in_internal_as_in_the_reference(caplog: pytest.LogCaptureFixture) -> None:
    """A bug of livefix's own (here a lost _pending) on the hit path and on the miss path: the twin
    ends in Decoder._internal with the reference's exception, so the counters and the message agree."""
    t = Trio()
    line = _gsa(1)
    t.step(line)
    for d in (t.c, t.w):
        d._pending = None
    with caplog.at_level(logging.CRITICAL, logger="livefix"):
        got = [(d.decode(line), d.decode(_gsa(2))) for d in (t.c, t.w)]
    assert repr(got[0]) == repr(got[1]) and {r.reason for pair in got for r in pair} == {INTERNAL}
    for d in (t.c, t.w):
        d._pending = {}
    assert repr(t.c.decode(line)) == repr(t.w.decode(line))
    c, w = t.c.counters, t.w.counters
    assert repr(c) == repr(w) and c.internal_errors == 2
    assert c.last_internal_error == "Decoder.decode: AttributeError: 'NoneType' object has no attribute 'get'"
