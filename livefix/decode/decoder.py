"""The decoder: checksum and header checks, the fast path, the pynmeagps fallback, counters.

One line in, one `Decoded` or `Rejected` out; nothing raises on stream content. The checksum is
checked here for every line (NMEA 0183: XOR of the characters between '$'/'!' and '*', two hex
digits, either case) so that a refused line gets the same reason whichever path would decode it.
"""

from __future__ import annotations

import os
from types import MappingProxyType
from typing import Any

from pynmeagps import NMEAReader
from pynmeagps.nmeatypes_core import NMEA_MSGIDS_PROP, NMEA_PREFIX_PROP, NMEA_TALKERS, VALCKSUM
from pynmeagps.nmeatypes_get import NMEA_PAYLOADS_GET

from livefix.checksum import XOR16 as _XOR16
from livefix.checksum import xor_checksum
from livefix.decode import (
    BAD_CHECKSUM,
    INTERNAL,
    MALFORMED,
    NO_CHECKSUM,
    UNKNOWN,
    DecodeCounters,
    Decoded,
    Rejected,
)
from livefix.decode.fast import FAST_TYPES, fast_decoders
from livefix.faults import log_internal
from livefix.framing import built_core, native_core
from livefix.timefmt import YY_PIVOT

_HEX = frozenset("0123456789abcdefABCDEF")
_TALKERS = frozenset(t for t in NMEA_TALKERS if len(t) == 2)
_KNOWN = frozenset(NMEA_PAYLOADS_GET)
_PROP_KNOWN = frozenset(NMEA_MSGIDS_PROP) | frozenset(NMEA_PREFIX_PROP)
def _public(msg: Any) -> dict[str, Any]:
    return {k: v for k, v in vars(msg).items() if not k.startswith("_")}


# "*4b" -> what the XOR of a whole "$...*4b" line must be: 0x4B ^ '$' ^ '*' ^ '4' ^ 'b'.
_STARHEX = {f"*{a}{b}": int(a + b, 16) ^ 0x24 ^ 0x2A ^ ord(a) ^ ord(b) for a in _HEX for b in _HEX}
# "$GPGGA," -> (header, talker, msg_id) for every accepted talker and fast type; each Decoder adds
# its own field decoder (its own conversion caches) to these.
_FAST_HDR = {f"${t}{m},": (t + m, t, m) for t in _TALKERS for m in FAST_TYPES}
_CORE = built_core()
if _CORE is not None:
    _CORE.configure(sorted(_TALKERS), YY_PIVOT)  # the same talkers and year pivot as this module
_NATIVE = native_core()  # the default for a Decoder (LIVEFIX_PURE=1 makes it None)
# Types whose lines often repeat byte for byte (no time field); only these enter the line cache.
_REPEATING = frozenset({"GSA", "VTG"})
# GSV lines repeat too when a receiver refreshes its satellite list slower than its epoch rate
# (common at 10-20 Hz), but not when C/N0 changes every epoch: they are cached only while a
# refill of the cache shows enough hits (the cache is exact either way; this only saves time).
_WITH_GSV = _REPEATING | {"GSV"}
_MIN_HIT_SHARE = 0.25
_new = object.__new__
_ReadOnly = MappingProxyType
_set_talker, _set_id, _set_fields, _set_prop = (Decoded.talker.__set__, Decoded.msg_id.__set__,
                                                Decoded.fields.__set__, Decoded.proprietary.__set__)
# Decoded's slots in field order: the C core's make() sets all four in one call (with the core only)
_SLOTS = (Decoded.talker, Decoded.msg_id, Decoded.fields, Decoded.proprietary)


class Decoder:
    """Sans-I/O decoder with running counters; see livefix.decode for the contract.

    Fast-path successes are tallied per header ("GPGSV") in a private dict and folded into
    `counters` whenever it is read, which keeps the per-line cost to one dict update.
    Not thread-safe: one decoder per pipeline.
    """

    def __init__(self, line_cache: int = 1024, native: bool | None = None, front: bool | None = None) -> None:
        """line_cache: how many recent fast-path lines to remember (0 turns the cache off).
        native: use the C core (livefix/_native.c) for the common shape of a fast-type line; None
        follows livefix.framing.native_core() (built, and LIVEFIX_PURE is not "1"). The C core
        hands every unusual line back to the Python path below, so the results are the same.

        Receivers repeat GSA and VTG sentences byte for byte for long stretches; a repeat then
        costs one dict lookup and returns the same Decoded object (its fields are shared, which is
        why Decoded.fields is read-only by contract), so later stages can memoise by identity.

        front: decode() itself in C (livefix._native.DecoderFront over this instance's attributes,
        the same results and state; only with the C core): None when it is built and LIVEFIX_PURE
        is not "1"; True: it or RuntimeError (tests); False: the method below, the reference.
        """
        self._counters = DecodeCounters()
        self._pending: dict[str, int] = {}
        self._cache_max = max(0, line_cache)
        self._lines: dict[bytes, tuple[str, Decoded, int]] = {}  # line -> (header, value, is GSV)
        self._cacheable = _WITH_GSV
        self._gsv_hits = self._gsv_ins = 0  # GSV cache hits / insertions since the last refill
        self._fast = fast_decoders()  # this decoder's own bounded conversion caches (issue 14)
        self._hdrs = {k: (*v, self._fast[v[2]]) for k, v in _FAST_HDR.items()}
        if native is None:
            native = _NATIVE is not None
        elif native and _CORE is None:
            raise RuntimeError("the C core livefix._native is not built")
        self._native = _CORE.decode if native and _CORE is not None else None
        self._make = _CORE.make if native and _CORE is not None else None
        _attach_front(self, front)

    @property
    def counters(self) -> DecodeCounters:
        """Up-to-date counts (the same object every time; copy() it for a snapshot)."""
        if self._pending:
            c, pend = self._counters, self._pending
            self._pending = {}
            for hdr, n in pend.items():
                m = hdr[2:]
                c.decoded += n
                c.fast += n
                c.by_type[m] = c.by_type.get(m, 0) + n
                c.by_talker_type[hdr] = c.by_talker_type.get(hdr, 0) + n
        return self._counters

    # -- outcomes -------------------------------------------------------------------------------
    def _ok(self, talker: str, msg_id: str, fields: dict[str, Any], proprietary: bool = False) -> Decoded:
        c = self._counters
        c.decoded += 1
        if proprietary:
            c.proprietary += 1
        c.by_type[msg_id] = c.by_type.get(msg_id, 0) + 1
        tt = talker + msg_id
        c.by_talker_type[tt] = c.by_talker_type.get(tt, 0) + 1
        return Decoded(talker, msg_id, fields, proprietary)

    def _no(self, reason: str, msg_id: str, raw: bytes, detail: str = "") -> Rejected:
        c = self._counters
        if reason == BAD_CHECKSUM:
            c.bad_checksum += 1
        elif reason == UNKNOWN:
            c.unknown += 1
        else:
            c.malformed += 1
        c.rejected_by_type[msg_id] = c.rejected_by_type.get(msg_id, 0) + 1
        return Rejected(reason, msg_id, raw, detail)

    # -- main entry -----------------------------------------------------------------------------
    def decode(self, line: bytes) -> Decoded | Rejected:
        """Decode one framed sentence (no CR/LF). Never raises on content."""
        try:
            if line.__class__ is not bytes:  # a bytearray or memoryview: decode a bytes copy
                line = bytes(line)
            hit = self._lines.get(line)
            if hit is not None:  # the very same line as before: the very same Decoded value
                pend = self._pending
                pend[hit[0]] = pend.get(hit[0], 0) + 1
                self._gsv_hits += hit[2]
                return hit[1]
            r = self._native(line) if self._native is not None else None
            if r is not None:  # the C core took the line: ((header, talker, msg_id), fields)
                hit, fields = r
            else:
                # The common case inline: "$TTMMM,...*hh", ASCII, fast type, at most 128 bytes.
                try:
                    s = line.decode("ascii")
                except UnicodeDecodeError:
                    return self._decode(line)
                hit = self._hdrs.get(s[:7])
                want = _STARHEX.get(s[-3:])
                if hit is None or want is None or len(line) > 128 or s.find("*", 7, -3) >= 0:
                    return self._decode(line)
                # Checksum: fold the whole line; `want` already holds the XOR of '$', '*' and
                # the two hex characters on top of the stated value, so no slice is needed.
                # In-place folds: after `x ^= x >> k` the low k bits hold the XOR of the two
                # halves and the bits above are never read again; <= 64 bytes need no 512 fold.
                x = int.from_bytes(line, "little")
                if len(line) > 64:
                    x ^= x >> 512
                x ^= x >> 256
                x ^= x >> 128
                x ^= x >> 64
                x ^= x >> 32
                if _XOR16[(x ^ (x >> 16)) & 65535] != want:
                    return self._decode(line)
                try:
                    fields = hit[3](s[7:-3].split(","))
                except ValueError:  # pynmeagps raises NMEATypeError for the same text
                    return self._no(MALFORMED, hit[2], line, "bad numeric field")
                except Exception:  # unusual shape: let the reference decide
                    return self._fallback(line, hit[1], hit[2])
            if self._cache_max and hit[2] in self._cacheable:
                lines = self._lines
                if len(lines) >= self._cache_max:
                    # a full cache: keep GSV in it only if repeats paid off since the last refill
                    self._cacheable = (_WITH_GSV if self._gsv_hits >= _MIN_HIT_SHARE * self._gsv_ins
                                       else _REPEATING)
                    self._gsv_hits = self._gsv_ins = 0
                    lines.clear()
                gsv = int(hit[2] == "GSV")
                self._gsv_ins += gsv
            else:
                lines = None
            hdr = hit[0]
            pend = self._pending
            pend[hdr] = pend.get(hdr, 0) + 1
            # a cached value is shared from now on: read-only, so no consumer can change it
            if lines is not None:
                fields = _ReadOnly(fields)
            make = self._make
            if make is not None:
                d = make(_SLOTS, (hit[1], hit[2], fields, False))
            else:
                d = _new(Decoded)
                _set_talker(d, hit[1])
                _set_id(d, hit[2])
                _set_fields(d, fields)
                _set_prop(d, False)
            if lines is not None:
                lines[line] = (hdr, d, gsv)
            return d
        except Exception as err:  # last line of defence: livefix's own bug, not bad input
            return self._internal(line, err)

    def _internal(self, line: bytes, err: Exception) -> Rejected:
        """Count and log (with traceback) an exception of the decoder itself; the line is refused
        with reason INTERNAL and does not count as malformed input."""
        c = self._counters
        c.internal_errors += 1
        c.last_internal_error = f"Decoder.decode: {type(err).__name__}: {err}"
        log_internal(c.internal_errors, "Decoder.decode", err)
        return Rejected(INTERNAL, "?", bytes(line), f"internal: {type(err).__name__}")

    def _decode(self, line: bytes) -> Decoded | Rejected:
        """The general path: every check spelled out, each refusal with its reason."""
        if not line.isascii():
            return self._no(MALFORMED, _guess_id(line), line, "non-ASCII bytes")
        star = line.find(b"*")
        if star < 0 or len(line) - star < 3:
            return self._no(NO_CHECKSUM, _guess_id(line), line, "no *hh checksum")
        lead = line[:1]
        if lead != b"$" and lead != b"!":
            return self._no(MALFORMED, "?", line, "does not start with $ or !")
        s = line.decode("ascii")
        cks = s[star + 1 :]
        if len(cks) != 2 or cks[0] not in _HEX or cks[1] not in _HEX:
            return self._no(BAD_CHECKSUM, _guess_id(line), line, f"checksum field {cks!r}")
        body = s[1:star]
        if xor_checksum(line[1:star]) != int(cks, 16):
            return self._no(BAD_CHECKSUM, _guess_id(line), line, "checksum mismatch")
        hdr, comma, rest = body.partition(",")
        if not hdr.isalnum():
            return self._no(MALFORMED, "?", line, "bad header")
        if hdr[0] == "P" and lead == b"$":
            return self._proprietary(line, hdr[1:], body)
        talker, msg_id = hdr[:2], hdr[2:]
        if lead != b"$" or talker not in _TALKERS or msg_id not in _KNOWN:
            return self._no(UNKNOWN, msg_id or "?", line, f"unknown sentence {hdr}")
        if msg_id in FAST_TYPES:
            try:
                fields = self._fast[msg_id](rest.split(",") if comma else [])
            except ValueError:  # pynmeagps raises NMEATypeError for the same text
                return self._no(MALFORMED, msg_id, line, "bad numeric field")
            except Exception:  # unusual shape: let the reference decide
                return self._fallback(line, talker, msg_id)
            self._counters.fast += 1
            return self._ok(talker, msg_id, fields)
        return self._fallback(line, talker, msg_id)

    def _fallback(self, line: bytes, talker: str, msg_id: str) -> Decoded | Rejected:
        try:
            msg = NMEAReader.parse(line, validate=VALCKSUM)
        except Exception as err:  # NMEAParseError, NMEATypeError, anything else
            return self._no(MALFORMED, msg_id, line, f"{type(err).__name__}: {err}"[:200])
        if msg is None:
            return self._no(MALFORMED, msg_id, line, "unparseable")
        return self._ok(talker, msg_id, _public(msg))

    def _proprietary(self, line: bytes, text: str, body: str) -> Decoded:
        """Pass proprietary sentences through; add pynmeagps attributes only if it knows the type."""
        payload = body.split(",")[1:]
        fields: dict[str, Any] = {"payload": payload}
        if text in _PROP_KNOWN:
            try:
                msg = NMEAReader.parse(line, validate=VALCKSUM)
                if msg is not None:
                    fields = {**_public(msg), "payload": payload}
            except Exception:  # noqa: S110 - unknown variant: the raw payload is still delivered
                pass
        return self._ok("P", text or "?", fields, proprietary=True)


def _attach_front(dec: Decoder, front: bool | None) -> None:
    """Rebind dec.decode to the C twin (see Decoder.__init__'s front); a subclass that overrides
    decode keeps its own. The twin reads _native/_make per call and runs this module's decode for
    any line or state it does not handle itself."""
    kind = getattr(_CORE, "DecoderFront", None)
    if front is None:
        front = os.environ.get("LIVEFIX_PURE") != "1" and kind is not None and dec._native is not None
    elif front and (kind is None or dec._native is None):
        raise RuntimeError("the C twin of Decoder.decode needs the C core livefix._native (native=True)")
    if front and type(dec).decode is Decoder.decode:
        helpers = (Decoder.decode, _SLOTS, _WITH_GSV, _REPEATING, _MIN_HIT_SHARE, _CORE.decode, _CORE.make)
        vars(dec)["decode"] = kind(dec, helpers).decode  # an instance attribute over the method


def _guess_id(line: bytes) -> str:
    """Best guess of the sentence type of a refused line, for per-type reject counts."""
    hdr = line[1:].split(b",", 1)[0].split(b"*", 1)[0]
    if not hdr.isalnum() or not hdr.isascii():
        return "?"
    h = hdr.decode("ascii")
    if h[:1] == "P":
        return h[1:] or "?"
    return h[2:] or "?"
