"""Sky obstruction map: where satellites were in view but not tracked, accumulated over the session.

Why: a receiver lists satellites it expects above the horizon (from almanac/ephemeris) even when it
cannot track them; a sector where they stay untracked is a wall, roof or mast. The map counts
samples (one per second) per satellite in a 10° azimuth × 5° elevation grid (grid[el_row][az_col],
row 0 = 0–5°, col 0 = 0–10° from north), with mean C/N0 of the tracked ones. A column is blocked up to the top of the
highest cell that, walking up from the elevation mask, is still mostly (≥ 50 %) untracked; adjacent
blocked columns (bridging one column without data) merge into named sectors. Cells below
config.elev_mask_deg never count towards obstruction. Memory is fixed (648 cells).
Only epochs with a fix and at least 4 tracked satellites count, and none while an interference
event is open: during acquisition, outages and jamming satellites are untracked in every direction,
which says nothing about the site.

`seen` counts every satellite the receiver ever listed in view, per constellation, exactly (not by
sampling): a set of (system, prn) updated only when an epoch's satellite tuple is a new object,
bounded by MAX_SEEN keys (a few hundred satellites exist in all constellations together).
"""

from __future__ import annotations

import math
from operator import attrgetter, countOf, itemgetter
from typing import Any

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.counts import load_core, pick_core
from livefix.state.epoch import Epoch, SatObs

AZ_STEP = 10
EL_STEP = 5
N_AZ = 360 // AZ_STEP
N_EL = 90 // EL_STEP
SAMPLE_S = 0.95  # one sample per ~second of stream time, whatever the output rate
MIN_N = 3  # samples in a cell before it counts
BLOCKED_SHARE = 0.5  # untracked share that makes a cell blocked
MIN_TRACKED = 4
CLEAR_SHARE = 0.9  # tracked share that makes a cell clear for clear_above_deg
MAX_SEEN = 512  # (system, prn) keys kept for `seen`; beyond that new ones are only counted
_KEY = attrgetter("system", "prn")  # SatObs -> (system, prn)
_C = itemgetter(2)
# grid index parts by whole degree: row start of an elevation (the top row takes 90) and column of
# an azimuth, i.e. min(el // EL_STEP, N_EL - 1) * N_AZ and az // AZ_STEP as tables
_ROW = [min(el // EL_STEP, N_EL - 1) * N_AZ for el in range(91)]
_COL = [az // AZ_STEP for az in range(360)]
# on_epoch in C (livefix/analysis/_epochcore.c), with the tables and constants above
_CORE = load_core("configure_sky", SatObs, Epoch, _ROW, _COL, SAMPLE_S, MIN_TRACKED, MAX_SEEN)


class SkyMap:
    def __init__(self, config: AnalysisConfig, native: bool | None = None) -> None:
        """native: on_epoch in C (counts.pick_core: None as LIVEFIX_PURE says)."""
        self.config = config
        self._core = pick_core(_CORE, native)
        self.reset()

    def reset(self) -> None:
        n = N_AZ * N_EL
        self.tracked = [0] * n
        self.untracked = [0] * n
        self.cn0 = [0.0] * n
        self._t = -math.inf
        self.seen: set[tuple[str, int]] = set()
        self.seen_overflow = 0  # satellites not kept once MAX_SEEN was reached
        self._seen_of: tuple | None = None  # the last Epoch.sats tuple counted

    def _count_seen(self, sats: tuple) -> None:
        self._seen_of = sats
        seen = self.seen
        keys = list(map(_KEY, sats))
        if seen.issuperset(keys):  # the usual case: nobody new (a C-level test)
            return
        for k in keys:
            if k not in seen:
                if len(seen) < MAX_SEEN:
                    seen.add(k)
                else:
                    self.seen_overflow += 1

    def on_epoch(self, ep: Epoch, suspend: bool = False) -> None:
        core = self._core
        if core is not None and core.sky_epoch(self, ep, suspend):
            return  # done in C; False: what is left (odd values) is the code below's, seen counted or not
        if ep.sats is not self._seen_of:  # the same tuple while the sky is unchanged
            self._count_seen(ep.sats)
        dt = ep.mono - self._t
        if suspend or ep.quality <= 0 or 0 <= dt < SAMPLE_S:
            return
        self._t = ep.mono
        per: dict[tuple[str, int], tuple[int, int, int]] = {}  # one entry per satellite: max C/N0
        get = per.get
        for s in ep.sats:
            el, az = s.elev, s.azim
            if el is None or az is None or not 0 <= el <= 90:
                continue
            c = s.cn0
            if not (c and c > 0):
                c = 0
            k = (s.system, s.prn)
            old = get(k)
            if old is None or c > old[2]:
                per[k] = (el, az, c)
        if len(per) - countOf(map(_C, per.values()), 0) < MIN_TRACKED:  # tracked: C/N0 not 0
            return
        tr, un, cn, row, col = self.tracked, self.untracked, self.cn0, _ROW, _COL
        for el, az, c in per.values():
            i = row[el] + col[int(az) % 360]
            if c:
                tr[i] += 1
                cn[i] += c
            else:
                un[i] += 1

    def _first_row(self) -> int:
        return min(N_EL - 1, math.ceil(self.config.elev_mask_deg / EL_STEP - 1e-9))

    def column_blocked(self) -> list[int | None]:
        """Per azimuth column: blocked below this elevation (0 = clear), None = no data above the mask."""
        tr, un, r0 = self.tracked, self.untracked, self._first_row()
        out: list[int | None] = []
        for j in range(N_AZ):
            top, seen = 0, False
            for r in range(r0, N_EL):
                i = r * N_AZ + j
                n = tr[i] + un[i]
                if n < MIN_N:
                    continue
                seen = True
                if un[i] / n >= BLOCKED_SHARE:
                    top = (r + 1) * EL_STEP
                else:
                    break
            out.append(top if seen else None)
        return out

    def sectors(self) -> list[dict[str, Any]]:
        col = self.column_blocked()
        blocked = [bool(c) for c in col]
        # bridge single columns without data between blocked ones
        for j in range(N_AZ):
            if col[j] is None and blocked[(j - 1) % N_AZ] and blocked[(j + 1) % N_AZ]:
                blocked[j] = True
        if all(blocked):
            return [self._sector(0, N_AZ, col)]
        if not any(blocked):
            return []
        start = next(j for j in range(N_AZ) if not blocked[j])  # begin scanning at a clear column
        out, run = [], None
        for step in range(1, N_AZ + 1):
            j = (start + step) % N_AZ
            if blocked[j] and run is None:
                run = step
            elif not blocked[j] and run is not None:
                out.append(self._sector((start + run) % N_AZ, step - run, col))
                run = None
        if run is not None:
            out.append(self._sector((start + run) % N_AZ, N_AZ + 1 - run, col))
        out.sort(key=lambda s: s["az_from"])
        return out

    @staticmethod
    def _sector(j0: int, length: int, col: list[int | None]) -> dict[str, Any]:
        below = max((col[(j0 + k) % N_AZ] or 0) for k in range(length))
        a0 = j0 * AZ_STEP
        a1 = (a0 + length * AZ_STEP) % 360 if length < N_AZ else 360
        return {"az_from": a0, "az_to": a1, "below_el": below,
                "text": f"blocked {a0}°–{a1}° below {below}°"}

    def clear_above(self) -> float | None:
        tr, un, r0 = self.tracked, self.untracked, self._first_row()
        any_data = False
        for r in range(N_EL - 1, r0 - 1, -1):
            for j in range(N_AZ):
                i = r * N_AZ + j
                n = tr[i] + un[i]
                if n < MIN_N:
                    continue
                any_data = True
                if tr[i] / n < CLEAR_SHARE:
                    return float((r + 1) * EL_STEP)
        return float(max(r0 * EL_STEP, 0)) if any_data else None

    def snapshot(self) -> dict[str, Any]:
        r0 = self._first_row()
        t = sum(self.tracked[r0 * N_AZ:])
        u = sum(self.untracked[r0 * N_AZ:])
        tr, un, cn = self.tracked, self.untracked, self.cn0
        rows = range(N_EL)
        return {
            "obstructed": self.sectors(),
            "grid": {"az_step": AZ_STEP, "el_step": EL_STEP,
                     "tracked": [tr[r * N_AZ:(r + 1) * N_AZ] for r in rows],
                     "untracked": [un[r * N_AZ:(r + 1) * N_AZ] for r in rows],
                     "cn0": [[round(cn[i] / tr[i], 1) if tr[i] else None
                              for i in range(r * N_AZ, (r + 1) * N_AZ)] for r in rows]},
            "clear_above_deg": self.clear_above(),
            "visible_share": round(t / (t + u), 4) if t + u else None,
            "seen": self.seen_by_system(),
        }

    def seen_by_system(self) -> dict[str, int]:
        """Satellites ever listed in view, per RINEX letter (exact)."""
        out: dict[str, int] = {}
        for system, _ in self.seen:
            out[system] = out.get(system, 0) + 1
        return dict(sorted(out.items()))
