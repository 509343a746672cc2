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
    """Pure-Python Welford mean/covariance of (e, n, u): cheaper than numpy for one row."""

    __slots__ = ("n", "m", "c")

    def __init__(self) -> None:
        self.n = 0
        self.m = [0.0, 0.0, 0.0]
        self.c = [0.0] * 6  # ee, en, eu, nn, nu, uu

    def add(self, e: float, n: float, u: float) -> None:
        self.n += 1
        m, k = self.m, self.n
        d0, d1, d2 = e - m[0], n - m[1], u - m[2]
        m[0] += d0 / k
        m[1] += d1 / k
        m[2] += d2 / k
        a0, a1, a2 = e - m[0], n - m[1], u - m[2]
        c = self.c
        c[0] += d0 * a0
        c[1] += d0 * a1
        c[2] += d0 * a2
        c[3] += d1 * a1
        c[4] += d1 * a2
        c[5] += d2 * a2

    def cov(self) -> np.ndarray | None:
        if self.n < 2:
            return None
        c, k = self.c, self.n - 1
        return np.array([[c[0], c[1], c[2]], [c[1], c[3], c[4]], [c[2], c[4], c[5]]]) / k


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
            self.hist_v.add(abs(u - mm[2]))
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

    def drift(self, window_s: float) -> dict[str, dict[str, float | None]]:
        b = self.blocks.blocks()
        ses: dict[str, float | None] = {}
        se: dict[str, float | None] = {}
        win: dict[str, float | None] = {}
        wse: dict[str, float | None] = {}
        a = self.recent(window_s)
        for col, key in ((1, "e"), (2, "n"), (3, "u")):
            s, s_se = drift.slope_se(b[:, 0], b[:, col]) if b.shape[0] >= 3 else (None, None)
            ses[key] = num(s * drift.MM_PER_H, 2) if s is not None else None
            se[key] = num(s_se * drift.MM_PER_H, 2) if s_se is not None else None
            w, w_se = drift.slope_se(a[:, T], a[:, col]) if a.shape[0] >= 3 else (None, None)
            win[key] = num(w * drift.MM_PER_H, 2) if w is not None else None
            wse[key] = num(w_se * drift.MM_PER_H, 2) if w_se is not None else None
        return {"session": ses, "se": se, "window": win, "window_se": wse}

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
                out[key] += [num(v, 6) for v in allan.oadev(data[:, col], tau0, ms)]
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
