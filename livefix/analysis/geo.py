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

Both classes have a C twin (livefix/analysis/_epochcore_geo.c) with the same rules and results:
`EcefMemo()` makes the C memo unless LIVEFIX_PURE=1 or it is not built, and a Projector is of the
kind of its memo (the C projector reads the C memo's entry as the Python one reads `_m`). These
classes are the reference.
"""

from __future__ import annotations

from typing import Any

from livefix import geodesy
from livefix.analysis.counts import load_core, pick_core
from livefix.geodesy import LocalFrame, geodetic_to_ecef

_NO = object()
_NONE = (_NO, _NO, _NO, (0.0, 0.0, 0.0))  # a memo that matches no float (nor None)


def _constants(frame: LocalFrame) -> tuple[float, ...]:
    """The frame's origin and rotation as one flat tuple of Python floats (r02 is 0: east has no up)."""
    (r00, r01, _), (r10, r11, r12), (r20, r21, r22) = frame.rot.tolist()
    return tuple(float(v) for v in (*frame.origin.tolist(), r00, r01, r10, r11, r12, r20, r21, r22))


def _frame_at(lat: float, lon: float, h: float) -> tuple[LocalFrame, tuple[float, ...]]:
    """LocalFrame(lat, lon, h) and its constants: what the C memo needs for a new projector."""
    frame = LocalFrame(lat, lon, h)
    return frame, _constants(frame)


_CORE = load_core("configure_geo", geodetic_to_ecef, _frame_at, geodesy.A, geodesy.E2)


class EcefMemo:
    """geodetic_to_ecef(lat, lon, h), computed once for a run of calls with the same floats.

    native: the C memo (counts.pick_core: None as LIVEFIX_PURE says, True the C one or RuntimeError,
    False this class)."""

    __slots__ = ("_m", "_p")

    def __new__(cls, native: bool | None = None) -> Any:  # noqa: ANN401 - this class or its C twin
        core = pick_core(_CORE, native)
        return super().__new__(cls) if core is None else core.EcefMemo()

    def __init__(self, native: bool | None = None) -> None:
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
    for the inverse. The latest result is kept, keyed like the ECEF memo (identity of the floats).
    Of the kind of its memo: the C twin's when the memo is the C one (or, with none given, when
    EcefMemo(native) makes the C one)."""

    __slots__ = ("frame", "_k", "_ecef", "_m")

    def __new__(cls, frame: LocalFrame, ecef: EcefMemo | None = None,
                native: bool | None = None) -> Any:  # noqa: ANN401 - this class or its C twin
        if ecef is None and pick_core(_CORE, native) is not None:
            ecef = _CORE.EcefMemo()
        if _CORE is not None and type(ecef) is _CORE.EcefMemo:
            return _CORE.Projector(frame, ecef, _constants(frame))
        return super().__new__(cls)

    def __init__(self, frame: LocalFrame, ecef: EcefMemo | None = None, native: bool | None = None) -> None:
        self.frame = frame
        self._ecef = EcefMemo(False) if ecef is None else ecef
        self._k = _constants(frame)  # origin and rotation: one unpacking per projection
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
