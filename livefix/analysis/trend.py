"""Decimated time series for plots: at most 600 points however long the session runs.

Why buckets: a 7-day soak at 10 Hz is six million epochs; a plot needs a few hundred points. Each
bucket keeps sums (means are exact per bucket); when the 600 buckets are full, neighbours merge
pairwise and the bucket width doubles. `t` is seconds since the first epoch (host stream time of
the items, mean time of the bucket); `t0` is that first epoch as ISO 8601 UTC.
Positions (`lat`, `lon`, `h`: bucket means of the fixed epochs, ellipsoidal height) are summed as
offsets from the first fix, so float sums over a week keep sub-millimetre resolution; the report
projects them about the final reference, which may settle after the first epochs.
`sky_tracks` (livefix.analysis.skytrack) holds the satellites' paths for the sky plot.
"""

from __future__ import annotations

from math import isfinite
from typing import Any

from livefix.analysis.counts import load_core, pick_core
from livefix.analysis.skytrack import SkyTracks

MAX_POINTS = 600
FIELDS = ("h_err_m", "cn0_mean", "sats_used", "lat", "lon", "h")
_DIGITS = (4, 4, 4, 9, 9, 4)
_BUCKET_LEN = 2 + 2 * len(FIELDS)  # n, Σt, then (sum, n) per field
_CORE = load_core("configure_trend", _BUCKET_LEN)  # add_values in C (livefix/analysis/_epochcore.c)


class Trend:
    def __init__(self, max_points: int = MAX_POINTS, width_s: float = 1.0, native: bool | None = None) -> None:
        """native: add_values in C (counts.pick_core: None as LIVEFIX_PURE says)."""
        self._core = pick_core(_CORE, native)
        self.max_points = max_points
        self.width0 = width_s
        self.sky_tracks = SkyTracks()
        self.reset()

    def reset(self) -> None:
        self.width = self.width0
        self.t0: float | None = None
        self.t0_iso: str | None = None
        self.origin: tuple[float, float, float] | None = None  # first fix: positions are summed about it
        # bucket: [n, Σt, then per field (sum, n)]
        self.buckets: list[list[float] | None] = []
        self.sky_tracks.reset()

    def add(self, mono: float, wall_iso: str | None, **vals: float | None) -> None:
        self.add_values(mono, wall_iso, *(vals.get(name) for name in FIELDS))

    def add_values(self, mono: float, wall_iso: str | None, h_err_m: float | None, cn0_mean: float | None,
                   sats_used: float | None, lat: float | None = None, lon: float | None = None,
                   h: float | None = None) -> None:
        """add() with the FIELDS in order, positionally (the per-epoch path: no keyword dict)."""
        core = self._core
        if core is not None and core.trend_add(self, mono, wall_iso, h_err_m, cn0_mean, sats_used, lat, lon, h):
            return  # done in C; False: nothing changed, odd values or a merge are the code below's
        t0 = self.t0
        if t0 is None:
            self.t0 = t0 = mono
            self.t0_iso = wall_iso
        t = mono - t0
        if t < 0:  # host clock stepped back in a recording: keep order, clamp
            t = 0.0
        idx = int(t // self.width)
        while idx >= self.max_points:
            self._merge()
            idx = int(t // self.width)
        bs = self.buckets
        if idx < len(bs):
            b = bs[idx]
            if b is None:
                b = bs[idx] = [0.0] * _BUCKET_LEN
        else:
            bs.extend([None] * (idx - len(bs)))
            b = [0.0] * _BUCKET_LEN
            bs.append(b)
        b[0] += 1
        b[1] += t
        if h_err_m is not None and isfinite(h_err_m):
            b[2] += h_err_m
            b[3] += 1
        if cn0_mean is not None and isfinite(cn0_mean):
            b[4] += cn0_mean
            b[5] += 1
        if sats_used is not None and isfinite(sats_used):
            b[6] += sats_used
            b[7] += 1
        if lat is not None and lon is not None and isfinite(lat) and isfinite(lon):
            o = self.origin
            if o is None:
                o = self.origin = (lat, lon, h if h is not None and isfinite(h) else 0.0)
            b[8] += lat - o[0]
            b[9] += 1
            b[10] += lon - o[1]
            b[11] += 1
            if h is not None and isfinite(h):
                b[12] += h - o[2]
                b[13] += 1

    def _merge(self) -> None:
        old, new = self.buckets, []
        for i in range(0, len(old), 2):
            a = old[i]
            b = old[i + 1] if i + 1 < len(old) else None
            if a is None or b is None:
                new.append(a if a is not None else b)
            else:
                new.append([x + y for x, y in zip(a, b, strict=True)])
        self.buckets = new
        self.width *= 2

    def snapshot(self) -> dict[str, Any]:
        out: dict[str, Any] = {"t": [], **{f: [] for f in FIELDS}}
        base = (0.0, 0.0, 0.0, *(self.origin or (0.0, 0.0, 0.0)))
        for b in self.buckets:
            if b is None or not b[0]:
                continue
            out["t"].append(round(b[1] / b[0], 3))
            for k, name in enumerate(FIELDS):
                n = b[3 + 2 * k]
                out[name].append(round(base[k] + b[2 + 2 * k] / n, _DIGITS[k]) if n else None)
        out["t0"] = self.t0_iso
        out["bucket_s"] = self.width
        out["sky_tracks"] = self.sky_tracks.snapshot()
        return out
