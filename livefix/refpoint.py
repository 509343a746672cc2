"""The one parser for a surveyed reference point (`--ref` of watch, check and report, and the
monitor's reference prompt), so every command accepts the same forms and refuses with the same words.

Accepted: three numbers LAT, LON, H separated by commas and/or spaces ("47.1,8.2,500",
"47.1, 8.2, 500", "47.1 8.2 500"): WGS 84 latitude and longitude in decimal degrees, ellipsoidal
height in metres. Longitude is the signed ±180° convention of NMEA and WGS 84 coordinates; a
0..360° longitude is refused rather than guessed.
"""

from __future__ import annotations

import math

FORM = "LAT,LON,H (degrees, degrees, ellipsoidal metres)"
LAT_RANGE = (-90.0, 90.0)  # geodetic latitude, degrees
LON_RANGE = (-180.0, 180.0)  # signed longitude, degrees (NMEA 0183 gives 0..180 with E/W)
# Ellipsoidal height, metres: the solid Earth lies within about -500..9000 m of WGS 84; the wider
# bounds leave room for aircraft and balloons yet catch a height typed in the wrong field (common
# practice).
H_RANGE = (-12000.0, 100000.0)


def parse_ref(text: str) -> tuple[float, float, float]:
    """'lat, lon, h' -> (lat, lon, h) in degrees, degrees, metres; ValueError with one line saying
    what is wrong."""
    parts = text.replace(",", " ").split()
    if len(parts) != 3:
        raise ValueError(f"reference {text!r}: needs three numbers {FORM}")
    try:
        lat, lon, h = (float(p) for p in parts)
    except ValueError:
        raise ValueError(f"reference {text!r}: not numbers; use {FORM}") from None
    if not all(math.isfinite(v) for v in (lat, lon, h)):
        raise ValueError(f"reference {text!r}: not numbers; use {FORM}")
    if not (LAT_RANGE[0] <= lat <= LAT_RANGE[1] and LON_RANGE[0] <= lon <= LON_RANGE[1]
            and H_RANGE[0] <= h <= H_RANGE[1]):
        raise ValueError(f"reference {text!r}: out of range (latitude ±90°, longitude ±180°, "
                         f"height {H_RANGE[0]:.0f}..{H_RANGE[1]:.0f} m)")
    return lat, lon, h
