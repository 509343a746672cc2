"""DOP from geometry of the satellites the receiver says it uses, next to the DOP it reports.

Why compute our own: a reported DOP alone cannot show a receiver that uses odd satellites, and a
computed DOP lets installers compare spots even when the receiver prints no GSA.

Geometry: one row per used (system, prn) with azimuth/elevation; livefix.geodesy.dop with one
receiver-clock column per constellation (a multi-GNSS receiver estimates inter-system biases).
Receivers differ: some solve with a single clock, some apply another elevation mask or weight by
C/N0, so an epoch counts as a disagreement only when the reported HDOP or PDOP differs from BOTH
our per-system-clock and our single-clock values by more than 20 % and more than 0.3 (common
practice thresholds; a persistent disagreement points at a different satellite set or mask).
Session medians come from a log-spaced histogram (0.5 % bins): bounded memory, deterministic.
"""

from __future__ import annotations

import math
from typing import Any

from livefix.geodesy import dop as geometry_dop
from livefix.state.epoch import Epoch
from livefix.state.sky import sats_token

KEYS = ("gdop", "pdop", "hdop", "vdop", "tdop")
REL_TOL = 0.20
ABS_TOL = 0.3


class LogHistogram:
    """Streaming median/quantiles of positive values with ~0.5 % resolution and bounded bins."""

    STEP = 0.005  # bin width in natural-log units

    def __init__(self) -> None:
        self.bins: dict[int, int] = {}
        self.n = 0

    def add(self, x: float | None) -> None:
        b = self.bin(x)
        if b is not None:
            self.add_bin(b)

    def bin(self, x: float | None) -> int | None:
        if x is None or not x > 0 or not math.isfinite(x):
            return None
        return round(math.log(x) / self.STEP)

    def add_bin(self, b: int) -> None:
        self.bins[b] = self.bins.get(b, 0) + 1
        self.n += 1

    def quantile(self, p: float) -> float | None:
        if not self.n:
            return None
        target, acc = p * self.n, 0
        for b in sorted(self.bins):
            acc += self.bins[b]
            if acc >= target:
                return round(math.exp(b * self.STEP), 3)
        return None  # unreachable


def used_geometry(ep: Epoch) -> tuple[tuple[float, float, str], ...]:
    """(az, el, system) of used satellites, one per (system, prn), sorted for a stable cache key."""
    listed = set(ep.used_prns)
    seen: dict[tuple[str, int], tuple[float, float, str]] = {}
    for s in ep.sats:
        if (s.used or (s.system, s.prn) in listed) and s.elev is not None and s.azim is not None:
            seen.setdefault((s.system, s.prn), (float(s.azim), float(s.elev), s.system))
    return tuple(seen[k] for k in sorted(seen))


def _differs(rep: float | None, calc: dict[str, float] | None, key: str) -> bool:
    if rep is None or calc is None:
        return False
    d = abs(rep - calc[key])
    return d > ABS_TOL and d > REL_TOL * rep


class DopStats:
    def __init__(self) -> None:
        self.reset()

    def reset(self) -> None:
        self.hist_rep = {k: LogHistogram() for k in ("gdop", "pdop", "hdop", "vdop")}
        self.hist_calc = {k: LogHistogram() for k in KEYS}
        self.current_rep: dict[str, float | None] = {}
        self.current_calc: dict[str, float] | None = None
        self.current_single: dict[str, float] | None = None
        self.current_n = 0
        self.compared = 0
        self.disagreements = 0
        self.disagreeing = False
        self._cache_key: tuple | None = None
        self._calc_bins: list[tuple[LogHistogram, int]] = []
        self._rep_key: tuple | None = None
        self._sats: tuple | None = None
        self._tok: object | None = None
        self._used: tuple | None = None
        self._geo: tuple = ()
        self._rep_bins: list[tuple[LogHistogram, int]] = []

    def on_epoch(self, ep: Epoch) -> None:
        if ep.sats is not self._sats or ep.used_prns != self._used:  # tuple reused while unchanged
            tok = sats_token(ep.sats)  # or rebuilt with only new times: same geometry
            if tok is None or tok is not self._tok or ep.used_prns != self._used:
                self._geo = used_geometry(ep)
            self._sats, self._used, self._tok = ep.sats, ep.used_prns, tok
        geo = self._geo
        if geo != self._cache_key:  # az/el are whole degrees and change slowly: cache
            self._cache_key = geo
            self.current_n = len(geo)
            if len(geo) >= 4:
                az = [g[0] for g in geo]
                el = [g[1] for g in geo]
                self.current_calc = geometry_dop(az, el, [g[2] for g in geo])
                self.current_single = geometry_dop(az, el)
            else:
                self.current_calc = self.current_single = None
            calc = self.current_calc
            self._calc_bins = [] if calc is None else [
                (self.hist_calc[k], b) for k in KEYS if (b := self.hist_calc[k].bin(calc[k])) is not None]
        rep = {"pdop": ep.pdop, "hdop": ep.hdop, "vdop": ep.vdop}
        rep["gdop"] = None  # NMEA 0183 GSA carries no GDOP
        self.current_rep = rep
        rkey = (ep.pdop, ep.hdop, ep.vdop)
        if rkey != self._rep_key:  # reported values repeat for many epochs: cache their bins
            self._rep_key = rkey
            self._rep_bins = [(h, b) for k, h in self.hist_rep.items() if (b := h.bin(rep[k])) is not None]
        for h, b in self._rep_bins:
            h.add_bin(b)
        calc = self.current_calc
        for h, b in self._calc_bins:
            h.add_bin(b)
        self.disagreeing = False
        if calc is not None and (ep.hdop is not None or ep.pdop is not None):
            self.compared += 1
            single = self.current_single
            bad = any(_differs(rep[k], calc, k) and _differs(rep[k], single or calc, k)
                      for k in ("hdop", "pdop"))
            if bad:
                self.disagreements += 1
                self.disagreeing = True

    def snapshot(self) -> dict[str, Any]:
        def rnd(d: dict | None, keys: tuple[str, ...]) -> dict[str, float | None]:
            return {k: (None if d is None or d.get(k) is None else round(d[k], 3)) for k in keys}

        return {
            "reported": {k: h.quantile(0.5) for k, h in self.hist_rep.items()},
            "computed": {k: h.quantile(0.5) for k, h in self.hist_calc.items()},
            "current": {"reported": rnd(self.current_rep, ("gdop", "pdop", "hdop", "vdop")),
                        "computed": rnd(self.current_calc, KEYS),
                        "computed_single_clock": rnd(self.current_single, KEYS),
                        "used": self.current_n, "disagree": self.disagreeing},
            "disagreements": self.disagreements,
            "compared": self.compared,
            "disagree_share": round(self.disagreements / self.compared, 4) if self.compared else None,
        }
