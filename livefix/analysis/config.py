"""Analysis settings. Defaults are common practice unless a source is named."""

from __future__ import annotations

from dataclasses import dataclass


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
