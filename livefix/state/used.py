"""Satellites used in the solution: GSA lists of one epoch -> one set of (system, prn).

Why a union and a placing step: before NMEA 4.10 a receiver that tracks several constellations sends
one GSA per constellation in each epoch, all with one talker (GP or GN) and no system-ID field
(docs/sources.md#gsa-per-constellation, common practice). The used set is the union of the epoch's lists, and each
list must be placed in its constellation. With a system ID (NMEA 4.10+) or a constellation talker
(GL, GA, GB, ...) the sentence says it. Without, the NMEA number blocks (livefix.state.prn) say it,
except that some receivers write Galileo, BeiDou or QZSS in their own numbers (1-36, 1-63, 1-10)
under GP: such a list reads as GPS/SBAS numbers that are not in view. A list is therefore placed at
epoch close, against the satellites in view: the block reading when all of it is in view, else the
one other constellation in view that lists all of its numbers, else the block reading. A number no
block fits is never dropped silently: it is returned as unknown for the epoch and reported.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from types import MappingProxyType, ModuleType
from typing import Any

from livefix.corepick import built_core, pick_core
from livefix.state.epoch import SYSTEM_ID, TALKER_SYSTEM
from livefix.state.prn import NATIVE_MAX, user_prn

Pair = tuple[str, int]

_SVIDS = tuple(f"svid_{i:02d}" for i in range(1, 13))
# A receiver sends GSA once a second while it gives fixes at 5-20 Hz: an epoch without any GSA keeps
# the last used list this long (host seconds; as long as the sky keeps a silent GSV set, common practice).
USED_HOLD_S = 5.0
MAX_UNKNOWN = 32  # distinct unknown labels kept per epoch
# Memo caps: a day's distinct GSA lines are far fewer; a flood of new ones only clears the memo.
BY_VALUE_MAX = 4096  # classifications by field values
BY_ID_MAX = 1024  # classifications by identity of the decoder's read-only field mappings


PER_SYSTEM_DOPS = "per_system_dops"  # marks an epoch whose GSA sentences gave different DOPs


def solution_gsa(had: Mapping | None, f: Mapping) -> Mapping:
    """The GSA fields whose DOPs and fix mode describe the solution, given the epoch's pick so far.

    The first GSA that carries DOPs (an empty GLGSA may carry none). When the epoch's GSA sentences
    carry different DOPs, each describes its own constellation (some receivers do that) and none
    is the solution's: the DOPs are dropped (GGA still gives HDOP), the fix mode kept."""
    if had is None:
        return f
    hp, fp = had.get("PDOP"), f.get("PDOP")
    if had.get(PER_SYSTEM_DOPS) or fp.__class__ is not float:
        return had
    if hp.__class__ is not float:
        return f
    if fp == hp and f.get("HDOP") == had.get("HDOP") and f.get("VDOP") == had.get("VDOP"):
        return had
    out = dict(had)  # a copy: the decoder's mappings are shared and read-only
    out.update(PDOP="", HDOP="", VDOP="")
    out[PER_SYSTEM_DOPS] = True
    return out


class GsaSentence:
    """One GSA sentence classified: `placed` needs nothing more; `open` (numbers of a GP/GN list
    without system ID) is placed at epoch close; `unknown` fits no block."""

    __slots__ = ("placed", "open", "unknown")

    def __init__(self, placed: tuple[Pair, ...], open_: tuple[int, ...], unknown: tuple[int, ...]) -> None:
        self.placed, self.open, self.unknown = placed, open_, unknown


def classify(sid: Any, talker: str, svids: tuple) -> GsaSentence:
    """A GSA's used list by its system ID, else its talker, else left open for the sky."""
    nums = tuple([n for n in svids if n.__class__ is int and n > 0])
    system = None
    if sid.__class__ is int or (sid.__class__ is str and sid.isdigit()):
        system = SYSTEM_ID.get(int(sid))
    if system is None:
        system = TALKER_SYSTEM.get(talker)
        if system is None or system == "G":  # GN, GP or another combined talker: numbers decide
            return GsaSentence((), nums, ())
    placed, unknown = [], []
    for n in nums:
        m = user_prn(system, n)
        if m is None:
            unknown.append(n)
        else:
            placed.append(m)
    return GsaSentence(tuple(placed), (), tuple(unknown))


def place(nums: tuple[int, ...], in_view: frozenset[Pair]) -> tuple[tuple[Pair, ...], tuple[int, ...]]:
    """Place one GP/GN list without system ID: -> (used pairs, numbers no block fits)."""
    read = [user_prn(None, n) for n in nums]
    pairs = tuple([m for m in read if m is not None])
    unknown = tuple([n for n, m in zip(nums, read, strict=True) if m is None])
    if not nums or (not unknown and all(m in in_view for m in pairs)):
        return pairs, unknown
    if max(nums) <= NATIVE_MAX:  # may be another constellation's own numbers
        systems = {s for s, _ in in_view if s not in ("G", "S")}
        fits = [s for s in sorted(systems) if all((s, n) in in_view for n in nums)]
        if len(fits) == 1:
            return tuple([(fits[0], n) for n in nums]), ()
    return pairs, unknown


class UsedTracker:
    """Collects an epoch's GSA lists; close() gives the epoch's used set and its unknown numbers.

    Memoised like the GSV parts: by the identity of the decoder's read-only field mappings (holding
    a reference so an id cannot be reused), else by value; placing by value per sky content."""

    def __init__(self) -> None:
        self._open: list[tuple[str, tuple[int, ...]]] = []  # (talker, numbers) to place at close
        self._unknown: list[str] = []  # "GPGSA 250" labels of this epoch
        self._seen_gsa = False
        self._by_id: dict[int, tuple[Mapping, GsaSentence]] = {}
        self._by_value: dict[tuple, GsaSentence] = {}
        self._placed_for: frozenset[Pair] | None = None
        self._placed: dict[tuple[int, ...], tuple[tuple[Pair, ...], tuple[int, ...]]] = {}
        self._last: frozenset[Pair] = frozenset()
        self._last_mono = float("-inf")
        self.unknown: tuple[str, ...] = ()  # labels of the epoch last closed
        self.unknown_total = 0  # listed numbers no block fits, whole stream

    def add_gsa(self, talker: str, f: Mapping) -> tuple[Pair, ...]:
        """Classify one GSA; returns the pairs it places now (the rest waits for close)."""
        self._seen_gsa = True
        known = self._by_id.get(id(f))
        if known is not None and known[0] is f:
            g = known[1]
        else:
            sid = f.get("systemId", "")
            key = (sid, talker, tuple(map(f.get, _SVIDS)))  # everything the result depends on
            g = self._by_value.get(key)
            if g is None:
                g = classify(sid, talker, key[2])
                if len(self._by_value) >= BY_VALUE_MAX:
                    self._by_value.clear()
                self._by_value[key] = g
            if f.__class__ is MappingProxyType:  # read-only: same line, same talker, same result
                if len(self._by_id) >= BY_ID_MAX:
                    self._by_id.clear()
                self._by_id[id(f)] = (f, g)
        if g.open:
            self._open.append((talker, g.open))
        if g.unknown:
            self.note_unknown(talker + "GSA", g.unknown)
        return g.placed

    def note_unknown(self, source: str, nums: tuple[int, ...]) -> None:
        """Numbers no block fits (from GSA or GSV) in the open epoch."""
        self.unknown_total += len(nums)
        for n in nums:
            if len(self._unknown) < MAX_UNKNOWN:
                self._unknown.append(f"{source} {n}")

    def close(self, used: set[Pair], in_view: Callable[[], frozenset[Pair]], mono: float) -> frozenset[Pair]:
        """The epoch's used set: its placed pairs plus its open lists placed against the sky
        (`in_view` is called only when there is an open list). Resets for the next epoch."""
        if self._open:
            view = in_view()
            if view is not self._placed_for:
                self._placed_for, self._placed = view, {}
            memo = self._placed
            for talker, nums in self._open:
                hit = memo.get(nums)
                if hit is None:
                    hit = memo[nums] = place(nums, view)
                used.update(hit[0])
                if hit[1]:
                    self.note_unknown(talker + "GSA", hit[1])
            self._open = []
        if self._seen_gsa:
            out = frozenset(used)
            if out == self._last:
                out = self._last  # the same object while the list holds
            self._last, self._last_mono = out, mono
        elif mono - self._last_mono <= USED_HOLD_S:
            out = self._last | used if used else self._last
        else:
            out = frozenset(used)
        self._seen_gsa = False
        self.unknown = tuple(sorted(set(self._unknown))) if self._unknown else ()
        self._unknown = []
        return out


def _built_core() -> ModuleType | None:
    """The C twin (livefix/state/_usedcore.c) when it was built with this module's caps, else None
    (a build older than a change of caps here is not used; tests/state/test_used_native.py fails on it)."""
    return built_core("livefix.state._usedcore", ("BY_VALUE_MAX", "BY_ID_MAX", "MAX_UNKNOWN", "USED_HOLD_S"),
                      (BY_VALUE_MAX, BY_ID_MAX, MAX_UNKNOWN, USED_HOLD_S))


_CORE = _built_core()


# Tracker classes whose close() only adds to the set it is given (the reference and its C twin):
# the C twin of the state model hands such a tracker the previous epoch's set again when the epoch's
# GSA lines repeat it (livefix/state/_statecore.h, the used set's reuse).
TRACKER_TYPES: tuple[type, ...] = (UsedTracker,) if _CORE is None else (UsedTracker, _CORE.UsedTracker)


def make_used_tracker(native: bool | None = None) -> UsedTracker:
    """A used-set tracker: the C twin when built (same results, attributes and object identities,
    several times faster per GSA line), else UsedTracker, the reference. native None: the C twin
    unless LIVEFIX_PURE is "1" (as livefix.framing.native_core()); True: the C twin or RuntimeError
    (tests); False: the reference."""
    core = pick_core(_CORE, native, "the C core livefix.state._usedcore is not built (or built with other caps)")
    if core is not None:
        return core.UsedTracker(classify, place)  # type: ignore[no-any-return]
    return UsedTracker()
