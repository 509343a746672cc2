"""E/N/U projection of epoch positions with the ECEF of the latest point memoised.

Why: the fix statistics, the position statistics and the trend each project the same epoch
position into their own frame, and geodetic -> ECEF is the costly half of that. The memo holds
only the latest point and is keyed on the identity of the three floats (an Epoch hands out the
same float objects every time), so it returns exactly the floats a fresh conversion would. The
Analyzer owns one memo and hands it to its stages, so two pipelines in one process share none.
The projection repeats livefix.geodesy.LocalFrame.enu operation for operation (a test checks the
two agree bit for bit).
"""

from __future__ import annotations

from livefix.geodesy import LocalFrame, geodetic_to_ecef


class EcefMemo:
    """geodetic_to_ecef(lat, lon, h), computed once for a run of calls with the same floats."""

    __slots__ = ("_m",)

    def __init__(self) -> None:
        self._m: tuple[object, object, object, tuple[float, float, float]] = (None, None, None, (0.0, 0.0, 0.0))

    def __call__(self, lat: float, lon: float, h: float) -> tuple[float, float, float]:
        m = self._m  # one tuple, swapped in one assignment
        if m[0] is lat and m[1] is lon and m[2] is h:
            return m[3]
        xyz = geodetic_to_ecef(lat, lon, h)
        self._m = (lat, lon, h, xyz)
        return xyz


class Projector:
    """LocalFrame.enu through an ECEF memo (its own unless one is shared); `frame` stays available
    for the inverse."""

    __slots__ = ("frame", "_r", "_o", "_ecef")

    def __init__(self, frame: LocalFrame, ecef: EcefMemo | None = None) -> None:
        self.frame = frame
        self._ecef = EcefMemo() if ecef is None else ecef
        self._r = tuple(tuple(float(v) for v in row) for row in frame.rot.tolist())
        self._o = tuple(float(v) for v in frame.origin.tolist())

    def enu(self, lat: float, lon: float, h: float) -> tuple[float, float, float]:
        x, y, z = self._ecef(lat, lon, h)
        o = self._o
        dx, dy, dz = x - o[0], y - o[1], z - o[2]
        (r00, r01, _), (r10, r11, r12), (r20, r21, r22) = self._r
        return (r00 * dx + r01 * dy,
                r10 * dx + r11 * dy + r12 * dz,
                r20 * dx + r21 * dy + r22 * dz)
