"""Position statistics of the static receiver: precision (scatter about the mean), accuracy (offset
from a reference), drift, Allan deviation, convergence and how honest the receiver's own sigmas
are. They describe the converged receiver standing still, so three kinds of epochs are kept out:
- moving epochs (livefix.analysis.motion); when the receiver moves to a new place, the figures
  start afresh for that static segment and the longest segment's figures are published;
- jumps and their re-convergence (livefix.analysis.jumps), reported apart under "jumps";
- for the vertical, epochs without a height (RMC/GLL only: never a height of 0) and heights in the
  other datum: the first height decides whether heights are ellipsoidal (GGA/GNS with geoid
  separation) or above mean sea level only (separation empty); the two are never mixed.

Frames: all positions are held as E/N/U in one *anchor* frame (the user reference when given,
else the first fix), so changing the reference never needs the raw history: the new reference
is projected into the anchor frame and the means are carried through geodetic coordinates into
the reference's own frame (exact). Differences between the two frames' axes are d/R radians,
i.e. under 2 mm for points 100 m apart.

Estimators, named for what they are: scatter figures (CEP, R95, V95, ellipse) are about the sample
*mean* of the settled epochs of one fix type; the automatic reference ("session_median") is the
*median* of the first SETTLE_EPOCHS settled epochs of a fix type, then fixed so offsets do not
wander, replaced only when a better-ranked fix type completes its own first SETTLE_EPOCHS epochs
(so a cold start's single fixes do not bias an RTK session). `ref.fix` names the fix type used.

Headline rule: the figures at the top level describe the best fix type present (rtk_fixed >
rtk_float > dgnss > pps > single > others) that has at least MIN_COUNT epochs and at least
MIN_SHARE of all fixed epochs; otherwise the fix type with the most epochs. `fix` names it;
`by_fix` gives every fix type's figures with its `share` of the settled epochs.
"""

from __future__ import annotations

import math
from collections import deque
from collections.abc import Callable
from typing import Any

import numpy as np

from livefix.analysis import geo
from livefix.analysis.config import AnalysisConfig
from livefix.analysis.convergence import FLUSH_AT, HEAD_CAP, Convergence, Target
from livefix.analysis.counts import bound_on_epoch, load_core, pick_core
from livefix.analysis.geo import EcefMemo, Projector
from livefix.analysis.jumps import Jumps
from livefix.analysis.motion import CONFIRM, MotionDetector
from livefix.analysis.position_figures import drift_figures, empty_figures
from livefix.analysis.streaming import Timeline, num, valid_fix
from livefix.analysis.track import BATCH as TRACK_BATCH
from livefix.analysis.track import E, Moments3, N, Track, U
from livefix.geodesy import LocalFrame
from livefix.state.epoch import FIX_NAMES, Epoch, Event

RANK = ("rtk_fixed", "rtk_float", "dgnss", "pps", "single", "manual", "estimated", "simulator")
MIN_COUNT = 30
MIN_SHARE = 0.05
SETTLE_EPOCHS = 60  # settled fixes whose median is the automatic reference, which then stays fixed
MAX_SAMPLES = 2000
NAN = float("nan")


class PositionStats:
    """Snapshot key "position" (and "motion" via `motion`); see livefix.analysis for the keys.
    The common case of on_epoch (a settled epoch of a receiver at rest) has a C twin,
    livefix/analysis/_epochcore_pos.c, which hands every other case back to this code, the reference."""

    __slots__ = ("cfg", "emit", "_ecef", "_valid", "_thr_h", "_thr_v", "_core", "clock", "motion", "_epochs",
                 "segments", "_best", "_best_n", "_was_moving", "_user_ref", "_user_source", "anchor", "tracks", "ref",
                 "ref_source", "ref_enu", "ref_frame", "_anchor_p", "_ref_p", "ref_fix", "conv", "jumps", "_last",
                 "_site_en", "_fixed_now", "no_height", "h_datum", "other_datum", "_cache", "_auto")  # read by the C step

    def __init__(self, config: AnalysisConfig, emit: Callable[[Event], None],
                 ecef: EcefMemo | None = None, fixed: Callable[[Epoch], bool] = valid_fix,
                 native: bool | None = None) -> None:
        """native: the common case of on_epoch in C (counts.pick_core: None as LIVEFIX_PURE says)."""
        self._core = pick_core(_CORE, native)
        self.cfg = config
        self.emit = emit
        self._ecef = EcefMemo() if ecef is None else ecef  # shared with the other stages by the Analyzer
        self._valid = fixed  # valid_fix, or the Analyzer's fix_memo shared with the other stages
        self._thr_h = dict(config.converge_h)
        self._thr_v = dict(config.converge_v)
        self.reset()

    def reset(self) -> None:
        self.clock = Timeline()
        self.motion = MotionDetector(self.cfg)
        self._epochs = 0
        self.segments = 0  # static segments at distinct places
        self._best: dict[str, Any] | None = None  # figures of the longest earlier static segment
        self._best_n = 0
        self._was_moving = False
        self._user_ref: tuple[float, float, float] | None = None
        self._user_source = "user"
        self._reset_site()
        if self.cfg.ref is not None:
            self.set_reference(*self.cfg.ref, source="user")

    def _reset_site(self) -> None:
        """Everything that describes one static segment."""
        self.anchor: LocalFrame | None = None
        self.tracks: dict[str, Track] = {}
        self.ref: tuple[float, float, float] | None = None
        self.ref_source: str | None = None
        self.ref_enu: tuple[float, float, float] | None = None
        self.ref_frame: LocalFrame | None = None
        self._anchor_p: Projector | None = None  # the two frames above, with the ECEF memo
        self._ref_p: Projector | None = None
        self.ref_fix: str | None = None  # fix type whose first epochs gave the automatic reference
        self.conv = Convergence(self.cfg.converge_hold_s)
        self.jumps = Jumps(self.cfg)
        self._last: tuple[float, float, float] | None = None
        self._site_en: tuple[float, float] | None = None  # last static E/N of this segment
        self._fixed_now = False
        self.no_height = 0  # fixed epochs without a height (vertical figures leave them out)
        self.h_datum: str | None = None  # "ellipsoidal" | "msl", set by the first height
        self.other_datum = 0  # heights in the other datum, left out
        self._cache: tuple[int, dict[str, Any]] | None = None
        self._auto = True  # automatic reference may still settle / upgrade
        self.segments += 1
        if self._user_ref is not None:
            self._set_ref(*self._user_ref, source=self._user_source)

    # ---- reference -------------------------------------------------------------------------
    def set_reference(self, lat: float, lon: float, h: float, source: str = "user") -> None:
        """Offsets, errors and convergence are measured from this point from now on. A reference
        set from outside (even the mean, at the user's request) is sticky: no automatic update."""
        self._auto = False
        self._user_ref, self._user_source = (float(lat), float(lon), float(h)), source
        self._set_ref(lat, lon, h, source)

    def _set_ref(self, lat: float, lon: float, h: float, source: str) -> None:
        self.ref = (float(lat), float(lon), float(h))
        self.ref_source = source
        self.ref_frame = LocalFrame(*self.ref)
        self._ref_p = Projector(self.ref_frame, self._ecef)
        if self.anchor is None:
            self.anchor = LocalFrame(*self.ref)
            self._anchor_p = Projector(self.anchor, self._ecef)
        self.ref_enu = self.anchor.enu(*self.ref)
        self._auto = self._auto and source not in ("user", "session_mean")
        self._cache = None

    # ---- stream ----------------------------------------------------------------------------
    def on_event(self, ev: Event) -> None:
        """Position statistics depend on epochs only; events are accepted for symmetry."""

    def _height(self, ep: Epoch) -> float | None:
        """The epoch's height in this segment's datum, else None (counted)."""
        if ep.h is not None:
            h, datum = ep.h, "ellipsoidal"
        elif ep.alt_msl is not None and math.isfinite(ep.alt_msl) and abs(ep.alt_msl) < 1e7:
            h, datum = ep.alt_msl, "msl"
        else:
            self.no_height += 1
            return None
        if self.h_datum is None:
            self.h_datum = datum
        elif datum != self.h_datum:
            self.other_datum += 1
            return None
        return h

    def on_epoch(self, ep: Epoch) -> None:
        core = self._core
        if core is not None and core.position_epoch(self, ep):
            return
        self.epoch_reference(ep)

    def epoch_step(self) -> Callable[[Epoch], None]:
        """on_epoch as the Analyzer calls it (counts.bound_on_epoch)."""
        return bound_on_epoch(self._core, "position", self, PositionStats, PositionStats.epoch_reference)

    def epoch_reference(self, ep: Epoch) -> None:
        """The Python code of on_epoch: the reference the C step twins."""
        clock = self.clock  # the Analyzer shares the fix statistics' timeline (stepped there first)
        t = clock.t if ep is clock._ep else clock.step(ep)  # Timeline.follow, without the call
        self._epochs += 1
        if not self._valid(ep):
            self._fixed_now = False
            if not self._was_moving:
                self.conv.add(t, NAN, NAN, NAN, False, self._target)
            return
        self._fixed_now = True
        fix = FIX_NAMES.get(ep.quality, "none")  # Epoch.fix
        lat, lon, h = ep.lat, ep.lon, ep.h
        if h is None or self.h_datum != "ellipsoidal":  # else _height(ep) gives h back unchanged
            h = self._height(ep)
        # no height: project at the last height (a height error moves E/N by d/R only)
        hp = h if h is not None else (self._last[2] if self._last else (self.ref[2] if self.ref else 0.0))
        ap = self._anchor_p
        if ap is None:  # shared with the fix statistics when they anchored at the same floats
            ap = self._anchor_p = self._ecef.projector(lat, lon, hp)
            self.anchor = ap.frame
        e, n, u = ap.enu(lat, lon, hp)
        moving = self.motion.update(t, e, n, ep.speed_mps)
        self._last = (lat, lon, hp)
        if moving:
            self._was_moving = self._was_moving or self.motion.moving  # a confirmed move may end at a new place
            return
        if self._was_moving:
            self._was_moving = False
            se = self._site_en
            if se is not None and math.hypot(e - se[0], n - se[1]) > self.cfg.motion_spread_m:
                self._new_site()
                ap = self._anchor_p
                if ap is None:
                    ap = self._anchor_p = self._ecef.projector(lat, lon, hp)
                    self.anchor = ap.frame
                e, n, u = ap.enu(lat, lon, hp)
                self._last = (lat, lon, hp)
                self._fixed_now = True  # _reset_site cleared it
        self._site_en = (e, n)
        if h is None:
            u = NAN
        self.conv.add(t, e, n, u, True, self._target)
        if not self.jumps.check(fix, t, clock.abs_time, e, n, u):
            return  # inside a jump or its re-convergence: reported apart, kept out of the scatter
        trk = self.tracks.get(fix)
        if trk is None:
            trk = self.tracks[fix] = Track()
        sl, so, sa, hd = ep.sigma_lat, ep.sigma_lon, ep.sigma_alt, ep.hdop
        p = trk._pend  # Track.add inline (once per settled epoch)
        p.append((t, e, n, u, NAN if sl is None else float(sl), NAN if so is None else float(so),
                  NAN if sa is None else float(sa), NAN if hd is None else float(hd)))
        if len(p) >= TRACK_BATCH:
            trk._settle()
        if self._auto and trk.n == SETTLE_EPOCHS and self._better(fix):
            self._session_ref(fix, trk)

    def _session_ref(self, fix: str, trk: Track) -> None:
        """The automatic reference: the median of the fix type's first SETTLE_EPOCHS settled epochs."""
        a = trk.ring.array()[:SETTLE_EPOCHS]
        mu = a[:, U][np.isfinite(a[:, U])]
        me, mn = float(np.median(a[:, E])), float(np.median(a[:, N]))
        self._set_ref(*self.anchor.geodetic(me, mn, float(np.median(mu)) if mu.size else 0.0),
                      source="session_median")
        self.ref_fix = fix

    def _new_site(self) -> None:
        """The receiver stopped at a new place: keep the longer segment's figures, start afresh."""
        n = sum(t.n for t in self.tracks.values())
        if n > self._best_n:
            self._best, self._best_n = self._build(), n
        self._reset_site()

    def _better(self, fix: str) -> bool:
        """A fix type that settles replaces the automatic reference only if it ranks higher."""
        if self.ref_fix is None:
            return True
        rank = {k: i for i, k in enumerate(RANK)}
        return rank.get(fix, len(RANK)) < rank.get(self.ref_fix, len(RANK))

    def _target(self) -> Target | None:
        """Centre and radii for convergence: the user reference or the final converged position
        (median of the headline fix type's recent settled epochs), radius of the headline fix type."""
        name = self.headline()
        if name is None:
            return None
        if self.ref_source == "user" and self.ref_enu is not None:
            c = self.ref_enu
        else:
            a = self.tracks[name].ring.array()
            mu = a[:, U][np.isfinite(a[:, U])]
            c = (float(np.median(a[:, E])), float(np.median(a[:, N])), float(np.median(mu)) if mu.size else NAN)
        rh, rv = self.cfg.converge_radius  # from the check profile, else tied to the fix type
        return c, rh if rh is not None else self._thr_h.get(name), rv if rv is not None else self._thr_v.get(name)

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
        n = sum(t.n for t in self.tracks.values())
        if self._best is not None and self._best_n > n:
            snap = self._best
        snap = snap | {"segments": self.segments}
        if self.motion.state() == "moving":
            snap = snap | empty_figures() | {"not_measured": "receiver moving"}
        self._cache = (self._epochs, snap)
        return snap

    def _build(self) -> dict[str, Any]:
        name = self.headline()
        ref = None if self.ref is None else {"lat": num(self.ref[0], 9), "lon": num(self.ref[1], 9),
                                             "h": num(self.ref[2], 4), "source": self.ref_source,
                                             "fix": self.ref_fix if self.ref_source == "session_median" else None}
        tg = self._target()
        conv = {"radius_h_m": tg[1] if tg else None, "radius_v_m": tg[2] if tg else None,
                "hold_s": self.cfg.converge_hold_s, "fix": name, "from": "first fix",
                "centre": "user reference" if self.ref_source == "user" else "median of the final settled epochs"}
        total = sum(t.n for t in self.tracks.values())
        out: dict[str, Any] = {"fix": name, "ref": ref, "mean": None, "offset_m": None, "no_height": self.no_height,
                               "height_datum": self.h_datum, "other_datum_heights": self.other_datum,
                               "convergence_s": num(self.conv.time("h", tg), 2),
                               "convergence_v_s": num(self.conv.time("v", tg), 2), "convergence": conv,
                               "jumps": self.jumps.snapshot(), "estimators": ESTIMATORS,
                               "rule": f"best fix type with >= {MIN_COUNT} epochs and >= {MIN_SHARE:.0%} of fixes"}
        out["by_fix"] = {k: t.session() | {"share": num(t.n / total, 4)} for k, t in self.tracks.items()}
        if name is None or self.anchor is None:
            return out | empty_figures()
        trk = self.tracks[name]
        ses = out["by_fix"][name]
        out |= {k: ses.get(k) for k in ("n", "n_v", "basis", "cep50_m", "cep95_m", "r95_m", "r95_gauss_m",
                                        "drms2_m", "v95_m", "ellipse")}
        me, mn, mu = trk.mom.mean()
        lat, lon, h = self.anchor.geodetic(me, mn, 0.0 if mu != mu else mu)
        out["mean"] = {"lat": num(lat, 9), "lon": num(lon, 9), "h": num(h, 4) if mu == mu else None,
                       "h_datum": self.h_datum if mu == mu else None}
        if self.ref_frame is not None:
            oe, on, ou = self.ref_frame.enu(lat, lon, h)
            vert = mu == mu and not (self.ref_source == "user" and self.h_datum == "msl")  # user ref: ellipsoidal
            out["offset_m"] = {"e": num(oe), "n": num(on), "u": num(ou) if vert else None, "h": num(math.hypot(oe, on))}
        out["window"] = trk.window(self.cfg.window_s)
        out |= drift_figures(trk.drift(self.cfg.window_s))
        out["allan"] = trk.allan_dev()
        out["honesty"] = trk.honesty()
        out["samples"] = self._samples(trk)
        # the other fix types' recent epochs, fewer of them, for the report's per-fix-type scatter
        out["samples_by_fix"] = {k: self._samples(t, MAX_SAMPLES // 4) for k, t in sorted(self.tracks.items())
                                 if k != name and t.n}
        return out

    def _samples(self, trk: Track, cap: int = MAX_SAMPLES) -> dict[str, Any]:
        """Recent E/N/U about the reference (or the mean), decimated to <= cap points;
        `mean_e`/`mean_n` place the scatter centre (where the CEP circles belong) in that frame."""
        a = trk.recent(self.cfg.window_s)
        step = max(1, math.ceil(a.shape[0] / cap))
        a = a[::step]
        m = trk.mom.mean()
        c = self.ref_enu if self.ref_enu is not None else m
        out: dict[str, Any] = {k: [num(v, 4) for v in (a[:, i + 1] - c[i]).tolist()] for i, k in enumerate("enu")}
        return out | {"about": "ref" if self.ref_enu is not None else "mean", "step": step,
                      "mean_e": num(m[0] - c[0]), "mean_n": num(m[1] - c[1])}


ESTIMATORS = {
    "scatter_centre": "mean of the settled epochs of the fix type (CEP, R95, V95, ellipse)",
    "ref_session_median": "median of the first settled epochs of the best fix type",
    "convergence_centre": "user reference, else median of the headline fix type's recent settled epochs",
    "drift": "least-squares slope of 1-minute block means; 95 % interval for AR(1) residuals",
}


# the common case of on_epoch in C, configured with the types and constants it meets on that path
_CONFIGURE = ((PositionStats, Timeline, Epoch, MotionDetector, Convergence, Track, Moments3,
               getattr(geo._CORE, "Projector", None)),
              deque, Jumps.check, FIX_NAMES, "none", NAN, math.hypot, HEAD_CAP, FLUSH_AT, TRACK_BATCH,
              SETTLE_EPOCHS, CONFIRM)
_CORE = load_core("configure_position", *_CONFIGURE)
