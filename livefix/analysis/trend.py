"""Decimated time series for plots: at most 600 points however long the session runs.

Why buckets: a 7-day soak at 10 Hz is six million epochs; a plot needs a few hundred points. Each
bucket keeps sums (means are exact per bucket); when the 600 buckets are full, neighbours merge
pairwise and the bucket width doubles. `t` is seconds since the first epoch (host stream time of
the items, mean time of the bucket); `t0` is that first epoch as ISO 8601 UTC.
"""

from __future__ import annotations

import math
from typing import Any

MAX_POINTS = 600
FIELDS = ("h_err_m", "cn0_mean", "sats_used")


class Trend:
    def __init__(self, max_points: int = MAX_POINTS, width_s: float = 1.0) -> None:
        self.max_points = max_points
        self.width0 = width_s
        self.reset()

    def reset(self) -> None:
        self.width = self.width0
        self.t0: float | None = None
        self.t0_iso: str | None = None
        # bucket: [n, Σt, then per field (sum, n)]
        self.buckets: list[list[float] | None] = []

    def add(self, mono: float, wall_iso: str | None, **vals: float | None) -> None:
        if self.t0 is None:
            self.t0, self.t0_iso = mono, wall_iso
        t = mono - self.t0
        if t < 0:  # host clock stepped back in a recording: keep order, clamp
            t = 0.0
        idx = int(t // self.width)
        while idx >= self.max_points:
            self._merge()
            idx = int(t // self.width)
        bs = self.buckets
        while len(bs) <= idx:
            bs.append(None)
        b = bs[idx]
        if b is None:
            b = bs[idx] = [0.0] * (2 + 2 * len(FIELDS))
        b[0] += 1
        b[1] += t
        for k, name in enumerate(FIELDS):
            v = vals.get(name)
            if v is not None and math.isfinite(v):
                b[2 + 2 * k] += v
                b[3 + 2 * k] += 1

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
        for b in self.buckets:
            if b is None or not b[0]:
                continue
            out["t"].append(round(b[1] / b[0], 3))
            for k, name in enumerate(FIELDS):
                n = b[3 + 2 * k]
                out[name].append(round(b[2 + 2 * k] / n, 4) if n else None)
        out["t0"] = self.t0_iso
        out["bucket_s"] = self.width
        return out
