"""Analysis settings. Defaults are common practice unless a source is named."""

from __future__ import annotations

from dataclasses import dataclass, field

from livefix.analysis.reflection import ReflectionConfig


@dataclass(frozen=True, slots=True)
class AnalysisConfig:
    ref: tuple[float, float, float] | None = None  # surveyed point (lat, lon, ellipsoidal h)
    jump_m: float = 5.0  # epoch-to-epoch horizontal step that counts as a jump ...
    jump_sigma: float = 8.0  # ... or k sigma of the recent scatter, whichever is larger
    window_s: float = 600.0  # recent window for exact percentiles
    stall_s: float = 2.0  # no bytes for this long = stall
    outage_s: float = 0.0  # no-fix spans longer than this count as outages
    # convergence thresholds (horizontal, vertical) per fix type, metres
    converge_h: tuple[tuple[str, float], ...] = (("rtk_fixed", 0.05), ("rtk_float", 0.5), ("dgnss", 1.0),
                                                 ("single", 5.0))
    converge_v: tuple[tuple[str, float], ...] = (("rtk_fixed", 0.10), ("rtk_float", 1.0), ("dgnss", 2.0),
                                                 ("single", 10.0))
    converge_hold_s: float = 60.0  # must stay within the threshold this long
    interference_drop_db: float = 6.0  # broadband drop across most satellites at once
    elev_mask_deg: float = 5.0  # below this, satellites do not count towards obstruction
    # motion (livefix.analysis.motion): a stationary antenna reports speed noise of a few cm/s to a
    # few dm/s (over 1 m/s from low-cost receivers in poor sky), so speed alone never says "moving":
    # the positions must move on as well. Values are common practice.
    motion_speed_mps: float = 0.5  # speed over ground at or below which the receiver is not moving
    motion_spread_m: float = 10.0  # net displacement in each half-window that says "moving" ...
    motion_window_s: float = 20.0  # ... over this window, judged in two halves: 1 m/s for 20 s
    motion_hold_s: float = 10.0  # moving -> static only after this long without motion
    # speed over ground at or above which two epochs in a row say "moving" at once (18 km/h: far
    # beyond the Doppler speed noise of a standing antenna, common practice)
    motion_fast_mps: float = 5.0
    # position jumps (livefix.analysis.jumps): an epoch further from its fix type's settled centre than
    # max(converge radius of the fix type, jump_sigma * recent sigma) opens an excursion, closed when the
    # position is back inside for jump_hold_s, or taken as a new level after jump_level_s (common practice)
    jump_hold_s: float = 10.0
    jump_level_s: float = 300.0
    # convergence radius (horizontal, vertical) in metres set by a check profile; None: the radius of
    # the headline fix type from converge_h / converge_v
    converge_radius: tuple[float | None, float | None] = (None, None)
    # GNSS-IR reflector heights (livefix.analysis.reflectors): window, search and acceptance thresholds
    reflection: ReflectionConfig = field(default_factory=ReflectionConfig)
    # weak sky sectors (livefix.analysis.signal): an azimuth x elevation cell whose mean C/N0 sits
    # this far below the session's C/N0-vs-elevation curve is weak (multipath, foliage, a thin
    # wall). Common practice: a reflecting wall costs several dB near it, while sky cells of an
    # open site scatter by 1-2 dB about the curve; single satellites use signal.WEAK_DB (8 dB).
    weak_sector_db: float = 5.0
