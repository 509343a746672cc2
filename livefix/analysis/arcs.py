"""Rising and setting arcs of each satellite signal through the GNSS-IR elevation window.

Why: reflector heights come from one satellite's C/N0 as its elevation sweeps the low window
(default 5–25°). NMEA gives elevation and azimuth in whole degrees, so a staircase in sin(e) would
smear the oscillation; along one track elevation and azimuth change smoothly with time, so a cubic
in time fitted over the arc gives each sample back its fractional degrees (undoing the rounding).

Bounded memory: only arcs in progress are kept (at most one per satellite signal, each capped at
MAX_SAMPLES, about two hours at one sample per second); a finished arc is handed to the caller and
dropped. Times are the items' own (Epoch.mono), never the host clock.
"""

from __future__ import annotations

import math
from array import array
from dataclasses import dataclass

import numpy as np

from livefix.analysis.counts import load_core, pick_core
from livefix.analysis.reflection import ReflectionConfig, wavelength
from livefix.state.epoch import Epoch, SatObs

MAX_SAMPLES = 7200  # samples in one arc in progress; a longer arc is closed and a new one started
EDGE_DEG = 1.0  # samples kept this far outside the window, so the smoothing spans its edges
TURN_DEG = 0.5  # a turning point must rise this far above both ends (not a wiggle of the fit)


@dataclass(frozen=True, slots=True)
class Arc:
    """A finished, monotonic arc: smoothed elevation (deg), azimuth (deg) and C/N0 (dB-Hz) per sample."""

    system: str
    prn: int
    signal: str
    lam: float
    t: np.ndarray
    el: np.ndarray
    az: np.ndarray
    cn0: np.ndarray

    @property
    def rising(self) -> bool:
        return bool(self.el[-1] > self.el[0])

    @property
    def mean_az(self) -> float:
        """Circular mean azimuth, degrees true."""
        a = np.radians(self.az)
        return math.degrees(math.atan2(float(np.sin(a).mean()), float(np.cos(a).mean()))) % 360.0

    @property
    def label(self) -> str:
        return f"{self.system}{self.prn:02d}" + (f"/{self.signal}" if self.signal else "")


class _Track:
    """One arc in progress. Samples in typed arrays of doubles: 8 bytes a value instead of a Python
    float and its list slot (about 32), and numpy reads them back as the very same doubles."""

    __slots__ = ("t", "el", "az", "cn0", "last")

    def __init__(self) -> None:
        self.t = array("d")
        self.el = array("d")
        self.az = array("d")
        self.cn0 = array("d")
        self.last = -math.inf


class ArcCollector:
    """Feed epochs; finished arcs collect in `done`, which the owner empties (no callback: a bound
    method of the owner kept here would make a reference cycle, see DEVELOPERS.md)."""

    def __init__(self, cfg: ReflectionConfig, native: bool | None = None) -> None:
        """native: on_epoch in C (counts.pick_core: None as LIVEFIX_PURE says)."""
        self.cfg = cfg
        self._core = pick_core(_CORE, native)
        self.reset()

    def reset(self) -> None:
        self._tracks: dict[tuple[str, int, str], _Track] = {}
        self._t = -math.inf
        self.done: list[Arc] = []

    @property
    def tracks(self) -> dict[tuple[str, int, str], _Track]:
        """Arcs in progress by (system, prn, signal); read only."""
        return self._tracks

    @property
    def in_progress(self) -> int:
        return sum(1 for tr in self._tracks.values() if len(tr.t) >= 2)

    def on_epoch(self, ep: Epoch) -> bool:
        """Take this epoch's satellites as one sample (at most one per sample_s); True if taken."""
        core = self._core
        if core is not None:
            taken = core.arc_sample(self, ep)  # None: handed back unchanged, the code below decides
            if taken is not None:
                return taken
        cfg = self.cfg
        t = ep.mono
        if 0 <= t - self._t < cfg.sample_s:
            return False
        self._t = t
        lo, hi = cfg.el_min_deg - EDGE_DEG, cfg.el_max_deg + EDGE_DEG
        tracks = self._tracks
        for s in ep.sats:
            el, az, c = s.elev, s.azim, s.cn0
            if el is None or az is None or not c or c <= 0:
                continue
            key = (s.system, s.prn, s.signal)
            tr = tracks.get(key)
            if not lo <= el <= hi:
                if tr is not None:  # left the window: the arc is over
                    self._close(key)
                continue
            if tr is None:
                if wavelength(s.system, s.signal) is None:
                    continue
                tr = tracks[key] = _Track()
            elif t - tr.last > cfg.gap_s or len(tr.t) >= MAX_SAMPLES:
                self._close(key)
                tr = tracks[key] = _Track()
            tr.t.append(t)
            tr.el.append(float(el))
            tr.az.append(float(az))
            tr.cn0.append(float(c))
            tr.last = t
        stale = [k for k, tr in tracks.items() if t - tr.last > cfg.gap_s]
        for k in stale:
            self._close(k)
        return True

    def flush(self) -> None:
        """Hand over every arc in progress (end of a session)."""
        for k in list(self._tracks):
            self._close(k)

    def _close(self, key: tuple[str, int, str]) -> None:
        tr = self._tracks.pop(key)
        lam = wavelength(key[0], key[2])
        if lam is None or len(tr.t) < self.cfg.min_points:
            return
        for part in split_monotonic(np.array(tr.t), np.array(tr.el), np.array(tr.az), np.array(tr.cn0)):
            t, el, az, c = part
            inside = (el >= self.cfg.el_min_deg) & (el <= self.cfg.el_max_deg)
            if int(inside.sum()) >= 2:
                self.done.append(Arc(key[0], key[1], key[2], lam, t[inside], el[inside], az[inside], c[inside]))


def smooth(t: np.ndarray, v: np.ndarray, order: int = 3) -> np.ndarray:
    """Values of a polynomial in time fitted to whole-degree readings (undoes the rounding)."""
    if t.size <= order + 1 or t[-1] == t[0]:
        return v.astype(float)
    u = (t - t[0]) / (t[-1] - t[0])  # scaled for a well-conditioned fit
    return np.polynomial.polynomial.polyval(u, np.polynomial.polynomial.polyfit(u, v, order))


def split_monotonic(t: np.ndarray, el: np.ndarray, az: np.ndarray, cn0: np.ndarray,
                    ) -> list[tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]]:
    """Smooth elevation and azimuth along the track and split at the elevation's turning point
    (a satellite that culminates inside the window gives a rising and a setting arc)."""
    els = smooth(t, el)
    azs = smooth(t, np.degrees(np.unwrap(np.radians(az)))) % 360.0
    top, bottom = float(els.max()), float(els.min())
    k = (int(np.argmax(els)) if top - max(els[0], els[-1]) > TURN_DEG else
         int(np.argmin(els)) if min(els[0], els[-1]) - bottom > TURN_DEG else -1)
    cuts = [(0, t.size)] if k <= 0 else [(0, k + 1), (k, t.size)]
    return [(t[a:b], els[a:b], azs[a:b], cn0[a:b]) for a, b in cuts if b - a >= 2]


# the C twin of ArcCollector.on_epoch: the types, functions and constants it uses
# (livefix/analysis/_epochcore_arcs.c; bench/fuzz_epochcore.py configures a sanitizer build the same way)
_CONFIGURE = (ArcCollector, _Track, ReflectionConfig, Epoch, SatObs, array, array.append, wavelength, MAX_SAMPLES,
              EDGE_DEG)
_CORE = load_core("configure_arcs", *_CONFIGURE)
