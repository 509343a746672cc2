"""Per-fix-type accumulator: everything PositionStats keeps about one fix type.

Kept separately per fix type so that, e.g., an RTK-fixed scatter is never polluted by single
epochs. All members are bounded; see the sizes below.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from livefix.analysis import allan, drift, scatter
from livefix.analysis.streaming import LogHistogram, PairHistory, Ring, num

RING_CAP = 8192  # recent epochs kept exactly (window percentiles, honesty, samples)
ALLAN_CAP = 4096  # decimated samples for Allan deviation
BLOCK_CAP = 2048  # decimated 1-minute block means for the session drift
WARMUP = 10  # samples before radii about the running mean enter the streaming histogram
# ring columns
T, E, N, U, SLAT, SLON, SALT, HDOP = range(8)


class Moments3:
    """Pure-Python one-pass mean/covariance of (e, n) and, over the epochs with a height, of u: cheaper
    than numpy for one row. An epoch without a height (u NaN) adds to the horizontal moments only."""

    __slots__ = ("n", "m", "c", "nu")

    def __init__(self) -> None:
        self.n = 0
        self.nu = 0  # epochs with a height
        self.m = [0.0, 0.0, 0.0]
        self.c = [0.0] * 6  # ee, en, eu, nn, nu, uu (eu, nu: cross terms are not kept: 0)

    def add(self, e: float, n: float, u: float) -> None:
        self.n += 1
        m, k = self.m, self.n
        d0, d1 = e - m[0], n - m[1]
        m[0] += d0 / k
        m[1] += d1 / k
        c = self.c
        c[0] += d0 * (e - m[0])
        c[1] += d0 * (n - m[1])
        c[3] += d1 * (n - m[1])
        if u == u:
            self.nu += 1
            d2 = u - m[2]
            m[2] += d2 / self.nu
            c[5] += d2 * (u - m[2])

    def mean(self) -> tuple[float, float, float]:
        """(e, n, u); u is NaN when no epoch had a height."""
        return (self.m[0], self.m[1], self.m[2] if self.nu else math.nan)

    def cov(self) -> np.ndarray | None:
        if self.n < 2:
            return None
        c, k = self.c, self.n - 1
        vu = c[5] / (self.nu - 1) if self.nu >= 2 else math.nan
        return np.array([[c[0] / k, c[1] / k, 0.0], [c[1] / k, c[3] / k, 0.0], [0.0, 0.0, vu]])


class Track:
    """Scatter, drift and Allan history of one fix type, in the session's anchor E/N/U frame."""

    def __init__(self) -> None:
        self.mom = Moments3()
        self.hist_r = LogHistogram()
        self.hist_v = LogHistogram()
        self.ring = Ring(RING_CAP, 8)
        self.blocks = drift.BlockMeans(PairHistory(BLOCK_CAP, 4))
        self.allan = PairHistory(ALLAN_CAP, 3)

    def add(self, t: float, e: float, n: float, u: float, slat: float, slon: float, salt: float,
            hdop: float) -> None:
        m = self.mom
        if m.n >= WARMUP:  # radius about the running mean: close to the final mean once settled
            mm = m.m
            self.hist_r.add(math.hypot(e - mm[0], n - mm[1]))
            if m.nu >= WARMUP:
                self.hist_v.add(abs(u - mm[2]))  # NaN (no height) is skipped by the histogram
        m.add(e, n, u)
        self.ring.push((t, e, n, u, slat, slon, salt, hdop))
        self.blocks.add(t, e, n, u)
        self.allan.add3(e, n, u)

    @property
    def n(self) -> int:
        return self.mom.n

    def session(self) -> dict[str, Any]:
        """Whole-session figures: exact while the session still fits the ring, else streaming."""
        if self.ring.total == self.ring.n:
            a = self.ring.array()
            out = scatter.figures(a[:, E], a[:, N], a[:, U])
            return out | {"basis": "exact"}
        out = scatter.figures_from_moments(self.n, self.mom.cov(), self.hist_r.quantile(0.5),
                                           self.hist_r.quantile(0.95), self.hist_v.quantile(0.95))
        return out | {"basis": "streaming"}

    def recent(self, window_s: float) -> np.ndarray:
        a = self.ring.array()
        if a.size == 0:
            return a
        return a[a[:, T] >= a[-1, T] - window_s]

    def window(self, window_s: float) -> dict[str, Any]:
        a = self.recent(window_s)
        if a.size == 0:
            return scatter.figures(np.empty(0), np.empty(0))
        return scatter.figures(a[:, E], a[:, N], a[:, U]) | {"span_s": num(a[-1, T] - a[0, T], 1)}

    def drift(self, window_s: float) -> dict[str, Any]:
        """Session slope (block means) with its standard error and 95 % interval, and the slope over
        the recent window, per axis in mm/h; `span_s` is the time the session fit covers."""
        b = self.blocks.blocks()
        a = self.recent(window_s)
        out: dict[str, Any] = {k: {} for k in ("session", "se", "ci95", "window", "window_se", "rho", "n_eff")}
        for col, key in ((1, "e"), (2, "n"), (3, "u")):
            fit = drift.slope_fit(b[:, 0], b[:, col]) if b.shape[0] >= 3 else None
            mm = (lambda v: num(v * drift.MM_PER_H, 2)) if fit else (lambda v: None)
            out["session"][key] = mm(fit["b"]) if fit else None
            out["se"][key] = mm(fit["se"]) if fit else None
            out["ci95"][key] = mm(fit["ci95"]) if fit else None
            out["rho"][key] = num(fit["rho"], 3) if fit else None
            out["n_eff"][key] = num(fit["n_eff"], 1) if fit else None
            w, w_se = drift.slope_se(a[:, T], a[:, col]) if a.shape[0] >= 3 else (None, None)
            out["window"][key] = num(w * drift.MM_PER_H, 2) if w is not None else None
            out["window_se"][key] = num(w_se * drift.MM_PER_H, 2) if w_se is not None else None
        out["span_s"] = num(float(b[-1, 0] - b[0, 0]), 1) if b.shape[0] >= 2 else None
        return out

    def allan_dev(self) -> dict[str, Any]:
        """Short taus (from one epoch) from the full-rate ring; longer ones from the decimated
        session history, whose step is the epoch interval times the decimation factor."""
        r = self.ring.array()
        dt = np.diff(r[:, T]) if r.shape[0] > 1 else np.empty(0)
        dt = dt[dt > 0]
        empty = {"tau_s": [], "e": [], "n": [], "u": [], "tau0_s": None, "decimation": self.allan.factor}
        if dt.size == 0:
            return empty
        step = float(np.median(dt))
        parts = [(r[:, [E, N, U]], step, allan.octave_m(r.shape[0]))]
        a = self.allan.array()
        if self.allan.factor > 1:
            tau0 = step * self.allan.factor
            top = parts[0][2][-1] * step if parts[0][2] else 0.0
            parts.append((a, tau0, [m for m in allan.octave_m(a.shape[0]) if m * tau0 > top * 1.5]))
        out: dict[str, Any] = {"tau_s": [], "e": [], "n": [], "u": []}
        for data, tau0, ms in parts:
            if not ms:
                continue
            out["tau_s"] += [num(m * tau0, 3) for m in ms]
            for col, key in ((0, "e"), (1, "n"), (2, "u")):
                y = data[:, col]
                y = y[np.isfinite(y)]  # epochs without a height: bridged, as gaps are
                fit = [m for m in ms if 3 * m <= y.size]
                out[key] += ([num(v, 6) for v in allan.oadev(y, tau0, fit)] if fit else []) \
                    + [None] * (len(ms) - len(fit))
        if not out["tau_s"]:
            return empty
        return out | {"tau0_s": num(step, 3), "decimation": self.allan.factor}

    def honesty(self) -> dict[str, Any]:
        """Observed sigma / receiver-reported (GST) sigma over the recent ring, and UERE-like
        effective range error = observed DRMS / median HDOP. `robust` repeats the ratios with
        sigma = 1.4826 * MAD (normal-consistent), so one jump does not dominate the verdict."""
        a = self.ring.array()
        out: dict[str, Any] = {"lat_ratio": None, "lon_ratio": None, "h_ratio": None, "ure_m": None}
        if a.shape[0] < 10:
            return out
        enu = a[:, [E, N, U]]
        sd = np.std(enu, axis=0, ddof=1)
        mad = 1.4826 * np.median(np.abs(enu - np.median(enu, axis=0)), axis=0)
        robust: dict[str, float | None] = {}
        for key, col, i in (("lat_ratio", SLAT, 1), ("lon_ratio", SLON, 0), ("h_ratio", SALT, 2)):
            rep = a[:, col][np.isfinite(a[:, col])]
            med = float(np.median(rep)) if rep.size else 0.0
            out[key] = num(sd[i] / med, 3) if med > 0 else None
            robust[key] = num(mad[i] / med, 3) if med > 0 else None
        out["robust"] = robust
        hd = a[:, HDOP][np.isfinite(a[:, HDOP])]
        med_h = float(np.median(hd)) if hd.size else 0.0
        out["ure_m"] = num(math.hypot(sd[0], sd[1]) / med_h, 3) if med_h > 0 else None
        return out
