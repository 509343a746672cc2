"""Scenarios for the simulated receiver: site, sky, fix timeline and scripted faults, from TOML.

Every site and number is invented for demonstration. A scenario fixes its start UTC so that the
same scenario, rate and seed always give the same bytes.
"""

from __future__ import annotations

import datetime as _dt
import tomllib
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Any

from livefix.sim.reflector import Reflector

FAULT_KINDS = ("outage", "jump", "stall", "garbage", "checksum", "restart")
RESTART_KINDS = ("cold", "warm", "hot")
FIX_ORDER = ("none", "single", "dgnss", "rtk_float", "rtk_fixed")
FIX_QUALITY = {"none": 0, "single": 1, "dgnss": 2, "rtk_float": 5, "rtk_fixed": 4}


@dataclass(frozen=True, slots=True)
class Sector:
    """Azimuth sector (clockwise from az_from to az_to, degrees true) below an elevation."""

    az_from: float
    az_to: float
    el_below: float
    atten_db: float = 0.0  # multipath: C/N0 reduction
    jitter_db: float = 0.0  # multipath: extra C/N0 noise (1 sigma)

    def contains(self, az: float, el: float) -> bool:
        if el >= self.el_below:
            return False
        span = (self.az_to - self.az_from) % 360.0
        return (az - self.az_from) % 360.0 <= span


@dataclass(frozen=True, slots=True)
class Fault:
    kind: str
    at: float  # seconds after the start
    duration: float = 0.0
    offset_m: float = 0.0  # jump: horizontal offset
    azimuth_deg: float = 0.0  # jump: direction of the offset
    up_m: float = 0.0  # jump: vertical offset
    restart: str = "cold"  # restart: cold | warm | hot
    fraction: float = 0.3  # checksum: share of sentences corrupted
    bytes_per_epoch: int = 40  # garbage: noise bytes per epoch

    def active(self, t: float) -> bool:
        return self.at <= t < self.at + self.duration


@dataclass(frozen=True, slots=True)
class Scenario:
    name: str
    description: str
    site_name: str
    start_utc: float  # POSIX seconds
    lat: float
    lon: float
    h: float  # ellipsoidal height, m
    sep: float  # geoid separation written in GGA (alt = h - sep)
    systems: tuple[str, ...] = ("G", "R", "E", "C")
    elevation_mask_deg: float = 10.0
    cn0_5deg: float = 32.0  # C/N0 model: at 5 degrees elevation
    cn0_zenith: float = 48.0  # ... and at zenith
    cn0_noise_db: float = 1.0
    track_min_cn0: float = 24.0  # below: in view, not tracked
    ttff_s: float = 30.0  # first start (cold)
    dgnss_after_s: float = 5.0  # after the first fix
    float_after_s: float = 15.0
    fixed_after_s: float = 40.0
    best_fix: str = "rtk_fixed"
    restart_ttff_s: dict[str, float] = field(default_factory=lambda: {"cold": 35.0, "warm": 20.0, "hot": 3.0})
    masks: tuple[Sector, ...] = ()
    multipath: tuple[Sector, ...] = ()
    faults: tuple[Fault, ...] = ()
    path: str = ""
    dialect: tuple[str, ...] = ()  # receiver dialects (livefix.sim.dialects), in application order
    reflectors: tuple[Reflector, ...] = ()  # horizontal reflecting planes (livefix.sim.reflector)
    announce: tuple[str, ...] = ()  # TXT texts sent once at start (invented model/firmware banner)

    @property
    def start_iso(self) -> str:
        return _dt.datetime.fromtimestamp(self.start_utc, tz=_dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ")

    @staticmethod
    def load(name_or_path: str | Path) -> Scenario:
        """A built-in scenario by name, or a TOML file by path. Raises ValueError naming file and key."""
        p = Path(name_or_path)
        if p.suffix == ".toml" or p.is_file():
            if not p.is_file():
                raise ValueError(f"no scenario file {str(p)!r}")
            text, label = p.read_text(encoding="utf-8"), str(p)
        else:
            name = str(name_or_path)
            res = resources.files("livefix.sim").joinpath("scenarios", f"{name}.toml")
            if not res.is_file():
                raise ValueError(f"unknown scenario {name!r}; built-in: {', '.join(list_scenarios())}")
            text, label = res.read_text(encoding="utf-8"), f"{name}.toml"
        try:
            data = tomllib.loads(text)
        except tomllib.TOMLDecodeError as exc:
            raise ValueError(f"{label}: {exc}") from exc
        return _from_dict(data, label)


def list_scenarios() -> list[str]:
    d = resources.files("livefix.sim").joinpath("scenarios")
    return sorted(f.name[:-5] for f in d.iterdir() if f.name.endswith(".toml"))


_TOP = {"name", "description", "start_utc", "site", "receiver", "fix", "restart", "mask", "multipath", "faults",
        "dialect", "reflector"}
_SITE = {"name", "lat", "lon", "h", "sep"}
_RECEIVER = {"systems", "elevation_mask_deg", "cn0_5deg", "cn0_zenith", "cn0_noise_db", "track_min_cn0",
             "announce"}
# NMEA 0183 reserves these characters; a TXT text longer than 61 characters would make the sentence
# "$GNTXT,01,01,02,...*hh<CR><LF>" exceed the standard's 82 characters
_TXT_RESERVED, _TXT_MAX = set(",*$!\\^~"), 61


def _announce(texts: Any) -> tuple[str, ...]:
    out = tuple(str(t) for t in texts)
    for t in out:
        if len(t) > _TXT_MAX or not t.isascii() or not t.isprintable() or _TXT_RESERVED & set(t):
            raise ValueError(f"receiver.announce {t!r}: printable ASCII without , * $ ! \\ ^ ~, "
                             f"at most {_TXT_MAX} characters")
    return out


_FIX = {"ttff_s", "dgnss_after_s", "float_after_s", "fixed_after_s", "best"}
_SECTOR = {"az_from", "az_to", "el_below", "atten_db", "jitter_db"}
_REFLECTOR = {"height_m", "amplitude", "roughness_m", "az_from", "az_to", "el_below", "phase_deg"}
_FAULT = {"kind", "at", "duration", "offset_m", "azimuth_deg", "up_m", "restart", "fraction", "bytes_per_epoch"}


def _check(label: str, where: str, got: dict[str, Any], allowed: set[str]) -> None:
    extra = sorted(set(got) - allowed)
    if extra:
        raise ValueError(f"{label}: unknown key {where}{extra[0]!r}")


def _from_dict(d: dict[str, Any], label: str) -> Scenario:
    _check(label, "", d, _TOP)
    site, rcv, fix = d.get("site", {}), d.get("receiver", {}), d.get("fix", {})
    _check(label, "site.", site, _SITE)
    _check(label, "receiver.", rcv, _RECEIVER)
    _check(label, "fix.", fix, _FIX)
    _check(label, "restart.", d.get("restart", {}), set(RESTART_KINDS))
    try:
        start = _dt.datetime.fromisoformat(str(d["start_utc"]).replace("Z", "+00:00"))
        if start.tzinfo is None:
            start = start.replace(tzinfo=_dt.UTC)
        masks = tuple(_sector(label, "mask", s) for s in d.get("mask", []))
        mps = tuple(_sector(label, "multipath", s) for s in d.get("multipath", []))
        refl = tuple(_reflector(label, r) for r in d.get("reflector", []))
        faults = tuple(sorted((_fault(label, f) for f in d.get("faults", [])), key=lambda f: f.at))
        systems = tuple(rcv.get("systems", ("G", "R", "E", "C")))
        bad = [s for s in systems if s not in ("G", "R", "E", "C")]
        if bad or not systems:
            raise ValueError(f"receiver.systems: {bad or systems} (use G, R, E, C)")
        best = str(fix.get("best", "rtk_fixed"))
        if best not in FIX_ORDER[1:]:
            raise ValueError(f"fix.best {best!r} (use one of {', '.join(FIX_ORDER[1:])})")
        restart = {"cold": 35.0, "warm": 20.0, "hot": 3.0} | {k: float(v) for k, v in d.get("restart", {}).items()}
        from livefix.sim.dialects import parse as parse_dialects

        try:
            dialect = parse_dialects(d.get("dialect"))
        except ValueError as exc:
            raise ValueError(f"dialect: {exc}") from None
        return Scenario(
            name=str(d.get("name", Path(label).stem)), description=str(d.get("description", "")),
            site_name=str(site.get("name", "")), start_utc=start.timestamp(),
            lat=float(site["lat"]), lon=float(site["lon"]), h=float(site["h"]), sep=float(site.get("sep", 0.0)),
            systems=systems, elevation_mask_deg=float(rcv.get("elevation_mask_deg", 10.0)),
            cn0_5deg=float(rcv.get("cn0_5deg", 32.0)), cn0_zenith=float(rcv.get("cn0_zenith", 48.0)),
            cn0_noise_db=float(rcv.get("cn0_noise_db", 1.0)), track_min_cn0=float(rcv.get("track_min_cn0", 24.0)),
            ttff_s=float(fix.get("ttff_s", 30.0)), dgnss_after_s=float(fix.get("dgnss_after_s", 5.0)),
            float_after_s=float(fix.get("float_after_s", 15.0)), fixed_after_s=float(fix.get("fixed_after_s", 40.0)),
            best_fix=best, restart_ttff_s=restart, masks=masks, multipath=mps, faults=faults, path=label,
            dialect=dialect, reflectors=refl, announce=_announce(rcv.get("announce", ())))
    except KeyError as exc:
        raise ValueError(f"{label}: missing key {exc.args[0]!r}") from exc
    except (TypeError, ValueError) as exc:
        raise ValueError(f"{label}: {exc}") from exc


def _sector(label: str, where: str, s: dict[str, Any]) -> Sector:
    _check(label, f"{where}.", s, _SECTOR)
    return Sector(float(s["az_from"]), float(s["az_to"]), float(s.get("el_below", 90.0)),
                  float(s.get("atten_db", 0.0)), float(s.get("jitter_db", 0.0)))


def _reflector(label: str, r: dict[str, Any]) -> Reflector:
    _check(label, "reflector.", r, _REFLECTOR)
    out = Reflector(float(r["height_m"]), float(r.get("amplitude", 0.15)), float(r.get("roughness_m", 0.0)),
                    float(r.get("az_from", 0.0)), float(r.get("az_to", 360.0)), float(r.get("el_below", 30.0)),
                    float(r.get("phase_deg", 180.0)))
    if not (out.height_m > 0 and 0 <= out.amplitude < 1 and out.roughness_m >= 0):
        raise ValueError("reflector: height_m > 0, 0 <= amplitude < 1 and roughness_m >= 0")
    return out


def _fault(label: str, f: dict[str, Any]) -> Fault:
    _check(label, "faults.", f, _FAULT)
    kind = str(f["kind"])
    if kind not in FAULT_KINDS:
        raise ValueError(f"faults.kind {kind!r} (use one of {', '.join(FAULT_KINDS)})")
    restart = str(f.get("restart", "cold"))
    if restart not in RESTART_KINDS:
        raise ValueError(f"faults.restart {restart!r} (use cold, warm or hot)")
    return Fault(kind, float(f["at"]), float(f.get("duration", 0.0)), float(f.get("offset_m", 0.0)),
                 float(f.get("azimuth_deg", 0.0)), float(f.get("up_m", 0.0)), restart,
                 float(f.get("fraction", 0.3)), int(f.get("bytes_per_epoch", 40)))
