"""Fix statistics: TTFF, availability, outages, re-acquisition, fix changes and position jumps.

Time is the session timeline of livefix.analysis.streaming.Timeline (receiver UTC, else host
monotonic stamps). Definitions:
- TTFF: from the start (first epoch, or the first epoch after a receiver restart) to the first
  epoch with a fix / with DGNSS / with RTK fixed. A restart is the "receiver_restart" event, or
  the fix dropping to none while the receiver's UTC goes back. The top-level ttff_* keys refer
  to the latest start; `starts` lists every start (bounded).
- Outage: a span without a fix after a fix was held: no-fix epochs, or a gap in epochs longer
  than GAP_FACTOR nominal intervals. It runs from one nominal interval after the last fixed
  epoch to the next fixed epoch, so one missing 1 Hz epoch is a 1 s outage. Only outages longer
  than config.outage_s are listed; every loss counts in fix_losses. Re-acquisition time is the
  same span measured per outage.
- Jump: horizontal step between consecutive fixed epochs of the same fix type larger than
  max(config.jump_m, config.jump_sigma * recent sigma), recent sigma being the exponentially
  weighted horizontal scatter (about EW_N epochs) of that fix type before the step; after a jump
  the estimate is re-centred on the new position so the jump itself does not inflate it.
  A step right after an outage is a re-acquisition, not a jump.
"""

from __future__ import annotations

import math
from bisect import bisect_left, insort
from collections import deque
from collections.abc import Callable
from typing import Any

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.geo import Projector
from livefix.analysis.streaming import Timeline, num, valid_fix
from livefix.geodesy import LocalFrame
from livefix.state.epoch import FIX_NAMES, Epoch, Event
from livefix.timefmt import iso

LIST_CAP = 200  # newest items kept per list; older ones only counted
GAP_FACTOR = 3.0  # an epoch gap longer than this many intervals is an outage
EW_N = 300.0  # memory of the recent-sigma estimate, epochs
EW_MIN = 20  # epochs of a fix type before its sigma is trusted for jumps
_EW_A = 1.0 / EW_N
DT_N = 32  # epoch intervals whose median is the nominal interval


class _Recent:
    """Exponentially weighted mean and variance of E and N (O(1), bounded)."""

    __slots__ = ("n", "me", "mn", "ve", "vn")

    def __init__(self) -> None:
        self.n, self.me, self.mn, self.ve, self.vn = 0, 0.0, 0.0, 0.0, 0.0

    def add(self, e: float, n: float) -> None:
        self.n += 1
        a = 1.0 / self.n  # max(1 / n, 1 / EW_N)
        if _EW_A > a:
            a = _EW_A
        de, dn = e - self.me, n - self.mn
        self.me += a * de
        self.mn += a * dn
        self.ve = (1 - a) * (self.ve + a * de * de)
        self.vn = (1 - a) * (self.vn + a * dn * dn)

    def sigma(self) -> float:
        return math.sqrt(self.ve + self.vn)


# Sentences that say whether there is a fix; an epoch without any of them tells nothing about it.
_POSITION_SENTENCES = frozenset({"GGA", "RMC", "GNS", "GLL"})

class FixStats:
    """Snapshot key "fix"; see livefix.analysis for the keys."""

    def __init__(self, config: AnalysisConfig, emit: Callable[[Event], None]) -> None:
        self.cfg = config
        self.emit = emit
        self.reset()

    def reset(self) -> None:
        self.clock = Timeline()
        self.counts: dict[str, int] = {name: 0 for name in FIX_NAMES.values()}
        self.epochs = 0
        self.starts: deque[dict[str, Any]] = deque(maxlen=LIST_CAP)
        self.starts_total = 0
        self._start: dict[str, Any] | None = None
        self._restart_pending = False
        self._await_loss = False
        self.no_position = 0  # epochs without any position sentence, left out of the fix figures
        self.outages: deque[dict[str, Any]] = deque(maxlen=LIST_CAP)
        self.outages_total = 0
        self.longest = 0.0
        self.losses = 0
        self.reacq: deque[float] = deque(maxlen=LIST_CAP)
        self.jumps: deque[dict[str, Any]] = deque(maxlen=LIST_CAP)
        self.jumps_total = 0
        self._dts: deque[float] = deque(maxlen=DT_N)
        self._dts_sorted: list[float] = []  # the same values, sorted: the median without a sort
        self._iv = 1.0  # median of _dts (1.0 while empty), kept current on every append
        self._prev_t: float | None = None
        self._last_fix: tuple[float, float, str, float, float] | None = None  # t, abs, fix, e, n
        self._lost_at: tuple[float, float] | None = None  # (t, abs) of the first missing epoch
        self._frame: LocalFrame | None = None
        self._proj: Projector | None = None
        self._recent: dict[str, _Recent] = {}
        self.current = "none"

    # ---- helpers ---------------------------------------------------------------------------
    def _interval(self) -> float:
        return self._iv

    def _add_dt(self, dt: float) -> None:
        """Append to the interval window; the median is that of statistics.median (values are
        finite or +inf, never NaN: they come from `t > previous t`)."""
        q, srt = self._dts, self._dts_sorted
        if len(q) == DT_N:
            if q[0] == dt:  # the same value leaves and enters: sorted window and median unchanged
                q.append(dt)
                return
            del srt[bisect_left(srt, q[0])]
        q.append(dt)
        insort(srt, dt)
        n = len(srt)
        i = n // 2
        self._iv = srt[i] if n % 2 else (srt[i - 1] + srt[i]) / 2

    def _event(self, ep: Epoch, kind: str, text: str, **data: Any) -> None:
        self.emit(Event(mono=ep.mono, wall=ep.wall, kind=kind, text=text, utc=ep.utc, data=data))

    def _new_start(self, t: float, abs_t: float | None, cause: str) -> None:
        self._start = {"start": iso(abs_t), "from": cause, "t": t, "ttff_s": None, "ttff_dgnss_s": None,
                       "ttff_rtk_fixed_s": None}
        self.starts.append(self._start)
        self.starts_total += 1

    # ---- stream ----------------------------------------------------------------------------
    def on_event(self, ev: Event) -> None:
        if ev.kind == "receiver_restart":
            self._restart_pending = True

    def on_epoch(self, ep: Epoch) -> None:
        t = self.clock.step(ep)
        abs_t = self.clock.abs_time
        if ep.sentences and _POSITION_SENTENCES.isdisjoint(ep.sentences):
            # nothing decodable said whether there was a fix (e.g. GGA and RMC lost to checksum
            # errors): that is a stream fault, counted there, not a receiver outage
            self.no_position += 1
            if self._start is None:
                self._new_start(t, abs_t, "stream")
            return
        self.epochs += 1
        if self._prev_t is not None and t > self._prev_t:
            self._add_dt(t - self._prev_t)
        fixed = valid_fix(ep)
        name = ep.fix if fixed else "none"
        self.counts[name] = self.counts.get(name, 0) + 1
        if self._start is None:
            self._new_start(t, abs_t, "stream")
        elif self._restart_pending or (self.clock.reset and not fixed):
            self._new_start(t, abs_t, "restart")
            # A restart we were told of (marker) takes effect an epoch or so later: fixes that the
            # receiver still reports before it drops the fix belong to the old start.
            self._await_loss = self._restart_pending and fixed
        self._restart_pending = False
        if not fixed:
            self._await_loss = False
        elif not self._await_loss:
            self._ttff(t, ep.quality)
        regained = self._outage(ep, t, abs_t, fixed, name)
        if fixed:
            self._jump(ep, t, abs_t, name, check=not regained)
        self.current = name
        self._prev_t = t

    def _ttff(self, t: float, q: int) -> None:
        s = self._start
        assert s is not None
        if not (s["ttff_s"] is None or (q == 2 and s["ttff_dgnss_s"] is None)
                or (q == 4 and s["ttff_rtk_fixed_s"] is None)):
            return  # nothing left to set for this fix type (the usual case after the first fix)
        dt = num(t - s["t"], 3)
        if s["ttff_s"] is None:
            s["ttff_s"] = dt
        if q == 2 and s["ttff_dgnss_s"] is None:
            s["ttff_dgnss_s"] = dt
        if q == 4 and s["ttff_rtk_fixed_s"] is None:
            s["ttff_rtk_fixed_s"] = dt

    def _outage(self, ep: Epoch, t: float, abs_t: float | None, fixed: bool, name: str) -> bool:
        """Track losses and regains; True when this epoch ends an outage."""
        iv = self._interval()
        lf = self._last_fix
        if not fixed:
            if lf is not None and self._lost_at is None:
                self._lost_at = (lf[0] + iv, lf[1] + iv)
                self.losses += 1
                self._event(ep, "fix_lost", f"fix lost ({lf[2]} -> none)", previous=lf[2])
            return False
        if lf is not None and self._lost_at is None and t - lf[0] > GAP_FACTOR * iv:
            self._lost_at = (lf[0] + iv, lf[1] + iv)  # epochs stopped coming while fixed
            self.losses += 1
            self._event(ep, "fix_lost", f"no epochs for {t - lf[0]:.1f} s", previous=lf[2], gap=True)
        if self._lost_at is not None:
            dur = max(0.0, t - self._lost_at[0])
            self.reacq.append(num(dur, 3))
            if dur > self.cfg.outage_s:
                self.outages.append({"start": iso(self._lost_at[1]), "duration_s": num(dur, 3)})
                self.outages_total += 1
                self.longest = max(self.longest, dur)
            self._event(ep, "fix_regained", f"fix regained ({name}) after {dur:.1f} s", fix=name,
                        outage_s=num(dur, 3))
            self._lost_at = None
            return True
        if lf is not None and lf[2] != name:
            self._event(ep, "fix_change", f"fix {lf[2]} -> {name}", previous=lf[2], fix=name)
        return False

    def _jump(self, ep: Epoch, t: float, abs_t: float | None, name: str, check: bool) -> None:
        lat, lon, h = ep.lat, ep.lon, ep.h or 0.0
        proj = self._proj
        if proj is None:
            self._frame = LocalFrame(lat, lon, h)
            proj = self._proj = Projector(self._frame)
        e, n, _ = proj.enu(lat, lon, h)
        lf = self._last_fix
        rec = self._recent.get(name)
        if rec is None:
            rec = self._recent[name] = _Recent()
        if check and lf is not None and lf[2] == name and self.current == name:
            step = math.hypot(e - lf[3], n - lf[4])
            if rec.n >= EW_MIN:  # max(jump_m, jump_sigma * sigma)
                lim, k_sigma = self.cfg.jump_m, self.cfg.jump_sigma * rec.sigma()
                if k_sigma > lim:
                    lim = k_sigma
            else:
                lim = math.inf
            if step > lim:
                self.jumps.append({"time": iso(abs_t), "distance_m": num(step, 3), "fix": name})
                self.jumps_total += 1
                self._event(ep, "jump", f"position jumped {step:.2f} m ({name})", distance_m=num(step, 3),
                            fix=name)
                rec.me, rec.mn = e, n  # re-centre, keep the spread: a jump back is caught too
        rec.add(e, n)
        self._last_fix = (t, abs_t if abs_t is not None else 0.0, name, e, n)

    # ---- snapshot --------------------------------------------------------------------------
    def snapshot(self) -> dict[str, Any]:
        s = self._start or {}
        total = max(self.epochs, 1)
        ongoing = None
        if self._lost_at is not None and self._prev_t is not None:
            ongoing = {"start": iso(self._lost_at[1]), "duration_s": num(self._prev_t - self._lost_at[0], 3)}
        return {
            "ttff_s": s.get("ttff_s"), "ttff_dgnss_s": s.get("ttff_dgnss_s"),
            "ttff_rtk_fixed_s": s.get("ttff_rtk_fixed_s"), "ttff_from": s.get("from"),
            "starts": [{k: v for k, v in d.items() if k != "t"} for d in self.starts],
            "starts_total": self.starts_total,
            "availability": {k: num(v / total, 5) for k, v in self.counts.items() if v},
            "epochs": self.epochs, "no_position_epochs": self.no_position,
            "outages": list(self.outages), "outages_total": self.outages_total, "outage_now": ongoing,
            "longest_outage_s": num(self.longest, 3), "fix_losses": self.losses,
            "reacquisition_s": list(self.reacq),
            "jumps": list(self.jumps), "jumps_total": self.jumps_total,
            "interval_s": num(self._interval(), 4) if self._dts else None,
            "current": self.current,
        }
