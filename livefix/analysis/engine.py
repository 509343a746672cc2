"""The analysis engine: one Analyzer fed by the pipeline, publishing one JSON-able snapshot dict.

Why one object: live, replay, check and report all call the same four methods with the same items,
so their numbers agree. Every time comes from the items (never the host clock), per-epoch work is
O(satellites), memory is bounded, and snapshot() of the same stream is the same dict (NaN -> None,
sorted keys where order could vary), so replay at any speed yields identical JSON.
See livefix.analysis for every snapshot key.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.counts import SatCounts
from livefix.analysis.dop import DopStats
from livefix.analysis.events import EventLog, jsonable
from livefix.analysis.fixes import FixStats
from livefix.analysis.geo import EcefMemo
from livefix.analysis.integrity import StreamIntegrity
from livefix.analysis.median import MedianPosition
from livefix.analysis.position import PositionStats
from livefix.analysis.receiver import ReceiverInfo
from livefix.analysis.reflectors import ReflectionStats
from livefix.analysis.signal import SignalStats
from livefix.analysis.sky import SkyMap
from livefix.analysis.span import SessionSpan
from livefix.analysis.streaming import fix_memo
from livefix.analysis.trend import Trend
from livefix.faults import log_internal
from livefix.state.epoch import Epoch, Event
from livefix.timefmt import iso

MAX_EVENTS = 500


class Analyzer:
    def __init__(self, config: AnalysisConfig | None = None, max_events: int = MAX_EVENTS) -> None:
        self.config = config or AnalysisConfig()
        self._log = EventLog(max_events)
        cfg, emit = self.config, self._log.add
        ecef = EcefMemo()  # the latest epoch's ECEF, shared by the stages that project it (per Analyzer)
        fixed = fix_memo()  # valid_fix of the latest epoch, shared the same way
        self.fix = FixStats(cfg, emit, ecef, fixed)
        self.integrity = StreamIntegrity(cfg, emit, on_gap=self.fix.note_data_gap)  # a stall is a data gap
        self.position = PositionStats(cfg, emit, ecef, fixed)
        self.position.clock = self.fix.clock  # one session timeline: fix steps it, position follows
        self.dop = DopStats()
        self.signal = SignalStats(cfg, emit)
        self.sky = SkyMap(cfg)
        self.trend = Trend()
        self.reflection = ReflectionStats(cfg.reflection)
        self.receiver = ReceiverInfo()  # what the receiver announces about itself (TXT)
        self.span, self.median, self.counts = SessionSpan(), MedianPosition(fixed), SatCounts()  # site record
        self._epoch_stages: tuple[Callable[[Epoch], None], ...] = (
            self.integrity.on_epoch, self.fix.epoch_step(), self.position.epoch_step(), self.dop.on_epoch,
            self.signal.epoch_step(), self.reflection.epoch_step(), self.span.on_epoch, self.median.on_epoch,
            self.counts.on_epoch)  # then sky (needs signal.active) and trend, in on_epoch
        self._event_stages: tuple[Callable[[Event], None], ...] = (
            self.integrity.on_event, self.fix.on_event, self.position.on_event, self.receiver.on_event)
        # per-chunk and per-refused-line calls go straight to their one stage (hot, unguarded as
        # before), unless a subclass overrides them
        if type(self).on_chunk is Analyzer.on_chunk:
            self.on_chunk = self.integrity.on_chunk  # type: ignore[method-assign]
        if type(self).on_rejected is Analyzer.on_rejected:
            self.on_rejected = self.integrity.on_rejected  # type: ignore[method-assign]
        self.internal_errors = 0  # a bug in one statistic must not end a multi-day soak
        self.last_error: str | None = None

    # -- items ------------------------------------------------------------------------------
    def on_chunk(self, mono: float, wall: float, nbytes: int) -> None:
        self.integrity.on_chunk(mono, wall, nbytes)

    def on_rejected(self, reason: str, mono: float, wall: float) -> None:
        """A refused line (Rejected.reason), for checksum-burst timing."""
        self.integrity.on_rejected(reason, mono, wall)

    def on_event(self, ev: Event) -> None:
        self._log.add(ev)
        for stage in self._event_stages:
            try:
                stage(ev)
            except Exception as exc:  # noqa: BLE001 - counted and shown in the snapshot
                self._fail(stage, exc)

    def on_epoch(self, ep: Epoch) -> None:
        # One try per stage (free in Python 3.11 until something raises): a failing stage is
        # counted and the others still run.
        for stage in self._epoch_stages:
            try:
                stage(ep)
            except Exception as exc:  # noqa: BLE001 - counted and shown in the snapshot
                self._fail(stage, exc)
        try:
            self.sky.on_epoch(ep, self.signal.active is not None)
        except Exception as exc:  # noqa: BLE001
            self._fail(self._sky, exc)
        try:
            self._trend(ep)
        except Exception as exc:  # noqa: BLE001
            self._fail(self._trend, exc)

    def _sky(self, ep: Epoch) -> None:
        self.sky.on_epoch(ep, suspend=self.signal.active is not None)

    def _trend(self, ep: Epoch) -> None:
        trend = self.trend
        start = iso(ep.utc if ep.utc is not None else ep.wall) if trend.t0 is None else None
        fixed = ep.quality > 0  # positions of fixed epochs only (the position plot over time)
        mono = ep.mono
        trend.add_values(mono, start, self.position.h_error(), self.signal.cur_mean,
                         self.dop.current_n or ep.num_sv, ep.lat if fixed else None, ep.lon, ep.h)
        tracks = trend.sky_tracks
        if not mono < tracks._next and ep.sats is not tracks._of:  # else SkyTracks.add returns at once
            tracks.add(mono, ep.sats)

    def _fail(self, fn: Callable[..., Any], exc: Exception) -> None:
        self.internal_errors += 1
        where = getattr(fn, "__qualname__", "stage")
        self.last_error = f"{where}: {type(exc).__name__}: {exc}"
        log_internal(self.internal_errors, where, exc)

    # -- reference --------------------------------------------------------------------------
    def set_reference(self, lat: float, lon: float, h: float) -> None:
        self.position.set_reference(lat, lon, h)

    def reference_to_mean(self) -> tuple[float, float, float] | None:
        """Use the session mean position as the reference (returns it; None before any fix)."""
        mean = self.position.snapshot().get("mean")
        if not mean or mean.get("lat") is None:
            return None
        ref = (mean["lat"], mean["lon"], mean["h"] if mean.get("h") is not None else 0.0)  # no heights: h unknown
        self.position.set_reference(*ref, source="session_mean")
        return ref

    # -- reading ----------------------------------------------------------------------------
    @property
    def events(self) -> list[Event]:
        """Bounded (newest MAX_EVENTS), newest last; older ones are counted in events_dropped."""
        return self._log.list()

    def snapshot(self, counters: Any) -> dict[str, Any]:
        out = {
            "stream": self.integrity.snapshot(counters),
            "fix": self.fix.snapshot(),
            "position": self.position.snapshot(),
            "motion": self.position.motion.snapshot(),
            "dop": self.dop.snapshot(),
            "signal": self.signal.snapshot(),
            "sky": self.sky.snapshot(),
            "trend": self.trend.snapshot(),
            "reflection": self.reflection.snapshot(),
            "receiver": self.receiver.snapshot(),
            "session": {**self.span.snapshot(), "median": self.median.snapshot()},
            "satellites": self.counts.snapshot(),
            "events": self._log.to_json(),
            "events_dropped": self._log.dropped,
            # livefix's own errors, the analysis' and the decoder's, apart from bad input
            # (after "reflection": its snapshot evaluates the arc checks it deferred, and counts their failures)
            "internal_errors": self.internal_errors + self.reflection.errors
            + int(getattr(counters, "internal_errors", 0)),
            "last_error": self.last_error or self.reflection.last_error
            or getattr(counters, "last_internal_error", None),
        }
        return jsonable(out)

    def reset(self) -> None:
        """Start the statistics afresh (the user reference, if any, is kept)."""
        ref = self.position.ref if self.position.ref_source == "user" else None
        for part in (self.integrity, self.fix, self.position, self.dop, self.signal, self.sky, self.trend,
                     self.reflection, self._log, self.span, self.median, self.counts):
            part.reset()
        self.position.clock = self.fix.clock
        self.internal_errors = 0
        self.last_error = None
        if ref is not None:
            self.position.set_reference(*ref)
