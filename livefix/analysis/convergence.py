"""Convergence time: when the error first settles within its fix type's threshold for good.

The first part of the session (where convergence happens) is kept whole in a bounded head buffer
so the time can be re-evaluated against the latest reference: a user reference, or else the
median position of each fix type over the head buffer (robust to jumps and bad spells, unlike the
mean). If the head buffer fills before the error settled, a streaming tracker carries on against
the reference as it stands then. An epoch without a fix, or of a fix type without a threshold,
breaks a spell.
"""

from __future__ import annotations

import numpy as np


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
