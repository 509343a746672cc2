"""Per-fix-type accumulator: everything PositionStats keeps about one fix type.

Kept separately per fix type so that, e.g., an RTK-fixed scatter is never polluted by single
epochs. All members are bounded; see the sizes below.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np

from livefix.analysis import allan, drift, scatter, streaming
from livefix.analysis.counts import load_core
from livefix.analysis.streaming import LogHistogram, PairHistory, Ring, num

RING_CAP = 8192  # recent epochs kept exactly (window percentiles, honesty, samples)
ALLAN_CAP = 4096  # decimated samples for Allan deviation
BLOCK_CAP = 2048  # decimated 1-minute block means for the session drift
WARMUP = 10  # samples before radii about the running mean enter the streaming histogram
BATCH = 64  # rows waiting before the accumulators take them (bounded; readers settle them first)
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
        self.add_rows(((0.0, e, n, u),))

    def add_rows(self, rows: Sequence[Sequence[float]], warmup: float = math.inf) -> tuple[list[float], list[float]]:
        """add(e, n, u) for each row (t, e, n, u, ...) in order, the running sums kept in locals.
        Returns the horizontal and vertical distances of each row from the mean before it, for the
        rows after `warmup` rows (vertical: after `warmup` heights; NaN for a row without a height)."""
        k, nu, m, c = self.n, self.nu, self.m, self.c
        m0, m1, m2 = m
        c0, c1, c3, c5 = c[0], c[1], c[3], c[5]
        rh: list[float] = []
        rv: list[float] = []
        hypot = math.hypot
        for row in rows:
            e, n, u = row[1], row[2], row[3]
            if k >= warmup:
                rh.append(hypot(e - m0, n - m1))
                if nu >= warmup:
                    rv.append(abs(u - m2))
            k += 1
            d0, d1 = e - m0, n - m1
            m0 += d0 / k
            m1 += d1 / k
            c0 += d0 * (e - m0)
            c1 += d0 * (n - m1)
            c3 += d1 * (n - m1)
            if u == u:
                nu += 1
                d2 = u - m2
                m2 += d2 / nu
                c5 += d2 * (u - m2)
        self.n, self.nu = k, nu
        m[0], m[1], m[2] = m0, m1, m2
        c[0], c[1], c[3], c[5] = c0, c1, c3, c5
        return rh, rv

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
    """Scatter, drift and Allan history of one fix type, in the session's anchor E/N/U frame.

    Rows wait in a short list and go into every accumulator in one pass per BATCH rows (a call per
    accumulator per row is slow); each accumulator still takes them one by one in arrival order, so
    every sum is the same. Every reader (the members below are properties) settles them first.
    _settle is the reference; the C position step settles a full batch with its twin (track_settle in
    livefix/analysis/_epochcore_track.c, configured below)."""

    __slots__ = ("_mom", "_hist_r", "_hist_v", "_ring", "_blocks", "_allan", "_pend")  # _pend, _mom: read by C

    def __init__(self) -> None:
        self._mom = Moments3()
        self._hist_r = LogHistogram()
        self._hist_v = LogHistogram()
        self._ring = Ring(RING_CAP, 8)
        self._blocks = drift.BlockMeans(PairHistory(BLOCK_CAP, 4))
        self._allan = PairHistory(ALLAN_CAP, 3)
        self._pend: list[tuple[float, ...]] = []

    def add(self, t: float, e: float, n: float, u: float, slat: float, slon: float, salt: float,
            hdop: float) -> None:
        p = self._pend
        p.append((t, e, n, u, slat, slon, salt, hdop))
        if len(p) >= BATCH:
            self._settle()

    def _settle(self) -> None:
        rows = self._pend
        if not rows:
            return
        self._pend = []  # the ring keeps the row tuples (never changed)
        # radius about the running mean: close to the final mean once settled (after WARMUP rows)
        rh, rv = self._mom.add_rows(rows, WARMUP)
        self._hist_r.add_many(rh)
        self._hist_v.add_many(rv)  # NaN (no height) is skipped by the histogram
        self._blocks.add_rows(rows)
        self._allan.add3_rows(rows, E)
        self._ring.extend(rows)

    @property
    def n(self) -> int:
        return self._mom.n + len(self._pend)

    @property
    def mom(self) -> Moments3:
        self._settle()
        return self._mom

    @property
    def hist_r(self) -> LogHistogram:
        self._settle()
        return self._hist_r

    @property
    def hist_v(self) -> LogHistogram:
        self._settle()
        return self._hist_v

    @property
    def ring(self) -> Ring:
        self._settle()
        return self._ring

    @property
    def blocks(self) -> drift.BlockMeans:
        self._settle()
        return self._blocks

    @property
    def allan(self) -> PairHistory:
        self._settle()
        return self._allan

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


# the C twin of Track._settle: the types it checks and the constants it uses (bench/fuzz_epochcore.py
# configures a sanitizer build with the same tuple)
_CONFIGURE = (Track, Moments3, LogHistogram, drift.BlockMeans, PairHistory, Ring, math.hypot, WARMUP,
              streaming.FLUSH, streaming._LH_STEP)
_CORE = load_core("configure_track", *_CONFIGURE)
