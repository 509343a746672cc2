"""Least-squares drift (slope) of a coordinate with an honest standard error.

Position errors are strongly autocorrelated (multipath, atmosphere), so the textbook SE of a
per-epoch regression is far too small. Two guards, both applied:
1. the session slope is fitted to 1-minute block means (bounded by PairHistory, so blocks grow
   to 2, 4, ... minutes on long sessions), which removes most of the short-term correlation;
2. the SE is inflated by the lag-1 autocorrelation rho of the fit residuals with the usual
   AR(1) effective-sample factor sqrt((1 + rho) / (1 - rho)) when rho > 0 (common practice).
"""

from __future__ import annotations

import math

import numpy as np

MM_PER_H = 1000.0 * 3600.0  # m/s -> mm/h


def slope_se(t: np.ndarray, y: np.ndarray) -> tuple[float | None, float | None]:
    """Slope of y(t) and its autocorrelation-inflated standard error, both in y-units per t-unit."""
    ok = np.isfinite(t) & np.isfinite(y)
    t, y = t[ok], y[ok]
    if t.size < 3:
        return None, None
    tc = t - t.mean()
    sxx = float(np.dot(tc, tc))
    if sxx <= 0.0:
        return None, None
    b = float(np.dot(tc, y - y.mean()) / sxx)
    res = y - y.mean() - b * tc
    dof = t.size - 2
    s2 = float(np.dot(res, res)) / dof
    se = math.sqrt(s2 / sxx)
    if res.size > 3:
        den = float(np.dot(res, res))
        rho = float(np.dot(res[1:], res[:-1]) / den) if den > 0 else 0.0
        if rho > 0.0:
            rho = min(rho, 0.99)
            se *= math.sqrt((1.0 + rho) / (1.0 - rho))
    return b, se


class BlockMeans:
    """Streaming 1-minute block means of (t, e, n, u) fed into a bounded PairHistory."""

    def __init__(self, history, block_s: float = 60.0) -> None:  # noqa: ANN001 - PairHistory
        self.hist = history
        self.block_s = block_s
        self._start: float | None = None
        self._acc = [0.0, 0.0, 0.0, 0.0]  # Python floats: the same IEEE sums as numpy, cheaper
        self._k = 0

    def add(self, t: float, e: float, n: float, u: float) -> None:
        if self._start is None:
            self._start = t
        elif t - self._start >= self.block_s:
            self.flush()
            self._start = t
        acc = self._acc
        acc[0] += t
        acc[1] += e
        acc[2] += n
        acc[3] += u
        self._k += 1

    def _mean(self) -> list[float]:
        k = self._k
        return [a / k for a in self._acc]

    def flush(self) -> None:
        if self._k:
            self.hist.add(self._mean())
        self._acc = [0.0, 0.0, 0.0, 0.0]
        self._k = 0

    def blocks(self) -> np.ndarray:
        """Completed blocks plus the running one (rows t, e, n, u)."""
        a = self.hist.array()
        if self._k:
            a = np.vstack((a, np.array(self._mean())))
        return a
