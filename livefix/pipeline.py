"""The one pipeline every mode uses: items -> framing -> decoding -> state -> analysis.

Live, replay at any speed, headless checks and reports all push the same items through a
Pipeline, which is why their results agree. It is single-threaded and never blocks; the session
runs it on the analysis thread.

Stage interfaces it relies on:
  livefix.framing.Framer:   feed(data: bytes) -> list[bytes]  (complete sentences, no terminator)
                            finish() -> list[bytes]; counters: FrameCounters(lines, bytes, junk_bytes,
                            overlong, binary_frames, binary_bytes)
  livefix.decode.decoder.Decoder: decode(line: bytes) -> Decoded | Rejected; counters: DecodeCounters
  livefix.state.StateModel: on_link(LinkEvent), on_marker(Marker), on_chunk(mono, wall),
                            on_sentence(Decoded, mono, wall) -> list[Epoch] (completed epochs),
                            on_rejected(Rejected, mono, wall), finish() -> list[Epoch],
                            drain_events() -> list[Event], sky() -> tuple[SatObs, ...],
                            link -> (state, since_mono, detail), last_epoch -> Epoch | None
  the analysis: livefix.contracts.Analysis (feeding calls and snapshot; the Analyzer, or the
                            two-process stand-in of livefix.parallel), SteerableAnalysis for the
                            live controls (reset, reference point)
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from typing import Any

from livefix.analysis.config import AnalysisConfig
from livefix.contracts import Analysis, SteerableAnalysis
from livefix.items import Chunk, Item, LinkEvent, Marker
from livefix.state.epoch import Epoch, SatObs


@dataclass(frozen=True, slots=True)
class StreamCounters:
    """Framing + decoding counts, copied at snapshot time."""

    bytes: int = 0
    lines: int = 0
    junk_bytes: int = 0
    overlong: int = 0
    decoded: int = 0
    bad_checksum: int = 0
    malformed: int = 0
    unknown: int = 0
    proprietary: int = 0
    by_type: dict[str, int] = field(default_factory=dict)
    by_talker_type: dict[str, int] = field(default_factory=dict)
    rejected_by_type: dict[str, int] = field(default_factory=dict)
    recent_rejects: tuple[str, ...] = ()  # last few refused lines, as repr text, for display
    binary_frames: int = 0  # verified binary frames skipped by the framer (livefix.binframe)
    binary_bytes: int = 0
    internal_errors: int = 0  # the decoder's own failures (livefix.faults), apart from bad input
    last_internal_error: str | None = None


@dataclass(frozen=True, slots=True)
class Snapshot:
    """What readers (UI, reports, metrics) see. Immutable; take it and work without locks."""

    seq: int
    mono: float  # stream time of the last item
    wall: float
    source: str
    link: str
    link_since: float
    link_detail: str
    epoch: Epoch | None
    sky: tuple[SatObs, ...]
    counters: StreamCounters
    analysis: dict[str, Any]
    recording: str | None = None
    recording_error: str | None = None
    finished: bool = False
    dropped_chunks: int = 0  # chunks the analysis shed while behind (always still recorded)
    error: str | None = None  # first failure of a session thread, one line


class Pipeline:
    def __init__(self, config: AnalysisConfig | None = None, source: str = "",
                 analyzer: Analysis | None = None, native: bool | None = None) -> None:
        """analyzer: any livefix.contracts.Analysis (e.g. livefix.parallel's proxy for an analysis
        process); default a real Analyzer built from config. The calls it receives are the same
        either way. native: _lines in C (livefix._native.LinePump, the same calls in the same
        order): None when built and LIVEFIX_PURE is not "1"; True: it or RuntimeError; False: the
        Python loop below, the reference."""
        from livefix.analysis.engine import Analyzer
        from livefix.decode.decoder import Decoder
        from livefix.framing import Framer
        from livefix.state.model import StateModel

        self.source = source
        self.framer = Framer()
        self.decoder = Decoder()
        self.state = StateModel()
        self.analyzer: Analysis = Analyzer(config or AnalysisConfig()) if analyzer is None else analyzer
        self._rejects: list[str] = []
        self._seq = 0
        self._mono = 0.0
        self._wall = 0.0
        self.finished = False
        _attach_pump(self, native)

    # -- feeding -------------------------------------------------------------------------
    def feed(self, item: Item) -> None:
        if type(item) is Chunk:
            self._chunk(item)
        elif type(item) is LinkEvent:
            self._mono, self._wall = item.mono, item.wall
            self.state.on_link(item)
        elif type(item) is Marker:
            self._mono, self._wall = item.mono, item.wall
            self.state.on_marker(item)
        self._pump_events()

    def _chunk(self, c: Chunk) -> None:
        mono, wall = c.mono, c.wall
        self._mono, self._wall = mono, wall
        self.analyzer.on_chunk(mono, wall, len(c.data))
        self.state.on_chunk(mono, wall)
        lines = self.framer.feed(c.data)
        if lines:
            self._lines(lines, mono, wall)

    def _lines(self, lines: list[bytes], mono: float, wall: float) -> None:
        decode = self.decoder.decode
        on_sentence = self.state.on_sentence
        on_epoch = self.analyzer.on_epoch
        for line in lines:
            msg = decode(line)
            if type(msg) is not Rejected_:
                for ep in on_sentence(msg, mono, wall):
                    self._pump_events()
                    on_epoch(ep)
            else:
                self.state.on_rejected(msg, mono, wall)
                self.analyzer.on_rejected(msg.reason, mono, wall)  # checksum-burst timing
                if len(self._rejects) >= 8:
                    del self._rejects[0]
                self._rejects.append(f"{msg.reason}: {msg.raw[:90]!r}")

    def _pump_events(self) -> None:
        for ev in self.state.drain_events():
            self.analyzer.on_event(ev)

    def finish(self) -> None:
        """End of stream: flush the partial line and the last epoch."""
        if self.finished:
            return
        lines = self.framer.finish()
        if lines:
            self._lines(lines, self._mono, self._wall)
        for ep in self.state.finish():
            self._pump_events()
            self.analyzer.on_epoch(ep)
        self._pump_events()
        self.finished = True

    # -- controls (used by the session, between items, on the analysis thread) ----------------
    def _steerable(self) -> SteerableAnalysis:
        a = self.analyzer
        if not isinstance(a, SteerableAnalysis):
            raise TypeError(f"{type(a).__name__} cannot be steered (reset, reference): a batch analysis")
        return a

    def reset_analysis(self) -> None:
        """Fresh statistics; framing, decoding and receiver state are kept."""
        self._steerable().reset()

    def set_reference(self, lat: float, lon: float, h: float) -> None:
        self._steerable().set_reference(lat, lon, h)

    def set_reference_to_mean(self) -> tuple[float, float, float] | None:
        return self._steerable().reference_to_mean()

    def note(self, kind: str, text: str, data: dict[str, Any] | None = None) -> None:
        """An event from outside the stream (recording started, ...), at the current stream time."""
        self.state.add_event(kind, text, self._mono, self._wall, data)
        self._pump_events()

    # -- reading -------------------------------------------------------------------------
    def counters(self) -> StreamCounters:
        f, d = self.framer.counters, self.decoder.counters
        return StreamCounters(
            bytes=f.bytes, lines=f.lines, junk_bytes=f.junk_bytes, overlong=f.overlong,
            decoded=d.decoded, bad_checksum=d.bad_checksum, malformed=d.malformed, unknown=d.unknown,
            proprietary=d.proprietary, by_type=dict(d.by_type), by_talker_type=dict(d.by_talker_type),
            rejected_by_type=dict(d.rejected_by_type), recent_rejects=tuple(self._rejects),
            binary_frames=f.binary_frames, binary_bytes=f.binary_bytes, internal_errors=d.internal_errors,
            last_internal_error=d.last_internal_error)

    def snapshot(self, recording: str | None = None, recording_error: str | None = None) -> Snapshot:
        self._seq += 1
        counters = self.counters()
        state, since, detail = self.state.link
        return Snapshot(seq=self._seq, mono=self._mono, wall=self._wall, source=self.source, link=state,
                        link_since=since, link_detail=detail, epoch=self.state.last_epoch,
                        sky=self.state.sky(), counters=counters,
                        analysis=self.analyzer.snapshot(counters), recording=recording,
                        recording_error=recording_error, finished=self.finished)


def _attach_pump(p: Pipeline, native: bool | None) -> None:
    """Rebind p._lines and p.feed to the C pump (see Pipeline.__init__'s native); subclasses keep
    their own."""
    from livefix.framing import Framer, built_core
    from livefix.state.model import StateModel

    kind = getattr(built_core(), "LinePump", None)
    if native is None:
        native = os.environ.get("LIVEFIX_PURE") != "1"
    elif native and kind is None:
        raise RuntimeError("the C core livefix._native (LinePump) is not built")
    if native and kind is not None and type(p) is Pipeline:
        helpers = (Pipeline, Pipeline._pump_events, StateModel.drain_events, Rejected_, Pipeline.feed, Chunk,
                   StateModel.on_chunk, Framer, Framer.feed)
        pump = kind(p, helpers)
        vars(p).update(_lines=pump.lines, feed=pump.feed)  # instance attributes over the methods


def run_items(items, config: AnalysisConfig | None = None, source: str = "") -> Pipeline:  # noqa: ANN001
    """Push a finite iterable of items through a fresh pipeline and finish it (reports, tests)."""
    p = Pipeline(config, source)
    for it in items:
        p.feed(it)
    p.finish()
    return p


from livefix.decode import Rejected as Rejected_  # noqa: E402  (after class defs: cheap, no cycle)
