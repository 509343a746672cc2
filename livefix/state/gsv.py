"""GSV set assembly: parts in, satellites in view out, one set at a time.

Why by total and sequence number rather than by talker alone: a set is "part k of n" and that is
all the standard promises. Since NMEA 4.10 a receiver sends one set per constellation and signal,
and parts of different sets may interleave, so a set waits under its (talker, signal ID). Some
receivers instead send one set whose parts change talker (parts 1-2 as GP, 3 as GL, 4 as GA, all
"x of 4"): a part that no set of its own talker waits for continues the set of another talker that
waits for exactly that part with the same total. Each satellite takes its constellation from the
talker of its own part (GN and GP parts from the NMEA number blocks, livefix.state.prn).

Lost and repeated lines: a repeated part replaces its earlier copy and is not a new set. A set that
lost a part keeps what arrived whole; when the satellites-in-view total says exactly which ones the
lost part held (the previous set's satellites not listed now), they are carried over, otherwise
the set holds what arrived. Either way the set is counted as incomplete.
"""

from __future__ import annotations

from collections.abc import Mapping
from types import MappingProxyType, ModuleType

from livefix.corepick import built_core, pick_core
from livefix.state.epoch import TALKER_SYSTEM
from livefix.state.prn import user_prn

RawSat = tuple[str, int, int | None, int | None, float | None]  # system, prn, elev, azim, cn0
Part = tuple[tuple[RawSat, ...], tuple[int, ...]]  # satellites of one part, numbers no block fits

# GSV field names of the four satellite blocks of one part, flat.
_BLOCK_FLAT = tuple(f"{a}_{i:02d}" for i in range(1, 5) for a in ("svid", "elv", "az", "cno"))


# NMEA 0183 gives the number of GSV sentences one digit (1-9); receivers with large skies go past it,
# so up to 99 parts are accepted (two digits, common practice); more is unreadable, never an allocation.
MAX_PARTS = 99
MEMO_MAX = 4096  # entries per part memo; a day's distinct parts are far fewer, a flood only clears it


class _Partial:
    """A set being received, waiting under the (talker, signal) of its first part."""

    __slots__ = ("key", "num_msg", "next_msg", "total", "missing", "parts")

    def __init__(self, key: tuple[str, str], num_msg: int, total: object, missing: bool = False) -> None:
        self.key, self.num_msg, self.next_msg, self.total = key, num_msg, 1, total
        self.missing = missing  # a part was lost (or never seen): published as incomplete
        # satellites per part number (index part - 1); a complete set that repeats the last one is
        # recognised by comparing these few references
        self.parts: list[tuple[RawSat, ...] | None] = [None] * num_msg


class GsvAssembler:
    """Collects GSV parts; add() returns a set's satellites when its last part arrives."""

    MAX_GROUPS = 64  # bounded even against a stream of random talkers

    def __init__(self) -> None:
        self._pending: dict[tuple[str, str], _Partial] = {}
        # last complete set per group: (its parts, its satellites)
        self._last: dict[tuple[str, str], tuple[list, list[RawSat]]] = {}
        self.broken = 0  # incomplete sets (lost part, restart, numMsg change, stray parts) + unreadable parts
        self.unmapped = 0  # listed numbers outside every known block
        self.last_unknown: tuple[int, ...] = ()  # such numbers in the part just added
        # Part contents repeat epoch after epoch: (system, 16 block values) -> Part. And the
        # decoder's read-only field mapping of a repeated line (so the same talker too), by id ->
        # (mapping, group key, numMsg, msgNum, numSV, its Part); holding the mapping keeps its id
        # unique. Owned here, not by the module, so two state models share nothing; bounded.
        self._part_by_value: dict[tuple, Part] = {}
        self._part_by_id: dict[int, tuple] = {}

    def add(self, talker: str, f: Mapping) -> tuple[tuple[str, str], list[RawSat] | None, int]:
        """-> (group key, satellites of a set that ended now or None, incomplete sets counted now)."""
        known = self._part_by_id.get(id(f))
        if known is not None and known[0] is f:  # the decoder's shared value of a repeated line
            _, key, num, part, total, hit = known
        else:
            sid = f.get("signalID", "")
            key = (talker, sid if sid.__class__ is str else str(sid))
            num, part, total, hit = f.get("numMsg"), f.get("msgNum"), f.get("numSV"), None
        self.last_unknown = ()
        pending = self._pending
        p = pending.get(key)
        if num.__class__ is not int or part.__class__ is not int or not 1 <= part <= num <= MAX_PARTS:
            if p is not None:
                p.missing = True  # unreadable part numbers: this talker's set lost a part
            self.broken += 1
            return key, None, 1
        if hit is None:
            hit = self._part(talker, f, key, num, part, total)
        sats = hit[0]
        if hit[1]:
            self.unmapped += len(hit[1])
            self.last_unknown = hit[1]
        out: tuple[tuple[str, str], list[RawSat] | None, int] = (key, None, 0)
        if p is not None and p.num_msg == num and p.next_msg == part:
            pass  # the next part of this talker's set
        elif p is not None and p.num_msg == num and part < p.next_msg and (part > 1 or p.parts[0] == sats):
            p.parts[part - 1] = sats  # a repeated part: the later copy stands, not a new set
            return out
        elif part == 1:
            if p is not None:
                out = self._end(p)  # a new set begins: the unfinished one ends incomplete
            p = _Partial(key, num, total)
        else:
            q = None if p is not None and p.num_msg == num else self._waiting_for(key, num, part, total)
            if q is not None:
                p = q  # the set continues under another talker
            elif p is not None and p.num_msg == num:
                p.missing = True  # parts between went missing
            elif p is None and self._repeats_last(key, num, part, sats):
                return out  # a part of the set just completed, sent again: not a new set
            else:
                if p is not None:
                    out = self._end(p)
                p = _Partial(key, num, total, missing=True)  # a set whose first part was lost
        p.parts[part - 1] = sats
        p.next_msg = part + 1
        if part == num:
            pending.pop(p.key, None)
            done = self._end(p)
            first = done if done[1] is not None or out[1] is None else out  # the newer set wins
            return first[0], first[1], out[2] + done[2]
        if pending.get(p.key) is not p:
            if len(pending) >= self.MAX_GROUPS:
                self.broken += 1  # the oldest unfinished set is dropped
                pending.pop(next(iter(pending)))
            pending[p.key] = p
        return out

    def _part(self, talker: str, f: Mapping, key: tuple[str, str], num: int, part: int, total: object) -> Part:
        """Satellites of one part (+ numbers no block fits), memoised by value and by identity."""
        system = TALKER_SYSTEM.get(talker)
        vkey = (system, tuple(map(f.get, _BLOCK_FLAT)))  # everything the result depends on
        by_value = self._part_by_value
        hit = by_value.get(vkey)
        if hit is None:
            hit = _part_sats(system, vkey[1])
            if len(by_value) >= MEMO_MAX:
                by_value.clear()
            by_value[vkey] = hit
        if f.__class__ is MappingProxyType:  # read-only, so its results never change
            by_id = self._part_by_id
            if len(by_id) >= MEMO_MAX:
                by_id.clear()
            by_id[id(f)] = (f, key, num, part, total, hit)  # holding f keeps its id unique
        return hit

    def _repeats_last(self, key: tuple[str, str], num: int, part: int, sats: tuple[RawSat, ...]) -> bool:
        last = self._last.get(key)
        return last is not None and len(last[0]) == num and last[0][part - 1] == sats

    def _waiting_for(self, key: tuple[str, str], num: int, part: int, total: object) -> _Partial | None:
        """The set of another talker that expects exactly this part (same total, same signal)."""
        found = None
        for q in self._pending.values():
            if (q.next_msg == part and q.num_msg == num and q.total == total and q.key[1] == key[1]
                    and q.key[0] != key[0]):
                found = q  # the most recent one wins
        return found

    def _end(self, p: _Partial) -> tuple[tuple[str, str], list[RawSat] | None, int]:
        """Publish a set that ended (complete or not)."""
        key = p.key
        if self._pending.get(key) is p:
            del self._pending[key]
        last = self._last.get(key)
        if not p.missing and None not in p.parts:
            if last is not None and last[0] == p.parts:  # the same parts: the same set as last time
                return key, last[1], 0
            sats = [s for part_sats in p.parts for s in part_sats]  # type: ignore[union-attr]
            if last is not None and last[1] == sats:  # same satellites, split differently
                sats = last[1]
            elif len(self._last) >= self.MAX_GROUPS:
                self._last.clear()
            self._last[key] = (p.parts, sats)  # the same list as long as the set repeats (Sky)
            return key, sats, 0
        self.broken += 1
        got = [s for part_sats in p.parts if part_sats for s in part_sats]
        if last is not None and p.total.__class__ is int:
            have = {(s[0], s[1]) for s in got}
            carried = [s for s in last[1] if (s[0], s[1]) not in have]
            if carried and len(got) + len(carried) == p.total:  # exactly the lost part's satellites
                got += carried
        return key, (got or None), 1


def _built_core() -> ModuleType | None:
    """The C twin (livefix/state/_gsvcore.c) when it was built with this module's caps, else None
    (a build older than a change of caps here is not used; tests/state/test_gsv_native.py fails on it)."""
    return built_core("livefix.state._gsvcore", ("MAX_PARTS", "MEMO_MAX", "MAX_GROUPS"),
                      (MAX_PARTS, MEMO_MAX, GsvAssembler.MAX_GROUPS))


_CORE = _built_core()


def make_assembler(native: bool | None = None) -> GsvAssembler:
    """A GSV set assembler: the C twin when built (same results, counters and list identities, several
    times faster per line), else GsvAssembler, the reference. native None: the C twin unless
    LIVEFIX_PURE is "1" (as livefix.framing.native_core()); True: the C twin or RuntimeError (tests);
    False: the reference."""
    core = pick_core(_CORE, native, "the C core livefix.state._gsvcore is not built (or built with other caps)")
    if core is not None:  # its part_sats (_gsvcore_parts.c) when built with it: the same tuples
        return core.GsvAssembler(getattr(core, "part_sats", _part_sats), TALKER_SYSTEM)  # type: ignore[no-any-return]
    return GsvAssembler()


def _part_sats(system: str | None, vals: tuple) -> Part:
    """Satellites of one GSV part from its 16 block values (svid, elv, az, cno x 4)."""
    out: list[RawSat] = []
    unknown: list[int] = []
    for i in range(0, 16, 4):
        svid, e, a, c = vals[i : i + 4]
        if svid.__class__ is not int:
            continue
        m = user_prn(system, svid)
        if m is None:
            unknown.append(svid)
            continue
        out.append((m[0], m[1], e if e.__class__ is int else None, a if a.__class__ is int else None,
                    c if c.__class__ is int or c.__class__ is float else None))  # dd.d from some receivers
    return tuple(out), tuple(unknown)

