"""The simulated GNSS receiver: deterministic, seeded, sans-I/O.

`SimReceiver.epochs()` yields `(t, bytes)` per output epoch, t in seconds since the start; the
bytes already contain scripted garbage and corrupted sentences, and a stall yields nothing for
its span. Satellite state (tracking, C/N0, used set, DOP) is refreshed once per second, position
every epoch. Ground truth of the latest epoch is in `rx.last`, the antenna position in `rx.truth`.

Receiver dialects (livefix.sim.dialects) rewrite each epoch's sentences before the scripted faults.

Restart command (our own proprietary sentence, checksum optional): `$PLFX,RESET,COLD*hh`
(also WARM, HOT), acknowledged with `$PLFX,ACK,RESET,COLD*hh`.
"""

from __future__ import annotations

import datetime as _dt
import math
import re
import threading
import zlib
from collections import deque
from collections.abc import Iterator, Sequence
from dataclasses import dataclass

import numpy as np

from livefix import geodesy
from livefix.sim import nmea
from livefix.sim.dialects import DialectChain, EpochCtx
from livefix.sim.errors import GRID_HZ, SYSTEM_CN0_OFFSET, UERE, PositionError, cn0_model
from livefix.sim.orbits import Constellation
from livefix.sim.reflector import total_change_db, wavelengths
from livefix.sim.scenario import FIX_ORDER, Fault, Scenario

ORBIT_SEED = 20261  # the invented "almanac": the same sky for every run
_CMD = re.compile(rb"^\$PLFX,RESET,(COLD|WARM|HOT)(?:\*([0-9A-Fa-f]{2}))?$")
_STATION = 42  # invented reference-station id written in GGA for differential fixes
# After a cold restart the receiver has no time until its first fix and counts from the GPS time
# origin, 1980-01-06 (common practice; from memory). Warm and hot restarts keep their clock.
GPS_EPOCH = _dt.datetime(1980, 1, 6, tzinfo=_dt.UTC).timestamp()


@dataclass(frozen=True, slots=True)
class Truth:
    lat: float
    lon: float
    h: float
    sep: float


@dataclass(frozen=True, slots=True)
class SatTruth:
    system: str
    prn: int  # as written in NMEA (GLONASS 65..)
    az: float
    el: float
    cn0: int | None  # None: in view, not tracked
    used: bool


@dataclass(frozen=True, slots=True)
class EpochTruth:
    t: float
    fix: str
    err_enu: tuple[float, float, float]  # reported minus true position (incl. a jump), metres
    dop: dict[str, float] | None
    sats: tuple[SatTruth, ...]
    emitted: bool  # False during a stall
    garbage: int  # noise bytes inserted
    corrupted: int  # sentences with a broken checksum
    jump: bool


class SimReceiver:
    def __init__(self, scenario: Scenario, rate_hz: float = 10, seed: int = 1,
                 start_utc: float | None = None, dialect: str | Sequence[str] | None = None) -> None:
        """dialect: receiver dialects (livefix.sim.dialects), e.g. "zda-late,binary"; a rate
        dialect overrides rate_hz. None: the scenario's own `dialect` key."""
        if not (1 <= rate_hz <= 20) or float(rate_hz) != int(rate_hz):
            raise ValueError(f"sim rate {rate_hz!r} Hz: use a whole number from 1 to 20")
        self.sc = scenario
        self.seed = seed
        salt = zlib.crc32(scenario.name.encode())
        self.dialects = DialectChain(scenario.dialect if dialect is None else dialect, seed, salt)
        self.rate = self.dialects.rate or int(rate_hz)
        self.start_utc = scenario.start_utc if start_utc is None else float(start_utc)
        self.truth = Truth(scenario.lat, scenario.lon, scenario.h, scenario.sep)
        self.frame = geodesy.LocalFrame(scenario.lat, scenario.lon, scenario.h)
        self._ecef = tuple(float(v) for v in geodesy.geodetic_to_ecef(scenario.lat, scenario.lon, scenario.h))
        self.const = Constellation(scenario.systems, np.random.default_rng(ORBIT_SEED))
        self._rng_err = np.random.default_rng([seed, salt, 1])
        self._rng_cn0 = np.random.default_rng([seed, salt, 2])
        self._rng_bad = np.random.default_rng([seed, salt, 3])
        self._rng_acq = np.random.default_rng([seed, salt, 4])
        self._rng_vel = np.random.default_rng([seed, salt, 5])
        self._sat_off = self._rng_cn0.normal(0.0, 1.5, len(self.const)) + np.array(
            [SYSTEM_CN0_OFFSET[s] for s in self.const.systems])
        self._sys_arr = np.array(self.const.systems)
        self._lam = wavelengths(self.const.systems)  # carrier per satellite, for reflections
        self._err = PositionError(self._rng_err)
        self._talker = "GN" if len(scenario.systems) > 1 else nmea.TALKER[scenario.systems[0]]
        self.events: deque[tuple[float, str, str]] = deque(maxlen=1000)
        self.last: EpochTruth | None = None
        self.commands_refused = 0
        self._cmd_lock = threading.Lock()
        self._cmd_buf = b""
        self._pending: list[str] = []
        self._acks: list[str] = []
        self._start_acq(0.0, scenario.ttff_s, "start")
        self._sats: tuple[SatTruth, ...] = ()
        self._dop: dict[str, float] | None = None
        self._fix_type_since = ("none", 0.0)
        self._prev_fix = "none"
        self._clock_lost_at: float | None = None  # cold restart time while UTC is unknown
        self._announced = not scenario.announce

    # ----- commands -------------------------------------------------------------------------
    def command(self, data: bytes) -> None:
        """Bytes written to the receiver; complete restart sentences take effect at the next epoch."""
        with self._cmd_lock:
            buf = self._cmd_buf + data
            *lines, tail = re.split(rb"[\r\n]+", buf)
            if _CMD.match(tail.strip()) and b"*" in tail:
                lines.append(tail)
                tail = b""
            self._cmd_buf = tail[-256:]
            for line in lines:
                self._parse_command(line.strip())

    def _parse_command(self, line: bytes) -> None:
        if not line:
            return
        m = _CMD.match(line)
        if m is None or (m.group(2) and m.group(2).decode().upper() != nmea.checksum(line[1:line.index(b"*")].decode())):
            self.commands_refused += 1
            return
        self._pending.append(m.group(1).decode().lower())

    # ----- timeline ------------------------------------------------------------------------
    def _start_acq(self, t: float, ttff: float, why: str) -> None:
        self._acq_t, self._ttff = t, ttff
        # each satellite is acquired at an invented time within the TTFF (the first ones early)
        self._acq_at = t + self._rng_acq.uniform(0.15, 0.9, len(self.const)) * ttff
        self.events.append((t, "restart" if why != "start" else "start", why))

    def fix_at(self, t: float) -> str:
        """Scripted fix type at t (before the satellite-count check)."""
        first = self._acq_t + self._ttff
        if t < first:
            return "none"
        dt = t - first
        fx = self.sc
        steps = (("single", 0.0), ("dgnss", fx.dgnss_after_s), ("rtk_float", fx.float_after_s),
                 ("rtk_fixed", fx.fixed_after_s))
        best = FIX_ORDER.index(fx.best_fix)
        name = "single"
        for nm, after in steps:
            if dt >= after and FIX_ORDER.index(nm) <= best:
                name = nm
        return name

    def _faults(self, t: float, kind: str) -> list[Fault]:
        return [f for f in self.sc.faults if f.kind == kind and f.active(t)]

    # ----- satellites ----------------------------------------------------------------------
    def _refresh_sats(self, t: float, outage: bool) -> None:
        az, el = geodesy.az_el(self.frame, self.const.ecef(t))
        sc = self.sc
        cn0 = cn0_model(el, sc.cn0_5deg, sc.cn0_zenith) + self._sat_off
        cn0 = cn0 + self._rng_cn0.normal(0.0, sc.cn0_noise_db, len(el))
        for mp in sc.multipath:
            hit = np.array([mp.contains(a, e) for a, e in zip(az, el, strict=True)])
            cn0 = np.where(hit, cn0 - mp.atten_db + self._rng_cn0.normal(0.0, max(mp.jitter_db, 1e-9), len(el)), cn0)
        if sc.reflectors:  # interference with reflections off the site's planes (no random draws)
            cn0 = cn0 + total_change_db(sc.reflectors, az, el, self._lam)
        masked = np.array([any(m.contains(a, e) for m in sc.masks) for a, e in zip(az, el, strict=True)])
        view = el >= 0.0
        tracked = view & (el >= 3.0) & ~masked & (cn0 >= sc.track_min_cn0) & (t >= self._acq_at) & (not outage)
        usable = tracked & (el >= sc.elevation_mask_deg)
        used = np.zeros(len(el), dtype=bool)
        for s in sc.systems:  # at most 12 per system (GSA slots), highest first
            idx = np.flatnonzero(usable & (self._sys_arr == s))
            used[idx[np.argsort(-el[idx])][:12]] = True
        order = np.lexsort((np.array(self.const.prns), self._sys_arr))
        self._sats = tuple(
            SatTruth(self.const.systems[i], self.const.prns[i], float(az[i]), float(el[i]),
                     int(min(99, max(0, round(cn0[i])))) if tracked[i] else None, bool(used[i]))
            for i in order if view[i])
        u = np.flatnonzero(used)
        self._dop = geodesy.dop(az[u], el[u], [self.const.systems[i] for i in u]) if u.size >= 4 else None

    # ----- epochs ----------------------------------------------------------------------------
    def epochs(self, duration: float | None = None) -> Iterator[tuple[float, bytes]]:
        """Yield (t, bytes) per epoch until `duration` seconds (forever when None)."""
        k = 0
        dt = 1.0 / self.rate
        sc = self.sc
        was_out = False
        while duration is None or k / self.rate < duration - 1e-9:
            t = k / self.rate
            for f in sc.faults:
                if f.kind == "restart" and f.at <= t < f.at + dt:
                    self._restart(t, f.restart, "scripted")
            with self._cmd_lock:
                pending, self._pending = self._pending, []
            for kind in pending:
                self._restart(t, kind, "command")
                self._acks.append(kind)
            outage = bool(self._faults(t, "outage"))
            if was_out and not outage:
                self._start_acq(t, sc.restart_ttff_s["hot"], "outage end")
            changed, was_out = outage != was_out, outage
            if k % self.rate == 0 or not self._sats or changed:
                self._refresh_sats(t, outage)
            out = self._epoch(t, dt, outage)
            k += 1
            if out is not None:
                yield t, out

    def _restart(self, t: float, kind: str, why: str) -> None:
        self._start_acq(t, self.sc.restart_ttff_s[kind], f"{kind} ({why})")
        self._sats = ()
        self._clock_lost_at = t if kind == "cold" else None

    def _epoch(self, t: float, dt: float, outage: bool) -> bytes | None:
        sc = self.sc
        used = [s for s in self._sats if s.used]
        fix = "none" if outage or self._dop is None or len(used) < 5 else self.fix_at(t)
        if fix != "none":
            self._clock_lost_at = None
        utc = self.start_utc + t if self._clock_lost_at is None else GPS_EPOCH + t - self._clock_lost_at
        d = _dt.datetime.fromtimestamp(utc, tz=_dt.UTC)
        if fix != self._fix_type_since[0]:
            self._fix_type_since = (fix, t)
        tk = self._talker
        parts: list[bytes] = [nmea.ack(a) for a in self._acks]
        if not self._announced:  # the start-up banner, once (scenario receiver.announce)
            parts += nmea.txt(tk, sc.announce)
            self._announced = True
        self._acks = []
        jump = self._faults(t, "jump")
        err = (0.0, 0.0, 0.0)
        if fix == "none":
            parts += [nmea.gga(tk, d, fix, None, None, None, sc.sep, 0, None, None, None),
                      nmea.rmc(tk, d, fix, None, None, None, None), nmea.vtg(tk, fix, None, None)]
            parts += [nmea.gsa(tk, 1, [], None, None, None, s) for s in sc.systems]
        else:
            dop = self._dop or {}
            sig = self._err.sigmas(fix, dop["hdop"], dop["vdop"], t - self._fix_type_since[1])
            resume = self._prev_fix == "none"
            e = self._err.at(round(t * GRID_HZ), fix if resume else self._prev_fix, fix, sig, resume)
            for f in jump:
                a = math.radians(f.azimuth_deg)
                e = e + np.array([f.offset_m * math.sin(a), f.offset_m * math.cos(a), f.up_m])
            err = (float(e[0]), float(e[1]), float(e[2]))
            lat, lon, h = self.frame.geodetic(*err)
            vel = self._rng_vel.normal(0.0, 0.01 + sig[0] * 0.02, 2)
            sog, cog = float(math.hypot(*vel)) / 0.514444, math.degrees(math.atan2(vel[0], vel[1])) % 360.0
            diff = fix not in ("single",)
            age, st = (1.0, _STATION) if diff else (None, None)
            parts += [nmea.gga(tk, d, fix, lat, lon, h - sc.sep, sc.sep, len(used), dop["hdop"], age, st),
                      nmea.rmc(tk, d, fix, lat, lon, sog, cog), nmea.vtg(tk, fix, sog, cog)]
            for s in sc.systems:
                prns = [x.prn for x in used if x.system == s]
                parts.append(nmea.gsa(tk, 3, prns, dop["pdop"], dop["hdop"], dop["vdop"], s))
        if fix != "none":
            rms = 0.8 * UERE[fix][0]  # range residual RMS: a share of the UERE (invented)
            parts.append(nmea.gst(tk, d, rms, sig[1], sig[0], sig[2]))
        whole = round(t * self.rate) % self.rate == 0
        if whole:  # satellites and date once a second
            for s in sc.systems:
                parts += nmea.gsv(s, [(x.prn, max(0, round(x.el)), round(x.az) % 360, x.cn0)
                                      for x in self._sats if x.system == s])
            parts.append(nmea.zda(tk, d))
        self._prev_fix = fix
        if self.dialects:
            by_sys = {s: sum(1 for x in used if x.system == s) for s in sc.systems}
            parts = self.dialects.apply(EpochCtx(t, self.rate, fix, whole, sc.systems, by_sys, self._ecef), parts)
        stalled = bool(self._faults(t, "stall"))
        corrupted = garbage = 0
        for f in self._faults(t, "checksum"):
            for i, p in enumerate(parts):
                if p[:1] == b"$" and self._rng_bad.random() < f.fraction:  # sentences, not binary frames
                    parts[i] = _corrupt(p, self._rng_bad)
                    corrupted += 1
        for f in self._faults(t, "garbage"):
            noise = _noise(self._rng_bad, f.bytes_per_epoch)
            parts.insert(int(self._rng_bad.integers(0, len(parts) + 1)), noise)
            garbage += len(noise)
        self.last = EpochTruth(t, fix, err, self._dop if fix != "none" else None, self._sats,
                               not stalled, garbage, corrupted, bool(jump))
        return None if stalled else b"".join(parts)


def _corrupt(s: bytes, rng: np.random.Generator) -> bytes:
    """Break a sentence so that its checksum no longer matches (a changed digit or checksum)."""
    star = s.rfind(b"*")
    if rng.random() < 0.5:
        bad = (int(s[star + 1:star + 3], 16) ^ int(rng.integers(1, 256))) & 0xFF
        return s[:star + 1] + f"{bad:02X}".encode() + s[star + 3:]
    pos = int(rng.integers(7, star))
    old = s[pos]
    new = old ^ (1 + int(rng.integers(0, 7)))  # a flipped low bit: never equal to the old byte
    if new in (0x24, 0x2A, 0x0D, 0x0A, 0x21):
        new = 0x23 if old != 0x23 else 0x25
    return s[:pos] + bytes([new]) + s[pos + 1:]


def _noise(rng: np.random.Generator, n: int) -> bytes:
    """Binary noise without sentence starters or line ends, so framing (not luck) must cope."""
    raw = rng.integers(0, 256, max(1, n), dtype=np.uint8).tobytes()
    return raw.translate(bytes.maketrans(b"$!\r\n", b"\x00\x01\x02\x03"))
