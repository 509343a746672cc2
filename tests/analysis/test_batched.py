"""BatchedAnalysis changes when the analyzer works, never what it computes: fed through a Pipeline it
gives the snapshot of an Analyzer fed call by call (the reference here), for every run length, with
snapshots and steering mid-stream, refused lines, binary junk and stream gaps; the analyzer receives
the very same calls in the same order; no more than `cap` calls ever wait; an error is not swallowed."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest

from livefix.analysis.batched import BatchedAnalysis
from livefix.analysis.config import AnalysisConfig
from livefix.analysis.engine import Analyzer
from livefix.checksum import xor_checksum
from livefix.items import Chunk
from livefix.parallel import analyzer_for
from livefix.pipeline import Pipeline
from livefix.record.reader import RecordingReader

RECORDINGS = Path(__file__).resolve().parents[2] / "recordings"


def _items(name: str) -> list:
    """A demo recording with refused input spliced in: a bad checksum, a truncated line and binary
    junk after every 200th chunk (counted by the decoder, timed by the stream-integrity stage)."""
    bad = (b"$GPGGA,120000.00,4700.0,N,00700.0,E,1,08,0.9,500.0,M,48.0,M,,*00\r\n"
           b"$GPRMC,1200\r\n\xb5\x62\x01\x07\x00\x00\xff\xff\r\n")
    out: list = []
    for k, it in enumerate(RecordingReader(str(RECORDINGS / name)).items()):
        out.append(it)
        if type(it) is Chunk and k % 200 == 199:
            out.append(Chunk(it.mono, it.wall, bad))
    return out


def _run(items: list, analyzer: Any, probe_every: int = 0, steer_at: int = -1) -> list[str]:
    """Snapshots (JSON text) every probe_every items and at the end; at item steer_at the reference
    point moves to the session mean."""
    p = Pipeline(AnalysisConfig(), "test", analyzer=analyzer)
    out = []
    for k, it in enumerate(items):
        p.feed(it)
        if k == steer_at:
            out.append(repr(p.set_reference_to_mean()))
        if probe_every and k % probe_every == probe_every - 1:
            out.append(json.dumps(p.snapshot().analysis, sort_keys=True))
    p.finish()
    out.append(json.dumps(p.snapshot().analysis, sort_keys=True))
    return out


@pytest.mark.parametrize("name", ["soak-10min.lfr", "building-5min.lfr"])
def test_batched_snapshots_equal_the_analyzer_fed_call_by_call(name: str) -> None:
    items = _items(name)
    reference = _run(items, Analyzer(), probe_every=997, steer_at=1500)
    final = json.loads(reference[-1])
    assert final["stream"]["epochs"] > 200 and final["internal_errors"] == 0
    assert final["stream"]["bad_checksum"] > 0 and final["stream"]["junk_bytes"] > 0
    for cap in (1, 2, 7, 512):
        assert _run(items, BatchedAnalysis(Analyzer(), cap), probe_every=997, steer_at=1500) == reference, cap


class CallLog:
    """An analysis that only writes down what it is called with (the order is what is tested)."""

    def __init__(self) -> None:
        self.calls: list[tuple] = []

    def on_chunk(self, mono: float, wall: float, nbytes: int) -> None:
        self.calls.append(("chunk", mono, wall, nbytes))

    def on_rejected(self, reason: str, mono: float, wall: float) -> None:
        self.calls.append(("rejected", reason, mono, wall))

    def on_event(self, ev: Any) -> None:
        self.calls.append(("event", ev))

    def on_epoch(self, ep: Any) -> None:
        self.calls.append(("epoch", ep))

    def snapshot(self, counters: Any) -> dict[str, Any]:
        return {"calls": len(self.calls)}

    def reset(self) -> None:
        self.calls.append(("reset",))

    def set_reference(self, lat: float, lon: float, h: float) -> None:
        self.calls.append(("ref", lat, lon, h))

    def reference_to_mean(self) -> tuple[float, float, float] | None:
        self.calls.append(("ref_mean",))
        return None


def test_the_same_calls_reach_the_analyzer_in_the_same_order_and_few_wait() -> None:
    items = _items("rooftop-5min.lfr")[:1200]
    direct = CallLog()
    p = Pipeline(analyzer=direct)
    for it in items:
        p.feed(it)
    p.reset_analysis()
    p.finish()
    kinds = {c[0] for c in direct.calls}
    assert {"chunk", "rejected", "event", "epoch", "reset"} <= kinds

    log = CallLog()
    batched = BatchedAnalysis(log, cap=5)
    p = Pipeline(analyzer=batched)
    most = 0
    for it in items:
        p.feed(it)
        most = max(most, len(batched._calls))
    p.reset_analysis()
    p.finish()
    batched.flush()
    assert most <= 5
    assert len(log.calls) == len(direct.calls)
    for a, b in zip(log.calls, direct.calls, strict=True):  # epochs and events: the very same objects
        assert a[0] == b[0] and all(x is y or x == y for x, y in zip(a[1:], b[1:], strict=True)), (a, b)


def test_steering_and_snapshot_play_the_waiting_calls_first() -> None:
    log = CallLog()
    b = BatchedAnalysis(log, cap=100)
    b.on_chunk(1.0, 2.0, 3)
    b.on_rejected("checksum", 1.5, 2.5)
    assert log.calls == []  # waiting
    b.set_reference(1.0, 2.0, 3.0)
    assert log.calls == [("chunk", 1.0, 2.0, 3), ("rejected", "checksum", 1.5, 2.5), ("ref", 1.0, 2.0, 3.0)]
    b.on_chunk(4.0, 5.0, 6)
    assert b.snapshot(None) == {"calls": 4}
    b.on_chunk(7.0, 8.0, 9)
    b.reset()
    assert b.reference_to_mean() is None
    assert log.calls[-3:] == [("chunk", 7.0, 8.0, 9), ("reset",), ("ref_mean",)]


def test_an_error_while_playing_propagates() -> None:
    class Broken(CallLog):
        def on_chunk(self, mono: float, wall: float, nbytes: int) -> None:
            raise ValueError("stage failure")

    b = BatchedAnalysis(Broken(), cap=3)
    b.on_epoch("e1")
    b.on_event("v1")
    with pytest.raises(ValueError, match="stage failure"):
        b.on_chunk(1.0, 1.0, 1)  # the third call fills the run and plays it
    with pytest.raises(ValueError):
        BatchedAnalysis(CallLog(), cap=0)


def test_batch_runs_in_one_process_get_the_batched_analyzer() -> None:
    with analyzer_for(AnalysisConfig(), split=False) as a:
        assert isinstance(a, BatchedAnalysis) and isinstance(a.inner, Analyzer)


def test_spliced_bad_line_really_is_refused() -> None:
    """The splice above must reach the refusal path: its checksum is wrong by construction."""
    body = b"GPGGA,120000.00,4700.0,N,00700.0,E,1,08,0.9,500.0,M,48.0,M,,"
    assert xor_checksum(body) != 0x00  # NMEA 0183: XOR of the characters between "$" and "*"
