"""Stream integrity on constructed chunks, epochs and events: rate, jitter, gaps, stalls, bursts."""

from __future__ import annotations

import numpy as np
import pytest

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.integrity import StreamIntegrity
from livefix.pipeline import StreamCounters
from livefix.state.epoch import Epoch, Event

T0 = 1.8e9


def _new() -> tuple[StreamIntegrity, list[Event]]:
    ev: list[Event] = []
    return StreamIntegrity(AnalysisConfig(stall_s=2.0), ev.append), ev


def test_rate_and_jitter_match_numpy() -> None:
    s, _ = _new()
    rng = np.random.default_rng(5)
    arrivals = [i * 0.1 + 0.05 + rng.normal(0, 0.004) for i in range(200)]
    for i, m in enumerate(arrivals):
        s.on_chunk(m, T0 + m, 300)
        s.on_epoch(Epoch(mono=m, wall=T0 + m, utc=T0 + i * 0.1, quality=1))
    snap = s.snapshot(StreamCounters(lines=1000, by_type={"GGA": 200, "GSV": 600}))
    assert snap["rate_hz"] == pytest.approx(10.0, abs=1e-6)  # receiver UTC steps are exact
    # numpy sample standard deviation of the host arrival intervals (last 256 = all 199)
    assert snap["epoch_jitter_ms"] == pytest.approx(1000 * float(np.std(np.diff(arrivals), ddof=1)), abs=1e-3)
    dur = arrivals[-1] - arrivals[0]
    assert snap["sentences_per_s"]["GSV"] == pytest.approx(600 / dur, rel=1e-3)
    assert snap["lines"] == 1000 and snap["gaps"] == 0 and snap["stalls"] == []


def test_gaps_use_receiver_time() -> None:
    s, _ = _new()
    utc = [float(i) for i in range(20)] + [float(i) for i in range(25, 40)]  # 5 s missing
    for u in utc:
        s.on_epoch(Epoch(mono=u, wall=T0 + u, utc=T0 + u, quality=1))
    snap = s.snapshot(StreamCounters())
    assert snap["gaps"] == 1 and snap["gap_list"][0]["duration_s"] == 6.0
    assert snap["rate_hz"] == 1.0


def test_stall_from_chunk_gap_and_from_link_event() -> None:
    s, ev = _new()
    for m in (0.0, 1.0, 2.0, 7.5, 8.5):
        s.on_chunk(m, T0 + m, 80)
    snap = s.snapshot(StreamCounters())
    assert snap["stalls"] == [{"start": "2027-01-15T08:00:02.000Z", "duration_s": 5.5}]
    assert [e.kind for e in ev] == ["stall"]
    # a link "stalled" event with no chunk after it: an ongoing stall up to the latest item
    s.on_event(Event(11.0, T0 + 11.0, "link", "stalled", None, {"state": "stalled"}))
    s.on_event(Event(20.5, T0 + 20.5, "link", "lost", None, {"state": "lost"}))
    snap = s.snapshot(StreamCounters())
    assert snap["stalls"][-1] == {"start": "2027-01-15T08:00:08.500Z", "duration_s": 12.0, "ongoing": True}
    assert snap["stall_count"] == 2
    s.on_chunk(21.0, T0 + 21.0, 80)  # resumes: the chunk gap now records it once
    snap = s.snapshot(StreamCounters())
    assert snap["stall_count"] == 2 and snap["stalls"][-1]["duration_s"] == 12.5


def test_checksum_burst_once_per_burst() -> None:
    s, ev = _new()
    for m in (0, 1, 2, 3, 4, 5, 6):  # seven in 7 s: one burst
        s.on_rejected("bad_checksum", float(m), T0 + m)
    s.on_rejected("malformed", 7.0, T0 + 7)
    for m in (30, 50, 70):  # sparse: none
        s.on_rejected("bad_checksum", float(m), T0 + m)
    for m in (100, 101, 102, 103, 104):  # second burst
        s.on_rejected("bad_checksum", float(m), T0 + m)
    assert [e.kind for e in ev] == ["checksum_burst", "checksum_burst"]
    assert s.snapshot(StreamCounters())["checksum_bursts"] == 2


def test_time_events_counted() -> None:
    s, _ = _new()
    for kind in ("time_jump", "time_jump", "time_rollback", "marker"):
        s.on_event(Event(1.0, T0, kind, kind))
    snap = s.snapshot(StreamCounters())
    assert snap["time_jumps"] == 2 and snap["rollbacks"] == 1
