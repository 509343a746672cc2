"""Satellite paths across the sky for the report's sky plot, bounded however long the session runs.

Why sampled and thinned: a satellite moves about half a degree a minute, so one sample per
SAMPLE_S of stream time draws its path; over a week the points would grow without end, so when
MAX_POINTS are held every path keeps every other point and the interval doubles (the same rule as
the trend buckets). Points are whole degrees, a repeated point is not stored, and the work is
skipped while the epoch's satellite tuple is the very same object (the sky has not changed).
Each point carries the whole-dB C/N0 (None when listed but untracked), so a blocked direction
shows as untracked points and the C/N0-against-elevation plot can colour points by constellation.
"""

from __future__ import annotations

import math
from typing import Any

SAMPLE_S = 10.0  # stream seconds between samples at the start (~5 arc-minutes of MEO motion)
MAX_POINTS = 6000  # points over all satellites before the paths are thinned
MAX_SATS = 512  # satellites kept (a few hundred exist in all constellations together)


class SkyTracks:
    def __init__(self) -> None:
        self.reset()

    def reset(self) -> None:
        self.interval = SAMPLE_S
        self._next = -math.inf
        self._of: object = None  # the last Epoch.sats tuple sampled
        self.paths: dict[tuple[str, int], list[tuple[int, int, int | None]]] = {}
        self.points = 0
        self.dropped_sats = 0

    def add(self, mono: float, sats: tuple) -> None:
        if mono < self._next or sats is self._of:
            return
        self._of = sats
        self._next = mono + self.interval
        paths = self.paths
        for s in sats:
            el, az = s.elev, s.azim
            if el is None or az is None or not 0 <= el <= 90:
                continue
            key = (s.system, s.prn)
            path = paths.get(key)
            if path is None:
                if len(paths) >= MAX_SATS:
                    self.dropped_sats += 1
                    continue
                path = paths[key] = []
            c = s.cn0
            pt = (int(az) % 360, int(el), None if c is None else int(round(c)))
            if path and path[-1] == pt:
                continue
            path.append(pt)
            self.points += 1
        if self.points > MAX_POINTS:
            self._thin()

    def _thin(self) -> None:
        for key, path in self.paths.items():
            self.paths[key] = path[::2] if len(path) < 2 or (len(path) - 1) % 2 == 0 else path[::2] + path[-1:]
        self.points = sum(len(p) for p in self.paths.values())
        self.interval *= 2

    def snapshot(self) -> dict[str, Any]:
        sats = [{"sat": f"{sys}{prn:02d}", "system": sys, "az": [p[0] for p in path], "el": [p[1] for p in path],
                 "cn0": [p[2] for p in path]} for (sys, prn), path in sorted(self.paths.items())]
        return {"sample_s": self.interval, "sats": sats, "dropped_sats": self.dropped_sats}
