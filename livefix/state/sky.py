"""Satellites: NMEA PRN numbers to user numbering, multi-part GSV assembly, and the sky store.

Why assembly per (talker, signal): since NMEA 4.10 a receiver sends one GSV set per constellation
and per signal; parts of different sets interleave. A set is only trusted once every part arrived
in order, so a lost line never mixes two epochs' satellites.
"""

from __future__ import annotations

from collections.abc import Mapping
from types import MappingProxyType

from livefix.state.epoch import TALKER_SYSTEM, SatObs

# NMEA numbering in a combined (GN) or GPS-talker listing -> (system, offset to user number).
# 1-32 GPS, 33-64 SBAS (PRN = n + 87), 65-96 GLONASS slot n - 64 (NMEA 0183, common practice);
# 120-158 SBAS native, 193-202 QZSS, 301-336 Galileo, 401-437 BeiDou extended ranges (from memory).
_GN_RANGES: tuple[tuple[int, int, str, int], ...] = (
    (1, 32, "G", 0), (33, 64, "S", 87), (65, 96, "R", -64), (120, 158, "S", 0),
    (193, 202, "J", -192), (301, 336, "E", -300), (401, 437, "C", -400),
)
# Constellation-specific talkers: native numbers, plus the NMEA range some receivers still use.
_SYSTEM_RANGE: dict[str, tuple[int, int, int]] = {
    "R": (65, 96, -64), "E": (301, 336, -300), "C": (401, 437, -400), "J": (193, 202, -192),
}
SYSTEM_ORDER = {s: i for i, s in enumerate("GRECJIS")}


def user_prn(system: str | None, n: int) -> tuple[str, int] | None:
    """Map a listed PRN to (RINEX letter, user number); None when it fits no known range."""
    if system is None or system == "G":  # GN / GP listings use the combined NMEA ranges
        for lo, hi, letter, off in _GN_RANGES:
            if lo <= n <= hi:
                return letter, n + off
        return None
    r = _SYSTEM_RANGE.get(system)
    if r is not None and r[0] <= n <= r[1]:
        return system, n + r[2]
    return system, n


_PRN_CACHE: dict[tuple[str | None, int], tuple[str, int] | None] = {}


def _user_prn_cached(system: str | None, n: int) -> tuple[str, int] | None:
    """user_prn through a bounded memo: GSV and GSA list the same few dozen numbers all day."""
    k = (system, n)
    try:
        return _PRN_CACHE[k]
    except KeyError:
        pass
    if len(_PRN_CACHE) >= 4096:
        _PRN_CACHE.clear()
    m = _PRN_CACHE[k] = user_prn(system, n)
    return m


# GSV field names of the four satellite blocks of one part, flat.
_BLOCK_FLAT = tuple(f"{a}_{i:02d}" for i in range(1, 5) for a in ("svid", "elv", "az", "cno"))


def talker_system(talker: str) -> str | None:
    return TALKER_SYSTEM.get(talker)


def _int(v: object) -> int | None:
    return v if type(v) is int else None


RawSat = tuple[str, int, int | None, int | None, int | None]  # system, prn, elev, azim, cn0


class _Partial:
    """A set being received. `parts` holds each part's satellites as the memoised tuple, so a set
    that repeats the last one is recognised by comparing a few references, not every satellite."""

    __slots__ = ("num_msg", "next_msg", "dead", "parts")

    def __init__(self, num_msg: int, next_msg: int, dead: bool = False) -> None:
        self.num_msg, self.next_msg = num_msg, next_msg
        self.dead = dead  # a broken set: its remaining parts are skipped, not counted again
        self.parts: list[tuple[RawSat, ...]] = []


class GsvAssembler:
    """Collects GSV parts per (talker, signal); returns a set only when it is complete."""

    MAX_GROUPS = 64  # bounded even against a stream of random talkers

    def __init__(self) -> None:
        self._pending: dict[tuple[str, str], _Partial] = {}
        # last completed set per group: (its parts, its satellites)
        self._last: dict[tuple[str, str], tuple[list[tuple[RawSat, ...]], list[RawSat]]] = {}
        self.broken = 0  # sets discarded (missing part, restart, numMsg change, stray parts)
        self.unmapped = 0  # listed PRNs outside every known range

    def add(self, talker: str, f: Mapping) -> tuple[tuple[str, str], list[RawSat] | None, int]:
        """-> (group key, satellites of a completed set or None, number of sets broken now)."""
        known = _PART_BY_VALUE.get(id(f))
        if known is not None and known[0] is f:  # the decoder's shared value of a repeated line
            _, key, num, part, hit = known
        else:
            sid = f.get("signalID", "")
            key = (talker, sid if sid.__class__ is str else str(sid))
            num, part, hit = f.get("numMsg"), f.get("msgNum"), None
        p = self._pending.pop(key, None)
        live = p is not None and not p.dead
        if num.__class__ is not int or part.__class__ is not int or num < 1 or not 1 <= part <= num:
            self.broken += int(live) + 1  # unreadable part numbers: the part and its set are lost
            return key, None, int(live) + 1
        if part == 1:
            n, p = int(live), _Partial(num, 1)  # a restart breaks an unfinished set
        elif p is not None and p.num_msg == num and p.next_msg == part:
            n = 0
        elif live and p is not None and p.num_msg == num and part > p.next_msg:
            n, p.dead = 1, True  # same set, a part went missing
        else:
            n, p = int(live) + 1, _Partial(num, part, dead=True)  # stray part of an unseen set
        self.broken += n
        if not p.dead:
            if hit is None:
                hit = self._part(talker, f, key, num, part)
            p.parts.append(hit[0])
            self.unmapped += hit[1]
        if part == num:
            if p.dead:
                return key, None, n
            last = self._last.get(key)
            if last is not None and last[0] == p.parts:  # the same parts: the same set as last time
                return key, last[1], n
            sats = [s for part_sats in p.parts for s in part_sats]
            if last is not None and last[1] == sats:  # same satellites, split differently
                sats = last[1]
            elif len(self._last) >= self.MAX_GROUPS:
                self._last.clear()
            self._last[key] = (p.parts, sats)  # the same list as long as the set repeats (Sky)
            return key, sats, n
        p.next_msg = part + 1
        if len(self._pending) >= self.MAX_GROUPS:
            self.broken += int(not self._pending.pop(next(iter(self._pending))).dead)
        self._pending[key] = p
        return key, None, n

    @staticmethod
    def _part(talker: str, f: Mapping, key: tuple[str, str], num: int, part: int
              ) -> tuple[tuple[RawSat, ...], int]:
        """Satellites of one part (+ unmapped count), memoised by value."""
        system = TALKER_SYSTEM.get(talker)
        vkey = (system, tuple(map(f.get, _BLOCK_FLAT)))  # everything the result depends on
        hit = _PART_CACHE.get(vkey)
        if hit is None:
            hit = _part_sats(system, vkey[1])
            if len(_PART_CACHE) >= 4096:
                _PART_CACHE.clear()
            _PART_CACHE[vkey] = hit
        if f.__class__ is MappingProxyType:  # read-only, so its results never change
            if len(_PART_BY_VALUE) >= 4096:
                _PART_BY_VALUE.clear()
            _PART_BY_VALUE[id(f)] = (f, key, num, part, hit)  # holding f keeps its id unique
        return hit


def _part_sats(system: str | None, vals: tuple) -> tuple[tuple[RawSat, ...], int]:
    """Satellites of one GSV part from its 16 block values (svid, elv, az, cno x 4); + unmapped."""
    out: list[RawSat] = []
    unmapped = 0
    for i in range(0, 16, 4):
        svid, e, a, c = vals[i : i + 4]
        if svid.__class__ is not int:
            continue
        m = _user_prn_cached(system, svid)
        if m is None:
            unmapped += 1
            continue
        out.append((m[0], m[1], e if e.__class__ is int else None, a if a.__class__ is int else None,
                    c if c.__class__ is int else None))
    return tuple(out), unmapped


# Part contents repeat epoch after epoch; (system, block values) -> (satellites, unmapped).
_PART_CACHE: dict[tuple, tuple[tuple[RawSat, ...], int]] = {}
# id of a read-only field mapping (a repeated line, so the same talker too) -> (mapping, group key,
# numMsg, msgNum, its satellites and unmapped count).
_PART_BY_VALUE: dict[int, tuple] = {}


class Sky:
    """Latest complete set per group; satellites unseen for `timeout_s` host seconds drop out.

    Why two views: an epoch needs the satellites and their values, and at 10-20 Hz those are
    usually the very same as the epoch before (receivers refresh their lists about once a second),
    so `obs()` hands back the same tuple object until something changes and per-epoch statistics
    skip their work by identity. How recently each satellite was listed changes every epoch; only
    `seen()` (snapshots, at display rate) builds objects carrying that time.
    """

    def __init__(self, timeout_s: float = 5.0, max_groups: int = 64) -> None:
        self.timeout_s = timeout_s
        self.max_groups = max_groups
        self._groups: dict[tuple[str, str], list[RawSat]] = {}  # in order of last update
        self._mono: dict[tuple[str, str], float] = {}  # host time each group was last listed
        # (group/list signature, used, sorted rows, the lists themselves so their ids stay unique)
        self._layout: tuple[tuple, frozenset, list[tuple[tuple, int]], list] | None = None
        self._lean: tuple[SatObs, ...] = ()  # obs() of the current layout
        self._seen: tuple[tuple, tuple, tuple[SatObs, ...]] | None = None  # layout, monos, seen()

    def replace(self, group: tuple[str, str], sats: list[RawSat], mono: float) -> None:
        groups = self._groups
        if groups.pop(group, None) is None and len(groups) >= self.max_groups:
            old = next(iter(groups))
            del groups[old], self._mono[old]
        self._mono.pop(group, None)  # both dicts keep the same order: seen() indexes monos by group
        groups[group] = sats
        self._mono[group] = mono

    def expire(self, now_mono: float) -> None:
        limit = now_mono - self.timeout_s
        for g in [g for g, m in self._mono.items() if m < limit]:
            del self._groups[g], self._mono[g]

    def _signature(self) -> tuple:
        return tuple([(g, id(sats)) for g, sats in self._groups.items()])

    def obs(self, used: frozenset[tuple[str, int]]) -> tuple[SatObs, ...]:
        """All satellites, sorted by system, number and signal; the same tuple object while nothing
        but the listing times changed. last_seen_mono is 0.0 here (see `seen`).

        The merge and sort depend only on which set lists each group holds (and their order) and
        on `used`; a repeated set is handed back by the assembler as the same list object.
        """
        sig = self._signature()
        lay = self._layout
        if lay is None or lay[0] != sig or lay[1] != used:
            lay = self._layout = (sig, used, self._plan(used), list(self._groups.values()))
            self._lean = out = tuple(_build(lay[2], None))
            if len(_TOKENS) >= _TOKENS_MAX:
                _TOKENS.clear()
            _TOKENS[id(out)] = (out, lay)
        return self._lean

    def seen(self, used: frozenset[tuple[str, int]]) -> tuple[SatObs, ...]:
        """Like obs(), with last_seen_mono set to when each satellite's set was last listed.

        Called at display rate, possibly in the middle of an epoch's sets: it keeps its own
        layout so that it never disturbs the one obs() hands to epochs."""
        sig = self._signature()
        lay = self._layout
        if lay is None or lay[0] != sig or lay[1] != used:
            cached = self._seen
            lay = cached[0] if cached is not None and cached[0][0] == sig and cached[0][1] == used else (
                sig, used, self._plan(used), list(self._groups.values()))
        monos = tuple(self._mono.values())
        cached = self._seen
        if cached is None or cached[0] is not lay or cached[1] != monos:
            cached = self._seen = (lay, monos, tuple(_build(lay[2], monos)))
        return cached[2]

    def _plan(self, used: frozenset[tuple[str, int]]) -> list[tuple[tuple, int]]:
        merged: dict[tuple[str, int, str], tuple[tuple, int]] = {}
        for gi, ((_, signal), sats) in enumerate(self._groups.items()):
            for system, prn, elev, azim, cn0 in sats:
                merged[(system, prn, signal)] = ((system, prn, signal, elev, azim, cn0,
                                                  (system, prn) in used), gi)
        return [merged[k] for k in sorted(merged, key=lambda k: (SYSTEM_ORDER.get(k[0], 9), k[1], k[2]))]


def _build(rows: list[tuple[tuple, int]], monos: tuple[float, ...] | None) -> list[SatObs]:
    """SatObs for layout rows, without the dataclass __init__ (hot when the sky changes)."""
    s0, s1, s2, s3, s4, s5, s6 = _SETTERS
    sm, new, cls = _SET_MONO, _new, SatObs
    objs: list[SatObs] = []
    append = objs.append
    for (a, b, c, d, e, f, g), gi in rows:
        o = new(cls)
        s0(o, a)
        s1(o, b)
        s2(o, c)
        s3(o, d)
        s4(o, e)
        s5(o, f)
        s6(o, g)
        sm(o, monos[gi] if monos is not None else 0.0)
        append(o)
    return objs


# Recent obs() tuples -> their layout: per-epoch statistics compare tokens to skip recomputing.
_TOKENS: dict[int, tuple[tuple[SatObs, ...], object]] = {}
_TOKENS_MAX = 64


def sats_token(sats: tuple[SatObs, ...]) -> object | None:
    """An object shared by every Epoch.sats tuple this process built from the same satellites
    (same system, prn, signal, elev, azim, cn0 and used flag at every position; only
    last_seen_mono may differ); None for tuples of unknown origin."""
    e = _TOKENS.get(id(sats))
    return e[1] if e is not None and e[0] is sats else None


_new = object.__new__
_SETTERS = tuple(SatObs.__dict__[n].__set__ for n in SatObs.__slots__[:7])
_SET_MONO = SatObs.__dict__["last_seen_mono"].__set__
if tuple(SatObs.__slots__) != ("system", "prn", "signal", "elev", "azim", "cn0", "used", "last_seen_mono"):
    raise ImportError("SatObs fields changed: update livefix.state.sky.Sky.obs")

