"""Receiver dialects: small, composable transforms that make the clean simulated NMEA stream
speak the way real receivers do (late ZDA, mixed-talker GSV sets, GSA without system ID, empty
times without a fix, RMC-only epochs, default dates, corrupted lines with plausible times,
interleaved RTCM 3 frames, 2-20 Hz output).

Each dialect rewrites the list of sentences of one epoch (bytes, as the receiver wrote them);
a rate dialect also sets the output rate. Dialects apply in the fixed order of `DIALECTS`, so
"a,b" and "b,a" give the same bytes, and each draws from its own seeded generator, so the output
is deterministic and adding one dialect does not change what another one does. Sentences stay
valid NMEA (correct checksums) except where the dialect says otherwise. Binary frame building
lives in `livefix.sim.rtcm`.
"""

from __future__ import annotations

import datetime as _dt
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from livefix.sim import nmea, rtcm

# RINEX letter order of the NMEA 4.10+ system IDs (1 GPS, 2 GLONASS, 3 Galileo, 4 BeiDou;
# docs/sources.md#system-ids): GNS gives one mode letter per system in this order.
SYS_ORDER = ("G", "R", "E", "C")
SYS_BY_ID = {str(v): k for k, v in nmea.SYSTEM_ID.items()}
# Satellite numbers a receiver without system IDs writes in GSA (docs/sources.md#satellite-numbers,
# from memory): GPS 1-32, GLONASS 65-96 (already so in our 4.11 GSA),
# Galileo 301-336, BeiDou 201-263 or 401-463. Receivers differ in the BeiDou block and the talker:
# odd seeds write GP and BeiDou 2xx, even seeds GN and BeiDou 4xx.
PRE410_OFFSET = {"G": 0, "R": 0, "E": 300, "C": 200}
PRE410_EVEN = {"talker": "GN", "C": 400}
# Dates a receiver writes before it knows the date (docs/sources.md#default-dates):
# the GPS time origin and 2000-01-01. Odd seeds use the first, even seeds the second.
DEFAULT_DATES = (_dt.date(1980, 1, 6), _dt.date(2000, 1, 1))
ZDA_LATE_S = 0.05  # zda-late: ZDA stamped 50 ms after the time of fix it follows (issue 13)
RMC_ONLY_SHARE = 0.2  # rmc-only: share of epochs sent with RMC but no GGA/GST (invented)
BAD_TIME_SHARE = 0.05  # bad-checksum-times: share of timed sentences followed by a damaged copy
BAD_DATE_SHARE = 0.3  # ... of which this share also has a damaged year (RMC, ZDA)
BIN_CRLF_SHARE = 0.5  # binary: share of frames a logger ends with CR LF; the rest run into '$'
GSV_MAX_PARTS = 9  # "total number of sentences, 1 to 9" (NMEA 0183 GSV; from memory)
TIMED = ("GGA", "RMC", "GNS", "GLL", "GST", "ZDA")
QUALITY_MODE = {"0": "N", "1": "A", "2": "D", "4": "R", "5": "F"}  # GGA quality -> GNS mode letter


@dataclass(frozen=True, slots=True)
class EpochCtx:
    """What a dialect may know about the epoch besides its sentences (from the simulator)."""

    t: float  # seconds since the start
    rate: int  # epochs per second
    fix: str  # fix-type name; "none" without a fix
    whole_second: bool  # the epoch on which GSV and ZDA are sent
    systems: tuple[str, ...]  # RINEX letters the receiver tracks
    used_by_system: dict[str, int]  # satellites used per system
    ecef: tuple[float, float, float]  # antenna reference point (for RTCM 1005)


Transform = Callable[[EpochCtx, list[bytes]], list[bytes]]


# ----- the dialects --------------------------------------------------------------------------
def _zda_late(_rng: np.random.Generator, _seed: int) -> Transform:
    def f(ctx: EpochCtx, parts: list[bytes]) -> list[bytes]:
        out = []
        for p in parts:
            sp = nmea.split(p) if nmea.kind(p) == "ZDA" else None
            cs = nmea.centiseconds(sp[1][0]) if sp and sp[1][0] else None
            if sp is None or cs is None:
                out.append(p)
                continue
            addr, fl = sp
            cs += round(ZDA_LATE_S * 100)
            if cs >= 8_640_000 and all(fl[1:4]):  # past midnight: the next day
                d = _dt.date(int(fl[3]), int(fl[2]), int(fl[1])) + _dt.timedelta(days=1)
                fl[1:4] = [f"{d.day:02d}", f"{d.month:02d}", f"{d.year:04d}"]
            fl[0] = nmea.time_field(cs)
            out.append(nmea.join(addr, fl))
        return out
    return f


def _gsv_mixed(_rng: np.random.Generator, _seed: int) -> Transform:
    """One GSV set for all systems: each part holds one system's satellites under that system's
    talker (GP parts 1-2, GL part 3, ...), every part numbered "x of N", no signal ID."""
    def f(ctx: EpochCtx, parts: list[bytes]) -> list[bytes]:
        first = next((i for i, p in enumerate(parts) if nmea.kind(p) == "GSV"), None)
        if first is None:
            return parts
        by_talker: dict[str, list[list[str]]] = {}
        for p in parts:
            sp = nmea.split(p) if nmea.kind(p) == "GSV" else None
            if sp is None:
                continue
            addr, fl = sp
            blocks = fl[3:3 + 4 * ((len(fl) - 3) // 4)]
            by_talker.setdefault(addr[:2], []).extend(blocks[i:i + 4] for i in range(0, len(blocks), 4))
        groups = [(tk, sats[i:i + 4]) for tk, sats in by_talker.items() for i in range(0, len(sats), 4)]
        if not groups:
            groups = [(nmea.TALKER[ctx.systems[0]], [])]
        # a set has at most 9 parts (one digit, NMEA 0183): more satellites make several sets
        size = -(-len(groups) // -(-len(groups) // GSV_MAX_PARTS))
        new = []
        for j in range(0, len(groups), size):
            chunk = groups[j:j + size]
            total = sum(len(g) for _tk, g in chunk)
            new += [nmea.join(f"{tk}GSV", [str(len(chunk)), str(k), f"{total:02d}", *(x for b in g for x in b)])
                    for k, (tk, g) in enumerate(chunk, 1)]
        rest = [p for p in parts if nmea.kind(p) != "GSV"]
        return rest[:first] + new + rest[first:]
    return f


def _gsa_no_sysid(_rng: np.random.Generator, seed: int) -> Transform:
    """Before NMEA 4.10: one GSA per system, all under one talker, no system-ID field, IDs by range."""
    offsets = dict(PRE410_OFFSET) | ({"C": PRE410_EVEN["C"]} if seed % 2 == 0 else {})
    talker = PRE410_EVEN["talker"] if seed % 2 == 0 else "GP"

    def f(ctx: EpochCtx, parts: list[bytes]) -> list[bytes]:
        out = []
        for p in parts:
            sp = nmea.split(p) if nmea.kind(p) == "GSA" else None
            if sp is None or len(sp[1]) < 18:
                out.append(p)
                continue
            _addr, fl = sp
            off = offsets.get(SYS_BY_ID.get(fl[17], "G"), 0)
            ids = [f"{int(x) + off:02d}" if x else "" for x in fl[2:14]]
            out.append(nmea.join(f"{talker}GSA", [*fl[:2], *ids, *fl[14:17]]))
        return out
    return f


def _empty_time_nofix(_rng: np.random.Generator, _seed: int) -> Transform:
    """Without a fix the receiver leaves time (and date) fields empty."""
    def f(ctx: EpochCtx, parts: list[bytes]) -> list[bytes]:
        if ctx.fix != "none":
            return parts
        out = []
        for p in parts:
            k = nmea.kind(p)
            sp = nmea.split(p) if k in TIMED else None
            if sp is None:
                out.append(p)
                continue
            addr, fl = sp
            fl[0] = ""
            if k == "RMC" and len(fl) > 8:
                fl[8] = ""
            if k == "ZDA":
                fl = [""] * len(fl)
            out.append(nmea.join(addr, fl))
        return out
    return f


def _rmc_only(rng: np.random.Generator, _seed: int) -> Transform:
    """Some epochs carry RMC but no GGA/GNS/GST (so no height): the stream's first epoch, the
    first epoch with a fix, and a seeded share of the others."""
    seen = {"any": False, "fix": False}

    def f(ctx: EpochCtx, parts: list[bytes]) -> list[bytes]:
        draw = rng.random() < RMC_ONLY_SHARE
        first_fix = ctx.fix != "none" and not seen["fix"]
        only = draw or first_fix or not seen["any"]
        seen["any"] = True
        seen["fix"] = seen["fix"] or ctx.fix != "none"
        return nmea.drop(parts, ("GGA", "GNS", "GST")) if only else parts
    return f


def _default_date(_rng: np.random.Generator, seed: int) -> Transform:
    """Until its first fix the receiver knows the time of day but not the date (which of the
    default dates: by the seed's parity)."""
    state = {"known": False}
    d = DEFAULT_DATES[0 if seed % 2 else 1]

    def f(ctx: EpochCtx, parts: list[bytes]) -> list[bytes]:
        state["known"] = state["known"] or ctx.fix != "none"
        if state["known"]:
            return parts
        out = []
        for p in parts:
            k = nmea.kind(p)
            sp = nmea.split(p) if k in ("RMC", "ZDA") else None
            if sp is None:
                out.append(p)
                continue
            addr, fl = sp
            if k == "RMC" and len(fl) > 8 and fl[8]:
                fl[8] = f"{d.day:02d}{d.month:02d}{d.year % 100:02d}"
            if k == "ZDA" and len(fl) > 3 and fl[1]:
                fl[1:4] = [f"{d.day:02d}", f"{d.month:02d}", f"{d.year:04d}"]
            out.append(nmea.join(addr, fl))
        return out
    return f


def _bad_checksum_times(rng: np.random.Generator, _seed: int) -> Transform:
    """After some timed sentences, an extra damaged copy: a plausible but wrong time (and for
    RMC/ZDA sometimes a wrong year) with a wrong checksum. The valid stream stays complete, so
    any change in the figures comes from trusting a damaged line."""
    def f(ctx: EpochCtx, parts: list[bytes]) -> list[bytes]:
        out = []
        for p in parts:
            out.append(p)
            k = nmea.kind(p)
            if k not in ("GGA", "RMC", "ZDA") or rng.random() >= BAD_TIME_SHARE:
                continue
            sp = nmea.split(p)
            if sp is None or not sp[1][0] or (cs := nmea.centiseconds(sp[1][0])) is None:
                continue
            addr, fl = sp
            hours = int(rng.integers(1, 24))
            fl[0] = nmea.time_field(cs + hours * 360_000 + int(rng.integers(0, 60)) * 6000)
            if rng.random() < BAD_DATE_SHARE:
                if k == "RMC" and len(fl) > 8 and len(fl[8]) == 6:
                    fl[8] = fl[8][:4] + f"{(int(fl[8][4:]) + int(rng.integers(1, 40))) % 100:02d}"
                elif k == "ZDA" and len(fl) > 3 and fl[3]:
                    fl[3] = f"{int(fl[3]) - int(rng.integers(1, 40)):04d}"
            good = nmea.join(addr, fl)
            bad = int(good[-4:-2], 16) ^ int(rng.integers(1, 256))
            out.append(good[:-4] + f"{bad:02X}".encode() + b"\r\n")
        return out
    return f


def _binary(rng: np.random.Generator, _seed: int) -> Transform:
    """Once a second, RTCM 3 frames (valid CRC-24Q) between sentences, as a base receiver that
    also sends its corrections on the NMEA port: 1005 (antenna reference point) and one MSM7 per
    system with a random body. Some end with CR LF, the others run straight into the next '$'."""
    def f(ctx: EpochCtx, parts: list[bytes]) -> list[bytes]:
        if not ctx.whole_second:
            return parts
        frames = [rtcm.msg1005(ctx.ecef)] + [rtcm.msm7(s, rng) for s in ctx.systems]
        out = list(parts)
        for fr in frames:
            if rng.random() < BIN_CRLF_SHARE:
                fr += b"\r\n"
            out.insert(int(rng.integers(0, len(out) + 1)), fr)
        return out
    return f


def _gga_2hz_zda_1hz(_rng: np.random.Generator, _seed: int) -> Transform:
    """GGA, GSA and GST at 2 Hz; RMC, VTG, GSV and ZDA once a second."""
    def f(ctx: EpochCtx, parts: list[bytes]) -> list[bytes]:
        return parts if ctx.whole_second else nmea.drop(parts, ("RMC", "VTG"))
    return f


def _rmc_10hz_gga_1hz(_rng: np.random.Generator, _seed: int) -> Transform:
    """RMC and VTG at 10 Hz; GGA, GSA and GST once a second (heights only then)."""
    def f(ctx: EpochCtx, parts: list[bytes]) -> list[bytes]:
        return parts if ctx.whole_second else nmea.drop(parts, ("GGA", "GSA", "GST"))
    return f


def _gns_only(_rng: np.random.Generator, _seed: int) -> Transform:
    """Position only in GNS (mode letter per system in NMEA order G, R, E, C): no GGA, no RMC."""
    def f(ctx: EpochCtx, parts: list[bytes]) -> list[bytes]:
        out = []
        for p in parts:
            k = nmea.kind(p)
            if k == "RMC":
                continue
            sp = nmea.split(p) if k == "GGA" else None
            if sp is None:
                out.append(p)
                continue
            addr, fl = sp  # time lat N lon E quality numSV hdop alt M sep M age station
            m = QUALITY_MODE.get(fl[5], "A")
            mode = "".join(m if s in ctx.systems else "N" for s in SYS_ORDER)
            out.append(nmea.join(f"{addr[:2]}GNS", [*fl[:5], mode, *fl[6:9], fl[10], fl[12], fl[13],
                                               "V" if m == "N" else "S"]))
        return out
    return f


def _multi_talker_gga(_rng: np.random.Generator, _seed: int) -> Transform:
    """The one solution as one GGA per talker (GP and GL ...), same time, satellites per system."""
    def f(ctx: EpochCtx, parts: list[bytes]) -> list[bytes]:
        out = []
        for p in parts:
            sp = nmea.split(p) if nmea.kind(p) == "GGA" else None
            if sp is None:
                out.append(p)
                continue
            _addr, fl = sp
            for s in ctx.systems[:2]:
                n = ctx.used_by_system.get(s, 0) if fl[5] != "0" else 0
                out.append(nmea.join(f"{nmea.TALKER[s]}GGA", [*fl[:6], f"{n:02d}", *fl[7:]]))
        return out
    return f


def _none(_rng: np.random.Generator, _seed: int) -> Transform:
    return lambda _ctx, parts: parts


@dataclass(frozen=True, slots=True)
class Dialect:
    name: str
    make: Callable[[np.random.Generator, int], Transform]  # (own generator, seed) -> transform
    rate: int | None = None  # output rate it sets (Hz)
    text: str = ""


# Application order: sentence set and schedule first, then field contents, then stream damage.
DIALECTS: dict[str, Dialect] = {d.name: d for d in (
    Dialect("rate-5hz", _none, 5, "GGA and all epoch sentences at 5 Hz"),
    Dialect("rate-10hz", _none, 10, "GGA and all epoch sentences at 10 Hz"),
    Dialect("rate-20hz", _none, 20, "GGA and all epoch sentences at 20 Hz"),
    Dialect("gga-2hz-zda-1hz", _gga_2hz_zda_1hz, 2, "GGA at 2 Hz, RMC and ZDA at 1 Hz"),
    Dialect("rmc-10hz-gga-1hz", _rmc_10hz_gga_1hz, 10, "RMC at 10 Hz, GGA (heights) at 1 Hz"),
    Dialect("gns-only", _gns_only, None, "position only in GNS"),
    Dialect("multi-talker-gga", _multi_talker_gga, None, "GP and GL GGA for the same time"),
    Dialect("rmc-only", _rmc_only, None, "some epochs only RMC: no height"),
    Dialect("gsv-mixed-talkers", _gsv_mixed, None, "one GSV set over several talkers"),
    Dialect("gsa-no-sysid", _gsa_no_sysid, None, "pre-4.10 GSA: one talker, no system ID, IDs by range"),
    Dialect("default-date", _default_date, None, "1980-01-06 or 2000-01-01 until the first fix"),
    Dialect("empty-time-nofix", _empty_time_nofix, None, "empty time fields without a fix"),
    Dialect("zda-late", _zda_late, None, "ZDA stamped 50 ms after the time of fix"),
    Dialect("bad-checksum-times", _bad_checksum_times, None, "damaged copies with plausible times"),
    Dialect("binary", _binary, None, "RTCM 3 frames between sentences"),
)}
# Pairs that cannot be combined: both set the rate, or one removes what the other rewrites.
_RATE = tuple(n for n, d in DIALECTS.items() if d.rate)
CONFLICTS = {("gns-only", "rmc-only"), ("gns-only", "multi-talker-gga"), ("gns-only", "rmc-10hz-gga-1hz")}


def parse(spec: str | Sequence[str] | None) -> tuple[str, ...]:
    """'zda-late,binary' (or a list) -> known names in application order. ValueError otherwise."""
    if spec is None:
        return ()
    names = [n.strip() for n in (spec.split(",") if isinstance(spec, str) else spec) if n.strip()]
    bad = [n for n in names if n not in DIALECTS and n != "clean"]
    if bad:
        raise ValueError(f"unknown dialect {bad[0]!r}; known: {', '.join(DIALECTS)}")
    chosen = tuple(n for n in DIALECTS if n in names)
    rates = [n for n in chosen if n in _RATE]
    if len(rates) > 1:
        raise ValueError(f"dialects {rates[0]} and {rates[1]} both set the rate: choose one")
    for a, b in CONFLICTS:
        if a in chosen and b in chosen:
            raise ValueError(f"dialects {a} and {b} cannot be combined")
    return chosen


class DialectChain:
    """The chosen dialects of one receiver, each with its own generator (seed, scenario, name)."""

    def __init__(self, spec: str | Sequence[str] | None, seed: int, salt: int) -> None:
        self.names = parse(spec)
        rates = [DIALECTS[n].rate for n in self.names if DIALECTS[n].rate]
        self.rate: int | None = rates[0] if rates else None
        self._steps: list[Transform] = []
        for i, n in enumerate(DIALECTS):
            if n in self.names:
                self._steps.append(DIALECTS[n].make(np.random.default_rng([seed, salt, 100 + i]), seed))

    def apply(self, ctx: EpochCtx, parts: list[bytes]) -> list[bytes]:
        for step in self._steps:
            parts = step(ctx, parts)
        return parts

    def __bool__(self) -> bool:
        return bool(self.names)

