"""E/N/U projection of epoch positions with the ECEF of the latest point memoised.

Why: the fix statistics, the position statistics and the trend each project the same epoch
position into their own frame, and geodetic -> ECEF is the costly half of that. The memo holds
only the latest point and is keyed on the identity of the three floats (an Epoch hands out the
same float objects every time), so it returns exactly the floats a fresh conversion would. The
Analyzer owns one memo and hands it to its stages, so two pipelines in one process share none.
The fix and the position statistics both anchor their frame at the first fix, from the very same
floats: `EcefMemo.projector` then hands both the same Projector, which keeps its latest result by
the same identity rule, so the second stage's projection of an epoch costs a lookup.
The projection repeats livefix.geodesy.LocalFrame.enu operation for operation (a test checks the
two agree bit for bit).
"""

from __future__ import annotations

from livefix.geodesy import LocalFrame, geodetic_to_ecef

_NO = object()
_NONE = (_NO, _NO, _NO, (0.0, 0.0, 0.0))  # a memo that matches no float (nor None)


class EcefMemo:
    """geodetic_to_ecef(lat, lon, h), computed once for a run of calls with the same floats."""

    __slots__ = ("_m", "_p")

    def __init__(self) -> None:
        self._m: tuple[object, object, object, tuple[float, float, float]] = _NONE
        self._p: tuple[object, object, object, Projector | None] = (_NO, _NO, _NO, None)

    def __call__(self, lat: float, lon: float, h: float) -> tuple[float, float, float]:
        m = self._m  # one tuple, swapped in one assignment
        if m[0] is lat and m[1] is lon and m[2] is h:
            return m[3]
        xyz = geodetic_to_ecef(lat, lon, h)
        self._m = (lat, lon, h, xyz)
        return xyz

    def projector(self, lat: float, lon: float, h: float) -> Projector:
        """A Projector about LocalFrame(lat, lon, h) through this memo: the one made last when it was
        made from the very same floats (a frame is a pure function of them), else a new one."""
        p = self._p
        if p[0] is lat and p[1] is lon and p[2] is h and p[3] is not None:
            return p[3]
        proj = Projector(LocalFrame(lat, lon, h), self)
        self._p = (lat, lon, h, proj)
        return proj


class Projector:
    """LocalFrame.enu through an ECEF memo (its own unless one is shared); `frame` stays available
    for the inverse. The latest result is kept, keyed like the ECEF memo (identity of the floats)."""

    __slots__ = ("frame", "_k", "_ecef", "_m")

    def __init__(self, frame: LocalFrame, ecef: EcefMemo | None = None) -> None:
        self.frame = frame
        self._ecef = EcefMemo() if ecef is None else ecef
        (r00, r01, _), (r10, r11, r12), (r20, r21, r22) = frame.rot.tolist()
        # origin and rotation as one flat tuple of Python floats (one unpacking per projection)
        self._k = tuple(float(v) for v in (*frame.origin.tolist(), r00, r01, r10, r11, r12, r20, r21, r22))
        self._m: tuple[object, object, object, tuple[float, float, float]] = _NONE

    def enu(self, lat: float, lon: float, h: float) -> tuple[float, float, float]:
        m = self._m
        if m[0] is lat and m[1] is lon and m[2] is h:
            return m[3]
        ecef = self._ecef
        m = ecef._m  # the ECEF memo inline (this is the hot caller): its test, and its update
        if m[0] is lat and m[1] is lon and m[2] is h:
            x, y, z = m[3]
        else:
            x, y, z = xyz = geodetic_to_ecef(lat, lon, h)
            ecef._m = (lat, lon, h, xyz)
        ox, oy, oz, r00, r01, r10, r11, r12, r20, r21, r22 = self._k
        dx, dy, dz = x - ox, y - oy, z - oz
        out = (r00 * dx + r01 * dy,
               r10 * dx + r11 * dy + r12 * dz,
               r20 * dx + r21 * dy + r22 * dz)
        self._m = (lat, lon, h, out)
        return out
