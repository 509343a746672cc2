"""Values the state model publishes: satellites, epochs and events. All immutable."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

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
