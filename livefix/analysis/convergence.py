"""Convergence time: how long after the first fix the position settles within a stated radius of
the final converged position, horizontal and vertical separately. Not TTFF: a receiver that
gives a first fix 20 m off and reaches its final position 5 minutes later converged after 5 min.

Definition (values in the position snapshot under "convergence"):
- centre: the user reference when given, else the final converged position: the median of the
  headline fix type's recent settled epochs (jumps excluded; a median, robust to bad spells);
- radius: the convergence radius of the headline fix type (AnalysisConfig.converge_h / _v,
  common practice values: RTK fixed 5 cm / 10 cm, float 0.5 / 1 m, DGNSS 1 / 2 m, single 5 / 10 m),
  applied to every epoch whatever its own fix type (float epochs 30 cm off have not converged to
  an RTK-fixed position);
- converged at the first epoch from which the position stays within the radius for at least
  converge_hold_s; the time is counted from the first fix. An epoch without a fix breaks a spell;
  an epoch without a height is skipped by the vertical figure.
The first HEAD_CAP epochs are kept whole, so the time is re-judged against the latest centre; if
the head fills before the position settled, streaming trackers carry on against the centre as
it stands then.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from itertools import chain

import numpy as np

HEAD_CAP = 36000  # first epochs kept whole for convergence (1 h at 10 Hz)
FLUSH_AT = 256  # head rows waiting before they are written in one slice
Target = tuple[tuple[float, float, float], float | None, float | None]  # centre e/n/u, radius h, radius v


def first_hold(t: np.ndarray, inside: np.ndarray, hold_s: float) -> float | None:
    """Earliest t[i] such that every sample from i on is inside until at least t[i] + hold_s."""
    if t.size == 0:
        return None
    # run starts: inside and (first sample or previous outside); run ends at the next outside
    idx = np.flatnonzero(np.diff(np.concatenate(([0], inside.astype(np.int8), [0]))))
    starts, ends = idx[0::2], idx[1::2] - 1  # inclusive end index of each run
    for s, e in zip(starts, ends, strict=True):
        if t[e] - t[s] >= hold_s:
            return float(t[s])
    return None


class Tracker:
    """Streaming version of first_hold for samples past the head buffer."""

    __slots__ = ("hold_s", "start", "done")

    def __init__(self, hold_s: float) -> None:
        self.hold_s = hold_s
        self.start: float | None = None
        self.done: float | None = None

    def add(self, t: float, inside: bool) -> None:
        if self.done is not None:
            return
        if not inside:
            self.start = None
            return
        if self.start is None:
            self.start = t
        if t - self.start >= self.hold_s:
            self.done = self.start


class Convergence:
    """Head buffer of (t, e, n, u, fixed) plus the streaming trackers past it."""

    __slots__ = ("hold_s", "head", "n", "_pend", "_done", "trk_h", "trk_v", "first_fix", "frozen")  # read by C

    def __init__(self, hold_s: float) -> None:
        self.hold_s = hold_s
        self.head = np.full((HEAD_CAP, 5), np.nan)
        self.n = 0  # rows added; the newest wait in _pend until a reader flushes them
        self._pend: list[tuple[float, float, float, float, float]] = []
        self._done = 0
        self.trk_h = Tracker(hold_s)
        self.trk_v = Tracker(hold_s)
        self.first_fix: float | None = None
        self.frozen: Target | None = None  # the target when the head filled

    def add(self, t: float, e: float, n: float, u: float, fixed: bool, target: Callable[[], Target | None]) -> None:
        if fixed and self.first_fix is None:
            self.first_fix = t
        if self.n < HEAD_CAP:
            p = self._pend
            p.append((t, e, n, u, 1.0 if fixed else 0.0))
            self.n += 1
            if self.n == HEAD_CAP:
                self._seed(target())
            elif len(p) >= FLUSH_AT:
                self._flush()
            return
        tg = self.frozen
        if tg is None:
            self.trk_h.add(t, False)
            return
        (ce, cn, cu), rh, rv = tg
        self.trk_h.add(t, fixed and rh is not None and math.hypot(e - ce, n - cn) <= rh)
        if not fixed or u == u:  # fixed epochs without a height say nothing about the vertical
            self.trk_v.add(t, fixed and rv is not None and abs(u - cu) <= rv)

    def _flush(self) -> None:
        """Write the waiting head rows in one slice (a numpy row at a time is slow)."""
        p = self._pend
        if p:  # rows through fromiter: one C pass, the same float64 values as a list assignment
            self.head[self._done:self._done + len(p)] = np.fromiter(chain.from_iterable(p), float,
                                                                    count=5 * len(p)).reshape(len(p), 5)
            self._done += len(p)
            p.clear()

    def _seed(self, tg: Target | None) -> None:
        """Head buffer full: carry a still-running inside spell over to the streaming trackers."""
        self.frozen = tg
        for trk, which in ((self.trk_h, "h"), (self.trk_v, "v")):
            t, inside = self.inside(which, tg)
            if inside.size and inside[-1]:
                k = inside.size - 1
                while k > 0 and inside[k - 1]:
                    k -= 1
                trk.start = float(t[k])

    def inside(self, which: str, tg: Target | None) -> tuple[np.ndarray, np.ndarray]:
        self._flush()
        a = self.head[: self.n]
        fixed = a[:, 4] > 0
        if which == "v":  # fixed epochs without a height are skipped, no-fix epochs still break
            a = a[~fixed | np.isfinite(a[:, 3])]
            fixed = a[:, 4] > 0
        if tg is None:
            return a[:, 0], np.zeros(a.shape[0], dtype=bool)
        (ce, cn, cu), rh, rv = tg
        lim = rh if which == "h" else rv
        if lim is None:
            return a[:, 0], np.zeros(a.shape[0], dtype=bool)
        with np.errstate(invalid="ignore"):
            err = np.hypot(a[:, 1] - ce, a[:, 2] - cn) if which == "h" else np.abs(a[:, 3] - cu)
            return a[:, 0], fixed & (err <= lim)

    def time(self, which: str, tg: Target | None) -> float | None:
        """Seconds from the first fix to convergence; None while not converged."""
        if self.first_fix is None:
            return None
        t, inside = self.inside(which, tg)
        got = first_hold(t, inside, self.hold_s)
        if got is None:
            got = (self.trk_h if which == "h" else self.trk_v).done
        return None if got is None else max(0.0, got - self.first_fix)
