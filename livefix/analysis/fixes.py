"""Fix statistics: TTFF, availability, outages, data gaps, re-acquisition, fix changes and jumps.

Time is the session timeline of livefix.analysis.streaming.Timeline (receiver UTC, else host
monotonic stamps). Definitions:
- TTFF: from the start (first epoch, or the first epoch after a receiver restart) to the first
  epoch with a fix / with DGNSS / with RTK fixed. A restart is the "receiver_restart" event (livefix
  commanded it: a marker), or the fix dropping to none while the receiver's UTC goes back (the
  receiver restarted by itself). TTFF is only *observed* when the session saw the receiver without
  that fix first, or a restart: a session that begins with a fix, or statistics reset while one is
  held, say ttff_s null ("not observed"), never 0. The top-level ttff_* keys refer to the latest
  start; `starts` lists every start (bounded).
- Availability: share of time in each fix type (livefix.analysis.availability): data gaps (no bytes),
  epochs without any position sentence and the acquisition after a commanded restart are left out.
- Outage: a span without a fix after a fix was held: no-fix epochs, or a gap in epochs longer than
  GAP_FACTOR nominal intervals while bytes still flow. It runs from the first no-fix time (one
  nominal interval after the last fixed epoch) to the next fixed epoch, so one missing 1 Hz epoch
  is a 1 s outage; at the end of the data it runs to the end of the last epoch's interval. A data
  gap ends an outage (its known part is listed); no-fix after the gap opens a new one. Only outages
  longer than config.outage_s are listed; every loss counts in fix_losses. Re-acquisition time is
  the same span measured per outage. A commanded restart is counted as a restart, never an outage.
- Data gap: a link "stalled"/"lost" event or a chunk gap (livefix.analysis.integrity) between
  epochs: the time beyond one epoch interval is reported once, as a data gap, not as an outage.
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

from livefix.analysis import fixes_native
from livefix.analysis import starts as start_rec
from livefix.analysis.availability import DATA_GAP_MIN, RESTART, UNKNOWN, TimeBook, share_where
from livefix.analysis.config import AnalysisConfig
from livefix.analysis.counts import bound_on_epoch, pick_core
from livefix.analysis.geo import EcefMemo, Projector
from livefix.analysis.streaming import Timeline, num, valid_fix
from livefix.geodesy import LocalFrame
from livefix.state.epoch import FIX_NAMES, Epoch, Event
from livefix.timefmt import iso

LIST_CAP = 200  # newest items kept per list; older ones only counted
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
# Link states in which no bytes come: the time until the next epoch is a data gap.
_NO_DATA_LINK = frozenset({"stalled", "lost", "reconnecting"})

class FixStats:
    """Snapshot key "fix"; see livefix.analysis for the keys."""

    def __init__(self, config: AnalysisConfig, emit: Callable[[Event], None],
                 ecef: EcefMemo | None = None, fixed: Callable[[Epoch], bool] = valid_fix,
                 native: bool | None = None) -> None:
        """native: a running session's epochs in C (counts.pick_core: None as LIVEFIX_PURE says)."""
        core = pick_core(_CORE, native)
        self._fast = None if core is None else core.fix_step
        self.cfg = config
        self.emit = emit
        self._ecef = EcefMemo() if ecef is None else ecef  # shared with the other stages by the Analyzer
        self._valid = fixed  # valid_fix, or the Analyzer's fix_memo shared with the other stages
        self.reset()

    def reset(self) -> None:
        # after a statistics reset the receiver was not seen starting: TTFF is not observed
        self._cause = "reset" if hasattr(self, "clock") else "stream"
        self.clock = Timeline()
        self.counts: dict[str, int] = {name: 0 for name in FIX_NAMES.values()}
        self.epochs = 0
        self.starts: deque[dict[str, Any]] = deque(maxlen=LIST_CAP)
        self.starts_total = 0
        self._start: dict[str, Any] | None = None
        self._restart_at: float | None = None  # host time of a commanded restart not yet applied
        self._await_loss = False
        self._acquiring = False  # after a commanded restart, until its first fix: TTFF time
        self._gaps_at: deque[float] = deque(maxlen=16)  # host times inside data gaps, not yet placed
        self._last_mono: float | None = None  # host time of the latest epoch
        self._gap_split = False  # an outage was cut by a data gap and no fix came since
        self.book = TimeBook()
        self._fix_marked = False  # book.mark("fix") done
        self._rtk_marked = False  # book.mark("rtk_fixed") done
        self.restarts = {"commanded": 0, "receiver": 0}
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
        self._last_t: float | None = None  # latest epoch of any kind
        self._anchor: tuple[float, float] | None = None  # (session time, receiver UTC) of the latest timed epoch
        self._lost_after_gap = False  # the outage in progress began after a data gap
        self._clock_lost = False  # the receiver fell back to a default date: it restarted by itself
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

    def _new_start(self, t: float, abs_t: float | None, cause: str, commanded: bool = False) -> None:
        self._start = start_rec.new_start(t, abs_t, cause, commanded)
        if cause == "restart":
            self.restarts["commanded" if commanded else "receiver"] += 1
        self.starts.append(self._start)
        self.starts_total += 1

    def note_data_gap(self, mono: float) -> None:
        """No bytes came for a while, up to host time `mono` (integrity's chunk gap, or a link
        state). Placed by time, not by call order: the epoch before a gap is only closed by the
        first sentence after it."""
        self._gaps_at.append(mono)

    def _after_gap(self, t: float, mono: float) -> bool:
        """True when a data gap lies between the previous epoch and this one: a gap was noted
        after the previous epoch began, and the epochs show a hole. (An epoch opened by untimed
        lines just before a gap begins before the gap: so host times alone cannot place it.)"""
        q, prev = self._gaps_at, self._last_mono
        self._last_mono = mono
        if not q:
            return False
        prev_t, iv = self.book.prev_t, self._iv
        hole = prev_t is not None and t - prev_t - iv > DATA_GAP_MIN * iv
        if prev is not None and hole and q[-1] > prev:
            q.clear()
            return True
        while q and q[0] <= mono:  # a stall that hid no epoch (a slow stream): nothing to place
            q.popleft()
        return False

    # ---- stream ----------------------------------------------------------------------------
    def on_event(self, ev: Event) -> None:
        if ev.kind == "receiver_restart":
            self._restart_at = ev.mono
        elif ev.kind == "receiver_date_invalid" and self._anchor is not None:
            self._clock_lost = True  # a receiver that knew the time is back at its default date
        elif ev.kind == "link" and ev.data.get("state") in _NO_DATA_LINK:
            self.note_data_gap(ev.mono)

    def on_epoch(self, ep: Epoch) -> None:
        if self._fast is not None and self._fast(self, ep):
            return  # a running session's epoch, done by the C twin (it hands back every other case)
        self.epoch_reference(ep)

    def epoch_step(self) -> Callable[[Epoch], None]:
        """on_epoch as the Analyzer calls it (counts.bound_on_epoch; the core is fix_step's module)."""
        core = None if self._fast is None else self._fast.__self__
        return bound_on_epoch(core, "fix", self, FixStats, FixStats.epoch_reference)

    def epoch_reference(self, ep: Epoch) -> None:
        """The Python code of on_epoch: the reference the C step twins."""
        clock = self.clock
        t = clock.step(ep)
        # labels on the receiver's clock: an epoch without a time (no fix, empty time fields) is
        # placed from the latest receiver time and the session timeline, not by the host clock
        if ep.utc is not None:
            self._anchor = (t, ep.utc)
        anchor = self._anchor
        abs_t = ep.wall if anchor is None else anchor[1] + (t - anchor[0])
        if self._gaps_at:
            gap = self._after_gap(t, ep.mono)
        else:  # _after_gap without a gap noted: only the host time moves on
            self._last_mono, gap = ep.mono, False
        sentences = ep.sentences
        if sentences and _POSITION_SENTENCES.isdisjoint(sentences):
            # nothing decodable said whether there was a fix (e.g. GGA and RMC lost to checksum
            # errors): that is a stream fault, counted there, not a receiver outage
            self.no_position += 1
            if self._start is None:
                self._new_start(t, abs_t, self._cause)
            self._account(ep, t, abs_t, UNKNOWN, gap)
            return
        self.epochs += 1
        pt = self._prev_t
        if pt is not None and t > pt:
            q, dt = self._dts, t - pt
            if len(q) == DT_N and q[0] == dt:  # _add_dt's shortcut inline: window and median unchanged
                q.append(dt)
            else:
                self._add_dt(dt)
        fixed = self._valid(ep)
        quality = ep.quality
        name = FIX_NAMES.get(quality, "none") if fixed else "none"  # Epoch.fix
        self.counts[name] += 1  # every fix name is a key (reset)
        # a commanded restart applies from the first epoch begun after it: the epoch in progress
        # when the command went out still belongs to the old start
        commanded = self._restart_at is not None and ep.mono >= self._restart_at
        if commanded:
            self._restart_at = None
        s = self._start
        if s is None:
            self._new_start(t, abs_t, self._cause)
            s = self._start
        elif commanded or ((clock.reset or self._clock_lost) and not fixed):
            self._new_start(t, abs_t, "restart", commanded=commanded)
            s = self._start
            # A restart we were told of (marker) takes effect an epoch or so later: fixes that the
            # receiver still reports before it drops the fix belong to the old start.
            self._await_loss = commanded and fixed
            self._acquiring = commanded
        self._clock_lost = False
        assert s is not None
        if s["_q0"] is None:  # (tested here too: a call per epoch for the first epoch only)
            start_rec.first_epoch(s, quality, fixed)
        if not fixed:
            self._await_loss = False
            bucket = RESTART if self._acquiring else name
        else:
            if not self._await_loss:
                self._acquiring = False
                if s["_wait"]:  # some TTFF of this start still waits (as start_rec.on_fix tests)
                    start_rec.on_fix(s, t, quality)
            bucket = name
        regained = self._account(ep, t, abs_t, bucket, gap)
        if fixed:
            if not self._fix_marked:  # book.has_mark("fix"), remembered
                self.book.mark("fix")
                self._fix_marked = True
            if quality == 4 and not self._rtk_marked:  # book.mark keeps only the first: remembered
                self.book.mark("rtk_fixed")
                self._rtk_marked = True
            self._jump(ep, t, abs_t, name, not regained)
        self.current = name
        self._prev_t = t

    def _account(self, ep: Epoch, t: float, abs_t: float | None, bucket: str, gap: bool) -> bool:
        """Book the time since the previous epoch and track outages; True when this epoch ends an
        outage."""
        began, gap_s = self.book.step(t, bucket, self._iv, gap)
        self._last_t = t
        fixed = bucket not in ("none", UNKNOWN, RESTART)
        if gap_s > 0.0 and self._lost_at is not None:
            # we do not know what the receiver did in the gap: list the outage's known part
            self._close_outage(ep, t - gap_s, "", cut=True)
            self._gap_split = True
        if bucket == UNKNOWN:
            return False
        if gap_s > 0.0 and fixed:  # a fix after a data gap: no outage, no jump check across it
            self._gap_split = False
            self._last_fix = None
            return True
        if bucket == RESTART:
            if self._lost_at is not None:  # a commanded restart ends an outage: TTFF time from here
                self._close_outage(ep, t, "", cut=True)
            return False
        lf = self._last_fix
        if not fixed:
            if lf is not None and self._lost_at is None:
                self._lost_at = (began, (abs_t if abs_t is not None else 0.0) - (t - began))
                self._lost_after_gap = self._gap_split
                if not self._gap_split:
                    self.losses += 1
                    text = f"fix lost ({lf[2]} -> none)" if began == t else f"no epochs for {t - lf[0]:.1f} s"
                    self._event(ep, "fix_lost", text, previous=lf[2])
            return False
        self._gap_split = False
        if lf is not None and self._lost_at is None and began < t:
            # epochs stopped coming while fixed (bytes still flowing): an outage from one interval on
            self._lost_at = (began, (abs_t if abs_t is not None else 0.0) - (t - began))
            self.losses += 1
            self._event(ep, "fix_lost", f"no epochs for {t - lf[0]:.1f} s", previous=lf[2], gap=True)
        if self._lost_at is not None:
            self._close_outage(ep, t, bucket)
            return True
        if lf is not None and lf[2] != bucket:
            self._event(ep, "fix_change", f"fix {lf[2]} -> {bucket}", previous=lf[2], fix=bucket)
        return False

    def _close_outage(self, ep: Epoch, end: float, name: str, cut: bool = False) -> None:
        """End the outage in progress at session time `end` (the regained fix, or a data gap)."""
        lost = self._lost_at
        assert lost is not None
        self._lost_at = None
        dur = max(0.0, end - lost[0])
        item: dict[str, Any] = {"start": iso(lost[1]), "duration_s": num(dur, 3)}
        if cut:
            item["end"] = "data gap or restart: what came after is not known"
        if self._lost_after_gap:
            item["after_data_gap"] = True
        if dur > self.cfg.outage_s:
            self.outages.append(item)
            self.outages_total += 1
            self.longest = max(self.longest, dur)
        if not cut:
            self.reacq.append(num(dur, 3))
            self._event(ep, "fix_regained", f"fix regained ({name}) after {dur:.1f} s", fix=name,
                        outage_s=num(dur, 3))

    def _jump(self, ep: Epoch, t: float, abs_t: float | None, name: str, check: bool) -> None:
        lat, lon, h = ep.lat, ep.lon, ep.h or 0.0
        proj = self._proj
        if proj is None:  # the position statistics anchor at the same floats: one shared projector
            proj = self._proj = self._ecef.projector(lat, lon, h)
            self._frame = proj.frame
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
        iv = self._interval()
        outages, total, longest = list(self.outages), self.outages_total, self.longest
        ongoing = None
        if self._lost_at is not None and self._last_t is not None:
            # known no-fix time: up to the end of the latest epoch's interval, never negative
            dur = max(0.0, self._last_t + iv - self._lost_at[0])
            ongoing = {"start": iso(self._lost_at[1]), "duration_s": num(dur, 3)}
            if dur > self.cfg.outage_s:
                outages.append({**ongoing, "ongoing": True})
                total, longest = total + 1, max(longest, dur)
        totals = self.book.totals(iv)
        return {
            "ttff_s": s.get("ttff_s"), "ttff_dgnss_s": s.get("ttff_dgnss_s"),
            "ttff_rtk_fixed_s": s.get("ttff_rtk_fixed_s"), "ttff_from": s.get("from"),
            "ttff_observed": bool(s.get("observed")), "ttff_note": start_rec.ttff_note(s),
            "starts": [start_rec.public(d) for d in self.starts],
            "starts_total": self.starts_total, "restarts": dict(self.restarts),
            "availability": self.book.shares(totals),
            "availability_basis": self.book.basis(totals),
            "fix_share_after_first_fix": share_where(self.book.shares(totals, "fix"), lambda k: k != "none")
            if self.book.has_mark("fix") else None,
            "rtk_fixed_share_after_first": share_where(self.book.shares(totals, "rtk_fixed"), lambda k: k == "rtk_fixed")
            if self.book.has_mark("rtk_fixed") else None,
            "epochs": self.epochs, "epochs_by_fix": {k: v for k, v in self.counts.items() if v},
            "no_position_epochs": self.no_position,
            "outages": outages[-LIST_CAP:], "outages_total": total, "outage_now": ongoing,
            "longest_outage_s": num(longest, 3), "fix_losses": self.losses,
            "reacquisition_s": list(self.reacq),
            "jumps": list(self.jumps), "jumps_total": self.jumps_total,
            "interval_s": num(iv, 4) if self._dts else None,
            "current": self.current,
        }


_CORE = fixes_native.load(FixStats, _Recent, _POSITION_SENTENCES, DT_N, EW_MIN, _EW_A)
