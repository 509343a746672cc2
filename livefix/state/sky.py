"""Satellites: NMEA PRN numbers to user numbering, multi-part GSV assembly, and the sky store.

Why assembly per (talker, signal): since NMEA 4.10 a receiver sends one GSV set per constellation
and per signal; parts of different sets interleave. A set is only trusted once every part arrived
in order, so a lost line never mixes two epochs' satellites.
"""

from __future__ import annotations

from dataclasses import dataclass, field

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


def talker_system(talker: str) -> str | None:
    return TALKER_SYSTEM.get(talker)


def _int(v: object) -> int | None:
    return v if type(v) is int else None


RawSat = tuple[str, int, int | None, int | None, int | None]  # system, prn, elev, azim, cn0


@dataclass(slots=True)
class _Partial:
    num_msg: int
    next_msg: int
    dead: bool = False  # a broken set: its remaining parts are skipped, not counted again
    sats: list[RawSat] = field(default_factory=list)


class GsvAssembler:
    """Collects GSV parts per (talker, signal); returns a set only when it is complete."""

    MAX_GROUPS = 64  # bounded even against a stream of random talkers

    def __init__(self) -> None:
        self._pending: dict[tuple[str, str], _Partial] = {}
        self.broken = 0  # sets discarded (missing part, restart, numMsg change, stray parts)
        self.unmapped = 0  # listed PRNs outside every known range

    def add(self, talker: str, f: dict) -> tuple[tuple[str, str], list[RawSat] | None, int]:
        """-> (group key, satellites of a completed set or None, number of sets broken now)."""
        key = (talker, str(f.get("signalID", "")))
        num, part = _int(f.get("numMsg")), _int(f.get("msgNum"))
        p = self._pending.pop(key, None)
        live = p is not None and not p.dead
        if num is None or part is None or num < 1 or not 1 <= part <= num:
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
            self._add_sats(p, talker, f)
        if part == num:
            return key, None if p.dead else p.sats, n
        p.next_msg = part + 1
        if len(self._pending) >= self.MAX_GROUPS:
            self.broken += int(not self._pending.pop(next(iter(self._pending))).dead)
        self._pending[key] = p
        return key, None, n

    def _add_sats(self, p: _Partial, talker: str, f: dict) -> None:
        system = talker_system(talker)
        for i in range(1, 5):
            svid = _int(f.get(f"svid_{i:02d}"))
            if svid is None:
                continue
            m = user_prn(system, svid)
            if m is None:
                self.unmapped += 1
                continue
            p.sats.append((m[0], m[1], _int(f.get(f"elv_{i:02d}")), _int(f.get(f"az_{i:02d}")),
                           _int(f.get(f"cno_{i:02d}"))))


class Sky:
    """Latest complete set per group; satellites unseen for `timeout_s` host seconds drop out."""

    def __init__(self, timeout_s: float = 5.0, max_groups: int = 64) -> None:
        self.timeout_s = timeout_s
        self.max_groups = max_groups
        self._groups: dict[tuple[str, str], tuple[float, list[RawSat]]] = {}
        self._version = 0
        self._cache: tuple[int, frozenset, tuple[SatObs, ...]] = (-1, frozenset(), ())

    def replace(self, group: tuple[str, str], sats: list[RawSat], mono: float) -> None:
        self._groups.pop(group, None)
        if len(self._groups) >= self.max_groups:
            self._groups.pop(next(iter(self._groups)))
        self._groups[group] = (mono, sats)
        self._version += 1

    def expire(self, now_mono: float) -> None:
        limit = now_mono - self.timeout_s
        old = [g for g, (m, _) in self._groups.items() if m < limit]
        for g in old:
            del self._groups[g]
        if old:
            self._version += 1

    def obs(self, used: frozenset[tuple[str, int]]) -> tuple[SatObs, ...]:
        """All satellites, sorted by system, number and signal; cached until something changes."""
        v, u, cached = self._cache
        if v == self._version and u == used:
            return cached
        merged: dict[tuple[str, int, str], SatObs] = {}
        for (_, signal), (mono, sats) in self._groups.items():
            for system, prn, elev, azim, cn0 in sats:
                merged[(system, prn, signal)] = SatObs(system, prn, signal, elev, azim, cn0,
                                                       (system, prn) in used, mono)
        out = tuple(merged[k] for k in sorted(merged, key=lambda k: (SYSTEM_ORDER.get(k[0], 9), k[1], k[2])))
        self._cache = (self._version, used, out)
        return out
