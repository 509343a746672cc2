"""Stream integrity: rates, epoch timing, gaps, stalls, time jumps and bursts of bad checksums.

Why: a receiver that drops epochs, stalls on a long cable or garbles bytes on a noisy line fails a
bench long before its positions look wrong. All times come from the stream items.
- Epoch interval: receiver UTC difference when both epochs carry a time (exact nominal rate),
  else host arrival difference. rate_hz = 1 / median of the last 256 intervals.
- Jitter: standard deviation of host arrival intervals over the same window, gaps excluded, in ms.
- Gap: an epoch interval longer than 3 × nominal (nominal known after 5 intervals) while bytes kept
  coming: the receiver skipped epochs. Across a stall it is not counted again (reported once).
- Stall: no chunk for longer than config.stall_s; a link "stalled" event with no chunk after it is
  shown as an ongoing stall. A stall is a data gap: reported here once (count, list, total) and
  passed to `on_gap` so the fix statistics keep it out of availability and outages.
- Checksum burst: >= 5 bad checksums within 10 s (common practice) -> one "checksum_burst" event
  per burst (re-armed after 10 s without bad checksums).

The running-session case of `on_epoch` (no hole to place, no gap) has a C twin,
livefix/analysis/_epochcore_site.c, bound as the instance's on_epoch when built (the class's on_epoch
stays the reference and runs every case the C step hands back).
"""

from __future__ import annotations

import math
from bisect import bisect_left, insort
from collections import deque
from collections.abc import Callable
from typing import Any

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.counts import load_core, pick_core
from livefix.state.epoch import Epoch, Event
from livefix.timefmt import iso

WINDOW = 256
GAP_FACTOR = 3.0
BURST_N = 5
BURST_S = 10.0
MAX_LIST = 100
# binary_frames/_bytes: verified binary frames sharing the stream (livefix.binframe), not damage
PASS_KEYS = ("lines", "bad_checksum", "malformed", "unknown", "proprietary", "junk_bytes", "overlong",
             "binary_frames", "binary_bytes")


def _median(xs: list[float]) -> float:
    s = sorted(xs)
    n = len(s)
    return s[n // 2] if n % 2 else 0.5 * (s[n // 2 - 1] + s[n // 2])


class StreamIntegrity:
    def __init__(self, config: AnalysisConfig, emit: Callable[[Event], None],
                 on_gap: Callable[[float], None] | None = None, native: bool | None = None) -> None:
        """native: the running-session case of on_epoch in C (counts.pick_core: None as LIVEFIX_PURE says)."""
        core = pick_core(_CORE, native)
        if core is not None and type(self) is StreamIntegrity:  # a subclass keeps its own on_epoch
            bound = core.bind_step("integrity", self, StreamIntegrity.on_epoch)  # the C step, else the reference
            self.on_epoch = bound  # type: ignore[method-assign]
        self.config = config
        self.emit = emit
        self.on_gap = on_gap  # told of every stall (livefix.analysis.fixes: a data gap)
        self.reset()

    def reset(self) -> None:
        self.first_mono: float | None = None
        self.last_mono: float | None = None
        self.last_wall = 0.0
        self.bytes = 0
        self.stalls: list[dict[str, Any]] = []
        self.stall_count = 0
        self.stall_s = 0.0  # total of the finished stalls
        self.pending_stall = False  # a link "stalled" event and no chunk since
        self.latest = 0.0  # stream time of the latest item seen here
        self.epochs = 0
        self.prev: Epoch | None = None
        self.iv_nominal: deque[float] = deque(maxlen=WINDOW)  # utc (or host) intervals
        self._iv_sorted: list[float] = []  # the same values sorted, for the median without a sort
        self._iv_nan = 0  # NaN intervals in the window (sorting them is order-dependent: then sort)
        self._nominal: float | None = None  # nominal() of the current window
        self.iv_host: deque[float] = deque(maxlen=WINDOW)
        self.gaps: list[dict[str, Any]] = []
        self.gap_count = 0
        self.time_jumps = 0
        self.rollbacks = 0
        self.time_faults = 0  # receiver time jumps not confirmed by the following epochs
        self.dates_invalid = 0  # stretches of default / rolled-over receiver dates
        self._holes: deque[float] = deque(maxlen=64)  # host times at which data resumed after a stall
        self.date_known = True  # of the latest epoch (livefix.state.epoch.Epoch.date_known)
        self.bad_times: deque[float] = deque()
        self.bursts = 0
        self.in_burst = False
        self.last_bad = -math.inf

    # -- items ------------------------------------------------------------------------------
    def on_chunk(self, mono: float, wall: float, nbytes: int) -> None:
        if self.first_mono is None:
            self.first_mono = mono
        elif self.last_mono is not None:
            gap = mono - self.last_mono
            if gap > self.config.stall_s:
                self._stall(self.last_mono, self.last_wall, gap, mono, wall)
        self.pending_stall = False
        self.last_mono, self.last_wall = mono, wall
        if mono > self.latest:  # max(): NaN never replaces the latest time
            self.latest = mono
        self.bytes += nbytes

    def _stall(self, m0: float, w0: float, dur: float, mono: float, wall: float) -> None:
        self._holes.append(mono)  # epochs missing across it are this one data gap, not a gap again
        self.stall_count += 1
        self.stall_s += dur
        if self.on_gap is not None:
            self.on_gap(mono)
        self.stalls.append({"start": iso(w0), "duration_s": round(dur, 3)})
        if len(self.stalls) > MAX_LIST:
            del self.stalls[0]
        self.emit(Event(mono, wall, "stall", f"no data for {dur:.1f} s", None,
                        {"start": iso(w0), "duration_s": round(dur, 3)}))

    def on_event(self, ev: Event) -> None:
        self.latest = max(self.latest, ev.mono)
        if ev.kind == "time_jump":
            self.time_jumps += 1
        elif ev.kind == "time_rollback":
            self.rollbacks += 1
        elif ev.kind == "time_fault":
            self.time_faults += 1
        elif ev.kind == "receiver_date_invalid":
            self.dates_invalid += 1
        elif ev.kind == "link" and ev.data.get("state") == "stalled" and self.last_mono is not None:
            self.pending_stall = True

    def on_rejected(self, reason: str, mono: float, wall: float) -> None:
        if reason != "bad_checksum":
            return
        q = self.bad_times
        if self.in_burst and mono - self.last_bad > BURST_S:
            self.in_burst = False
        self.last_bad = mono
        q.append(mono)
        while q and mono - q[0] > BURST_S:
            q.popleft()
        if len(q) >= BURST_N and not self.in_burst:
            self.in_burst = True
            self.bursts += 1
            self.emit(Event(mono, wall, "checksum_burst",
                            f"{len(q)} bad checksums within {BURST_S:.0f} s", None, {"count": len(q)}))
        if len(q) > 4 * BURST_N:
            q.popleft()

    def on_epoch(self, ep: Epoch) -> None:
        self.epochs += 1
        self.date_known = ep.date_known
        p = self.prev
        self.prev = ep
        if p is None:
            return
        holes = self._holes
        pm, mono = p.mono, ep.mono
        if holes:
            hole = any(pm < h <= mono for h in holes)
            while holes and holes[0] <= pm:
                holes.popleft()
        else:
            hole = False
        dt = host = mono - pm
        utc, pu = ep.utc, p.utc
        if utc is not None and pu is not None:
            d = utc - pu
            if 0 < d < 3600:
                dt = d
        if not dt > 0:  # also NaN (a broken stamp): never enters the interval window
            return
        nominal = self._nominal
        if nominal is not None and dt > GAP_FACTOR * nominal:
            if hole:  # no bytes at all: reported once, as the data gap (stall), not again here
                self._add_interval(dt)
                return
            self.gap_count += 1
            self.gaps.append({"start": iso(p.utc if p.utc is not None else p.wall),
                              "duration_s": round(dt, 3)})
            if len(self.gaps) > MAX_LIST:
                del self.gaps[0]
        else:
            self.iv_host.append(host)
        q = self.iv_nominal
        if len(q) == WINDOW and q[0] == dt and not self._iv_nan:  # _add_interval's shortcut inline
            q.append(dt)
        else:
            self._add_interval(dt)

    def _add_interval(self, dt: float) -> None:
        q, srt = self.iv_nominal, self._iv_sorted
        if len(q) == WINDOW:
            old = q[0]
            if old == dt and not self._iv_nan:  # the same value leaves and enters: median unchanged
                q.append(dt)
                return
            if old != old:
                self._iv_nan -= 1
            else:
                del srt[bisect_left(srt, old)]
        q.append(dt)
        if dt != dt:
            self._iv_nan += 1
        else:
            insort(srt, dt)
        n = len(q)
        if n < 5:
            self._nominal = None
        elif self._iv_nan:
            self._nominal = _median(list(q))
        else:
            i = n // 2
            self._nominal = srt[i] if n % 2 else 0.5 * (srt[i - 1] + srt[i])

    # -- reading ----------------------------------------------------------------------------
    def nominal(self) -> float | None:
        return self._nominal

    def jitter_ms(self) -> float | None:
        xs = list(self.iv_host)
        if len(xs) < 5:
            return None
        m = sum(xs) / len(xs)
        return round(1000.0 * math.sqrt(sum((x - m) ** 2 for x in xs) / (len(xs) - 1)), 3)

    def duration_s(self) -> float:
        if self.first_mono is None or self.last_mono is None:
            return 0.0
        return self.last_mono - self.first_mono

    def snapshot(self, counters: Any) -> dict[str, Any]:
        out: dict[str, Any] = {k: int(getattr(counters, k, 0)) for k in PASS_KEYS}
        by_type = dict(sorted(getattr(counters, "by_type", {}).items()))
        out["by_type"] = by_type
        out["epochs"] = self.epochs
        nom = self.nominal()
        out["rate_hz"] = round(1.0 / nom, 4) if nom else None
        out["epoch_interval_s"] = round(nom, 4) if nom else None
        out["epoch_jitter_ms"] = self.jitter_ms()
        out["gaps"] = self.gap_count
        out["gap_list"] = list(self.gaps)
        stalls = list(self.stalls)
        if self.pending_stall and self.last_mono is not None:
            stalls.append({"start": iso(self.last_wall),
                           "duration_s": round(max(0.0, self.latest - self.last_mono), 3), "ongoing": True})
        out["stalls"] = stalls
        out["stall_count"] = self.stall_count + int(self.pending_stall)
        # the one report of holes in the data (no bytes); the fix statistics leave them out
        out["data_gaps"] = {"count": out["stall_count"], "total_s": round(
            self.stall_s + sum(x["duration_s"] for x in stalls if x.get("ongoing")), 3)}
        out["time_jumps"] = self.time_jumps
        out["rollbacks"] = self.rollbacks
        out["time_faults"] = self.time_faults
        out["receiver_dates_invalid"] = self.dates_invalid
        out["date_known"] = self.date_known  # False: times are a time of day, the date is unknown
        out["checksum_bursts"] = self.bursts
        dur = self.duration_s()
        out["duration_s"] = round(dur, 3)
        out["sentences_per_s"] = {k: round(v / dur, 3) for k, v in by_type.items()} if dur > 0 else {}
        out["bytes_per_s"] = round(self.bytes / dur, 1) if dur > 0 else None
        return out


_CORE = load_core("configure_integrity", StreamIntegrity, Epoch, deque, WINDOW, GAP_FACTOR)  # on_epoch in C
