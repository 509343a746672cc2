"""Decoding: one framed sentence (bytes, no line terminator) to a Decoded value or a Rejected reason.

Contract shared by the fast path and the pynmeagps fallback:
  Decoded.fields holds exactly the public attributes pynmeagps would set on its NMEAMessage for the
  same line (same names, same Python types and values, "" for empty fields; e.g. GGA `time` is a
  datetime.time, `lat` a float in degrees, `quality` an int; GSV `svid_01`, `elv_01`, `az_01`,
  `cno_01` and `signalID` only when present), so either path can serve the state model.
  Decoded values are immutable and `fields` is read-only: the decoder hands back the very same
  Decoded object for a repeated line (that is what makes the line cache cheap, and lets later
  stages memoise by identity); such fields are a read-only mapping. Copy `fields` to change it.

`Decoder` keeps per-type counters (see `DecodeCounters`); it never raises on bad input.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

# Why a line was refused. Every refused line is counted by reason and by sentence type.
BAD_CHECKSUM = "bad_checksum"  # checksum present but wrong
NO_CHECKSUM = "no_checksum"  # no '*hh' (truncated or checksum-less); counted as malformed
MALFORMED = "malformed"  # wrong field count/types, non-ASCII, etc.
UNKNOWN = "unknown"  # a well-formed sentence of a type neither path knows
INTERNAL = "internal"  # livefix failed on the line (a bug, counted in internal_errors, not as bad input)


@dataclass(frozen=True, slots=True)
class Decoded:
    talker: str  # "GP", "GN", ...; "P" for proprietary
    msg_id: str  # "GGA", ...; for proprietary the manufacturer+type text after "$P"
    fields: Mapping[str, Any]  # pynmeagps attribute names -> values (see module doc); read-only
    proprietary: bool = False


@dataclass(frozen=True, slots=True)
class Rejected:
    reason: str  # one of BAD_CHECKSUM, NO_CHECKSUM, MALFORMED, UNKNOWN
    msg_id: str  # best guess of the sentence type ("GGA", "?" when unreadable)
    raw: bytes
    detail: str = ""


@dataclass(slots=True)
class DecodeCounters:
    """Running counts; plain ints and dicts so a snapshot is a cheap copy."""

    decoded: int = 0
    fast: int = 0  # of which the fast path handled
    by_type: dict[str, int] = field(default_factory=dict)  # msg_id -> decoded count
    by_talker_type: dict[str, int] = field(default_factory=dict)  # "GPGSV" -> count
    bad_checksum: int = 0
    malformed: int = 0  # includes NO_CHECKSUM
    unknown: int = 0
    proprietary: int = 0
    rejected_by_type: dict[str, int] = field(default_factory=dict)  # msg_id -> rejected count
    internal_errors: int = 0  # livefix's own bugs met while decoding (livefix.faults), not bad input
    last_internal_error: str | None = None

    def copy(self) -> DecodeCounters:
        return DecodeCounters(self.decoded, self.fast, dict(self.by_type), dict(self.by_talker_type),
                              self.bad_checksum, self.malformed, self.unknown, self.proprietary,
                              dict(self.rejected_by_type), self.internal_errors, self.last_internal_error)
