"""Bounded streaming building blocks shared by the position and fix statistics.

Everything here holds a fixed amount of memory however long the session runs, and costs O(1)
amortised per sample; the heavier maths is left to the callers' snapshot().
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Sequence
from itertools import chain
from math import isfinite, log
from typing import Any

import numpy as np

from livefix.dates import jump_limit
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
    """A fix whose coordinates can be used: one NaN would poison every running sum for good.
    A pure function; `fix_memo` shares one answer per epoch between the stages that ask."""
    lat, lon, h = ep.lat, ep.lon, ep.h
    return (ep.quality > 0 and lat is not None and lon is not None and isfinite(lat)
            and isfinite(lon) and -90.0 <= lat <= 90.0 and -180.0 <= lon <= 360.0
            and (h is None or (isfinite(h) and abs(h) < 1e7)))


def fix_memo() -> Callable[[Epoch], bool]:
    """valid_fix with the latest epoch's answer kept (keyed on the epoch's identity, holding it so
    its id cannot be reused): the fix, position and median statistics of one Analyzer ask about
    every epoch, and a closure's lookup costs about a fifth of the test."""
    last: list[Any] = [None, False]

    def fixed(ep: Epoch) -> bool:
        if ep is last[0]:
            return last[1]  # type: ignore[no-any-return]
        ok = valid_fix(ep)
        last[0], last[1] = ep, ok
        return ok

    return fixed


class Timeline:
    """Session time in seconds from the epochs alone (never the host clock).

    Receiver UTC is preferred; a step is taken from UTC when both epochs carry it and it moves
    forward by less than a day, otherwise from the host monotonic stamps. So a receiver that loses
    its clock (UTC jumps back, or goes missing) does not fold the timeline; `reset` reports that
    UTC went back by more than a forward jump would need (livefix.dates.jump_limit, 10 s),
    which together with a lost fix means a receiver restart. A step back of about a second (seen when
    a receiver changes talker as a constellation joins) is not a restart.
    A UTC step is taken from the session time of the last timed epoch: epochs without a time in
    between (a receiver without a fix often leaves the time empty) moved on by host time, and
    must not be counted twice; the timeline never goes back.
    """

    __slots__ = ("t", "_utc", "_utc_t", "_mono", "reset", "abs_time", "_ep")

    def __init__(self) -> None:
        self.t: float | None = None
        self._utc: float | None = None
        self._utc_t = 0.0  # session time of the epoch that carried _utc
        self._mono: float | None = None
        self.reset = False
        self.abs_time: float | None = None  # POSIX time for ISO labels (utc, else host wall)
        self._ep: Epoch | None = None  # the epoch stepped last (held: its id cannot be reused)

    def follow(self, ep: Epoch) -> float:
        """step(ep), unless this very epoch was the one stepped last: a timeline shared by two stages
        is stepped by the first, and the second reads the same time (stepping the same epoch again
        would leave t and abs_time as they are and only clear `reset`, which followers do not read)."""
        if ep is self._ep:
            return self.t  # type: ignore[return-value]  # set by that step
        return self.step(ep)

    def step(self, ep: Epoch) -> float:
        self.reset = False
        utc, mono, t = ep.utc, ep.mono, self.t
        if t is None:
            t = 0.0
        else:
            dt = None
            if utc is not None and self._utc is not None:
                d = utc - self._utc
                if 0.0 <= d < 86400.0:
                    dt = self._utc_t + d - t
                    if not dt > 0.0:  # max(0.0, dt) without the builtin call (NaN -> 0.0 as max gives)
                        dt = 0.0
                elif d < -jump_limit(1.0):  # far back: a restart; a second or so is clock jitter
                    self.reset = True
            if dt is None:
                dt = max(0.0, mono - self._mono) if self._mono is not None else 0.0
            t += dt
        self.t = t
        if utc is not None:
            self._utc, self._utc_t = utc, t
            self.abs_time = utc
        else:
            self.abs_time = ep.wall
        self._mono = mono
        self._ep = ep
        return t

    def at_mono(self, mono: float) -> float | None:
        """Session time of a host monotonic stamp (for events between epochs)."""
        if self.t is None or self._mono is None:
            return None
        return self.t + (mono - self._mono)


FLUSH = 64  # rows collected in a list before one numpy slice assignment (a row at a time is slow)


class Ring:
    """Fixed-capacity ring of float rows (columns chosen by the caller); oldest rows fall out.
    Pushed rows wait in a short list and are written in batches; every reader flushes first
    (so a pushed row must not be changed afterwards: tuples, as Track pushes)."""

    def __init__(self, capacity: int, cols: int) -> None:
        self.buf = np.full((capacity, cols), np.nan)
        self.cap = capacity
        self._i = 0  # next write slot (of the flushed rows)
        self._n = 0  # rows held (flushed)
        self.total = 0  # rows ever pushed
        self._pend: list[Sequence[float]] = []

    def push(self, row: Sequence[float]) -> None:
        p = self._pend
        p.append(row)
        self.total += 1
        if len(p) >= FLUSH:
            self._flush()

    def extend(self, rows: Sequence[Sequence[float]]) -> None:
        """push(row) for each row, in order."""
        p = self._pend
        p.extend(rows)
        self.total += len(rows)
        if len(p) >= FLUSH:
            self._flush()

    def _flush(self) -> None:
        p = self._pend
        k = len(p)
        if not k:
            return
        buf = self.buf
        rows = np.fromiter(chain.from_iterable(p), float, count=k * buf.shape[1]).reshape(k, -1)  # one C pass
        i, j, cap = self._i, 0, self.cap
        while j < k:
            m = min(k - j, cap - i)
            buf[i:i + m] = rows[j:j + m]
            i = (i + m) % cap
            j += m
        self._i = i
        self._n = min(self._n + k, cap)
        p.clear()

    @property
    def i(self) -> int:
        self._flush()
        return self._i

    @property
    def n(self) -> int:
        self._flush()
        return self._n

    def array(self) -> np.ndarray:
        """Rows oldest first (a copy)."""
        self._flush()
        if self._n < self.cap:
            return self.buf[: self._n].copy()
        return np.concatenate((self.buf[self._i:], self.buf[: self._i]))

    def clear(self) -> None:
        self._i = self._n = self.total = 0
        self._pend.clear()


class Moments:
    """One-pass running mean and covariance of a small vector (numerically stable, O(1))."""

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
    """Streaming quantiles of a positive quantity (a radius, a DOP) from log-spaced bins.

    Bin k holds the values whose natural log rounds to k * STEP: bins 0.5 % wide, so a quantile is
    good to about ±0.25 % whatever the session length. The bins are sparse, so memory grows with
    the logarithm of the range of values seen (about 460 bins a decade), never with their count.
    `add` counts an exact 0 apart (a position that repeats the mean to the last digit has radius
    0, and leaving it out would bias every quantile up); negative and non-finite values are not
    counted, and `bin` leaves out 0 too (a DOP of 0 is a missing value).
    """

    STEP = 0.005  # bin width in natural-log units

    def __init__(self) -> None:
        self.bins: dict[int, int] = {}
        self.zeros = 0
        self.n = 0

    def bin(self, x: float | None) -> int | None:
        """The bin of x, None for a value that is not counted (callers may then add runs by bin)."""
        if x is None or not x > 0 or not isfinite(x):
            return None
        return round(log(x) / _LH_STEP)

    def add_bin(self, b: int, count: int = 1) -> None:
        self.bins[b] = self.bins.get(b, 0) + count
        self.n += count

    def add(self, x: float | None) -> None:
        self.add_many((x,))

    def add_many(self, xs: Iterable[float | None]) -> None:
        """add(x) for each x (counts only: the order does not matter)."""
        bins, step = self.bins, _LH_STEP
        get = bins.get
        n = 0  # values counted, added to self.n once (finally: as far as the loop got)
        try:
            for x in xs:
                try:  # the common case in one go; the rare values fail inside log() or round()
                    b = round(log(x) / step)  # type: ignore[arg-type]
                except (ValueError, TypeError, OverflowError):  # 0, negative, NaN, inf, None
                    if x == 0:
                        self.zeros += 1
                        n += 1
                    continue
                bins[b] = get(b, 0) + 1
                n += 1
        finally:
            self.n += n

    def quantile(self, p: float) -> float | None:
        """The p-quantile (0..1) as the centre of its bin; None before any value."""
        if not self.n:
            return None
        target, acc = p * self.n, self.zeros
        if acc and acc >= target:
            return 0.0
        for b in sorted(self.bins):
            acc += self.bins[b]
            if acc >= target:
                return math.exp(b * _LH_STEP)
        return math.exp(max(self.bins) * _LH_STEP) if self.bins else 0.0  # p > 1: the top bin


_LH_STEP = LogHistogram.STEP  # a module name: cheaper in add()


class PairHistory:
    """Bounded evenly-decimated history: when full, neighbouring pairs are averaged and the sample
    interval doubles, so the record always spans the whole session with at most `cap` rows.
    Averaging (not dropping) keeps the decimated series a valid input for Allan deviation at the
    coarser taus and for block-mean drift fits."""

    def __init__(self, cap: int, cols: int) -> None:
        assert cap % 2 == 0
        self.cap, self.cols = cap, cols
        self.buf = np.zeros((cap, cols))
        self._n = 0  # rows in buf; finished rows wait in _pend (written in batches)
        self._pend: list[tuple[float, ...]] = []
        self.factor = 1  # raw samples per stored row
        self._acc = [0.0] * cols  # Python floats: the same IEEE sums as numpy, much cheaper per row
        self._k = 0

    def add(self, row: Sequence[float]) -> None:
        self._acc = [a + x for a, x in zip(self._acc, row, strict=True)]
        self._k += 1
        if self._k >= self.factor:
            self._complete()

    def add3(self, x: float, y: float, z: float) -> None:
        """add((x, y, z)) for a three-column history, without the per-row list building."""
        self.add3_rows(((x, y, z),), 0)

    def add3_rows(self, rows: Iterable[Sequence[float]], i: int) -> None:
        """add3(row[i], row[i + 1], row[i + 2]) for each row in order, the sums kept in locals and
        _complete spelt out for three columns (at factor 1 every row completes one)."""
        a0, a1, a2 = self._acc
        k, f, p, cap = self._k, self.factor, self._pend, self.cap
        i1, i2 = i + 1, i + 2
        for row in rows:
            a0 += row[i]
            a1 += row[i1]
            a2 += row[i2]
            k += 1
            if k >= f:
                p.append((a0 / k, a1 / k, a2 / k))
                a0 = a1 = a2 = 0.0
                k = 0
                if len(p) >= FLUSH or self._n + len(p) == cap:
                    self._flush()  # may double the factor
                    f = self.factor
        self._acc, self._k = [a0, a1, a2], k

    def _complete(self) -> None:
        """The accumulated raw samples (_k >= factor of them) make one row."""
        k, p = self._k, self._pend
        p.append(tuple([a / k for a in self._acc]))
        self._acc = [0.0] * self.cols
        self._k = 0
        if len(p) >= FLUSH or self._n + len(p) == self.cap:
            self._flush()

    def _flush(self) -> None:
        p = self._pend
        if not p:
            return
        self.buf[self._n:self._n + len(p)] = p
        self._n += len(p)
        p.clear()
        if self._n == self.cap:
            half = self.cap // 2
            self.buf[:half] = 0.5 * (self.buf[0::2] + self.buf[1::2])
            self._n = half
            self.factor *= 2

    @property
    def n(self) -> int:
        self._flush()
        return self._n

    def array(self) -> np.ndarray:
        self._flush()
        return self.buf[: self._n].copy()
