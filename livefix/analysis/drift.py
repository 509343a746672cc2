"""Least-squares drift (slope) of a coordinate with an honest uncertainty.

Position errors are strongly autocorrelated (multipath, atmosphere), so the textbook SE of a
per-epoch regression is far too small and a clean antenna "drifts". Guards, all applied:
1. the session slope is fitted to 1-minute block means (bounded by PairHistory, so blocks grow
   to 2, 4, ... minutes on long sessions), which removes most of the short-term correlation;
2. the residuals are taken as AR(1) noise: the lag-1 autocorrelation rho of the fit residuals,
   corrected for its small-sample bias (about -(2 + 4 rho)/n once a trend is removed; iterated),
   gives the variance factor f = (1 + rho)/(1 - rho) of the slope and the effective sample size
   n_eff = n / f (common practice for AR(1) errors);
3. the residual variance is corrected for the degrees of freedom the correlation takes
   (s2 * (n - 2) / (n - f - 1)), and the 95 % interval uses Student's t with n_eff - 2 dof.
A Monte-Carlo of AR(1) noise (tests/analysis/test_drift_uncertainty.py) shows the interval
covers the true slope about 95 % of the time for 100+ blocks; with few blocks of strongly
correlated noise it is still somewhat short, which the "run longer" advice covers.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence

import numpy as np

MM_PER_H = 1000.0 * 3600.0  # m/s -> mm/h
Z975 = 1.959963985  # standard normal 97.5 % quantile
T975_LOW = (12.706, 4.303, 3.182, 2.776, 2.571)  # Student t 97.5 % for 1..5 dof (from memory; a test
# compares them with scipy.stats.t)


def t975(dof: float) -> float:
    """Student t 97.5 % quantile: the table above below 5 dof (linear between whole dof), else the
    Cornish-Fisher expansion of Abramowitz & Stegun 26.7.5 (good to 1e-3 from 5 dof)."""
    if dof < 5.0:
        d = max(dof, 1.0)
        i = int(d)
        lo = T975_LOW[i - 1]
        return lo if i >= 5 else lo + (d - i) * (T975_LOW[i] - lo)
    z, v = Z975, dof
    return (z + (z**3 + z) / (4 * v) + (5 * z**5 + 16 * z**3 + 3 * z) / (96 * v**2)
            + (3 * z**7 + 19 * z**5 + 17 * z**3 - 15 * z) / (384 * v**3)
            + (79 * z**9 + 776 * z**7 + 1482 * z**5 - 1920 * z**3 - 945 * z) / (92160 * v**4))


def slope_fit(t: np.ndarray, y: np.ndarray) -> dict[str, float] | None:
    """Slope b of y(t), its standard error se and the 95 % half-width ci95 (y-units per t-unit),
    the lag-1 autocorrelation rho used and the effective sample size n_eff; None when unfit."""
    ok = np.isfinite(t) & np.isfinite(y)
    t, y = t[ok], y[ok]
    n = t.size
    if n < 3:
        return None
    tc = t - t.mean()
    sxx = float(np.dot(tc, tc))
    if sxx <= 0.0:
        return None
    b = float(np.dot(tc, y - y.mean()) / sxx)
    res = y - y.mean() - b * tc
    den = float(np.dot(res, res))
    s2 = den / (n - 2)
    rho0 = float(np.dot(res[1:], res[:-1]) / den) if den > 0 and n > 3 else 0.0
    rho = rho0
    for _ in range(3):  # bias of the lag-1 estimate after a trend fit, evaluated at the corrected rho
        rho = rho0 + (2.0 + 4.0 * max(rho, 0.0)) / n if n > 3 else 0.0
    rho = min(max(rho, 0.0), 0.99)
    f = (1.0 + rho) / (1.0 - rho)
    s2 *= (n - 2) / max(n - f - 1.0, 1.0)
    se = math.sqrt(s2 * f / sxx)
    n_eff = n / f
    q = t975(n_eff - 2.0)
    return {"b": b, "se": se, "ci95": q * se, "rho": rho, "n_eff": n_eff}


def slope_se(t: np.ndarray, y: np.ndarray) -> tuple[float | None, float | None]:
    """Slope of y(t) and its autocorrelation-aware standard error, both in y-units per t-unit."""
    fit = slope_fit(t, y)
    return (None, None) if fit is None else (fit["b"], fit["se"])


def run_needed_s(span_s: float, drift: float, ci95: float, limit: float) -> float | None:
    """About how long a run must be for the 95 % interval to clear `limit`: the slope's uncertainty
    falls as span^-1.5 at a fixed sampling rate (OLS on a time trend), so the run must grow by
    (ci95 / |limit - drift|)^(2/3). None when the drift sits on the limit."""
    gap = abs(abs(limit) - abs(drift))
    if span_s <= 0 or ci95 <= 0 or gap <= 0:
        return None
    return span_s * max(1.0, (ci95 / gap) ** (2.0 / 3.0))


class BlockMeans:
    """Streaming 1-minute block means of (t, e, n, u) fed into a bounded PairHistory."""

    def __init__(self, history, block_s: float = 60.0) -> None:  # noqa: ANN001 - PairHistory
        self.hist = history
        self.block_s = block_s
        self._start: float | None = None
        self._acc = [0.0, 0.0, 0.0, 0.0]  # Python floats: the same IEEE sums as numpy, cheaper
        self._k = 0
        self._ku = 0  # samples with a height (u NaN otherwise: not summed)

    def add(self, t: float, e: float, n: float, u: float) -> None:
        self.add_rows(((t, e, n, u),))

    def add_rows(self, rows: Iterable[Sequence[float]]) -> None:
        """add(t, e, n, u) for each row (t, e, n, u, ...) in order, the sums kept in locals."""
        start, block_s = self._start, self.block_s
        a0, a1, a2, a3 = self._acc
        k, ku = self._k, self._ku
        for row in rows:
            t, e, n, u = row[0], row[1], row[2], row[3]
            if start is None:
                start = t
            elif t - start >= block_s:
                self._acc, self._k, self._ku = [a0, a1, a2, a3], k, ku
                self.flush()  # a fresh zero sum
                a0 = a1 = a2 = a3 = 0.0
                k = ku = 0
                start = t
            a0 += t
            a1 += e
            a2 += n
            if u == u:
                a3 += u
                ku += 1
            k += 1
        self._start = start
        self._acc, self._k, self._ku = [a0, a1, a2, a3], k, ku

    def _mean(self) -> list[float]:
        k, a = self._k, self._acc
        return [a[0] / k, a[1] / k, a[2] / k, a[3] / self._ku if self._ku else math.nan]

    def flush(self) -> None:
        if self._k:
            self.hist.add(self._mean())
        self._acc = [0.0, 0.0, 0.0, 0.0]
        self._k = 0
        self._ku = 0

    def blocks(self) -> np.ndarray:
        """Completed blocks plus the running one (rows t, e, n, u)."""
        a = self.hist.array()
        if self._k:
            a = np.vstack((a, np.array(self._mean())))
        return a
