"""Position statistics: precision (scatter about the mean), accuracy (offset from a reference),
drift, Allan deviation, convergence and how honest the receiver's own sigmas are.

Frames: all positions are held as E/N/U in one *anchor* frame (the user reference when given,
else the first fix), so changing the reference never needs the raw history: the new reference
is projected into the anchor frame and the means are carried through geodetic coordinates into
the reference's own frame (exact). Differences between the two frames' axes are d/R radians,
i.e. under 2 mm for points 100 m apart.

Session-mean reference (no user reference): the mean of the first SETTLE_EPOCHS epochs of a fix
type, then fixed so offsets do not wander; it is replaced only when a better-ranked fix type
completes its own first SETTLE_EPOCHS epochs (so a cold start's single fixes do not bias an RTK
session). `ref.fix` names the fix type used.

Headline rule: the figures at the top level describe the best fix type present (rtk_fixed >
rtk_float > dgnss > pps > single > others) that has at least MIN_COUNT epochs and at least
MIN_SHARE of all fixed epochs; otherwise the fix type with the most epochs. `fix` names it.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.convergence import Tracker, first_hold
from livefix.analysis.geo import Projector
from livefix.analysis.streaming import Timeline, num, valid_fix
from livefix.analysis.track import Track
from livefix.geodesy import LocalFrame
from livefix.state.epoch import FIX_NAMES, Epoch, Event

RANK = ("rtk_fixed", "rtk_float", "dgnss", "pps", "single", "manual", "estimated", "simulator")
MIN_COUNT = 30
MIN_SHARE = 0.05
SETTLE_EPOCHS = 60  # fixes averaged for the session-mean reference, which then stays fixed
HEAD_CAP = 36000  # first epochs kept whole for convergence (1 h at 10 Hz)
MAX_SAMPLES = 2000
NAN = float("nan")


class PositionStats:
    """Snapshot key "position"; see livefix.analysis for the keys."""

    def __init__(self, config: AnalysisConfig, emit: Callable[[Event], None]) -> None:
        self.cfg = config
        self.emit = emit
        self._thr_h = dict(config.converge_h)
        self._thr_v = dict(config.converge_v)
        self.reset()

    def reset(self) -> None:
        self.clock = Timeline()
        self.anchor: LocalFrame | None = None
        self.tracks: dict[str, Track] = {}
        self.ref: tuple[float, float, float] | None = None
        self.ref_source: str | None = None
        self.ref_enu: tuple[float, float, float] | None = None
        self.ref_frame: LocalFrame | None = None
        self._anchor_p: Projector | None = None  # the two frames above, with the ECEF memo
        self._ref_p: Projector | None = None
        self.ref_fix: str | None = None  # fix type whose first epochs gave the session-mean reference
        self.head = np.full((HEAD_CAP, 5), np.nan)  # t, e, n, u, quality
        self.head_n = 0  # rows added; the newest wait in _head_pend until a reader flushes them
        self._head_pend: list[tuple[float, float, float, float, int]] = []
        self._head_done = 0
        self._trk_h = Tracker(self.cfg.converge_hold_s)
        self._trk_v = Tracker(self.cfg.converge_hold_s)
        self._medians: dict[str, tuple[float, float, float]] | None = None
        self._last: tuple[float, float, float] | None = None
        self._epochs = 0
        self._fixed_now = False
        self.no_height = 0  # fixed epochs without a height (vertical figures then mean little)
        self._cache: tuple[int, dict[str, Any]] | None = None
        self._auto = True  # session-mean reference may still settle / upgrade
        if self.cfg.ref is not None:
            self.set_reference(*self.cfg.ref, source="user")

    # ---- reference -------------------------------------------------------------------------
    def set_reference(self, lat: float, lon: float, h: float, source: str = "user") -> None:
        """Offsets, errors and convergence are measured from this point from now on. A reference
        set from outside (even the mean, at the user's request) is sticky: no automatic update."""
        self._auto = False
        self._set_ref(lat, lon, h, source)

    def _set_ref(self, lat: float, lon: float, h: float, source: str) -> None:
        self.ref = (float(lat), float(lon), float(h))
        self.ref_source = source
        self.ref_frame = LocalFrame(*self.ref)
        self._ref_p = Projector(self.ref_frame)
        if self.anchor is None:
            self.anchor = LocalFrame(*self.ref)
            self._anchor_p = Projector(self.anchor)
        self.ref_enu = self.anchor.enu(*self.ref)
        self._cache = None

    # ---- stream ----------------------------------------------------------------------------
    def on_event(self, ev: Event) -> None:
        """Position statistics depend on epochs only; events are accepted for symmetry."""

    def on_epoch(self, ep: Epoch) -> None:
        t = self.clock.step(ep)
        self._epochs += 1
        if not valid_fix(ep):
            self._fixed_now = False
            self._head_add(t, NAN, NAN, NAN, 0)
            return
        self._fixed_now = True
        fix = FIX_NAMES.get(ep.quality, "none")  # Epoch.fix
        lat, lon, h = ep.lat, ep.lon, ep.h
        if h is None:  # e.g. RMC-only epochs: carry the last height, and say how often
            self.no_height += 1
            h = self._last[2] if self._last is not None else (self.ref[2] if self.ref else 0.0)
        ap = self._anchor_p
        if ap is None:
            self.anchor = LocalFrame(lat, lon, h)
            ap = self._anchor_p = Projector(self.anchor)
        e, n, u = ap.enu(lat, lon, h)
        self._last = (lat, lon, h)
        trk = self.tracks.get(fix)
        if trk is None:
            trk = self.tracks[fix] = Track()
        sl, so, sa, hd = ep.sigma_lat, ep.sigma_lon, ep.sigma_alt, ep.hdop
        trk.add(t, e, n, u, NAN if sl is None else float(sl), NAN if so is None else float(so),
                NAN if sa is None else float(sa), NAN if hd is None else float(hd))
        # an unknown quality is kept as -1 ("none" as in Epoch.fix), never as a huge float that
        # cannot be cast back to int
        self._head_add(t, e, n, u, ep.quality if ep.quality in FIX_NAMES else -1)
        if self._auto and trk.n == SETTLE_EPOCHS and self._better(fix):
            self._set_ref(*self.anchor.geodetic(*trk.mom.m), source="session_mean")
            self.ref_fix = fix

    def _better(self, fix: str) -> bool:
        """A fix type that settles replaces the session-mean reference only if it ranks higher."""
        if self.ref_fix is None:
            return True
        rank = {k: i for i, k in enumerate(RANK)}
        return rank.get(fix, len(RANK)) < rank.get(self.ref_fix, len(RANK))

    def _head_add(self, t: float, e: float, n: float, u: float, q: int) -> None:
        if self.head_n < HEAD_CAP:
            p = self._head_pend
            p.append((t, e, n, u, q))
            self.head_n += 1
            if self.head_n == HEAD_CAP:
                self._seed_trackers()
            elif len(p) >= 256:
                self._head_flush()
            return
        name = FIX_NAMES.get(q, "none")
        c = self._centre(name)
        lim = self._thr_h.get(name)
        self._trk_h.add(t, lim is not None and c is not None and self._err_h(e, n, u, c) <= lim)
        lim = self._thr_v.get(name)
        self._trk_v.add(t, lim is not None and c is not None and self._err_v(e, n, u, c) <= lim)

    def _head_flush(self) -> None:
        """Write the waiting head rows in one slice (a numpy row at a time is slow)."""
        p = self._head_pend
        if p:
            self.head[self._head_done:self._head_done + len(p)] = p
            self._head_done += len(p)
            p.clear()

    def _seed_trackers(self) -> None:
        """Head buffer full: carry a still-running inside spell over to the streaming trackers,
        which from now on judge against the medians frozen here."""
        self._medians = self._head_medians()
        for trk, which in ((self._trk_h, "h"), (self._trk_v, "v")):
            t, inside = self._inside(which)
            if inside.size and inside[-1]:
                k = inside.size - 1
                while k > 0 and inside[k - 1]:
                    k -= 1
                trk.start = float(t[k])

    @staticmethod
    def _err_h(e: float, n: float, u: float, c: tuple[float, float, float]) -> float:
        return math.hypot(e - c[0], n - c[1])

    @staticmethod
    def _err_v(e: float, n: float, u: float, c: tuple[float, float, float]) -> float:
        return abs(u - c[2])

    def _centre(self, fix: str) -> tuple[float, float, float] | None:
        """Truth for convergence: the user reference, else the median position of that fix type
        over the head buffer (robust: a scripted jump or a bad spell must not move it)."""
        if self.ref_source == "user" and self.ref_enu is not None:
            return self.ref_enu
        if self._medians is not None:
            return self._medians.get(fix)
        return self._head_medians().get(fix)

    def _head_medians(self) -> dict[str, tuple[float, float, float]]:
        self._head_flush()
        a = self.head[: self.head_n]
        out = {}
        for q in np.unique(a[:, 4]).astype(int):
            if q > 0:
                sel = a[a[:, 4] == q]
                out[FIX_NAMES.get(int(q), "none")] = tuple(float(v) for v in np.median(sel[:, 1:4], axis=0))
        return out  # type: ignore[return-value]

    def _inside(self, which: str) -> tuple[np.ndarray, np.ndarray]:
        self._head_flush()
        a = self.head[: self.head_n]
        thr = self._thr_h if which == "h" else self._thr_v
        inside = np.zeros(a.shape[0], dtype=bool)
        med = self._medians if self._medians is not None else self._head_medians()
        user = self.ref_enu if self.ref_source == "user" else None
        for q in np.unique(a[:, 4]).astype(int):
            name = FIX_NAMES.get(int(q), "none")
            lim, c = thr.get(name), user or med.get(name)
            if lim is None or c is None:
                continue
            sel = a[:, 4] == q
            if which == "h":
                err = np.hypot(a[sel, 1] - c[0], a[sel, 2] - c[1])
            else:
                err = np.abs(a[sel, 3] - c[2])
            inside[sel] = err <= lim
        return a[:, 0], inside

    def _convergence(self, which: str) -> float | None:
        t, inside = self._inside(which)
        got = first_hold(t, inside, self.cfg.converge_hold_s)
        if got is None:
            got = (self._trk_h if which == "h" else self._trk_v).done
        return num(got, 2)

    # ---- queries ---------------------------------------------------------------------------
    def headline(self) -> str | None:
        total = sum(t.n for t in self.tracks.values())
        for name in RANK:
            trk = self.tracks.get(name)
            if trk is not None and trk.n >= MIN_COUNT and trk.n >= MIN_SHARE * total:
                return name
        if not self.tracks:
            return None
        return max(self.tracks, key=lambda k: self.tracks[k].n)

    def h_error(self) -> float | None:
        """Horizontal distance of the latest epoch from the reference, metres (for trends);
        None while the latest epoch has no fix or there is no reference yet."""
        if self._last is None or self._ref_p is None or not self._fixed_now:
            return None
        e, n, _ = self._ref_p.enu(*self._last)
        return math.hypot(e, n)

    def sigma_h(self) -> float | None:
        """Horizontal 1-sigma (DRMS = sqrt(sE^2 + sN^2)) of the headline fix type's session."""
        name = self.headline()
        cov = self.tracks[name].mom.cov() if name else None
        return math.sqrt(cov[0, 0] + cov[1, 1]) if cov is not None else None

    def snapshot(self) -> dict[str, Any]:
        if self._cache is not None and self._cache[0] == self._epochs:
            return self._cache[1]
        snap = self._build()
        self._cache = (self._epochs, snap)
        return snap

    def _build(self) -> dict[str, Any]:
        name = self.headline()
        ref = None if self.ref is None else {"lat": num(self.ref[0], 9), "lon": num(self.ref[1], 9),
                                             "h": num(self.ref[2], 4), "source": self.ref_source,
                                             "fix": self.ref_fix if self.ref_source == "session_mean" else None}
        out: dict[str, Any] = {"fix": name, "ref": ref, "mean": None, "offset_m": None, "no_height": self.no_height,
                               "convergence_s": self._convergence("h"), "convergence_v_s": self._convergence("v"),
                               "rule": f"best fix type with >= {MIN_COUNT} epochs and >= {MIN_SHARE:.0%} of fixes"}
        out["by_fix"] = {k: t.session() for k, t in self.tracks.items()}
        if name is None or self.anchor is None:
            return out | {"cep50_m": None, "cep95_m": None, "r95_m": None, "drms2_m": None, "v95_m": None,
                          "ellipse": None, "window": {}, "drift_mm_per_h": None, "drift_se_mm_per_h": None,
                          "drift_window_mm_per_h": None, "drift_window_se_mm_per_h": None,
                          "allan": None, "honesty": None, "samples": None}
        trk = self.tracks[name]
        ses = out["by_fix"][name]
        out |= {k: ses.get(k) for k in ("n", "basis", "cep50_m", "cep95_m", "r95_m", "r95_gauss_m", "drms2_m",
                                        "v95_m", "ellipse")}
        lat, lon, h = self.anchor.geodetic(*trk.mom.m)
        out["mean"] = {"lat": num(lat, 9), "lon": num(lon, 9), "h": num(h, 4)}
        if self.ref_frame is not None:
            oe, on, ou = self.ref_frame.enu(lat, lon, h)
            out["offset_m"] = {"e": num(oe), "n": num(on), "u": num(ou), "h": num(math.hypot(oe, on))}
        out["window"] = trk.window(self.cfg.window_s)
        d = trk.drift(self.cfg.window_s)
        out |= {"drift_mm_per_h": d["session"], "drift_se_mm_per_h": d["se"], "drift_window_mm_per_h": d["window"],
                "drift_window_se_mm_per_h": d["window_se"]}
        out["allan"] = trk.allan_dev()
        out["honesty"] = trk.honesty()
        out["samples"] = self._samples(trk)
        return out

    def _samples(self, trk: Track) -> dict[str, Any]:
        """Recent E/N/U about the reference (or the mean), decimated to <= MAX_SAMPLES points;
        `mean_e`/`mean_n` place the scatter centre (where the CEP circles belong) in that frame."""
        a = trk.recent(self.cfg.window_s)
        step = max(1, math.ceil(a.shape[0] / MAX_SAMPLES))
        a = a[::step]
        c = self.ref_enu if self.ref_enu is not None else tuple(trk.mom.m)
        out: dict[str, Any] = {k: [num(v, 4) for v in (a[:, i + 1] - c[i]).tolist()] for i, k in enumerate("enu")}
        m = trk.mom.m
        return out | {"about": "ref" if self.ref_enu is not None else "mean", "step": step,
                      "mean_e": num(m[0] - c[0]), "mean_n": num(m[1] - c[1])}
