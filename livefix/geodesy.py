"""WGS 84 geodesy and satellite geometry shared by the simulator and the analysis.

Constants: NIMA TR8350.2, 3rd edition (2000, amended 2004), Table 3.1 (docs/sources.md#wgs-84).
Geodetic -> ECEF is closed form; ECEF -> geodetic uses a closed-form 1976 estimate with two refinements
(docs/sources.md#ecef-to-geodetic), well below a millimetre for terrestrial heights.
"""

from __future__ import annotations

import math

import numpy as np

A = 6378137.0  # semi-major axis, m
INV_F = 298.257223563
F = 1.0 / INV_F
B = A * (1.0 - F)
E2 = F * (2.0 - F)  # first eccentricity squared
EP2 = E2 / (1.0 - E2)  # second eccentricity squared
GM = 3.986004418e14  # m^3/s^2
OMEGA_E = 7.292115e-5  # rad/s


def geodetic_to_ecef(lat_deg: float, lon_deg: float, h: float) -> tuple[float, float, float]:
    lat, lon = math.radians(lat_deg), math.radians(lon_deg)
    s, c = math.sin(lat), math.cos(lat)
    n = A / math.sqrt(1.0 - E2 * s * s)
    return ((n + h) * c * math.cos(lon), (n + h) * c * math.sin(lon), (n * (1.0 - E2) + h) * s)


def ecef_to_geodetic(x: float, y: float, z: float) -> tuple[float, float, float]:
    lon = math.atan2(y, x)
    p = math.hypot(x, y)
    if p < 1e-9:  # on the polar axis
        return (90.0 if z >= 0 else -90.0, 0.0, abs(z) - B)
    theta = math.atan2(z * A, p * B)
    lat = math.atan2(z + EP2 * B * math.sin(theta) ** 3, p - E2 * A * math.cos(theta) ** 3)
    for _ in range(2):
        s = math.sin(lat)
        n = A / math.sqrt(1.0 - E2 * s * s)
        h = p / math.cos(lat) - n
        lat = math.atan2(z, p * (1.0 - E2 * n / (n + h)))
    s = math.sin(lat)
    n = A / math.sqrt(1.0 - E2 * s * s)
    h = p / math.cos(lat) - n if abs(lat) < math.radians(89.0) else abs(z) / abs(s) - n * (1.0 - E2)
    return (math.degrees(lat), math.degrees(lon), h)


def enu_matrix(lat_deg: float, lon_deg: float) -> np.ndarray:
    """Rows are the local east, north and up unit vectors in ECEF."""
    lat, lon = math.radians(lat_deg), math.radians(lon_deg)
    sl, cl, so, co = math.sin(lat), math.cos(lat), math.sin(lon), math.cos(lon)
    return np.array([[-so, co, 0.0], [-sl * co, -sl * so, cl], [cl * co, cl * so, sl]])


class LocalFrame:
    """East/north/up about a fixed reference point; cheap per-point conversion."""

    def __init__(self, lat_deg: float, lon_deg: float, h: float) -> None:
        self.lat, self.lon, self.h = lat_deg, lon_deg, h
        self.origin = np.array(geodetic_to_ecef(lat_deg, lon_deg, h))
        self.rot = enu_matrix(lat_deg, lon_deg)
        self._r = self.rot.tolist()
        self._o = self.origin.tolist()

    def enu(self, lat_deg: float, lon_deg: float, h: float) -> tuple[float, float, float]:
        x, y, z = geodetic_to_ecef(lat_deg, lon_deg, h)
        dx, dy, dz = x - self._o[0], y - self._o[1], z - self._o[2]
        r = self._r
        return (r[0][0] * dx + r[0][1] * dy,
                r[1][0] * dx + r[1][1] * dy + r[1][2] * dz,
                r[2][0] * dx + r[2][1] * dy + r[2][2] * dz)

    def geodetic(self, e: float, n: float, u: float) -> tuple[float, float, float]:
        d = self.rot.T @ np.array([e, n, u]) + self.origin
        return ecef_to_geodetic(float(d[0]), float(d[1]), float(d[2]))


def az_el(frame: LocalFrame, sat_ecef: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Azimuth (deg true, 0..360) and elevation (deg) of ECEF positions (N×3) seen from frame."""
    d = (np.atleast_2d(sat_ecef) - frame.origin) @ frame.rot.T
    e, n, u = d[:, 0], d[:, 1], d[:, 2]
    az = np.degrees(np.arctan2(e, n)) % 360.0
    el = np.degrees(np.arctan2(u, np.hypot(e, n)))
    return az, el


def line_of_sight(az_deg: np.ndarray, el_deg: np.ndarray) -> np.ndarray:
    """Unit vectors (E, N, U) towards satellites."""
    az, el = np.radians(az_deg), np.radians(el_deg)
    ce = np.cos(el)
    return np.column_stack((ce * np.sin(az), ce * np.cos(az), np.sin(el)))


def dop(az_deg, el_deg, systems=None) -> dict[str, float] | None:  # noqa: ANN001
    """DOP from geometry: G = [-los | 1_sys...], Q = (GᵀG)⁻¹ (the linearised navigation equations).

    One receiver-clock column per constellation in `systems` (a sequence of letters, one per
    satellite); all in one clock when None. TDOP is that of the first clock. Returns None when the
    geometry is singular or there are fewer satellites than unknowns.
    """
    az = np.asarray(az_deg, dtype=float)
    el = np.asarray(el_deg, dtype=float)
    n = az.size
    los = line_of_sight(az, el)
    if systems is None:
        clocks = np.ones((n, 1))
    else:
        names = sorted(set(systems))
        clocks = np.zeros((n, len(names)))
        idx = {s: i for i, s in enumerate(names)}
        for row, s in enumerate(systems):
            clocks[row, idx[s]] = 1.0
    g = np.hstack((-los, clocks))
    if n < g.shape[1]:
        return None
    ata = g.T @ g
    if np.linalg.cond(ata) > 1e12:
        return None
    q = np.linalg.inv(ata)
    qe, qn, qu, qt = q[0, 0], q[1, 1], q[2, 2], q[3, 3]
    return {"gdop": float(math.sqrt(np.trace(q))), "pdop": float(math.sqrt(qe + qn + qu)),
            "hdop": float(math.sqrt(qe + qn)), "vdop": float(math.sqrt(qu)), "tdop": float(math.sqrt(qt))}
