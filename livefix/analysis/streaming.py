"""Bounded streaming building blocks shared by the position and fix statistics.

Everything here holds a fixed amount of memory however long the session runs, and costs O(1)
amortised per sample; the heavier maths is left to the callers' snapshot().
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence

import numpy as np

from livefix.state.epoch import Epoch


def num(x: float | None, nd: int = 4) -> float | None:
    """JSON-safe float: NaN/inf -> None, rounded so snapshots stay small and stable."""
    if x is None:
        return None
    x = float(x)
    if not math.isfinite(x):
        return None
    return round(x, nd)


def valid_fix(ep: Epoch) -> bool:
    """A fix whose coordinates can be used: one NaN would poison every running sum for good."""
    if not ep.has_fix:
        return False
    lat, lon, h = ep.lat, ep.lon, ep.h
    return (math.isfinite(lat) and math.isfinite(lon) and -90.0 <= lat <= 90.0 and -180.0 <= lon <= 360.0
            and (h is None or (math.isfinite(h) and abs(h) < 1e7)))


class Timeline:
    """Session time in seconds from the epochs alone (never the host clock).

    Receiver UTC is preferred; a step is taken from UTC when both epochs carry it and it moves
    forward by less than a day, otherwise from the host monotonic stamps. So a receiver that loses
    its clock (UTC jumps back, or goes missing) does not fold the timeline; `reset` reports that
    UTC went back by more than a second, which together with a lost fix means a receiver restart.
    """

    __slots__ = ("t", "_utc", "_mono", "reset", "abs_time")

    def __init__(self) -> None:
        self.t: float | None = None
        self._utc: float | None = None
        self._mono: float | None = None
        self.reset = False
        self.abs_time: float | None = None  # POSIX time for ISO labels (utc, else host wall)

    def step(self, ep: Epoch) -> float:
        self.reset = False
        if self.t is None:
            self.t = 0.0
        else:
            dt = None
            if ep.utc is not None and self._utc is not None:
                d = ep.utc - self._utc
                if 0.0 <= d < 86400.0:
                    dt = d
                elif d < -1.0:
                    self.reset = True
            if dt is None:
                dt = max(0.0, ep.mono - self._mono) if self._mono is not None else 0.0
            self.t += dt
        self._utc = ep.utc if ep.utc is not None else self._utc
        self._mono = ep.mono
        self.abs_time = ep.utc if ep.utc is not None else ep.wall
        return self.t

    def at_mono(self, mono: float) -> float | None:
        """Session time of a host monotonic stamp (for events between epochs)."""
        if self.t is None or self._mono is None:
            return None
        return self.t + (mono - self._mono)


class Ring:
    """Fixed-capacity ring of float rows (columns chosen by the caller); oldest rows fall out."""

    def __init__(self, capacity: int, cols: int) -> None:
        self.buf = np.full((capacity, cols), np.nan)
        self.cap = capacity
        self.i = 0  # next write slot
        self.n = 0  # rows held
        self.total = 0  # rows ever pushed

    def push(self, row: Sequence[float]) -> None:
        self.buf[self.i] = row
        self.i = (self.i + 1) % self.cap
        self.n = min(self.n + 1, self.cap)
        self.total += 1

    def array(self) -> np.ndarray:
        """Rows oldest first (a copy)."""
        if self.n < self.cap:
            return self.buf[: self.n].copy()
        return np.concatenate((self.buf[self.i:], self.buf[: self.i]))

    def clear(self) -> None:
        self.i = self.n = self.total = 0


class Moments:
    """Welford running mean and covariance of a small vector (numerically stable, O(1))."""

    __slots__ = ("n", "mean", "m2")

    def __init__(self, dim: int) -> None:
        self.n = 0
        self.mean = np.zeros(dim)
        self.m2 = np.zeros((dim, dim))

    def add(self, x: Iterable[float]) -> None:
        v = np.asarray(x, dtype=float)
        self.n += 1
        d = v - self.mean
        self.mean += d / self.n
        self.m2 += np.outer(d, v - self.mean)

    def cov(self) -> np.ndarray | None:
        return self.m2 / (self.n - 1) if self.n >= 2 else None


class LogHistogram:
    """Streaming quantiles of a positive quantity from fixed log-spaced bins.

    Bins span 0.1 mm .. 100 km with 64 bins per decade (relative resolution about 3.7 %), so a
    percentile is good to within a bin whatever the session length; memory is fixed.
    """

    LO, DECADES, PER_DECADE = 1e-4, 9, 64

    def __init__(self) -> None:
        self.counts = np.zeros(self.DECADES * self.PER_DECADE + 2, dtype=np.int64)
        self.n = 0

    def add(self, r: float) -> None:
        if not math.isfinite(r):
            return
        if r <= self.LO:
            k = 0
        else:
            k = 1 + int(math.log10(r / self.LO) * self.PER_DECADE)
            k = min(k, self.counts.size - 1)
        self.counts[k] += 1
        self.n += 1

    def quantile(self, p: float) -> float | None:
        if self.n == 0:
            return None
        c = np.cumsum(self.counts)
        k = int(np.searchsorted(c, p * self.n, side="left"))
        if k == 0:
            return self.LO
        # geometric centre of bin k: [LO*10^((k-1)/PD), LO*10^(k/PD))
        return self.LO * 10 ** ((k - 0.5) / self.PER_DECADE)


class PairHistory:
    """Bounded evenly-decimated history: when full, neighbouring pairs are averaged and the sample
    interval doubles, so the record always spans the whole session with at most `cap` rows.
    Averaging (not dropping) keeps the decimated series a valid input for Allan deviation at the
    coarser taus and for block-mean drift fits."""

    def __init__(self, cap: int, cols: int) -> None:
        assert cap % 2 == 0
        self.cap, self.cols = cap, cols
        self.buf = np.zeros((cap, cols))
        self.n = 0
        self.factor = 1  # raw samples per stored row
        self._acc = np.zeros(cols)
        self._k = 0

    def add(self, row: Sequence[float]) -> None:
        self._acc += row
        self._k += 1
        if self._k < self.factor:
            return
        self.buf[self.n] = self._acc / self._k
        self.n += 1
        self._acc[:] = 0.0
        self._k = 0
        if self.n == self.cap:
            half = self.cap // 2
            self.buf[:half] = 0.5 * (self.buf[0::2] + self.buf[1::2])
            self.n = half
            self.factor *= 2

    def array(self) -> np.ndarray:
        return self.buf[: self.n].copy()
