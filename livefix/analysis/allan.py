"""Overlapping Allan deviation of position series.

Positions are treated like fractional-frequency samples (each value is an average over its
sample interval), the usual way GNSS position noise is typed with Allan variance (GPS Solutions 18,
2014; docs/sources.md#allan-deviation): white noise falls as tau^-1/2, random walk rises as tau^+1/2 (IEEE 1139,
from memory). Formula: NIST SP 1065 eq. (11) on the integrated series x = [0, cumsum(y) * tau0].
The input comes from a PairHistory: evenly spaced at tau0 = epoch interval * decimation factor,
with gaps bridged (samples are taken as consecutive), which is stated in the snapshot.
"""

from __future__ import annotations

import numpy as np


def octave_m(n: int) -> list[int]:
    """Averaging factors 1, 2, 4, ... up to a third of the record."""
    out, m = [], 1
    while 3 * m <= n:
        out.append(m)
        m *= 2
    return out


def oadev(y: np.ndarray, tau0: float, ms: list[int]) -> list[float]:
    """Overlapping Allan deviation of frequency-type samples y at tau = m * tau0."""
    y = np.asarray(y, dtype=float)
    x = np.concatenate(([0.0], np.cumsum(y - y.mean()) * tau0))  # N + 1 points: N - 2m + 1 terms
    out = []
    for m in ms:
        d = x[2 * m:] - 2.0 * x[m:-m] + x[: -2 * m]
        if d.size == 0:
            out.append(float("nan"))
            continue
        out.append(float(np.sqrt(np.dot(d, d) / (2.0 * d.size)) / (m * tau0)))
    return out
