"""Values the state model publishes: satellites, epochs and events. All immutable."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field, fields
from functools import partial
from typing import Any, TypeVar

from livefix.framing import built_core, native_core

T = TypeVar("T")

# GGA quality indicator -> our fix-type names (NMEA 0183; 0-2 verified, 3-8 from memory, see
# docs/sources.md#gga-quality). These names are the keys of fix availability everywhere.
FIX_NAMES: dict[int, str] = {
    0: "none", 1: "single", 2: "dgnss", 3: "pps", 4: "rtk_fixed", 5: "rtk_float",
    6: "estimated", 7: "manual", 8: "simulator",
}

# RINEX constellation letters; from NMEA talker ids (GSV carries no system id).
TALKER_SYSTEM: dict[str, str] = {"GP": "G", "GL": "R", "GA": "E", "GB": "C", "BD": "C", "GQ": "J", "GI": "I"}
# NMEA 4.10+ system id (GSA/GBS/GRS) -> letter.
SYSTEM_ID: dict[int, str] = {1: "G", 2: "R", 3: "E", 4: "C", 5: "J", 6: "I"}


@dataclass(frozen=True, slots=True)
class SatObs:
    """One satellite signal as of an epoch. Key: (system, prn, signal)."""

    system: str  # RINEX letter G R E C J I S
    prn: int  # number within the system as shown to users (GLONASS slot 1-24, SBAS 120-158, ...)
    signal: str  # NMEA 4.10+ GSV signal id as given ("1", "7", ...); "" when the receiver gives none
    elev: int | None  # degrees above the horizon
    azim: int | None  # degrees true
    cn0: float | None  # dB-Hz, whole as NMEA defines it (int) or with decimals where given; None = untracked
    used: bool  # listed in GSA as used in the solution
    # host time this satellite's set was last listed: set in StateModel.sky() (snapshots); 0.0 in
    # Epoch.sats, which stays one tuple object while only these times change
    last_seen_mono: float = 0.0

    @property
    def key(self) -> tuple[str, int, str]:
        return (self.system, self.prn, self.signal)

    @property
    def label(self) -> str:
        return f"{self.system}{self.prn:02d}"


@dataclass(frozen=True, slots=True)
class Epoch:
    """Everything the receiver said about one time of fix.

    Times: mono/wall are host times of the first sentence of the epoch (from the stream items);
    utc is the receiver's time of fix as POSIX seconds (date from RMC/ZDA, else carried forward
    with midnight rollover), None when the receiver gave no time.
    """

    mono: float
    wall: float
    utc: float | None
    quality: int  # GGA quality (0 = no fix); from RMC/GNS mode when no GGA
    lat: float | None = None  # degrees, WGS 84
    lon: float | None = None
    h: float | None = None  # ellipsoidal height = alt + sep, metres
    alt_msl: float | None = None
    sep: float | None = None  # geoid separation
    num_sv: int | None = None  # GGA satellites used
    hdop: float | None = None  # reported (GGA, else GSA)
    pdop: float | None = None  # reported (GSA)
    vdop: float | None = None  # reported (GSA)
    fix_dim: int | None = None  # GSA navMode: 1 none, 2 2D, 3 3D
    sigma_lat: float | None = None  # GST 1-sigma, metres
    sigma_lon: float | None = None
    sigma_alt: float | None = None
    sigma_rms: float | None = None  # GST RMS of range residuals
    speed_mps: float | None = None
    course: float | None = None
    diff_age: float | None = None  # seconds since last differential correction
    sats: tuple[SatObs, ...] = ()  # satellites in view as of this epoch (latest complete GSV sets)
    used_prns: tuple[tuple[str, int], ...] = ()  # (system, prn) listed used in GSA this epoch
    sentences: tuple[str, ...] = ()  # msg ids seen in this epoch, in order
    # satellite numbers listed this epoch (GSA, or GSV parts) that fit no NMEA block: 'GPGSA 250'
    unknown_ids: tuple[str, ...] = ()
    # False while the date of this epoch is not known (no valid receiver date, no host date): utc
    # and wall then count days from 1970-01-01 and are shown as a time of day (livefix.timefmt)
    date_known: bool = True
    # DTM in this epoch (NMEA 0183 datum reference): the local datum code ("W84", "P90", "999" user
    # defined, ...) and the reference datum; None when the epoch carried no DTM
    datum: tuple[str, str] | None = None

    @property
    def fix(self) -> str:
        return FIX_NAMES.get(self.quality, "none")

    @property
    def has_fix(self) -> bool:
        return self.quality > 0 and self.lat is not None and self.lon is not None


# Event kinds shared by state, analysis, UI and reports.
EVENT_KINDS = (
    "link",  # connection state change (data: state)
    "time_jump", "time_rollback", "date_change", "receiver_restart",
    "fix_lost", "fix_regained", "fix_change", "jump", "interference", "stall", "reconnect",
    "checksum_burst", "gsv_incomplete", "marker", "recording", "note",
    "time_fault",  # a receiver time jump not confirmed by the following epochs (data: step_s, time)
    "receiver_date_invalid",  # a default or rolled-over receiver date (data: date, reason)
)


@dataclass(frozen=True, slots=True)
class Event:
    mono: float
    wall: float  # host UTC POSIX seconds
    kind: str  # one of EVENT_KINDS
    text: str  # one plain line for people; renderers escape it
    utc: float | None = None  # receiver time when known
    data: dict[str, Any] = field(default_factory=dict)

    def to_json(self) -> dict[str, Any]:
        from livefix.timefmt import iso

        # "clock" says whose time "time" is: the receiver's UTC, or the host clock when no UTC is known
        return {"time": iso(self.utc if self.utc is not None else self.wall), "kind": self.kind,
                "text": self.text, "clock": "receiver" if self.utc is not None else "host", **self.data}


def slot_maker(cls: type[T], native: bool | None = None) -> Callable[[tuple], T]:
    """A constructor from one tuple of field values in field order, equal to cls(*values) for a
    slotted dataclass without __post_init__.

    Why: a frozen dataclass's __init__ sets each field through object.__setattr__ (~3 us for an
    Epoch, made at 10-20 Hz). The C core's make() stores the references at the slot offsets
    (~0.1 us); the pure path calls the slot descriptors' setters (~1.7 us). native: None as
    native_core() says, True the C core when built (tests), False the pure path. A wrong length
    or a non-tuple raises TypeError on both paths."""
    names = tuple(f.name for f in fields(cls))  # type: ignore[arg-type]
    if tuple(getattr(cls, "__slots__", ())) != names:
        raise TypeError(f"{cls.__name__}: slot_maker needs a slotted dataclass, slots in field order")
    if hasattr(cls, "__post_init__"):
        raise TypeError(f"{cls.__name__}: slot_maker would skip __post_init__")
    slots = tuple(cls.__dict__[n] for n in names)
    core = native_core() if native is None else built_core() if native else None
    make = getattr(core, "make", None)  # None also for a core built before make() existed
    if make is not None:
        return partial(make, slots)
    setters, new, n = tuple(d.__set__ for d in slots), object.__new__, len(names)

    def make_pure(values: tuple) -> T:
        if values.__class__ is not tuple or len(values) != n:
            raise TypeError(f"{cls.__name__}: a tuple of {n} values")
        obj = new(cls)
        for put, v in zip(setters, values, strict=True):
            put(obj, v)
        return obj

    return make_pure


# Epoch and SatObs from a tuple of values in field order (the state model's hot constructors);
# StateModel._close and Sky write the values in this order.
EPOCH_FIELDS = ("mono", "wall", "utc", "quality", "lat", "lon", "h", "alt_msl", "sep", "num_sv", "hdop", "pdop",
                "vdop", "fix_dim", "sigma_lat", "sigma_lon", "sigma_alt", "sigma_rms", "speed_mps", "course",
                "diff_age", "sats", "used_prns", "sentences", "unknown_ids", "date_known", "datum")
SATOBS_FIELDS = ("system", "prn", "signal", "elev", "azim", "cn0", "used", "last_seen_mono")
if tuple(f.name for f in fields(Epoch)) != EPOCH_FIELDS or tuple(f.name for f in fields(SatObs)) != SATOBS_FIELDS:
    raise ImportError("Epoch or SatObs fields changed: update StateModel._close and Sky (livefix.state)")
make_epoch: Callable[[tuple], Epoch] = slot_maker(Epoch)
make_satobs: Callable[[tuple], SatObs] = slot_maker(SatObs)
