"""The median position of a session per fix type, in bounded memory.

Why a median: a site record states one position for the antenna, and the median is not pulled
by the few wild epochs a receiver gives while it converges or loses a fix (the mean, used for the
scatter, is). An exact median needs every sample; a week at 10 Hz is six million of them, so each
coordinate goes into a histogram of fixed-width bins that doubles its bin width whenever it holds
more than MAX_BINS bins. Each bin also keeps the sum of its values, so the median is the mean of
the values in the median bin: exact when the values in that bin are equal (a geoid separation that
never changes), and otherwise within one bin width of the lower middle value (numpy.percentile
with method "inverted_cdf"): for an even count whose two middle values sit in different bins that is
not numpy.median's midpoint (1, 2, 3, 4 gives 2, not 2.5), which matters only for sparse data. The
width in use is published.

`MedianPosition.on_epoch`, with the batch settle when no coarsening is due, has a C twin,
livefix/analysis/_epochcore_median.c, bound as the instance's on_epoch when built (the class's on_epoch
stays the reference and runs every case the C step hands back).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable
from typing import Any

from livefix.analysis.counts import load_core, pick_core
from livefix.analysis.streaming import valid_fix
from livefix.state.epoch import FIX_NAMES, Epoch

MAX_BINS = 2048  # per coordinate: memory stays a few hundred kB whatever the session length
DEG_WIDTH = 1e-8  # starting bin width of latitude and longitude, degrees (about 1 mm)
M_WIDTH = 0.001  # starting bin width of heights, metres
M_PER_DEG = 111_320.0  # metres per degree of latitude, rounded (common practice)
BATCH = 64  # fixed epochs waiting before the medians take them (bounded; snapshot() settles them)


class BinnedMedian:
    """Quantiles of one coordinate from nested bins [k w, (k+1) w) holding [count, sum].

    A value equal to the previous one is only counted (a receiver repeats its geoid separation and,
    at a fixed antenna, often its coordinates to the last digit); the run goes into its bin when a
    different value arrives or a reader asks."""

    __slots__ = ("width", "bins", "_n", "_last", "_run")

    def __init__(self, width: float) -> None:
        self.width = width
        self.bins: dict[int, list[float]] = {}
        self._n = 0  # values in the bins
        self._last = math.nan  # never equal to a value: the first add starts a run
        self._run = 0

    def add(self, x: float) -> None:
        self.add_many((x,))

    def add_many(self, xs: Iterable[float]) -> None:
        """add(x) for each x in order: runs of equal values counted, then binned in one pass."""
        last, run = self._last, self._run
        runs: list[tuple[float, int]] = []
        for x in xs:
            if x == last:
                run += 1
                continue
            if run:
                runs.append((last, run))
            last, run = x, 1
        self._last, self._run = last, run
        if runs:
            self._put(runs)

    def _flush(self) -> None:
        self._put(((self._last, self._run),))
        self._run = 0

    def _put(self, runs: Iterable[tuple[float, int]]) -> None:
        """Runs of (value, count) into their bins, in order (the bin sums are float sums)."""
        bins, width, floor, n = self.bins, self.width, math.floor, self._n
        try:  # finally: the count stays true to the bins even if a value cannot be binned
            for x, run in runs:
                k = floor(x / width)
                b = bins.get(k)
                if b is None:
                    bins[k] = [run, x * run]
                    if len(bins) > MAX_BINS:
                        self._coarsen()
                        bins, width = self.bins, self.width
                else:
                    b[0] += run
                    b[1] += x * run
                n += run
        finally:
            self._n = n

    @property
    def n(self) -> int:
        return self._n + self._run

    def _coarsen(self) -> None:
        """Double the width: bin k of width w lies inside bin k >> 1 (floor) of width 2w."""
        while len(self.bins) > MAX_BINS:
            merged: dict[int, list[float]] = {}
            for k, (c, s) in self.bins.items():
                m = merged.get(k >> 1)
                if m is None:
                    merged[k >> 1] = [c, s]
                else:
                    m[0] += c
                    m[1] += s
            self.bins = merged
            self.width *= 2

    def quantile(self, p: float = 0.5) -> float | None:
        """The p-quantile as the mean of the values in its bin; None before any value."""
        if self._run:
            self._flush()
        if not self._n:
            return None
        target, acc = p * self._n, 0.0
        for k in sorted(self.bins):
            c, s = self.bins[k]
            acc += c
            if acc >= target:
                return s / c
        return None  # not reached: acc ends at n >= target


class _FixMedians:
    """The five coordinates of one fix type. Epochs wait in a short list (BATCH rows) and go into
    the medians coordinate by coordinate, in order: the same runs and bins as one at a time."""

    __slots__ = ("lat", "lon", "h", "alt", "sep", "_pend")

    def __init__(self) -> None:
        self.lat, self.lon = BinnedMedian(DEG_WIDTH), BinnedMedian(DEG_WIDTH)
        self.h, self.alt, self.sep = BinnedMedian(M_WIDTH), BinnedMedian(M_WIDTH), BinnedMedian(M_WIDTH)
        self._pend: list[tuple[Any, ...]] = []

    def add(self, ep: Epoch) -> None:
        p = self._pend
        p.append((ep.lat, ep.lon, ep.h, ep.alt_msl, ep.sep))  # lat, lon not None: valid_fix
        if len(p) >= BATCH:
            self._settle()

    def _settle(self) -> None:
        rows = self._pend
        if not rows:
            return
        self._pend = []
        lat, lon, h, alt, sep = zip(*rows, strict=True)
        self.lat.add_many(lat)
        self.lon.add_many(lon)
        self.h.add_many([x for x in h if x is not None])
        isfinite = math.isfinite
        self.alt.add_many([x for x in alt if x is not None and isfinite(x)])
        self.sep.add_many([x for x in sep if x is not None and isfinite(x)])

    def snapshot(self) -> dict[str, Any]:
        self._settle()
        lat = self.lat.quantile()

        def r(v: float | None, nd: int) -> float | None:
            return None if v is None else round(v, nd)

        cos_lat = math.cos(math.radians(lat)) if lat is not None else 1.0
        return {
            "n": self.lat.n, "lat": r(lat, 9), "lon": r(self.lon.quantile(), 9),
            "h": r(self.h.quantile(), 4), "n_h": self.h.n,
            "alt_msl": r(self.alt.quantile(), 4), "sep": r(self.sep.quantile(), 4),
            # one bin width: how far the median can sit from the exact sample median
            "resolution_m": {"n": round(self.lat.width * M_PER_DEG, 4),
                             "e": round(self.lon.width * M_PER_DEG * cos_lat, 4),
                             "h": round(max(self.h.width, self.alt.width, self.sep.width), 4)},
        }


class MedianPosition:
    """Component-wise median latitude, longitude and heights of the fixed epochs, per fix type."""

    def __init__(self, fixed: Callable[[Epoch], bool] = valid_fix, native: bool | None = None) -> None:
        """native: on_epoch in C (counts.pick_core: None as LIVEFIX_PURE says)."""
        core = pick_core(_CORE, native)
        if core is not None and type(self) is MedianPosition:  # a subclass keeps its own on_epoch
            bound = core.bind_step("median", self, MedianPosition.on_epoch)  # the C step, else the reference
            self.on_epoch = bound  # type: ignore[method-assign]
        self._valid = fixed  # valid_fix, or the Analyzer's fix_memo shared with the other stages
        self.reset()

    def reset(self) -> None:
        self.by_fix: dict[str, _FixMedians] = {}

    def on_epoch(self, ep: Epoch) -> None:
        if not self._valid(ep):
            return
        fix = FIX_NAMES.get(ep.quality, "none")  # Epoch.fix
        m = self.by_fix.get(fix)
        if m is None:
            m = self.by_fix[fix] = _FixMedians()
        p = m._pend  # _FixMedians.add inline (once per fixed epoch)
        p.append((ep.lat, ep.lon, ep.h, ep.alt_msl, ep.sep))
        if len(p) >= BATCH:
            m._settle()

    def snapshot(self) -> dict[str, Any]:
        return {"by_fix": {k: self.by_fix[k].snapshot() for k in sorted(self.by_fix)},
                "estimator": "component-wise median of the fixed epochs of each fix type"}


_CORE = load_core("configure_median", MedianPosition, _FixMedians, BinnedMedian, Epoch, FIX_NAMES, "none", BATCH,
                  MAX_BINS)  # on_epoch and the batch settle in C
